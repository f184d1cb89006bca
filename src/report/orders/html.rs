//! report.html: a self-contained printable report — overview, budget curve, schedule at a glance,
//! cautions, and one page per crew-day.

use std::fmt::Write as _;

use crate::core::cautions;
use crate::core::error::Result;
use crate::field::contract;
use crate::field::plan_folder::Summary;
use crate::report::chart::escape;
use crate::report::format::{money, thousands};

use super::crewday::day_page;
use super::explore::explorer;
use super::svg::{context_legend, legend, overview_map};
use super::{Orders, day_label};

const CSS: &str = r#"
@page { size: Letter; margin: 12mm 12mm 14mm 12mm;
  @bottom-center { content: "page " counter(page) " of " counter(pages); font-size: 8pt; color: #333; } }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", Arial, Helvetica, sans-serif; font-size: 10pt; color: #111; margin: 0; }
.page { padding: 0; }
.page + .page { break-before: page; page-break-before: always; }
@media screen { .page { max-width: 8in; margin: 0 auto 24px auto; padding: 16px; border-bottom: 2px solid #ccc; } }
h1 { font-size: 16pt; margin: 0 0 6px 0; }
h2 { font-size: 13pt; margin: 0 0 6px 0; }
h3 { font-size: 10.5pt; margin: 8px 0 4px 0; }
p { margin: 3px 0; }
table { border-collapse: collapse; width: 100%; font-size: 8.5pt; }
th, td { border: 1px solid #999; padding: 2px 4px; text-align: left; vertical-align: top; }
th { background: #eee; }
td.n { text-align: right; white-space: nowrap; }
.warn { border: 2px solid #000; padding: 4px 6px; margin: 6px 0; font-weight: bold; }
.legend span.sw { display: inline-block; width: 12px; height: 12px; border: 1px solid #333; vertical-align: middle; margin: 0 4px 0 10px; }
.small { font-size: 8pt; }
.cautions p { margin: 2px 0; }
svg { display: block; }
.curve svg { max-width: 7.4in; height: auto; }
.flag { font-weight: bold; font-size: 10.5pt; margin: 1px 0 3px 0; padding: 1px 4px; border: 2px solid #000; white-space: normal; }
.flag.noherb { background: #000; color: #fff; }
.siterules { border: 3px solid #000; padding: 4px 8px; margin: 6px 0; font-size: 10pt; }
.siterules ul { margin: 2px 0 0 16px; padding: 0; }
.sign { margin-top: 8px; }
table.stops td { padding: 1px 3px; }
.day table.stops { font-size: 8pt; table-layout: fixed; }
.day table.stops td { overflow-wrap: anywhere; }
.day table.stops .flag { font-size: 8pt; padding: 0 2px; margin: 0 0 2px 0; }
table.stops td.nw { white-space: nowrap; }
.day .cautions { columns: 2; column-gap: 14px; font-size: 7pt; }
.day .cautions p { margin: 1px 0; }
.day p.group { font-size: 8pt; margin: 2px 0; }
.day .codes { white-space: nowrap; font-size: 7.5pt; }
.day h2 { font-size: 12pt; margin: 0 0 3px 0; }
.day h3 { margin: 5px 0 2px 0; }
.day ul { margin: 2px 0; padding-left: 16px; }
.details { border: 1px solid #999; padding: 3px 6px; margin: 3px 0; min-height: 1.4em; }
#overview svg { touch-action: none; }
@media print { .noprint { display: none !important; } }
"#;

fn status_line(summary: &Summary) -> String {
    match (summary.status.as_str(), summary.gap) {
        ("optimal", _) => "proven optimal for this budget".into(),
        ("gap_limit", Some(g)) => format!(
            "the optimiser stopped at its requested gap: proven within {:.3}% of the least achievable risk",
            g * 100.0
        ),
        ("time_limit", Some(g)) => format!(
            "the optimiser hit its time limit: proven within {:.2}% of the least achievable risk",
            g * 100.0
        ),
        ("no_improving_move", Some(g)) => format!(
            "the optimiser's search found no improving move left: proven within {:.2}% of the least achievable risk",
            g * 100.0
        ),
        (s, _) => format!("optimiser status {s}"),
    }
}

/// The plan's risk reduction in percent; 0 when the folder does not say.
fn reduction_pct(summary: &Summary) -> f64 {
    if summary.risk_reduction_pct.is_finite() {
        summary.risk_reduction_pct
    } else {
        0.0
    }
}

/// Crew-days listed on the schedule page.
const GLANCE: usize = 40;

/// The report and the number of printed sheets its crew-days take (a dense day can take a
/// continuation sheet).
pub(super) fn report_html(ctx: &Orders, curve_svg: Option<&str>) -> Result<(String, usize)> {
    let folder = ctx.folder;
    let s = &ctx.schedule;
    let o = &ctx.options;
    let summary = &folder.summary;
    let currency = folder.catalogue.currency.as_str();
    let mut h = String::new();
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>Work orders: tree-of-heaven treatment</title><style>{CSS}</style></head><body>\n"
    );

    // Page 1: overview.
    let stems: f64 = folder.planned.iter().map(|p| p.stems).sum();
    let cost: f64 = folder.planned.iter().map(|p| p.cost).sum();
    let first = s.scheduled().filter_map(|d| d.date).min();
    let last = s.last_date();
    let _ = write!(
        h,
        "<section class=\"page\" id=\"overview\"><h1>Work orders: tree-of-heaven treatment</h1>"
    );
    let _ = write!(
        h,
        "<p>This season's plan treats <b>{} patches</b> ({} stems) for <b>{}</b> of a {} budget. It cuts the spotted lanternfly establishment risk index by <b>{:.1}%</b> ({}). The index ranks relative risk under the plan's assumptions; it is not a forecast.</p>",
        folder.planned.len(),
        thousands(stems),
        money(currency, cost),
        // A folder without a budget (older versions) shows the plan's cost as its budget.
        money(
            currency,
            if summary.budget > 0.0 {
                summary.budget
            } else {
                cost
            }
        ),
        reduction_pct(summary),
        escape(&status_line(summary)),
    );
    let _ = write!(
        h,
        "<p>The work is {} crew-day{} for {} crew{} working {} from {}{}: {:.1} hours of work and {:.1} hours of travel ({}, {}).{}</p>",
        s.days.len(),
        if s.days.len() == 1 { "" } else { "s" },
        o.crews,
        if o.crews == 1 { "" } else { "s" },
        escape(&o.workdays.to_string()),
        o.start,
        match (first, last) {
            (Some(a), Some(b)) => format!(" (first day {a}, last day {b})"),
            _ => String::new(),
        },
        s.days.iter().map(|d| d.work_hours()).sum::<f64>() + 0.0,
        s.days.iter().map(|d| d.travel_hours()).sum::<f64>() + 0.0,
        ctx.units
            .long(s.days.iter().map(|d| d.travel_km()).sum::<f64>()),
        s.travel_model,
        if s.split_patches > 0 {
            format!(
                " {} large patch{} spread over several days.",
                s.split_patches,
                if s.split_patches == 1 {
                    " is"
                } else {
                    "es are"
                }
            )
        } else {
            String::new()
        }
    );
    for m in &s.missing {
        let _ = write!(
            h,
            "<p class=\"warn\">Not enough crew time: {} crew-day{} of {} cannot be done inside its window ({}). Add crews or workdays, start earlier, or carry the work to next season. Those days are listed as unscheduled.</p>",
            m.crew_days,
            if m.crew_days == 1 { "" } else { "s" },
            escape(&m.methods.join(" and ")),
            escape(&contract::window(&m.months))
        );
    }
    for u in &s.unreached {
        let _ = write!(
            h,
            "<p class=\"warn\">NOT SCHEDULED, no road: patch {} cannot be reached from the depot on the road layer ({}). It is left out of the crew-days (listed last in orders.csv); add the missing road to the layer or plan its access separately.</p>",
            escape(&u.patch_id),
            escape(&u.reason)
        );
    }
    for f in &s.far_from_road {
        let _ = write!(
            h,
            "<p class=\"warn\">Far from any road: {} is {} from the nearest road (more than {}). The walk is counted at walking speed; check how the crew gets in.</p>",
            if f.patch_id == "depot" {
                "the depot".to_string()
            } else {
                format!("patch {}", escape(&f.patch_id))
            },
            ctx.units.short(f.walk_m),
            ctx.units.short(f.max_walk_m)
        );
    }
    if s.depot_is_default {
        let _ = write!(
            h,
            "<p class=\"warn\">Depot assumed: no depot was given, so the crews are assumed to leave from the centroid of the treated patches ({:.0}, {:.0}), not from a yard anyone drives from. Give the yard with <code>--depot X,Y</code> or <code>--depot-lonlat LON,LAT</code>.</p>",
            s.depot.0, s.depot.1
        );
    }
    h.push_str(&overview_map(ctx));
    h.push_str(&explorer(ctx));
    h.push_str(&legend(ctx));
    h.push_str(&context_legend(ctx));
    let _ = write!(
        h,
        "<p class=\"small\">Map in {} (metres; north arrow shows grid north). Travel: {}. Depot {}.</p>",
        escape(&ctx.crs.name),
        escape(&s.travel_text),
        if s.depot_is_default {
            "assumed at the centroid of the treated patches (none given)".to_string()
        } else {
            format!("at {:.0}, {:.0}", s.depot.0, s.depot.1)
        }
    );
    h.push_str("<p class=\"small\"><b>Before any herbicide work:</b> apply every product per its label; the label is the law. Read the cautions on page 2, the next page.</p></section>\n");

    // Page 2: the cautions, right after the overview that points to them.
    let _ = write!(
        h,
        "<section class=\"page\" id=\"cautions\"><h2>Cautions for every site</h2><div class=\"cautions\"><p>These orders say where treatment buys the most risk reduction and how long it should take. They are not a pesticide recommendation: apply any product per its label, and defer to local codes and licensed practice.</p>"
    );
    for c in cautions::ALL {
        let _ = write!(h, "<p><b>[{}]</b> {}</p>", escape(c.code), escape(c.text));
    }
    h.push_str("<p>Felling: treated stems may be felled only 30 days or more after treatment (Penn State Extension; USDA Forest Service 2014). Follow-up: survivors and root suckers usually need treatment for two or three more seasons; the follow-up date on each order is the start of the method's window next season.</p></div></section>\n");

    // Page 2 (optional): the budget curve.
    if let Some(svg) = curve_svg {
        let body = svg.find("<svg").map(|k| &svg[k..]).unwrap_or(svg);
        let _ = writeln!(
            h,
            "<section class=\"page\" id=\"curve\"><h2>What each budget buys</h2><p>Risk reduction against season budget, each point an optimised plan (from <code>hostcut curve</code>). This plan spends {} and cuts risk by {:.1}%.</p><div class=\"curve\">{body}</div></section>",
            money(currency, cost),
            reduction_pct(summary)
        );
    }

    // The schedule at a glance, one line per crew-day (the first GLANCE, so it stays one page).
    let _ = write!(
        h,
        "<section class=\"page\" id=\"schedule\"><h2>Schedule at a glance</h2><table><tr><th>Crew-day</th><th>Patches</th><th>Stops</th><th>Work h</th><th>Travel h</th><th>Travel {}</th></tr>",
        ctx.units.long_symbol()
    );
    for d in s.days.iter().take(GLANCE) {
        let mut ids: Vec<&str> = d.stops.iter().map(|s| s.patch_id.as_str()).collect();
        ids.dedup();
        let _ = write!(
            h,
            "<tr><td>{}</td><td>{}</td><td class=\"n\">{}</td><td class=\"n\">{:.1}</td><td class=\"n\">{:.1}</td><td class=\"n\">{:.1}</td></tr>",
            escape(&day_label(d)),
            escape(&ids.join(", ")),
            d.stops.len(),
            d.work_hours(),
            d.travel_hours(),
            ctx.units.long_value(d.travel_km())
        );
    }
    if s.days.len() > GLANCE {
        let _ = write!(
            h,
            "<tr><td colspan=\"6\">... and {} more crew-days: see orders.csv and the pages that follow</td></tr>",
            s.days.len() - GLANCE
        );
    }
    h.push_str("</table></section>\n");

    // One page per crew-day, numbered as the overview map's labels name them (d1, d2, ...).
    let mut sheets = 0;
    for (k, d) in s.days.iter().enumerate() {
        sheets += day_page(ctx, d, k + 1, &mut h);
    }
    h.push_str("</body></html>\n");
    Ok((h, sheets))
}
