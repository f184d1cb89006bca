//! `hostcut simulate`: the plan, no action, the greedy rule, densest-first and random feasible
//! plans, run through the stochastic patch-occupancy model with common random numbers.
//! Writes sim.csv, patch_occupancy.csv, sim.svg, sim.json and cautions.txt.

use std::fmt::Write as _;

use serde::Serialize;

use crate::app::cli::SimulateArgs;
use crate::app::settings;
use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::core::kernel::Kernel;
use crate::core::scenario;
use crate::field::contract::PlanFolder;
use crate::model::graph;
use crate::model::simulate::{self, Landscape, LongDistance, Params, Trace, Treatment};
use crate::planning::baselines;
use crate::planning::prepare::{self, Prepared};
use crate::report::chart::{self, Series, Style};
use crate::report::output::Staging;
use crate::solve::optimise;
use crate::solve::problem::{Assignment, Limits, Problem};

const STRATEGIES: [(&str, &str, Style); 5] = [
    ("none", "no treatment", Style::LongDash),
    ("plan", "the plan", Style::Main),
    ("greedy", "greedy benefit-per-cost", Style::Dashed),
    ("density", "densest stands first", Style::Dotted),
    ("random", "random feasible plans (mean)", Style::DashDot),
];

#[derive(Serialize)]
struct Difference {
    mean: f64,
    ci95_low: f64,
    ci95_high: f64,
}

#[derive(Serialize)]
struct StrategyJson {
    name: &'static str,
    patches_treated: Option<usize>,
    cost: Option<f64>,
    risk_after: Option<f64>,
    final_occupied_host_pct_mean: f64,
    mean_occupied_host_pct_over_years: f64,
}

#[derive(Serialize)]
struct SimJson {
    years: u32,
    runs: u32,
    seed: u64,
    params: Params,
    budget: f64,
    initially_occupied_patches: usize,
    strategies: Vec<StrategyJson>,
    /// none minus plan, percentage points of all host, final year (paired over runs).
    plan_advantage_final_pct: Difference,
    /// none minus plan, mean over years 1..=years of occupied host, percentage points.
    plan_advantage_mean_pct: Difference,
    /// The untreated landscape's mean-field equilibrium occupied host (% of host), for
    /// comparison with the simulated long run.
    equilibrium_occupied_host_pct: f64,
    lambda_m_before: f64,
}

fn check(
    args: &SimulateArgs,
    fitted: Option<&crate::core::scenario::Calibration>,
) -> Result<Params> {
    let d = Params::default();
    let pick = |flag: Option<f64>, fit: Option<f64>, default: f64| flag.or(fit).unwrap_or(default);
    let extinction = pick(args.extinction, fitted.map(|c| c.extinction), d.extinction);
    let extinction_exponent = pick(
        args.extinction_exponent,
        fitted.map(|c| c.extinction_exponent),
        d.extinction_exponent,
    );
    let colonisation = pick(
        args.colonisation,
        fitted.map(|c| c.colonisation),
        d.colonisation,
    );
    let introduction = pick(
        args.introduction,
        fitted.map(|c| c.introduction),
        d.introduction,
    );
    let positive = |v: f64, name: &str| -> Result<()> {
        if v.is_finite() && v >= 0.0 {
            Ok(())
        } else {
            Err(Error::input(format!(
                "`--{name}` must be 0 or more, got {v}"
            )))
        }
    };
    positive(extinction, "extinction")?;
    positive(extinction_exponent, "extinction-exponent")?;
    positive(colonisation, "colonisation")?;
    positive(introduction, "introduction")?;
    positive(args.regrowth, "regrowth")?;
    if !(0.0..=1.0).contains(&args.long_distance_share) {
        return Err(Error::input(
            "`--long-distance-share` must be between 0 and 1",
        ));
    }
    if !(args.long_distance_multiple >= 1.0 && args.long_distance_multiple.is_finite()) {
        return Err(Error::input(
            "`--long-distance-multiple` must be at least 1",
        ));
    }
    if args.years == 0 || args.runs == 0 || args.jobs == 0 {
        return Err(Error::input(
            "`--years`, `--runs` and `--jobs` must be at least 1",
        ));
    }
    if args.years > 1000 || args.runs > 1_000_000 {
        return Err(Error::input(
            "`--years` is at most 1000 and `--runs` at most 1,000,000",
        ));
    }
    Ok(Params {
        extinction,
        extinction_exponent,
        colonisation,
        introduction,
        regrowth: args.regrowth,
        long_distance: (args.long_distance_share > 0.0).then_some(LongDistance {
            share: args.long_distance_share,
            multiple: args.long_distance_multiple,
            after_years: args.long_distance_after_years,
        }),
    })
}

/// The plan folder's plan as an assignment on the prepared patches.
fn plan_of_folder(prepared: &Prepared, dir: &std::path::Path) -> Result<Assignment> {
    let folder = PlanFolder::read(dir)?;
    let by_label = prepared.patches.by_label();
    let mut a: Assignment = vec![None; prepared.patches.len()];
    for row in &folder.planned {
        let i = by_label
            .get(row.patch_id.as_str())
            .ok_or_else(|| {
                Error::input(format!(
                    "`{}`: plan.csv names patch `{}`, which its inputs no longer make",
                    dir.display(),
                    row.patch_id
                ))
            })?
            .index();
        let o = prepared.choices[i]
            .iter()
            .position(|c| prepared.catalogue.methods[c.method.0 as usize].id == row.method)
            .ok_or_else(|| {
                Error::input(format!(
                    "`{}`: plan.csv treats `{}` with `{}`, which is not one of its choices now",
                    dir.display(),
                    row.patch_id,
                    row.method
                ))
            })?;
        a[i] = Some(o);
    }
    Ok(a)
}

/// Patches by stems per hectare (stems where the area is unknown), densest first.
fn density_order(prepared: &Prepared) -> Vec<usize> {
    let items = &prepared.patches.items;
    let density = |i: usize| {
        let p = &items[i];
        match p.area_ha {
            Some(a) if a > 0.0 => p.stems / a,
            _ => p.stems,
        }
    };
    let mut order: Vec<usize> = (0..items.len()).collect();
    order.sort_by(|&a, &b| density(b).total_cmp(&density(a)).then(a.cmp(&b)));
    order
}

/// A random feasible plan for run `run`: eligible patches in a random order (Fisher–Yates on
/// the run's own stream), each treated with its most effective method while it fits.
fn random_plan(problem: &Problem, seed: u64, run: u64) -> Vec<f64> {
    let mut order: Vec<usize> = (0..problem.len()).collect();
    let mut g = simulate::stream(seed, run, 0, 1);
    for k in (1..order.len()).rev() {
        let j = (g.unit() * (k + 1) as f64) as usize;
        order.swap(k, j.min(k));
    }
    let a = baselines::fill_in_order(problem, &order).unwrap_or_else(|| vec![None; problem.len()]);
    problem.remaining(&a)
}

fn pct(v: f64) -> f64 {
    v * 100.0
}

fn num(v: f64) -> String {
    if v.is_finite() {
        format!("{}", (v * 1e6).round() / 1e6)
    } else {
        String::new()
    }
}

pub fn run(args: &SimulateArgs) -> Result<String> {
    let mut inputs = args.inputs.clone();
    if let Some(dir) = &args.plan_dir {
        inputs.scenario = Some(settings::plan_folder_scenario(dir)?);
    }
    let settings = settings::resolve_with(&inputs, args.plan_dir.is_none())?;
    let s = &settings.scenario;
    let fitted = match &s.model.calibration {
        Some(path) => Some(scenario::read_calibration(path)?.calibration),
        None => None,
    };
    let params = check(args, fitted.as_ref())?;
    if s.ensemble.is_some() {
        return Err(Error::input_with_hint(
            "`hostcut simulate` works on one dispersal kernel; the scenarios of an ensemble apply to `hostcut plan`",
            "give one kernel, e.g. `--kernel exp:200`, to simulate each scenario in turn",
        ));
    }
    let staging = Staging::new(&settings.out, settings.force, "simulate")?;
    let progress = |msg: &str| settings.progress(msg);
    let prepared = prepare::prepare(s, &progress)?;
    let budget = s.plan.budget.unwrap_or(0.0);
    let problem = prepared.problem(budget, s.plan.crew_hours);
    let plan = match &args.plan_dir {
        Some(dir) => plan_of_folder(&prepared, dir)?,
        None => {
            progress("solving the plan");
            let limits = Limits {
                max_memory_gb: s.solver.max_memory_gb,
                formulation: s.solver.formulation,
                ..Limits::until(settings.deadline(), s.solver.gap)
            };
            let solved = optimise::solve(&problem, limits)?;
            if solved.status == crate::solve::problem::Status::Infeasible {
                return Err(Error::input(
                    "the required patches do not fit the budget and hours: there is no plan to simulate",
                ));
            }
            solved.assignment
        }
    };
    let greedy = crate::solve::heuristics::greedy(&problem).map(|g| g.0);
    let density = baselines::fill_in_order(&problem, &density_order(&prepared));
    let none: Assignment = vec![None; problem.len()];

    let model = &prepared.model;
    let long_links = match params.long_distance {
        Some(ld) => {
            let points: Vec<(f64, f64)> =
                prepared.patches.items.iter().map(|p| (p.x, p.y)).collect();
            let far = Kernel {
                kind: prepared.kernel.kind,
                alpha_m: prepared.kernel.alpha_m * ld.multiple,
            };
            graph::build_graph_within(
                &points,
                far,
                prepared.epsilon,
                &prepared.budget,
                "the long-distance links of the simulation",
                prepared.raster_cost(),
                prepared.resolved.host.suitability.is_some(),
            )?
            .edges
            .iter()
            .map(|e| (e.a.index(), e.b.index(), e.kernel))
            .collect()
        }
        None => Vec::new(),
    };
    let landscape = Landscape {
        long_links,
        ..prepared.landscape()
    };
    let seed = args.seed;
    let random = |run: u64| random_plan(&problem, seed, run);
    let fixed =
        |a: &Option<Assignment>| Treatment::Fixed(problem.remaining(a.as_ref().unwrap_or(&none)));
    let treatments = vec![
        Treatment::Fixed(problem.remaining(&none)),
        Treatment::Fixed(problem.remaining(&plan)),
        fixed(&greedy),
        fixed(&density),
        Treatment::PerRun(&random),
    ];
    progress(&format!(
        "simulating {} strategies x {} runs x {} years",
        treatments.len(),
        args.runs,
        args.years
    ));
    let traces = simulate::simulate(
        &landscape,
        &params,
        &treatments,
        args.years,
        args.runs,
        seed,
        args.jobs,
    );

    // sim.csv
    let mut w = crate::core::csv_cells::Writer::new();
    w.row([
        "year",
        "strategy",
        "occupied_host_mean",
        "occupied_host_p05",
        "occupied_host_p50",
        "occupied_host_p95",
        "occupied_patches_mean",
    ])?;
    let mut bands = Vec::new();
    let mut lines = Vec::new();
    for ((name, label, style), t) in STRATEGIES.iter().zip(&traces) {
        let mut band = Vec::new();
        let mut line = Vec::new();
        for year in 0..=args.years as usize {
            let mut v: Vec<f64> = t.occupied_host.iter().map(|r| r[year]).collect();
            v.sort_by(f64::total_cmp);
            let mean = v.iter().sum::<f64>() / v.len() as f64;
            let count = t
                .occupied_patches
                .iter()
                .map(|r| r[year] as f64)
                .sum::<f64>()
                / t.occupied_patches.len() as f64;
            let (p05, p50, p95) = (
                simulate::quantile(&v, 0.05),
                simulate::quantile(&v, 0.5),
                simulate::quantile(&v, 0.95),
            );
            w.row([
                year.to_string(),
                name.to_string(),
                num(mean),
                num(p05),
                num(p50),
                num(p95),
                num(count),
            ])?;
            band.push((year as f64, pct(p05), pct(p95)));
            line.push((year as f64, pct(mean)));
        }
        bands.push(band);
        lines.push(Series {
            id: name.to_string(),
            label: label.to_string(),
            points: line,
            style: *style,
        });
    }
    staging.write("sim.csv", w.into_bytes()?)?;

    // patch_occupancy.csv
    let mut w = crate::core::csv_cells::Writer::new();
    let mut header = vec!["patch_id".to_string()];
    header.extend(STRATEGIES.iter().map(|s| s.0.to_string()));
    w.row(&header)?;
    for (i, p) in prepared.patches.items.iter().enumerate() {
        let mut row = vec![p.label.clone()];
        for t in &traces {
            row.push(num(t.final_occupied[i] as f64 / args.runs as f64));
        }
        w.row(&row)?;
    }
    staging.write("patch_occupancy.csv", w.into_bytes()?)?;

    // sim.svg
    let y_max = bands
        .iter()
        .flatten()
        .map(|b| b.2)
        .fold(1.0, f64::max)
        .ceil();
    let svg = chart::fan_chart(
        &format!(
            "Occupied host over {} years ({} runs; mean and 5-95% band)",
            args.years, args.runs
        ),
        "year (treatment at the start of year 1)",
        "occupied host (% of all host)",
        &|x| format!("{x:.0}"),
        (y_max * 1.1).ceil(),
        &lines,
        &[],
        &bands,
    );
    staging.write("sim.svg", &svg)?;

    // sim.json
    let diff = |f: &dyn Fn(&Trace, usize) -> f64| -> Difference {
        let d: Vec<f64> = (0..args.runs as usize)
            .map(|k| pct(f(&traces[0], k) - f(&traces[1], k)))
            .collect();
        let (mean, lo, hi) = simulate::mean_ci(&d);
        Difference {
            mean,
            ci95_low: lo,
            ci95_high: hi,
        }
    };
    let years = args.years as usize;
    let final_of = |t: &Trace, k: usize| t.occupied_host[k][years];
    let mean_of = |t: &Trace, k: usize| t.occupied_host[k][1..].iter().sum::<f64>() / years as f64;
    let assignments: [Option<&Assignment>; 5] = [
        Some(&none),
        Some(&plan),
        greedy.as_ref(),
        density.as_ref(),
        None,
    ];
    let strategies = STRATEGIES
        .iter()
        .zip(&traces)
        .zip(assignments)
        .map(|(((name, _, _), t), a)| StrategyJson {
            name,
            patches_treated: a.map(|a| a.iter().filter(|o| o.is_some()).count()),
            cost: a.map(|a| (problem.cost(a) * 100.0).round() / 100.0 + 0.0),
            risk_after: a.map(|a| problem.risk(a)),
            final_occupied_host_pct_mean: pct((0..args.runs as usize)
                .map(|k| final_of(t, k))
                .sum::<f64>()
                / args.runs as f64),
            mean_occupied_host_pct_over_years: pct((0..args.runs as usize)
                .map(|k| mean_of(t, k))
                .sum::<f64>()
                / args.runs as f64),
        })
        .collect::<Vec<_>>();
    let eq = simulate::equilibrium(&landscape, &params, &vec![1.0; model.len()]);
    let equilibrium_host: f64 = eq.iter().zip(&model.share).map(|(p, a)| p * a).sum();
    let summary = SimJson {
        years: args.years,
        runs: args.runs,
        seed,
        params,
        budget,
        initially_occupied_patches: landscape.initial.iter().filter(|o| **o).count(),
        plan_advantage_final_pct: diff(&final_of),
        plan_advantage_mean_pct: diff(&mean_of),
        strategies,
        equilibrium_occupied_host_pct: pct(equilibrium_host),
        lambda_m_before: model.capacity(&vec![1.0; model.len()]).lambda,
    };
    let json = serde_json::to_string_pretty(&summary)
        .map_err(|e| Error::Internal(format!("sim.json: {e}")))?;
    staging.write("sim.json", json + "\n")?;
    staging.write("cautions.txt", cautions::standing_text())?;
    let out = staging.commit()?;

    let mut text = String::new();
    if !settings.quiet {
        let _ = writeln!(
            text,
            "hostcut simulate: {} patches, {} runs x {} years, seed {seed}; {} patches occupied at the start",
            model.len(),
            args.runs,
            args.years,
            summary.initially_occupied_patches
        );
        for st in &summary.strategies {
            let _ = writeln!(
                text,
                "  {:<8} occupied host in year {}: {:6.2}% of all host (mean over the years {:6.2}%)",
                st.name,
                args.years,
                st.final_occupied_host_pct_mean,
                st.mean_occupied_host_pct_over_years
            );
        }
    }
    let a = &summary.plan_advantage_final_pct;
    let _ = writeln!(
        text,
        "the plan leaves {:.2} percentage points less host occupied than no action in year {} (95% CI {:.2} to {:.2}, {} paired runs)",
        a.mean, args.years, a.ci95_low, a.ci95_high, args.runs
    );
    if a.ci95_low <= 0.0 {
        let _ = writeln!(
            text,
            "  the interval includes no difference: at these parameters the simulation cannot tell the plan from no action"
        );
    }
    if !settings.quiet {
        let _ = writeln!(
            text,
            "outputs in {}: sim.csv, patch_occupancy.csv, sim.svg, sim.json, cautions.txt",
            out.display()
        );
    }
    text.push('\n');
    text.push_str(&cautions::standing_text());
    Ok(text)
}
