//! The treatment catalogue: size classes of stems, methods (their effectiveness, cost, crew time,
//! cautions and the size classes they apply to), and the prescriptions each patch may receive.
//!
//! A prescription ([`Choice`]) gives every size class present in a patch one method that covers
//! it, or leaves it. A catalogue without `[[size_class]]` has one implicit class that every
//! method covers, so each prescription is one method on all stems, as before size classes.
//!
//! # Units
//! Costs in the catalogue's `currency`; crew time in hours; effectiveness is the share of a
//! class's stems removed (0 to 1); stems are counts.

use std::collections::{BTreeMap, BTreeSet};
use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::core::site::{Access, Herbicide, Site, Water};
use crate::input::patches::Patch;

/// The built-in catalogue, `models/treatments.toml`.
pub const BUILTIN: &str = include_str!("../../models/treatments.toml");

/// Index of a method in the catalogue.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct MethodId(pub u16);

#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Method {
    pub id: String,
    pub label: String,
    pub effectiveness: f64,
    pub cost_per_stem: f64,
    pub cost_per_patch: f64,
    pub hours_per_stem: f64,
    pub herbicide: bool,
    pub months: Vec<u8>,
    #[serde(default)]
    pub cautions: Vec<String>,
    #[serde(default)]
    pub source: String,
    /// Share of the treated stems that need a follow-up visit next season (survivors and root
    /// suckers), for multi-season programmes; default 1 - effectiveness.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub follow_up_share: Option<f64>,
    /// The method used on the follow-up visit (default: this one).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub follow_up_method: Option<String>,
    /// A trap-tree method: the share of arriving insects the kept, insecticide-treated stems
    /// kill. Offered only with `--trap-trees`; its remaining risk is (1 - e)(1 - sink_kill).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sink_kill: Option<f64>,
    /// May be used within the buffer of a water feature (`--water`), with products labelled
    /// for aquatic sites. Default: true for methods without herbicide, false for herbicide
    /// methods (never assumed safe near water).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub near_water: Option<bool>,
    /// Prone to drift onto non-target plants (e.g. foliar spray). Default false.
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub drift_prone: bool,
    /// May be used at a restricted site (`herbicide = restricted`, or within the buffer of a
    /// sensitive site). Default: true unless the method is drift-prone.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub at_restricted_sites: Option<bool>,
    /// The size classes the method applies to, each an id or a table with its own
    /// `cost_per_stem` / `hours_per_stem`. Required when the catalogue has `[[size_class]]`;
    /// absent in a catalogue without classes.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub size_classes: Vec<ClassUse>,
}

/// One size class a method applies to, optionally priced on its own.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(untagged)]
pub enum ClassUse {
    Id(String),
    Priced(PricedClass),
}

/// A size class with the method's own cost and time per stem there.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PricedClass {
    pub id: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cost_per_stem: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub hours_per_stem: Option<f64>,
}

impl ClassUse {
    pub fn id(&self) -> &str {
        match self {
            ClassUse::Id(id) => id,
            ClassUse::Priced(p) => &p.id,
        }
    }
}

/// A size class of stems (e.g. seedlings, saplings, trees), as the inventory counts them.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SizeClass {
    /// The inventory column (and host-polygon field) holding the class's stems.
    pub id: String,
    pub label: String,
    /// What the class holds, in the crew's words (e.g. `over 15 cm dbh`).
    #[serde(default)]
    pub description: String,
    /// The class's share of a stand counted only as `stems` (the default mix).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub default_share: Option<f64>,
    #[serde(default)]
    pub source: String,
}

/// At most this many size classes (a prescription is a fixed array, one slot per class).
pub const MAX_CLASSES: usize = 6;

/// The id of the implicit class of a catalogue without `[[size_class]]`.
pub const ALL_STEMS: &str = "stems";

/// At most this many combinations of methods per patch are enumerated for one catalogue.
const MAX_PRESCRIPTIONS: usize = 20_000;

/// Inventory columns a size class may not be named after.
const RESERVED_COLUMNS: [&str; 14] = [
    "id",
    "x",
    "y",
    "stems",
    "access",
    "herbicide",
    "cost_factor",
    "pressure",
    "area_ha",
    "suitability",
    "parcel",
    "contact",
    "outline",
    "method",
];

impl Method {
    /// r: the share of the patch's risk-bearing host left after this method.
    pub fn remaining(&self) -> f64 {
        (1.0 - self.effectiveness) * (1.0 - self.sink_kill.unwrap_or(0.0))
    }

    pub fn follow_up_share(&self) -> f64 {
        self.follow_up_share.unwrap_or(1.0 - self.effectiveness)
    }

    /// Whether the method may be used within a water buffer.
    pub fn allowed_near_water(&self) -> bool {
        self.near_water.unwrap_or(!self.herbicide)
    }

    /// Whether the method may be used at a restricted site.
    pub fn allowed_at_restricted_sites(&self) -> bool {
        self.at_restricted_sites.unwrap_or(!self.drift_prone)
    }

    /// Whether the method may be used on `site` at all: access, the herbicide rule, water
    /// nearby and the restricted-site rule.
    pub fn allowed_on(&self, site: &Site) -> bool {
        site.access != Access::Denied
            && !(self.herbicide && site.herbicide == Herbicide::Prohibited)
            && (!matches!(site.water, Water::Near(_)) || self.allowed_near_water())
            && (site.herbicide != Herbicide::Restricted || self.allowed_at_restricted_sites())
    }
}

#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Catalogue {
    #[serde(default = "default_currency")]
    pub currency: String,
    /// Size classes of stems; none = one implicit class covering every method.
    #[serde(default, rename = "size_class", skip_serializing_if = "Vec::is_empty")]
    pub size_classes: Vec<SizeClass>,
    #[serde(rename = "method")]
    pub methods: Vec<Method>,
    /// The mix a stand counted only as `stems` is split by, one share per class (set from the
    /// classes' `default_share`, or the scenario's `[host] default_mix`).
    #[serde(skip)]
    pub default_mix: Vec<f64>,
    /// Where the default mix came from, for the assumption line.
    #[serde(skip)]
    pub default_mix_source: String,
}

fn default_currency() -> String {
    "USD".into()
}

impl Catalogue {
    /// Parse and validate catalogue text; `origin` names it in messages.
    pub fn parse(text: &str, origin: &str) -> Result<Catalogue> {
        let text = text.strip_prefix('\u{feff}').unwrap_or(text);
        let catalogue: Catalogue = toml::from_str(text).map_err(|e| {
            let line = e
                .span()
                .and_then(|s| text.get(..s.start))
                .map(|before| before.lines().count().max(1));
            Error::input(format!(
                "treatment catalogue `{origin}`{}: {}",
                line.map(|l| format!(", line {l}")).unwrap_or_default(),
                e.message()
            ))
        })?;
        let mut catalogue = catalogue;
        catalogue.validate(origin)?;
        Ok(catalogue)
    }

    /// The built-in catalogue or the file at `path`.
    pub fn load(path: Option<&Path>) -> Result<(Catalogue, String)> {
        match path {
            None => Ok((
                Catalogue::parse(BUILTIN, "built-in models/treatments.toml")?,
                BUILTIN.to_string(),
            )),
            Some(p) => {
                let text = std::fs::read_to_string(p).map_err(|e| Error::io("read", p, e))?;
                Ok((Catalogue::parse(&text, &p.display().to_string())?, text))
            }
        }
    }

    fn validate(&mut self, origin: &str) -> Result<()> {
        if self.methods.is_empty() {
            return Err(Error::input(format!(
                "treatment catalogue `{origin}` has no [[method]]"
            )));
        }
        self.validate_classes(origin)?;
        let mut seen = BTreeSet::new();
        for m in &self.methods {
            let bad = |what: String| {
                Error::input_with_hint(
                    format!("treatment catalogue `{origin}`, method `{}`: {what}", m.id),
                    "fix the value in the catalogue",
                )
            };
            if m.id.trim().is_empty() {
                return Err(bad("empty id".into()));
            }
            if !seen.insert(m.id.clone()) {
                return Err(bad("duplicate id".into()));
            }
            if !(m.effectiveness.is_finite() && (0.0..=1.0).contains(&m.effectiveness)) {
                return Err(bad(format!(
                    "effectiveness must be between 0 and 1, got {}",
                    m.effectiveness
                )));
            }
            for (name, v) in [
                ("cost_per_stem", m.cost_per_stem),
                ("cost_per_patch", m.cost_per_patch),
                ("hours_per_stem", m.hours_per_stem),
            ] {
                if !(v.is_finite() && v >= 0.0) {
                    return Err(bad(format!("{name} must be 0 or more, got {v}")));
                }
            }
            if m.months.is_empty() || m.months.iter().any(|&mo| !(1..=12).contains(&mo)) {
                return Err(bad(format!(
                    "months must list months 1-12, got {:?}",
                    m.months
                )));
            }
            for (name, v) in [
                ("follow_up_share", m.follow_up_share),
                ("sink_kill", m.sink_kill),
            ] {
                if let Some(v) = v
                    && !(v.is_finite() && (0.0..=1.0).contains(&v))
                {
                    return Err(bad(format!("{name} must be between 0 and 1, got {v}")));
                }
            }
            if let Some(f) = &m.follow_up_method
                && !self.methods.iter().any(|x| &x.id == f)
            {
                return Err(bad(format!(
                    "follow_up_method `{f}` is not a method of the catalogue"
                )));
            }
            for code in &m.cautions {
                if cautions::lookup(code).is_none() {
                    return Err(bad(format!(
                        "unknown caution code `{code}` (known: {})",
                        cautions::codes().join(", ")
                    )));
                }
            }
        }
        Ok(())
    }

    fn validate_classes(&mut self, origin: &str) -> Result<()> {
        let fix = "fix the size classes in the catalogue";
        let bad = |what: String| {
            Error::input_with_hint(format!("treatment catalogue `{origin}`: {what}"), fix)
        };
        if self.size_classes.len() > MAX_CLASSES {
            return Err(bad(format!(
                "{} size classes; at most {MAX_CLASSES}",
                self.size_classes.len()
            )));
        }
        let mut seen = BTreeSet::new();
        for c in &self.size_classes {
            let id = c.id.trim().to_ascii_lowercase();
            if id.is_empty() || id != c.id {
                return Err(bad(format!(
                    "size class `{}`: ids are lower-case, without spaces around them",
                    c.id
                )));
            }
            if RESERVED_COLUMNS.contains(&id.as_str()) {
                return Err(bad(format!(
                    "size class `{id}`: the name is an inventory column of its own"
                )));
            }
            if !seen.insert(id.clone()) {
                return Err(bad(format!("size class `{id}`: duplicate id")));
            }
            if let Some(v) = c.default_share
                && !(v.is_finite() && (0.0..=1.0).contains(&v))
            {
                return Err(bad(format!(
                    "size class `{id}`: default_share must be between 0 and 1, got {v}"
                )));
            }
        }
        for m in &self.methods {
            if self.size_classes.is_empty() {
                if let Some(u) = m.size_classes.first() {
                    return Err(bad(format!(
                        "method `{}` names size class `{}` but the catalogue has no [[size_class]]",
                        m.id,
                        u.id()
                    )));
                }
                continue;
            }
            if m.size_classes.is_empty() {
                return Err(Error::input_with_hint(
                    format!(
                        "treatment catalogue `{origin}`, method `{}`: no size_classes (the catalogue defines size classes)",
                        m.id
                    ),
                    format!(
                        "list the classes it applies to, e.g. size_classes = [\"{}\"]",
                        self.size_classes[0].id
                    ),
                ));
            }
            let mut named = BTreeSet::new();
            for u in &m.size_classes {
                if !seen.contains(u.id()) {
                    return Err(bad(format!(
                        "method `{}`: unknown size class `{}` (known: {})",
                        m.id,
                        u.id(),
                        seen.iter().cloned().collect::<Vec<_>>().join(", ")
                    )));
                }
                if !named.insert(u.id().to_string()) {
                    return Err(bad(format!(
                        "method `{}`: size class `{}` listed twice",
                        m.id,
                        u.id()
                    )));
                }
                if let ClassUse::Priced(PricedClass {
                    cost_per_stem,
                    hours_per_stem,
                    ..
                }) = u
                {
                    for (name, v) in [
                        ("cost_per_stem", cost_per_stem),
                        ("hours_per_stem", hours_per_stem),
                    ] {
                        if let Some(v) = v
                            && !(v.is_finite() && *v >= 0.0)
                        {
                            return Err(bad(format!(
                                "method `{}`, size class `{}`: {name} must be 0 or more, got {v}",
                                m.id,
                                u.id()
                            )));
                        }
                    }
                }
            }
        }
        // The prescriptions of a patch are every combination of (a covering method or leave)
        // per class: bounded here once, for the whole catalogue.
        let mut combinations = 1usize;
        for c in 0..self.n_classes() {
            let options = 1
                + (0..self.methods.len())
                    .filter(|&k| self.cover(MethodId(k as u16), c).is_some())
                    .count();
            combinations = combinations.saturating_mul(options);
        }
        if combinations > MAX_PRESCRIPTIONS {
            return Err(bad(format!(
                "{combinations} combinations of methods over the size classes; at most {MAX_PRESCRIPTIONS}"
            )));
        }
        // The default mix: the classes' own shares, or equal shares when none is given.
        let given: Vec<f64> = self
            .size_classes
            .iter()
            .filter_map(|c| c.default_share)
            .collect();
        if self.size_classes.is_empty() {
            self.default_mix = vec![1.0];
            self.default_mix_source = "every stem in one class".into();
        } else if given.is_empty() {
            let n = self.size_classes.len() as f64;
            self.default_mix = vec![1.0 / n; self.size_classes.len()];
            self.default_mix_source = "equal shares (the catalogue gives no default_share)".into();
        } else {
            let sum: f64 = given.iter().sum();
            if given.len() != self.size_classes.len() || (sum - 1.0).abs() > 1e-6 {
                return Err(bad(format!(
                    "the size classes' default_share must be given for every class and sum to 1 (got {} of {}, sum {sum})",
                    given.len(),
                    self.size_classes.len()
                )));
            }
            self.default_mix = given;
            self.default_mix_source = "the catalogue's default_share".into();
        }
        Ok(())
    }

    /// Replace the default mix by the scenario's `[host] default_mix` (class id -> share).
    pub fn set_default_mix(&mut self, mix: &BTreeMap<String, f64>) -> Result<()> {
        let hint =
            "give every size class of the catalogue a share from 0 to 1, the shares summing to 1";
        if self.size_classes.is_empty() {
            return Err(Error::input_with_hint(
                "scenario `[host] default_mix`: the treatment catalogue has no size classes",
                "drop `default_mix`, or use a catalogue with [[size_class]]",
            ));
        }
        let mut shares = vec![0.0; self.size_classes.len()];
        for (id, &v) in mix {
            let Some(c) = self.size_classes.iter().position(|c| &c.id == id) else {
                return Err(Error::input_with_hint(
                    format!(
                        "scenario `[host] default_mix`: unknown size class `{id}` (the catalogue has {})",
                        self.class_ids().join(", ")
                    ),
                    hint,
                ));
            };
            if !(v.is_finite() && (0.0..=1.0).contains(&v)) {
                return Err(Error::input_with_hint(
                    format!(
                        "scenario `[host] default_mix`, `{id}`: {v} is not a share from 0 to 1"
                    ),
                    hint,
                ));
            }
            shares[c] = v;
        }
        let sum: f64 = shares.iter().sum();
        if (sum - 1.0).abs() > 1e-6 {
            return Err(Error::input_with_hint(
                format!("scenario `[host] default_mix`: the shares sum to {sum}, not 1"),
                hint,
            ));
        }
        self.default_mix = shares;
        self.default_mix_source = "the scenario's `[host] default_mix`".into();
        Ok(())
    }

    /// Whether the catalogue defines size classes.
    pub fn has_classes(&self) -> bool {
        !self.size_classes.is_empty()
    }

    /// The number of classes (1 for a catalogue without size classes).
    pub fn n_classes(&self) -> usize {
        self.size_classes.len().max(1)
    }

    /// The class ids in catalogue order (`stems` for the implicit class).
    pub fn class_ids(&self) -> Vec<String> {
        if self.size_classes.is_empty() {
            vec![ALL_STEMS.to_string()]
        } else {
            self.size_classes.iter().map(|c| c.id.clone()).collect()
        }
    }

    /// The class ids an inventory or polygon layer may count stems by (none without classes).
    pub fn inventory_classes(&self) -> Vec<String> {
        self.size_classes.iter().map(|c| c.id.clone()).collect()
    }

    /// Whether method `m` covers class `c`, and if so its cost and hours per stem there.
    pub fn cover(&self, m: MethodId, c: usize) -> Option<(f64, f64)> {
        let method = self.method(m);
        if self.size_classes.is_empty() {
            return Some((method.cost_per_stem, method.hours_per_stem));
        }
        let id = &self.size_classes.get(c)?.id;
        method
            .size_classes
            .iter()
            .find(|u| u.id() == id)
            .map(|u| match u {
                ClassUse::Id(_) => (method.cost_per_stem, method.hours_per_stem),
                ClassUse::Priced(PricedClass {
                    cost_per_stem,
                    hours_per_stem,
                    ..
                }) => (
                    cost_per_stem.unwrap_or(method.cost_per_stem),
                    hours_per_stem.unwrap_or(method.hours_per_stem),
                ),
            })
    }

    /// A patch's stems by class, and whether they came from the default mix (a patch counted
    /// only as `stems`, or a raster).
    pub fn stems_by_class(&self, patch: &Patch) -> (Vec<f64>, bool) {
        if self.size_classes.is_empty() {
            return (vec![patch.stems], false);
        }
        match &patch.by_class {
            Some(counts) if counts.len() == self.size_classes.len() => (counts.clone(), false),
            _ => (
                self.default_mix.iter().map(|s| s * patch.stems).collect(),
                true,
            ),
        }
    }

    /// The default mix in words, for the assumption line of a plan.
    pub fn default_mix_text(&self) -> String {
        let parts: Vec<String> = self
            .size_classes
            .iter()
            .zip(&self.default_mix)
            .map(|(c, s)| format!("{} {:.0}%", c.id, 100.0 * s))
            .collect();
        format!("{} ({})", parts.join(", "), self.default_mix_source)
    }

    /// The id of the method named `name`, if the catalogue has it.
    pub fn find(&self, name: &str) -> Option<MethodId> {
        self.methods
            .iter()
            .position(|m| m.id == name)
            .map(|k| MethodId(k as u16))
    }

    pub fn method(&self, id: MethodId) -> &Method {
        &self.methods[id.0 as usize]
    }
}

/// A class's slot in [`Choice::per_class`] when the class is left (or absent from the patch).
pub const LEAVE: u16 = u16::MAX;

/// One way to treat one patch (a prescription): a method or none per size class, what it costs
/// there and what it leaves.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Choice {
    /// The primary method: the one treating the most stems (plan rows that name one method).
    pub method: MethodId,
    pub cost: f64,
    pub hours: f64,
    /// r: the stem-weighted share of host left after treatment (1 - effectiveness for one
    /// method on every stem).
    pub remaining: f64,
    /// The method index used on each size class, [`LEAVE`] for a class left or absent.
    pub per_class: [u16; MAX_CLASSES],
}

impl Default for Choice {
    fn default() -> Self {
        Choice {
            method: MethodId(0),
            cost: 0.0,
            hours: 0.0,
            remaining: 1.0,
            per_class: [LEAVE; MAX_CLASSES],
        }
    }
}

impl Choice {
    /// One method on every stem (a catalogue without size classes, or a test's choice).
    pub fn single(method: MethodId, cost: f64, hours: f64, remaining: f64) -> Choice {
        let mut per_class = [LEAVE; MAX_CLASSES];
        per_class[0] = method.0;
        Choice {
            method,
            cost,
            hours,
            remaining,
            per_class,
        }
    }

    /// The method used on class `c`, if the class is treated.
    pub fn method_for(&self, c: usize) -> Option<MethodId> {
        self.per_class
            .get(c)
            .filter(|&&m| m != LEAVE)
            .map(|&m| MethodId(m))
    }

    /// The distinct methods used, in catalogue order (the primary alone when no class is set).
    pub fn methods(&self) -> Vec<MethodId> {
        let mut out: Vec<MethodId> = (0..MAX_CLASSES)
            .filter_map(|c| self.method_for(c))
            .collect();
        if out.is_empty() {
            out.push(self.method);
        }
        out.sort_unstable();
        out.dedup();
        out
    }
}

/// The prescription in words for plan.csv and orders: `trees: stem_injection 12; saplings:
/// basal_bark 140; seedlings: leave 800`, classes from the largest stems down; present
/// classes only.
pub fn prescription_text(catalogue: &Catalogue, choice: &Choice, by_class: &[f64]) -> String {
    let ids = catalogue.class_ids();
    (0..ids.len())
        .rev()
        .filter(|&c| by_class.get(c).copied().unwrap_or(0.0) > 0.0)
        .map(|c| {
            let what = choice
                .method_for(c)
                .map(|m| catalogue.method(m).id.as_str())
                .unwrap_or("leave");
            format!("{}: {what} {}", ids[c], by_class[c].round())
        })
        .collect::<Vec<_>>()
        .join("; ")
}

/// The prescriptions a patch may receive. A method is used only where it is allowed on the
/// site (denied access: none; herbicide prohibited: no herbicide methods; within a water buffer:
/// only methods allowed near water; restricted sites: no drift-prone method unless the catalogue
/// allows it there — the rest stay eligible and are flagged by the caution codes) and only on
/// the size classes it covers; trap-tree methods (with `sink_kill`) only when `trap_trees` is
/// on. Every class present gets one covering method or is left; the all-leave prescription is
/// not a choice. Cost = the fixed `cost_per_patch` of each distinct method used + stems x cost
/// per stem of each class, times the site's cost factor, to the cent; hours = stems x hours per
/// stem; remaining = the stem-weighted mean over classes of each class's remainder (1 when
/// left). With size classes, prescriptions no better than another on cost, hours and remaining
/// are dropped; a catalogue without size classes gives one choice per method, in catalogue
/// order, as before.
pub fn choices_for(catalogue: &Catalogue, patch: &Patch, trap_trees: bool) -> Vec<Choice> {
    let usable: Vec<MethodId> = catalogue
        .methods
        .iter()
        .enumerate()
        .filter(|(_, m)| m.allowed_on(&patch.site))
        .filter(|(_, m)| m.effectiveness > 0.0)
        .filter(|(_, m)| trap_trees || m.sink_kill.is_none())
        .map(|(k, _)| MethodId(k as u16))
        .collect();
    let (stems, _) = catalogue.stems_by_class(patch);
    let total: f64 = stems.iter().sum();
    // Classes present; a patch of 0 stems (only ever planned when required) has every class.
    let present: Vec<usize> = if !catalogue.has_classes() || total <= 0.0 {
        (0..stems.len()).collect()
    } else {
        (0..stems.len()).filter(|&c| stems[c] > 0.0).collect()
    };
    let weight = |c: usize| {
        if total > 0.0 {
            stems[c] / total
        } else {
            1.0 / present.len() as f64
        }
    };
    // Options per present class: None = leave, or a covering method.
    let options: Vec<Vec<Option<MethodId>>> = present
        .iter()
        .map(|&c| {
            let mut o = vec![None];
            o.extend(
                usable
                    .iter()
                    .filter(|&&m| catalogue.cover(m, c).is_some())
                    .map(|&m| Some(m)),
            );
            o
        })
        .collect();
    let mut out = Vec::new();
    let mut index = vec![0usize; present.len()];
    'combinations: loop {
        // The combination `index` (the odometer's first class turns slowest, so a one-class
        // catalogue lists its methods in catalogue order).
        let picks: Vec<Option<MethodId>> = index.iter().zip(&options).map(|(&k, o)| o[k]).collect();
        if picks.iter().any(Option::is_some) {
            let mut per_class = [LEAVE; MAX_CLASSES];
            let mut fixed = 0.0;
            let mut variable = 0.0;
            let mut hours = 0.0;
            let mut remaining = 0.0;
            let mut used: Vec<MethodId> = Vec::new();
            let mut treated: BTreeMap<MethodId, f64> = BTreeMap::new();
            for (&c, pick) in present.iter().zip(&picks) {
                match pick {
                    None => remaining += weight(c),
                    Some(m) => {
                        let method = catalogue.method(*m);
                        let (cps, hps) = catalogue.cover(*m, c).unwrap_or((0.0, 0.0));
                        per_class[c] = m.0;
                        if !used.contains(m) {
                            used.push(*m);
                            fixed += method.cost_per_patch;
                        }
                        variable += cps * stems[c];
                        hours += hps * stems[c];
                        remaining += weight(c) * method.remaining();
                        *treated.entry(*m).or_insert(0.0) += stems[c];
                    }
                }
            }
            // The primary method treats the most stems (the first in catalogue order on a tie).
            let primary = treated
                .iter()
                .fold(None::<(MethodId, f64)>, |best, (&m, &n)| match best {
                    Some((_, b)) if b >= n => best,
                    _ => Some((m, n)),
                })
                .map(|(m, _)| m)
                .unwrap_or_default();
            out.push(Choice {
                method: primary,
                // Money is priced to the cent per patch, as a contract line would be.
                cost: ((fixed + variable) * patch.site.cost_factor * 100.0).round() / 100.0,
                hours,
                remaining,
                per_class,
            });
        }
        // Next combination.
        let mut k = present.len();
        loop {
            if k == 0 {
                break 'combinations;
            }
            k -= 1;
            index[k] += 1;
            if index[k] < options[k].len() {
                continue 'combinations;
            }
            index[k] = 0;
        }
    }
    if catalogue.has_classes() {
        drop_dominated(&mut out);
    }
    out
}

/// The cost, hours and follow-up stems of `choice` on the patch's stems scaled by `scale` (a
/// programme's grown stand): fixed costs of the methods used + stems x cost per stem per class,
/// times the cost factor, to the cent; follow-up stems = each treated class's stems x its
/// method's follow-up share.
pub fn price_scaled(
    catalogue: &Catalogue,
    patch: &Patch,
    choice: &Choice,
    scale: f64,
) -> (f64, f64, f64) {
    let (stems, _) = catalogue.stems_by_class(patch);
    let mut used: Vec<MethodId> = Vec::new();
    let (mut fixed, mut variable, mut hours, mut follow) = (0.0, 0.0, 0.0, 0.0);
    for (c, &n) in stems.iter().enumerate() {
        let Some(m) = choice.method_for(c) else {
            continue;
        };
        let method = catalogue.method(m);
        let (cps, hps) = catalogue.cover(m, c).unwrap_or((0.0, 0.0));
        if !used.contains(&m) {
            used.push(m);
            fixed += method.cost_per_patch;
        }
        let n = n * scale;
        variable += cps * n;
        hours += hps * n;
        follow += method.follow_up_share() * n;
    }
    let cost = ((fixed + variable) * patch.site.cost_factor * 100.0).round() / 100.0;
    (cost, hours, follow)
}

/// Drop every prescription another is at least as good as on cost, hours and remaining (the
/// first of equals kept), so the optimiser sees only the Pareto set.
fn drop_dominated(choices: &mut Vec<Choice>) {
    let all = choices.clone();
    let mut kept = Vec::with_capacity(all.len());
    for (a, x) in all.iter().enumerate() {
        let dominated = all.iter().enumerate().any(|(b, y)| {
            b != a
                && y.cost <= x.cost
                && y.hours <= x.hours
                && y.remaining <= x.remaining
                && (y.cost < x.cost || y.hours < x.hours || y.remaining < x.remaining || b < a)
        });
        if !dominated {
            kept.push(*x);
        }
    }
    *choices = kept;
}

/// Caution codes for a prescription: those of every method it uses ([`caution_codes`]), merged.
pub fn prescription_cautions(
    catalogue: &Catalogue,
    choice: &Choice,
    patch: &Patch,
) -> Vec<&'static str> {
    let mut codes: Vec<&'static str> = choice
        .methods()
        .into_iter()
        .flat_map(|m| caution_codes(catalogue.method(m), patch))
        .collect();
    codes.sort_unstable();
    codes.dedup();
    codes
}

/// Caution codes for one treated patch: the method's own, with WATER by site — WATER where the
/// site is within a water buffer, WATER_UNCHECKED for herbicide work where no water layer was
/// given — plus the site's own codes (NO_HERBICIDE, RESTRICTED_SITE, PERMISSION).
pub fn caution_codes(method: &Method, patch: &Patch) -> Vec<&'static str> {
    let mut codes: Vec<&'static str> = method
        .cautions
        .iter()
        .filter_map(|c| cautions::lookup(c).map(|c| c.code))
        .filter(|c| *c != "WATER")
        .collect();
    match patch.site.water {
        Water::Near(_) => codes.push("WATER"),
        Water::Unchecked if method.herbicide => codes.push("WATER_UNCHECKED"),
        _ => {}
    }
    match patch.site.herbicide {
        Herbicide::Restricted if method.herbicide => codes.push("RESTRICTED_SITE"),
        Herbicide::Prohibited => codes.push("NO_HERBICIDE"),
        _ => {}
    }
    if patch.site.access == Access::Permission {
        codes.push("PERMISSION");
    }
    codes.sort_unstable();
    codes.dedup();
    codes
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::core::site::PatchId;

    fn patch(access: Access, herbicide: Herbicide, cost_factor: f64) -> Patch {
        Patch {
            id: PatchId(0),
            label: "T".into(),
            x: 0.0,
            y: 0.0,
            stems: 100.0,
            area_ha: None,
            outline: None,
            site: Site {
                access,
                herbicide,
                cost_factor,
                ..Site::default()
            },
            pressure_override: None,
            suitability: None,
            by_class: None,
        }
    }

    #[test]
    fn builtin_catalogue_is_valid_and_offers_no_cut_only_method() {
        let (c, _) = Catalogue::load(None).unwrap();
        assert!(c.methods.len() >= 4);
        assert!(
            c.methods.iter().all(|m| !m.id.contains("cut")),
            "cutting alone must not be offered"
        );
        assert!(
            c.methods.iter().any(|m| !m.herbicide),
            "a non-herbicide method for prohibited sites"
        );
    }

    /// The built-in catalogue as it was before size classes (tests/fixtures/one_class).
    const ONE_CLASS: &str = include_str!("../../tests/fixtures/one_class/treatments.toml");

    #[test]
    fn cost_and_hours_follow_the_formula() {
        let c = Catalogue::parse(ONE_CLASS, "one class").unwrap();
        let choices = choices_for(&c, &patch(Access::Open, Herbicide::Allowed, 1.5), false);
        let traps = c.methods.iter().filter(|m| m.sink_kill.is_some()).count();
        assert_eq!(
            choices.len(),
            c.methods.len() - traps,
            "trap trees only on request"
        );
        let with_traps = choices_for(&c, &patch(Access::Open, Herbicide::Allowed, 1.5), true);
        assert_eq!(with_traps.len(), c.methods.len());
        for ch in &with_traps {
            let m = c.method(ch.method);
            assert!(
                (ch.cost - (m.cost_per_patch + m.cost_per_stem * 100.0) * 1.5).abs()
                    <= 0.005 + 1e-9
            );
            assert!((ch.hours - m.hours_per_stem * 100.0).abs() < 1e-9);
            // r = (1 - e)(1 - sink kill): the kept stems are host, but insects landing there die.
            let sink = m.sink_kill.unwrap_or(0.0);
            assert!((ch.remaining - (1.0 - m.effectiveness) * (1.0 - sink)).abs() < 1e-12);
        }
    }

    #[test]
    fn eligibility_and_site_cautions() {
        let (c, _) = Catalogue::load(None).unwrap();
        assert!(choices_for(&c, &patch(Access::Denied, Herbicide::Allowed, 1.0), false).is_empty());
        let prohibited = choices_for(&c, &patch(Access::Open, Herbicide::Prohibited, 1.0), false);
        assert!(
            !prohibited.is_empty() && prohibited.iter().all(|ch| !c.method(ch.method).herbicide)
        );
        let restricted = patch(Access::Permission, Herbicide::Restricted, 1.0);
        let herbicide_method = c.methods.iter().find(|m| m.herbicide).unwrap();
        let codes = caution_codes(herbicide_method, &restricted);
        assert!(
            codes.contains(&"RESTRICTED_SITE")
                && codes.contains(&"PERMISSION")
                && codes.contains(&"LABEL")
        );
    }

    /// Size classes from the methods notes section 8 (Penn State Extension, USDA Forest Service
    /// 2014, from memory): no built-in method is used on a class it does not cover, and the
    /// prescription's numbers follow its formula.
    #[test]
    fn prescriptions_cover_only_their_classes() {
        let (c, _) = Catalogue::load(None).unwrap();
        assert_eq!(c.class_ids(), ["seedlings", "saplings", "trees"]);
        let mut p = patch(Access::Open, Herbicide::Allowed, 1.0);
        p.by_class = Some(vec![60.0, 30.0, 10.0]);
        let choices = choices_for(&c, &p, true);
        assert!(!choices.is_empty());
        for ch in &choices {
            for class in 0..3 {
                if let Some(m) = ch.method_for(class) {
                    assert!(
                        c.cover(m, class).is_some(),
                        "{} on class {class}",
                        c.method(m).id
                    );
                }
            }
            assert!(
                ch.per_class.iter().any(|&m| m != LEAVE),
                "no all-leave choice"
            );
            // Cost: fixed cost of each distinct method + per-class stems x cost per stem.
            let methods = ch.methods();
            let mut cost: f64 = methods.iter().map(|&m| c.method(m).cost_per_patch).sum();
            let mut remaining = 0.0;
            for class in 0..3 {
                let n = p.by_class.as_ref().unwrap()[class];
                match ch.method_for(class) {
                    Some(m) => {
                        cost += n * c.cover(m, class).unwrap().0;
                        remaining += n / 100.0 * c.method(m).remaining();
                    }
                    None => remaining += n / 100.0,
                }
            }
            assert!((ch.cost - cost).abs() <= 0.005 + 1e-9);
            assert!((ch.remaining - remaining).abs() < 1e-12);
        }
        // No choice is dominated by another.
        for a in &choices {
            assert!(!choices.iter().any(|b| b != a
                && b.cost <= a.cost
                && b.hours <= a.hours
                && b.remaining <= a.remaining));
        }
        // Only trees: only stem injection (or trap trees) is applied, to the trees.
        p.by_class = Some(vec![0.0, 0.0, 10.0]);
        for ch in choices_for(&c, &p, true) {
            let id = &c.method(ch.method).id;
            assert!(id == "stem_injection" || id == "trap_tree", "{id}");
        }
        // No herbicide: only pulling, on seedlings; the rest is left.
        let mut p = patch(Access::Open, Herbicide::Prohibited, 1.0);
        p.by_class = Some(vec![60.0, 30.0, 10.0]);
        let choices = choices_for(&c, &p, false);
        assert_eq!(choices.len(), 1);
        assert_eq!(c.method(choices[0].method).id, "pull_seedlings");
        assert!((choices[0].remaining - (0.6 * 0.4 + 0.4)).abs() < 1e-12);
        // Counted only as stems: the default mix 60/30/10 applies.
        p.by_class = None;
        assert_eq!(c.stems_by_class(&p), (vec![60.0, 30.0, 10.0], true));
    }

    #[test]
    fn size_class_mistakes_are_refused() {
        let (_, text) = Catalogue::load(None).unwrap();
        for (from, to, says) in [
            (
                "size_classes = [\"saplings\"]",
                "size_classes = [\"sapling\"]",
                "unknown size class",
            ),
            ("size_classes = [\"saplings\"]", "", "no size_classes"),
            ("default_share = 0.10", "default_share = 0.20", "sum to 1"),
            (
                "hours_per_stem = 0.08 }",
                "hours_per_steem = 0.08 }",
                "line",
            ),
        ] {
            let bad = text.replacen(from, to, 1);
            let e = Catalogue::parse(&bad, "t").unwrap_err().to_string();
            assert!(e.contains(says), "{from} -> {to}: {e}");
        }
        let (mut c, _) = Catalogue::load(None).unwrap();
        let mut mix = BTreeMap::new();
        mix.insert("trees".to_string(), 1.0);
        c.set_default_mix(&mix).unwrap();
        assert_eq!(c.default_mix, [0.0, 0.0, 1.0]);
        mix.insert("poles".to_string(), 0.0);
        assert!(c.set_default_mix(&mix).is_err());
    }

    #[test]
    fn invalid_catalogues_are_refused() {
        let base = "[[method]]\nid = \"a\"\nlabel = \"a\"\neffectiveness = 0.5\ncost_per_stem = 1\ncost_per_patch = 1\nhours_per_stem = 0\nherbicide = false\nmonths = [7]\n";
        assert!(Catalogue::parse(base, "t").is_ok());
        assert!(Catalogue::parse(&base.replace("0.5", "-0.1"), "t").is_err());
        assert!(Catalogue::parse(&base.replace("[7]", "[13]"), "t").is_err());
        assert!(
            Catalogue::parse(&format!("{base}{base}"), "t")
                .unwrap_err()
                .to_string()
                .contains("duplicate")
        );
        assert!(
            Catalogue::parse(
                &base.replace("months = [7]", "months = [7]\ncautions = [\"NOPE\"]"),
                "t"
            )
            .is_err()
        );
    }
}
