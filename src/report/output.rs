//! The plan folder's files: plan.csv, patches.csv, the maps, the provenance record and the
//! summary record ([`Summary`], defined in `field::plan_folder` where it is read back). Written
//! through a [`Staging`] folder (`report::staging`), moved into place only when complete.

use crate::core::cautions;
use crate::core::error::Result;
pub use crate::field::plan_folder::{SiteRules, Summary};
use crate::input::gis::{self, Property, ToLonLat};
use crate::input::patches::Patches;
use crate::input::treatments::Catalogue;
use crate::model::graph::Pressure;
use crate::planning::plan::Plan;

pub use crate::report::staging::{MARKER, Staging, check_new_file, write_new_file, written_by};

/// Make a run repeatable: keep the catalogue it used as `treatments.used.toml` and write
/// `scenario.resolved.toml` pointing at it, under a one-line `header` comment. Paths inside the
/// output folder are written relative to it, so the folder can be moved or copied.
/// `scenario.resolved.toml` marks a plan folder (or a curve's or programme's); a command
/// whose folder is not one names its record otherwise ([`write_record`]).
pub fn write_provenance(
    staging: &Staging,
    scenario: &crate::core::scenario::Scenario,
    catalogue_text: &str,
    header: &str,
) -> Result<()> {
    write_record(
        staging,
        "scenario.resolved.toml",
        scenario,
        catalogue_text,
        header,
    )
}

/// As [`write_provenance`], the record written as `name` (e.g. `simulate.resolved.toml`).
pub fn write_record(
    staging: &Staging,
    name: &str,
    scenario: &crate::core::scenario::Scenario,
    catalogue_text: &str,
    header: &str,
) -> Result<()> {
    staging.write("treatments.used.toml", catalogue_text)?;
    let mut resolved = scenario.clone();
    resolved.plan.treatments = Some(staging.path("treatments.used.toml"));
    resolved.relative_to(staging.dir(), staging.out());
    staging.write(name, format!("# {header}\n{}", resolved.to_toml()?))
}

/// cautions.txt of a folder that plans (plan, curve, programme): the standing cautions and the
/// site check (whether a water layer was given).
pub fn write_cautions(staging: &Staging, water_checked: bool) -> Result<()> {
    staging.write(
        "cautions.txt",
        format!(
            "{}\n{}\n",
            cautions::standing_text(),
            cautions::site_check_text(water_checked)
        ),
    )
}

fn round(v: f64, digits: i32) -> String {
    if !v.is_finite() {
        return String::new();
    }
    let m = 10f64.powi(digits);
    // `+ 0.0` turns -0 into 0: a person should never read "-0".
    format!("{}", (v * m).round() / m + 0.0)
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
pub const PLAN_COLUMNS: [&str; 20] = [
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
    "site_notes",
];

/// A CSV file's bytes: the header row, then the rows, with text cells a spreadsheet would
/// execute neutralised ([`crate::core::csv_cells`]).
pub fn csv_bytes(header: &[&str], rows: &[Vec<String>]) -> Result<Vec<u8>> {
    crate::core::csv_cells::bytes(header, rows)
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

    // With size classes, plan.csv says what each class gets (`prescription`) and its stems (one
    // column per class, named as the inventory's); without, the columns are as before.
    let classes = o.catalogue.inventory_classes();
    let mut rows = Vec::new();
    for (rank, row) in plan.rows.iter().enumerate() {
        let i = row.patch.index();
        let p = &patches.items[i];
        let (by_class, _) = o.catalogue.stems_by_class(p);
        let mut cells = vec![
            (rank + 1).to_string(),
            p.label.clone(),
            o.catalogue.method(row.choice.method).id.clone(),
        ];
        if !classes.is_empty() {
            cells.push(crate::input::treatments::prescription_text(
                o.catalogue,
                &row.choice,
                &by_class,
            ));
        }
        cells.push(round(p.stems, 0));
        if !classes.is_empty() {
            // Whole stems that add up to the patch's (largest remainder).
            let whole = crate::input::treatments::whole_stems(&by_class, p.stems);
            cells.extend(whole.iter().map(|n| round(*n, 0)));
        }
        rows.push(cells);
        rows.last_mut().expect("just pushed").extend([
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
            p.site.notes(),
        ]);
    }
    let mut header: Vec<&str> = PLAN_COLUMNS[..3].to_vec();
    if !classes.is_empty() {
        header.push("prescription");
    }
    header.push(PLAN_COLUMNS[3]);
    header.extend(classes.iter().map(String::as_str));
    header.extend(&PLAN_COLUMNS[4..]);
    staging.write("plan.csv", csv_bytes(&header, &rows)?)?;

    let mut rows = Vec::new();
    for (i, p) in patches.items.iter().enumerate() {
        rows.push(vec![
            p.label.clone(),
            round(p.x, 2),
            round(p.y, 2),
            round(lonlat[i].0, 7),
            round(lonlat[i].1, 7),
            round(p.stems, 0),
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
            crate::report::format::significant(plan.patch_value[i], 6),
            round(plan.establishment_before[i], 6),
            round(plan.establishment_after[i], 6),
            method_id(i),
            round(o.suitability[i], 6),
            p.site.water.as_str().into(),
            p.site.notes(),
            p.site.contact.clone(),
            o.pressure.corridors[i].join(";"),
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
        "water",
        "site_notes",
        "contact",
        "corridors",
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
    write_cautions(staging, patches.water_checked)?;
    Ok(())
}

/// The assumption a plan makes when patches were counted only as `stems` (or came from a
/// raster) under a catalogue with size classes: the default mix it split them by.
pub fn stem_mix_assumption(catalogue: &Catalogue, patches: &Patches) -> Option<String> {
    let assumed = patches
        .items
        .iter()
        .filter(|p| catalogue.stems_by_class(p).1)
        .count();
    (assumed > 0).then(|| {
        format!(
            "{assumed} of {} patches counted only as stems: split by the default size mix {}; count stems by size class for prescriptions that fit the stands",
            patches.len(),
            catalogue.default_mix_text()
        )
    })
}

/// The summary record.
pub fn summary(
    o: &Outputs,
    budget: f64,
    crew_hours_limit: Option<f64>,
    n_edges: usize,
    model: &crate::core::scenario::ModelSection,
) -> Summary {
    let plan = o.plan;
    let finite = |v: f64| if v.is_finite() { Some(v) } else { None };
    // Whole stems per patch, as plan.csv prints them, so the total is their sum.
    let stems_treated = plan
        .rows
        .iter()
        .map(|r| o.patches.items[r.patch.index()].stems.round())
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
        metrics_converged: plan.metrics_converged,
        greedy_risk_after: plan.greedy_risk_after,
        greedy_reduction_pct: plan.greedy_risk_after.map(|g| {
            if plan.risk_before > 0.0 {
                100.0 * (1.0 - g / plan.risk_before)
            } else {
                0.0
            }
        }),
        status: plan.status.as_str().to_string(),
        gap: finite(plan.gap),
        bound: finite(plan.bound),
        solve_seconds: plan.solve_seconds,
        time_limit_s: f64::NAN,
        elapsed_s: f64::NAN,
        solver_path: plan.solver_path.to_string(),
        bound_from: plan.bound_from.to_string(),
        n_patches: o.patches.len(),
        n_edges,
        n_treated: plan.rows.len(),
        n_eligible: o.eligible.iter().filter(|e| **e).count(),
        stems_total: o.patches.items.iter().map(|p| p.stems).sum(),
        stems_treated,
        dropped_slivers: o.patches.dropped_slivers,
        host_source: o.patches.source.to_string(),
        crs: o.patches.crs.name.clone(),
        crs_conversion: o.patches.crs_conversion.clone(),
        input_linear_units: o.patches.input_linear_units.clone(),
        kernel: format!("{:?}", model.kernel).to_lowercase(),
        alpha_m: model.alpha_m,
        epsilon: model.epsilon,
        tool_version: env!("CARGO_PKG_VERSION").to_string(),
        baselines: serde_json::Map::new(),
        depot: [f64::NAN, f64::NAN],
        suitability_layer: None,
        ensemble: None,
        skipped: o.patches.skipped.clone(),
        patches_without_host: o
            .patches
            .items
            .iter()
            .zip(o.suitability)
            .filter(|(p, s)| p.stems * **s <= 0.0)
            .count(),
        site_rules: SiteRules::of(o.patches),
        stem_mix_assumption: stem_mix_assumption(o.catalogue, o.patches),
        measures_diverge: plan.divergence(),
        establishment_diverges: None,
        horizon_years: None,
    }
}
