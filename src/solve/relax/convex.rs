//! The convex reformulation of R and its Frank–Wolfe bound: [`Relaxed`] holds each patch's
//! options, the per-component eigenvalue shift and the linear-minimisation oracle;
//! [`FrankWolfe`] runs the iterations.
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
//!
//! # Units
//! As the optimiser: costs in catalogue currency, hours in crew hours, R in share-squared units.

use std::time::Instant;

use crate::solve::components::components;
use crate::solve::problem::{Assignment, Problem};
use crate::solve::relax::dual::{Stop, log_enabled};
use crate::solve::relax::lanczos::smallest_eigenvalue;

/// One option of a patch in the relaxation: untreated (choice None) or a choice.
#[derive(Debug, Clone, Copy)]
pub(super) struct Opt {
    pub(super) choice: Option<usize>,
    pub(super) cost: f64,
    pub(super) hours: f64,
    /// e: the share of host left.
    pub(super) e: f64,
}

/// The relaxation of one problem: options, shifts and link lists.
pub(super) struct Relaxed<'a> {
    pub(super) problem: &'a Problem<'a>,
    /// Per patch: start of its options in `opts`.
    pub(super) start: Vec<usize>,
    pub(super) opts: Vec<Opt>,
    /// t_i sigma_i: the linearised part of the diagonal.
    pub(super) linear: Vec<f64>,
    /// Q_ii - t_i sigma_i: the diagonal left in the convex quadratic.
    pub(super) quadratic: Vec<f64>,
    pub(super) components: usize,
    pub(super) min_shift: f64,
}

impl<'a> Relaxed<'a> {
    pub(super) fn new(problem: &'a Problem<'a>) -> Relaxed<'a> {
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

    pub(super) fn options(&self, i: usize) -> std::ops::Range<usize> {
        self.start[i]..self.start[i + 1]
    }

    /// r and s of the relaxed point x.
    pub(super) fn moments(&self, x: &[f64]) -> (Vec<f64>, Vec<f64>) {
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
    pub(super) fn value(&self, r: &[f64], s: &[f64]) -> f64 {
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
    pub(super) fn curvature(&self, dr: &[f64]) -> f64 {
        let mut q: f64 = (0..dr.len())
            .map(|i| self.quadratic[i] * dr[i] * dr[i])
            .sum();
        for l in &self.problem.model.links {
            q += l.weight * dr[l.a] * dr[l.b];
        }
        q
    }

    /// The gradient of f with respect to each option weight.
    pub(super) fn gradient(&self, r: &[f64]) -> Vec<f64> {
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
    pub(super) fn knapsack_lp(&self, v: &[f64]) -> Option<(Vec<f64>, f64)> {
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
    pub(super) fn oracle(&self, g: &[f64]) -> Option<(Vec<f64>, f64)> {
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

/// Frank–Wolfe on the convex reformulation, resumable: the relaxed point x (indexed like the
/// options), its moments r and s, the best bound proven so far and the iterations run.
pub(super) struct FrankWolfe<'r, 'a> {
    relaxed: &'r Relaxed<'a>,
    pub(super) x: Vec<f64>,
    r: Vec<f64>,
    s: Vec<f64>,
    pub(super) best: f64,
    pub(super) iterations: usize,
}

impl<'r, 'a> FrankWolfe<'r, 'a> {
    /// Start at the plan `start` (a patch whose choice is not among its options starts at its
    /// first option).
    pub(super) fn new(relaxed: &'r Relaxed<'a>, start: &Assignment) -> FrankWolfe<'r, 'a> {
        let n = relaxed.problem.len();
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
        let (r, s) = relaxed.moments(&x);
        FrankWolfe {
            relaxed,
            x,
            r,
            s,
            best: f64::NEG_INFINITY,
            iterations: 0,
        }
    }

    /// Iterate until `cap` iterations in all or `seconds` on `clock`, the bound within
    /// `stop.gap` of `incumbent`, or no descent left (the exact line search of a quadratic).
    /// false when the relaxed set is empty.
    pub(super) fn run(
        &mut self,
        cap: usize,
        seconds: f64,
        clock: &Instant,
        incumbent: f64,
        stop: Stop,
    ) -> bool {
        let relaxed = self.relaxed;
        let log = log_enabled();
        let met = |b: f64| incumbent - b <= stop.gap * incumbent;
        let FrankWolfe {
            x,
            r,
            s,
            best,
            iterations,
            ..
        } = self;
        while *iterations < cap {
            *iterations += 1;
            let f = relaxed.value(r, s);
            let g = relaxed.gradient(r);
            let Some((y, lmo)) = relaxed.oracle(&g) else {
                return false;
            };
            let gx: f64 = g.iter().zip(x.iter()).map(|(a, b)| a * b).sum();
            *best = best.max(f + lmo - gx);
            // HOSTCUT_RELAX_LOG=1 prints the iterates' value and the bound (for developers).
            if log && iterations.is_power_of_two() {
                eprintln!(
                    "relax {:>7} {:>8.2} s  f {f:.9e}  bound {:.9e}  incumbent {incumbent:.9e}  gap(f) {:.3e}  gap(incumbent) {:.3e}",
                    *iterations,
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
    }
}
