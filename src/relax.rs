//! A proven lower bound on the least achievable R for problems too large for the exact MIP,
//! from a convex reformulation of R solved by Frank–Wolfe.
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

use crate::optimise::{Assignment, Problem};

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

/// Connected components by union-find over the links: (component of each patch, count).
/// Components are numbered in order of their lowest patch.
pub fn components(problem: &Problem) -> (Vec<usize>, usize) {
    let n = problem.len();
    let mut parent: Vec<usize> = (0..n).collect();
    fn find(parent: &mut [usize], mut i: usize) -> usize {
        while parent[i] != i {
            parent[i] = parent[parent[i]];
            i = parent[i];
        }
        i
    }
    for l in &problem.model.links {
        if l.weight <= 0.0 {
            continue;
        }
        let (a, b) = (find(&mut parent, l.a), find(&mut parent, l.b));
        if a != b {
            parent[a.max(b)] = a.min(b);
        }
    }
    let mut label = vec![usize::MAX; n];
    let mut count = 0;
    let mut of = vec![0; n];
    for i in 0..n {
        let root = find(&mut parent, i);
        if label[root] == usize::MAX {
            label[root] = count;
            count += 1;
        }
        of[i] = label[root];
    }
    (of, count)
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
    let mut rng = crate::rng::SplitMix::new(0x5eed);
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

/// The relaxation bound, starting Frank–Wolfe from `start` (a feasible plan, e.g. greedy's)
/// and stopping when the bound is within `stop.gap` of `incumbent`, after `stop.max_iterations`
/// or at `stop.time_limit_s`. None when no plan is feasible (the required patches overrun the
/// budget or hours).
pub fn bound(problem: &Problem, start: &Assignment, incumbent: f64, stop: Stop) -> Option<Bound> {
    let clock = Instant::now();
    let relaxed = Relaxed::new(problem);
    let n = problem.len();
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
    while iterations < stop.max_iterations {
        iterations += 1;
        let f = relaxed.value(&r, &s);
        let g = relaxed.gradient(&r);
        let (y, lmo) = relaxed.oracle(&g)?;
        let gx: f64 = g.iter().zip(&x).map(|(a, b)| a * b).sum();
        best = best.max(f + lmo - gx);
        if incumbent - best <= stop.gap * incumbent
            || clock.elapsed().as_secs_f64() >= stop.time_limit_s
        {
            break;
        }
        let gy: f64 = g.iter().zip(&y).map(|(a, b)| a * b).sum();
        let gd = gy - gx;
        if gd >= -1e-15 * f.abs().max(1e-300) {
            break;
        }
        let d: Vec<f64> = y.iter().zip(&x).map(|(a, b)| a - b).collect();
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
    let weights = (0..n)
        .map(|i| {
            let mut w = vec![0.0; problem.choices[i].len()];
            for k in relaxed.options(i) {
                if let Some(o) = relaxed.opts[k].choice {
                    w[o] = x[k];
                }
            }
            w
        })
        .collect();
    Some(Bound {
        value: best.min(incumbent).max(0.0),
        iterations,
        components: relaxed.components,
        min_shift: relaxed.min_shift,
        weights,
        seconds: clock.elapsed().as_secs_f64(),
    })
}
