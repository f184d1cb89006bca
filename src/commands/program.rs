//! `hostcut program`: plan several seasons together. Writes program.csv, one plan folder per
//! season (season_1, season_2, ...), program.svg, summary.json, cautions.txt and the provenance
//! files ([`crate::report::program`]).

use crate::app::resolve::program::ProgramSettings;
use crate::core::cautions;
use crate::core::error::Result;
use crate::core::printer::Printer;
use crate::planning::program;
use crate::report::program as program_report;
use crate::solve::problem::Status;

pub fn run(resolved: &ProgramSettings, printer: Printer) -> Result<String> {
    let settings = &resolved.settings;
    let s = &settings.scenario;
    let horizon = &resolved.horizon;
    let (staging, prepared) = super::stage_and_prepare(settings, "program", printer)?;
    let run = program::plan_program(
        &prepared,
        horizon,
        &resolved.budgets,
        resolved.hours.as_deref(),
        settings.deadline(),
        &s.solver,
        printer,
    )?;
    let written = program_report::write(&staging, &prepared, &run, horizon, s)?;
    let out = staging.commit()?;

    let solved = &run.solved;
    let c = &prepared.catalogue.currency;
    let mut text = printer.text();
    text.line(format_args!(
        "hostcut program: {} patches, {} seasons, {} courses of treatment",
        prepared.patches.len(),
        horizon.seasons,
        written.n_courses
    ));
    for t in 0..horizon.seasons {
        let (news, follow) = written.visits[t];
        text.line(format_args!(
            "  season {}: {news} new, {follow} follow-up; {} of {}; R {:.6} (no action {:.6}, season-by-season {:.6})",
            t + 1,
            crate::report::format::money(c, written.spent[t]),
            crate::report::format::money(c, resolved.budgets[t]),
            written.risks[t],
            written.risks_none[t],
            written.risks_myopic[t]
        ));
    }
    text.line(
        "  R here is each season's, at the host as treated and regrown season by season (the programme models regrowth and follow-ups itself; `--horizon-years` of `hostcut plan` does not apply)",
    );
    text.line(format_args!(
        "whole horizon: sum of discounted R {:.6}, {:.1}% below no action; the season-by-season plan leaves {:.1}% more",
        solved.objective,
        100.0 * (1.0 - solved.objective / written.objective_none.max(1e-300)),
        100.0 * (written.objective_myopic / solved.objective.max(1e-300) - 1.0)
    ));
    if written.same_as_myopic {
        // Planning ahead changed nothing: say so, and what the gap makes of it.
        text.line(format_args!(
            "the programme is the season-by-season plan: planning the seasons together found nothing better, so the season-by-season plan is within {} of the best programme",
            crate::report::format::share_percent(solved.gap)
        ));
    }
    text.line(format_args!(
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
    ));
    text.line(format_args!(
        "outputs in {}: program.csv, program.svg, summary.json, season_1..season_{} (plan folders for `hostcut orders --plan`), cautions.txt",
        out.display(),
        horizon.seasons
    ));
    // A course's follow-ups repeat its prescription: the starting choice says it all.
    let chosen: Vec<Option<usize>> = solved
        .assignment
        .iter()
        .enumerate()
        .map(|(i, k)| k.map(|k| run.problem.courses[i][k].choice))
        .collect();
    text.cautions(
        &cautions::standing_text(),
        prepared.prescribes_herbicide(&chosen),
    );
    Ok(text.into_string())
}
