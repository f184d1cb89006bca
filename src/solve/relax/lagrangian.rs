//! The convex reformulation's bound by its Lagrangian dual: prices on the budget and crew
//! hours, and for each price a block coordinate descent over the patches' simplices with a
//! proven lower bound (see [`lagrangian`]).

use std::time::Instant;

use crate::solve::decompose::{Piece, Point};
use crate::solve::relax::convex::Relaxed;
use crate::solve::relax::dual::{Prices, Stop, log_enabled, search_prices};

/// The small components whose plans are enumerated (src/solve/decompose.rs) and, per patch,
/// whether it lies in one.
struct Exact {
    pieces: Vec<Piece>,
    of: Vec<bool>,
}

impl Relaxed<'_> {
    /// The price-adjusted linear term of option k.
    fn priced(&self, i: usize, k: usize, p: Prices) -> f64 {
        let o = &self.opts[k];
        self.linear[i] * o.e * o.e + p.budget * o.cost + p.hours * o.hours
    }

    /// Minimise f(x) + mu cost(x) + nu hours(x) over the product of the patches' simplices
    /// (no budget row) by block coordinate descent, one patch at a time, each step exact:
    /// with the other patches fixed, f is q r_i^2 + b r_i + (the options' priced terms), and
    /// its minimum over the simplex lies on the lower convex hull of the points (e_k, c_k).
    /// `x`, `r` are updated in place; returns a lower bound on the minimum (the Frank–Wolfe
    /// duality gap, exact for a convex function over a product of simplices) and the cost and
    /// hours of the final x.
    /// Patches of the small components in `exact` are not relaxed: each such component takes
    /// its frontier plan of least priced risk, exactly.
    #[allow(clippy::too_many_arguments)]
    fn descend(
        &self,
        x: &mut [f64],
        r: &mut [f64],
        p: Prices,
        exact: &Exact,
        sweeps: usize,
        tol: f64,
    ) -> (f64, f64, f64) {
        let n = self.problem.len();
        let model = self.problem.model;
        let mut hull: Vec<usize> = Vec::new();
        let mut order: Vec<usize> = Vec::new();
        let mut lower = f64::NEG_INFINITY;
        let mut exact_value = 0.0;
        for piece in &exact.pieces {
            let priced = |q: &Point| q.risk + p.budget * q.cost + p.hours * q.hours;
            let Some(best) = piece
                .points
                .iter()
                .min_by(|a, b| priced(a).total_cmp(&priced(b)))
            else {
                continue;
            };
            exact_value += priced(best);
            for (&i, &choice) in piece.members.iter().zip(&best.plan) {
                for k in self.options(i) {
                    x[k] = if self.opts[k].choice == choice {
                        1.0
                    } else {
                        0.0
                    };
                }
                r[i] = choice
                    .map(|o| self.problem.choices[i][o].remaining)
                    .unwrap_or(1.0);
            }
        }
        for sweep in 0..=sweeps {
            // The bound at the current x: F(x) + sum_i min_k (g_k - g_i . x_i).
            let mut b = vec![0.0; n];
            for l in &model.links {
                b[l.a] += l.weight * r[l.b];
                b[l.b] += l.weight * r[l.a];
            }
            let mut value = exact_value;
            let mut dual = 0.0;
            for i in 0..n {
                let range = self.options(i);
                if range.is_empty() || exact.of[i] {
                    continue;
                }
                // F's link terms are counted once: half of r_i b_i per patch.
                let g_r = 2.0 * self.quadratic[i] * r[i] + b[i];
                value += self.quadratic[i] * r[i] * r[i] + 0.5 * b[i] * r[i];
                let (mut gx, mut gmin) = (0.0, f64::INFINITY);
                for k in range {
                    let c = self.priced(i, k, p);
                    value += x[k] * c;
                    let g = g_r * self.opts[k].e + c;
                    gx += x[k] * g;
                    gmin = gmin.min(g);
                }
                dual += gmin - gx;
            }
            lower = lower.max(value + dual);
            if sweep == sweeps || -dual <= tol * value.abs().max(1e-300) {
                break;
            }
            for i in 0..n {
                let range = self.options(i);
                if range.is_empty() || exact.of[i] {
                    continue;
                }
                let mut bi = 0.0;
                for &(j, l) in &model.adjacency[i] {
                    bi += model.links[l].weight * r[j];
                }
                let q = self.quadratic[i].max(0.0);
                // Options by e, then the lower convex hull of (e, c).
                order.clear();
                order.extend(range.clone());
                order.sort_by(|&a, &c| {
                    self.opts[a]
                        .e
                        .total_cmp(&self.opts[c].e)
                        .then(self.priced(i, a, p).total_cmp(&self.priced(i, c, p)))
                });
                hull.clear();
                for &k in &order {
                    let (ek, ck) = (self.opts[k].e, self.priced(i, k, p));
                    if let Some(&last) = hull.last()
                        && self.opts[last].e >= ek
                    {
                        // Same e: the sort put the cheaper first.
                        continue;
                    }
                    while hull.len() >= 2 {
                        let (a, m) = (hull[hull.len() - 2], hull[hull.len() - 1]);
                        let (ea, ca) = (self.opts[a].e, self.priced(i, a, p));
                        let (em, cm) = (self.opts[m].e, self.priced(i, m, p));
                        // m is above the chord from a to k.
                        if (cm - ca) * (ek - ea) >= (ck - ca) * (em - ea) {
                            hull.pop();
                        } else {
                            break;
                        }
                    }
                    hull.push(k);
                }
                // Best point on each hull segment (or the single vertex).
                let phi = |rr: f64, c: f64| q * rr * rr + bi * rr + c;
                let mut best = (f64::INFINITY, hull[0], hull[0], 1.0);
                for &k in &hull {
                    let v = phi(self.opts[k].e, self.priced(i, k, p));
                    if v < best.0 {
                        best = (v, k, k, 1.0);
                    }
                }
                for w in hull.windows(2) {
                    let (a, c) = (w[0], w[1]);
                    let (ea, ec) = (self.opts[a].e, self.opts[c].e);
                    let (pa, pc) = (self.priced(i, a, p), self.priced(i, c, p));
                    let m = (pc - pa) / (ec - ea);
                    if q <= 0.0 {
                        continue;
                    }
                    let rr = (-(bi + m) / (2.0 * q)).clamp(ea, ec);
                    let v = phi(rr, pa + m * (rr - ea));
                    if v < best.0 {
                        // Weight on a: (ec - rr) / (ec - ea).
                        best = (v, a, c, (ec - rr) / (ec - ea));
                    }
                }
                for k in range {
                    x[k] = 0.0;
                }
                let (_, a, c, wa) = best;
                x[a] += wa;
                x[c] += 1.0 - wa;
                r[i] = wa * self.opts[a].e + (1.0 - wa) * self.opts[c].e;
            }
        }
        let cost = x.iter().zip(&self.opts).map(|(w, o)| w * o.cost).sum();
        let hours = x.iter().zip(&self.opts).map(|(w, o)| w * o.hours).sum();
        (lower, cost, hours)
    }
}

/// The same relaxation's bound by its Lagrangian dual (Everett 1963; Geoffrion 1974, both
/// from memory): any prices mu, nu >= 0 on the budget and crew hours give
///   min_x [f(x) + mu (cost(x) - B) + nu (hours(x) - H)] <= the relaxation's minimum,
/// and without the budget row the inner minimum separates into one small convex problem per
/// patch given its neighbours, solved by block coordinate descent with a proven lower bound
/// (see `descend`). The dual is concave in the prices; they are found by bisection on the
/// sign of its slope (cost(x) - B). Returns the best bound and the relaxed x it came with.
pub(super) fn lagrangian(
    relaxed: &Relaxed,
    incumbent: f64,
    stop: Stop,
    clock: &Instant,
) -> Option<(f64, Vec<f64>, usize)> {
    let problem = relaxed.problem;
    let n = problem.len();
    let budget = problem.budget;
    if !budget.is_finite() {
        return None;
    }
    let hours_limit = problem.crew_hours.filter(|h| h.is_finite());
    let pieces = crate::solve::decompose::small_pieces(
        problem,
        crate::solve::components::component_members(problem),
    );
    if pieces.iter().any(|p| p.points.is_empty()) {
        // A component has no plan within the budget: no plan at all.
        return None;
    }
    let mut of = vec![false; n];
    for piece in &pieces {
        for &i in &piece.members {
            of[i] = true;
        }
    }
    if log_enabled() {
        let members = crate::solve::components::component_members(problem);
        let mut sizes: Vec<usize> = members.iter().map(Vec::len).collect();
        sizes.sort_unstable();
        let exact_patches: usize = pieces.iter().map(|p| p.members.len()).sum();
        eprintln!(
            "components: {} (largest {:?}), {} enumerated holding {exact_patches} patches",
            sizes.len(),
            &sizes[sizes.len().saturating_sub(5)..],
            pieces.len()
        );
    }
    let exact = Exact { pieces, of };
    let mut x = vec![0.0; relaxed.opts.len()];
    for i in 0..n {
        if let Some(k) = relaxed.options(i).next() {
            x[k] = 1.0;
        }
    }
    let (r, _) = relaxed.moments(&x);
    struct State {
        x: Vec<f64>,
        r: Vec<f64>,
        best: f64,
        kept: (f64, Vec<f64>),
        evaluations: usize,
    }
    let state = std::cell::RefCell::new(State {
        kept: (f64::NEG_INFINITY, x.clone()),
        x,
        r,
        best: f64::NEG_INFINITY,
        evaluations: 0,
    });
    // One evaluation of the dual at prices p: (cost, hours) of the relaxed minimiser.
    let try_at = |p: Prices| -> Option<(f64, f64)> {
        let mut st = state.borrow_mut();
        if clock.elapsed().as_secs_f64() >= stop.time_limit_s
            || incumbent - st.best <= stop.gap * incumbent
        {
            return None;
        }
        let State { x, r, .. } = &mut *st;
        let (lower, cost, hours) = relaxed.descend(x, r, p, &exact, 200, 0.1 * stop.gap);
        st.evaluations += 1;
        let bound = lower - p.budget * budget - p.hours * hours_limit.unwrap_or(0.0);
        st.best = st.best.max(bound);
        // The relaxed point kept for rounding: the best bound's among those within the rows.
        let within = cost <= budget * (1.0 + 1e-12)
            && hours_limit.is_none_or(|h| hours <= h * (1.0 + 1e-12));
        if within && bound > st.kept.0 {
            st.kept = (bound, st.x.clone());
        }
        Some((cost, hours))
    };
    search_prices(budget, hours_limit, problem.model.risk_before(), &try_at);
    let st = state.into_inner();
    Some((st.best.min(incumbent).max(0.0), st.kept.1, st.evaluations))
}
