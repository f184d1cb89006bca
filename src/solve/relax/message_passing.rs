//! The local-polytope bound by message passing (see [`message_passing`]).

use std::time::Instant;

use crate::solve::relax::convex::Relaxed;
use crate::solve::relax::dual::{Prices, Stop, search_prices};

/// A second, usually much tighter bound: the local-polytope LP of R as a pairwise energy
/// over each patch's options (one unary term per patch, pi_i a_i^2 e_o^2 plus the priced cost
/// and hours; one pairwise term w_ij e_o e_o' per link), solved in its dual by max-product
/// linear programming's edge updates (Globerson & Jaakkola 2007, min-sum form, from memory),
/// with the budget and crew hours priced as in [`lagrangian`]. Any messages delta with
/// delta_{j->i}(o) + delta_{i->j}(o') <= w_ij e_o e_o' for every pair give
///   R(plan) + prices . (use - limits) >= sum_i min_o [theta_i(o) + sum_j delta_{j->i}(o)] - prices . limits,
/// and the updates keep that inequality (any violation by rounding is measured and
/// subtracted). The bound is valid after any number of sweeps, at any prices.
///
/// Returns the bound, the relaxed solution (indexed like `relaxed.opts`), the evaluations,
/// and per option the bound on every plan that gives its patch that option (indexed like
/// `relaxed.opts`; see [`MpBound::forced`]).
pub(super) fn message_passing(
    relaxed: &Relaxed,
    incumbent: f64,
    stop: Stop,
    clock: &Instant,
) -> Option<MpBound> {
    let problem = relaxed.problem;
    let model = problem.model;
    let n = problem.len();
    let budget = problem.budget;
    if !budget.is_finite() || (0..n).any(|i| relaxed.options(i).is_empty()) {
        return None;
    }
    let hours_limit = problem.crew_hours.filter(|h| h.is_finite());
    // Messages: per link, first to a (a's options), then to b.
    let mut at = Vec::with_capacity(model.links.len() + 1);
    let mut total = 0;
    for l in &model.links {
        at.push(total);
        total += relaxed.options(l.a).len() + relaxed.options(l.b).len();
    }
    at.push(total);
    let delta = vec![0.0; total];
    let unary = |k: usize, i: usize, p: Prices| {
        let o = &relaxed.opts[k];
        model.own[i] * o.e * o.e + p.budget * o.cost + p.hours * o.hours
    };
    let prices = Prices {
        budget: 0.0,
        hours: 0.0,
    };
    // Beliefs B_i(o) = theta_i(o) + sum of messages into i, indexed like opts.
    let mut belief: Vec<f64> = vec![0.0; relaxed.opts.len()];
    for i in 0..n {
        for k in relaxed.options(i) {
            belief[k] = unary(k, i, prices);
        }
    }
    let (mut ba, mut bb, mut na, mut nb) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    let mut sweep = |belief: &mut [f64], delta: &mut [f64]| {
        for (l, link) in model.links.iter().enumerate() {
            let (ra, rb) = (relaxed.options(link.a), relaxed.options(link.b));
            let la = ra.len();
            let (to_a, to_b) = delta[at[l]..at[l + 1]].split_at_mut(la);
            ba.clear();
            bb.clear();
            ba.extend(ra.clone().zip(to_a.iter()).map(|(k, d)| belief[k] - d));
            bb.extend(rb.clone().zip(to_b.iter()).map(|(k, d)| belief[k] - d));
            let w = link.weight;
            na.clear();
            nb.clear();
            for (x, ka) in ra.clone().enumerate() {
                let ea = relaxed.opts[ka].e;
                let m = rb
                    .clone()
                    .enumerate()
                    .map(|(y, kb)| w * ea * relaxed.opts[kb].e + bb[y])
                    .fold(f64::INFINITY, f64::min);
                na.push(0.5 * (m - ba[x]));
            }
            for (y, kb) in rb.clone().enumerate() {
                let eb = relaxed.opts[kb].e;
                let m = ra
                    .clone()
                    .enumerate()
                    .map(|(x, ka)| w * relaxed.opts[ka].e * eb + ba[x])
                    .fold(f64::INFINITY, f64::min);
                nb.push(0.5 * (m - bb[y]));
            }
            for (x, k) in ra.enumerate() {
                to_a[x] = na[x];
                belief[k] = ba[x] + na[x];
            }
            for (y, k) in rb.enumerate() {
                to_b[y] = nb[y];
                belief[k] = bb[y] + nb[y];
            }
        }
    };
    // The dual value at the current messages and prices (before the violation), and the
    // options the beliefs pick with their cost and hours.
    let evaluate = |belief: &[f64], p: Prices| -> (f64, Vec<usize>, f64, f64) {
        let mut value = 0.0;
        let mut pick = Vec::with_capacity(n);
        let (mut cost, mut hours) = (0.0, 0.0);
        for i in 0..n {
            let k = relaxed
                .options(i)
                .min_by(|&a, &b| belief[a].total_cmp(&belief[b]))
                .expect("every patch has an option");
            value += belief[k];
            cost += relaxed.opts[k].cost;
            hours += relaxed.opts[k].hours;
            pick.push(k);
        }
        let raw = value - p.budget * budget - p.hours * hours_limit.unwrap_or(0.0);
        (raw, pick, cost, hours)
    };
    // How far rounding has pushed the messages past their constraint, summed over links
    // (subtracted from the dual value to keep the bound proven).
    let violation = |delta: &[f64]| -> f64 {
        let mut violation = 0.0;
        for (l, link) in model.links.iter().enumerate() {
            let (ra, rb) = (relaxed.options(link.a), relaxed.options(link.b));
            let (to_a, to_b) = delta[at[l]..at[l + 1]].split_at(ra.len());
            let mut worst: f64 = 0.0;
            for (x, ka) in ra.clone().enumerate() {
                for (y, kb) in rb.clone().enumerate() {
                    let theta = link.weight * relaxed.opts[ka].e * relaxed.opts[kb].e;
                    worst = worst.max(to_a[x] + to_b[y] - theta);
                }
            }
            violation += worst;
        }
        violation
    };
    let best = f64::NEG_INFINITY;
    let mut kept = (f64::NEG_INFINITY, Vec::new());
    // The beliefs at the best bound: the same messages and prices bound any restriction of one
    // patch to one option by the bound plus that option's excess over the patch's least belief
    // (the separable dual's reduced cost).
    let mut snapshot: (f64, Vec<f64>) = (f64::NEG_INFINITY, Vec::new());
    let mut evaluations = 0;
    let run = |p: Prices, belief: &mut Vec<f64>, delta: &mut Vec<f64>, best: &mut f64| {
        // Beliefs follow the prices: only the unary terms change.
        let mut last = f64::NEG_INFINITY;
        let mut out = (0.0, 0.0);
        for s in 0..30 {
            if s > 0 {
                sweep(belief, delta);
            }
            let (raw, pick, cost, hours) = evaluate(belief, p);
            evaluations += 1;
            let within = cost <= budget * (1.0 + 1e-12)
                && hours_limit.is_none_or(|h| hours <= h * (1.0 + 1e-12));
            // The violation pass costs as much as a sweep: only when the bound could count.
            if raw > *best || (within && raw > kept.0) {
                let bound = raw - violation(delta);
                if bound > snapshot.0 {
                    snapshot = (bound, belief.clone());
                }
                *best = best.max(bound);
                if within && bound > kept.0 {
                    kept = (bound, pick);
                }
            }
            out = (cost, hours);
            if raw - last <= 1e-4 * stop.gap * incumbent
                || clock.elapsed().as_secs_f64() >= stop.time_limit_s
            {
                break;
            }
            last = raw;
        }
        out
    };
    let reprice = |belief: &mut [f64], from: Prices, to: Prices| {
        for i in 0..n {
            for k in relaxed.options(i) {
                belief[k] += unary(k, i, to) - unary(k, i, from);
            }
        }
    };
    struct State {
        belief: Vec<f64>,
        delta: Vec<f64>,
        prices: Prices,
        best: f64,
    }
    let state = std::cell::RefCell::new(State {
        belief,
        delta,
        prices,
        best,
    });
    let run = std::cell::RefCell::new(run);
    // (cost, hours) at prices p, or None once out of time or the gap is met.
    let try_at = |p: Prices| -> Option<(f64, f64)> {
        let mut st = state.borrow_mut();
        if clock.elapsed().as_secs_f64() >= stop.time_limit_s
            || incumbent - st.best <= stop.gap * incumbent
        {
            return None;
        }
        let State {
            belief,
            delta,
            prices,
            best,
        } = &mut *st;
        reprice(belief, *prices, p);
        *prices = p;
        Some((run.borrow_mut())(p, belief, delta, best))
    };
    search_prices(budget, hours_limit, model.risk_before(), &try_at);
    let best = state.borrow().best;
    let mut x = vec![0.0; relaxed.opts.len()];
    for &k in &kept.1 {
        x[k] = 1.0;
    }
    let mut forced = vec![f64::NEG_INFINITY; relaxed.opts.len()];
    if !snapshot.1.is_empty() {
        let (b, belief) = &snapshot;
        for i in 0..n {
            let least = relaxed
                .options(i)
                .map(|k| belief[k])
                .fold(f64::INFINITY, f64::min);
            for k in relaxed.options(i) {
                forced[k] = b + (belief[k] - least);
            }
        }
    }
    Some(MpBound {
        value: best.min(incumbent).max(0.0),
        x,
        evaluations,
        forced,
    })
}

/// What [`message_passing`] proves.
pub(super) struct MpBound {
    pub(super) value: f64,
    pub(super) x: Vec<f64>,
    pub(super) evaluations: usize,
    /// Per option (indexed like `Relaxed::opts`): a proven lower bound on R over the plans
    /// that give the option's patch that option (NEG_INFINITY when no bound was kept).
    pub(super) forced: Vec<f64>,
}
