//! The programme's outputs: program.csv, one plan folder per season (season_1, season_2, ...:
//! plan.csv, patches.csv, plan.geojson, summary.json, treatments.used.toml, cautions.txt — each
//! one `orders --plan` and `contract --plan` take), program.svg, summary.json, cautions.txt and
//! the provenance files.
//!
//! # Units
//! Money in the catalogue's currency; R (risk index) as computed, x 1000 on the chart.

use serde_json::json;

use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::core::scenario::Scenario;
use crate::input::gis::{self, Property};
use crate::input::treatments;
use crate::planning::prepare::Prepared;
use crate::planning::program::{self, Action, Horizon, ProgramProblem, ProgramRun, ProgramSolved};
use crate::report::chart::{self, Series, Style};
use crate::report::output::{self, Staging};
use crate::solve::problem::Assignment;

/// What the command prints from the written programme.
pub struct Written {
    /// Per season: new treatments and follow-up visits.
    pub visits: Vec<(usize, usize)>,
    /// Patches with a course of treatment.
    pub n_courses: usize,
    pub risks: Vec<f64>,
    pub risks_myopic: Vec<f64>,
    pub risks_none: Vec<f64>,
    pub spent: Vec<f64>,
    pub objective_myopic: f64,
    pub objective_none: f64,
    /// The programme chose exactly the season-by-season plan.
    pub same_as_myopic: bool,
}

/// Write the programme's files into `staging`.
pub fn write(
    staging: &Staging,
    prepared: &Prepared,
    run: &ProgramRun,
    horizon: &Horizon,
    s: &Scenario,
) -> Result<Written> {
    let ProgramRun {
        problem,
        myopic,
        solved,
        columns,
        exact_skipped,
        deadline,
    } = run;
    let (columns, exact_skipped) = (*columns, *exact_skipped);
    let none: Assignment = vec![None; problem.len()];
    let risks = problem.risks(&solved.assignment);
    let risks_myopic = problem.risks(myopic);
    let risks_none = problem.risks(&none);
    let spent = problem.spent(&solved.assignment);

    // program.csv
    let mut rows = Vec::new();
    for (i, p) in prepared.patches.items.iter().enumerate() {
        let Some(k) = solved.assignment[i] else {
            continue;
        };
        let c = &problem.courses[i][k];
        for t in c.start..horizon.seasons {
            let visit = c.visits.iter().find(|v| v.season == t);
            rows.push((
                t,
                vec![
                    (t + 1).to_string(),
                    p.label.clone(),
                    match visit.map(|v| v.action) {
                        Some(Action::New) => "new",
                        Some(Action::FollowUp) => "follow-up",
                        None => "none",
                    }
                    .to_string(),
                    visit
                        .map(|v| match v.action {
                            // A follow-up names every method it uses (one per treated class's
                            // follow-up method), joined by `+`.
                            Action::FollowUp => v
                                .methods
                                .iter()
                                .map(|&k| prepared.catalogue.methods[k].id.as_str())
                                .collect::<Vec<_>>()
                                .join("+"),
                            Action::New => prepared.catalogue.methods[v.method].id.clone(),
                        })
                        .unwrap_or_default(),
                    visit.map(|v| format!("{:.1}", v.stems)).unwrap_or_default(),
                    format!("{:.2}", visit.map(|v| v.cost).unwrap_or(0.0)),
                    format!("{:.2}", visit.map(|v| v.hours).unwrap_or(0.0)),
                    format!("{:.4}", c.host[t]),
                ],
            ));
        }
    }
    rows.sort_by(|a, b| a.0.cmp(&b.0).then(a.1[1].cmp(&b.1[1])));
    let rows: Vec<Vec<String>> = rows.into_iter().map(|r| r.1).collect();
    staging.write(
        "program.csv",
        output::csv_bytes(
            &[
                "season",
                "patch_id",
                "action",
                "method",
                "stems",
                "cost",
                "hours",
                "host_after",
            ],
            &rows,
        )?,
    )?;

    for t in 0..horizon.seasons {
        write_season(
            staging,
            prepared,
            problem,
            solved,
            t,
            horizon.regrowth,
            risks_none[t],
        )?;
    }

    // program.svg
    let series = [
        (
            "programme",
            "this programme (all seasons planned together)",
            &risks,
            Style::Main,
        ),
        (
            "myopic",
            "season by season, each season's risk only",
            &risks_myopic,
            Style::Dashed,
        ),
        ("none", "no action", &risks_none, Style::Dotted),
    ]
    .into_iter()
    .map(|(id, label, r, style)| Series {
        id: id.into(),
        label: label.into(),
        points: r
            .iter()
            .enumerate()
            .map(|(t, v)| ((t + 1) as f64, 1000.0 * v))
            .collect(),
        style,
    })
    .collect::<Vec<_>>();
    let y_max = risks_none.iter().cloned().fold(0.0, f64::max) * 1000.0 * 1.1;
    let svg = chart::line_chart(
        "Connected-host risk by season",
        "season",
        "risk index R x 1000",
        &|x| format!("{x:.0}"),
        y_max.max(1e-9),
        &series,
        &[],
    );
    staging.write("program.svg", &svg)?;

    let objective_myopic = problem.objective(myopic);
    let objective_none = problem.objective(&none);
    let summary = json!({
        "seasons": (0..horizon.seasons).map(|t| json!({
            "season": t + 1,
            "budget": problem.budgets[t],
            "spent": (spent[t] * 100.0).round() / 100.0 + 0.0,
            "crew_hours_limit": problem.hours.as_ref().map(|h| h[t]),
            "risk_after": risks[t],
            "risk_no_action": risks_none[t],
            "risk_myopic": risks_myopic[t],
        })).collect::<Vec<_>>(),
        "objective": solved.objective,
        "objective_myopic": objective_myopic,
        "same_as_season_by_season": solved.assignment == *myopic,
        "objective_no_action": objective_none,
        "bound": solved.bound,
        "gap": solved.gap,
        "status": solved.status.as_str(),
        "solve_seconds": solved.seconds,
        "time_limit_s": s.solver.time_limit_s,
        "exact_model_columns": columns,
        "exact_model_run": !exact_skipped,
        "elapsed_s": deadline.elapsed_s(),
        "discount": horizon.discount,
        "growth": horizon.growth,
        "regrowth": horizon.regrowth,
        "currency": prepared.catalogue.currency,
        "crs": prepared.patches.crs.name,
        "n_patches": prepared.patches.len(),
        "n_courses": solved.assignment.iter().filter(|a| a.is_some()).count(),
        "trap_trees": s.plan.trap_trees,
        "risk_note": "R per season at the host as treated and regrown season by season; the plan objective's horizon_years does not apply to a programme",
        "tool_version": env!("CARGO_PKG_VERSION"),
    });
    staging.write(
        "summary.json",
        serde_json::to_string_pretty(&summary)
            .map_err(|e| Error::Internal(format!("summary: {e}")))?
            + "\n",
    )?;
    output::write_cautions(staging, prepared.patches.water_checked)?;
    output::write_provenance(
        staging,
        &prepared.resolved,
        &prepared.catalogue_text,
        "Every input and parameter this programme used.",
    )?;
    let visits = (0..horizon.seasons)
        .map(|t| {
            let count = |action: &str| {
                rows.iter()
                    .filter(|r| r[0] == (t + 1).to_string() && r[2] == action)
                    .count()
            };
            (count("new"), count("follow-up"))
        })
        .collect();
    Ok(Written {
        visits,
        n_courses: solved.assignment.iter().filter(|a| a.is_some()).count(),
        risks,
        risks_myopic,
        risks_none,
        spent,
        objective_myopic,
        same_as_myopic: solved.assignment == *myopic,
        objective_none,
    })
}

/// One season's plan folder.
fn write_season(
    staging: &Staging,
    prepared: &Prepared,
    problem: &ProgramProblem,
    solved: &ProgramSolved,
    t: usize,
    regrowth: f64,
    risk_none: f64,
) -> Result<()> {
    let dir = format!("season_{}", t + 1);
    std::fs::create_dir_all(staging.path(&dir))
        .map_err(|e| Error::io("create", staging.path(&dir), e))?;
    let a = &solved.assignment;
    let host = problem.host(a, t);
    let r_t = prepared.model.risk(&host);
    let shares = prepared.model.risk_shares();
    let to = gis::ToLonLat::new(&prepared.patches.crs)?;
    let points: Vec<(f64, f64)> = prepared.patches.items.iter().map(|p| (p.x, p.y)).collect();
    let lonlat = to.points(&points)?;
    // Rows: every visit this season, with its own share of the season's risk reduction.
    struct Row {
        i: usize,
        visit: program::Visit,
        reduction_pct: f64,
    }
    let mut rows: Vec<Row> = Vec::new();
    for (i, choice) in a.iter().enumerate() {
        let Some(k) = *choice else { continue };
        let c = &problem.courses[i][k];
        let Some(visit) = c.visits.iter().find(|v| v.season == t) else {
            continue;
        };
        // Without this visit: untreated host (new) or regrowth from last season (follow-up).
        let mut without = host.clone();
        without[i] = match visit.action {
            Action::New => problem.untreated[t],
            Action::FollowUp => c.host[t - 1] + regrowth * (problem.untreated[t] - c.host[t - 1]),
        };
        let reduction = prepared.model.risk(&without) - r_t;
        rows.push(Row {
            i,
            visit: visit.clone(),
            reduction_pct: if risk_none > 0.0 {
                100.0 * reduction / risk_none
            } else {
                0.0
            },
        });
    }
    rows.sort_by(|x, y| {
        let v = |r: &Row| r.reduction_pct / r.visit.cost.max(1e-9);
        v(y).total_cmp(&v(x)).then(x.i.cmp(&y.i))
    });
    let catalogue = &prepared.catalogue;
    let mut plan_rows = Vec::new();
    for (priority, r) in rows.iter().enumerate() {
        let p = &prepared.patches.items[r.i];
        let method = &catalogue.methods[r.visit.method];
        plan_rows.push(vec![
            (priority + 1).to_string(),
            p.label.clone(),
            method.id.clone(),
            format!("{:.1}", r.visit.stems),
            format!("{:.2}", r.visit.cost),
            format!("{:.2}", r.visit.hours),
            format!("{:.6}", shares[r.i]),
            format!("{:.4}", r.reduction_pct),
            format!("{:.4}", r.reduction_pct / r.visit.cost.max(1e-9) * 1000.0),
            format!("{:.2}", p.x),
            format!("{:.2}", p.y),
            format!("{:.7}", lonlat[r.i].0),
            format!("{:.7}", lonlat[r.i].1),
            p.site.parcel.clone(),
            p.site.access.as_str().to_string(),
            p.site.herbicide.as_str().to_string(),
            p.site.contact.clone(),
            prepared.pressure.corridors[r.i].join(";"),
            treatments::caution_codes(method, p).join(";"),
            p.site.notes(),
            match r.visit.action {
                Action::New => "new".to_string(),
                Action::FollowUp => "follow-up".to_string(),
            },
        ]);
    }
    staging.write(
        &format!("{dir}/plan.csv"),
        output::csv_bytes(
            &output::PLAN_COLUMNS
                .iter()
                .copied()
                .chain(["action"])
                .collect::<Vec<_>>(),
            &plan_rows,
        )?,
    )?;
    let visited: std::collections::HashMap<usize, &Row> = rows.iter().map(|r| (r.i, r)).collect();
    let mut patch_rows = Vec::new();
    for (i, p) in prepared.patches.items.iter().enumerate() {
        patch_rows.push(vec![
            p.label.clone(),
            format!("{:.2}", p.x),
            format!("{:.2}", p.y),
            format!("{:.7}", lonlat[i].0),
            format!("{:.7}", lonlat[i].1),
            format!("{:.1}", p.stems * host[i]),
            p.area_ha.map(|h| format!("{h:.2}")).unwrap_or_default(),
            format!("{}", prepared.pressure.values[i]),
            p.site.access.as_str().to_string(),
            p.site.herbicide.as_str().to_string(),
            format!("{}", p.site.cost_factor),
            p.site.parcel.clone(),
            if prepared.eligible[i] { "yes" } else { "no" }.to_string(),
            visited
                .get(&i)
                .map(|r| catalogue.methods[r.visit.method].id.clone())
                .unwrap_or_default(),
            format!("{}", prepared.suitability[i]),
            format!("{:.4}", host[i]),
            p.site.water.as_str().to_string(),
            p.site.notes(),
        ]);
    }
    staging.write(
        &format!("{dir}/patches.csv"),
        output::csv_bytes(
            &[
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
                "method",
                "suitability",
                "host",
                "water",
                "site_notes",
            ],
            &patch_rows,
        )?,
    )?;
    let fields = [
        ("patch_id", Property::Text(String::new())),
        ("treated", Property::Integer(0)),
        ("stems", Property::Number(0.0)),
        ("method", Property::Text(String::new())),
    ];
    let features: Vec<_> = prepared
        .patches
        .items
        .iter()
        .enumerate()
        .map(|(i, p)| {
            (
                p.geometry(),
                vec![
                    Property::Text(p.label.clone()),
                    Property::Integer(i64::from(visited.contains_key(&i))),
                    Property::Number(p.stems * host[i]),
                    Property::Text(
                        visited
                            .get(&i)
                            .map(|r| catalogue.methods[r.visit.method].id.clone())
                            .unwrap_or_default(),
                    ),
                ],
            )
        })
        .collect();
    gis::write_geojson(
        &staging.path(&format!("{dir}/plan.geojson")),
        &prepared.patches.crs,
        &fields,
        &features,
    )?;
    let spent: f64 = rows.iter().map(|r| r.visit.cost).sum();
    let summary = json!({
        "season": t + 1,
        "currency": catalogue.currency,
        "budget": problem.budgets[t],
        "spent": (spent * 100.0).round() / 100.0 + 0.0,
        "risk_before": risk_none,
        "risk_after": r_t,
        "risk_reduction_pct": if risk_none > 0.0 { 100.0 * (1.0 - r_t / risk_none) } else { 0.0 },
        "status": solved.status.as_str(),
        "gap": solved.gap,
        "n_treated": rows.len(),
        "crs": prepared.patches.crs.name,
        "note": "one season of a multi-season programme: status and gap are the whole programme's",
    });
    staging.write(
        &format!("{dir}/summary.json"),
        serde_json::to_string_pretty(&summary)
            .map_err(|e| Error::Internal(format!("summary: {e}")))?
            + "\n",
    )?;
    staging.write(
        &format!("{dir}/treatments.used.toml"),
        &prepared.catalogue_text,
    )?;
    staging.write(&format!("{dir}/cautions.txt"), cautions::standing_text())?;
    Ok(())
}
