//! Raw arguments → resolved settings.
//!
//! The schema is [`crate::core::scenario`]; [`resolve`] reads the file (if any), lays the command-line flags over it,
//! fills defaults, makes every path absolute and validates every number, before any stage runs.
//!
//! # Units
//! Distances in metres, areas in hectares, densities in stems per hectare, money in the currency
//! of the treatment catalogue, time in hours (crew) or seconds (solver).

use std::path::{Path, PathBuf};

use crate::app::cli::PlanArgs;
use crate::core::error::{Error, Result};
use crate::core::scenario::*;

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
    /// less the reserve for writing outputs ([`crate::core::deadline::OUTPUT_RESERVE`]).
    pub fn deadline(&self) -> crate::core::deadline::Deadline {
        crate::core::deadline::Deadline::for_command(
            self.started,
            self.scenario.solver.time_limit_s,
        )
    }

    /// A progress line on stderr, unless `--quiet`.
    pub fn progress(&self, message: &str) {
        if !self.quiet {
            eprintln!("{message}");
        }
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
        (
            "cost_factor",
            &args.cost_factor_field,
            "--cost-factor-field",
        ),
        ("contact", &args.contact_field, "--contact-field"),
    ];
    for (rule, value, flag) in field_flags {
        let Some(value) = value else { continue };
        match s.access.as_mut().and_then(|a| a.field_mut(rule)) {
            Some(slot) => *slot = Some(value.trim().to_string()),
            None => {
                return Err(Error::input_with_hint(
                    format!(
                        "`{flag}` names a field of the access layer, but no access layer is given"
                    ),
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
    if let Some(v) = args.formulation {
        s.solver.formulation = v;
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
            format!(
                "give one `{flag}` for all of them or one per `{layer_flag}`, in the same order"
            ),
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
