//! `hostcut plan`: layers in → patches → graph → model → optimiser → plan → outputs.

use std::path::PathBuf;

use crate::app::resolve::Settings;
use crate::app::resolve::plan::PlanSettings;
use crate::core::error::{Error, Result};
use crate::core::printer::Printer;
use crate::planning::baselines;
use crate::planning::ensemble;
use crate::planning::plan;
use crate::planning::prepare;
use crate::report::output::{self, Outputs, Staging};
use crate::report::plan as plan_report;
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
    summary.horizon_years = Some(prepared.horizon_years());
    summary.establishment_diverges = plan.establishment_divergence(model);
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
    let comparison = (plan.status != Status::Infeasible)
        .then(|| baselines::comparison_line(&baselines, plan.risk_after))
        .flatten();
    Ok(plan_report::text(
        &plan_report::Stdout {
            summary: &summary,
            plan: &plan,
            patches,
            catalogue,
            out: staging.out(),
            ensemble: ensemble.as_ref().map(|e| e.text.as_str()),
            comparison: comparison.as_deref(),
        },
        printer,
    ))
}
