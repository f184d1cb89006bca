//! What a budget curve says: the reduction at each level, the knee (Kneedle), the levels
//! reaching 50/80/90 % of the attainable reduction and the slope between neighbouring levels.
//!
//! # Units
//! Reductions in percent of R before treatment; slopes in percentage points per 1,000 of
//! catalogue currency.

use crate::planning::curve::point::Point;

/// The reduction in percent of `risk_before` that leaves `risk_after`.
pub fn reduction(risk_after: f64, risk_before: f64) -> f64 {
    if risk_before > 0.0 {
        100.0 * (1.0 - risk_after / risk_before)
    } else {
        0.0
    }
}

/// Knee, thresholds and slopes of a curve.
pub struct Analysis {
    pub reductions: Vec<f64>,
    pub greedy: Vec<f64>,
    pub knee: Option<usize>,
    /// (fraction of the attainable reduction, first point reaching it).
    pub thresholds: Vec<(f64, Option<usize>)>,
    /// Slope to the previous point, percentage points per 1,000.
    pub marginal: Vec<Option<f64>>,
}

impl Analysis {
    pub fn new(points: &[Point], risk_before: f64) -> Analysis {
        let reductions: Vec<f64> = points
            .iter()
            .map(|p| reduction(p.risk_after, risk_before))
            .collect();
        let greedy = points
            .iter()
            .map(|p| reduction(p.greedy_risk_after, risk_before))
            .collect();
        let budgets: Vec<f64> = points.iter().map(|p| p.budget).collect();
        let knee = kneedle(&budgets, &reductions);
        let thresholds = [0.5, 0.8, 0.9]
            .iter()
            .map(|&f| (f, first_reaching(&reductions, f)))
            .collect();
        let marginal = (0..points.len())
            .map(|k| {
                if k == 0 || points[k].budget <= points[k - 1].budget {
                    None
                } else {
                    Some(
                        (reductions[k] - reductions[k - 1])
                            / (points[k].budget - points[k - 1].budget)
                            * 1000.0,
                    )
                }
            })
            .collect();
        Analysis {
            reductions,
            greedy,
            knee,
            thresholds,
            marginal,
        }
    }
}

/// Kneedle (Satopää, Albrecht, Irwin & Raghavan 2011), offline form for a concave increasing
/// curve: normalise x and y to [0, 1] and take the point where y_n - x_n is largest (the
/// earliest such point on ties). None for fewer than three points or a flat curve.
pub fn kneedle(xs: &[f64], ys: &[f64]) -> Option<usize> {
    if xs.len() < 3 || xs.len() != ys.len() {
        return None;
    }
    let (x0, x1) = (
        xs.iter().cloned().fold(f64::INFINITY, f64::min),
        xs.iter().cloned().fold(f64::NEG_INFINITY, f64::max),
    );
    let (y0, y1) = (
        ys.iter().cloned().fold(f64::INFINITY, f64::min),
        ys.iter().cloned().fold(f64::NEG_INFINITY, f64::max),
    );
    if x1 <= x0 || y1 <= y0 {
        return None;
    }
    let mut best: Option<(usize, f64)> = None;
    for k in 0..xs.len() {
        let d = (ys[k] - y0) / (y1 - y0) - (xs[k] - x0) / (x1 - x0);
        if best.is_none_or(|(_, b)| d > b + 1e-12) {
            best = Some((k, d));
        }
    }
    best.filter(|(_, d)| *d > 0.0).map(|(k, _)| k)
}

/// The first point whose reduction reaches `fraction` of the largest reduction on the curve.
pub fn first_reaching(reductions: &[f64], fraction: f64) -> Option<usize> {
    let top = reductions.iter().cloned().fold(0.0, f64::max);
    if top <= 0.0 {
        return None;
    }
    reductions.iter().position(|r| *r >= fraction * top - 1e-12)
}
