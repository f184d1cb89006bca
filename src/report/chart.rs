//! Charts as plain SVG (no plotting library): lines told apart by dash pattern and marker
//! shape as well as colour, so a chart stays readable printed in black and white.

use std::fmt::Write as _;

/// One line of a chart.
#[derive(Debug, Clone)]
pub struct Series {
    pub id: String,
    pub label: String,
    pub points: Vec<(f64, f64)>,
    pub style: Style,
}

/// How a series is drawn.
#[derive(Debug, Clone, Copy)]
pub enum Style {
    /// Thick solid black line with filled circles.
    Main,
    /// Dashed dark grey line with open squares.
    Dashed,
    /// Dotted grey line with open triangles.
    Dotted,
    /// Dash-dot grey line with open diamonds.
    DashDot,
    /// Long-dash light line with crosses.
    LongDash,
}

impl Style {
    fn stroke(self) -> (&'static str, f64, &'static str) {
        match self {
            Style::Main => ("#000000", 2.6, ""),
            Style::Dashed => ("#404040", 1.8, "8 5"),
            Style::Dotted => ("#555555", 1.8, "2 4"),
            Style::DashDot => ("#606060", 1.6, "9 4 2 4"),
            Style::LongDash => ("#777777", 1.6, "14 6"),
        }
    }

    fn marker(self, x: f64, y: f64) -> String {
        let (colour, _, _) = self.stroke();
        match self {
            Style::Main => format!(r#"<circle cx="{x:.1}" cy="{y:.1}" r="3.6" fill="{colour}"/>"#),
            Style::Dashed => format!(
                r#"<rect x="{:.1}" y="{:.1}" width="7" height="7" fill="white" stroke="{colour}" stroke-width="1.4"/>"#,
                x - 3.5,
                y - 3.5
            ),
            Style::Dotted => format!(
                r#"<polygon points="{:.1},{:.1} {:.1},{:.1} {:.1},{:.1}" fill="white" stroke="{colour}" stroke-width="1.4"/>"#,
                x,
                y - 4.5,
                x - 4.2,
                y + 3.2,
                x + 4.2,
                y + 3.2
            ),
            Style::DashDot => format!(
                r#"<polygon points="{:.1},{:.1} {:.1},{:.1} {:.1},{:.1} {:.1},{:.1}" fill="white" stroke="{colour}" stroke-width="1.4"/>"#,
                x,
                y - 4.5,
                x + 4.5,
                y,
                x,
                y + 4.5,
                x - 4.5,
                y
            ),
            Style::LongDash => format!(
                r#"<path d="M{:.1},{:.1} L{:.1},{:.1} M{:.1},{:.1} L{:.1},{:.1}" stroke="{colour}" stroke-width="1.6"/>"#,
                x - 3.5,
                y - 3.5,
                x + 3.5,
                y + 3.5,
                x - 3.5,
                y + 3.5,
                x + 3.5,
                y - 3.5
            ),
        }
    }
}

/// A vertical marker line with a label (e.g. the knee).
#[derive(Debug, Clone)]
pub struct Marker {
    pub x: f64,
    pub label: String,
    pub strong: bool,
}

/// Height of one row of marker labels above the plot, and their font size (px).
const LABEL_ROW: f64 = 17.0;
const LABEL_FONT: f64 = 12.0;

/// A generous width of `text` at `LABEL_FONT` in Helvetica/Arial: 0.62 em a character (the
/// widest digits and capitals are about 0.56-0.67 em; common practice for text boxes without a
/// font engine).
pub fn label_width(text: &str) -> f64 {
    text.chars().count() as f64 * 0.62 * LABEL_FONT
}

/// For each marker: the label's x, its row above the plot, and whether it ends at x
/// (text-anchor end) rather than starting there.
fn place_labels(
    markers: &[Marker],
    sx: &dyn Fn(f64) -> f64,
    right_edge: f64,
) -> Vec<(f64, usize, bool)> {
    // A label's side: it starts at its line and runs right, or (near the right edge, where it
    // would not fit) ends at its line and runs left.
    let side = |k: usize, end_anchored: bool| {
        let px = sx(markers[k].x);
        let w = label_width(&markers[k].label);
        if end_anchored {
            (px - 4.0 - w, px - 4.0)
        } else {
            (px + 4.0, px + 4.0 + w)
        }
    };
    let n = markers.len();
    let mut end_anchored: Vec<bool> = (0..n).map(|k| side(k, false).1 > right_edge).collect();
    let spans = |a: usize, b: usize, ends: &[bool]| {
        let (start, end) = side(a, ends[a]);
        let x = sx(markers[b].x);
        a != b && x >= start - 3.0 && x <= end + 3.0
    };
    let fits = |k: usize, e: bool| {
        let (start, end) = side(k, e);
        start >= 0.0 && end <= right_edge
    };
    // A label must sit above every line it spans. Two labels that span each other's lines
    // cannot both do so: one turns to its other side where it fits there, the one running
    // right first; each label turns at most once, so the passes end.
    let mut turned = vec![false; n];
    loop {
        let mut any = false;
        for a in 0..n {
            for b in 0..n {
                if !(spans(a, b, &end_anchored) && spans(b, a, &end_anchored)) {
                    continue;
                }
                let (first, second) = if end_anchored[a] { (b, a) } else { (a, b) };
                for k in [first, second] {
                    if !turned[k] && fits(k, !end_anchored[k]) {
                        end_anchored[k] = !end_anchored[k];
                        turned[k] = true;
                        any = true;
                        break;
                    }
                }
            }
        }
        if !any {
            break;
        }
    }
    // Order: a label after the lines it spans (Kahn's topological order), rightmost first among
    // those ready. With every label running rightwards this is right to left: a label spans
    // only lines to its right, placed before it, so no line has to rise through a label placed
    // before it. Labels left in a cycle follow, right to left.
    let mut order: Vec<usize> = Vec::with_capacity(n);
    let mut done = vec![false; n];
    while order.len() < n {
        let ready = (0..n)
            .filter(|&a| !done[a])
            .filter(|&a| (0..n).all(|b| done[b] || !spans(a, b, &end_anchored)))
            .max_by(|&a, &b| markers[a].x.total_cmp(&markers[b].x).then(b.cmp(&a)));
        let next = ready.unwrap_or_else(|| {
            (0..n)
                .filter(|&a| !done[a])
                .max_by(|&a, &b| markers[a].x.total_cmp(&markers[b].x).then(b.cmp(&a)))
                .unwrap()
        });
        done[next] = true;
        order.push(next);
    }
    let mut taken: Vec<Vec<(f64, f64)>> = Vec::new();
    let mut leaders: Vec<(f64, usize)> = Vec::new();
    let mut placed = vec![(0.0, 0, false); n];
    for &k in &order {
        let px = sx(markers[k].x);
        let (start, end) = side(k, end_anchored[k]);
        // Row 0 is nearest the plot; the marker's line rises to its label's row, so no label
        // in a row below may span the line, and the label may not span a line that rises
        // past its row.
        let free = |r: usize| {
            taken.get(r).is_none_or(|boxes: &Vec<(f64, f64)>| {
                boxes
                    .iter()
                    .all(|&(a, b)| end + 6.0 <= a || start >= b + 6.0)
            }) && taken
                .iter()
                .take(r)
                .flatten()
                .all(|&(a, b)| px < a - 3.0 || px > b + 3.0)
                && leaders
                    .iter()
                    .all(|&(x, row)| row <= r || x < start - 3.0 || x > end + 3.0)
        };
        // Bounded: a label whose line is spanned in every row gets a new top row (no endless
        // search when the rows below are blocked).
        let row = (0..=n).find(|&r| free(r)).unwrap_or(taken.len());
        leaders.push((px, row));
        if taken.len() <= row {
            taken.resize(row + 1, Vec::new());
        }
        taken[row].push((start, end));
        placed[k] = (
            if end_anchored[k] { px - 4.0 } else { px + 4.0 },
            row,
            end_anchored[k],
        );
    }
    placed
}

/// Decimals a tick label needs to show ticks `step` apart distinctly.
fn step_decimals(step: f64) -> usize {
    if step >= 1.0 || !(step > 0.0) {
        0
    } else {
        (-step.log10() - 1e-9).ceil() as usize
    }
}

/// Escape text for XML.
pub fn escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// A "nice" tick step for a range, 1, 2 or 5 times a power of ten.
fn tick_step(range: f64, target: usize) -> f64 {
    if range <= 0.0 {
        return 1.0;
    }
    let raw = range / target as f64;
    let power = 10f64.powf(raw.log10().floor());
    let m = raw / power;
    power
        * if m <= 1.0 {
            1.0
        } else if m <= 2.0 {
            2.0
        } else if m <= 5.0 {
            5.0
        } else {
            10.0
        }
}

pub use crate::report::format::thousands;

/// A line chart: title, axis labels, series, vertical markers; y from 0 to `y_max`.
pub fn line_chart(
    title: &str,
    x_label: &str,
    y_label: &str,
    x_format: &dyn Fn(f64) -> String,
    y_max: f64,
    series: &[Series],
    markers: &[Marker],
) -> String {
    fan_chart(
        title,
        x_label,
        y_label,
        x_format,
        y_max,
        series,
        markers,
        &[],
    )
}

/// A line chart with a shaded band (x, low, high) behind each series that has one (a fan
/// chart); bands are light and outlined in the series' dash so they survive black and white.
pub fn fan_chart(
    title: &str,
    x_label: &str,
    y_label: &str,
    x_format: &dyn Fn(f64) -> String,
    y_max: f64,
    series: &[Series],
    markers: &[Marker],
    bands: &[Vec<(f64, f64, f64)>],
) -> String {
    let width = 860.0;
    let (left, right, bottom) = (86.0, 28.0, 150.0);
    let pw = width - left - right;
    let xs = series.iter().flat_map(|s| s.points.iter().map(|p| p.0));
    let (mut x0, mut x1) = (f64::INFINITY, f64::NEG_INFINITY);
    for x in xs {
        x0 = x0.min(x);
        x1 = x1.max(x);
    }
    if !x0.is_finite() || x1 <= x0 {
        x0 = 0.0;
        x1 = x1.max(1.0);
    }
    // Marker labels sit in rows above the plot, where no line of the chart runs: each label
    // starts at its marker's x (or ends there near the right edge) and takes the first row in
    // which it overlaps no other label.
    let placed = place_labels(
        markers,
        &|x| left + (x - x0) / (x1 - x0) * pw,
        width - right,
    );
    let rows = placed.iter().map(|p| p.1 + 1).max().unwrap_or(0);
    let top = 58.0 + LABEL_ROW * rows as f64;
    let height = 540.0 + LABEL_ROW * rows as f64;
    let ph = height - top - bottom;
    let y1 = if y_max > 0.0 { y_max } else { 1.0 };
    let sx = |x: f64| left + (x - x0) / (x1 - x0) * pw;
    let sy = |y: f64| top + ph - (y / y1) * ph;
    let mut svg = String::new();
    let _ = writeln!(
        svg,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" viewBox="0 0 {width} {height}" font-family="Helvetica, Arial, sans-serif" font-size="13">"#
    );
    let _ = writeln!(svg, r#"<title>{}</title>"#, escape(title));
    let _ = writeln!(
        svg,
        r#"<rect width="{width}" height="{height}" fill="white"/>"#
    );
    let _ = writeln!(
        svg,
        r#"<text x="{}" y="30" text-anchor="middle" font-size="17" font-weight="bold">{}</text>"#,
        width / 2.0,
        escape(title)
    );
    // Grid and ticks.
    let ystep = tick_step(y1, 5);
    let mut y = 0.0;
    while y <= y1 + 1e-9 {
        let py = sy(y);
        let _ = writeln!(
            svg,
            r##"<line x1="{left}" y1="{py:.1}" x2="{:.1}" y2="{py:.1}" stroke="#dddddd"/>"##,
            left + pw
        );
        let _ = writeln!(
            svg,
            r#"<text x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"#,
            left - 8.0,
            py + 4.0,
            crate::report::format::fixed(y, step_decimals(ystep))
        );
        y += ystep;
    }
    // Whole-number x (seasons, years) never gets a tick between two whole numbers: a step
    // below 1 would print "1, 2, 2, 2, 3" through `x_format`.
    let whole_x = series
        .iter()
        .flat_map(|s| s.points.iter())
        .all(|p| p.0.fract() == 0.0);
    let xstep = tick_step(x1 - x0, 6);
    let xstep = if whole_x { xstep.max(1.0) } else { xstep };
    let mut x = (x0 / xstep).ceil() * xstep;
    while x <= x1 + 1e-9 {
        let px = sx(x);
        let _ = writeln!(
            svg,
            r##"<line x1="{px:.1}" y1="{top}" x2="{px:.1}" y2="{:.1}" stroke="#eeeeee"/>"##,
            top + ph
        );
        let _ = writeln!(
            svg,
            r#"<text x="{px:.1}" y="{:.1}" text-anchor="middle">{}</text>"#,
            top + ph + 18.0,
            escape(&x_format(x))
        );
        x += xstep;
    }
    let _ = writeln!(
        svg,
        r#"<rect x="{left}" y="{top}" width="{pw}" height="{ph}" fill="none" stroke="black"/>"#
    );
    let _ = writeln!(
        svg,
        r#"<text x="{:.1}" y="{:.1}" text-anchor="middle">{}</text>"#,
        left + pw / 2.0,
        top + ph + 40.0,
        escape(x_label)
    );
    let _ = writeln!(
        svg,
        r#"<text transform="translate(24 {:.1}) rotate(-90)" text-anchor="middle">{}</text>"#,
        top + ph / 2.0,
        escape(y_label)
    );
    // Markers: the line from its label's row down through the plot, the label beside its top.
    for (m, &(lx, row, anchor_end)) in markers.iter().zip(&placed) {
        let px = sx(m.x);
        let (dash, w) = if m.strong { ("6 3", 1.6) } else { ("1 3", 1.2) };
        let ly = top - 6.0 - LABEL_ROW * row as f64;
        let _ = writeln!(
            svg,
            r#"<line class="marker" x1="{px:.1}" y1="{:.1}" x2="{px:.1}" y2="{:.1}" stroke="black" stroke-width="{w}" stroke-dasharray="{dash}"/>"#,
            ly - LABEL_FONT,
            top + ph
        );
        let _ = writeln!(
            svg,
            r#"<text class="marker-label" x="{lx:.1}" y="{ly:.1}" font-size="{LABEL_FONT}" font-weight="{}"{}>{}</text>"#,
            if m.strong { "bold" } else { "normal" },
            if anchor_end {
                r#" text-anchor="end""#
            } else {
                ""
            },
            escape(&m.label)
        );
    }
    // Bands, behind the lines.
    for (s, band) in series.iter().zip(bands) {
        if band.is_empty() {
            continue;
        }
        let (colour, _, dash) = s.style.stroke();
        let upper = band
            .iter()
            .map(|&(x, _, hi)| format!("{:.1},{:.1}", sx(x), sy(hi)));
        let lower = band
            .iter()
            .rev()
            .map(|&(x, lo, _)| format!("{:.1},{:.1}", sx(x), sy(lo)));
        let points: Vec<String> = upper.chain(lower).collect();
        let _ = writeln!(
            svg,
            r#"<polygon class="band" data-series="{}" points="{}" fill="{colour}" fill-opacity="0.10" stroke="{colour}" stroke-opacity="0.6" stroke-width="0.8" stroke-dasharray="{}"/>"#,
            escape(&s.id),
            points.join(" "),
            if dash.is_empty() { "none" } else { dash }
        );
    }
    // Series.
    for s in series {
        let (colour, w, dash) = s.style.stroke();
        let path: Vec<String> = s
            .points
            .iter()
            .filter(|p| p.1.is_finite())
            .map(|&(x, y)| format!("{:.1},{:.1}", sx(x), sy(y)))
            .collect();
        let dash_attr = if dash.is_empty() {
            String::new()
        } else {
            format!(r#" stroke-dasharray="{dash}""#)
        };
        let _ = writeln!(
            svg,
            r#"<g id="{}"><polyline points="{}" fill="none" stroke="{colour}" stroke-width="{w}"{dash_attr}/>"#,
            escape(&s.id),
            path.join(" ")
        );
        for &(x, y) in s.points.iter().filter(|p| p.1.is_finite()) {
            svg.push_str(&s.style.marker(sx(x), sy(y)));
        }
        svg.push_str("</g>\n");
    }
    // Legend below the plot, two columns.
    for (k, s) in series.iter().enumerate() {
        let (colour, w, dash) = s.style.stroke();
        let lx = left + (k % 2) as f64 * (pw / 2.0);
        let ly = top + ph + 66.0 + 20.0 * (k / 2) as f64;
        let dash_attr = if dash.is_empty() {
            String::new()
        } else {
            format!(r#" stroke-dasharray="{dash}""#)
        };
        let _ = writeln!(
            svg,
            r#"<line x1="{lx:.1}" y1="{ly:.1}" x2="{:.1}" y2="{ly:.1}" stroke="{colour}" stroke-width="{w}"{dash_attr}/>"#,
            lx + 40.0
        );
        svg.push_str(&s.style.marker(lx + 20.0, ly));
        let _ = writeln!(
            svg,
            r#"<text x="{:.1}" y="{:.1}">{}</text>"#,
            lx + 50.0,
            ly + 4.0,
            escape(&s.label)
        );
    }
    svg.push_str("</svg>\n");
    svg
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thousands_separators_and_ticks() {
        assert_eq!(thousands(1234567.4), "1,234,567");
        assert_eq!(thousands(999.0), "999");
        assert_eq!(thousands(-45000.0), "-45,000");
        assert_eq!(tick_step(100.0, 5), 20.0);
        assert_eq!(tick_step(45000.0, 6), 10000.0);
        assert_eq!(step_decimals(0.5), 1);
        assert_eq!(step_decimals(0.02), 2);
        assert_eq!(step_decimals(5.0), 0);
    }

    // Issue 22: a three-season chart read "1, 2, 2, 2, 3" on its axis.
    #[test]
    fn whole_number_axes_tick_whole_numbers() {
        let series = [Series {
            id: "a".into(),
            label: "a".into(),
            points: vec![(1.0, 3.0), (2.0, 2.0), (3.0, 1.0)],
            style: Style::Main,
        }];
        let svg = line_chart(
            "t",
            "season",
            "y",
            &|x| format!("{x:.0}"),
            3.3,
            &series,
            &[],
        );
        let doc = roxmltree::Document::parse(&svg).unwrap();
        let below: Vec<&str> = doc
            .descendants()
            .filter(|n| n.attribute("text-anchor") == Some("middle"))
            .filter_map(|n| n.text())
            .filter(|t| t.chars().all(|c| c.is_ascii_digit()))
            .collect();
        assert_eq!(below, ["1", "2", "3"], "{svg}");
    }
}
