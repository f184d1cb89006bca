//! The scenario: one `Scenario` type is both the scenario file a user writes and the
//! `scenario.resolved.toml` a run writes back, with its sections (host, access, site layers,
//! corridors, detections, model, plan, solver, ensemble) and the calibration file. Reading and
//! the schema live here, in the earliest stage, because every input stage reads its section;
//! merging flags over it and validating it is `app::resolve`.
//!
//! # Units
//! Distances in metres, areas in hectares, densities in stems per hectare, money in the currency
//! of the treatment catalogue, time in hours (crew) or seconds (solver).

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::core::error::{Error, Result};
use crate::core::kernel::KernelKind;

/// Default dispersal scale in metres; see docs/model.md for the reasoning.
pub const DEFAULT_ALPHA_M: f64 = 200.0;

#[derive(Debug, Clone, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Scenario {
    #[serde(default)]
    pub host: HostSection,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub access: Option<AccessSection>,
    #[serde(default, rename = "corridor", skip_serializing_if = "Vec::is_empty")]
    pub corridors: Vec<CorridorSection>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub detections: Option<DetectionSection>,
    /// Water features (streams, ponds, wells, wetlands) whose buffer limits herbicide methods.
    #[serde(default, rename = "water", skip_serializing_if = "Vec::is_empty")]
    pub water: Vec<SiteLayerSection>,
    /// Sensitive sites (schools, water supplies, habitats) whose buffer makes patches
    /// restricted sites.
    #[serde(default, rename = "sensitive", skip_serializing_if = "Vec::is_empty")]
    pub sensitive: Vec<SiteLayerSection>,
    #[serde(default)]
    pub model: ModelSection,
    #[serde(default)]
    pub plan: PlanSection,
    #[serde(default)]
    pub solver: SolverSection,
    /// Dispersal scenarios to plan across (`--ensemble`, several `--kernel`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ensemble: Option<EnsembleSection>,
    /// `hostcut simulate`'s own settings, as its `simulate.resolved.toml` records them; read
    /// back by `hostcut simulate --scenario` under its flags. Other commands do not use it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub simulate: Option<SimulateSection>,
}

/// The `[simulate]` table: what `hostcut simulate` ran with (each flag, or the fit of
/// `--calibration`, or the default), so that `hostcut simulate --scenario
/// simulate.resolved.toml` repeats the run. A flag given again wins over the table.
///
/// # Units
/// Rates per year; `long_distance_multiple` a multiple of the kernel's alpha.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SimulateSection {
    /// The plan folder whose plan was simulated; none: planned at `[plan] budget`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub plan: Option<PathBuf>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub years: Option<u32>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub runs: Option<u32>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub seed: Option<u64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub extinction: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub extinction_exponent: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub colonisation: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub introduction: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub regrowth: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub long_distance_share: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub long_distance_multiple: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub long_distance_after_years: Option<u32>,
    /// Random feasible plans of the proxy check.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub proxy_plans: Option<usize>,
}

/// What an ensemble plan minimises.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize, clap::ValueEnum)]
#[serde(rename_all = "lowercase")]
pub enum Robust {
    /// The weighted mean of R over the scenarios
    #[default]
    Mean,
    /// The worst-case R over the scenarios
    Worst,
    /// The largest regret: R minus the scenario's own least achievable R
    Regret,
}

impl Robust {
    pub fn as_str(self) -> &'static str {
        match self {
            Robust::Mean => "mean",
            Robust::Worst => "worst",
            Robust::Regret => "regret",
        }
    }
}

/// One dispersal scenario of an ensemble.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EnsembleMember {
    /// Name in outputs (default `family:alpha`, e.g. `exp:200`).
    #[serde(default)]
    pub name: String,
    pub kernel: KernelKind,
    pub alpha_m: f64,
    #[serde(default = "d_one")]
    pub weight: f64,
}

/// `[ensemble]` of a scenario file, or the whole of an `--ensemble` file.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct EnsembleSection {
    pub robust: Robust,
    #[serde(rename = "scenario")]
    pub members: Vec<EnsembleMember>,
}

/// Parse `exp`, `cauchy`, `exp:200` or `cauchy:150.5` (a `--kernel` value).
pub fn parse_kernel(text: &str) -> Result<(KernelKind, Option<f64>)> {
    let bad = || {
        Error::input_with_hint(
            format!("`--kernel {text}` is not a kernel"),
            "write `exp`, `cauchy`, or a family with its scale in metres such as `exp:200`",
        )
    };
    let (family, alpha) = match text.split_once(':') {
        Some((f, a)) => (f, Some(a.trim().parse::<f64>().map_err(|_| bad())?)),
        None => (text, None),
    };
    let kind = match family.trim().to_ascii_lowercase().as_str() {
        "exp" => KernelKind::Exp,
        "cauchy" => KernelKind::Cauchy,
        _ => return Err(bad()),
    };
    if alpha.is_some_and(|a| !(a.is_finite() && a > 0.0)) {
        return Err(Error::input(format!(
            "`--kernel {text}`: the scale must be a positive distance in metres"
        )));
    }
    Ok((kind, alpha))
}

/// The fitted values of `hostcut calibrate`, as `[calibration]` of calibration.toml.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Calibration {
    /// The family the surveys favour (lower AIC).
    pub family: KernelKind,
    pub alpha_m: f64,
    pub alpha_low_m: f64,
    pub alpha_high_m: f64,
    pub colonisation: f64,
    pub extinction: f64,
    pub extinction_exponent: f64,
    pub introduction: f64,
    pub log_likelihood: f64,
    pub aic: f64,
    /// AIC of the other family minus this one's.
    pub aic_difference: f64,
    pub transitions: usize,
    pub first_year: i32,
    pub last_year: i32,
    pub surveys: String,
}

/// calibration.toml: the fit, plus scenarios across the alpha interval so the same file works as
/// an `--ensemble`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CalibrationFile {
    #[serde(default)]
    pub robust: Robust,
    pub calibration: Calibration,
    #[serde(rename = "scenario", default)]
    pub members: Vec<EnsembleMember>,
}

fn toml_error(what: &str, path: &Path, text: &str, e: toml::de::Error) -> String {
    let line = e
        .span()
        .and_then(|s| text.get(..s.start))
        .map(|before| before.lines().count().max(1));
    format!(
        "{what} `{}`{}: {}",
        path.display(),
        line.map(|l| format!(", line {l}")).unwrap_or_default(),
        e.message()
    )
}

/// Read a calibration.toml written by `hostcut calibrate`.
pub fn read_calibration(path: &Path) -> Result<CalibrationFile> {
    let text = std::fs::read_to_string(path).map_err(|e| Error::io("read", path, e))?;
    let text = text.strip_prefix('\u{feff}').unwrap_or(&text);
    toml::from_str(text).map_err(|e| {
        Error::input_with_hint(
            toml_error("calibration", path, text, e),
            "give the calibration.toml that `hostcut calibrate` wrote",
        )
    })
}

/// Read an `--ensemble` file (a calibration.toml is one too: its scenarios span the fitted alpha
/// interval).
pub fn read_ensemble(path: &Path) -> Result<EnsembleSection> {
    let text = std::fs::read_to_string(path).map_err(|e| Error::io("read", path, e))?;
    let text = text.strip_prefix('\u{feff}').unwrap_or(&text);
    if let Ok(c) = toml::from_str::<CalibrationFile>(text) {
        return Ok(EnsembleSection {
            robust: c.robust,
            members: c.members,
        });
    }
    toml::from_str(text).map_err(|e| {
        let line = e
            .span()
            .and_then(|s| text.get(..s.start))
            .map(|before| before.lines().count().max(1));
        Error::input_with_hint(
            format!(
                "ensemble `{}`{}: {}",
                path.display(),
                line.map(|l| format!(", line {l}")).unwrap_or_default(),
                e.message()
            ),
            "one `[[scenario]]` per kernel with `kernel = \"exp\"`, `alpha_m = 200` and optionally `weight` and `name`; optionally `robust = \"worst\"` at the top",
        )
    })
}

#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct HostSection {
    /// Host raster or polygon layer.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub path: Option<PathBuf>,
    /// Layer name inside a multi-layer vector file.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub layer: Option<String>,
    /// Stand inventory CSV (instead of `path`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub inventory: Option<PathBuf>,
    /// CRS of the inventory coordinates.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub crs: Option<String>,
    /// CRS assumed for layers without one.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub assume_crs: Option<String>,
    /// Work CRS (projected, metres) an inventory in another CRS is converted into; default: the
    /// inventory's own when metric, the local UTM zone for lon/lat, the metre form of a feet CRS.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub work_crs: Option<String>,
    /// Establishment suitability raster (0..1); effective host = stems x suitability.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub suitability: Option<PathBuf>,
    /// The size-class mix of stands counted only as `stems` (and of raster patches): class id ->
    /// share, summing to 1; default: the catalogue's `default_share`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub default_mix: Option<std::collections::BTreeMap<String, f64>>,
    /// One density raster per size class (class id -> raster, stems/ha of that class) on the
    /// host raster's grid: the host raster outlines the patches, these split their stems.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub class_rasters: Option<std::collections::BTreeMap<String, PathBuf>>,
    pub stems_field: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub id_field: Option<String>,
    pub min_density: f64,
    pub min_patch_ha: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_patch_ha: Option<f64>,
    pub connectivity: u8,
}

impl Default for HostSection {
    fn default() -> Self {
        HostSection {
            path: None,
            layer: None,
            inventory: None,
            crs: None,
            assume_crs: None,
            work_crs: None,
            suitability: None,
            default_mix: None,
            class_rasters: None,
            stems_field: "stems".into(),
            id_field: None,
            min_density: 10.0,
            min_patch_ha: 0.0,
            max_patch_ha: None,
            connectivity: 8,
        }
    }
}

/// The word that says a layer deliberately carries no such field (e.g. `herbicide_field =
/// "none"`: the parcels layer holds no herbicide rules).
pub const NO_FIELD: &str = "none";

/// `[access]`: parcels and the fields that hold their rules. Each field is a name in the layer
/// (matched ignoring case, and Shapefile names cut to 10 characters are recognised), `"none"`
/// when the layer has no such field, or absent for the default name. A field that is named but
/// missing is refused, and so is a layer with no access or herbicide field unless it is said to
/// have none: a rule must never vanish silently. `scenario.resolved.toml` records the fields and
/// the layer actually used.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AccessSection {
    pub path: PathBuf,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub layer: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub parcel_field: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub access_field: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub herbicide_field: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cost_factor_field: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub contact_field: Option<String>,
}

/// Default names of the access layer's fields.
pub const ACCESS_FIELDS: [(&str, &str); 5] = [
    ("parcel", "parcel_id"),
    ("access", "access"),
    ("herbicide", "herbicide"),
    ("cost_factor", "cost_factor"),
    ("contact", "contact"),
];

impl AccessSection {
    /// A section for `path` with every field at its default name.
    pub fn new(path: PathBuf) -> AccessSection {
        AccessSection {
            path,
            layer: None,
            parcel_field: None,
            access_field: None,
            herbicide_field: None,
            cost_factor_field: None,
            contact_field: None,
        }
    }

    /// The field setting for a rule (`parcel`, `access`, `herbicide`, `cost_factor`,
    /// `contact`).
    pub fn field(&self, rule: &str) -> Option<&String> {
        match rule {
            "parcel" => self.parcel_field.as_ref(),
            "access" => self.access_field.as_ref(),
            "herbicide" => self.herbicide_field.as_ref(),
            "cost_factor" => self.cost_factor_field.as_ref(),
            "contact" => self.contact_field.as_ref(),
            _ => None,
        }
    }

    pub fn field_mut(&mut self, rule: &str) -> Option<&mut Option<String>> {
        match rule {
            "parcel" => Some(&mut self.parcel_field),
            "access" => Some(&mut self.access_field),
            "herbicide" => Some(&mut self.herbicide_field),
            "cost_factor" => Some(&mut self.cost_factor_field),
            "contact" => Some(&mut self.contact_field),
            _ => None,
        }
    }
}

/// `[[water]]` or `[[sensitive]]`: a layer of features (points, lines or polygons) with a
/// buffer in metres. Patches within the buffer of a water feature may get only the methods the
/// catalogue allows near water; within the buffer of a sensitive site they are restricted sites.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SiteLayerSection {
    pub path: PathBuf,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub layer: Option<String>,
    /// Buffer in metres (default: [`DEFAULT_WATER_BUFFER_M`] for water,
    /// [`DEFAULT_SENSITIVE_BUFFER_M`] for sensitive sites).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub buffer_m: Option<f64>,
    /// Field naming each feature in outputs (e.g. `name`); default: a `name` field if the
    /// layer has one, else the feature number.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name_field: Option<String>,
}

/// Default water buffer, metres: 15 m (about 50 ft) is a common no-spray setback for
/// non-aquatic products near surface water (common practice; illustrative — every product
/// label sets its own buffer, and the label governs).
pub const DEFAULT_WATER_BUFFER_M: f64 = 15.0;

/// Default sensitive-site buffer, metres: 30 m (about 100 ft) around schools, water supplies
/// and protected habitats (common practice; illustrative — local rules govern).
pub const DEFAULT_SENSITIVE_BUFFER_M: f64 = 30.0;

#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CorridorSection {
    pub path: PathBuf,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub layer: Option<String>,
    /// Name used in outputs; defaults to the file stem.
    #[serde(default)]
    pub name: String,
    /// beta_c: added to the introduction pressure of patches within the buffer.
    #[serde(default = "d_one")]
    pub weight: f64,
    /// b_c in metres.
    #[serde(default = "d_buffer")]
    pub buffer_m: f64,
}
fn d_one() -> f64 {
    1.0
}
fn d_buffer() -> f64 {
    500.0
}

#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DetectionSection {
    pub path: PathBuf,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub layer: Option<String>,
    /// gamma: weight of the kernel-weighted detections in the pressure.
    #[serde(default = "d_one")]
    pub weight: f64,
}

#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct ModelSection {
    pub kernel: KernelKind,
    pub alpha_m: f64,
    pub epsilon: f64,
    /// lambda_M before treatment divided by the persistence threshold delta = e/c.
    pub persistence_ratio: f64,
    /// Introductions per unit of pressure, in units of landscape host share (iota).
    pub introduction_weight: f64,
    /// The `hostcut calibrate` result the kernel came from (its simulation parameters are used
    /// by `simulate`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub calibration: Option<PathBuf>,
}

impl Default for ModelSection {
    fn default() -> Self {
        ModelSection {
            kernel: KernelKind::Exp,
            alpha_m: DEFAULT_ALPHA_M,
            epsilon: 0.001,
            persistence_ratio: 2.0,
            introduction_weight: 0.01,
            calibration: None,
        }
    }
}

#[derive(Debug, Clone, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlanSection {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub budget: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub crew_hours: Option<f64>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub require: Vec<String>,
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub exclude: Vec<String>,
    /// Depot `[x, y]` in the working CRS for the nearest-first baseline.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub depot: Option<[f64; 2]>,
    /// Treatment catalogue; the built-in one when absent.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub treatments: Option<PathBuf>,
    /// Offer trap-tree methods (catalogue methods with `sink_kill`).
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub trap_trees: bool,
    /// Years T of the objective's horizon term (`--horizon-years`): each option's remaining host
    /// r is replaced by its mean over years 1..T as the host regrows, mean of
    /// min(1, r (1 + g)^(t-1)) (docs/model.md). Absent: 10 (`model::risk::DEFAULT_HORIZON_YEARS`;
    /// the resolved scenario always states it); 1: one season, r as treated.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub horizon_years: Option<u32>,
    /// g of the horizon term: the yearly regrowth of host left after treatment (default 0.1,
    /// `hostcut simulate`'s `--regrowth` default).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub horizon_regrowth: Option<f64>,
}

#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SolverSection {
    pub time_limit_s: f64,
    pub gap: f64,
    /// Refuse inputs or models whose estimated memory exceeds this (GB).
    pub max_memory_gb: f64,
    /// Which exact MIP formulation to build (`--formulation`); left out of the resolved
    /// scenario when it is the default.
    #[serde(skip_serializing_if = "Formulation::is_default")]
    pub formulation: Formulation,
}

/// Which exact linearisation of the link products the MIP builds (docs/model.md).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize, clap::ValueEnum)]
#[serde(rename_all = "lowercase")]
pub enum Formulation {
    /// One z per pair of options at each link, with transportation marginals (the default:
    /// the tightest LP bound)
    #[default]
    Transport,
    /// One u per link and choice of one end, plus McCormick's envelope row (for comparison)
    Compact,
    /// The textbook baseline: one binary per patch and method, one product variable per link
    /// and pair of methods with Fortet's inequality y >= x + x' - 1 (`hostcut bench` only)
    #[value(skip)]
    #[serde(skip)]
    Direct,
}

impl Formulation {
    pub fn is_default(&self) -> bool {
        *self == Formulation::Transport
    }
}

impl Default for SolverSection {
    fn default() -> Self {
        SolverSection {
            time_limit_s: 120.0,
            gap: 1e-4,
            max_memory_gb: 16.0,
            formulation: Formulation::Transport,
        }
    }
}

/// Read a scenario TOML file; relative paths inside it become relative to its folder.
pub fn read_scenario(path: &Path) -> Result<Scenario> {
    let text = std::fs::read_to_string(path).map_err(|e| Error::io("read", path, e))?;
    let base = path.parent().map(Path::to_path_buf).unwrap_or_default();
    parse_scenario(&text, &path.display().to_string(), &base)
}

/// Parse scenario text; `origin` names it in messages, relative paths are taken from `base`.
pub fn parse_scenario(text: &str, origin: &str, base: &Path) -> Result<Scenario> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut scenario: Scenario = toml::from_str(text).map_err(|e| {
        let line = e
            .span()
            .and_then(|s| text.get(..s.start))
            .map(|before| before.lines().count().max(1));
        Error::input(format!(
            "scenario `{origin}`{}: {}",
            line.map(|l| format!(", line {l}")).unwrap_or_default(),
            e.message()
        ))
    })?;
    scenario.rebase(base);
    Ok(scenario)
}

pub(crate) fn absolute(base: &Path, p: &Path) -> PathBuf {
    let joined = if p.is_absolute() {
        p.to_path_buf()
    } else {
        base.join(p)
    };
    std::path::absolute(&joined).unwrap_or(joined)
}

impl Scenario {
    /// Every input path the scenario names.
    pub fn paths_mut(&mut self) -> Vec<&mut PathBuf> {
        let mut paths: Vec<&mut PathBuf> = Vec::new();
        paths.extend(self.host.path.as_mut());
        paths.extend(self.host.inventory.as_mut());
        paths.extend(self.host.suitability.as_mut());
        paths.extend(
            self.host
                .class_rasters
                .iter_mut()
                .flat_map(|m| m.values_mut()),
        );
        paths.extend(self.access.as_mut().map(|a| &mut a.path));
        paths.extend(self.corridors.iter_mut().map(|c| &mut c.path));
        paths.extend(self.detections.as_mut().map(|d| &mut d.path));
        paths.extend(self.water.iter_mut().map(|w| &mut w.path));
        paths.extend(self.sensitive.iter_mut().map(|w| &mut w.path));
        paths.extend(self.plan.treatments.as_mut());
        paths.extend(self.model.calibration.as_mut());
        paths.extend(self.simulate.as_mut().and_then(|s| s.plan.as_mut()));
        paths
    }

    /// Make every relative path relative to `base` and absolute.
    fn rebase(&mut self, base: &Path) {
        for p in self.paths_mut() {
            *p = absolute(base, p);
        }
    }

    /// Write paths inside one of `folders` relative to that folder, so a folder holding both
    /// the record and its inputs (a plan folder with its catalogue, the demo with its inputs) can
    /// be moved or copied and still repeats; paths elsewhere stay absolute, so moving the
    /// folder does not lose them.
    pub fn relative_to(&mut self, staging: &Path, out: &Path) {
        for p in self.paths_mut() {
            if let Ok(rel) = p.strip_prefix(staging) {
                *p = rel.to_path_buf();
            } else if let Some(rel) = relative_path(out, p) {
                *p = rel;
            }
        }
    }

    /// The TOML text of this scenario, as written to `scenario.resolved.toml`.
    pub fn to_toml(&self) -> Result<String> {
        toml::to_string_pretty(self)
            .map_err(|e| Error::Internal(format!("cannot write the resolved scenario: {e}")))
    }
}

/// `to` as a path relative to the folder `from` (both absolute), when they share a folder below
/// the file-system root: a project folder holding its inputs and its plan folders can then be
/// moved or copied whole. Paths with nothing in common but the root stay absolute.
fn relative_path(from: &Path, to: &Path) -> Option<PathBuf> {
    use std::path::Component;
    if !(from.is_absolute() && to.is_absolute()) {
        return None;
    }
    let a: Vec<Component> = from.components().collect();
    let b: Vec<Component> = to.components().collect();
    let common = a.iter().zip(&b).take_while(|(x, y)| x == y).count();
    // Only the root (and, on some systems, a prefix) in common: keep the absolute path.
    if common <= 1 {
        return None;
    }
    let mut rel = PathBuf::new();
    for _ in common..a.len() {
        rel.push("..");
    }
    for c in &b[common..] {
        rel.push(c.as_os_str());
    }
    Some(rel)
}
