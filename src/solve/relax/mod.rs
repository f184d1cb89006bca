//! Proven lower bounds on the least achievable R for problems too large for the exact MIP:
//! message passing on the local-polytope LP (`message_passing`), and a convex reformulation of
//! R (`convex`, its shift from `lanczos`) solved by Frank–Wolfe and by its Lagrangian dual
//! (`lagrangian`). [`bound`] runs them in that order of need (a short Frank–Wolfe run first)
//! and keeps the best.
//!
//! # Units
//! As the optimiser: costs in catalogue currency, hours in crew hours, R in share-squared units.

pub mod convex;
pub mod dual;
pub mod lagrangian;
pub mod lanczos;
pub mod message_passing;

use std::time::Instant;

use crate::solve::problem::{Assignment, Problem};
use crate::solve::relax::convex::{FrankWolfe, Relaxed};
pub use crate::solve::relax::dual::Stop;
use crate::solve::relax::dual::log_enabled;
use crate::solve::relax::lagrangian::lagrangian;
use crate::solve::relax::message_passing::message_passing;

/// The relaxation's answer.
#[derive(Debug, Clone)]
pub struct Bound {
    /// A lower bound on the least achievable R (never above the best plan's risk).
    pub value: f64,
    /// Frank–Wolfe iterations run.
    pub iterations: usize,
    /// Connected components of the patch graph and the smallest shift t_c among them.
    pub components: usize,
    pub min_shift: f64,
    /// The relaxed solution's weight on each patch's choices (index = choice), for rounding.
    pub weights: Vec<Vec<f64>>,
    /// Per patch, per option (None = leave, Some(o) = choice o): a proven lower bound on R
    /// over the plans that give the patch that option (message passing's reduced costs, for
    /// variable fixing: `solve::fixing`). None when message passing did not run.
    pub forced: Option<Vec<Vec<(Option<usize>, f64)>>>,
    pub seconds: f64,
}

/// The message-passing bound alone (see [`message_passing`]), for tests and benchmarks: a
/// proven lower bound on the least achievable R, or None when the budget is infinite or a
/// patch has no option.
pub fn local_polytope_bound(problem: &Problem, incumbent: f64, stop: Stop) -> Option<f64> {
    let clock = Instant::now();
    let relaxed = Relaxed::new(problem);
    message_passing(&relaxed, incumbent, stop, &clock).map(|m| m.value)
}

/// The convex reformulation's bound alone, from `start` (any plan; the bound does not need it
/// feasible), by at most `iterations` Frank–Wolfe steps or
/// `seconds`, stopping early once it exceeds `cutoff` (for probing: `solve::fixing::probe`).
/// Not capped: it may lie above `cutoff`, which then bounds nothing better than it. None when
/// the problem has no feasible plan in its relaxation.
pub fn convex_bound(
    problem: &Problem,
    start: &Assignment,
    cutoff: f64,
    iterations: usize,
    seconds: f64,
) -> Option<f64> {
    let clock = Instant::now();
    let relaxed = Relaxed::new(problem);
    let mut fw = FrankWolfe::new(&relaxed, start);
    let stop = Stop {
        gap: -1e-8,
        max_iterations: iterations,
        time_limit_s: seconds,
    };
    if !fw.run(iterations, seconds, &clock, cutoff, stop) {
        return None;
    }
    Some(fw.best.max(0.0))
}

/// The relaxation bound, starting Frank–Wolfe from `start` (a feasible plan, e.g. greedy's)
/// and stopping when the bound is within `stop.gap` of `incumbent`, after `stop.max_iterations`
/// or at `stop.time_limit_s`. None when no plan is feasible (the required patches overrun the
/// budget or hours).
pub fn bound(problem: &Problem, start: &Assignment, incumbent: f64, stop: Stop) -> Option<Bound> {
    let clock = Instant::now();
    let relaxed = Relaxed::new(problem);
    let n = problem.len();
    let log = log_enabled();
    let met = |b: f64| incumbent - b <= stop.gap * incumbent;
    let out_of_time = || clock.elapsed().as_secs_f64() >= stop.time_limit_s;
    let weights_of = |x: &[f64]| -> Vec<Vec<f64>> {
        (0..n)
            .map(|i| {
                let mut w = vec![0.0; problem.choices[i].len()];
                for k in relaxed.options(i) {
                    if let Some(o) = relaxed.opts[k].choice {
                        w[o] = x[k];
                    }
                }
                w
            })
            .collect()
    };
    let mut fw = FrankWolfe::new(&relaxed, start);
    // A short Frank–Wolfe run first: on densely linked clusters the convex reformulation is
    // nearly exact and a few iterations prove the gap. Then message passing on the
    // local-polytope LP (far tighter on sparse graphs), then the Lagrangian of the convex
    // reformulation; Frank–Wolfe gets whatever time is left.
    if !fw.run(
        stop.max_iterations.min(64),
        0.1 * stop.time_limit_s,
        &clock,
        incumbent,
        stop,
    ) {
        return None;
    }
    let mut dual: Option<(f64, Vec<f64>, usize)> = None;
    let mut forced = None;
    if !met(fw.best) && !out_of_time() {
        dual = message_passing(&relaxed, incumbent, stop, &clock).map(|m| {
            forced = Some(
                (0..n)
                    .map(|i| {
                        relaxed
                            .options(i)
                            .map(|k| (relaxed.opts[k].choice, m.forced[k]))
                            .collect()
                    })
                    .collect(),
            );
            (m.value, m.x, m.evaluations)
        });
        if log && let Some((b, _, evaluations)) = &dual {
            eprintln!(
                "message passing: bound {b:.9e} after {evaluations} evaluations, {:.2} s, gap(incumbent) {:.3e}",
                clock.elapsed().as_secs_f64(),
                (incumbent - b) / incumbent
            );
        }
    }
    let dual_met = |d: &Option<(f64, Vec<f64>, usize)>| d.as_ref().is_some_and(|d| met(d.0));
    if !met(fw.best) && !dual_met(&dual) && !out_of_time() {
        let lagrange = lagrangian(&relaxed, incumbent, stop, &clock);
        if log && let Some((b, _, evaluations)) = &lagrange {
            eprintln!(
                "lagrangian: bound {b:.9e} after {evaluations} evaluations, {:.2} s, gap(incumbent) {:.3e}",
                clock.elapsed().as_secs_f64(),
                (incumbent - b) / incumbent
            );
        }
        dual = match (dual, lagrange) {
            (Some(a), Some(b)) => Some(if a.0 >= b.0 { a } else { b }),
            (a, b) => a.or(b),
        };
    }
    if !met(fw.best) && !dual_met(&dual) && !out_of_time() {
        fw.run(
            stop.max_iterations,
            stop.time_limit_s,
            &clock,
            incumbent,
            stop,
        );
    }
    let (best, weights) = match dual {
        Some((b, y, _)) if b > fw.best => (b, weights_of(&y)),
        _ => (fw.best, weights_of(&fw.x)),
    };
    Some(Bound {
        value: best.min(incumbent).max(0.0),
        iterations: fw.iterations,
        components: relaxed.components,
        min_shift: relaxed.min_shift,
        weights,
        forced,
        seconds: clock.elapsed().as_secs_f64(),
    })
}
