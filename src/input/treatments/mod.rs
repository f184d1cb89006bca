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
pub const BUILTIN: &str = include_str!("../../../models/treatments.toml");

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
    /// How much one stem of the class counts in the patch's host (default 1): the remaining
    /// host r_i is the host-weighted remainder over classes, so a class that carries more of
    /// the risk (seed trees) counts for more than its stem count.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub host_weight: Option<f64>,
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
            if let Some(v) = c.host_weight
                && !(v.is_finite() && v > 0.0)
            {
                return Err(bad(format!(
                    "size class `{id}`: host_weight must be more than 0, got {v}"
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

    /// Each class's host weight (1 for the implicit class and a class without `host_weight`).
    pub fn host_weights(&self) -> Vec<f64> {
        if self.size_classes.is_empty() {
            return vec![1.0];
        }
        self.size_classes
            .iter()
            .map(|c| c.host_weight.unwrap_or(1.0))
            .collect()
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

    /// The method a follow-up visit after `m` uses: its `follow_up_method`, or `m` again.
    pub fn follow_up_of(&self, m: MethodId) -> MethodId {
        self.method(m)
            .follow_up_method
            .as_ref()
            .and_then(|id| self.find(id))
            .unwrap_or(m)
    }

    pub fn method(&self, id: MethodId) -> &Method {
        &self.methods[id.0 as usize]
    }
}

mod prescription;
pub use prescription::*;

#[cfg(test)]
mod tests;
