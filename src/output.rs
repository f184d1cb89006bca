//! Outputs: every file of a plan folder, written into a staging folder beside `--out` and moved
//! into place only when all of them are complete, so a failed or killed run never leaves a
//! partial plan.

use std::path::{Path, PathBuf};

use serde::Serialize;

use crate::cautions;
use crate::error::{Error, Result};
use crate::gis::{self, Property, ToLonLat};
use crate::graph::Pressure;
use crate::patches::Patches;
use crate::plan::Plan;
use crate::treatments::Catalogue;

/// A staging folder that becomes `--out` on [`Staging::commit`] and is removed otherwise.
pub struct Staging {
    out: PathBuf,
    dir: PathBuf,
    force: bool,
    done: bool,
}

impl Staging {
    /// Check `out` can be written (new, empty, or `force`) and make the staging folder.
    pub fn new(out: &Path, force: bool) -> Result<Staging> {
        if out.exists() {
            if !out.is_dir() {
                return Err(Error::input_with_hint(
                    format!("`{}` exists and is not a folder", out.display()),
                    "give `--out` a new folder name",
                ));
            }
            let non_empty = std::fs::read_dir(out)
                .map_err(|e| Error::io("read", out, e))?
                .next()
                .is_some();
            if non_empty && !force {
                return Err(Error::input_with_hint(
                    format!("output folder `{}` is not empty", out.display()),
                    "give a new folder, or add `--force` to replace its outputs",
                ));
            }
        }
        let parent = out
            .parent()
            .filter(|p| !p.as_os_str().is_empty())
            .unwrap_or(Path::new("."));
        std::fs::create_dir_all(parent).map_err(|e| Error::io("create", parent, e))?;
        let name = out
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| "out".into());
        // Staging folders left by runs that were killed (their process is gone) are removed.
        let prefix = format!(".{name}.partial-");
        if let Ok(entries) = std::fs::read_dir(parent) {
            for entry in entries.flatten() {
                let file_name = entry.file_name().to_string_lossy().into_owned();
                if let Some(pid) = file_name
                    .strip_prefix(&prefix)
                    .and_then(|p| p.parse::<u32>().ok())
                    && !Path::new(&format!("/proc/{pid}")).exists()
                {
                    let _ = std::fs::remove_dir_all(entry.path());
                }
            }
        }
        let dir = parent.join(format!("{prefix}{}", std::process::id()));
        if dir.exists() {
            let _ = std::fs::remove_dir_all(&dir);
        }
        std::fs::create_dir_all(&dir).map_err(|e| Error::io("create", &dir, e))?;
        Ok(Staging {
            out: out.to_path_buf(),
            dir,
            force,
            done: false,
        })
    }

    /// Path of `name` inside the staging folder.
    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.join(name)
    }

    pub fn write(&self, name: &str, contents: impl AsRef<[u8]>) -> Result<()> {
        let path = self.path(name);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent).map_err(|e| Error::io("create", parent, e))?;
        }
        std::fs::write(&path, contents).map_err(|e| Error::io("write", &path, e))
    }

    /// Move the staged outputs into `out`.
    pub fn commit(mut self) -> Result<PathBuf> {
        let io = |action, path: &Path, e: std::io::Error| Error::io(action, path, e);
        if self.out.exists() {
            let empty = std::fs::read_dir(&self.out)
                .map_err(|e| io("read", &self.out, e))?
                .next()
                .is_none();
            if empty {
                std::fs::remove_dir(&self.out).map_err(|e| io("replace", &self.out, e))?;
            } else if self.force {
                // Replace file by file: each rename is atomic.
                for entry in std::fs::read_dir(&self.dir).map_err(|e| io("read", &self.dir, e))? {
                    let entry = entry.map_err(|e| io("read", &self.dir, e))?;
                    let target = self.out.join(entry.file_name());
                    if target.is_dir() {
                        std::fs::remove_dir_all(&target).map_err(|e| io("replace", &target, e))?;
                    }
                    std::fs::rename(entry.path(), &target)
                        .map_err(|e| io("move output to", &target, e))?;
                }
                std::fs::remove_dir(&self.dir).map_err(|e| io("remove", &self.dir, e))?;
                self.done = true;
                return Ok(self.out.clone());
            }
        }
        std::fs::rename(&self.dir, &self.out).map_err(|e| io("move outputs to", &self.out, e))?;
        self.done = true;
        Ok(self.out.clone())
    }
}

impl Drop for Staging {
    fn drop(&mut self) {
        if !self.done {
            let _ = std::fs::remove_dir_all(&self.dir);
        }
    }
}

/// Make a run repeatable: keep the catalogue it used as `treatments.used.toml` and write
/// `scenario.resolved.toml` pointing at it, under a one-line `header` comment.
pub fn write_provenance(
    staging: &Staging,
    scenario: &crate::settings::Scenario,
    out: &Path,
    catalogue_text: &str,
    header: &str,
) -> Result<()> {
    staging.write("treatments.used.toml", catalogue_text)?;
    let mut resolved = scenario.clone();
    resolved.plan.treatments = Some(out.join("treatments.used.toml"));
    staging.write(
        "scenario.resolved.toml",
        format!("# {header}\n{}", resolved.to_toml()?),
    )
}

/// `summary.json`.
#[derive(Debug, Serialize)]
pub struct Summary {
    pub currency: String,
    pub budget: f64,
    pub spent: f64,
    pub crew_hours_limit: Option<f64>,
    pub crew_hours: f64,
    pub risk_before: f64,
    pub risk_after: f64,
    pub risk_reduction_pct: f64,
    pub lambda_before: f64,
    pub lambda_after: f64,
    pub greedy_risk_after: Option<f64>,
    pub greedy_reduction_pct: Option<f64>,
    pub status: &'static str,
    pub gap: Option<f64>,
    pub bound: Option<f64>,
    pub solve_seconds: f64,
    /// How the plan was searched for (e.g. `transport MIP`, `component merge MIP`).
    pub solver_path: &'static str,
    /// Which proof gave `bound`: exact, floor, relaxation or HiGHS dual bound.
    pub bound_from: &'static str,
    pub n_patches: usize,
    pub n_edges: usize,
    pub n_treated: usize,
    pub n_eligible: usize,
    pub stems_total: f64,
    pub stems_treated: f64,
    pub dropped_slivers: usize,
    pub host_source: &'static str,
    pub crs: String,
    pub kernel: String,
    pub alpha_m: f64,
    pub epsilon: f64,
    pub tool_version: &'static str,
    /// Today's-practice plans under the same budget, hours and eligibility.
    pub baselines: serde_json::Map<String, serde_json::Value>,
    /// Depot used by the nearest-first baseline, working CRS.
    pub depot: [f64; 2],
    /// The suitability layer used, if any (effective host = stems x suitability).
    pub suitability_layer: Option<String>,
    /// Plans across dispersal scenarios: the objective, each scenario and the regret table's
    /// verdict (absent for a single kernel).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ensemble: Option<serde_json::Value>,
}

/// Scientific notation for values that span many orders of magnitude.
fn sci(v: f64) -> String {
    if !v.is_finite() {
        String::new()
    } else if v.abs() < 1e-300 {
        "0".into()
    } else {
        format!("{v:.6e}")
    }
}

fn round(v: f64, digits: i32) -> String {
    if !v.is_finite() {
        return String::new();
    }
    let m = 10f64.powi(digits);
    format!("{}", (v * m).round() / m)
}

/// Everything the writers need.
pub struct Outputs<'a> {
    pub patches: &'a Patches,
    pub pressure: &'a Pressure,
    pub catalogue: &'a Catalogue,
    pub plan: &'a Plan,
    pub eligible: &'a [bool],
    /// Establishment suitability per patch (1 without a layer).
    pub suitability: &'a [f64],
}

/// The columns of plan.csv (a programme's season folders add `action`).
pub const PLAN_COLUMNS: [&str; 19] = [
    "priority",
    "patch_id",
    "method",
    "stems",
    "cost",
    "crew_hours",
    "risk_share",
    "reduction_pct",
    "value_per_cost",
    "x",
    "y",
    "lon",
    "lat",
    "parcel",
    "access",
    "herbicide",
    "contact",
    "corridors",
    "cautions",
];

/// A CSV file's bytes: the header row, then the rows.
pub fn csv_bytes(header: &[&str], rows: &[Vec<String>]) -> Result<Vec<u8>> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(header)
        .map_err(|e| Error::Internal(format!("csv: {e}")))?;
    for r in rows {
        w.write_record(r)
            .map_err(|e| Error::Internal(format!("csv: {e}")))?;
    }
    w.into_inner()
        .map_err(|e| Error::Internal(format!("csv: {e}")))
}

/// Write plan.csv, patches.csv, plan.geojson and cautions.txt into the staging folder.
pub fn write_tables(staging: &Staging, o: &Outputs) -> Result<()> {
    let patches = o.patches;
    let plan = o.plan;
    let to_lonlat = ToLonLat::new(&patches.crs)?;
    let lonlat = to_lonlat.points(&patches.items.iter().map(|p| (p.x, p.y)).collect::<Vec<_>>())?;
    let method_id = |i: usize| {
        plan.method_of[i]
            .map(|m| o.catalogue.method(m).id.clone())
            .unwrap_or_default()
    };

    let mut rows = Vec::new();
    for (rank, row) in plan.rows.iter().enumerate() {
        let i = row.patch.index();
        let p = &patches.items[i];
        rows.push(vec![
            (rank + 1).to_string(),
            p.label.clone(),
            o.catalogue.method(row.choice.method).id.clone(),
            round(p.stems, 1),
            round(row.choice.cost, 2),
            round(row.choice.hours, 2),
            round(plan.risk_shares[i], 6),
            round(row.reduction_pct, 4),
            round(row.value_per_cost, 4),
            round(p.x, 2),
            round(p.y, 2),
            round(lonlat[i].0, 7),
            round(lonlat[i].1, 7),
            p.site.parcel.clone(),
            p.site.access.as_str().into(),
            p.site.herbicide.as_str().into(),
            p.site.contact.clone(),
            o.pressure.corridors[i].join(";"),
            row.cautions.join(";"),
        ]);
    }
    staging.write("plan.csv", csv_bytes(&PLAN_COLUMNS, &rows)?)?;

    let mut rows = Vec::new();
    for (i, p) in patches.items.iter().enumerate() {
        rows.push(vec![
            p.label.clone(),
            round(p.x, 2),
            round(p.y, 2),
            round(lonlat[i].0, 7),
            round(lonlat[i].1, 7),
            round(p.stems, 1),
            p.area_ha.map(|a| round(a, 4)).unwrap_or_default(),
            round(o.pressure.values[i], 4),
            p.site.access.as_str().into(),
            p.site.herbicide.as_str().into(),
            round(p.site.cost_factor, 4),
            p.site.parcel.clone(),
            if o.eligible[i] {
                "yes".into()
            } else {
                "no".into()
            },
            round(plan.risk_shares[i], 6),
            sci(plan.patch_value[i]),
            round(plan.establishment_before[i], 6),
            round(plan.establishment_after[i], 6),
            method_id(i),
            round(o.suitability[i], 6),
        ]);
    }
    let header = [
        "patch_id",
        "x",
        "y",
        "lon",
        "lat",
        "stems",
        "area_ha",
        "pressure",
        "access",
        "herbicide",
        "cost_factor",
        "parcel",
        "eligible",
        "risk_share",
        "patch_value",
        "establishment_p",
        "establishment_p_after",
        "method",
        "suitability",
    ];
    staging.write("patches.csv", csv_bytes(&header, &rows)?)?;

    let mut priority = vec![0i64; patches.len()];
    for (rank, row) in plan.rows.iter().enumerate() {
        priority[row.patch.index()] = rank as i64 + 1;
    }
    let cautions_of: Vec<String> = {
        let mut c = vec![String::new(); patches.len()];
        for row in &plan.rows {
            c[row.patch.index()] = row.cautions.join(";");
        }
        c
    };
    let fields = [
        ("patch_id", Property::Text(String::new())),
        ("treated", Property::Integer(0)),
        ("priority", Property::Integer(0)),
        ("method", Property::Text(String::new())),
        ("stems", Property::Number(0.0)),
        ("cost", Property::Number(0.0)),
        ("crew_hours", Property::Number(0.0)),
        ("risk_share", Property::Number(0.0)),
        ("pressure", Property::Number(0.0)),
        ("access", Property::Text(String::new())),
        ("herbicide", Property::Text(String::new())),
        ("parcel", Property::Text(String::new())),
        ("cautions", Property::Text(String::new())),
    ];
    let mut cost_of = vec![f64::NAN; patches.len()];
    let mut hours_of = vec![f64::NAN; patches.len()];
    for row in &plan.rows {
        cost_of[row.patch.index()] = (row.choice.cost * 100.0).round() / 100.0;
        hours_of[row.patch.index()] = (row.choice.hours * 100.0).round() / 100.0;
    }
    let features: Vec<(geo::Geometry<f64>, Vec<Property>)> = patches
        .items
        .iter()
        .enumerate()
        .map(|(i, p)| {
            (
                p.geometry(),
                vec![
                    Property::Text(p.label.clone()),
                    Property::Integer(plan.method_of[i].is_some() as i64),
                    Property::Integer(priority[i]),
                    Property::Text(method_id(i)),
                    Property::Number((p.stems * 10.0).round() / 10.0),
                    Property::Number(cost_of[i]),
                    Property::Number(hours_of[i]),
                    Property::Number(plan.risk_shares[i]),
                    Property::Number(o.pressure.values[i]),
                    Property::Text(p.site.access.as_str().into()),
                    Property::Text(p.site.herbicide.as_str().into()),
                    Property::Text(p.site.parcel.clone()),
                    Property::Text(cautions_of[i].clone()),
                ],
            )
        })
        .collect();
    gis::write_geojson(
        &staging.path("plan.geojson"),
        &patches.crs,
        &fields,
        &features,
    )?;
    staging.write("cautions.txt", cautions::standing_text())?;
    Ok(())
}

/// The summary record.
pub fn summary(
    o: &Outputs,
    budget: f64,
    crew_hours_limit: Option<f64>,
    n_edges: usize,
    model: &crate::settings::ModelSection,
) -> Summary {
    let plan = o.plan;
    let finite = |v: f64| if v.is_finite() { Some(v) } else { None };
    let stems_treated = plan
        .rows
        .iter()
        .map(|r| o.patches.items[r.patch.index()].stems)
        .sum();
    Summary {
        currency: o.catalogue.currency.clone(),
        budget,
        // Costs are whole cents per patch; the sum is shown to the cent.
        spent: (plan.spent * 100.0).round() / 100.0,
        crew_hours_limit,
        crew_hours: plan.crew_hours,
        risk_before: plan.risk_before,
        risk_after: plan.risk_after,
        risk_reduction_pct: plan.reduction_pct(),
        lambda_before: plan.lambda_before,
        lambda_after: plan.lambda_after,
        greedy_risk_after: plan.greedy_risk_after,
        greedy_reduction_pct: plan.greedy_risk_after.map(|g| {
            if plan.risk_before > 0.0 {
                100.0 * (1.0 - g / plan.risk_before)
            } else {
                0.0
            }
        }),
        status: plan.status.as_str(),
        gap: finite(plan.gap),
        bound: finite(plan.bound),
        solve_seconds: plan.solve_seconds,
        solver_path: plan.solver_path,
        bound_from: plan.bound_from,
        n_patches: o.patches.len(),
        n_edges,
        n_treated: plan.rows.len(),
        n_eligible: o.eligible.iter().filter(|e| **e).count(),
        stems_total: o.patches.items.iter().map(|p| p.stems).sum(),
        stems_treated,
        dropped_slivers: o.patches.dropped_slivers,
        host_source: o.patches.source,
        crs: o.patches.crs.name.clone(),
        kernel: format!("{:?}", model.kernel).to_lowercase(),
        alpha_m: model.alpha_m,
        epsilon: model.epsilon,
        tool_version: env!("CARGO_PKG_VERSION"),
        baselines: serde_json::Map::new(),
        depot: [f64::NAN, f64::NAN],
        suitability_layer: None,
        ensemble: None,
    }
}
