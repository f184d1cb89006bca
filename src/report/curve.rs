//! The budget curve's outputs: curve.csv, curve.svg and the justification page
//! (justification.md / .html) a grant writer can paste.
//!
//! # Units
//! Budgets and costs in the catalogue's currency (or `--currency`); reductions in percent of R
//! before treatment.

use std::fmt::Write as _;

use crate::core::cautions;
use crate::core::error::Result;
use crate::core::scenario;
use crate::planning::curve::Point;
use crate::planning::curve::analysis::{Analysis, reduction};
use crate::planning::prepare::Prepared;
use crate::report::chart::{self, Marker, Series, Style, escape, thousands};
use crate::report::output::{self, Staging};

/// The currency of the curve's outputs: the catalogue's, or `--currency` at `--exchange-rate`.
#[derive(Debug, Clone)]
pub struct Money {
    pub code: String,
    /// Units of `code` per unit of the catalogue's currency (1 without conversion).
    pub rate: f64,
    /// The catalogue's currency code.
    pub from: String,
}

impl Money {
    pub fn new(code: &str) -> Money {
        let code = code.trim().to_ascii_uppercase();
        Money {
            from: code.clone(),
            code,
            rate: 1.0,
        }
    }

    /// Amounts in `code`, converted from the catalogue's `from` at `rate`.
    pub fn converted(code: &str, from: &str, rate: f64) -> Money {
        Money {
            code: code.trim().to_ascii_uppercase(),
            rate,
            from: from.trim().to_ascii_uppercase(),
        }
    }

    /// An amount of catalogue currency in this currency.
    pub fn convert(&self, amount: f64) -> f64 {
        amount * self.rate
    }

    /// Whole units, code first (house style in `report::format`), converted.
    pub fn fmt(&self, amount: f64) -> String {
        crate::report::format::money(&self.code, self.convert(amount))
    }

    /// The sentence stating the conversion, if there is one.
    pub fn rate_note(&self) -> Option<String> {
        (self.code != self.from).then(|| {
            format!(
                "Amounts are converted from the catalogue's {} at {} {} per {} (`--exchange-rate`).",
                self.from,
                crate::report::format::significant(self.rate, 6),
                self.code,
                self.from
            )
        })
    }
}

/// What the justification page says it is: `--title`, `--place`, `--date`.
#[derive(Debug, Clone, Default)]
pub struct PageLabels {
    pub title: Option<String>,
    pub place: Option<String>,
    pub date: Option<String>,
}

/// What the curve's outputs need beyond the points: the page's labels, the plan of `--plan`
/// (its budget) and the gap limit the levels were solved to.
#[derive(Debug, Clone, Default)]
pub struct Context {
    pub labels: PageLabels,
    pub plan_budget: Option<f64>,
    pub gap_limit: f64,
}

/// How the marginal returns behave, in words a person can check against the table.
pub fn knee_sentence(points: &[Point], a: &Analysis, money: &Money) -> Option<String> {
    let k = a.knee?;
    let steps: Vec<f64> = a.marginal.iter().flatten().cloned().collect();
    let falls_from_first = steps.len() >= 2
        && steps.windows(2).all(|w| w[1] <= w[0] + 1e-9)
        && steps[0] > *steps.last().unwrap() + 1e-9;
    Some(if falls_from_first {
        format!(
            "Returns fall from the first step: each extra 1,000 buys less than the step before it ({} percentage points per 1,000 in the first step, {} in the last). The curve bends most at about {} (the knee, found with the Kneedle method of Satopää et al. 2011), which buys {:.1}% less risk.",
            crate::report::format::fixed(steps[0] / money.rate, 2),
            crate::report::format::fixed(steps.last().unwrap() / money.rate, 2),
            money.fmt(points[k].budget),
            a.reductions[k]
        )
    } else {
        format!(
            "Returns start to fall off at about {} (the knee of the curve, found with the Kneedle method of Satopää et al. 2011): it buys {:.1}% less risk. Beyond it each extra 1,000 buys less than before.",
            money.fmt(points[k].budget),
            a.reductions[k]
        )
    })
}

const RULES: [(&str, &str, Style); 3] = [
    ("biggest_first", "biggest stands first", Style::Dotted),
    ("nearest_first", "nearest the depot first", Style::DashDot),
    (
        "corridor_first",
        "along the corridors first",
        Style::LongDash,
    ),
];

/// Write curve.csv, curve.svg, justification.md/.html, cautions.txt and the provenance files.
pub fn write(
    staging: &Staging,
    prepared: &Prepared,
    points: &[Point],
    analysis: &Analysis,
    money: &Money,
    s: &scenario::Scenario,
    context: &Context,
) -> Result<()> {
    let risk_before = prepared.model.risk_before();
    staging.write("curve.csv", curve_csv(points, risk_before, money)?)?;
    let svg = curve_svg(points, analysis, money, context.plan_budget);
    staging.write("curve.svg", &svg)?;
    let page = Page::new(prepared, points, analysis, money, s, context);
    staging.write("justification.md", page.markdown())?;
    staging.write("justification.html", page.html(&svg))?;
    output::write_cautions(staging, prepared.patches.water_checked)?;
    let mut inputs_only = prepared.resolved.clone();
    inputs_only.plan.budget = None;
    output::write_provenance(
        staging,
        &inputs_only,
        &prepared.catalogue_text,
        "Inputs and settings of this curve; its budgets are in curve.csv.",
    )
}

/// The rule-of-thumb baselines the points carry: corridor-first only with corridors.
fn rules_in_use(points: &[Point]) -> Vec<(&'static str, &'static str, Style)> {
    RULES
        .iter()
        .filter(|(name, _, _)| {
            points
                .iter()
                .any(|p| p.baselines.iter().any(|b| b.0 == *name))
        })
        .copied()
        .collect()
}

/// curve.csv. Precision: money to the cent, risks to 6 significant figures, gaps as fractions
/// to 6 decimals, reductions to 4 decimals, stems whole, crew hours to 2 decimals.
fn curve_csv(points: &[Point], risk_before: f64, money: &Money) -> Result<Vec<u8>> {
    let mut w = crate::core::csv_cells::Writer::new();
    let mut header = vec![
        "budget",
        "spent",
        "follow_up_cost",
        "risk_after",
        "reduction_pct",
        "marginal_reduction_per_1000",
        "n_treated",
        "stems_treated",
        "crew_hours",
        "status",
        "gap",
        "bound",
        "from_smaller_budget",
        "greedy_risk_after",
        "greedy_reduction_pct",
    ];
    let rules = rules_in_use(points);
    for (name, _, _) in &rules {
        header.push(match *name {
            "biggest_first" => "biggest_first_risk_after",
            "nearest_first" => "nearest_first_risk_after",
            _ => "corridor_first_risk_after",
        });
    }
    w.row(&header)?;
    let analysis = Analysis::new(points, risk_before);
    use crate::report::format::{fixed, significant};
    // Ten significant figures: a reviewer can match a level to `hostcut plan` at that budget.
    let f = |v: f64| significant(v, 10);
    let cents = |v: f64| fixed(money.convert(v), 2);
    for (k, p) in points.iter().enumerate() {
        let mut row = vec![
            cents(p.budget),
            cents(p.spent),
            cents(p.follow_up_cost),
            f(p.risk_after),
            fixed(analysis.reductions[k], 4),
            analysis.marginal[k]
                .map(|m| fixed(m / money.rate, 4))
                .unwrap_or_default(),
            p.n_treated.to_string(),
            fixed(p.stems_treated, 0),
            fixed(p.crew_hours, 2),
            p.status.as_str().to_string(),
            if p.gap.is_finite() {
                fixed(p.gap, 6)
            } else {
                String::new()
            },
            f(p.bound),
            if p.from_neighbour {
                "yes".into()
            } else {
                "no".into()
            },
            f(p.greedy_risk_after),
            fixed(analysis.greedy[k], 4),
        ];
        for (name, _, _) in &rules {
            row.push(
                p.baselines
                    .iter()
                    .find(|b| b.0 == *name)
                    .map(|b| f(b.1))
                    .unwrap_or_default(),
            );
        }
        w.row(&row)?;
    }
    w.into_bytes()
}

/// curve.svg: the rule-of-thumb and greedy lines first, the optimal line last so it is drawn
/// above them; budgets in the output currency; a marker at the knee, the thresholds and the
/// plan's own budget (`--plan`).
fn curve_svg(
    points: &[Point],
    analysis: &Analysis,
    money: &Money,
    plan_budget: Option<f64>,
) -> String {
    let risk_before = if let Some(p) = points.first() {
        p.risk_after / (1.0 - analysis.reductions[0] / 100.0).max(1e-300)
    } else {
        1.0
    };
    let budget: Vec<f64> = points.iter().map(|p| money.convert(p.budget)).collect();
    let mut series = vec![Series {
        id: "greedy".into(),
        label: "greedy benefit-per-cost".into(),
        points: budget
            .iter()
            .cloned()
            .zip(analysis.greedy.iter().cloned())
            .collect(),
        style: Style::Dashed,
    }];
    for (name, label, style) in rules_in_use(points) {
        let pts = points
            .iter()
            .map(|p| {
                (
                    money.convert(p.budget),
                    p.baselines
                        .iter()
                        .find(|b| b.0 == name)
                        .map(|b| reduction(b.1, risk_before))
                        .unwrap_or(f64::NAN),
                )
            })
            .collect();
        series.push(Series {
            id: name.into(),
            label: label.into(),
            points: pts,
            style,
        });
    }
    // Last, so the optimal line is drawn above the others.
    series.push(Series {
        id: "optimal".into(),
        label: "optimal plan (exact MIP)".into(),
        points: budget
            .iter()
            .cloned()
            .zip(analysis.reductions.iter().cloned())
            .collect(),
        style: Style::Main,
    });
    // One marker per budget: the knee, thresholds and the plan that fall on the same level
    // share it.
    let mut markers: Vec<Marker> = Vec::new();
    let mut mark = |k: usize, what: String, strong: bool| match markers
        .iter_mut()
        .find(|m| m.x == money.convert(points[k].budget))
    {
        Some(m) => {
            m.label = format!("{what}, {}", m.label);
            m.strong |= strong;
        }
        None => markers.push(Marker {
            x: money.convert(points[k].budget),
            label: format!("{what}: {}", money.fmt(points[k].budget)),
            strong,
        }),
    };
    if let Some(k) = analysis.knee {
        mark(k, "knee".to_string(), true);
    }
    for (fraction, at) in &analysis.thresholds {
        if let Some(k) = at {
            mark(*k, format!("{:.0}% of attainable", fraction * 100.0), false);
        }
    }
    if let Some(k) = plan_budget.and_then(|b| points.iter().position(|p| p.budget == b)) {
        mark(k, "your plan".to_string(), true);
    }
    let top = analysis
        .reductions
        .iter()
        .chain(&analysis.greedy)
        .cloned()
        .filter(|v| v.is_finite())
        .fold(0.0, f64::max);
    let y_max = ((top / 10.0).ceil() * 10.0).clamp(10.0, 100.0);
    chart::line_chart(
        "Risk reduction bought at each budget",
        &format!("season budget ({})", money.code),
        "reduction in connected-host risk (%)",
        // Ticks are plain numbers; the axis label names the currency.
        &|x| thousands(x),
        y_max,
        &series,
        &markers,
    )
}

/// The justification page's content, rendered as Markdown or HTML.
struct Page {
    title: String,
    /// Place and date under the title.
    subtitle: Option<String>,
    intro: Vec<String>,
    table_header: Vec<String>,
    table: Vec<Vec<String>>,
    findings: Vec<String>,
    compare_header: Vec<String>,
    compare: Vec<Vec<String>>,
    core: Vec<(String, String)>,
    assumptions: Vec<String>,
    cautions: Vec<String>,
}

impl Page {
    fn new(
        prepared: &Prepared,
        points: &[Point],
        a: &Analysis,
        money: &Money,
        s: &scenario::Scenario,
        context: &Context,
    ) -> Page {
        use crate::planning::curve::follow_up::FOLLOW_UP_SEASONS;
        use crate::report::format::status_words;
        let patches = &prepared.patches;
        let total_stems: f64 = patches.items.iter().map(|p| p.stems).sum();
        let mut intro = vec![
            format!(
                "This page shows what each season budget buys in reduced spotted lanternfly establishment risk, by treating tree-of-heaven (the insect's preferred host) where it counts most. The programme area holds {} host patches with about {} stems; {} of them can be treated under the access and herbicide rules.",
                patches.len(),
                thousands(total_stems),
                prepared.eligible.iter().filter(|e| **e).count()
            ),
            "Every budget level below is an optimal plan found by an exact optimiser for that budget (or, where the optimiser stopped early, the best plan found with its proven distance from optimal), not an extrapolation from one plan.".to_string(),
            "What the numbers are: a ranking of relative risk under the stated assumptions, the share of connected tree-of-heaven host that treatment removes, weighted by how close patches are to each other and to the rail lines, roads and known populations that bring the insect in. It is not a forecast of where the insect will be or when.".to_string(),
            format!(
                "Each level is a one-season budget. Treated patches need follow-up visits for survivors and root suckers in the next seasons: the column \"With {FOLLOW_UP_SEASONS} follow-up seasons\" adds them (the share of stems and the method the treatment catalogue gives for each method's follow-up), so a multi-season request can be read off the same row."
            ),
        ];
        if let Some(note) = money.rate_note() {
            intro.push(note);
        }
        let table_header = [
            "Budget",
            "Spent",
            "Patches",
            "Stems",
            "Hectares",
            "Risk reduction",
            "Cost per % point",
            "Extra % per 1,000",
            "Solver",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect::<Vec<String>>();
        let mut table_header = table_header;
        table_header.insert(2, format!("With {FOLLOW_UP_SEASONS} follow-up seasons"));
        let table = points
            .iter()
            .enumerate()
            .map(|(k, p)| {
                vec![
                    if context.plan_budget == Some(p.budget) {
                        format!("{} (your plan)", money.fmt(p.budget))
                    } else {
                        money.fmt(p.budget)
                    },
                    money.fmt(p.spent),
                    money.fmt(p.spent + p.follow_up_cost),
                    p.n_treated.to_string(),
                    thousands(p.stems_treated),
                    if p.area_ha_treated > 0.0 {
                        format!("{:.1}", p.area_ha_treated)
                    } else {
                        "n/a".into()
                    },
                    format!("{:.1}%", a.reductions[k]),
                    if a.reductions[k] > 0.0 {
                        money.fmt(p.spent / a.reductions[k])
                    } else {
                        "-".into()
                    },
                    a.marginal[k]
                        .map(|m| crate::report::format::fixed(m / money.rate, 2))
                        .unwrap_or_else(|| "-".into()),
                    status_words(p.status, p.gap, context.gap_limit),
                ]
            })
            .collect();
        let mut findings = Vec::new();
        if let Some(k) = context
            .plan_budget
            .and_then(|b| points.iter().position(|p| p.budget == b))
        {
            findings.push(format!(
                "Your plan's budget, {}, buys {:.1}% less risk ({}); with {FOLLOW_UP_SEASONS} follow-up seasons it costs {}.",
                money.fmt(points[k].budget),
                a.reductions[k],
                status_words(points[k].status, points[k].gap, context.gap_limit),
                money.fmt(points[k].spent + points[k].follow_up_cost)
            ));
        }
        findings.extend(knee_sentence(points, a, money));
        let top = a.reductions.iter().cloned().fold(0.0, f64::max);
        if let Some(last) = points.last() {
            findings.push(format!(
                "\"Attainable\" below means the reduction at the largest budget studied ({}): {:.1}% less risk. A larger budget could buy more only if it treats patches this one cannot.",
                money.fmt(last.budget),
                top
            ));
        }
        for (fraction, at) in &a.thresholds {
            if let Some(k) = at {
                findings.push(format!(
                    "{:.0}% of the attainable reduction is reached by {}, which buys {:.1}% less risk.",
                    fraction * 100.0,
                    money.fmt(points[*k].budget),
                    a.reductions[*k]
                ));
            }
        }
        let rules = rules_in_use(points);
        let compare_header = ["Budget", "Optimal plan", "Greedy rule"]
            .iter()
            .map(|s| s.to_string())
            .chain(rules.iter().map(|r| match r.0 {
                "biggest_first" => "Biggest first".to_string(),
                "nearest_first" => "Nearest first".to_string(),
                _ => "Corridors first".to_string(),
            }))
            .collect();
        let risk_before = prepared.model.risk_before();
        let compare = points
            .iter()
            .enumerate()
            .map(|(k, p)| {
                let mut row = vec![
                    money.fmt(p.budget),
                    format!("{:.1}%", a.reductions[k]),
                    format!("{:.1}%", a.greedy[k]),
                ];
                for (name, _, _) in &rules {
                    row.push(
                        p.baselines
                            .iter()
                            .find(|b| b.0 == *name)
                            .filter(|b| b.1.is_finite())
                            .map(|b| format!("{:.1}%", reduction(b.1, risk_before)))
                            .unwrap_or_else(|| "-".into()),
                    );
                }
                row
            })
            .collect();
        // Core list: patches every plan at or above a level keeps.
        let mut core = Vec::new();
        let mut levels: Vec<usize> = a
            .knee
            .into_iter()
            .chain(a.thresholds.iter().filter_map(|t| t.1))
            .collect();
        levels.sort_unstable();
        levels.dedup();
        for k in levels {
            let kept: Vec<&str> = (0..patches.len())
                .filter(|&i| points[k..].iter().all(|p| p.assignment[i].is_some()))
                .map(|i| patches.items[i].label.as_str())
                .collect();
            let list = if kept.is_empty() {
                "none in common".to_string()
            } else if kept.len() > 40 {
                format!("{} and {} more", kept[..40].join(", "), kept.len() - 40)
            } else {
                kept.join(", ")
            };
            core.push((
                format!(
                    "{} and above ({} patches)",
                    money.fmt(points[k].budget),
                    kept.len()
                ),
                list,
            ));
        }
        let assumptions = vec![
            format!("Dispersal kernel: {:?}, scale {} m, links kept where the kernel is at least {}.", s.model.kernel, s.model.alpha_m, s.model.epsilon).to_lowercase().replacen("dispersal", "Dispersal", 1),
            format!("Corridors: {}.", if s.corridors.is_empty() { "none".to_string() } else { s.corridors.iter().map(|c| format!("{} (weight {}, within {} m)", c.name, c.weight, c.buffer_m)).collect::<Vec<_>>().join("; ") }),
            match s.plan.horizon_years.unwrap_or(crate::model::risk::DEFAULT_HORIZON_YEARS) {
                t if t > 1 => format!("Risk is scored over the next {t} years: each treatment counts by the host it leaves on average over those years as that host regrows ({} % a year), so a thorough treatment that stays down counts for more than a cheap one that regrows. The risk figures on this page are at that mean host.", crate::report::format::significant(100.0 * s.plan.horizon_regrowth.unwrap_or(crate::model::risk::HORIZON_REGROWTH), 3)),
                _ => "Risk is scored for one season: each treatment counts by the host it leaves right after treatment.".to_string(),
            },
            format!("Crew hours: {}.", s.plan.crew_hours.map(|h| format!("at most {h} per season")).unwrap_or_else(|| "not limited".into())),
            "Treatment costs and effectiveness come from the treatment catalogue used (treatments.used.toml); prices marked illustrative there must be replaced by local contract prices before a budget is requested.".to_string(),
            match &s.host.suitability {
                Some(p) => format!("Host is weighted by the establishment suitability layer {} (effective host = stems x suitability).", p.display()),
                None => "No establishment suitability layer: all host counts fully.".to_string(),
            },
            format!("Treated patches need follow-up visits for root suckers in the next two or three seasons. The follow-up column prices {FOLLOW_UP_SEASONS} seasons of visits from the catalogue's `follow_up_share` and `follow_up_method`, without host growth; `hostcut program` plans a multi-season programme exactly."),
        ];
        let cautions = cautions::STANDING
            .iter()
            .filter_map(|c| cautions::lookup(c))
            .map(|c| c.text.to_string())
            .collect();
        let subtitle = [context.labels.place.clone(), context.labels.date.clone()]
            .into_iter()
            .flatten()
            .collect::<Vec<_>>();
        Page {
            title: context.labels.title.clone().unwrap_or_else(|| {
                "What each budget buys: tree-of-heaven treatment against spotted lanternfly".into()
            }),
            subtitle: (!subtitle.is_empty()).then(|| subtitle.join(", ")),
            intro,
            table_header,
            table,
            findings,
            compare_header,
            compare,
            core,
            assumptions,
            cautions,
        }
    }

    fn markdown(&self) -> String {
        let mut t = format!("# {}\n\n", self.title);
        if let Some(sub) = &self.subtitle {
            let _ = writeln!(t, "*{sub}*\n");
        }
        for p in &self.intro {
            let _ = writeln!(t, "{p}\n");
        }
        let table = |t: &mut String, header: &[String], rows: &[Vec<String>]| {
            let _ = writeln!(t, "| {} |", header.join(" | "));
            let _ = writeln!(
                t,
                "|{}|",
                header.iter().map(|_| "---").collect::<Vec<_>>().join("|")
            );
            for r in rows {
                let _ = writeln!(t, "| {} |", r.join(" | "));
            }
            t.push('\n');
        };
        t.push_str("## What each budget level buys\n\n");
        table(&mut t, &self.table_header, &self.table);
        t.push_str("## Where returns fall off\n\n");
        for f in &self.findings {
            let _ = writeln!(t, "- {f}");
        }
        t.push_str("\n## Against the usual rules of thumb (risk reduction at the same budget)\n\n");
        table(&mut t, &self.compare_header, &self.compare);
        t.push_str("## Core list: patches every larger plan keeps\n\n");
        for (level, list) in &self.core {
            let _ = writeln!(t, "- **{level}**: {list}");
        }
        t.push_str("\n## Assumptions\n\n");
        for a in &self.assumptions {
            let _ = writeln!(t, "- {a}");
        }
        t.push_str("\n## Safety and legal cautions\n\nAny herbicide work in these plans must follow the product label and local rules:\n\n");
        for c in &self.cautions {
            let _ = writeln!(t, "- {c}");
        }
        t
    }

    fn html(&self, svg: &str) -> String {
        let mut t =
            String::from("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\n");
        let _ = writeln!(t, "<title>{}</title>", escape(&self.title));
        t.push_str(
            "<style>body{font-family:Helvetica,Arial,sans-serif;max-width:60em;margin:2em auto;padding:0 1em;color:#111;line-height:1.4}\
             table{border-collapse:collapse;margin:1em 0;font-size:0.92em}th,td{border:1px solid #999;padding:0.3em 0.6em;text-align:right}\
             th{background:#eee}td:first-child,th:first-child{text-align:left}.chart svg{max-width:100%;height:auto}\
             @media print{body{margin:0}h2{page-break-after:avoid}table{page-break-inside:avoid}}</style></head><body>\n",
        );
        let _ = writeln!(t, "<h1>{}</h1>", escape(&self.title));
        if let Some(sub) = &self.subtitle {
            let _ = writeln!(t, "<p class=\"subtitle\"><em>{}</em></p>", escape(sub));
        }
        for p in &self.intro {
            let _ = writeln!(t, "<p>{}</p>", escape(p));
        }
        let _ = writeln!(t, "<div class=\"chart\">{svg}</div>");
        let table = |t: &mut String, header: &[String], rows: &[Vec<String>]| {
            t.push_str("<table><thead><tr>");
            for h in header {
                let _ = write!(t, "<th>{}</th>", escape(h));
            }
            t.push_str("</tr></thead><tbody>\n");
            for r in rows {
                t.push_str("<tr>");
                for c in r {
                    let _ = write!(t, "<td>{}</td>", escape(c));
                }
                t.push_str("</tr>\n");
            }
            t.push_str("</tbody></table>\n");
        };
        t.push_str("<h2>What each budget level buys</h2>\n");
        table(&mut t, &self.table_header, &self.table);
        t.push_str("<h2>Where returns fall off</h2><ul>\n");
        for f in &self.findings {
            let _ = writeln!(t, "<li>{}</li>", escape(f));
        }
        t.push_str(
            "</ul><h2>Against the usual rules of thumb (risk reduction at the same budget)</h2>\n",
        );
        table(&mut t, &self.compare_header, &self.compare);
        t.push_str("<h2>Core list: patches every larger plan keeps</h2><ul>\n");
        for (level, list) in &self.core {
            let _ = writeln!(
                t,
                "<li><strong>{}</strong>: {}</li>",
                escape(level),
                escape(list)
            );
        }
        t.push_str("</ul><h2>Assumptions</h2><ul>\n");
        for a in &self.assumptions {
            let _ = writeln!(t, "<li>{}</li>", escape(a));
        }
        t.push_str("</ul><h2>Safety and legal cautions</h2><p>Any herbicide work in these plans must follow the product label and local rules:</p><ul>\n");
        for c in &self.cautions {
            let _ = writeln!(t, "<li>{}</li>", escape(c));
        }
        t.push_str("</ul></body></html>\n");
        t
    }
}
