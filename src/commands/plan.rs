//! `hostcut plan`: layers in → patches → graph → model → optimiser → plan → outputs.

use std::path::PathBuf;

use crate::app::resolve::Settings;
use crate::app::resolve::plan::PlanSettings;
use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::core::printer::Printer;
use crate::input::patches;
use crate::input::treatments::Catalogue;
use crate::planning::baselines;
use crate::planning::ensemble;
use crate::planning::plan;
use crate::planning::prepare;
use crate::report::output::{self, Outputs, Staging};
use crate::solve::problem::{Limits, Status};

/// What a finished run reports back to the caller.
#[derive(Debug)]
pub struct RunReport {
    pub out: PathBuf,
    /// The human summary printed on stdout.
    pub text: String,
}

/// Run the whole planning job for resolved settings, also writing the exact MIP in MPS when
/// asked (`--write-mps`).
pub fn run(resolved: &PlanSettings, printer: Printer) -> Result<RunReport> {
    let (settings, mps) = (&resolved.settings, resolved.write_mps.as_deref());
    if let Some(path) = mps {
        output::check_new_file(path, "--write-mps")?;
    }
    let staging = Staging::new(&settings.out, settings.force, "plan")?;
    let text = run_into(settings, &staging, mps, printer)?;
    let out = staging.commit()?;
    Ok(RunReport { out, text })
}

/// Plan into a staging folder (not yet committed); returns the text for stdout.
pub fn run_into(
    settings: &Settings,
    staging: &Staging,
    mps: Option<&std::path::Path>,
    printer: Printer,
) -> Result<String> {
    let s = &settings.scenario;
    let progress = printer.progress_fn();
    let mut prepared = prepare::prepare(s, &progress, printer.bars())?;
    let budget = s.plan.budget.unwrap_or(0.0);
    let deadline = plan::keep_for_outputs(
        settings.deadline(),
        s.solver.time_limit_s,
        prepared.patches.len(),
        1,
        printer,
    );
    let limits = Limits {
        max_memory_gb: s.solver.max_memory_gb,
        formulation: s.solver.formulation,
        ..Limits::until(deadline, s.solver.gap)
    };
    // Across dispersal scenarios the plan's model becomes their weighted mean.
    let ensemble = match &s.ensemble {
        Some(e) => Some(ensemble::solve(
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
            crate::solve::mip::mps::write_mps(&problem, temporary, s.solver.formulation)
        })?;
    }
    let solved = plan::search(
        &problem,
        ensemble.as_ref().map(|e| &e.chosen),
        limits,
        &s.solver,
        patches,
        printer,
    )?;
    let plan = plan::assemble(
        patches, model, catalogue, &problem, &solved, &s.model, &deadline,
    );

    if !plan.metrics_converged {
        printer.note(
            "warning: lambda_M and the establishment probabilities stopped before converging (the time limit or their iteration cap); their values in summary.json and patches.csv are approximate",
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
    let depot = baselines::depot(s.plan.depot, patches, eligible);
    let baselines = baselines::all(
        &problem,
        patches,
        &pressure.corridors,
        depot,
        Some(solved.greedy.clone()),
    );
    summary.depot = [depot.0, depot.1];
    summary.suitability_layer = s.host.suitability.as_ref().map(|p| p.display().to_string());
    summary.baselines = baselines::baseline_summaries(
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
    let mut text = human_summary(&summary, &plan, patches, catalogue, staging.out(), printer);
    if let Some(e) = &ensemble {
        text = text.replacen("\noutputs in", &format!("\n{}outputs in", e.text), 1);
        text = text.replacen(
            "cautions.txt, scenario",
            "cautions.txt, regret.csv, scenario",
            1,
        );
    }
    if plan.status != Status::Infeasible
        && let Some(line) = baselines::comparison_line(&baselines, plan.risk_after)
    {
        text = text.replacen("\noutputs in", &format!("\n{line}\noutputs in"), 1);
    }
    Ok(text)
}

fn human_summary(
    summary: &output::Summary,
    plan: &plan::Plan,
    patches: &patches::Patches,
    catalogue: &Catalogue,
    out: &std::path::Path,
    printer: Printer,
) -> String {
    let mut t = printer.text();
    let c = &summary.currency;
    let money = crate::report::format::money;
    t.line(format_args!(
        "hostcut plan: {} patches, {} links, {} eligible for treatment",
        summary.n_patches, summary.n_edges, summary.n_eligible
    ));
    if let Some(layer) = &summary.suitability_layer {
        t.line(format_args!(
            "  host weighted by the establishment suitability layer {layer}"
        ));
    }
    if patches.dropped_slivers > 0 {
        t.line(format_args!(
            "  {} sliver patches below the minimum size were dropped",
            patches.dropped_slivers
        ));
    }
    match plan.status {
        Status::Infeasible => {
            t.line(format_args!(
                "no plan fits: the required patches cost more than the budget or crew hours allow (status infeasible)"
            ));
        }
        _ => {
            if plan.rows.is_empty() {
                t.line(format_args!(
                    "the budget of {} buys no treatment: the cheapest eligible treatment costs more (empty plan)",
                    money(c, summary.budget)
                ));
            }
            t.line(format_args!(
                "treat {} patches ({:.0} stems) for {} of {}, {:.1} crew hours",
                summary.n_treated,
                summary.stems_treated,
                money(c, summary.spent),
                money(c, summary.budget),
                summary.crew_hours
            ));
            t.line(format_args!(
                "connected-host risk index R {} -> {}: {:.1}% less (R = 1 for all host in one patch at pressure 1)",
                small(summary.risk_before),
                small(summary.risk_after),
                summary.risk_reduction_pct
            ));
            if let (Some(g), Some(gr)) = (summary.greedy_reduction_pct, summary.greedy_risk_after) {
                let more = if summary.risk_after > 0.0 {
                    100.0 * (gr / summary.risk_after - 1.0)
                } else {
                    0.0
                };
                if more > 0.05 {
                    t.line(format_args!(
                        "  the greedy benefit-per-cost plan would cut {g:.1}%, leaving {more:.1}% more risk than this plan"
                    ));
                } else if more < -0.05 {
                    // Only a plan that minimises something else (a robust ensemble plan) can be
                    // beaten on R by greedy.
                    t.line(format_args!(
                        "  the greedy benefit-per-cost plan would cut {g:.1}%, {:.2}% less risk than this plan on this measure (this plan is chosen for robustness across the dispersal scenarios instead)",
                        -more
                    ));
                } else {
                    t.line(format_args!(
                        "  the greedy benefit-per-cost plan would cut {g:.1}%: as good as this plan to within {more:.2}% here"
                    ));
                }
            }
            t.line(format_args!(
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
            ));
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
            t.line(format_args!(
                "optimiser{objective}: {status} (status {}, gap {:.2e}, {:.1} s; {}, bound from {})",
                plan.status.as_str(),
                plan.gap,
                plan.solve_seconds,
                plan.solver_path,
                plan.bound_from
            ));
            for row in plan.rows.iter().take(5) {
                let p = &patches.items[row.patch.index()];
                t.line(format_args!(
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
                ));
            }
            if plan.rows.len() > 5 {
                t.line(format_args!(
                    "  ... {} more in plan.csv",
                    plan.rows.len() - 5
                ));
            }
        }
    }
    t.line(format_args!(
        "outputs in {}: plan.csv, patches.csv, plan.geojson, summary.json, cautions.txt, scenario.resolved.toml",
        out.display()
    ));
    t.push('\n');
    t.push_str(&cautions::standing_text());
    t.push('\n');
    t.push_str(cautions::site_check_text(patches.water_checked));
    t.push('\n');
    t.into_string()
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
