//! Flags over the scenario file over defaults: the shared half of every planning subcommand's
//! resolve step. Reads the scenario file (if any), lays the command-line flags over it, fills
//! defaults, makes every path absolute and validates every number ([`super::validate`]).
//!
//! # Units
//! Distances in metres, areas in hectares, densities in stems per hectare, money in the currency
//! of the treatment catalogue, time in hours (crew) or seconds (solver).

use std::path::{Path, PathBuf};

use super::Settings;
use super::validate::validate_with;
use crate::app::cli::PlanArgs;
use crate::core::error::{Error, Result};
use crate::core::scenario::*;

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
    if !args.host_class.is_empty() {
        let mut map = std::collections::BTreeMap::new();
        for given in &args.host_class {
            let Some((class, path)) = given
                .split_once('=')
                .filter(|(c, p)| !c.is_empty() && !p.is_empty())
            else {
                return Err(Error::input_with_hint(
                    format!("`--host-class {given}`: expected CLASS=RASTER"),
                    "e.g. `--host-class trees=trees.tif`, once per size class",
                ));
            };
            if map
                .insert(class.to_string(), abs(&PathBuf::from(path)))
                .is_some()
            {
                return Err(Error::input(format!(
                    "`--host-class {class}=...` is given twice"
                )));
            }
        }
        s.host.class_rasters = Some(map);
    }
    if let Some(v) = &args.stems_field {
        s.host.stems_field = v.clone();
    }
    if let Some(v) = &args.crs {
        s.host.crs = Some(v.clone());
    }
    if let Some(v) = &args.work_crs {
        s.host.work_crs = Some(v.clone());
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
    if let Some(t) = args.horizon_years {
        s.plan.horizon_years = Some(t);
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
    // The resolved scenario states the objective's horizon, so a re-run from it
    // (`--scenario scenario.resolved.toml`, `--plan DIR`) repeats the plan whatever the default.
    s.plan.horizon_years = Some(
        s.plan
            .horizon_years
            .unwrap_or(crate::model::risk::DEFAULT_HORIZON_YEARS),
    );
    validate_with(&s, need_budget)?;
    Ok(Settings {
        scenario: s,
        out,
        force: args.force,
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::app::resolve::validate::validate;

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
