//! What a budget curve says: the reduction at each level, the knee (Kneedle), the levels
//! reaching 50/80/90 % of the attainable reduction and the slope between neighbouring levels.
//!
//! # Units
//! Reductions in percent of R before treatment; slopes in percentage points per 1,000 of
//! catalogue currency.

use super::{Point, first_reaching, kneedle};

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
