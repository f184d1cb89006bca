//! `hostcut simulate`: the plan, no action, the greedy rule, densest-first and random feasible
//! plans, run through the stochastic patch-occupancy model with common random numbers.
//! Writes sim.csv, patch_occupancy.csv, sim.svg, sim.json and cautions.txt.

use crate::app::resolve::simulate::SimulateSettings;
use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::core::printer::Printer;
use crate::field::contract::PlanFolder;
use crate::planning::prepare::Prepared;
use crate::planning::simulate;
use crate::report::simulate as simulate_report;
use crate::solve::problem::{Assignment, Limits};

pub fn run(resolved: &SimulateSettings, printer: Printer) -> Result<String> {
    let settings = &resolved.settings;
    let s = &settings.scenario;
    let (staging, prepared) = super::stage_and_prepare(settings, "simulate", printer)?;
    let budget = s.plan.budget.unwrap_or(0.0);
    let problem = prepared.problem(budget, s.plan.crew_hours);
    let plan = match &resolved.plan_dir {
        Some(dir) => plan_of_folder(&prepared, dir)?,
        None => {
            let limits = Limits {
                max_memory_gb: s.solver.max_memory_gb,
                formulation: s.solver.formulation,
                ..Limits::until(settings.deadline(), s.solver.gap)
            };
            simulate::solve_plan(&problem, limits, printer)?
        }
    };
    let runs = resolved.runs;
    let sim = simulate::simulate_plan(&prepared, &problem, &plan, resolved.params, runs, printer)?;
    simulate_report::write(&staging, &prepared, &sim)?;
    simulate_report::write_record(&staging, &prepared, &resolved.record)?;
    let out = staging.commit()?;

    let summary = &sim.summary;
    let mut text = printer.text();
    text.line(format_args!(
        "hostcut simulate: {} patches, {} runs x {} years, seed {}; {} patches occupied at the start",
        prepared.model.len(),
        runs.runs,
        runs.years,
        runs.seed,
        summary.initially_occupied_patches
    ));
    for st in &summary.strategies {
        text.line(format_args!(
            "  {:<8} occupied host in year {}: {:6.2}% of all host (mean over the years {:6.2}%)",
            st.name,
            runs.years,
            st.final_occupied_host_pct_mean,
            st.mean_occupied_host_pct_over_years
        ));
    }
    let a = &summary.plan_advantage_final_pct;
    text.line(format_args!(
        "the plan leaves {:.2} percentage points less host occupied than no action in year {} (95% CI {:.2} to {:.2}, {} paired runs)",
        a.mean, runs.years, a.ci95_low, a.ci95_high, runs.runs
    ));
    if a.ci95_low <= 0.0 {
        text.line(
            "  the interval includes no difference: at these parameters the simulation cannot tell the plan from no action",
        );
    }
    text.line(format_args!(
        "strategy minus plan, occupied host in percentage points (negative: better than the plan; 95% CI over {} paired runs):",
        runs.runs
    ));
    text.line(format_args!(
        "  {:<8} {:>24} {:>24}",
        "strategy",
        format!("year {}", runs.years),
        "mean over the years"
    ));
    for v in &summary.versus_plan {
        text.line(format_args!(
            "  {:<8} {:>7.2} ({:>6.2} to {:>6.2}) {:>7.2} ({:>6.2} to {:>6.2})",
            v.strategy,
            v.final_diff_pct,
            v.final_ci95[0],
            v.final_ci95[1],
            v.mean_diff_pct,
            v.mean_ci95[0],
            v.mean_ci95[1]
        ));
    }
    if let Some(verdict) = &summary.verdict {
        text.line(verdict.as_str());
    }
    if let Some(check) = &summary.proxy_check {
        text.line(check.reading.as_str());
    }
    text.line(format_args!(
        "outputs in {}: sim.csv, patch_occupancy.csv, sim.svg, sim.json, {}cautions.txt, simulate.resolved.toml",
        out.display(),
        if summary.proxy_check.is_some() { "proxy.csv, " } else { "" }
    ));
    text.cautions(
        &cautions::standing_text(),
        prepared.prescribes_herbicide(&plan),
    );
    Ok(text.into_string())
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
        // With size classes the row's prescription names the choice; without, its method does.
        let o = prepared
            .choice_named(i, &row.method, &row.prescription)
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
