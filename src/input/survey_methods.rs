//! The survey-method catalogue (`models/survey_methods.toml`, compiled in; `--survey-methods
//! FILE` replaces it): per method the detection probability per visit, the hours per visit, the
//! months and the life stage it finds. The built-in values are illustrative and say so.
//!
//! # Units
//! Probabilities 0 to 1; hours; months 1 to 12.

use std::path::Path;

use crate::core::error::{Error, Result};

/// The built-in catalogue's text.
pub const BUILTIN: &str = include_str!("../../models/survey_methods.toml");

/// One survey method.
#[derive(Debug, Clone, PartialEq, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SurveyMethod {
    pub id: String,
    pub name: String,
    pub life_stage: String,
    pub months: Vec<u32>,
    /// d: probability one visit finds a population that is there.
    pub detect_per_visit: f64,
    pub hours_per_visit: f64,
    pub look_for: String,
}

#[derive(Debug, Clone, serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct File {
    method: Vec<SurveyMethod>,
}

/// The catalogue and where it came from.
#[derive(Debug, Clone)]
pub struct SurveyMethods {
    pub methods: Vec<SurveyMethod>,
    /// `built-in models/survey_methods.toml` or the file's path.
    pub origin: String,
    pub text: String,
}

impl SurveyMethods {
    /// The built-in catalogue, or the file that replaces it.
    pub fn load(path: Option<&Path>) -> Result<SurveyMethods> {
        match path {
            None => SurveyMethods::parse(BUILTIN, "built-in models/survey_methods.toml"),
            Some(p) => {
                let text = std::fs::read_to_string(p).map_err(|e| Error::io("read", p, e))?;
                SurveyMethods::parse(&text, &p.display().to_string())
            }
        }
    }

    /// Parse and check a catalogue's text.
    pub fn parse(text: &str, origin: &str) -> Result<SurveyMethods> {
        let text = text.strip_prefix('\u{feff}').unwrap_or(text);
        let file: File = toml::from_str(text).map_err(|e| {
            Error::input_with_hint(
                format!("survey methods `{origin}`: {}", e.message()),
                "one [[method]] table per method with id, name, life_stage, months, detect_per_visit, hours_per_visit, look_for (see the built-in models/survey_methods.toml)",
            )
        })?;
        if file.method.is_empty() {
            return Err(Error::input(format!(
                "survey methods `{origin}` lists no [[method]]"
            )));
        }
        for (k, m) in file.method.iter().enumerate() {
            let bad = |what: String| {
                Error::input_with_hint(
                    format!("survey methods `{origin}`, method `{}`: {what}", m.id),
                    "detect_per_visit is a probability above 0 and at most 1, hours_per_visit more than 0, months 1 to 12",
                )
            };
            if m.id.trim().is_empty() {
                return Err(bad("the id is empty".into()));
            }
            if file.method[..k].iter().any(|o| o.id == m.id) {
                return Err(bad("the id is used twice".into()));
            }
            if !(m.detect_per_visit > 0.0 && m.detect_per_visit <= 1.0) {
                return Err(bad(format!("detect_per_visit {}", m.detect_per_visit)));
            }
            if !(m.hours_per_visit > 0.0 && m.hours_per_visit.is_finite()) {
                return Err(bad(format!("hours_per_visit {}", m.hours_per_visit)));
            }
            if m.months.is_empty() || m.months.iter().any(|v| !(1..=12).contains(v)) {
                return Err(bad(format!("months {:?}", m.months)));
            }
        }
        Ok(SurveyMethods {
            methods: file.method,
            origin: origin.to_string(),
            text: text.to_string(),
        })
    }

    /// The method with this id.
    pub fn get(&self, id: &str) -> Option<&SurveyMethod> {
        self.methods.iter().find(|m| m.id == id)
    }

    /// The months a method is used in, as text (`Oct-Apr`).
    pub fn months_text(m: &SurveyMethod) -> String {
        const NAMES: [&str; 12] = [
            "Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec",
        ];
        m.months
            .iter()
            .map(|&v| NAMES[(v - 1) as usize])
            .collect::<Vec<_>>()
            .join(" ")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_builtin_catalogue_reads_and_says_it_is_illustrative() {
        let c = SurveyMethods::load(None).unwrap();
        assert!(c.methods.len() >= 2);
        assert!(c.text.contains("ILLUSTRATIVE, NOT SOURCED"));
    }

    #[test]
    fn a_detection_probability_above_one_is_refused() {
        let bad = BUILTIN.replacen("detect_per_visit = 0.30", "detect_per_visit = 1.3", 1);
        let e = SurveyMethods::parse(&bad, "x.toml")
            .unwrap_err()
            .to_string();
        assert!(e.contains("detect_per_visit 1.3"), "{e}");
    }
}
