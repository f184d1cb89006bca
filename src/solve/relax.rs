//! Proven lower bounds on the least achievable R for problems too large for the exact MIP:
//! message passing on the local-polytope LP (see `message_passing`), and a convex
//! reformulation of R solved by its Lagrangian dual and by Frank–Wolfe. [`bound`] runs them
//! in that order of need (a short Frank–Wolfe run first) and keeps the best.
//!
//! R = r^T Q r with Q_ii = pi_i a_i^2 and Q_ij = w_ij / 2 >= 0 is not convex in r in general
//! (the kernel is cut off at epsilon and weighted by pressure), and its plain continuous
//! relaxation is weak. At every plan, though, r_i^2 = s_i := sum_o x_io e_o^2 exactly (one
//! option per patch), so for any diagonal shift t_i sigma_i with Q - diag(t sigma) positive
//! semidefinite
//!
//!   f(x) = r^T (Q - diag(t sigma)) r + sum_i t_i sigma_i s_i
//!
//! equals R at every plan and is convex on the whole space (Hammer & Rubin 1970; the uniform
//! eigenvalue shift of the QCR family, Billionnet, Elloumi & Plateau 2009, both from memory).
//! Its minimum over the relaxed choices (each patch a point of its simplex of options, the
//! budget and crew hours as linear rows) is a lower bound on R. The shift is per connected
//! component: sigma_i = pi_i a_i^2 and t_c is the smallest eigenvalue of the component's
//! diagonally scaled Q, by Lanczos with full reorthogonalisation (Lanczos 1950, from memory)
//! less its residual and a margin; an isolated patch gets t = 1 and its term is exactly linear.
//!
//! Frank–Wolfe (Frank & Wolfe 1956; the duality-gap bound of Jaggi 2013, both from memory):
//! for convex f and any x, f* >= f(x) + min_y grad f(x) . (y - x) over the relaxed set. The
//! inner minimum is the LP relaxation of a multiple-choice knapsack, solved exactly by the
//! greedy on each patch's lower convex hull of (cost, value) (Sinha & Zoltners 1979, from
//! memory); crew hours enter through a Lagrange multiplier, and any multiplier gives a valid
//! bound. Steps use the exact line search of a quadratic.
//!
//! # Units
//! As the optimiser: costs in catalogue currency, hours in crew hours, R in share-squared units.

use std::time::Instant;

use crate::solve::components::components;
use crate::solve::decompose::{Piece, Point};
use crate::solve::problem::{Assignment, Problem};

/// One option of a patch in the relaxation: untreated (choice None) or a choice.
#[derive(Debug, Clone, Copy)]
struct Opt {
    choice: Option<usize>,
    cost: f64,
    hours: f64,
    /// e: the share of host left.
    e: f64,
}

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
    pub seconds: f64,
}

/// When to stop iterating.
#[derive(Debug, Clone, Copy)]
pub struct Stop {
    /// Stop once (incumbent - bound) / incumbent is at most this.
    pub gap: f64,
    pub max_iterations: usize,
    pub time_limit_s: f64,
}

/// The smallest eigenvalue of a symmetric sparse matrix (diagonal `diag`, off-diagonal entries
/// (i, j, v) each listed once) as (Ritz value, residual norm ||A y - theta y||), by Lanczos
/// with full reorthogonalisation from a fixed pseudo-random start.
pub fn smallest_eigenvalue(diag: &[f64], off: &[(usize, usize, f64)]) -> (f64, f64) {
    let n = diag.len();
    if n == 0 {
        return (0.0, 0.0);
    }
    if n == 1 {
        return (diag[0], 0.0);
    }
    let multiply = |v: &[f64], out: &mut [f64]| {
        for i in 0..n {
            out[i] = diag[i] * v[i];
        }
        for &(i, j, a) in off {
            out[i] += a * v[j];
            out[j] += a * v[i];
        }
    };
    let max_steps = n.min(400);
    let mut rng = crate::core::rng::SplitMix::new(0x5eed);
    let mut v: Vec<f64> = (0..n).map(|_| rng.unit() - 0.5).collect();
    let norm = dot(&v, &v).sqrt();
    v.iter_mut().for_each(|x| *x /= norm);
    let mut basis: Vec<Vec<f64>> = vec![v];
    let (mut alpha, mut beta): (Vec<f64>, Vec<f64>) = (Vec::new(), Vec::new());
    let mut w = vec![0.0; n];
    loop {
        let k = basis.len() - 1;
        multiply(&basis[k], &mut w);
        let a = dot(&w, &basis[k]);
        alpha.push(a);
        // Full reorthogonalisation, twice ("twice is enough").
        for _ in 0..2 {
            for q in &basis {
                let c = dot(&w, q);
                w.iter_mut().zip(q).for_each(|(x, y)| *x -= c * y);
            }
        }
        let b = dot(&w, &w).sqrt();
        let steps = alpha.len();
        let check = steps == max_steps || b <= 1e-12 || steps % 10 == 0;
        if check {
            let theta = tridiagonal_smallest(&alpha, &beta);
            let y = tridiagonal_vector(&alpha, &beta, theta);
            let residual = b * y.last().copied().unwrap_or(0.0).abs();
            if steps == max_steps || b <= 1e-12 || residual <= 1e-9 {
                if residual > 1e-9 && steps == max_steps {
                    // Not converged: compute the true residual of the Ritz vector.
                    let mut ritz = vec![0.0; n];
                    for (c, q) in y.iter().zip(&basis) {
                        ritz.iter_mut().zip(q).for_each(|(x, v)| *x += c * v);
                    }
                    let mut out = vec![0.0; n];
                    multiply(&ritz, &mut out);
                    let r = out
                        .iter()
                        .zip(&ritz)
                        .map(|(o, x)| (o - theta * x).powi(2))
                        .sum::<f64>()
                        .sqrt();
                    return (theta, r);
                }
                return (theta, residual);
            }
        }
        beta.push(b);
        let next: Vec<f64> = w.iter().map(|x| x / b).collect();
        basis.push(next);
    }
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Smallest eigenvalue of the symmetric tridiagonal matrix (diagonal `a`, off-diagonal `b`)
/// by Sturm-sequence bisection to machine precision.
fn tridiagonal_smallest(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len();
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    for i in 0..n {
        let r = if i > 0 { b[i - 1].abs() } else { 0.0 } + if i < n - 1 { b[i].abs() } else { 0.0 };
        lo = lo.min(a[i] - r);
        hi = hi.max(a[i] + r);
    }
    // Number of eigenvalues below x.
    let below = |x: f64| {
        let mut count = 0;
        let mut d = 1.0;
        for i in 0..n {
            let off = if i > 0 { b[i - 1] * b[i - 1] } else { 0.0 };
            d = a[i] - x - if i > 0 { off / d } else { 0.0 };
            if d == 0.0 {
                d = -1e-300;
            }
            if d < 0.0 {
                count += 1;
            }
        }
        count
    };
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if below(mid) >= 1 {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    lo
}

/// Unit eigenvector of the tridiagonal matrix for eigenvalue `theta`, by inverse iteration.
fn tridiagonal_vector(a: &[f64], b: &[f64], theta: f64) -> Vec<f64> {
    let n = a.len();
    let scale = a.iter().chain(b).fold(1e-300_f64, |m, x| m.max(x.abs()));
    let shift = theta - 1e-10 * scale;
    let mut y = vec![1.0; n];
    for _ in 0..3 {
        // Solve (T - shift I) z = y by the Thomas algorithm (no pivoting; the shift keeps the
        // matrix positive definite up to rounding).
        let mut c = vec![0.0; n];
        let mut d = vec![0.0; n];
        let mut denom = a[0] - shift;
        if denom.abs() < 1e-300 {
            denom = 1e-300;
        }
        c[0] = if n > 1 { b[0] / denom } else { 0.0 };
        d[0] = y[0] / denom;
        for i in 1..n {
            let mut m = a[i] - shift - b[i - 1] * c[i - 1];
            if m.abs() < 1e-300 {
                m = 1e-300;
            }
            c[i] = if i < n - 1 { b[i] / m } else { 0.0 };
            d[i] = (y[i] - b[i - 1] * d[i - 1]) / m;
        }
        let mut z = vec![0.0; n];
        z[n - 1] = d[n - 1];
        for i in (0..n - 1).rev() {
            z[i] = d[i] - c[i] * z[i + 1];
        }
        let norm = dot(&z, &z).sqrt();
        if !norm.is_finite() || norm == 0.0 {
            break;
        }
        y = z.iter().map(|v| v / norm).collect();
    }
    y
}

/// The relaxation of one problem: options, shifts and link lists.
struct Relaxed<'a> {
    problem: &'a Problem<'a>,
    /// Per patch: start of its options in `opts`.
    start: Vec<usize>,
    opts: Vec<Opt>,
    /// t_i sigma_i: the linearised part of the diagonal.
    linear: Vec<f64>,
    /// Q_ii - t_i sigma_i: the diagonal left in the convex quadratic.
    quadratic: Vec<f64>,
    components: usize,
    min_shift: f64,
}

impl<'a> Relaxed<'a> {
    fn new(problem: &'a Problem<'a>) -> Relaxed<'a> {
        let n = problem.len();
        let model = problem.model;
        let mut start = Vec::with_capacity(n + 1);
        let mut opts = Vec::new();
        for i in 0..n {
            start.push(opts.len());
            if !problem.required[i] {
                opts.push(Opt {
                    choice: None,
                    cost: 0.0,
                    hours: 0.0,
                    e: 1.0,
                });
            }
            if !problem.excluded[i] {
                for (o, c) in problem.choices[i].iter().enumerate() {
                    opts.push(Opt {
                        choice: Some(o),
                        cost: c.cost,
                        hours: if problem.crew_hours.is_some() {
                            c.hours
                        } else {
                            0.0
                        },
                        e: c.remaining,
                    });
                }
            }
        }
        start.push(opts.len());
        // sigma_i: the own term, or (a patch without one) half its link weights.
        let mut sigma = model.own.clone();
        for (i, s) in sigma.iter_mut().enumerate() {
            if *s <= 0.0 {
                let half: f64 = model.adjacency[i]
                    .iter()
                    .map(|&(_, l)| model.links[l].weight / 2.0)
                    .sum();
                *s = if half > 0.0 { half } else { 1.0 };
            }
        }
        let (of, count) = components(problem);
        let mut members: Vec<Vec<usize>> = vec![Vec::new(); count];
        for i in 0..n {
            members[of[i]].push(i);
        }
        let mut local = vec![0usize; n];
        let mut shift = vec![0.0; count];
        let mut off_by: Vec<Vec<(usize, usize, f64)>> = vec![Vec::new(); count];
        for l in &model.links {
            if l.weight <= 0.0 {
                continue;
            }
            let c = of[l.a];
            off_by[c].push((l.a, l.b, l.weight / 2.0 / (sigma[l.a] * sigma[l.b]).sqrt()));
        }
        for (c, nodes) in members.iter().enumerate() {
            for (k, &i) in nodes.iter().enumerate() {
                local[i] = k;
            }
            let diag: Vec<f64> = nodes.iter().map(|&i| model.own[i] / sigma[i]).collect();
            let off: Vec<(usize, usize, f64)> = off_by[c]
                .iter()
                .map(|&(a, b, v)| (local[a], local[b], v))
                .collect();
            // Gershgorin's bound is proven; Lanczos's is sharper when it has converged.
            let mut gersh = diag.clone();
            for &(a, b, v) in &off {
                gersh[a] -= v.abs();
                gersh[b] -= v.abs();
            }
            let gersh = gersh.iter().cloned().fold(f64::INFINITY, f64::min);
            let (theta, residual) = smallest_eigenvalue(&diag, &off);
            let scale = diag
                .iter()
                .map(|d| d.abs())
                .chain(off.iter().map(|o| o.2.abs()))
                .fold(0.0, f64::max);
            let lanczos = theta - residual - 1e-9 * scale.max(1.0);
            shift[c] = lanczos.max(gersh);
        }
        let min_shift = shift.iter().cloned().fold(f64::INFINITY, f64::min);
        let linear: Vec<f64> = (0..n).map(|i| shift[of[i]] * sigma[i]).collect();
        let quadratic: Vec<f64> = (0..n).map(|i| model.own[i] - linear[i]).collect();
        Relaxed {
            problem,
            start,
            opts,
            linear,
            quadratic,
            components: count,
            min_shift: if count == 0 { 1.0 } else { min_shift },
        }
    }

    fn options(&self, i: usize) -> std::ops::Range<usize> {
        self.start[i]..self.start[i + 1]
    }

    /// r and s of the relaxed point x.
    fn moments(&self, x: &[f64]) -> (Vec<f64>, Vec<f64>) {
        let n = self.problem.len();
        let (mut r, mut s) = (vec![0.0; n], vec![0.0; n]);
        for i in 0..n {
            for k in self.options(i) {
                r[i] += x[k] * self.opts[k].e;
                s[i] += x[k] * self.opts[k].e * self.opts[k].e;
            }
        }
        (r, s)
    }

    /// f(x) from its moments.
    fn value(&self, r: &[f64], s: &[f64]) -> f64 {
        let mut f = 0.0;
        for i in 0..r.len() {
            f += self.quadratic[i] * r[i] * r[i] + self.linear[i] * s[i];
        }
        for l in &self.problem.model.links {
            f += l.weight * r[l.a] * r[l.b];
        }
        f
    }

    /// The quadratic part of f at a direction with moments dr.
    fn curvature(&self, dr: &[f64]) -> f64 {
        let mut q: f64 = (0..dr.len())
            .map(|i| self.quadratic[i] * dr[i] * dr[i])
            .sum();
        for l in &self.problem.model.links {
            q += l.weight * dr[l.a] * dr[l.b];
        }
        q
    }

    /// The gradient of f with respect to each option weight.
    fn gradient(&self, r: &[f64]) -> Vec<f64> {
        let n = r.len();
        let mut g_r: Vec<f64> = (0..n).map(|i| 2.0 * self.quadratic[i] * r[i]).collect();
        for l in &self.problem.model.links {
            g_r[l.a] += l.weight * r[l.b];
            g_r[l.b] += l.weight * r[l.a];
        }
        let mut g = vec![0.0; self.opts.len()];
        for i in 0..n {
            for k in self.options(i) {
                let e = self.opts[k].e;
                g[k] = g_r[i] * e + self.linear[i] * e * e;
            }
        }
        g
    }

    /// min over the budget-only relaxed set of sum_k v_k y_k: (y, value), or None when even
    /// the cheapest options overrun the budget. Greedy on each patch's lower convex hull.
    fn knapsack_lp(&self, v: &[f64]) -> Option<(Vec<f64>, f64)> {
        let n = self.problem.len();
        let mut y = vec![0.0; self.opts.len()];
        let mut value = 0.0;
        let mut left = self.problem.budget;
        // (slope, patch, from, to)
        let mut steps: Vec<(f64, usize, usize, usize)> = Vec::new();
        let mut hull: Vec<usize> = Vec::new();
        let mut base = vec![usize::MAX; n];
        for i in 0..n {
            let range = self.options(i);
            if range.is_empty() {
                continue;
            }
            let mut idx: Vec<usize> = range.collect();
            idx.sort_by(|&a, &b| {
                self.opts[a]
                    .cost
                    .total_cmp(&self.opts[b].cost)
                    .then(v[a].total_cmp(&v[b]))
            });
            // Lower convex hull of (cost, v), keeping only points that lower v.
            hull.clear();
            for &k in &idx {
                if let Some(&last) = hull.last()
                    && v[k] >= v[last]
                {
                    continue;
                }
                if let Some(&last) = hull.last()
                    && self.opts[k].cost <= self.opts[last].cost
                {
                    // Same cost, lower v (ties sorted by v put the best first; safe guard).
                    hull.pop();
                }
                while hull.len() >= 2 {
                    let (p, q) = (hull[hull.len() - 2], hull[hull.len() - 1]);
                    let s1 = (v[q] - v[p]) / (self.opts[q].cost - self.opts[p].cost);
                    let s2 = (v[k] - v[q]) / (self.opts[k].cost - self.opts[q].cost);
                    if s2 <= s1 {
                        hull.pop();
                    } else {
                        break;
                    }
                }
                hull.push(k);
            }
            base[i] = hull[0];
            left -= self.opts[hull[0]].cost;
            value += v[hull[0]];
            for w in hull.windows(2) {
                let slope = (v[w[1]] - v[w[0]]) / (self.opts[w[1]].cost - self.opts[w[0]].cost);
                steps.push((slope, i, w[0], w[1]));
            }
        }
        if left < -1e-9 * self.problem.budget.abs().max(1.0) {
            return None;
        }
        left = left.max(0.0);
        // Within a patch the slopes increase along its hull, so a stable sort keeps each
        // patch's steps in order.
        steps.sort_by(|a, b| a.0.total_cmp(&b.0));
        let mut at = base.clone();
        let mut weight_on_at = vec![1.0; n];
        for i in 0..n {
            if base[i] != usize::MAX {
                y[base[i]] = 1.0;
            }
        }
        for &(slope, i, from, to) in &steps {
            if slope >= 0.0 || left <= 0.0 {
                break;
            }
            if at[i] != from || weight_on_at[i] < 1.0 {
                continue;
            }
            let dc = self.opts[to].cost - self.opts[from].cost;
            let take = if dc <= left { 1.0 } else { left / dc };
            y[from] -= take;
            y[to] += take;
            value += take * (v[to] - v[from]);
            left -= take * dc;
            if take >= 1.0 {
                at[i] = to;
            } else {
                weight_on_at[i] = 1.0 - take;
                break;
            }
        }
        Some((y, value))
    }

    /// min over the relaxed set (budget and hours) of g . y, as (direction y, a lower bound on
    /// the minimum). With hours binding, the multiplier is found by bisection and y mixes the
    /// two bracketing solutions to meet the hours exactly.
    fn oracle(&self, g: &[f64]) -> Option<(Vec<f64>, f64)> {
        let hours_of =
            |y: &[f64]| -> f64 { y.iter().zip(&self.opts).map(|(w, o)| w * o.hours).sum() };
        let (y0, v0) = self.knapsack_lp(g)?;
        let Some(limit) = self.problem.crew_hours else {
            return Some((y0, v0));
        };
        if hours_of(&y0) <= limit * (1.0 + 1e-12) + 1e-12 {
            return Some((y0, v0));
        }
        let lagrange = |mu: f64| -> Option<(Vec<f64>, f64)> {
            let v: Vec<f64> = g
                .iter()
                .zip(&self.opts)
                .map(|(a, o)| a + mu * o.hours)
                .collect();
            let (y, value) = self.knapsack_lp(&v)?;
            Some((y, value - mu * limit))
        };
        let mut best_bound = f64::NEG_INFINITY;
        let (mut lo, mut y_lo) = (0.0, y0);
        let mut hi = g.iter().map(|v| v.abs()).fold(1e-12, f64::max)
            / self
                .opts
                .iter()
                .map(|o| o.hours)
                .filter(|h| *h > 0.0)
                .fold(f64::INFINITY, f64::min)
                .min(1.0);
        let mut y_hi;
        loop {
            let (y, bound) = lagrange(hi)?;
            best_bound = best_bound.max(bound);
            if hours_of(&y) <= limit {
                y_hi = y;
                break;
            }
            lo = hi;
            y_lo = y;
            hi *= 4.0;
            if hi > 1e300 {
                // Even the hour-cheapest options overrun the crew hours.
                return None;
            }
        }
        for _ in 0..30 {
            let mid = 0.5 * (lo + hi);
            let (y, bound) = lagrange(mid)?;
            best_bound = best_bound.max(bound);
            if hours_of(&y) <= limit {
                hi = mid;
                y_hi = y;
            } else {
                lo = mid;
                y_lo = y;
            }
        }
        let (h_lo, h_hi) = (hours_of(&y_lo), hours_of(&y_hi));
        let theta = if h_lo > h_hi {
            ((limit - h_hi) / (h_lo - h_hi)).clamp(0.0, 1.0)
        } else {
            0.0
        };
        let y: Vec<f64> = y_lo
            .iter()
            .zip(&y_hi)
            .map(|(a, b)| theta * a + (1.0 - theta) * b)
            .collect();
        Some((y, best_bound))
    }
}

/// The small components whose plans are enumerated (src/solve/decompose.rs) and, per patch,
/// whether it lies in one.
struct Exact {
    pieces: Vec<Piece>,
    of: Vec<bool>,
}

/// Prices on the budget and the crew hours for [`lagrangian`].
#[derive(Debug, Clone, Copy)]
struct Prices {
    budget: f64,
    hours: f64,
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
fn lagrangian(
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
    if std::env::var_os("HOSTCUT_RELAX_LOG").is_some() {
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

/// Find the prices that maximise a concave dual by bisection on the sign of its slope
/// (use - limit), the budget's price inside the hours' when crew hours bind. `try_at(p)`
/// evaluates the dual at p and returns (cost, hours) of its minimiser, or None to stop (out of
/// time, or the gap met).
fn search_prices(
    budget: f64,
    hours_limit: Option<f64>,
    risk_before: f64,
    try_at: &dyn Fn(Prices) -> Option<(f64, f64)>,
) {
    // The least price (to a relative tolerance) at which use <= limit.
    fn bisect(
        limit: f64,
        scale: f64,
        tol: f64,
        f: &mut dyn FnMut(f64) -> Option<f64>,
    ) -> Option<f64> {
        if f(0.0)? <= limit {
            return Some(0.0);
        }
        let (mut lo, mut hi) = (0.0, scale);
        while f(hi)? > limit {
            lo = hi;
            hi *= 4.0;
            if hi > 1e300 {
                return None;
            }
        }
        while hi - lo > tol * hi {
            let mid = 0.5 * (lo + hi);
            if f(mid)? <= limit {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        Some(hi)
    }
    // Prices start at R per unit of the row's limit.
    let budget_scale = risk_before / budget.max(1e-12);
    let budget_price = |hours_price: f64, tol: f64| {
        bisect(budget, budget_scale, tol, &mut |v| {
            try_at(Prices {
                budget: v,
                hours: hours_price,
            })
            .map(|c| c.0)
        })
    };
    match hours_limit {
        None => {
            let _ = budget_price(0.0, 1e-6);
        }
        Some(h) => {
            let _ = bisect(h, risk_before / h.max(1e-12), 1e-4, &mut |nu| {
                let mu = budget_price(nu, 1e-4)?;
                try_at(Prices {
                    budget: mu,
                    hours: nu,
                })
                .map(|c| c.1)
            });
        }
    }
}

/// A second, usually much tighter bound: the local-polytope LP of R as a pairwise energy
/// over each patch's options (one unary term per patch, pi_i a_i^2 e_o^2 plus the priced cost
/// and hours; one pairwise term w_ij e_o e_o' per link), solved in its dual by max-product
/// linear programming's edge updates (Globerson & Jaakkola 2007, min-sum form, from memory),
/// with the budget and crew hours priced as in [`lagrangian`]. Any messages delta with
/// delta_{j->i}(o) + delta_{i->j}(o') <= w_ij e_o e_o' for every pair give
///   R(plan) + prices . (use - limits) >= sum_i min_o [theta_i(o) + sum_j delta_{j->i}(o)] - prices . limits,
/// and the updates keep that inequality (any violation by rounding is measured and
/// subtracted). The bound is valid after any number of sweeps, at any prices.
fn message_passing(
    relaxed: &Relaxed,
    incumbent: f64,
    stop: Stop,
    clock: &Instant,
) -> Option<(f64, Vec<f64>, usize)> {
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
    Some((best.min(incumbent).max(0.0), x, evaluations))
}

/// The message-passing bound alone (see [`message_passing`]), for tests and benchmarks: a
/// proven lower bound on the least achievable R, or None when the budget is infinite or a
/// patch has no option.
pub fn local_polytope_bound(problem: &Problem, incumbent: f64, stop: Stop) -> Option<f64> {
    let clock = Instant::now();
    let relaxed = Relaxed::new(problem);
    message_passing(&relaxed, incumbent, stop, &clock).map(|(b, _, _)| b)
}

/// The relaxation bound, starting Frank–Wolfe from `start` (a feasible plan, e.g. greedy's)
/// and stopping when the bound is within `stop.gap` of `incumbent`, after `stop.max_iterations`
/// or at `stop.time_limit_s`. None when no plan is feasible (the required patches overrun the
/// budget or hours).
pub fn bound(problem: &Problem, start: &Assignment, incumbent: f64, stop: Stop) -> Option<Bound> {
    let clock = Instant::now();
    let relaxed = Relaxed::new(problem);
    let n = problem.len();
    let log = std::env::var_os("HOSTCUT_RELAX_LOG").is_some();
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
    let mut x = vec![0.0; relaxed.opts.len()];
    for i in 0..n {
        let k = relaxed
            .options(i)
            .find(|&k| relaxed.opts[k].choice == start[i])
            .or_else(|| relaxed.options(i).next());
        if let Some(k) = k {
            x[k] = 1.0;
        }
    }
    let (mut r, mut s) = relaxed.moments(&x);
    let mut best = f64::NEG_INFINITY;
    let mut iterations = 0;
    // Frank–Wolfe until `cap` iterations or `seconds` (from the start), the gap met or no
    // descent left; resumable. false when the relaxed set is empty.
    let mut frank_wolfe = |cap: usize, seconds: f64, x: &mut Vec<f64>, best: &mut f64| -> bool {
        while iterations < cap {
            iterations += 1;
            let f = relaxed.value(&r, &s);
            let g = relaxed.gradient(&r);
            let Some((y, lmo)) = relaxed.oracle(&g) else {
                return false;
            };
            let gx: f64 = g.iter().zip(x.iter()).map(|(a, b)| a * b).sum();
            *best = best.max(f + lmo - gx);
            // HOSTCUT_RELAX_LOG=1 prints the iterates' value and the bound (for developers).
            if log && iterations.is_power_of_two() {
                eprintln!(
                    "relax {iterations:>7} {:>8.2} s  f {f:.9e}  bound {:.9e}  incumbent {incumbent:.9e}  gap(f) {:.3e}  gap(incumbent) {:.3e}",
                    clock.elapsed().as_secs_f64(),
                    *best,
                    (f - *best) / f,
                    (incumbent - *best) / incumbent
                );
            }
            if met(*best) || clock.elapsed().as_secs_f64() >= seconds {
                break;
            }
            let gy: f64 = g.iter().zip(&y).map(|(a, b)| a * b).sum();
            let gd = gy - gx;
            if gd >= -1e-15 * f.abs().max(1e-300) {
                break;
            }
            let d: Vec<f64> = y.iter().zip(x.iter()).map(|(a, b)| a - b).collect();
            let (dr, ds) = relaxed.moments(&d);
            let q = relaxed.curvature(&dr);
            let gamma = if q > 0.0 {
                (-gd / (2.0 * q)).min(1.0)
            } else {
                1.0
            };
            x.iter_mut().zip(&d).for_each(|(a, b)| *a += gamma * b);
            r.iter_mut().zip(&dr).for_each(|(a, b)| *a += gamma * b);
            s.iter_mut().zip(&ds).for_each(|(a, b)| *a += gamma * b);
        }
        true
    };
    // A short Frank–Wolfe run first: on densely linked clusters the convex reformulation is
    // nearly exact and a few iterations prove the gap. Then message passing on the
    // local-polytope LP (far tighter on sparse graphs), then the Lagrangian of the convex
    // reformulation; Frank–Wolfe gets whatever time is left.
    if !frank_wolfe(
        stop.max_iterations.min(64),
        0.1 * stop.time_limit_s,
        &mut x,
        &mut best,
    ) {
        return None;
    }
    let mut dual: Option<(f64, Vec<f64>, usize)> = None;
    if !met(best) && !out_of_time() {
        dual = message_passing(&relaxed, incumbent, stop, &clock);
        if log && let Some((b, _, evaluations)) = &dual {
            eprintln!(
                "message passing: bound {b:.9e} after {evaluations} evaluations, {:.2} s, gap(incumbent) {:.3e}",
                clock.elapsed().as_secs_f64(),
                (incumbent - b) / incumbent
            );
        }
    }
    let dual_met = |d: &Option<(f64, Vec<f64>, usize)>| d.as_ref().is_some_and(|d| met(d.0));
    if !met(best) && !dual_met(&dual) && !out_of_time() {
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
    if !met(best) && !dual_met(&dual) && !out_of_time() {
        frank_wolfe(stop.max_iterations, stop.time_limit_s, &mut x, &mut best);
    }
    let (best, weights) = match dual {
        Some((b, y, _)) if b > best => (b, weights_of(&y)),
        _ => (best, weights_of(&x)),
    };
    Some(Bound {
        value: best.min(incumbent).max(0.0),
        iterations,
        components: relaxed.components,
        min_shift: relaxed.min_shift,
        weights,
        seconds: clock.elapsed().as_secs_f64(),
    })
}
