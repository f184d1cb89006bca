//! The report's SVG maps: the overview of every patch by plan status, its legend, and one route map
//! per crew-day.

use std::collections::HashMap;
use std::fmt::Write as _;

use geo::Geometry;

use crate::field::context::ContextKind;
use crate::field::orders::CrewDay;
use crate::field::travel::TravelModel;
use crate::report::chart::escape;
use crate::report::map::{self, Frame};

use super::labels::{self, Boxed, Placed, Wanted, text_width};
use super::{NOT_ELIGIBLE, Orders, UNTREATED, route_line};

/// Label colours by crew (dark enough on white and on the patch fills); grey for unscheduled.
const CREW_COLOURS: [&str; 6] = [
    "#08519c", "#a63603", "#006d2c", "#54278f", "#99000d", "#525252",
];

pub(super) fn crew_colour(crew: Option<usize>) -> &'static str {
    match crew {
        Some(c) if c > 0 => CREW_COLOURS[(c - 1) % CREW_COLOURS.len()],
        _ => "#777777",
    }
}

/// Each treated patch's crew-day sheets (1-based, in report order; a split patch has several).
pub(super) fn sheets_by_patch<'a>(ctx: &'a Orders) -> HashMap<&'a str, Vec<usize>> {
    let mut m: HashMap<&str, Vec<usize>> = HashMap::new();
    for (k, d) in ctx.schedule.days.iter().enumerate() {
        for s in &d.stops {
            let v = m.entry(s.patch_id.as_str()).or_default();
            if v.last() != Some(&(k + 1)) {
                v.push(k + 1);
            }
        }
    }
    m
}

/// The scale bar (bottom left) and north arrow (top right): labels keep off them.
fn furniture(f: &Frame) -> [Boxed; 2] {
    let bar_w = (f.width - 2.0 * f.margin) / 5.0 + 20.0;
    [
        Boxed {
            x0: f.margin,
            y0: f.height - f.margin - 22.0,
            x1: f.margin + bar_w,
            y1: f.height - f.margin,
        },
        Boxed {
            x0: f.width - f.margin - 24.0,
            y0: f.margin,
            x1: f.width - f.margin,
            y1: f.margin + 40.0,
        },
    ]
}

/// Placed labels as SVG: leader lines under white-haloed bold text, one `plabel` per patch.
fn draw_labels<'a>(
    placed: &[Placed],
    texts: impl Iterator<Item = (&'a str, &'a str, &'a str)>,
    font_px: f64,
) -> String {
    let mut svg = String::from(r#"<g class="labels">"#);
    let texts: Vec<_> = texts.collect();
    for (l, (patch, text, colour)) in placed.iter().zip(&texts) {
        if let Some(((ax, ay), (bx, by))) = l.leader {
            let _ = write!(
                svg,
                r##"<line x1="{ax:.1}" y1="{ay:.1}" x2="{bx:.1}" y2="{by:.1}" stroke="#333" stroke-width="0.6"/>"##
            );
        }
        let _ = write!(
            svg,
            r##"<text class="plabel" data-patch="{}" x="{:.1}" y="{:.1}" font-size="{font_px}" font-weight="bold" fill="{colour}" stroke="#fff" stroke-width="2.5" paint-order="stroke">{}</text>"##,
            escape(patch),
            l.text_x,
            l.text_y,
            escape(text)
        );
    }
    svg.push_str("</g>");
    svg
}

/// The overview map: every patch coloured by plan status, depot, legend, scale bar, north.
pub(super) fn overview_map(ctx: &Orders) -> String {
    let geoms: Vec<&Geometry<f64>> = ctx.outlines.values().collect();
    let mut points: Vec<(f64, f64)> = ctx.folder.patches.iter().map(|p| (p.x, p.y)).collect();
    points.push(ctx.schedule.depot);
    let Some(b) = map::bounds(&geoms, &points) else {
        return String::new();
    };
    let f = Frame::fit(b, 720.0, 520.0, 500.0);
    let mut svg = format!(
        r##"<svg xmlns="http://www.w3.org/2000/svg" width="{:.0}" height="{:.0}" viewBox="0 0 {:.0} {:.0}" role="img" aria-label="map of patches by plan status"><rect width="100%" height="100%" fill="#fafafa" stroke="#666"/>"##,
        f.width, f.height, f.width, f.height
    );
    svg.push_str(&context_in(ctx, &f));
    svg.push_str(&roads_in(ctx, &f));
    let planned: HashMap<&str, &str> = ctx
        .folder
        .planned
        .iter()
        .map(|p| (p.patch_id.as_str(), p.method.as_str()))
        .collect();
    for rec in &ctx.folder.patches {
        let fill = match planned.get(rec.patch_id.as_str()) {
            Some(m) => ctx.colours.get(*m).copied().unwrap_or("#000"),
            None if rec.eligible == "no" => NOT_ELIGIBLE,
            None => UNTREATED,
        };
        match ctx.outlines.get(&rec.patch_id) {
            Some(g @ (Geometry::Polygon(_) | Geometry::MultiPolygon(_))) => {
                let _ = write!(
                    svg,
                    r##"<path class="patch" data-patch="{}" d="{}" fill="{fill}" stroke="#333" stroke-width="0.6"><title>{}</title></path>"##,
                    escape(&rec.patch_id),
                    f.path(g),
                    escape(&rec.patch_id)
                );
            }
            // Inventory stands are points: a circle sized by stems (area proportional).
            _ => {
                let (x, y) = f.px(rec.x, rec.y);
                let r = (rec.stems.max(0.0).sqrt() * 0.25).clamp(2.5, 9.0);
                let _ = write!(
                    svg,
                    r##"<circle class="patch" data-patch="{}" cx="{x:.1}" cy="{y:.1}" r="{r:.1}" fill="{fill}" stroke="#333" stroke-width="0.6"><title>{}</title></circle>"##,
                    escape(&rec.patch_id),
                    escape(&rec.patch_id)
                );
            }
        }
    }
    // Every treated patch labelled: priority and crew-day sheet, coloured by crew.
    let (dx, dy) = f.px(ctx.schedule.depot.0, ctx.schedule.depot.1);
    let sheets = sheets_by_patch(ctx);
    let mut markers: Vec<Boxed> = ctx
        .folder
        .planned
        .iter()
        .map(|p| {
            let (x, y) = f.px(p.x, p.y);
            Boxed::around(x, y, 2.5)
        })
        .collect();
    markers.push(Boxed::around(dx, dy, 5.0));
    markers.extend(furniture(&f));
    let texts: Vec<(String, &str)> = ctx
        .folder
        .planned
        .iter()
        .map(|p| match sheets.get(p.patch_id.as_str()) {
            Some(v) if !v.is_empty() => {
                let (first, last) = (v[0], v[v.len() - 1]);
                let crew = ctx.schedule.days[first - 1].crew;
                let sheet = if first == last {
                    format!("d{first}")
                } else {
                    format!("d{first}-{last}")
                };
                (format!("{} {sheet}", p.priority), crew_colour(crew))
            }
            _ => (p.priority.to_string(), crew_colour(None)),
        })
        .collect();
    let wanted: Vec<Wanted> = ctx
        .folder
        .planned
        .iter()
        .zip(&texts)
        .map(|(p, (t, _))| {
            let (x, y) = f.px(p.x, p.y);
            Wanted {
                x,
                y,
                width: text_width(t.chars().count(), 9.0),
                height: 10.0,
            }
        })
        .collect();
    let placed = labels::place(&wanted, &markers, f.width, f.height);
    svg.push_str(&draw_labels(
        &placed,
        ctx.folder
            .planned
            .iter()
            .zip(&texts)
            .map(|(p, (t, c))| (p.patch_id.as_str(), t.as_str(), *c)),
        9.0,
    ));
    let _ = write!(
        svg,
        r##"<rect x="{:.1}" y="{:.1}" width="9" height="9" fill="#000"><title>depot</title></rect>"##,
        dx - 4.5,
        dy - 4.5
    );
    svg.push_str(&f.scale_bar());
    svg.push_str(&f.north_arrow());
    svg.push_str("</svg>");
    svg
}

pub(super) fn legend(ctx: &Orders) -> String {
    let mut used: Vec<&str> = Vec::new();
    for m in &ctx.folder.catalogue.methods {
        if ctx.folder.planned.iter().any(|p| p.method == m.id) {
            used.push(&m.id);
        }
    }
    let mut s = String::from(r#"<p class="legend small">"#);
    for m in used {
        let _ = write!(
            s,
            r#"<span class="sw" style="background:{}"></span>treat: {}"#,
            ctx.colours[m],
            escape(m)
        );
    }
    let _ = write!(
        s,
        r#"<span class="sw" style="background:{UNTREATED}"></span>not treated this season<span class="sw" style="background:{NOT_ELIGIBLE}"></span>not eligible (access or herbicide rules)<span class="sw" style="background:#000"></span>depot; labels = plan priority and crew-day sheet (12 d3: priority 12, done on sheet d3), coloured by crew:{}</p>"#,
        crew_key(ctx)
    );
    s
}

/// How each context layer is drawn: fill for areas, stroke, dashes, legend swatch.
fn context_style(kind: ContextKind) -> (&'static str, &'static str, &'static str, f64) {
    match kind {
        ContextKind::Parcels => ("none", "#aaaaaa", "2,2", 0.5),
        ContextKind::Water => ("#c6dbef", "#4292c6", "", 1.0),
        ContextKind::Sensitive => ("none", "#cb181d", "4,2", 1.0),
        ContextKind::Corridor => ("none", "#8c510a", "", 2.0),
    }
}

/// An SVG path `d` for any geometry: areas closed, lines open, points as small circles.
fn any_path(f: &Frame, g: &Geometry<f64>) -> (String, bool) {
    let line = |d: &mut String, l: &geo::LineString<f64>| {
        for (k, c) in l.0.iter().enumerate() {
            let (x, y) = f.px(c.x, c.y);
            let _ = write!(d, "{}{x:.1},{y:.1}", if k == 0 { "M" } else { "L" });
        }
    };
    let point = |d: &mut String, p: &geo::Point<f64>| {
        let (x, y) = f.px(p.x(), p.y());
        let _ = write!(d, "M{:.1},{y:.1}a3,3 0 1,0 6,0a3,3 0 1,0 -6,0", x - 3.0);
    };
    let mut d = String::new();
    match g {
        Geometry::Polygon(_) | Geometry::MultiPolygon(_) => return (f.path(g), true),
        Geometry::LineString(l) => line(&mut d, l),
        Geometry::MultiLineString(m) => m.0.iter().for_each(|l| line(&mut d, l)),
        Geometry::Point(p) => point(&mut d, p),
        Geometry::MultiPoint(m) => m.0.iter().for_each(|p| point(&mut d, p)),
        Geometry::GeometryCollection(c) => {
            for g in &c.0 {
                d.push_str(&any_path(f, g).0);
            }
        }
        _ => {}
    }
    (d, matches!(g, Geometry::Point(_) | Geometry::MultiPoint(_)))
}

/// The plan's context layers (parcels, water, sensitive sites, corridors), bottom first.
fn context_in(ctx: &Orders, f: &Frame) -> String {
    let mut svg = String::new();
    for layer in &ctx.context.layers {
        let (fill, stroke, dash, width) = context_style(layer.kind);
        let _ = write!(
            svg,
            r#"<g class="context" data-layer="{}" stroke="{stroke}" stroke-width="{width}"{}>"#,
            escape(&layer.name),
            if dash.is_empty() {
                String::new()
            } else {
                format!(r#" stroke-dasharray="{dash}""#)
            }
        );
        for g in &layer.geometries {
            let (d, area) = any_path(f, g);
            if !d.is_empty() {
                let _ = write!(
                    svg,
                    r#"<path d="{d}" fill="{}"/>"#,
                    if area { fill } else { "none" }
                );
            }
        }
        svg.push_str("</g>");
    }
    svg
}

/// The legend's line for the context layers drawn (and any that could not be read back).
pub(super) fn context_legend(ctx: &Orders) -> String {
    let mut s = String::new();
    for layer in &ctx.context.layers {
        let (fill, stroke, dash, _) = context_style(layer.kind);
        let _ = write!(
            s,
            r#"<span class="sw" style="background:{};border:2px {} {stroke}"></span>{}"#,
            if fill == "none" { "#fff" } else { fill },
            if dash.is_empty() { "solid" } else { "dashed" },
            escape(&layer.name)
        );
    }
    if matches!(ctx.travel, TravelModel::Roads(_)) {
        s.push_str(
            r#"<span class="sw" style="background:#fff;border:2px solid #b0b0b0"></span>roads"#,
        );
    }
    let mut out = String::new();
    if !s.is_empty() {
        let _ = write!(out, r#"<p class="legend small">{s}</p>"#);
    }
    if !ctx.context.skipped.is_empty() {
        let _ = write!(
            out,
            r#"<p class="small">Not drawn (the plan's layer could not be read back): {}</p>"#,
            escape(&ctx.context.skipped.join("; "))
        );
    }
    out
}

/// Each crew's label colour, named in its colour; unscheduled days in grey.
fn crew_key(ctx: &Orders) -> String {
    let mut crews: Vec<Option<usize>> = ctx.schedule.days.iter().map(|d| d.crew).collect();
    crews.sort();
    crews.dedup();
    let mut s = String::new();
    for c in crews {
        let name = match c {
            Some(c) => format!("crew {c}"),
            None => "unscheduled".to_string(),
        };
        let _ = write!(s, r#" <b style="color:{}">{name}</b>"#, crew_colour(c));
    }
    s
}

/// The road lines inside the frame, as SVG polylines (thin grey), drawn under the route.
fn roads_in(ctx: &Orders, f: &Frame) -> String {
    let TravelModel::Roads(roads) = ctx.travel else {
        return String::new();
    };
    let (x0, y0, x1, y1) = f.extent();
    let mut svg = String::from(r##"<g fill="none" stroke="#b0b0b0" stroke-width="1">"##);
    for line in &roads.lines {
        let inside = line.windows(2).any(|w| {
            let (lx, hx) = (w[0].0.min(w[1].0), w[0].0.max(w[1].0));
            let (ly, hy) = (w[0].1.min(w[1].1), w[0].1.max(w[1].1));
            hx >= x0 && lx <= x1 && hy >= y0 && ly <= y1
        });
        if !inside {
            continue;
        }
        let points: Vec<String> = line
            .iter()
            .map(|&(x, y)| {
                let (px, py) = f.px(x, y);
                format!("{px:.1},{py:.1}")
            })
            .collect();
        let _ = write!(svg, r#"<polyline points="{}"/>"#, points.join(" "));
    }
    svg.push_str("</g>");
    svg
}

/// The map's height on a day of `stops` stops, in CSS pixels: smaller on dense days so the
/// page holds the table (common practice for a field sheet: the table matters more than the
/// map once the stops are many).
pub(super) fn map_height(stops: usize) -> f64 {
    match stops {
        0..=3 => 210.0,
        4..=6 => 190.0,
        7..=9 => 165.0,
        _ => 140.0,
    }
}

pub(super) fn day_map(ctx: &Orders, d: &CrewDay) -> String {
    let depot = ctx.schedule.depot;
    let geoms: Vec<&Geometry<f64>> = d
        .stops
        .iter()
        .filter_map(|s| ctx.outlines.get(&s.patch_id))
        .collect();
    // The whole route is on the map: a drive round a river to its bridge leaves the stops' box.
    let mut points: Vec<(f64, f64)> = d.route.clone();
    points.extend(d.stops.iter().map(|s| (s.x, s.y)));
    points.push(depot);
    let Some(b) = map::bounds(&geoms, &points) else {
        return String::new();
    };
    let f = Frame::fit(b, 720.0, map_height(d.stops.len()), 300.0);
    let mut svg = format!(
        r##"<svg xmlns="http://www.w3.org/2000/svg" width="{:.0}" height="{:.0}" viewBox="0 0 {:.0} {:.0}" role="img" aria-label="route map"><rect width="100%" height="100%" fill="#fafafa" stroke="#666"/>"##,
        f.width, f.height, f.width, f.height
    );
    svg.push_str(&roads_in(ctx, &f));
    // A whole patch in blue; of a split patch, today's strip in blue and the rest faint.
    for s in &d.stops {
        let Some(g) = ctx.outlines.get(&s.patch_id) else {
            continue;
        };
        match ctx.strips.get(&(s.patch_id.clone(), s.part)) {
            Some(strip) => {
                let _ = write!(
                    svg,
                    r##"<path d="{}" fill="#eef3f7" stroke="#999" stroke-width="0.5" stroke-dasharray="3,2"/><path d="{}" fill="#9ecae1" stroke="#000" stroke-width="1.2" class="part"><title>{} part {} of {}: {}</title></path>"##,
                    f.path(g),
                    f.path(&Geometry::MultiPolygon(strip.outline.clone())),
                    escape(&s.patch_id),
                    s.part,
                    s.parts,
                    escape(&strip.words)
                );
            }
            None => {
                let _ = write!(
                    svg,
                    r##"<path d="{}" fill="#9ecae1" stroke="#333" stroke-width="0.6"/>"##,
                    f.path(g)
                );
            }
        }
    }
    let line: Vec<String> = route_line(d)
        .0
        .iter()
        .map(|c| {
            let (x, y) = f.px(c.x, c.y);
            format!("{x:.1},{y:.1}")
        })
        .collect();
    let _ = write!(
        svg,
        r##"<polyline points="{}" fill="none" stroke="#000" stroke-width="1.4"{}/>"##,
        line.join(" "),
        // Solid along roads; dashed for straight lines, which no crew drives.
        match ctx.travel {
            TravelModel::Roads(_) => "",
            TravelModel::StraightLine { .. } => r#" stroke-dasharray="5,3""#,
        }
    );
    let (dx, dy) = f.px(depot.0, depot.1);
    let _ = write!(
        svg,
        r##"<rect x="{:.1}" y="{:.1}" width="10" height="10" fill="#000"/><text x="{:.1}" y="{:.1}" font-size="10">depot</text>"##,
        dx - 5.0,
        dy - 5.0,
        dx + 8.0,
        dy + 4.0
    );
    // Each stop's patch and plan priority beside its numbered circle, kept off the others.
    let mut markers: Vec<Boxed> = d
        .stops
        .iter()
        .map(|s| {
            let (x, y) = f.px(s.x, s.y);
            Boxed::around(x, y, 8.5)
        })
        .collect();
    markers.push(Boxed {
        x0: dx - 5.0,
        y0: dy - 6.0,
        x1: dx + 40.0,
        y1: dy + 5.0,
    });
    markers.extend(furniture(&f));
    let texts: Vec<String> = d
        .stops
        .iter()
        .map(|s| {
            let prio = ctx.folder.planned[s.row].priority;
            if s.parts > 1 {
                format!("{} #{prio} part {}/{}", s.patch_id, s.part, s.parts)
            } else {
                format!("{} #{prio}", s.patch_id)
            }
        })
        .collect();
    let wanted: Vec<Wanted> = d
        .stops
        .iter()
        .zip(&texts)
        .map(|(s, t)| {
            let (x, y) = f.px(s.x, s.y);
            Wanted {
                x,
                y,
                width: text_width(t.chars().count(), 8.5),
                height: 10.0,
            }
        })
        .collect();
    let placed = labels::place(&wanted, &markers, f.width, f.height);
    let colour = crew_colour(d.crew);
    svg.push_str(&draw_labels(
        &placed,
        d.stops
            .iter()
            .zip(&texts)
            .map(|(s, t)| (s.patch_id.as_str(), t.as_str(), colour)),
        8.5,
    ));
    for (k, s) in d.stops.iter().enumerate() {
        let (x, y) = f.px(s.x, s.y);
        let _ = write!(
            svg,
            r##"<circle cx="{x:.1}" cy="{y:.1}" r="8" fill="#fff" stroke="#000" stroke-width="1.2"/><text x="{x:.1}" y="{:.1}" font-size="9" text-anchor="middle" font-weight="bold">{}</text>"##,
            y + 3.2,
            k + 1
        );
    }
    svg.push_str(&f.scale_bar());
    svg.push_str(&f.north_arrow());
    svg.push_str("</svg>");
    svg
}
