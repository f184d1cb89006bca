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
    let (width, height) = (860.0, 540.0);
    let (left, right, top, bottom) = (86.0, 28.0, 58.0, 150.0);
    let (pw, ph) = (width - left - right, height - top - bottom);
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
            y.round()
        );
        y += ystep;
    }
    let xstep = tick_step(x1 - x0, 6);
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
    // Markers.
    for (k, m) in markers.iter().enumerate() {
        let px = sx(m.x);
        let (dash, w) = if m.strong { ("6 3", 1.6) } else { ("1 3", 1.2) };
        let _ = writeln!(
            svg,
            r#"<line class="marker" x1="{px:.1}" y1="{top}" x2="{px:.1}" y2="{:.1}" stroke="black" stroke-width="{w}" stroke-dasharray="{dash}"/>"#,
            top + ph
        );
        let ly = top + 16.0 + 15.0 * (k % 4) as f64;
        let _ = writeln!(
            svg,
            r#"<text x="{:.1}" y="{ly:.1}" font-size="12" font-weight="{}">{}</text>"#,
            px + 4.0,
            if m.strong { "bold" } else { "normal" },
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
    }
}
