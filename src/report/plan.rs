//! `hostcut plan`'s stdout: the plan in a few lines (what it treats, the risk before and after,
//! the greedy plan, the optimiser's status and gap, the first five rows with their cautions),
//! the ensemble's lines, the rules-of-thumb comparison, the output files, and the standing
//! cautions with the site check.
//!
//! # Units
//! Money in the catalogue's currency through `report::format`; R and lambda_M in
//! host-share-squared units.

use std::path::Path;

use crate::core::cautions;
use crate::core::printer::Printer;
use crate::input::patches;
use crate::input::treatments::Catalogue;
use crate::planning::plan;
use crate::report::output;
use crate::solve::problem::Status;

/// What the stdout of one plan is drawn from.
pub struct Stdout<'a> {
    pub summary: &'a output::Summary,
    pub plan: &'a plan::Plan,
    pub patches: &'a patches::Patches,
    pub catalogue: &'a Catalogue,
    /// The plan folder.
    pub out: &'a Path,
    /// An ensemble plan's lines (scenarios, the most robust candidate), each ending in a newline.
    pub ensemble: Option<&'a str>,
    /// The comparison with today's rules of thumb (a feasible plan's).
    pub comparison: Option<&'a str>,
}

/// The whole stdout of `hostcut plan`: the plan, then the ensemble's lines and the
/// comparison with the rules of thumb (when there are), the files, and the cautions.
pub fn text(s: &Stdout, printer: Printer) -> String {
    let Stdout {
        summary,
        plan,
        patches,
        catalogue,
        out,
        ..
    } = *s;
    let mut t = printer.text();
    let c = &summary.currency;
    let money = crate::report::format::money;
    t.line(format_args!(
        "hostcut plan: {} patches, {} links, {} eligible for treatment",
        summary.n_patches, summary.n_edges, summary.n_eligible
    ));
    t.line(format_args!(
        "  work CRS {} (x, y in plan.csv and patches.csv; lon, lat in WGS 84)",
        patches.crs.name
    ));
    if let Some(layer) = &summary.suitability_layer {
        t.line(format_args!(
            "  host weighted by the establishment suitability layer {layer}"
        ));
    }
    if let Some(mix) = &summary.stem_mix_assumption {
        t.line(format_args!("  assumption: {mix}"));
    }
    if patches.dropped_slivers > 0 {
        t.line(format_args!(
            "  {} sliver patches below the minimum size were dropped",
            patches.dropped_slivers
        ));
    }
    match plan.status {
        Status::Infeasible => {
            t.warning(format_args!(
                "no plan fits: the required patches cost more than the budget or crew hours allow (status infeasible)"
            ));
        }
        _ => {
            if plan.rows.is_empty() {
                t.warning(format_args!(
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
            // Over several dispersal scenarios the headline R is their weighted mean, whatever
            // the objective was (the ensemble lines name the objective's value).
            t.line(format_args!(
                "connected-host risk index R{}{} {} -> {}: {:.1}% less (R = 1 for all host in one patch at pressure 1)",
                if summary.ensemble.is_some() {
                    " (weighted mean over the dispersal scenarios)"
                } else {
                    ""
                },
                match summary.horizon_years {
                    Some(t) if t > 1 => format!(" (host averaged over {t} years of regrowth)"),
                    _ => " (host right after treatment, one season)".to_string(),
                },
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
                "metapopulation capacity{} {} -> {}{}",
                match summary.horizon_years {
                    Some(t) if t > 1 => format!(" (at the same {t}-year mean host)"),
                    _ => String::new(),
                },
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
            if let Some(d) = &summary.measures_diverge {
                t.line(format_args!("  {}", d.sentence));
            }
            if let Some(d) = &summary.establishment_diverges {
                t.line(format_args!("  {}", d.sentence));
            }
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
                Some("regret") => " on the largest regret (share of each scenario's least R)",
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
                let rank = plan
                    .rows
                    .iter()
                    .position(|r| r.patch == row.patch)
                    .unwrap_or(0)
                    + 1;
                if catalogue.has_classes() {
                    // The prescription, not the primary method: which class gets what.
                    let (by_class, _) = catalogue.stems_by_class(p);
                    t.line(format_args!(
                        "  {rank:>3}. {:<10} {:>8.0} stems {:>12}  [{}]",
                        p.label,
                        p.stems,
                        money(c, row.choice.cost),
                        row.cautions.join(" ")
                    ));
                    t.line(format_args!(
                        "       {}",
                        crate::input::treatments::prescription_text(
                            catalogue,
                            &row.choice,
                            &by_class
                        )
                    ));
                    continue;
                }
                t.line(format_args!(
                    "  {rank:>3}. {:<10} {:<16} {:>8.0} stems {:>12}  [{}]",
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
    if let Some(lines) = s.ensemble {
        t.lines(lines);
    }
    if let Some(line) = s.comparison {
        t.line(line);
    }
    t.line(format_args!(
        "outputs in {}: plan.csv, patches.csv, plan.geojson, summary.json, cautions.txt, {}scenario.resolved.toml",
        out.display(),
        if s.ensemble.is_some() { "regret.csv, " } else { "" }
    ));
    let herbicide = plan
        .rows
        .iter()
        .any(|row| row.choice.uses_herbicide(catalogue));
    t.cautions(
        &format!(
            "{}\n{}\n",
            cautions::standing_text(),
            cautions::site_check_text(patches.water_checked)
        ),
        herbicide,
    );
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
