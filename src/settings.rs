//! Raw arguments → resolved settings.
//!
//! One `Scenario` type is both the scenario file a user writes and the `scenario.resolved.toml`
//! a run writes back: [`resolve`] reads the file (if any), lays the command-line flags over it,
//! fills defaults, makes every path absolute and validates every number, before any stage runs.
//!
//! # Units
//! Distances in metres, areas in hectares, densities in stems per hectare, money in the currency
//! of the treatment catalogue, time in hours (crew) or seconds (solver).

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::cli::{KernelKind, PlanArgs};
use crate::error::{Error, Result};

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
    /// Establishment suitability raster (0..1); effective host = stems x suitability.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub suitability: Option<PathBuf>,
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
            suitability: None,
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
}

#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SolverSection {
    pub time_limit_s: f64,
    pub gap: f64,
    /// Refuse inputs or models whose estimated memory exceeds this (GB).
    pub max_memory_gb: f64,
}

impl Default for SolverSection {
    fn default() -> Self {
        SolverSection {
            time_limit_s: 120.0,
            gap: 1e-4,
            max_memory_gb: 16.0,
        }
    }
}

/// Settings for one `plan` run: the resolved scenario plus run-only switches.
#[derive(Debug, Clone)]
pub struct Settings {
    pub scenario: Scenario,
    pub out: PathBuf,
    pub force: bool,
    pub quiet: bool,
    /// When the command started (before any layer is read): `--time-limit-s` counts from here.
    pub started: std::time::Instant,
}

impl Settings {
    /// The deadline of every search of this command: `--time-limit-s` from the command's start,
    /// less the reserve for writing outputs ([`crate::deadline::OUTPUT_RESERVE`]).
    pub fn deadline(&self) -> crate::deadline::Deadline {
        crate::deadline::Deadline::for_command(self.started, self.scenario.solver.time_limit_s)
    }

    /// A progress line on stderr, unless `--quiet`.
    pub fn progress(&self, message: &str) {
        if !self.quiet {
            eprintln!("{message}");
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

fn absolute(base: &Path, p: &Path) -> PathBuf {
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
        paths.extend(self.access.as_mut().map(|a| &mut a.path));
        paths.extend(self.corridors.iter_mut().map(|c| &mut c.path));
        paths.extend(self.detections.as_mut().map(|d| &mut d.path));
        paths.extend(self.water.iter_mut().map(|w| &mut w.path));
        paths.extend(self.sensitive.iter_mut().map(|w| &mut w.path));
        paths.extend(self.plan.treatments.as_mut());
        paths.extend(self.model.calibration.as_mut());
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
    pub fn relative_to(&mut self, folders: &[&Path]) {
        for p in self.paths_mut() {
            if let Some(rel) = folders.iter().find_map(|f| p.strip_prefix(f).ok()) {
                *p = rel.to_path_buf();
            }
        }
    }

    /// The TOML text of this scenario, as written to `scenario.resolved.toml`.
    pub fn to_toml(&self) -> Result<String> {
        toml::to_string_pretty(self)
            .map_err(|e| Error::Internal(format!("cannot write the resolved scenario: {e}")))
    }
}

/// Merge flags over the scenario file over defaults, and validate (a budget is required).
pub fn resolve(args: &PlanArgs) -> Result<Settings> {
    resolve_with(args, true)
}

/// The scenario of an earlier plan folder: `DIR/scenario.resolved.toml`.
pub fn plan_folder_scenario(dir: &Path) -> Result<PathBuf> {
    let path = dir.join("scenario.resolved.toml");
    if !path.is_file() {
        return Err(Error::input_with_hint(
            format!(
                "`{}` is not a plan folder (it has no scenario.resolved.toml)",
                dir.display()
            ),
            "give the `--out` folder of an earlier `hostcut plan` or `hostcut demo` run",
        ));
    }
    Ok(path)
}

/// As [`resolve`]; `need_budget` false for commands that choose their own budgets.
pub fn resolve_with(args: &PlanArgs, need_budget: bool) -> Result<Settings> {
    let started = std::time::Instant::now();
    let mut s = match &args.scenario {
        Some(path) => read_scenario(path)?,
        None => Scenario::default(),
    };
    let cwd = std::env::current_dir().map_err(|e| Error::io("read", ".", e))?;
    let abs = |p: &PathBuf| absolute(&cwd, p);
    if let Some(p) = &args.host {
        s.host.path = Some(abs(p));
        s.host.inventory = None;
    }
    if let Some(p) = &args.inventory {
        s.host.inventory = Some(abs(p));
        s.host.path = None;
    }
    if let Some(p) = &args.suitability {
        s.host.suitability = Some(abs(p));
    }
    if let Some(v) = &args.stems_field {
        s.host.stems_field = v.clone();
    }
    if let Some(v) = &args.crs {
        s.host.crs = Some(v.clone());
    }
    if let Some(v) = &args.assume_crs {
        s.host.assume_crs = Some(v.clone());
    }
    if let Some(v) = args.min_density {
        s.host.min_density = v;
    }
    if let Some(v) = args.min_patch_ha {
        s.host.min_patch_ha = v;
    }
    if let Some(v) = args.max_patch_ha {
        s.host.max_patch_ha = Some(v);
    }
    if let Some(v) = args.connectivity {
        s.host.connectivity = v;
    }
    if let Some(p) = &args.access {
        s.access = Some(AccessSection::new(abs(p)));
    }
    let field_flags = [
        ("parcel", &args.parcel_field, "--parcel-field"),
        ("access", &args.access_field, "--access-field"),
        ("herbicide", &args.herbicide_field, "--herbicide-field"),
        ("cost_factor", &args.cost_factor_field, "--cost-factor-field"),
        ("contact", &args.contact_field, "--contact-field"),
    ];
    for (rule, value, flag) in field_flags {
        let Some(value) = value else { continue };
        match s.access.as_mut().and_then(|a| a.field_mut(rule)) {
            Some(slot) => *slot = Some(value.trim().to_string()),
            None => {
                return Err(Error::input_with_hint(
                    format!("`{flag}` names a field of the access layer, but no access layer is given"),
                    "add `--access parcels.gpkg` (or `[access]` in the scenario)",
                ));
            }
        }
    }
    if let Some(layer) = &args.access_layer {
        match s.access.as_mut() {
            Some(a) => a.layer = Some(layer.clone()),
            None => {
                return Err(Error::input_with_hint(
                    "`--access-layer` names a layer of the access file, but no access layer is given",
                    "add `--access parcels.gpkg`",
                ));
            }
        }
    }
    if let Some(layer) = &args.host_layer {
        s.host.layer = Some(layer.clone());
    }
    if let Some(field) = &args.id_field {
        s.host.id_field = Some(field.trim().to_string());
    }
    if !args.corridor.is_empty() {
        let n = args.corridor.len();
        let pick = |values: &[f64], i: usize, default: f64, flag: &str| -> Result<f64> {
            match values.len() {
                0 => Ok(default),
                1 => Ok(values[0]),
                m if m == n => Ok(values[i]),
                m => Err(Error::input_with_hint(
                    format!("{m} values of `{flag}` for {n} `--corridor` layers"),
                    format!(
                        "give one `{flag}` for all corridors or one per `--corridor`, in the same order"
                    ),
                )),
            }
        };
        s.corridors = Vec::new();
        for (i, p) in args.corridor.iter().enumerate() {
            s.corridors.push(CorridorSection {
                path: abs(p),
                layer: None,
                name: String::new(),
                weight: pick(&args.corridor_weight, i, 1.0, "--corridor-weight")?,
                buffer_m: pick(&args.corridor_buffer_m, i, 500.0, "--corridor-buffer-m")?,
            });
        }
    } else if !args.corridor_weight.is_empty() || !args.corridor_buffer_m.is_empty() {
        if s.corridors.is_empty() {
            return Err(Error::input(
                "`--corridor-weight` and `--corridor-buffer-m` need at least one `--corridor`",
            ));
        }
        let n = s.corridors.len();
        for (values, is_weight) in [
            (&args.corridor_weight, true),
            (&args.corridor_buffer_m, false),
        ] {
            if values.is_empty() {
                continue;
            }
            if values.len() != 1 && values.len() != n {
                return Err(Error::input(format!(
                    "{} corridor values for {n} corridors in the scenario",
                    values.len()
                )));
            }
            for (i, c) in s.corridors.iter_mut().enumerate() {
                let v = if values.len() == 1 {
                    values[0]
                } else {
                    values[i]
                };
                if is_weight {
                    c.weight = v
                } else {
                    c.buffer_m = v
                }
            }
        }
    }
    for c in &mut s.corridors {
        if c.name.is_empty() {
            c.name = c
                .path
                .file_stem()
                .map(|f| f.to_string_lossy().into_owned())
                .unwrap_or_else(|| "corridor".into());
        }
    }
    if !args.corridor_layer.is_empty() {
        let n = s.corridors.len();
        let layers = per_layer(&args.corridor_layer, n, "--corridor-layer", "--corridor")?;
        for (c, layer) in s.corridors.iter_mut().zip(layers) {
            c.layer = Some(layer);
        }
    }
    if let Some(p) = &args.detections {
        s.detections = Some(DetectionSection {
            path: abs(p),
            layer: None,
            weight: args.detection_weight.unwrap_or(1.0),
        });
    } else if let (Some(w), Some(d)) = (args.detection_weight, s.detections.as_mut()) {
        d.weight = w;
    }
    if let Some(layer) = &args.detections_layer {
        match s.detections.as_mut() {
            Some(d) => d.layer = Some(layer.clone()),
            None => {
                return Err(Error::input_with_hint(
                    "`--detections-layer` names a layer of the detections file, but no detections layer is given",
                    "add `--detections detections.gpkg`",
                ));
            }
        }
    }
    for (files, buffers, layers, sections, what) in [
        (
            &args.water,
            &args.water_buffer_m,
            &args.water_layer,
            &mut s.water,
            "water",
        ),
        (
            &args.sensitive,
            &args.sensitive_buffer_m,
            &args.sensitive_layer,
            &mut s.sensitive,
            "sensitive",
        ),
    ] {
        let (file_flag, buffer_flag, layer_flag) = (
            format!("--{what}"),
            format!("--{what}-buffer-m"),
            format!("--{what}-layer"),
        );
        if !files.is_empty() {
            *sections = files
                .iter()
                .map(|p| SiteLayerSection {
                    path: abs(p),
                    layer: None,
                    buffer_m: None,
                    name_field: None,
                })
                .collect();
        }
        let n = sections.len();
        if n == 0 && !(buffers.is_empty() && layers.is_empty()) {
            return Err(Error::input_with_hint(
                format!("`{buffer_flag}` / `{layer_flag}` need at least one `{file_flag}` layer"),
                format!("add `{file_flag} FILE`"),
            ));
        }
        if !buffers.is_empty() {
            let values = per_layer(buffers, n, &buffer_flag, &file_flag)?;
            for (section, v) in sections.iter_mut().zip(values) {
                section.buffer_m = Some(v);
            }
        }
        if !layers.is_empty() {
            let values = per_layer(layers, n, &layer_flag, &file_flag)?;
            for (section, v) in sections.iter_mut().zip(values) {
                section.layer = Some(v);
            }
        }
    }
    if let Some(p) = &args.treatments {
        s.plan.treatments = Some(abs(p));
    }
    if let Some(p) = &args.calibration {
        let path = abs(p);
        let c = read_calibration(&path)?;
        s.model.kernel = c.calibration.family;
        s.model.alpha_m = c.calibration.alpha_m;
        s.model.calibration = Some(path);
        s.ensemble = None;
    }
    match args.kernel.len() {
        0 => {}
        1 => {
            // One kernel on the command line replaces any ensemble of the scenario.
            let (kind, alpha) = parse_kernel(&args.kernel[0])?;
            s.model.kernel = kind;
            if let Some(a) = alpha {
                s.model.alpha_m = a;
            }
            s.ensemble = None;
        }
        _ => {
            let mut members = Vec::new();
            for k in &args.kernel {
                let (kernel, alpha) = parse_kernel(k)?;
                let alpha_m = alpha.ok_or_else(|| {
                    Error::input_with_hint(
                        format!("`--kernel {k}`: an ensemble needs each kernel's scale"),
                        "write e.g. `--kernel exp:100 --kernel exp:400 --kernel cauchy:200`",
                    )
                })?;
                members.push(EnsembleMember {
                    name: String::new(),
                    kernel,
                    alpha_m,
                    weight: 1.0,
                });
            }
            s.ensemble = Some(EnsembleSection {
                robust: Robust::Mean,
                members,
            });
        }
    }
    if let Some(p) = &args.ensemble {
        s.ensemble = Some(read_ensemble(&abs(p))?);
    }
    if let Some(r) = args.robust {
        match s.ensemble.as_mut() {
            Some(e) => e.robust = r,
            None => {
                return Err(Error::input_with_hint(
                    "`--robust` needs scenarios to be robust across",
                    "add `--ensemble FILE.toml` or several `--kernel FAMILY:ALPHA_M`",
                ));
            }
        }
    }
    if let Some(e) = s.ensemble.as_mut() {
        for m in e.members.iter_mut() {
            if m.name.is_empty() {
                m.name = format!("{}:{}", m.kernel.as_str(), m.alpha_m);
            }
        }
    }
    if let Some(v) = args.alpha_m {
        s.model.alpha_m = v;
    }
    if let Some(v) = args.epsilon {
        s.model.epsilon = v;
    }
    if let Some(v) = args.budget {
        s.plan.budget = Some(v);
    }
    if args.trap_trees {
        s.plan.trap_trees = true;
    }
    if let Some(v) = args.crew_hours {
        s.plan.crew_hours = Some(v);
    }
    if !args.require.is_empty() {
        s.plan.require = args
            .require
            .iter()
            .map(|x| x.trim().to_string())
            .filter(|x| !x.is_empty())
            .collect();
    }
    if !args.exclude.is_empty() {
        s.plan.exclude = args
            .exclude
            .iter()
            .map(|x| x.trim().to_string())
            .filter(|x| !x.is_empty())
            .collect();
    }
    if let Some(text) = &args.depot {
        let parts: Vec<f64> = text
            .split(',')
            .filter_map(|p| p.trim().parse().ok())
            .filter(|v: &f64| v.is_finite())
            .collect();
        if parts.len() != 2 || text.split(',').count() != 2 {
            return Err(Error::input_with_hint(
                format!("`--depot {text}` is not two numbers X,Y"),
                "give the depot in the working CRS, e.g. `--depot 502500,4471800`",
            ));
        }
        s.plan.depot = Some([parts[0], parts[1]]);
    }
    if let Some(v) = args.time_limit_s {
        s.solver.time_limit_s = v;
    }
    if let Some(v) = args.gap {
        s.solver.gap = v;
    }
    if let Some(v) = args.max_memory_gb {
        s.solver.max_memory_gb = v;
    }
    let out = match &args.out {
        Some(o) => abs(o),
        None => {
            return Err(Error::input_with_hint(
                "no output folder given",
                "add `--out DIR`",
            ));
        }
    };
    validate_with(&s, need_budget)?;
    Ok(Settings {
        scenario: s,
        out,
        force: args.force,
        quiet: args.quiet,
        started,
    })
}

/// One value of `flag` for all `n` layers of `layer_flag`, or one per layer in order.
fn per_layer<T: Clone>(values: &[T], n: usize, flag: &str, layer_flag: &str) -> Result<Vec<T>> {
    match values.len() {
        1 => Ok(vec![values[0].clone(); n]),
        m if m == n => Ok(values.to_vec()),
        m => Err(Error::input_with_hint(
            format!("{m} values of `{flag}` for {n} `{layer_flag}` layers"),
            format!("give one `{flag}` for all of them or one per `{layer_flag}`, in the same order"),
        )),
    }
}

fn check(ok: bool, message: impl FnOnce() -> String, hint: &str) -> Result<()> {
    if ok {
        Ok(())
    } else {
        Err(Error::input_with_hint(message(), hint))
    }
}

/// Validate every number and the choice of host layer.
pub fn validate(s: &Scenario) -> Result<()> {
    validate_with(s, true)
}

fn validate_ensemble(e: &EnsembleSection) -> Result<()> {
    let hint = "each `[[scenario]]` needs `kernel = \"exp\"` or `\"cauchy\"`, `alpha_m` above 0 and a `weight` of 0 or more";
    if e.members.is_empty() {
        return Err(Error::input_with_hint(
            "the ensemble has no scenarios",
            hint,
        ));
    }
    if e.members.len() > 50 {
        return Err(Error::input(format!(
            "the ensemble has {} scenarios; this version plans across at most 50",
            e.members.len()
        )));
    }
    let mut names = std::collections::BTreeSet::new();
    for m in &e.members {
        if !(m.alpha_m.is_finite() && m.alpha_m > 0.0) {
            return Err(Error::input_with_hint(
                format!(
                    "ensemble scenario `{}`: alpha_m must be a positive distance in metres, got {}",
                    m.name, m.alpha_m
                ),
                hint,
            ));
        }
        if !(m.weight.is_finite() && m.weight >= 0.0) {
            return Err(Error::input_with_hint(
                format!(
                    "ensemble scenario `{}`: weight must be 0 or more, got {}",
                    m.name, m.weight
                ),
                hint,
            ));
        }
        if !names.insert(m.name.as_str()) {
            return Err(Error::input(format!(
                "ensemble scenario name `{}` appears twice",
                m.name
            )));
        }
    }
    if e.members.iter().map(|m| m.weight).sum::<f64>() <= 0.0 {
        return Err(Error::input_with_hint(
            "the ensemble's weights are all 0",
            hint,
        ));
    }
    Ok(())
}

fn validate_with(s: &Scenario, need_budget: bool) -> Result<()> {
    if let Some(e) = &s.ensemble {
        validate_ensemble(e)?;
    }
    match (&s.host.path, &s.host.inventory) {
        (None, None) => {
            return Err(Error::input_with_hint(
                "no host layer given",
                "give `--host RASTER|VECTOR` or `--inventory stands.csv --crs EPSG:NNNN` (or `host.path` / `host.inventory` in the scenario)",
            ));
        }
        (Some(_), Some(_)) => {
            return Err(Error::input(
                "give either a host layer or a stand inventory, not both",
            ));
        }
        (None, Some(_)) if s.host.crs.is_none() => {
            return Err(Error::input_with_hint(
                "the stand inventory needs the CRS of its x,y coordinates",
                "add `--crs EPSG:NNNN` naming its projected CRS in metres (e.g. a UTM zone)",
            ));
        }
        (Some(_), None) if s.host.crs.is_some() => {
            return Err(Error::input_with_hint(
                "`--crs` names the CRS of a stand inventory; a host layer carries its own",
                "for a layer with no CRS use `--assume-crs EPSG:NNNN`",
            ));
        }
        _ => {}
    }
    let h = &s.host;
    check(
        h.min_density.is_finite() && h.min_density > 0.0,
        || {
            format!(
                "min_density must be a positive number of stems/ha, got {}",
                h.min_density
            )
        },
        "e.g. `--min-density 10`",
    )?;
    check(
        h.min_patch_ha.is_finite() && h.min_patch_ha >= 0.0,
        || format!("min_patch_ha must be 0 or more, got {}", h.min_patch_ha),
        "e.g. `--min-patch-ha 0.05`",
    )?;
    if let Some(m) = h.max_patch_ha {
        check(
            m.is_finite() && m > 0.0,
            || format!("max_patch_ha must be positive, got {m}"),
            "e.g. `--max-patch-ha 4`",
        )?;
    }
    check(
        h.connectivity == 4 || h.connectivity == 8,
        || format!("connectivity must be 4 or 8, got {}", h.connectivity),
        "use `--connectivity 8` (diagonal neighbours join) or `4`",
    )?;
    for c in &s.corridors {
        check(
            c.weight.is_finite() && c.weight >= 0.0,
            || {
                format!(
                    "corridor `{}`: weight must be 0 or more, got {}",
                    c.path.display(),
                    c.weight
                )
            },
            "e.g. `--corridor-weight 3`",
        )?;
        check(
            c.buffer_m.is_finite() && c.buffer_m >= 0.0,
            || {
                format!(
                    "corridor `{}`: buffer must be 0 or more metres, got {}",
                    c.path.display(),
                    c.buffer_m
                )
            },
            "e.g. `--corridor-buffer-m 500`",
        )?;
    }
    for (sections, what) in [(&s.water, "water"), (&s.sensitive, "sensitive")] {
        for w in sections {
            if let Some(b) = w.buffer_m {
                check(
                    b.is_finite() && b >= 0.0,
                    || {
                        format!(
                            "{what} layer `{}`: buffer must be 0 or more metres, got {b}",
                            w.path.display()
                        )
                    },
                    &format!("e.g. `--{what}-buffer-m 15`"),
                )?;
            }
        }
    }
    if let Some(a) = &s.access {
        for (rule, _) in ACCESS_FIELDS {
            if let Some(f) = a.field(rule) {
                check(
                    !f.trim().is_empty(),
                    || format!("access layer: the {rule} field name is empty"),
                    "name the field, or write `none` if the layer has no such field",
                )?;
            }
        }
    }
    if let Some(d) = &s.detections {
        check(
            d.weight.is_finite() && d.weight >= 0.0,
            || format!("detection weight must be 0 or more, got {}", d.weight),
            "e.g. `--detection-weight 1`",
        )?;
    }
    let m = &s.model;
    check(
        m.alpha_m.is_finite() && m.alpha_m > 0.0,
        || {
            format!(
                "alpha_m must be a positive distance in metres, got {}",
                m.alpha_m
            )
        },
        "e.g. `--alpha-m 200`",
    )?;
    check(
        m.epsilon.is_finite() && m.epsilon > 0.0 && m.epsilon < 1.0,
        || {
            format!(
                "epsilon must be between 0 and 1 (exclusive), got {}",
                m.epsilon
            )
        },
        "e.g. `--epsilon 0.001`",
    )?;
    check(
        m.persistence_ratio.is_finite() && m.persistence_ratio > 0.0,
        || {
            format!(
                "model.persistence_ratio must be positive, got {}",
                m.persistence_ratio
            )
        },
        "e.g. `persistence_ratio = 2.0`",
    )?;
    check(
        m.introduction_weight.is_finite() && m.introduction_weight >= 0.0,
        || {
            format!(
                "model.introduction_weight must be 0 or more, got {}",
                m.introduction_weight
            )
        },
        "e.g. `introduction_weight = 0.01`",
    )?;
    match s.plan.budget {
        None if !need_budget => {}
        None => {
            return Err(Error::input_with_hint(
                "no budget given",
                "add `--budget AMOUNT` (the season's money for treatments)",
            ));
        }
        Some(b) => check(
            b.is_finite() && b >= 0.0,
            || format!("budget must be 0 or more, got {b}"),
            "e.g. `--budget 60000`",
        )?,
    }
    if let Some(hours) = s.plan.crew_hours {
        check(
            hours.is_finite() && hours >= 0.0,
            || format!("crew hours must be 0 or more, got {hours}"),
            "e.g. `--crew-hours 400`",
        )?;
    }
    check(
        s.solver.max_memory_gb.is_finite() && s.solver.max_memory_gb > 0.0,
        || {
            format!(
                "max_memory_gb must be positive, got {}",
                s.solver.max_memory_gb
            )
        },
        "e.g. `--max-memory-gb 8`",
    )?;
    for id in &s.plan.require {
        if s.plan.exclude.contains(id) {
            return Err(Error::input(format!(
                "patch `{id}` is both required and excluded"
            )));
        }
    }
    check(
        s.solver.time_limit_s.is_finite() && s.solver.time_limit_s > 0.0,
        || {
            format!(
                "time limit must be positive seconds, got {}",
                s.solver.time_limit_s
            )
        },
        "e.g. `--time-limit-s 60`",
    )?;
    check(
        s.solver.gap.is_finite() && (0.0..1.0).contains(&s.solver.gap),
        || format!("gap must be in [0, 1), got {}", s.solver.gap),
        "e.g. `--gap 0.0001`",
    )?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn args(corridors: usize, weights: &[f64], buffers: &[f64]) -> PlanArgs {
        PlanArgs {
            inventory: Some("s.csv".into()),
            crs: Some("EPSG:32618".into()),
            budget: Some(10.0),
            out: Some("o".into()),
            corridor: (0..corridors)
                .map(|i| PathBuf::from(format!("c{i}.gpkg")))
                .collect(),
            corridor_weight: weights.to_vec(),
            corridor_buffer_m: buffers.to_vec(),
            ..Default::default()
        }
    }

    #[test]
    fn corridor_weights_pair_with_corridors_in_order() {
        let s = resolve(&args(2, &[3.0, 2.0], &[500.0])).unwrap().scenario;
        assert_eq!((s.corridors[0].weight, s.corridors[1].weight), (3.0, 2.0));
        assert_eq!(
            (s.corridors[0].buffer_m, s.corridors[1].buffer_m),
            (500.0, 500.0)
        );
        assert_eq!(s.corridors[1].name, "c1");
        assert!(resolve(&args(2, &[1.0, 2.0, 3.0], &[])).is_err());
        assert!(resolve(&args(0, &[1.0], &[])).is_err());
    }

    #[test]
    fn resolved_scenario_round_trips_through_toml() {
        let s = resolve(&args(1, &[3.0], &[250.0])).unwrap().scenario;
        let text = s.to_toml().unwrap();
        let back: Scenario = toml::from_str(&text).unwrap();
        assert_eq!(back.corridors[0].buffer_m, 250.0);
        assert_eq!(back.plan.budget, Some(10.0));
        assert_eq!(back.model.alpha_m, DEFAULT_ALPHA_M);
        validate(&back).unwrap();
    }

    #[test]
    fn host_choice_is_checked() {
        let mut a = args(0, &[], &[]);
        a.crs = None;
        assert!(resolve(&a).unwrap_err().to_string().contains("CRS"));
        a.inventory = None;
        assert!(
            resolve(&a)
                .unwrap_err()
                .to_string()
                .contains("no host layer")
        );
    }
}
