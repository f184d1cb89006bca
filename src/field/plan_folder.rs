//! A plan folder read back: plan.csv, patches.csv, treatments.used.toml and summary.json, typed.
//! What `orders` and `contract` start from, so they describe exactly the plan that was written.
//!
//! Methods are resolved to [`MethodId`]s of the folder's own catalogue once, on reading; a name
//! the catalogue lacks is an input error (exit 2) there, never a failed lookup later.
//!
//! # Units
//! Money in the catalogue's currency; stems as counts; areas in hectares; coordinates in the
//! folder's working CRS (`summary.crs`).

use std::path::{Path, PathBuf};

use serde::{Deserialize, Deserializer, Serialize};

use crate::core::error::{Error, Result};
use crate::core::site::{Access, Herbicide, Site, Water};
use crate::input::patches::Patches;
use crate::input::treatments::{Catalogue, Method, MethodId};

/// One treated patch as plan.csv records it.
#[derive(Debug, Clone, Deserialize)]
pub struct PlannedPatch {
    pub priority: usize,
    pub patch_id: String,
    pub method: String,
    /// `method` in the folder's catalogue, resolved when the folder is read.
    #[serde(skip)]
    pub method_id: MethodId,
    pub stems: f64,
    pub cost: f64,
    pub crew_hours: f64,
    #[serde(default)]
    pub reduction_pct: f64,
    #[serde(default)]
    pub x: f64,
    #[serde(default)]
    pub y: f64,
    pub access: String,
    pub herbicide: String,
    #[serde(default)]
    pub parcel: String,
    #[serde(default)]
    pub contact: String,
    #[serde(default)]
    pub cautions: String,
    /// The site's rules in words (no herbicide, restricted conditions, water nearby).
    #[serde(default)]
    pub site_notes: String,
    /// What each size class gets (`trees: stem_injection 12; saplings: leave 140`); empty for a
    /// catalogue without size classes.
    #[serde(default)]
    pub prescription: String,
    /// `prescription` read: class, method (None = leave) and stems, resolved with the folder.
    #[serde(skip)]
    pub classes: Vec<ClassTreatment>,
}

/// One size class of a planned patch: its method (None when left) and stems.
#[derive(Debug, Clone, PartialEq)]
pub struct ClassTreatment {
    pub class: String,
    pub method: Option<MethodId>,
    pub stems: f64,
}

impl PlannedPatch {
    /// The distinct methods the patch gets, in catalogue order (the plan's method alone
    /// without size classes).
    pub fn methods_used(&self) -> Vec<MethodId> {
        let mut out: Vec<MethodId> = self.classes.iter().filter_map(|c| c.method).collect();
        if out.is_empty() {
            out.push(self.method_id);
        }
        out.sort_unstable();
        out.dedup();
        out
    }

    /// Each class's method (None = leave) and whole stems scaled by `share` (a part of a split
    /// patch), the stems adding up to the part's (largest remainder); empty without classes.
    pub fn class_stems(&self, share: f64) -> Vec<(&str, Option<MethodId>, f64)> {
        let scaled: Vec<f64> = self.classes.iter().map(|c| c.stems * share).collect();
        let whole = crate::input::treatments::whole_stems(&scaled, scaled.iter().sum());
        self.classes
            .iter()
            .zip(whole)
            .map(|(c, n)| (c.class.as_str(), c.method, n))
            .collect()
    }

    /// The prescription in words with each class's stems scaled by `share` (a part of a split
    /// patch), method names spelled out; empty without size classes.
    pub fn prescription_text(&self, catalogue: &Catalogue, share: f64) -> String {
        self.class_stems(share)
            .into_iter()
            .map(|(class, method, n)| {
                format!(
                    "{class}: {} {n:.0}",
                    method
                        .map(|m| catalogue.method(m).id.replace('_', " "))
                        .unwrap_or_else(|| "leave".into()),
                )
            })
            .collect::<Vec<_>>()
            .join("; ")
    }

    /// Whether the site forbids herbicide.
    pub fn no_herbicide(&self) -> bool {
        self.herbicide == "prohibited"
    }

    /// The restricted-site conditions from `site_notes`, if the site is restricted.
    pub fn restriction(&self) -> Option<&str> {
        (self.herbicide == "restricted").then(|| {
            self.site_notes
                .split("; ")
                .find(|n| n.starts_with("restricted site"))
                .unwrap_or("restricted site: herbicide only under the site's conditions; confirm them with the site manager")
        })
    }

    /// The water note from `site_notes` (e.g. `near water: Mill Creek (12 m)`), if any.
    pub fn near_water(&self) -> Option<&str> {
        self.site_notes
            .split("; ")
            .find(|n| n.starts_with("near water"))
    }
}

/// One patch as patches.csv records it.
#[derive(Debug, Clone, Deserialize)]
pub struct PatchRecord {
    pub patch_id: String,
    pub x: f64,
    pub y: f64,
    pub stems: f64,
    #[serde(default)]
    pub area_ha: Option<f64>,
    pub pressure: f64,
    pub access: String,
    pub herbicide: String,
    pub cost_factor: f64,
    #[serde(default)]
    pub suitability: Option<f64>,
    #[serde(default)]
    pub eligible: String,
    #[serde(default)]
    pub method: String,
    #[serde(default)]
    pub parcel: String,
    #[serde(default)]
    pub contact: String,
    /// Corridor names near the patch, `;`-separated.
    #[serde(default)]
    pub corridors: String,
}

/// A plan folder's outputs, read back.
#[derive(Debug, Clone)]
pub struct PlanFolder {
    pub dir: PathBuf,
    pub planned: Vec<PlannedPatch>,
    pub patches: Vec<PatchRecord>,
    pub catalogue: Catalogue,
    /// The CRS named in summary.json, for the next season's `--crs`.
    pub crs: String,
    /// summary.json as written by the plan.
    pub summary: Summary,
}

fn read_csv<T: for<'de> Deserialize<'de>>(path: &Path) -> Result<Vec<T>> {
    let mut reader = csv::Reader::from_path(path).map_err(|e| {
        Error::input_with_hint(
            format!("cannot read `{}`: {e}", path.display()),
            "give the `--out` folder of a `hostcut plan` run",
        )
    })?;
    let headers = reader
        .headers()
        .map_err(|e| {
            Error::input_with_hint(
                format!("`{}`, line 1: {e}", path.display()),
                "the plan folder's files must not be edited; run `hostcut plan` again",
            )
        })?
        .clone();
    let mut out = Vec::new();
    for (k, record) in reader.records().enumerate() {
        // Cells the tool neutralised for spreadsheets ([`crate::core::csv_cells`]) read as they were.
        let row = record
            .and_then(|r| crate::core::csv_cells::restored(&r).deserialize(Some(&headers)))
            .map_err(|e| {
                Error::input_with_hint(
                    format!("`{}`, line {}: {e}", path.display(), k + 2),
                    "the plan folder's files must not be edited; run `hostcut plan` again",
                )
            })?;
        out.push(row);
    }
    Ok(out)
}

impl PlanFolder {
    /// Whether any planned patch gets a herbicide method.
    pub fn prescribes_herbicide(&self) -> bool {
        self.planned.iter().any(|p| {
            p.methods_used()
                .iter()
                .any(|&m| self.catalogue.method(m).herbicide)
        })
    }

    pub fn read(dir: &Path) -> Result<PlanFolder> {
        for f in [
            "plan.csv",
            "patches.csv",
            "treatments.used.toml",
            "summary.json",
        ] {
            if !dir.join(f).is_file() {
                return Err(Error::input_with_hint(
                    format!("`{}` is not a plan folder (no {f})", dir.display()),
                    "give the `--out` folder of a `hostcut plan` or `hostcut demo` run",
                ));
            }
        }
        let planned = read_csv(&dir.join("plan.csv"))?;
        let patches = read_csv(&dir.join("patches.csv"))?;
        let (catalogue, _) = Catalogue::load(Some(&dir.join("treatments.used.toml")))?;
        let summary_path = dir.join("summary.json");
        let summary: Summary = serde_json::from_str(
            &std::fs::read_to_string(&summary_path)
                .map_err(|e| Error::io("read", &summary_path, e))?,
        )
        .map_err(|e| {
            Error::input(format!(
                "`{}`: summary.json is not a plan summary ({e})",
                dir.display()
            ))
        })?;
        let crs = summary.crs.clone();
        let mut planned: Vec<PlannedPatch> = planned;
        for p in &mut planned {
            p.method_id = catalogue.find(&p.method).ok_or_else(|| {
                Error::input(format!(
                    "`{}`: plan.csv names method `{}`, which treatments.used.toml does not have",
                    dir.display(),
                    p.method
                ))
            })?;
            p.classes = parse_prescription(&p.prescription, &catalogue).map_err(|why| {
                Error::input_with_hint(
                    format!(
                        "`{}`: plan.csv, patch `{}`, column `prescription`: {why}",
                        dir.display(),
                        p.patch_id
                    ),
                    "give the folder as `hostcut plan` wrote it",
                )
            })?;
        }
        let folder = PlanFolder {
            dir: dir.to_path_buf(),
            planned,
            patches,
            catalogue,
            crs,
            summary,
        };
        Ok(folder)
    }

    /// The methods of a planned patch (each resolved when the folder was read).
    pub fn methods_of(&self, patch: &PlannedPatch) -> Vec<&Method> {
        patch
            .methods_used()
            .into_iter()
            .map(|m| self.catalogue.method(m))
            .collect()
    }

    /// The method of a planned patch (resolved when the folder was read, so it cannot fail).
    pub fn method_of(&self, patch: &PlannedPatch) -> &Method {
        self.catalogue.method(patch.method_id)
    }

    pub fn area_of(&self, id: &str) -> Option<f64> {
        self.patches
            .iter()
            .find(|p| p.patch_id == id)
            .and_then(|p| p.area_ha)
    }
}

/// `summary.json` of a plan folder, as `hostcut plan` writes it and `orders` and `contract` read
/// it back. Every field has a default, so a folder from an older version (or a programme's
/// season folder, which writes a subset) still reads; a number written as `null` (not finite)
/// reads back as NaN.
#[derive(Debug, Clone, Default, Serialize, Deserialize)]
#[serde(default)]
pub struct Summary {
    pub currency: String,
    #[serde(deserialize_with = "number")]
    pub budget: f64,
    #[serde(deserialize_with = "number")]
    pub spent: f64,
    pub crew_hours_limit: Option<f64>,
    #[serde(deserialize_with = "number")]
    pub crew_hours: f64,
    #[serde(deserialize_with = "number")]
    pub risk_before: f64,
    #[serde(deserialize_with = "number")]
    pub risk_after: f64,
    #[serde(deserialize_with = "number")]
    pub risk_reduction_pct: f64,
    #[serde(deserialize_with = "number")]
    pub lambda_before: f64,
    #[serde(deserialize_with = "number")]
    pub lambda_after: f64,
    /// False when lambda_M or the establishment probabilities were cut short by the time limit.
    pub metrics_converged: bool,
    pub greedy_risk_after: Option<f64>,
    pub greedy_reduction_pct: Option<f64>,
    pub status: String,
    pub gap: Option<f64>,
    pub bound: Option<f64>,
    #[serde(deserialize_with = "number")]
    pub solve_seconds: f64,
    /// `--time-limit-s`: the limit on the whole command's wall time.
    #[serde(deserialize_with = "number")]
    pub time_limit_s: f64,
    /// Seconds from the command's start to writing summary.json (reading layers included).
    #[serde(deserialize_with = "number")]
    pub elapsed_s: f64,
    /// How the plan was searched for (e.g. `transport MIP`, `component merge MIP`).
    pub solver_path: String,
    /// Which proof gave `bound`: exact, floor, relaxation or HiGHS dual bound.
    pub bound_from: String,
    pub n_patches: usize,
    pub n_edges: usize,
    pub n_treated: usize,
    pub n_eligible: usize,
    #[serde(deserialize_with = "number")]
    pub stems_total: f64,
    #[serde(deserialize_with = "number")]
    pub stems_treated: f64,
    pub dropped_slivers: usize,
    pub host_source: String,
    /// The work CRS: x, y of plan.csv and patches.csv are in it.
    pub crs: String,
    /// How an inventory's coordinates were converted into the work CRS (lon/lat into a UTM
    /// zone, feet into metres); absent when they were used as given.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub crs_conversion: Option<String>,
    /// The inventory CRS's linear unit when it was not metres (e.g. `US survey foot`): the
    /// distances people read (walks, drives) are printed in feet and miles; absent otherwise.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub input_linear_units: Option<String>,
    pub kernel: String,
    #[serde(deserialize_with = "number")]
    pub alpha_m: f64,
    #[serde(deserialize_with = "number")]
    pub epsilon: f64,
    pub tool_version: String,
    /// Today's-practice plans under the same budget, hours and eligibility.
    pub baselines: serde_json::Map<String, serde_json::Value>,
    /// Depot used by the nearest-first baseline, working CRS.
    #[serde(deserialize_with = "pair")]
    pub depot: [f64; 2],
    /// The suitability layer used, if any (effective host = stems x suitability).
    pub suitability_layer: Option<String>,
    /// Plans across dispersal scenarios: the objective, each scenario and the regret table's
    /// verdict (absent for a single kernel).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ensemble: Option<serde_json::Value>,
    /// Cells, features and patches skipped while reading, by reason.
    pub skipped: crate::input::layers::Skipped,
    /// Patches kept with no host the insect can establish on (suitability 0 or 0 stems): risk
    /// 0, not planned for treatment unless required (patches.csv lists them).
    pub patches_without_host: usize,
    /// How the site rules were read and checked.
    pub site_rules: SiteRules,
    /// The size-class mix assumed for patches counted only as stems (absent when every patch
    /// was counted by class, or the catalogue has no size classes).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub stem_mix_assumption: Option<String>,
    /// Why R and lambda_M fell by very different shares (issue 22); absent when they agree to
    /// within `planning::divergence::THRESHOLD_POINTS`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub measures_diverge: Option<crate::planning::divergence::Divergence>,
    /// Why R and the host expected occupied at equilibrium (p*) fell by very different shares;
    /// absent when they agree to within `planning::divergence::THRESHOLD_POINTS`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub establishment_diverges: Option<crate::planning::divergence::EstablishmentDivergence>,
    /// The objective's horizon (`--horizon-years`, default 10; always stated by plans made
    /// since it became the default, absent in older folders, which were one-season): above 1,
    /// R, lambda_M and p* after are at each treated patch's mean remaining host over that many
    /// years of regrowth; 1 is the host right after treatment.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub horizon_years: Option<u32>,
}

/// summary.json's `site_rules`: whether water was checked, how many sites carry each rule, and
/// the rules that took their default.
#[derive(Debug, Clone, Default, Serialize, Deserialize)]
#[serde(default)]
pub struct SiteRules {
    /// `true` when water layers were given (patches are near water or clear), else every site
    /// is unchecked.
    pub water_checked: bool,
    pub patches_near_water: usize,
    pub patches_herbicide_prohibited: usize,
    pub patches_restricted: usize,
    pub patches_access_denied: usize,
    pub notes: Vec<String>,
}

impl SiteRules {
    pub fn of(patches: &Patches) -> SiteRules {
        let count = |f: &dyn Fn(&Site) -> bool| patches.items.iter().filter(|p| f(&p.site)).count();
        SiteRules {
            water_checked: patches.water_checked,
            patches_near_water: count(&|s| matches!(s.water, Water::Near(_))),
            patches_herbicide_prohibited: count(&|s| s.herbicide == Herbicide::Prohibited),
            patches_restricted: count(&|s| s.herbicide == Herbicide::Restricted),
            patches_access_denied: count(&|s| s.access == Access::Denied),
            notes: patches.notes.clone(),
        }
    }
}

/// A number that was written as `null` because it was not finite reads back as NaN.
fn number<'de, D: Deserializer<'de>>(d: D) -> std::result::Result<f64, D::Error> {
    Ok(Option::<f64>::deserialize(d)?.unwrap_or(f64::NAN))
}

fn pair<'de, D: Deserializer<'de>>(d: D) -> std::result::Result<[f64; 2], D::Error> {
    let [a, b] = <[Option<f64>; 2]>::deserialize(d)?;
    Ok([a.unwrap_or(f64::NAN), b.unwrap_or(f64::NAN)])
}

/// The polygon outlines of a plan folder's patches (from plan.geojson), by patch id, as WKT in
/// the folder's work CRS; empty when the folder has no plan.geojson or names no CRS (stands
/// without outlines have none).
pub fn outlines(folder: &PlanFolder) -> Result<std::collections::BTreeMap<String, String>> {
    let path = folder.dir.join("plan.geojson");
    if folder.crs.is_empty() || !path.is_file() {
        return Ok(Default::default());
    }
    let crs = crate::input::gis::Crs::parse(&folder.crs, "the plan folder's work CRS")?;
    crate::input::gis::outlines_wkt(&path, &crs)
}

/// Read a `prescription` cell (`trees: stem_injection 12; saplings: leave 140`).
pub fn parse_prescription(
    cell: &str,
    catalogue: &Catalogue,
) -> std::result::Result<Vec<ClassTreatment>, String> {
    let mut out = Vec::new();
    for part in cell.split(';').map(str::trim).filter(|p| !p.is_empty()) {
        let (class, rest) = part
            .split_once(':')
            .ok_or_else(|| format!("`{part}` is not `class: method stems`"))?;
        let (method, stems) = rest
            .trim()
            .rsplit_once(' ')
            .ok_or_else(|| format!("`{part}` is not `class: method stems`"))?;
        let stems: f64 = stems
            .parse()
            .map_err(|_| format!("`{part}`: `{stems}` is not a number of stems"))?;
        let method = match method {
            "leave" => None,
            m => Some(
                catalogue
                    .find(m)
                    .ok_or_else(|| format!("method `{m}` is not in treatments.used.toml"))?,
            ),
        };
        out.push(ClassTreatment {
            class: class.trim().to_string(),
            method,
            stems,
        });
    }
    Ok(out)
}
