//! Map labels that avoid each other: greedy placement over candidate boxes around each point.
//!
//! Labels are placed one by one in the order given (plan priority first). Each label tries eight
//! directions (E, NE, N, NW, W, SW, S, SE) on rings of growing distance from its point; the first
//! box that overlaps no placed label, no marker and stays inside the map wins. A label pushed
//! beyond the first ring gets a leader line back to its point. The search is bounded
//! (`RINGS` x 8 candidates per label): when every candidate collides, the one with the least
//! overlap is taken, so every label is drawn and placement always ends.
//!
//! # Units
//! SVG pixels of the map frame (y down).

/// An axis-aligned box in map pixels.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) struct Boxed {
    pub x0: f64,
    pub y0: f64,
    pub x1: f64,
    pub y1: f64,
}

impl Boxed {
    /// A square of half-side `r` around a point (a marker to keep labels off).
    pub fn around(x: f64, y: f64, r: f64) -> Boxed {
        Boxed {
            x0: x - r,
            y0: y - r,
            x1: x + r,
            y1: y + r,
        }
    }
    fn overlap(&self, o: &Boxed) -> f64 {
        let w = self.x1.min(o.x1) - self.x0.max(o.x0);
        let h = self.y1.min(o.y1) - self.y0.max(o.y0);
        if w > 0.0 && h > 0.0 { w * h } else { 0.0 }
    }
    /// The point of the box nearest to (x, y): where a leader line ends.
    fn nearest(&self, x: f64, y: f64) -> (f64, f64) {
        (x.clamp(self.x0, self.x1), y.clamp(self.y0, self.y1))
    }
}

/// A label to place: its point and the size of its text.
pub(super) struct Wanted {
    pub x: f64,
    pub y: f64,
    pub width: f64,
    pub height: f64,
}

/// Where a label went: the text's left baseline point, its box, and the leader when pushed away.
#[derive(Clone, Debug, PartialEq)]
pub(super) struct Placed {
    pub text_x: f64,
    pub text_y: f64,
    pub bounds: Boxed,
    pub leader: Option<((f64, f64), (f64, f64))>,
}

/// Rings of candidates: gap from the point in pixels.
const RINGS: [f64; 5] = [3.0, 12.0, 22.0, 34.0, 48.0];
/// Directions tried on each ring, in order of preference (right of the point first).
const DIRECTIONS: [(f64, f64); 8] = [
    (1.0, -1.0),
    (1.0, 0.0),
    (0.0, -1.0),
    (-1.0, -1.0),
    (-1.0, 0.0),
    (-1.0, 1.0),
    (0.0, 1.0),
    (1.0, 1.0),
];

/// Text width estimate for a bold sans-serif label of `chars` characters at `font_px`.
pub(super) fn text_width(chars: usize, font_px: f64) -> f64 {
    chars as f64 * font_px * 0.62 + 2.0
}

/// Place every label inside a `width` x `height` map, avoiding `markers` and each other.
pub(super) fn place(wanted: &[Wanted], markers: &[Boxed], width: f64, height: f64) -> Vec<Placed> {
    let mut taken: Vec<Boxed> = Vec::with_capacity(wanted.len());
    let mut out = Vec::with_capacity(wanted.len());
    for w in wanted {
        let mut best: Option<(f64, Boxed, usize)> = None;
        'search: for (ring, gap) in RINGS.iter().enumerate() {
            for &(dx, dy) in &DIRECTIONS {
                let x0 = match dx {
                    d if d > 0.0 => w.x + gap,
                    d if d < 0.0 => w.x - gap - w.width,
                    _ => w.x - w.width / 2.0,
                };
                let y0 = match dy {
                    d if d > 0.0 => w.y + gap,
                    d if d < 0.0 => w.y - gap - w.height,
                    _ => w.y - w.height / 2.0,
                };
                let b = Boxed {
                    x0,
                    y0,
                    x1: x0 + w.width,
                    y1: y0 + w.height,
                };
                let outside = (0.0 - b.x0).max(0.0)
                    + (b.x1 - width).max(0.0)
                    + (0.0 - b.y0).max(0.0)
                    + (b.y1 - height).max(0.0);
                let cost: f64 = taken.iter().chain(markers).map(|o| b.overlap(o)).sum::<f64>()
                    + outside * 100.0
                    // A far label costs a little: nearer wins among equal overlaps.
                    + ring as f64 * 0.01;
                if best.as_ref().is_none_or(|(c, _, _)| cost < *c) {
                    best = Some((cost, b, ring));
                }
                if cost < 1.0 {
                    break 'search;
                }
            }
        }
        let Some((_, b, ring)) = best else { continue };
        taken.push(b);
        out.push(Placed {
            text_x: b.x0 + 1.0,
            text_y: b.y1 - w.height * 0.2,
            bounds: b,
            leader: (ring > 0).then(|| ((w.x, w.y), b.nearest(w.x, w.y))),
        });
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn wanted(x: f64, y: f64) -> Wanted {
        Wanted {
            x,
            y,
            width: 14.0,
            height: 10.0,
        }
    }

    /// Common practice (greedy candidate-position labelling): ten labels on one crowded spot all
    /// get boxes, none overlapping, the displaced ones with leaders.
    #[test]
    fn crowded_labels_do_not_overlap() {
        let w: Vec<Wanted> = (0..10).map(|k| wanted(200.0 + k as f64, 100.0)).collect();
        let p = place(&w, &[], 400.0, 300.0);
        assert_eq!(p.len(), 10);
        for i in 0..p.len() {
            for j in 0..i {
                assert_eq!(p[i].bounds.overlap(&p[j].bounds), 0.0, "{i} and {j}");
            }
        }
        assert!(p[0].leader.is_none());
        assert!(p.iter().any(|l| l.leader.is_some()));
    }

    /// Common practice: a label at the map's right edge goes to the left of its point.
    #[test]
    fn labels_stay_inside_the_map() {
        let p = place(&[wanted(398.0, 150.0)], &[], 400.0, 300.0);
        assert!(p[0].bounds.x1 <= 400.0 && p[0].bounds.x0 >= 0.0);
    }

    /// Common practice: more labels than free space still end (bounded search), each drawn once.
    #[test]
    fn hopeless_crowding_still_ends() {
        let w: Vec<Wanted> = (0..300).map(|_| wanted(20.0, 20.0)).collect();
        let p = place(&w, &[Boxed::around(20.0, 20.0, 5.0)], 40.0, 40.0);
        assert_eq!(p.len(), 300);
    }
}
