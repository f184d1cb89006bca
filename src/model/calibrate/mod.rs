//! Fitting the simulation's occupancy model (see [`crate::model::simulate`]) to survey history by
//! maximum likelihood: the kernel scale alpha (profiled on a grid, refined by golden-section
//! search), colonisation c, extinction e and introduction weight iota (Nelder–Mead from the
//! `argmin` crate, on log scale), for each kernel family; profile-likelihood intervals for alpha,
//! Wald intervals for the others, AIC (Akaike 1974) to choose the family.
//!
//! # The likelihood
//! Observations are patch-years: occupied (a positive survey), empty (only negatives) or not
//! surveyed. The first survey year is conditioned on; each later year contributes
//! log P(observed state | the states a year before). A patch not surveyed in a year is a hidden
//! state:
//! - [`exact_log_likelihood`] runs the forward algorithm of the hidden Markov model over all 2^n
//!   joint states (tiny landscapes only; checked against brute-force enumeration of every hidden
//!   path in the tests);
//! - [`log_likelihood`] is a mean-field forward filter: each patch carries
//!   q_i = P(occupied | its own data so far); neighbours enter the connectivity through their q.
//!   With every patch surveyed every year it *is* the exact likelihood; with gaps it is an
//!   approximation whose bias the tests measure against the exact one.
//!
//! The survey records themselves (reading, reprojection, assignment to patches) are in
//! [`surveys`].
//!
//! Surveys are taken as perfect (a negative means empty): detection error is not modelled.
//! Unobserved patches in the first year start at the share of positives among those surveyed.

pub mod surveys;

use argmin::core::{CostFunction, Executor};
use argmin::solver::neldermead::NelderMead;

use crate::core::kernel::{Kernel, KernelKind};

/// Largest landscape for the exact (2^n-state) likelihood.
pub const EXACT_MAX_PATCHES: usize = 10;

/// chi-square(1) 95 % point / 2: the profile drop that bounds a 95 % interval (Wilks).
pub const PROFILE_DROP: f64 = 1.920_729_4;

/// Survey history per year (consecutive years from the first), per patch.
#[derive(Debug, Clone)]
pub struct Observations {
    pub first_year: i32,
    /// states[t][i]: Some(true) occupied, Some(false) empty, None not surveyed.
    pub states: Vec<Vec<Option<bool>>>,
}

impl Observations {
    /// Observed patch-years after the first year: the likelihood's terms.
    pub fn transitions(&self) -> usize {
        self.states
            .iter()
            .skip(1)
            .map(|y| y.iter().filter(|s| s.is_some()).count())
            .sum()
    }

    fn initial_share(&self) -> f64 {
        let first = &self.states[0];
        let seen: Vec<bool> = first.iter().flatten().copied().collect();
        if seen.is_empty() {
            0.5
        } else {
            (seen.iter().filter(|s| **s).count() as f64 / seen.len() as f64).clamp(0.01, 0.99)
        }
    }
}

/// The landscape the likelihood needs: host shares and every pair within reach with its
/// distance (metres).
#[derive(Debug, Clone)]
pub struct Geometry {
    pub share: Vec<f64>,
    pub pairs: Vec<(usize, usize, f64)>,
    pub epsilon: f64,
    /// x, held fixed.
    pub extinction_exponent: f64,
}

/// Model parameters being fitted.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Theta {
    pub alpha_m: f64,
    pub colonisation: f64,
    pub extinction: f64,
    pub introduction: f64,
}

/// k(d) of the family at scale `alpha` (metres): the one formula in [`Kernel::value`].
pub fn kernel(family: KernelKind, d: f64, alpha: f64) -> f64 {
    Kernel {
        kind: family,
        alpha_m: alpha,
    }
    .value(d)
}

fn links(g: &Geometry, family: KernelKind, alpha: f64) -> Vec<(usize, usize, f64)> {
    g.pairs
        .iter()
        .map(|&(i, j, d)| (i, j, kernel(family, d, alpha)))
        .filter(|l| l.2 >= g.epsilon)
        .collect()
}

/// Per-patch yearly colonisation and extinction probabilities given the occupancy
/// (probabilities) of the year before.
fn rates(
    g: &Geometry,
    links: &[(usize, usize, f64)],
    theta: &Theta,
    pressure: &[f64],
    occupied: &[f64],
) -> (Vec<f64>, Vec<f64>) {
    let n = g.share.len();
    let area: Vec<f64> = g.share.iter().map(|a| n as f64 * a).collect();
    let mut s = vec![0.0; n];
    for &(i, j, k) in links {
        s[i] += k * area[j] * occupied[j];
        s[j] += k * area[i] * occupied[i];
    }
    let col = (0..n)
        .map(|i| {
            1.0 - (-theta.colonisation * area[i] * (s[i] + theta.introduction * pressure[i])).exp()
        })
        .collect();
    let ext = (0..n)
        .map(|i| {
            if area[i] <= 0.0 {
                1.0
            } else {
                (theta.extinction / area[i].powf(g.extinction_exponent)).min(1.0)
            }
        })
        .collect();
    (col, ext)
}

fn ln(p: f64) -> f64 {
    p.max(1e-300).ln()
}

/// The mean-field forward filter's log-likelihood (exact with complete surveys).
pub fn log_likelihood(
    g: &Geometry,
    obs: &Observations,
    family: KernelKind,
    theta: &Theta,
    pressure: &[f64],
) -> f64 {
    let links = links(g, family, theta.alpha_m);
    let q0 = obs.initial_share();
    let mut q: Vec<f64> = obs.states[0]
        .iter()
        .map(|s| s.map(|o| f64::from(u8::from(o))).unwrap_or(q0))
        .collect();
    let mut ll = 0.0;
    for year in &obs.states[1..] {
        let (col, ext) = rates(g, &links, theta, pressure, &q);
        for i in 0..q.len() {
            let predicted = q[i] * (1.0 - ext[i]) + (1.0 - q[i]) * col[i];
            match year[i] {
                Some(true) => {
                    ll += ln(predicted);
                    q[i] = 1.0;
                }
                Some(false) => {
                    ll += ln(1.0 - predicted);
                    q[i] = 0.0;
                }
                None => q[i] = predicted,
            }
        }
    }
    ll
}

/// The exact log-likelihood by the forward algorithm over all joint states (n <= 10).
pub fn exact_log_likelihood(
    g: &Geometry,
    obs: &Observations,
    family: KernelKind,
    theta: &Theta,
    pressure: &[f64],
) -> f64 {
    let n = g.share.len();
    assert!(n <= EXACT_MAX_PATCHES, "exact likelihood on {n} patches");
    let links = links(g, family, theta.alpha_m);
    let states = 1usize << n;
    let bit = |s: usize, i: usize| (s >> i) & 1 == 1;
    let consistent =
        |s: usize, year: &[Option<bool>]| (0..n).all(|i| year[i].is_none_or(|o| o == bit(s, i)));
    let q0 = obs.initial_share();
    // alpha over joint states, conditioned on the first year's observations.
    let mut alpha: Vec<f64> = (0..states)
        .map(|s| {
            if !consistent(s, &obs.states[0]) {
                return 0.0;
            }
            (0..n)
                .filter(|&i| obs.states[0][i].is_none())
                .map(|i| if bit(s, i) { q0 } else { 1.0 - q0 })
                .product()
        })
        .collect();
    // Per source state: each patch's probability of being occupied next year.
    let next_occupied: Vec<Vec<f64>> = (0..states)
        .map(|s| {
            let occ: Vec<f64> = (0..n).map(|i| f64::from(u8::from(bit(s, i)))).collect();
            let (col, ext) = rates(g, &links, theta, pressure, &occ);
            (0..n)
                .map(|i| if bit(s, i) { 1.0 - ext[i] } else { col[i] })
                .collect()
        })
        .collect();
    let mut ll = 0.0;
    for year in &obs.states[1..] {
        let mut next = vec![0.0; states];
        for (from, &a) in alpha.iter().enumerate() {
            if a == 0.0 {
                continue;
            }
            for (to, slot) in next.iter_mut().enumerate() {
                if !consistent(to, year) {
                    continue;
                }
                let p: f64 = (0..n)
                    .map(|i| {
                        let po = next_occupied[from][i];
                        if bit(to, i) { po } else { 1.0 - po }
                    })
                    .product();
                *slot += a * p;
            }
        }
        // Normalise each year and keep the log of the scale (no underflow).
        let total: f64 = next.iter().sum();
        ll += ln(total);
        if total > 0.0 {
            next.iter_mut().for_each(|v| *v /= total);
        }
        alpha = next;
    }
    ll
}

/// The likelihood the fit uses: exact on tiny landscapes, the mean-field filter otherwise.
pub fn fit_log_likelihood(
    g: &Geometry,
    obs: &Observations,
    family: KernelKind,
    theta: &Theta,
    pressure: &[f64],
) -> f64 {
    if g.share.len() <= EXACT_MAX_PATCHES {
        exact_log_likelihood(g, obs, family, theta, pressure)
    } else {
        log_likelihood(g, obs, family, theta, pressure)
    }
}

/// One family's fit.
#[derive(Debug, Clone)]
pub struct FamilyFit {
    pub family: KernelKind,
    pub theta: Theta,
    pub log_likelihood: f64,
    /// 2 k - 2 ln L with k = 4.
    pub aic: f64,
    /// Profile-likelihood 95 % interval for alpha; `None` on a side where the profile does not
    /// fall by [`PROFILE_DROP`] inside the searched range.
    pub alpha_low: Option<f64>,
    pub alpha_high: Option<f64>,
    /// Wald 95 % intervals (log scale, alpha fixed at its estimate) for c, e, iota.
    pub colonisation_ci: Option<(f64, f64)>,
    pub extinction_ci: Option<(f64, f64)>,
    pub introduction_ci: Option<(f64, f64)>,
    /// (alpha, profile log-likelihood), ascending alpha.
    pub profile: Vec<(f64, f64)>,
}

struct Inner<'a> {
    g: &'a Geometry,
    obs: &'a Observations,
    family: KernelKind,
    alpha: f64,
    pressure: &'a [f64],
}

fn theta_of(alpha: f64, p: &[f64]) -> Theta {
    Theta {
        alpha_m: alpha,
        colonisation: p[0].clamp(-30.0, 10.0).exp(),
        extinction: p[1].clamp(-30.0, 5.0).exp(),
        introduction: p[2].clamp(-30.0, 10.0).exp(),
    }
}

impl CostFunction for Inner<'_> {
    type Param = Vec<f64>;
    type Output = f64;
    fn cost(&self, p: &Vec<f64>) -> Result<f64, argmin::core::Error> {
        let theta = theta_of(self.alpha, p);
        let v = -fit_log_likelihood(self.g, self.obs, self.family, &theta, self.pressure);
        Ok(if v.is_finite() { v } else { 1e300 })
    }
}

/// Maximise over (ln c, ln e, ln iota) at a fixed alpha, from `start`.
fn maximise_at(
    g: &Geometry,
    obs: &Observations,
    family: KernelKind,
    alpha: f64,
    pressure: &[f64],
    start: &[f64],
) -> (Vec<f64>, f64) {
    let mut simplex = vec![start.to_vec()];
    for k in 0..start.len() {
        let mut v = start.to_vec();
        v[k] += 0.7;
        simplex.push(v);
    }
    let cost = Inner {
        g,
        obs,
        family,
        alpha,
        pressure,
    };
    let solver = NelderMead::new(simplex)
        .with_sd_tolerance(1e-9)
        .expect("positive tolerance");
    match Executor::new(cost, solver)
        .configure(|s| s.max_iters(1500))
        .run()
    {
        Ok(res) => {
            let best = res
                .state
                .best_param
                .clone()
                .unwrap_or_else(|| start.to_vec());
            (best, -res.state.best_cost)
        }
        Err(_) => (start.to_vec(), f64::NEG_INFINITY),
    }
}

/// Fit one family: profile over `alphas` (ascending), refine the best by golden-section search
/// between its neighbours, then intervals. `pressure_at(alpha)` gives pi for that scale.
pub fn fit_family(
    g: &Geometry,
    obs: &Observations,
    family: KernelKind,
    alphas: &[f64],
    pressure_at: &dyn Fn(f64) -> Vec<f64>,
) -> FamilyFit {
    let mut start = vec![0.5f64.ln(), 0.2f64.ln(), 0.05f64.ln()];
    let mut profile: Vec<(f64, f64, Vec<f64>)> = Vec::new();
    for &alpha in alphas {
        let pressure = pressure_at(alpha);
        // Two starts: the previous alpha's optimum and the defaults; keep the better.
        let a = maximise_at(g, obs, family, alpha, &pressure, &start);
        let b = maximise_at(
            g,
            obs,
            family,
            alpha,
            &pressure,
            &[0.5f64.ln(), 0.2f64.ln(), 0.05f64.ln()],
        );
        let best = if a.1 >= b.1 { a } else { b };
        start = best.0.clone();
        profile.push((alpha, best.1, best.0));
    }
    let k = (0..profile.len())
        .max_by(|&a, &b| profile[a].1.total_cmp(&profile[b].1))
        .expect("a grid");
    // Golden-section refinement on ln alpha between the neighbours of the best grid point.
    let (mut lo, mut hi) = (
        profile[k.saturating_sub(1)].0.ln(),
        profile[(k + 1).min(profile.len() - 1)].0.ln(),
    );
    let mut best = profile[k].clone();
    let eval = |la: f64, from: &[f64]| {
        let alpha = la.exp();
        let pressure = pressure_at(alpha);
        let (p, ll) = maximise_at(g, obs, family, alpha, &pressure, from);
        (alpha, ll, p)
    };
    const PHI: f64 = 0.618_033_988_749_894_8;
    for _ in 0..12 {
        if hi - lo < 1e-3 {
            break;
        }
        let m1 = hi - PHI * (hi - lo);
        let m2 = lo + PHI * (hi - lo);
        let a = eval(m1, &best.2);
        let b = eval(m2, &best.2);
        if a.1 >= b.1 {
            hi = m2;
            if a.1 > best.1 {
                best = a;
            }
        } else {
            lo = m1;
            if b.1 > best.1 {
                best = b;
            }
        }
    }
    let mut all: Vec<(f64, f64)> = profile.iter().map(|p| (p.0, p.1)).collect();
    all.push((best.0, best.1));
    all.sort_by(|a, b| a.0.total_cmp(&b.0));
    all.dedup_by(|a, b| (a.0 - b.0).abs() < 1e-9 * b.0);
    let ll_max = all.iter().map(|p| p.1).fold(f64::NEG_INFINITY, f64::max);
    let cut = ll_max - PROFILE_DROP;
    let at = all
        .iter()
        .position(|p| p.1 >= ll_max - 1e-12)
        .expect("max is in the list");
    // Linear interpolation in ln alpha where the profile crosses the cut.
    let cross = |a: (f64, f64), b: (f64, f64)| {
        let t = (cut - a.1) / (b.1 - a.1);
        (a.0.ln() + t * (b.0.ln() - a.0.ln())).exp()
    };
    let alpha_low = (0..at)
        .rev()
        .find(|&j| all[j].1 < cut)
        .map(|j| cross(all[j], all[j + 1]));
    let alpha_high = (at + 1..all.len())
        .find(|&j| all[j].1 < cut)
        .map(|j| cross(all[j - 1], all[j]));
    let theta = theta_of(best.0, &best.2);
    let pressure = pressure_at(best.0);
    let cis = wald(g, obs, family, best.0, &pressure, &best.2);
    FamilyFit {
        family,
        theta,
        log_likelihood: best.1,
        aic: 2.0 * 4.0 - 2.0 * best.1,
        alpha_low,
        alpha_high,
        colonisation_ci: cis[0],
        extinction_ci: cis[1],
        introduction_ci: cis[2],
        profile: all,
    }
}

/// Wald intervals exp(p ± 1.96 sqrt((H^-1)_kk)) from the numerical Hessian H of -ln L in
/// (ln c, ln e, ln iota) by central differences; `None` where H is not positive definite.
fn wald(
    g: &Geometry,
    obs: &Observations,
    family: KernelKind,
    alpha: f64,
    pressure: &[f64],
    p: &[f64],
) -> [Option<(f64, f64)>; 3] {
    let f = |q: &[f64]| -fit_log_likelihood(g, obs, family, &theta_of(alpha, q), pressure);
    let h = 1e-3;
    let mut hess = [[0.0; 3]; 3];
    for a in 0..3 {
        for b in 0..3 {
            let at = |da: f64, db: f64| {
                let mut q = p.to_vec();
                q[a] += da;
                q[b] += db;
                f(&q)
            };
            hess[a][b] = (at(h, h) - at(h, -h) - at(-h, h) + at(-h, -h)) / (4.0 * h * h);
        }
    }
    let Some(inv) = invert3(&hess) else {
        return [None; 3];
    };
    let mut out = [None; 3];
    for k in 0..3 {
        if inv[k][k] > 0.0 && inv[k][k].is_finite() {
            let se = inv[k][k].sqrt();
            out[k] = Some(((p[k] - 1.96 * se).exp(), (p[k] + 1.96 * se).exp()));
        }
    }
    out
}

fn invert3(m: &[[f64; 3]; 3]) -> Option<[[f64; 3]; 3]> {
    let det = m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
        - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
        + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0]);
    if !det.is_finite() || det <= 0.0 {
        return None;
    }
    let mut inv = [[0.0; 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            let (a, b) = ((j + 1) % 3, (j + 2) % 3);
            let (c, d) = ((i + 1) % 3, (i + 2) % 3);
            inv[i][j] = (m[a][c] * m[b][d] - m[a][d] * m[b][c]) / det;
        }
    }
    Some(inv)
}

/// `steps` scales from `min` to `max`, evenly spaced on log scale.
pub fn alpha_grid(min: f64, max: f64, steps: usize) -> Vec<f64> {
    let steps = steps.max(3);
    (0..steps)
        .map(|k| (min.ln() + (max.ln() - min.ln()) * k as f64 / (steps - 1) as f64).exp())
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn inverse_of_a_known_matrix() {
        let m = [[4.0, 1.0, 0.0], [1.0, 3.0, 0.5], [0.0, 0.5, 2.0]];
        let inv = invert3(&m).unwrap();
        for i in 0..3 {
            for j in 0..3 {
                let v: f64 = (0..3).map(|k| m[i][k] * inv[k][j]).sum();
                assert!((v - f64::from(u8::from(i == j))).abs() < 1e-12);
            }
        }
        assert!(invert3(&[[1.0, 0.0, 0.0], [0.0, -1.0, 0.0], [0.0, 0.0, 1.0]]).is_none());
    }
}
