//! One printed page per crew-day: the day's map, the site rules, the stops in driving order with
//! which stems get which method, then the day's work grouped by method — the stops and stems
//! each method applies to and the cautions of its product class at those sites — and the text of
//! each caution once.
//!
//! The page is sized to fit one Letter page: the map shrinks as the day's stops grow (a dense
//! day of twelve stops gets the smallest map), the caution texts are set small in two columns,
//! and a method's caution set is named by its codes, not repeated per group.

use std::collections::BTreeSet;
use std::fmt::Write as _;

use crate::core::cautions;
use crate::field::orders::{self, CrewDay, Stop};
use crate::field::plan_folder::PlannedPatch;
use crate::input::gis;
use crate::input::treatments::MethodId;
use crate::report::chart::escape;
use crate::report::format::thousands;

use super::svg::{day_map, map_height};
use super::{Orders, day_label};

/// Site codes that are not a method's own but follow the site (shown with the methods they
/// concern, and their text once at the foot of the page).
const HERBICIDE_SITE_CODES: [&str; 2] = ["RESTRICTED_SITE", "WATER_UNCHECKED"];

/// What one stop gets: per method, the stems of each class (`stems` without classes), and the
/// classes left.
struct StopWork {
    methods: Vec<(MethodId, Vec<(String, f64)>)>,
    left: Vec<(String, f64)>,
}

fn stop_work(p: &PlannedPatch, s: &Stop) -> StopWork {
    let mut methods: Vec<(MethodId, Vec<(String, f64)>)> = Vec::new();
    let mut left = Vec::new();
    if p.classes.is_empty() {
        methods.push((s.method_id, vec![("stems".to_string(), s.stems)]));
    } else {
        let share = if p.stems > 0.0 {
            s.stems / p.stems
        } else {
            1.0
        };
        for (class, method, n) in p.class_stems(share) {
            match method {
                Some(m) if n > 0.0 => match methods.iter_mut().find(|(k, _)| *k == m) {
                    Some((_, v)) => v.push((class.to_string(), n)),
                    None => methods.push((m, vec![(class.to_string(), n)])),
                },
                None if n > 0.0 => left.push((class.to_string(), n)),
                _ => {}
            }
        }
        methods.sort_by_key(|(m, _)| *m);
    }
    StopWork { methods, left }
}

fn stems_words(v: &[(String, f64)]) -> String {
    v.iter()
        .map(|(class, n)| format!("{} {class}", thousands(*n)))
        .collect::<Vec<_>>()
        .join(", ")
}

/// The method's short name: `stem injection`, `basal bark`, `pull seedlings`.
fn short(ctx: &Orders, m: MethodId) -> String {
    ctx.folder.catalogue.method(m).id.replace('_', " ")
}

/// The site's rules in large type above the method: a crew must not miss them.
fn site_rule_flags(p: &PlannedPatch) -> String {
    let mut flags = String::new();
    if p.no_herbicide() {
        flags.push_str("<div class=\"flag noherb\">NO HERBICIDE ON THIS SITE</div>");
    }
    if let Some(r) = p.restriction() {
        let _ = write!(
            flags,
            "<div class=\"flag restricted\">RESTRICTED SITE: {}</div>",
            escape(r.trim_start_matches("restricted site: "))
        );
    }
    if let Some(w) = p.near_water() {
        let _ = write!(
            flags,
            "<div class=\"flag water\">NEAR WATER: {}</div>",
            escape(w.trim_start_matches("near water: "))
        );
    }
    flags
}

/// "stop 3" or "stops 1-4, 6 and 8" (runs of three or more as a range).
fn stops_words(stops: &[usize]) -> String {
    let mut runs: Vec<String> = Vec::new();
    let mut k = 0;
    while k < stops.len() {
        let mut j = k;
        while j + 1 < stops.len() && stops[j + 1] == stops[j] + 1 {
            j += 1;
        }
        if j >= k + 2 {
            runs.push(format!("{}&ndash;{}", stops[k], stops[j]));
        } else {
            runs.extend(stops[k..=j].iter().map(|n| n.to_string()));
        }
        k = j + 1;
    }
    let many = stops.len() > 1;
    let list = match runs.len() {
        0 => String::new(),
        1 => runs[0].clone(),
        n => format!("{} and {}", runs[..n - 1].join(", "), runs[n - 1]),
    };
    format!("{} {list}", if many { "stops" } else { "stop" })
}

/// The stop's patch, part and parcel, for the table and the method groups.
fn where_words(ctx: &Orders, s: &Stop) -> String {
    if s.parts <= 1 {
        return String::new();
    }
    match ctx.strips.get(&(s.patch_id.clone(), s.part)) {
        Some(strip) => format!("{}, part {} of {}", strip.words, s.part, s.parts),
        None => format!(
            "part {} of {} (no outline: the patch was given as a point; share the stand by eye)",
            s.part, s.parts
        ),
    }
}

/// Height of a printed Letter page inside its margins (279.4 mm - 26 mm at 96 px per inch), less
/// a safety margin for the estimate below, in CSS pixels.
const PAGE_PX: f64 = 958.0 - 30.0;

/// The stops table's header, with fixed column widths so the estimate's line counts hold
/// (Letter inside 12 mm margins is about 726 px wide).
const TABLE_HEAD: &str = "<table class=\"stops\"><colgroup><col style=\"width:24px\"><col style=\"width:150px\"><col style=\"width:230px\"><col style=\"width:40px\"><col style=\"width:118px\"><col style=\"width:124px\"><col style=\"width:34px\"></colgroup><tr><th>#</th><th>Patch / parcel</th><th>Which stems get which method</th><th>Hours</th><th>Getting in</th><th>Lat, lon</th><th>Done</th></tr>";
const TABLE_HEAD_PX: f64 = 22.0;
/// A continuation sheet's heading.
const CONT_HEAD_PX: f64 = 40.0;

/// Lines a text of `chars` characters takes at `per_line` characters a line.
fn lines(chars: usize, per_line: usize) -> f64 {
    chars.div_ceil(per_line.max(1)).max(1) as f64
}

/// Characters a reader sees in an HTML fragment (tags dropped, entities one character).
fn visible(html: &str) -> usize {
    let (mut n, mut tag, mut entity) = (0, false, false);
    for c in html.chars() {
        match c {
            '<' => tag = true,
            '>' => tag = false,
            '&' if !tag => entity = true,
            ';' if entity => {
                entity = false;
                n += 1;
            }
            _ if tag || entity => {}
            _ => n += 1,
        }
    }
    n
}

/// Writes the crew-day's sheets: one page when its estimated height fits a printed page; else
/// the blocks that do not fit (the rest of the stops, with the table's header again, the work
/// by method, the cautions and sign-off) go on continuation sheets (`d3, continued (sheet 2)`),
/// each counted and numbered as a page of its own. Returns the sheets written.
///
/// The estimate is deliberately generous (line counts at the print fonts, a safety margin);
/// tests/crew_pages.rs prints the densest days to PDF and checks the page count.
pub(super) fn day_page(ctx: &Orders, d: &CrewDay, sheet: usize, out: &mut String) -> usize {
    let folder = ctx.folder;
    let units = ctx.units;
    let mut h = String::new();
    let h = &mut h;
    // Heading and the day's line.
    let mut height = 45.0 + map_height(d.stops.len()) + 6.0;
    let _ = write!(
        h,
        "<p>Leave the depot, {} stop{}, back to the depot: <b>{:.1} h work + {:.1} h travel = {:.1} h</b> of a {} h day; {} of driving ({}).</p>",
        d.stops.len(),
        if d.stops.len() == 1 { "" } else { "s" },
        d.work_hours(),
        d.travel_hours(),
        d.hours(),
        ctx.options.day_hours,
        units.long(d.travel_km()),
        ctx.schedule.travel_model
    );
    h.push_str(&day_map(ctx, d));
    let ruled: Vec<String> = d
        .stops
        .iter()
        .enumerate()
        .filter_map(|(k, s)| {
            let p = &folder.planned[s.row];
            (!p.site_notes.is_empty() && p.access != "permission" || p.no_herbicide()).then(|| {
                format!(
                    "stop {} ({}): {}",
                    k + 1,
                    escape(&s.patch_id),
                    escape(&p.site_notes)
                )
            })
        })
        .collect();
    if !ruled.is_empty() {
        height += 30.0
            + ruled
                .iter()
                .map(|r| 16.0 * lines(visible(r), 95))
                .sum::<f64>();
        let _ = write!(
            h,
            "<div class=\"siterules\"><b>Site rules today:</b><ul><li>{}</li></ul></div>",
            ruled.join("</li><li>")
        );
    }

    // The stops in driving order, each saying which stems get which method.
    let to = gis::ToLonLat::new(&ctx.crs).ok();
    let head_px = height;
    let mut rows: Vec<(String, f64)> = Vec::new();
    let work: Vec<StopWork> = d
        .stops
        .iter()
        .map(|s| stop_work(&folder.planned[s.row], s))
        .collect();
    for (k, (s, w)) in d.stops.iter().zip(&work).enumerate() {
        let p = &folder.planned[s.row];
        let ll = to
            .as_ref()
            .and_then(|t| t.points(&[(s.x, s.y)]).ok())
            .map(|v| format!("{:.5}, {:.5}", v[0].1, v[0].0))
            .unwrap_or_default();
        let getting_in = match (p.access.as_str(), p.contact.is_empty()) {
            ("permission", false) => format!("permission first: call {} before entry", p.contact),
            ("permission", true) => "permission first".to_string(),
            (a, false) => format!("{a}; {}", p.contact),
            (a, true) => a.to_string(),
        };
        let walk = ctx
            .schedule
            .far_from_road
            .iter()
            .find(|f| f.patch_id == s.patch_id)
            .map(|f| format!("; {} walk from the road", units.short(f.walk_m)))
            .unwrap_or_default();
        let mut what: Vec<String> = w
            .methods
            .iter()
            .map(|(m, v)| format!("<b>{}</b>: {}", escape(&short(ctx, *m)), stems_words(v)))
            .collect();
        if !w.left.is_empty() {
            what.push(format!("left: {}", stems_words(&w.left)));
        }
        let part = where_words(ctx, s);
        let flags = site_rule_flags(p);
        // Lines at the column widths of TABLE_HEAD (8 pt, about 6 px a character; flags bold).
        let flag_lines: f64 = flags
            .split("<div")
            .skip(1)
            .map(|f| lines(visible(f), 30) + 0.4)
            .sum();
        let row_lines = [
            lines(visible(&what.join("; ")), 36) + flag_lines,
            lines(s.patch_id.len() + 6, 22)
                + if p.parcel.is_empty() {
                    0.0
                } else {
                    lines(p.parcel.len(), 24)
                }
                + if part.is_empty() {
                    0.0
                } else {
                    lines(part.len(), 26)
                },
            lines(getting_in.len() + walk.len(), 17),
        ]
        .into_iter()
        .fold(1.0, f64::max);
        let mut row = String::new();
        let _ = write!(
            row,
            "<tr><td class=\"n\">{}</td><td><b>{}</b>{}{}{}</td><td>{}{}</td><td class=\"n\">{:.1}</td><td>{}{}</td><td class=\"nw\">{}</td><td>&#9744;</td></tr>",
            k + 1,
            escape(&s.patch_id),
            if s.parts > 1 {
                format!(" ({}/{})", s.part, s.parts)
            } else {
                String::new()
            },
            if p.parcel.is_empty() {
                String::new()
            } else {
                format!("<br>{}", escape(&p.parcel))
            },
            if part.is_empty() {
                String::new()
            } else {
                format!("<br><span class=\"small\">{}</span>", escape(&part))
            },
            flags,
            what.join("; "),
            s.work_hours,
            escape(&getting_in),
            escape(&walk),
            ll,
        );
        let px = 13.0 * row_lines + 4.0;
        rows.push((row, px));
    }
    let top_end = h.len();
    let mut group_px = 24.0;

    // The day's work by method: stops and stems, the method's caution set at those sites.
    let mut used: Vec<MethodId> = work
        .iter()
        .flat_map(|w| w.methods.iter().map(|(m, _)| *m))
        .collect();
    used.sort_unstable();
    used.dedup();
    let mut codes: BTreeSet<&str> = BTreeSet::new();
    h.push_str("<h3>By method</h3><div class=\"groups\">");
    for m in used {
        let method = folder.catalogue.method(m);
        let mut at: Vec<usize> = Vec::new();
        let mut total: Vec<(String, f64)> = Vec::new();
        for (k, w) in work.iter().enumerate() {
            if let Some((_, v)) = w.methods.iter().find(|(x, _)| *x == m) {
                at.push(k + 1);
                for (class, n) in v {
                    match total.iter_mut().find(|(c, _)| c == class) {
                        Some((_, t)) => *t += n,
                        None => total.push((class.clone(), *n)),
                    }
                }
            }
        }
        let mut line = format!(
            "<b>{}</b> &mdash; {}: {} in all. {}",
            escape(&short(ctx, m)),
            stops_words(&at),
            stems_words(&total),
            escape(&method.label)
        );
        let mut set: Vec<&str> = method.cautions.iter().map(|c| c.as_str()).collect();
        if method.herbicide {
            line.push_str(". <b>Apply per the product label</b> (the label is the law); a licensed applicator where the rules require one.");
            // Site conditions of the stops this method is used at.
            let (mut water, mut unchecked) = (Vec::new(), Vec::new());
            for &k in &at {
                let s = &d.stops[k - 1];
                let p = &folder.planned[s.row];
                for c in p.cautions.split(';') {
                    if HERBICIDE_SITE_CODES.contains(&c) && !set.contains(&c) {
                        set.push(c);
                    }
                }
                if let Some(r) = p.restriction() {
                    let _ = write!(
                        line,
                        " Stop {k}: restricted site ({}), confirm its conditions with the site manager first.",
                        escape(r.trim_start_matches("restricted site: "))
                    );
                }
                if let Some(wn) = p.near_water() {
                    water.push(format!(
                        "{k} ({})",
                        escape(wn.trim_start_matches("near water: "))
                    ));
                } else if p.cautions.split(';').any(|c| c == "WATER_UNCHECKED") {
                    unchecked.push(k);
                }
            }
            if !water.is_empty() {
                let _ = write!(
                    line,
                    " Near water at {} {}: only a product labelled for that site; keep the label's buffer.",
                    if water.len() == 1 { "stop" } else { "stops" },
                    water.join(", ")
                );
            }
            if !unchecked.is_empty() {
                let _ = write!(
                    line,
                    " Water not checked at {}: look for water first and keep the label's buffer.",
                    stops_words(&unchecked)
                );
            }
            if set.contains(&"DRIFT") {
                line.push_str(" No spraying in wind or heat that carries product off target.");
            }
        } else {
            line.push_str(". <b>No herbicide</b> in this method.");
            let bare: Vec<usize> = at
                .iter()
                .copied()
                .filter(|&k| folder.planned[d.stops[k - 1].row].no_herbicide())
                .collect();
            if !bare.is_empty() {
                let _ = write!(
                    line,
                    " {} {}: bring no herbicide there.",
                    stops_words(&bare),
                    if bare.len() == 1 {
                        "is a NO-HERBICIDE SITE"
                    } else {
                        "are NO-HERBICIDE SITES"
                    }
                );
            }
        }
        if set.contains(&"QUARANTINE") {
            line.push_str(" Cut or pulled material stays on site unless the quarantine rules allow moving it.");
        }
        if let Some(date) = d.date {
            if set.contains(&"FELL30") {
                let _ = write!(
                    line,
                    " Do not fell treated stems before {}.",
                    orders::fell_after(date)
                );
            }
            if let Some(f) = orders::method_follow_up(folder, m, date) {
                let _ = write!(line, " Follow-up visit from {}.", escape(&f));
            }
        }
        let tags: Vec<String> = set.iter().map(|c| format!("[{}]", escape(c))).collect();
        group_px += 12.5 * lines(visible(&line) + 12 * tags.len(), 140) + 4.0;
        let _ = write!(
            h,
            "<p class=\"group\">{line} <span class=\"codes\">Cautions: {}</span></p>",
            tags.join(" ")
        );
        codes.extend(set);
    }
    h.push_str("</div>");
    // Site codes that hold whatever the method (permission, no herbicide).
    for s in &d.stops {
        let p = &folder.planned[s.row];
        for c in p.cautions.split(';') {
            if c == "PERMISSION" || c == "NO_HERBICIDE" {
                codes.insert(if c == "PERMISSION" {
                    "PERMISSION"
                } else {
                    "NO_HERBICIDE"
                });
            }
        }
    }
    let groups_end = h.len();
    h.push_str("<h3>Cautions at these sites</h3><div class=\"cautions small\">");
    let mut caution_lines = 1.0;
    for code in &codes {
        if let Some(c) = cautions::lookup(code) {
            caution_lines += lines(c.text.len() + c.code.len() + 3, 76);
            let _ = write!(h, "<p><b>[{}]</b> {}</p>", escape(c.code), escape(c.text));
        }
    }
    h.push_str("<p>Defer to local codes and licensed practice.</p></div>");
    let foot_px = 24.0 + 10.5 * (caution_lines / 2.0).ceil() + 22.0;
    h.push_str("<p class=\"sign small\">Crew lead: ____________________ &nbsp; Date: __________ &nbsp; Applicator licence no.: ______________</p>");

    // Lay the blocks onto sheets: the heading, map and site rules; the stops (the table's
    // header repeated on a continuation); the work by method; the cautions and sign-off.
    let label = escape(&day_label(d));
    let mut sheets = 1;
    let _ = write!(
        out,
        "<section class=\"page day\" id=\"d{sheet}\"><h2>d{sheet}: {label}</h2>"
    );
    out.push_str(&h[..top_end]);
    let mut used = head_px;
    let next_sheet = |out: &mut String, sheets: &mut usize| {
        *sheets += 1;
        let _ = write!(
            out,
            "<p class=\"small\"><b>Continued on the next page (d{sheet}, sheet {}): read every sheet of the day before starting.</b></p></section>\n<section class=\"page day cont\" id=\"d{sheet}s{}\"><h2>d{sheet}, continued (sheet {}): {label}</h2>",
            *sheets, *sheets, *sheets
        );
        CONT_HEAD_PX
    };
    out.push_str(TABLE_HEAD);
    used += TABLE_HEAD_PX;
    for (row, px) in &rows {
        if used + px > PAGE_PX {
            out.push_str("</table>");
            used = next_sheet(out, &mut sheets);
            out.push_str(TABLE_HEAD);
            used += TABLE_HEAD_PX;
        }
        out.push_str(row);
        used += px;
    }
    out.push_str("</table>");
    for (block, px) in [
        (&h[top_end..groups_end], group_px),
        (&h[groups_end..], foot_px),
    ] {
        if used + px > PAGE_PX {
            used = next_sheet(out, &mut sheets);
        }
        out.push_str(block);
        used += px;
    }
    out.push_str("</section>\n");
    sheets
}
