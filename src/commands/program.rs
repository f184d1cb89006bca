//! `hostcut program`: plan several seasons together. Writes program.csv, one plan folder per
//! season (season_1, season_2, ...: plan.csv, patches.csv, plan.geojson, summary.json,
//! treatments.used.toml, cautions.txt — each one `orders --plan` and `contract --plan` take),
//! program.svg, summary.json, cautions.txt and the provenance files.

use std::fmt::Write as _;

use serde_json::json;

use crate::app::cli::ProgramArgs;
use crate::app::settings;
use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::input::gis::{self, Property};
use crate::input::treatments;
use crate::planning::prepare::{self, Prepared};
use crate::planning::program::{self, Action, Horizon, ProgramProblem, ProgramSolved};
use crate::report::chart::{self, Series, Style};
use crate::report::output::{self, Staging};
use crate::solve::problem::{Assignment, Limits, Status};

fn per_season(values: &[f64], seasons: usize, flag: &str) -> Result<Vec<f64>> {
    let v = match values.len() {
        1 => vec![values[0]; seasons],
        n if n == seasons => values.to_vec(),
        n => {
            return Err(Error::input_with_hint(
                format!("`{flag}` has {n} values for {seasons} seasons"),
                "give one value per season, or one value for every season",
            ));
        }
    };
    if let Some(b) = v.iter().find(|b| !(b.is_finite() && **b >= 0.0)) {
        return Err(Error::input(format!("`{flag}`: {b} is not 0 or more")));
    }
    Ok(v)
}

pub fn run(args: &ProgramArgs) -> Result<String> {
    let mut inputs = args.inputs.clone();
    if let Some(dir) = &args.plan_dir {
        inputs.scenario = Some(settings::plan_folder_scenario(dir)?);
    }
    if !(1..=10).contains(&args.seasons) {
        return Err(Error::input("`--seasons` must be between 1 and 10"));
    }
    let budgets = per_season(&args.budgets, args.seasons, "--budgets")?;
    if !(args.discount > 0.0 && args.discount <= 1.0) {
        return Err(Error::input("`--discount` must be above 0 and at most 1"));
    }
    if !(args.growth.is_finite() && args.growth >= 0.0 && args.growth <= 1.0) {
        return Err(Error::input("`--growth` must be between 0 and 1"));
    }
    if !(0.0..=1.0).contains(&args.regrowth) {
        return Err(Error::input("`--regrowth` must be between 0 and 1"));
    }
    let settings = settings::resolve_with(&inputs, false)?;
    let s = &settings.scenario;
    if s.ensemble.is_some() {
        return Err(Error::input_with_hint(
            "`hostcut program` works on one dispersal kernel",
            "give one kernel, e.g. `--kernel exp:200`",
        ));
    }
    let hours = if !args.season_crew_hours.is_empty() {
        Some(per_season(
            &args.season_crew_hours,
            args.seasons,
            "--season-crew-hours",
        )?)
    } else {
        s.plan.crew_hours.map(|h| vec![h; args.seasons])
    };
    let staging = Staging::new(&settings.out, settings.force, "program")?;
    let progress = |msg: &str| settings.progress(msg);
    let prepared = prepare::prepare(s, &progress)?;
    let horizon = Horizon {
        seasons: args.seasons,
        growth: args.growth,
        regrowth: args.regrowth,
        discount: args.discount,
    };
    let courses = prepared
        .patches
        .items
        .iter()
        .enumerate()
        .map(|(i, p)| {
            if prepared.excluded[i] {
                Vec::new()
            } else {
                program::courses(&prepared.catalogue, p, &prepared.choices[i], &horizon)
            }
        })
        .collect();
    let problem = ProgramProblem {
        model: &prepared.model,
        courses,
        untreated: horizon.untreated(),
        weights: horizon.weights(),
        budgets: budgets.clone(),
        hours: hours.clone(),
        required: prepared.required.clone(),
    };
    // One deadline for the whole command: the season-by-season plan gets a quarter of the time
    // left, the season bounds (valid wherever their solves stop) a third of what then remains,
    // and the programme itself the rest; within each phase the seasons share their part. When
    // the programme's MIP is too large for HiGHS to start on in that rest, the bounds get all
    // of it (the season-by-season plan then stands, and only its proven gap can improve).
    let deadline = super::plan::keep_for_outputs(&settings, prepared.patches.len(), args.seasons);
    let limits = Limits {
        max_memory_gb: s.solver.max_memory_gb,
        ..Limits::until(deadline, s.solver.gap)
    };
    progress("planning season by season (the myopic comparison)");
    let myopic = program::myopic(
        &problem,
        Limits {
            deadline: deadline.fraction(0.25),
            ..limits
        },
    )?;
    progress("bounding each season from below");
    // The programme's MIP is worth its time when HiGHS would get at least as long to search
    // as it may overrun by.
    let exact_fits = deadline.fraction(2.0 / 3.0).remaining_s()
        >= 2.0 * crate::solve::highs::highs_overrun_s(program::columns(&problem));
    let floor = program::season_floor(
        &problem,
        Limits {
            deadline: deadline.fraction(if exact_fits { 1.0 / 3.0 } else { 1.0 }),
            ..limits
        },
    )?;
    let columns = program::columns(&problem);
    let exact_skipped = crate::solve::highs::highs_cannot_finish(columns, &limits);
    if exact_skipped {
        eprintln!(
            "note: the programme's exact model ({columns} columns) cannot be solved in the {:.1} s left of `--time-limit-s {}`: the season-by-season plan stands, bounded by the season floor",
            deadline.remaining_s(),
            s.solver.time_limit_s
        );
    } else {
        progress(&format!("optimising {} seasons together", args.seasons));
    }
    let solved = program::solve(&problem, limits, Some(&myopic), floor)?;
    if solved.status == Status::Infeasible {
        return Err(Error::input_with_hint(
            "no programme fits: the required patches cannot be treated within the seasons' budgets and hours",
            "raise `--budgets`, or require fewer patches",
        ));
    }
    let none: Assignment = vec![None; problem.len()];
    let risks = problem.risks(&solved.assignment);
    let risks_myopic = problem.risks(&myopic);
    let risks_none = problem.risks(&none);
    let spent = problem.spent(&solved.assignment);

    // program.csv
    let mut rows = Vec::new();
    for (i, p) in prepared.patches.items.iter().enumerate() {
        let Some(k) = solved.assignment[i] else {
            continue;
        };
        let c = &problem.courses[i][k];
        for t in c.start..args.seasons {
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
                        .map(|v| prepared.catalogue.methods[v.method].id.clone())
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

    for t in 0..args.seasons {
        write_season(
            &staging,
            &prepared,
            &problem,
            &solved,
            t,
            args.regrowth,
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

    let objective_myopic = problem.objective(&myopic);
    let objective_none = problem.objective(&none);
    let summary = json!({
        "seasons": (0..args.seasons).map(|t| json!({
            "season": t + 1,
            "budget": budgets[t],
            "spent": (spent[t] * 100.0).round() / 100.0 + 0.0,
            "crew_hours_limit": hours.as_ref().map(|h| h[t]),
            "risk_after": risks[t],
            "risk_no_action": risks_none[t],
            "risk_myopic": risks_myopic[t],
        })).collect::<Vec<_>>(),
        "objective": solved.objective,
        "objective_myopic": objective_myopic,
        "objective_no_action": objective_none,
        "bound": solved.bound,
        "gap": solved.gap,
        "status": solved.status.as_str(),
        "solve_seconds": solved.seconds,
        "time_limit_s": s.solver.time_limit_s,
        "exact_model_columns": columns,
        "exact_model_run": !exact_skipped,
        "elapsed_s": deadline.elapsed_s(),
        "discount": args.discount,
        "growth": args.growth,
        "regrowth": args.regrowth,
        "currency": prepared.catalogue.currency,
        "crs": prepared.patches.crs.name,
        "n_patches": prepared.patches.len(),
        "n_courses": solved.assignment.iter().filter(|a| a.is_some()).count(),
        "trap_trees": s.plan.trap_trees,
        "tool_version": env!("CARGO_PKG_VERSION"),
    });
    staging.write(
        "summary.json",
        serde_json::to_string_pretty(&summary)
            .map_err(|e| Error::Internal(format!("summary: {e}")))?
            + "\n",
    )?;
    staging.write(
        "cautions.txt",
        format!(
            "{}\n{}\n",
            cautions::standing_text(),
            cautions::site_check_text(prepared.patches.water_checked)
        ),
    )?;
    output::write_provenance(
        &staging,
        &prepared.resolved,
        &prepared.catalogue_text,
        "Every input and parameter this programme used.",
    )?;
    let out = staging.commit()?;

    let c = &prepared.catalogue.currency;
    let mut text = String::new();
    if !settings.quiet {
        let _ = writeln!(
            text,
            "hostcut program: {} patches, {} seasons, {} courses of treatment",
            prepared.patches.len(),
            args.seasons,
            summary["n_courses"]
        );
    }
    for t in 0..args.seasons {
        let news = rows
            .iter()
            .filter(|r| r[0] == (t + 1).to_string() && r[2] == "new")
            .count();
        let follow = rows
            .iter()
            .filter(|r| r[0] == (t + 1).to_string() && r[2] == "follow-up")
            .count();
        let _ = writeln!(
            text,
            "  season {}: {news} new, {follow} follow-up; {} of {}; R {:.6} (no action {:.6}, season-by-season {:.6})",
            t + 1,
            crate::report::format::money(c, spent[t]),
            crate::report::format::money(c, budgets[t]),
            risks[t],
            risks_none[t],
            risks_myopic[t]
        );
    }
    let _ = writeln!(
        text,
        "whole horizon: sum of discounted R {:.6}, {:.1}% below no action; the season-by-season plan leaves {:.1}% more",
        solved.objective,
        100.0 * (1.0 - solved.objective / objective_none.max(1e-300)),
        100.0 * (objective_myopic / solved.objective.max(1e-300) - 1.0)
    );
    let _ = writeln!(
        text,
        "optimiser: {} (status {}, gap {:.2e} on the discounted remaining risk, {:.1} s)",
        match solved.status {
            Status::Optimal => "proven optimal".to_string(),
            Status::GapLimit => format!(
                "stopped at the requested gap, within {:.4}% of optimal",
                100.0 * solved.gap
            ),
            Status::TimeLimit => format!(
                "stopped at the time limit, proven gap {:.4}%",
                100.0 * solved.gap
            ),
            Status::NoImprovingMove => format!(
                "stopped with no improving move left, proven gap {:.4}%",
                100.0 * solved.gap
            ),
            Status::Infeasible => "infeasible".to_string(),
        },
        solved.status.as_str(),
        solved.gap,
        solved.seconds
    );
    if !settings.quiet {
        let _ = writeln!(
            text,
            "outputs in {}: program.csv, program.svg, summary.json, season_1..season_{} (plan folders for `hostcut orders --plan`), cautions.txt",
            out.display(),
            args.seasons
        );
    }
    text.push('\n');
    text.push_str(&cautions::standing_text());
    Ok(text)
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
