//! The treatment catalogue: methods, their effectiveness, cost, crew time and cautions, and which
//! methods each patch may receive.
//!
//! # Units
//! Costs in the catalogue's `currency`; crew time in hours; effectiveness is the share of a
//! patch's host removed (0 to 1).

use std::collections::BTreeSet;
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
}

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
    #[serde(rename = "method")]
    pub methods: Vec<Method>,
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

    fn validate(&self, origin: &str) -> Result<()> {
        if self.methods.is_empty() {
            return Err(Error::input(format!(
                "treatment catalogue `{origin}` has no [[method]]"
            )));
        }
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

/// One way to treat one patch: the method, what it costs there and what it leaves.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Choice {
    pub method: MethodId,
    pub cost: f64,
    pub hours: f64,
    /// r = 1 - effectiveness: the share of host left after treatment.
    pub remaining: f64,
}

/// The methods a patch may receive. Denied access: none. Herbicide prohibited: no herbicide
/// methods. Within a water buffer: only methods allowed near water. Restricted sites: no
/// drift-prone method unless the catalogue allows it there; the rest stay eligible and are
/// flagged by the caution codes. Trap-tree methods (with `sink_kill`) only when `trap_trees`
/// is on.
pub fn choices_for(catalogue: &Catalogue, patch: &Patch, trap_trees: bool) -> Vec<Choice> {
    catalogue
        .methods
        .iter()
        .enumerate()
        .filter(|(_, m)| m.allowed_on(&patch.site))
        .filter(|(_, m)| m.effectiveness > 0.0)
        .filter(|(_, m)| trap_trees || m.sink_kill.is_none())
        .map(|(k, m)| Choice {
            method: MethodId(k as u16),
            // Money is priced to the cent per patch, as a contract line would be.
            cost: ((m.cost_per_patch + m.cost_per_stem * patch.stems)
                * patch.site.cost_factor
                * 100.0)
                .round()
                / 100.0,
            hours: m.hours_per_stem * patch.stems,
            remaining: m.remaining(),
        })
        .collect()
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

    #[test]
    fn cost_and_hours_follow_the_formula() {
        let (c, _) = Catalogue::load(None).unwrap();
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
