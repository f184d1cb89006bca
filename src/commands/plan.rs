//! `hostcut plan`: layers in → patches → graph → model → optimiser → plan → outputs.

use std::fmt::Write as _;
use std::path::PathBuf;

use crate::app::settings::Settings;
use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::input::patches;
use crate::input::treatments::Catalogue;
use crate::planning::baselines;
use crate::planning::plan;
use crate::planning::prepare;
use crate::report::output::{self, Outputs, Staging};
use crate::solve::optimise;
use crate::solve::problem::{Limits, Problem, Status};

/// What a finished run reports back to the caller.
#[derive(Debug)]
pub struct RunReport {
    pub out: PathBuf,
    /// The human summary printed on stdout.
    pub text: String,
}

/// Run the whole planning job for resolved settings.
pub fn run(settings: &Settings) -> Result<RunReport> {
    run_with(settings, None)
}

/// As [`run`], also writing the exact MIP in MPS to `mps` when given.
pub fn run_with(settings: &Settings, mps: Option<&std::path::Path>) -> Result<RunReport> {
    if let Some(path) = mps {
        output::check_new_file(path, "--write-mps")?;
    }
    let staging = Staging::new(&settings.out, settings.force, "plan")?;
    let text = run_into(settings, &staging, mps)?;
    let out = staging.commit()?;
    Ok(RunReport { out, text })
}

/// Plan into a staging folder (not yet committed); returns the text for stdout.
pub fn run_into(
    settings: &Settings,
    staging: &Staging,
    mps: Option<&std::path::Path>,
) -> Result<String> {
    let s = &settings.scenario;
    let progress = |msg: &str| settings.progress(msg);
    let mut prepared = prepare::prepare(s, &progress)?;
    let budget = s.plan.budget.unwrap_or(0.0);
    let deadline = keep_for_outputs(settings, prepared.patches.len(), 1);
    let limits = Limits {
        max_memory_gb: s.solver.max_memory_gb,
        ..Limits::until(deadline, s.solver.gap)
    };
    // Across dispersal scenarios the plan's model becomes their weighted mean.
    let ensemble = match &s.ensemble {
        Some(e) => Some(super::ensemble::solve(
            &mut prepared,
            e,
            budget,
            s.plan.crew_hours,
            limits,
            &progress,
        )?),
        None => None,
    };
    let prepare::Prepared {
        catalogue,
        catalogue_text,
        patches,
        graph,
        pressure,
        model,
        eligible,
        ..
    } = &prepared;
    let problem = prepared.problem(budget, s.plan.crew_hours);
    if let Some(path) = mps {
        if ensemble.is_some() {
            return Err(Error::input(
                "`--write-mps` writes a single-kernel plan's MIP; drop the ensemble to use it",
            ));
        }
        let path = std::path::absolute(path).map_err(|e| Error::io("resolve", path, e))?;
        output::write_new_file(&path, "--write-mps", |temporary| {
            optimise::write_mps(
                &problem,
                temporary,
                crate::solve::problem::Formulation::Transport,
            )
        })?;
    }
    let solved = match &ensemble {
        Some(e) => e.chosen.clone(),
        None => {
            progress("optimising");
            let _spinner = crate::core::progress::Stage::spinner(&format!(
                "optimising {} patches (time limit {} s for the whole command, {:.1} s left; gap {})",
                problem.len(),
                s.solver.time_limit_s,
                deadline.remaining_s(),
                s.solver.gap
            ));
            optimise::solve(&problem, limits)?
        }
    };
    if solved.status == Status::Infeasible {
        return Err(infeasible_requirements(&problem, patches, budget));
    }
    match solved.status {
        Status::TimeLimit => eprintln!(
            "warning: the optimiser stopped at the time limit (`--time-limit-s {}` for the whole command, {:.1} s used{}); the plan is the best found; proven gap on the remaining risk {:.3}%",
            s.solver.time_limit_s,
            deadline.elapsed_s(),
            if solved.path == optimise::NOT_STARTED {
                "; what was left was too little to start the exact search on a model this size"
            } else {
                ""
            },
            100.0 * solved.gap
        ),
        Status::NoImprovingMove => eprintln!(
            "warning: the local search found no improving move left after {:.1} s (of the {} s limit); the plan is the best found; proven gap on the remaining risk {:.3}%",
            solved.seconds,
            s.solver.time_limit_s,
            100.0 * solved.gap
        ),
        _ => {}
    }
    let plan = plan::assemble(
        patches, model, catalogue, &problem, &solved, &s.model, &deadline,
    );

    if !plan.metrics_converged {
        eprintln!(
            "warning: lambda_M and the establishment probabilities stopped before converging (the time limit or their iteration cap); their values in summary.json and patches.csv are approximate"
        );
    }
    let outputs = Outputs {
        suitability: &prepared.suitability,
        patches,
        pressure,
        catalogue,
        plan: &plan,
        eligible,
    };
    output::write_tables(staging, &outputs)?;
    let mut summary = output::summary(
        &outputs,
        budget,
        s.plan.crew_hours,
        graph.edges.len(),
        &s.model,
    );
    let depot = s
        .plan
        .depot
        .map(|[x, y]| (x, y))
        .unwrap_or_else(|| baselines::default_depot(patches, eligible));
    let baselines = baselines::all(
        &problem,
        patches,
        &pressure.corridors,
        depot,
        Some(solved.greedy.clone()),
    );
    summary.depot = [depot.0, depot.1];
    summary.suitability_layer = s.host.suitability.as_ref().map(|p| p.display().to_string());
    summary.baselines = baseline_summaries(
        &problem,
        patches,
        &baselines,
        plan.risk_before,
        plan.risk_after,
    );
    if let Some(e) = &ensemble {
        staging.write("regret.csv", &e.regret_csv)?;
        summary.ensemble = Some(e.json.clone());
    }
    summary.time_limit_s = s.solver.time_limit_s;
    summary.elapsed_s = deadline.elapsed_s();
    let json = serde_json::to_string_pretty(&summary)
        .map_err(|e| Error::Internal(format!("summary: {e}")))?;
    staging.write("summary.json", json + "\n")?;
    // The plan folder is self-contained: it keeps the catalogue it used.
    output::write_provenance(
        staging,
        &prepared.resolved,
        catalogue_text,
        "Every input and parameter this plan used; repeat it with `hostcut plan --scenario scenario.resolved.toml --out NEW`.",
    )?;
    let mut text = human_summary(&summary, &plan, patches, catalogue, staging.out());
    if let Some(e) = &ensemble {
        text = text.replacen("\noutputs in", &format!("\n{}outputs in", e.text), 1);
        text = text.replacen(
            "cautions.txt, scenario",
            "cautions.txt, regret.csv, scenario",
            1,
        );
    }
    if plan.status != Status::Infeasible
        && let Some(line) = comparison_line(&baselines, plan.risk_after)
    {
        text = text.replacen("\noutputs in", &format!("\n{line}\noutputs in"), 1);
    }
    Ok(text)
}

/// Seconds the metrics and the outputs take per patch after the search, measured on a 88,583-
/// patch raster plan (8.2 s writing plan.csv, patches.csv and plan.geojson with outlines,
/// 0.1 s of metrics; docs/benchmarks.md), rounded up.
pub const OUTPUT_S_PER_PATCH: f64 = 1e-4;

/// The command's deadline keeping time after the searches for `folders` plan folders of
/// `patches` patches; says so on stderr when reading the layers and writing the outputs leave
/// no time to search.
pub fn keep_for_outputs(
    settings: &Settings,
    patches: usize,
    folders: usize,
) -> crate::core::deadline::Deadline {
    let outputs_s = OUTPUT_S_PER_PATCH * (patches * folders) as f64;
    let deadline = settings.deadline().keeping(outputs_s);
    if deadline.passed() {
        eprintln!(
            "warning: reading the layers took {:.1} s and writing the outputs of {patches} patches needs about {outputs_s:.1} s more: `--time-limit-s {}` leaves no time to search, so the plan is the best start (greedy or relaxation rounding)",
            deadline.elapsed_s(),
            settings.scenario.solver.time_limit_s
        );
    }
    deadline
}

/// Why the required patches cannot all be treated: their cheapest methods against the limits.
fn infeasible_requirements(problem: &Problem, patches: &patches::Patches, budget: f64) -> Error {
    let required: Vec<usize> = (0..problem.len())
        .filter(|&i| problem.required[i])
        .collect();
    let cheapest = |i: usize, f: &dyn Fn(&crate::input::treatments::Choice) -> f64| {
        problem.choices[i]
            .iter()
            .map(f)
            .fold(f64::INFINITY, f64::min)
    };
    let cost: f64 = required.iter().map(|&i| cheapest(i, &|c| c.cost)).sum();
    let hours: f64 = required.iter().map(|&i| cheapest(i, &|c| c.hours)).sum();
    let ids: Vec<&str> = required
        .iter()
        .map(|&i| patches.items[i].label.as_str())
        .collect();
    let what = match problem.crew_hours {
        Some(h) if hours > h => {
            format!("need at least {hours:.1} crew hours, more than the {h} available")
        }
        _ if cost > budget => format!(
            "cost at least {cost:.2} with their cheapest methods, more than the budget of {budget:.2}"
        ),
        _ => "cannot all be treated within the budget and crew hours together".to_string(),
    };
    Error::input_with_hint(
        format!(
            "no plan fits: the required patches ({}) {what}",
            ids.join(", ")
        ),
        "raise `--budget` / `--crew-hours`, or require fewer patches",
    )
}

/// summary.json's `baselines`.
pub fn baseline_summaries(
    problem: &Problem,
    patches: &patches::Patches,
    baselines: &[baselines::Baseline],
    risk_before: f64,
    plan_risk: f64,
) -> serde_json::Map<String, serde_json::Value> {
    let mut map = serde_json::Map::new();
    for b in baselines {
        let value = match &b.assignment {
            None => serde_json::json!({ "feasible": false }),
            Some(a) => {
                let n_treated = a.iter().filter(|x| x.is_some()).count();
                let stems: f64 = a
                    .iter()
                    .enumerate()
                    .filter(|(_, x)| x.is_some())
                    .map(|(i, _)| patches.items[i].stems)
                    .sum();
                serde_json::json!({
                    "feasible": true,
                    "risk_after": b.risk_after,
                    "reduction_pct": if risk_before > 0.0 { 100.0 * (1.0 - b.risk_after / risk_before) } else { 0.0 },
                    "spent": problem.cost(a),
                    "crew_hours": problem.hours(a),
                    "n_treated": n_treated,
                    "stems_treated": stems,
                    "risk_ratio_to_plan": if plan_risk > 0.0 { b.risk_after / plan_risk } else { f64::NAN },
                })
            }
        };
        map.insert(b.name.to_string(), value);
    }
    map
}

/// "this plan leaves N× less risk than treating the biggest stands first", against the best
/// of the rule-of-thumb baselines a person would otherwise follow, or a plain statement that a
/// baseline is as good.
pub fn comparison_line(baselines: &[baselines::Baseline], plan_risk: f64) -> Option<String> {
    let biggest = baselines.iter().find(|b| b.name == "biggest_first")?;
    let mut lines = Vec::new();
    for b in baselines.iter().filter(|b| b.assignment.is_some()) {
        let ratio = if plan_risk > 0.0 {
            b.risk_after / plan_risk
        } else {
            f64::INFINITY
        };
        if ratio <= 1.0005 {
            lines.push(format!(
                "  {} does as well as this plan here (same remaining risk within 0.05%)",
                b.phrase
            ));
        } else {
            // Small differences read better as a percentage than as "1.00×".
            let amount = if ratio < 1.1 {
                format!("{:.1}% less risk", 100.0 * (1.0 - 1.0 / ratio))
            } else {
                format!("{ratio:.2}× less risk")
            };
            if b.name == biggest.name {
                lines.insert(0, format!("this plan leaves {amount} than {}", b.phrase));
            } else {
                lines.push(format!("  and {amount} than {}", b.phrase));
            }
        }
    }
    if biggest.assignment.is_none() {
        lines.insert(
            0,
            "the biggest-first rule cannot fit the required patches".to_string(),
        );
    }
    Some(lines.join("\n"))
}

fn human_summary(
    summary: &output::Summary,
    plan: &plan::Plan,
    patches: &patches::Patches,
    catalogue: &Catalogue,
    out: &std::path::Path,
) -> String {
    let mut t = String::new();
    let c = &summary.currency;
    let money = crate::report::format::money;
    let _ = writeln!(
        t,
        "hostcut plan: {} patches, {} links, {} eligible for treatment",
        summary.n_patches, summary.n_edges, summary.n_eligible
    );
    if let Some(layer) = &summary.suitability_layer {
        let _ = writeln!(
            t,
            "  host weighted by the establishment suitability layer {layer}"
        );
    }
    if patches.dropped_slivers > 0 {
        let _ = writeln!(
            t,
            "  {} sliver patches below the minimum size were dropped",
            patches.dropped_slivers
        );
    }
    match plan.status {
        Status::Infeasible => {
            let _ = writeln!(
                t,
                "no plan fits: the required patches cost more than the budget or crew hours allow (status infeasible)"
            );
        }
        _ => {
            if plan.rows.is_empty() {
                let _ = writeln!(
                    t,
                    "the budget of {} buys no treatment: the cheapest eligible treatment costs more (empty plan)",
                    money(c, summary.budget)
                );
            }
            let _ = writeln!(
                t,
                "treat {} patches ({:.0} stems) for {} of {}, {:.1} crew hours",
                summary.n_treated,
                summary.stems_treated,
                money(c, summary.spent),
                money(c, summary.budget),
                summary.crew_hours
            );
            let _ = writeln!(
                t,
                "connected-host risk index R {} -> {}: {:.1}% less (R = 1 for all host in one patch at pressure 1)",
                small(summary.risk_before),
                small(summary.risk_after),
                summary.risk_reduction_pct
            );
            if let (Some(g), Some(gr)) = (summary.greedy_reduction_pct, summary.greedy_risk_after) {
                let more = if summary.risk_after > 0.0 {
                    100.0 * (gr / summary.risk_after - 1.0)
                } else {
                    0.0
                };
                if more > 0.05 {
                    let _ = writeln!(
                        t,
                        "  the greedy benefit-per-cost plan would cut {g:.1}%, leaving {more:.1}% more risk than this plan"
                    );
                } else if more < -0.05 {
                    // Only a plan that minimises something else (a robust ensemble plan) can be
                    // beaten on R by greedy.
                    let _ = writeln!(
                        t,
                        "  the greedy benefit-per-cost plan would cut {g:.1}%, {:.2}% less risk than this plan on this measure (this plan is chosen for robustness across the dispersal scenarios instead)",
                        -more
                    );
                } else {
                    let _ = writeln!(
                        t,
                        "  the greedy benefit-per-cost plan would cut {g:.1}%: as good as this plan to within {more:.2}% here"
                    );
                }
            }
            let _ = writeln!(
                t,
                "metapopulation capacity {} -> {}{}",
                small(summary.lambda_before),
                small(summary.lambda_after),
                if summary.lambda_before > 0.0 {
                    format!(
                        ": {:.1}% less",
                        100.0 * (1.0 - summary.lambda_after / summary.lambda_before)
                    )
                } else {
                    String::new()
                }
            );
            let status = match plan.status {
                Status::Optimal => "proven optimal".to_string(),
                Status::GapLimit => format!(
                    "stopped at the requested gap: within {:.4}% of optimal",
                    100.0 * plan.gap
                ),
                Status::TimeLimit => format!(
                    "stopped at the time limit: best plan found, proven gap on the remaining risk {:.4}%",
                    100.0 * plan.gap
                ),
                Status::NoImprovingMove => format!(
                    "stopped with no improving move left (before the time limit): best plan found, proven gap on the remaining risk {:.4}%",
                    100.0 * plan.gap
                ),
                Status::Infeasible => unreachable!(),
            };
            let objective = match summary.ensemble.as_ref().and_then(|e| e["robust"].as_str()) {
                Some("worst") => " on the worst-case R",
                Some("regret") => " on the largest regret",
                _ => "",
            };
            let _ = writeln!(
                t,
                "optimiser{objective}: {status} (status {}, gap {:.2e}, {:.1} s; {}, bound from {})",
                plan.status.as_str(),
                plan.gap,
                plan.solve_seconds,
                plan.solver_path,
                plan.bound_from
            );
            for row in plan.rows.iter().take(5) {
                let p = &patches.items[row.patch.index()];
                let _ = writeln!(
                    t,
                    "  {:>3}. {:<10} {:<16} {:>8.0} stems {:>12}  [{}]",
                    plan.rows
                        .iter()
                        .position(|r| r.patch == row.patch)
                        .unwrap_or(0)
                        + 1,
                    p.label,
                    catalogue.method(row.choice.method).id,
                    p.stems,
                    money(c, row.choice.cost),
                    row.cautions.join(" ")
                );
            }
            if plan.rows.len() > 5 {
                let _ = writeln!(t, "  ... {} more in plan.csv", plan.rows.len() - 5);
            }
        }
    }
    let _ = writeln!(
        t,
        "outputs in {}: plan.csv, patches.csv, plan.geojson, summary.json, cautions.txt, scenario.resolved.toml",
        out.display()
    );
    t.push('\n');
    t.push_str(&cautions::standing_text());
    t.push('\n');
    t.push_str(cautions::site_check_text(patches.water_checked));
    t.push('\n');
    t
}

/// A share-squared quantity for the terminal: six decimals, or three significant figures in
/// scientific notation when that would print only zeros (large landscapes).
fn small(v: f64) -> String {
    if v != 0.0 && v.abs() < 1e-3 {
        format!("{v:.3e}")
    } else {
        format!("{v:.6}")
    }
}
