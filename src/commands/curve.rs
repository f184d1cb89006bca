//! `hostcut curve`: the exact plan at many budgets → curve.csv, curve.svg and a justification
//! page (justification.md / .html) a grant writer can paste.

use super::plan::RunReport;
use crate::app::resolve::curve::CurveSettings;
use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::core::printer::Printer;
use crate::field::plan_folder::PlanFolder;
use crate::planning::baselines;
use crate::planning::curve;
use crate::report::curve::{self as curve_report, Context, Money};
use crate::report::format::status_words;
use crate::solve::problem::Limits;

pub fn run(resolved: &CurveSettings, printer: Printer) -> Result<RunReport> {
    let settings = &resolved.settings;
    let s = &settings.scenario;
    let (staging, prepared) = super::stage_and_prepare(settings, "curve", printer)?;
    let money = money_of(resolved, &prepared.catalogue.currency)?;
    // Under `--plan DIR` the plan's own budget is a level, solved from the plan itself.
    let plan_budget = resolved.plan_dir.as_ref().and_then(|_| s.plan.budget);
    let anchor = match (&resolved.plan_dir, plan_budget) {
        (Some(dir), Some(budget)) => {
            let folder = PlanFolder::read(dir)?;
            let planned: Vec<(String, String, String)> = folder
                .planned
                .iter()
                .map(|p| (p.patch_id.clone(), p.method.clone(), p.prescription.clone()))
                .collect();
            curve::Anchor::from_plan(&prepared, budget, &planned)
        }
        _ => None,
    };
    let budgets = resolved.budgets.levels_with(&prepared, plan_budget);
    let depot = baselines::depot(s.plan.depot, &prepared.patches, &prepared.eligible);
    let limits = Limits {
        max_memory_gb: s.solver.max_memory_gb,
        formulation: s.solver.formulation,
        ..Limits::until(settings.deadline(), s.solver.gap)
    };
    let curve::Curve { points, analysis } = curve::plan_curve(
        &prepared,
        &budgets,
        s.plan.crew_hours,
        limits,
        depot,
        resolved.jobs,
        anchor.as_ref(),
        printer,
    )?;
    let context = Context {
        labels: resolved.page.clone(),
        plan_budget,
        gap_limit: s.solver.gap,
    };
    curve_report::write(&staging, &prepared, &points, &analysis, &money, s, &context)?;
    let out = staging.commit()?;

    let risk_before = prepared.model.risk_before();
    let mut text = printer.text();
    text.line(format_args!(
        "hostcut curve: {} budget levels from {} to {} on {} patches",
        points.len(),
        money.fmt(points.first().map(|p| p.budget).unwrap_or(0.0)),
        money.fmt(points.last().map(|p| p.budget).unwrap_or(0.0)),
        prepared.patches.len()
    ));
    text.line(format_args!(
        "  {:.1} s of `--time-limit-s {}` (the limit on the whole command, shared by the levels)",
        settings.deadline().elapsed_s(),
        s.solver.time_limit_s
    ));
    if let Some(note) = money.rate_note() {
        text.warning(format_args!("{note}"));
    }
    text.line(match prepared.horizon_years() {
        1 => "  risk: R at the host right after treatment (one season, `--horizon-years 1`)"
            .to_string(),
        t => format!(
            "  risk: R with each treatment's host averaged over {t} years of regrowth (`--horizon-years {t}`)"
        ),
    });
    for p in &points {
        text.line(format_args!(
            "  {:>12}  {:>5.1}% less risk  {:>3} patches  {}{}{}",
            money.fmt(p.budget),
            curve::analysis::reduction(p.risk_after, risk_before),
            p.n_treated,
            status_words(p.status, p.gap, s.solver.gap),
            if p.from_neighbour {
                ", smaller budget's plan"
            } else {
                ""
            },
            if plan_budget == Some(p.budget) {
                "  <- your plan"
            } else {
                ""
            }
        ));
    }
    if let Some(sentence) = curve_report::knee_sentence(&points, &analysis, &money) {
        text.line(format_args!("{sentence}"));
    }
    if let Some(last) = points.last() {
        for (fraction, at) in &analysis.thresholds {
            if let Some(k) = at {
                text.line(format_args!(
                    "{:.0}% of the reduction at the largest budget studied ({}) by {}",
                    fraction * 100.0,
                    money.fmt(last.budget),
                    money.fmt(points[*k].budget)
                ));
            }
        }
    }
    text.line(format_args!(
        "outputs in {}: curve.csv, curve.svg, justification.md, justification.html",
        out.display()
    ));
    let herbicide = points
        .iter()
        .any(|p| prepared.prescribes_herbicide(&p.assignment));
    text.cautions(&cautions::standing_text(), herbicide);
    Ok(RunReport {
        out,
        text: text.into_string(),
    })
}

/// The outputs' currency: the catalogue's, or `--currency` with `--exchange-rate`. Another code
/// without a rate is refused: relabelling prices as another currency would misstate them.
fn money_of(resolved: &CurveSettings, catalogue: &str) -> Result<Money> {
    let catalogue = catalogue.trim().to_ascii_uppercase();
    let Some(code) = resolved
        .currency
        .as_deref()
        .map(|c| c.trim().to_ascii_uppercase())
    else {
        return Ok(Money::new(&catalogue));
    };
    match resolved.exchange_rate {
        Some(rate) => Ok(Money::converted(&code, &catalogue, rate)),
        None if code == catalogue => Ok(Money::new(&catalogue)),
        None => Err(Error::input_with_hint(
            format!(
                "`--currency {code}`: the treatment catalogue's prices are in {catalogue}; they would be shown as {code} without conversion"
            ),
            format!(
                "add `--exchange-rate R` ({code} per {catalogue}) to convert every amount, or leave out `--currency`"
            ),
        )),
    }
}
