//! The treatment catalogue: methods, their effectiveness, cost, crew time and cautions, and which
//! methods each patch may receive.
//!
//! # Units
//! Costs in the catalogue's `currency`; crew time in hours; effectiveness is the share of a
//! patch's host removed (0 to 1).

use std::collections::BTreeSet;
use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::cautions;
use crate::error::{Error, Result};
use crate::patches::{Access, Herbicide, Patch};

/// The built-in catalogue, `models/treatments.toml`.
pub const BUILTIN: &str = include_str!("../models/treatments.toml");

/// Index of a method in the catalogue.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
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
            let line = e.span().map(|s| text[..s.start].lines().count().max(1));
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
                let text = fs_err::read_to_string(p).map_err(|e| {
                    Error::io("read", p, std::io::Error::new(e.kind(), e.to_string()))
                })?;
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
/// methods. Restricted herbicide sites stay eligible and are flagged by the caution codes.
pub fn choices_for(catalogue: &Catalogue, patch: &Patch) -> Vec<Choice> {
    if patch.site.access == Access::Denied {
        return Vec::new();
    }
    catalogue
        .methods
        .iter()
        .enumerate()
        .filter(|(_, m)| !(m.herbicide && patch.site.herbicide == Herbicide::Prohibited))
        .filter(|(_, m)| m.effectiveness > 0.0)
        .map(|(k, m)| Choice {
            method: MethodId(k as u16),
            cost: (m.cost_per_patch + m.cost_per_stem * patch.stems) * patch.site.cost_factor,
            hours: m.hours_per_stem * patch.stems,
            remaining: 1.0 - m.effectiveness,
        })
        .collect()
}

/// Caution codes for one treated patch: the method's own plus the site's.
pub fn caution_codes(method: &Method, patch: &Patch) -> Vec<&'static str> {
    let mut codes: Vec<&'static str> = method
        .cautions
        .iter()
        .filter_map(|c| cautions::lookup(c).map(|c| c.code))
        .collect();
    if method.herbicide && patch.site.herbicide == Herbicide::Restricted {
        codes.push("RESTRICTED_SITE");
    }
    if patch.site.access == Access::Permission {
        codes.push("PERMISSION");
    }
    codes.sort_unstable();
    codes.dedup();
    codes
}
