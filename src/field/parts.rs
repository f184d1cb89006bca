//! The parts of a split patch on the ground: the patch outline cut into strips across its long
//! axis, one strip per crew-day, each strip's area in proportion to the work of its part, the
//! first strip at the end nearest the depot (where the crew comes in) and the rest in the order
//! they are worked.
//!
//! The long axis is the long side of the outline's minimum rotated rectangle; each cut is a line
//! across it, placed by bisection so the area on the near side matches the cumulative share of
//! the work (to 1e-6 of the patch area). A patch given as a point (an inventory without
//! outlines) has no parts to draw: [`cut`] returns `None` and the outputs say so.

use geo::{
    Area, BooleanOps, Centroid, Coord, Geometry, LineString, MinimumRotatedRect, MultiPolygon,
    Polygon,
};

/// One strip of a split patch.
#[derive(Debug, Clone)]
pub struct Strip {
    pub outline: MultiPolygon<f64>,
    /// Where the strip lies, in words: "south end strip", "strip 2 from the south", "north end
    /// strip".
    pub words: String,
}

/// The outline as polygons, or `None` for a point or line (no area to cut).
pub fn polygons(g: &Geometry<f64>) -> Option<MultiPolygon<f64>> {
    match g {
        Geometry::Polygon(p) => Some(MultiPolygon(vec![p.clone()])),
        Geometry::MultiPolygon(m) => Some(m.clone()),
        _ => None,
    }
    .filter(|m| m.unsigned_area() > 0.0)
}

/// Eight-point compass name of a direction in the map's grid (y = grid north).
fn compass(dx: f64, dy: f64) -> &'static str {
    const NAMES: [&str; 8] = [
        "east",
        "northeast",
        "north",
        "northwest",
        "west",
        "southwest",
        "south",
        "southeast",
    ];
    let a = dy.atan2(dx).to_degrees().rem_euclid(360.0);
    NAMES[((a + 22.5) / 45.0) as usize % 8]
}

/// Cut `outline` into `shares.len()` strips across its long axis, strip k holding `shares[k]` of
/// the area (shares are normalised), starting from the end nearest `start`. `None` when the
/// outline has no area (a point inventory) or there is nothing to cut.
pub fn cut(outline: &Geometry<f64>, shares: &[f64], start: (f64, f64)) -> Option<Vec<Strip>> {
    let shape = polygons(outline)?;
    let total: f64 = shares.iter().sum();
    if shares.is_empty() || total <= 0.0 || shares.iter().any(|s| !(*s >= 0.0)) {
        return None;
    }
    let rect = shape.minimum_rotated_rect()?;
    let c: Vec<Coord<f64>> = rect.exterior().0.clone();
    if c.len() < 4 {
        return None;
    }
    let (a, b) = (c[1] - c[0], c[2] - c[1]);
    let len = |v: Coord<f64>| (v.x * v.x + v.y * v.y).sqrt();
    let long = if len(a) >= len(b) { a } else { b };
    let n = len(long);
    if n <= 0.0 {
        return None;
    }
    let mut u = Coord {
        x: long.x / n,
        y: long.y / n,
    };
    let centre = shape.centroid()?;
    let along = |p: Coord<f64>, u: Coord<f64>| (p.x - centre.x()) * u.x + (p.y - centre.y()) * u.y;
    // Begin at the end nearest the start point.
    if along(start.into(), u) > 0.0 {
        u = Coord { x: -u.x, y: -u.y };
    }
    let ts: Vec<f64> = shape
        .0
        .iter()
        .flat_map(|p| p.exterior().0.iter().copied())
        .map(|p| along(p, u))
        .collect();
    let lo = ts.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = ts.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let w = hi - lo;
    let perp = Coord { x: -u.y, y: u.x };
    // The slab lo' <= t <= hi' across the whole patch (wide enough to hold it).
    let reach = ts.iter().map(|t| t.abs()).fold(w, f64::max)
        + shape
            .0
            .iter()
            .flat_map(|p| p.exterior().0.iter())
            .map(|p| along(*p, perp).abs())
            .fold(0.0, f64::max)
        + 1.0;
    let slab = |t0: f64, t1: f64| -> MultiPolygon<f64> {
        let at = |t: f64, s: f64| Coord {
            x: centre.x() + u.x * t + perp.x * s,
            y: centre.y() + u.y * t + perp.y * s,
        };
        let ring = vec![
            at(t0, -reach),
            at(t1, -reach),
            at(t1, reach),
            at(t0, reach),
            at(t0, -reach),
        ];
        shape.intersection(&Polygon::new(LineString(ring), vec![]))
    };
    let area = shape.unsigned_area();
    let (below, above) = (lo - 1.0, hi + 1.0);
    let mut cuts = vec![below];
    let mut cumulative = 0.0;
    for s in &shares[..shares.len() - 1] {
        cumulative += s / total;
        let target = cumulative * area;
        let (mut a, mut b) = (lo, hi);
        for _ in 0..60 {
            let mid = 0.5 * (a + b);
            if slab(below, mid).unsigned_area() < target {
                a = mid;
            } else {
                b = mid;
            }
            if b - a <= 1e-9 * w.max(1.0) {
                break;
            }
        }
        cuts.push(0.5 * (a + b));
    }
    cuts.push(above);
    let (near, far) = (compass(-u.x, -u.y), compass(u.x, u.y));
    let parts = shares.len();
    Some(
        cuts.windows(2)
            .enumerate()
            .map(|(k, t)| Strip {
                outline: slab(t[0], t[1]),
                words: if k == 0 {
                    format!("{near} end strip")
                } else if k + 1 == parts {
                    format!("{far} end strip")
                } else {
                    format!("strip {} from the {near} end", k + 1)
                },
            })
            .collect(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use geo::polygon;

    #[test]
    fn a_rectangle_cuts_into_strips_of_the_asked_shares() {
        // 100 m east-west by 20 m: the strips run across the east-west axis.
        let g = Geometry::Polygon(
            polygon![(x: 0.0, y: 0.0), (x: 100.0, y: 0.0), (x: 100.0, y: 20.0), (x: 0.0, y: 20.0)],
        );
        let strips = cut(&g, &[1.0, 1.0, 2.0], (-50.0, 10.0)).unwrap();
        let areas: Vec<f64> = strips.iter().map(|s| s.outline.unsigned_area()).collect();
        // Exact areas by hand: 2000 m2 in shares 1:1:2.
        for (a, want) in areas.iter().zip([500.0, 500.0, 1000.0]) {
            assert!((a - want).abs() < 1e-3, "{areas:?}");
        }
        assert_eq!(strips[0].words, "west end strip");
        assert_eq!(strips[1].words, "strip 2 from the west end");
        assert_eq!(strips[2].words, "east end strip");
        // From the other side, the first strip is the east one.
        let strips = cut(&g, &[1.0, 3.0], (150.0, 10.0)).unwrap();
        assert_eq!(strips[0].words, "east end strip");
        assert!(strips[0].outline.centroid().unwrap().x() > 80.0);
    }

    #[test]
    fn a_point_has_no_strips() {
        let g = Geometry::Point(geo::Point::new(1.0, 2.0));
        assert!(cut(&g, &[1.0, 1.0], (0.0, 0.0)).is_none());
    }
}
