//! `hostcut curve`: the exact plan at many budgets → curve.csv, curve.svg and a justification
//! page (justification.md / .html) a grant writer can paste.

use super::plan::RunReport;
use crate::app::resolve::curve::CurveSettings;
use crate::core::cautions;
use crate::core::error::Result;
use crate::core::printer::Printer;
use crate::planning::baselines;
use crate::planning::curve;
use crate::report::curve::{self as curve_report, Money};
use crate::solve::problem::Limits;

pub fn run(resolved: &CurveSettings, printer: Printer) -> Result<RunReport> {
    let settings = &resolved.settings;
    let s = &settings.scenario;
    let (staging, prepared) = super::stage_and_prepare(settings, "curve", printer)?;
    let money = Money::new(
        resolved
            .currency
            .as_deref()
            .unwrap_or(&prepared.catalogue.currency),
    );
    let budgets = resolved.budgets.levels(&prepared);
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
        printer,
    )?;
    curve_report::write(&staging, &prepared, &points, &analysis, &money, s)?;
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
    for p in &points {
        text.line(format_args!(
            "  {:>12}  {:>5.1}% less risk  {:>3} patches  {} (gap {:.1e}){}",
            money.fmt(p.budget),
            curve::analysis::reduction(p.risk_after, risk_before),
            p.n_treated,
            p.status.as_str(),
            p.gap,
            if p.from_neighbour {
                ", smaller budget's plan"
            } else {
                ""
            }
        ));
    }
    if let Some(k) = analysis.knee {
        text.line(format_args!(
            "knee (Kneedle): about {} buys {:.1}% less risk; past it each extra 1,000 buys less",
            money.fmt(points[k].budget),
            analysis.reductions[k]
        ));
    }
    for (fraction, at) in &analysis.thresholds {
        if let Some(k) = at {
            text.line(format_args!(
                "{:.0}% of the attainable reduction by {}",
                fraction * 100.0,
                money.fmt(points[*k].budget)
            ));
        }
    }
    text.line(format_args!(
        "outputs in {}: curve.csv, curve.svg, justification.md, justification.html",
        out.display()
    ));
    text.push('\n');
    text.push_str(&cautions::standing_text());
    Ok(RunReport {
        out,
        text: text.into_string(),
    })
}
