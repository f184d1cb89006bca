//! Plain SVG maps for printed reports: projected coordinates (metres) drawn to scale, with a
//! scale bar and a grid-north arrow. No tiles, no network: everything is inline.

use std::fmt::Write as _;

use geo::{BoundingRect, Geometry, Rect};

use crate::report::chart::escape;

/// A map frame: a projected rectangle drawn into `width` x `height` pixels at one scale.
#[derive(Debug, Clone, Copy)]
pub struct Frame {
    min_x: f64,
    max_y: f64,
    /// Pixels per metre.
    scale: f64,
    pub width: f64,
    pub height: f64,
    pub margin: f64,
}

impl Frame {
    /// Fit `bounds` (grown by 5 % each side, at least `min_span_m` across) into `width` pixels
    /// wide and at most `max_height` high, keeping one scale for both axes.
    pub fn fit(bounds: Rect<f64>, width: f64, max_height: f64, min_span_m: f64) -> Frame {
        let margin = 8.0;
        let (mut w, mut h) = (bounds.width(), bounds.height());
        let c = bounds.center();
        w = w.max(min_span_m) * 1.1;
        h = h.max(min_span_m) * 1.1;
        let scale = ((width - 2.0 * margin) / w).min((max_height - 2.0 * margin) / h);
        let height = (h * scale + 2.0 * margin).min(max_height);
        // Centre the content in the frame.
        let half_w = (width - 2.0 * margin) / scale / 2.0;
        let half_h = (height - 2.0 * margin) / scale / 2.0;
        Frame {
            min_x: c.x - half_w,
            max_y: c.y + half_h,
            scale,
            width,
            height,
            margin,
        }
    }

    /// The projected rectangle the frame shows: (min x, min y, max x, max y), metres.
    pub fn extent(&self) -> (f64, f64, f64, f64) {
        let max_x = self.min_x + (self.width - 2.0 * self.margin) / self.scale;
        let min_y = self.max_y - (self.height - 2.0 * self.margin) / self.scale;
        (self.min_x, min_y, max_x, self.max_y)
    }

    pub fn px(&self, x: f64, y: f64) -> (f64, f64) {
        (
            self.margin + (x - self.min_x) * self.scale,
            self.margin + (self.max_y - y) * self.scale,
        )
    }

    /// An SVG path `d` for a polygon or multipolygon (other geometries give an empty path).
    pub fn path(&self, g: &Geometry<f64>) -> String {
        let mut d = String::new();
        let mut ring = |ring: &geo::LineString<f64>| {
            for (k, c) in ring.0.iter().enumerate() {
                let (x, y) = self.px(c.x, c.y);
                let _ = write!(d, "{}{x:.1},{y:.1}", if k == 0 { "M" } else { "L" });
            }
            d.push('Z');
        };
        let mut polygon = |p: &geo::Polygon<f64>| {
            ring(p.exterior());
            for i in p.interiors() {
                ring(i);
            }
        };
        match g {
            Geometry::Polygon(p) => polygon(p),
            Geometry::MultiPolygon(mp) => mp.0.iter().for_each(&mut polygon),
            _ => {}
        }
        d
    }

    /// A scale bar of a round length (1, 2 or 5 x 10^k m) about a fifth of the frame wide,
    /// bottom left.
    pub fn scale_bar(&self) -> String {
        let target = (self.width - 2.0 * self.margin) / 5.0 / self.scale;
        let p = 10f64.powf(target.log10().floor());
        let length = [5.0, 2.0, 1.0]
            .into_iter()
            .map(|f| f * p)
            .find(|l| *l <= target)
            .unwrap_or(p);
        let label = if length >= 1000.0 {
            format!("{} km", length / 1000.0)
        } else {
            format!("{length} m")
        };
        let x0 = self.margin + 6.0;
        let y0 = self.height - self.margin - 6.0;
        let w = length * self.scale;
        format!(
            r##"<g class="scalebar" aria-label="scale bar {label}"><rect x="{x0:.1}" y="{:.1}" width="{:.1}" height="5" fill="#000"/><rect x="{:.1}" y="{:.1}" width="{:.1}" height="5" fill="#fff" stroke="#000" stroke-width="0.8"/><text x="{x0:.1}" y="{:.1}" font-size="10">0</text><text x="{:.1}" y="{:.1}" font-size="10" text-anchor="end">{}</text></g>"##,
            y0 - 5.0,
            w / 2.0,
            x0 + w / 2.0,
            y0 - 5.0,
            w / 2.0,
            y0 - 8.0,
            x0 + w,
            y0 - 8.0,
            escape(&label)
        )
    }

    /// A north arrow, top right. In a projected CRS this is grid north.
    pub fn north_arrow(&self) -> String {
        let x = self.width - self.margin - 14.0;
        let y = self.margin + 6.0;
        format!(
            r##"<g class="north" aria-label="north arrow (grid north)"><path d="M{x:.1},{y:.1} L{:.1},{:.1} L{x:.1},{:.1} L{:.1},{:.1} Z" fill="#000"/><text x="{x:.1}" y="{:.1}" font-size="11" text-anchor="middle" font-weight="bold">N</text></g>"##,
            x + 7.0,
            y + 22.0,
            y + 17.0,
            x - 7.0,
            y + 22.0,
            y + 34.0
        )
    }
}

/// Bounding rectangle of geometries and points together.
pub fn bounds(geometries: &[&Geometry<f64>], points: &[(f64, f64)]) -> Option<Rect<f64>> {
    let mut r: Option<(f64, f64, f64, f64)> = None;
    let mut add = |x0: f64, y0: f64, x1: f64, y1: f64| {
        r = Some(match r {
            None => (x0, y0, x1, y1),
            Some((a, b, c, d)) => (a.min(x0), b.min(y0), c.max(x1), d.max(y1)),
        });
    };
    for g in geometries {
        if let Some(b) = g.bounding_rect() {
            add(b.min().x, b.min().y, b.max().x, b.max().y);
        }
    }
    for &(x, y) in points {
        add(x, y, x, y);
    }
    r.map(|(a, b, c, d)| Rect::new((a, b), (c, d)))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn frame_keeps_one_scale_and_north_up() {
        let f = Frame::fit(Rect::new((0.0, 0.0), (2000.0, 1000.0)), 400.0, 400.0, 100.0);
        let (x0, y0) = f.px(0.0, 0.0);
        let (x1, y1) = f.px(2000.0, 1000.0);
        // North (larger y) is up (smaller pixel y); both axes at the same scale.
        assert!(y1 < y0);
        assert!(((x1 - x0) / 2000.0 - (y0 - y1) / 1000.0).abs() < 1e-9);
        assert!(x0 >= 0.0 && x1 <= 400.0 && y1 >= 0.0 && y0 <= f.height);
        // A 2.2 km wide frame at 384 px: a fifth is 440 m, so the bar is 200 m.
        assert!(f.scale_bar().contains("200 m"), "{}", f.scale_bar());
    }
}
