//! The risk model on the patch graph: host shares a_i, introduction pressure pi_i, the
//! connected-host risk R that the optimiser minimises, and, from the spatially realistic Levins
//! model (Hanski & Ovaskainen 2000), the metapopulation capacity lambda_M, patch values and
//! equilibrium establishment probabilities. All sparse: nothing here builds an n x n matrix.
//!
//! # Units
//! a_i is a share of all stems (sums to 1); R and lambda_M are in units of share squared;
//! treatment enters as r_i, the share of a patch's host left (1 = untreated).

use crate::core::deadline::Deadline;
use crate::model::graph::PatchGraph;

/// A link with its risk weight w_ij = (pi_i + pi_j) a_i a_j k_ij.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Link {
    pub a: usize,
    pub b: usize,
    pub kernel: f64,
    pub weight: f64,
}

/// Everything the optimiser and the reports need from the model.
#[derive(Debug, Clone)]
pub struct RiskModel {
    /// a_i = stems_i / total stems.
    pub share: Vec<f64>,
    /// pi_i.
    pub pressure: Vec<f64>,
    /// pi_i a_i^2: the patch's own term of R.
    pub own: Vec<f64>,
    pub links: Vec<Link>,
    /// For each patch: (neighbour, link index).
    pub adjacency: Vec<Vec<(usize, usize)>>,
}

/// Leading eigenpair of the landscape matrix.
#[derive(Debug, Clone)]
pub struct Capacity {
    /// lambda_M.
    pub lambda: f64,
    /// Unit leading eigenvector x (non-negative).
    pub vector: Vec<f64>,
    pub iterations: usize,
    /// ||M x - lambda x|| at the end.
    pub residual: f64,
    /// False when the iteration stopped at a deadline before converging.
    pub converged: bool,
}

/// The default g of the objective's horizon term: `hostcut simulate`'s default regrowth
/// (`model::simulate::SimParams`), so the two agree unless told otherwise.
pub const HORIZON_REGROWTH: f64 = 0.1;

/// The default T of the objective's horizon term (`hostcut simulate`'s default horizon): on the
/// demo it turns the proxy check's final-year rank correlation from reversed to agreeing and
/// raises the over-the-years one (docs/model.md, "The horizon term"). `--horizon-years 1` gives
/// the one-season objective.
pub const DEFAULT_HORIZON_YEARS: u32 = 10;

/// An option's remaining host r averaged over years 1..`years` as it regrows (the simulation's
/// h <- min(1, h (1 + g)) from h = r in year 1): the mean of min(1, r (1 + g)^(t-1)). A
/// per-option constant, so the objective keeps R's quadratic form and the optimiser stays
/// exact. `years` 0 or 1 gives r itself.
pub fn horizon_remaining(r: f64, years: u32, regrowth: f64) -> f64 {
    if years <= 1 {
        return r;
    }
    let mut h = r;
    let mut sum = 0.0;
    for _ in 0..years {
        sum += h.min(1.0);
        h *= 1.0 + regrowth;
    }
    sum / years as f64
}

/// Iterations the metrics always get, even past the deadline.
pub const MIN_ITERATIONS: usize = 20;

impl RiskModel {
    /// Build from stems, pressure and the graph. Links to a patch without host (share 0:
    /// suitability 0 or no stems) carry nothing in R, lambda_M or the simulation and are left
    /// out, so the link indices here are not the graph's.
    pub fn new(stems: &[f64], pressure: &[f64], graph: &PatchGraph) -> RiskModel {
        let total: f64 = stems.iter().sum();
        let share: Vec<f64> = stems.iter().map(|s| s / total).collect();
        let own = share.iter().zip(pressure).map(|(a, p)| p * a * a).collect();
        let links: Vec<Link> = graph
            .edges
            .iter()
            .filter(|e| share[e.a.index()] > 0.0 && share[e.b.index()] > 0.0)
            .map(|e| {
                let (a, b) = (e.a.index(), e.b.index());
                Link {
                    a,
                    b,
                    kernel: e.kernel,
                    weight: (pressure[a] + pressure[b]) * share[a] * share[b] * e.kernel,
                }
            })
            .collect();
        let mut adjacency = vec![Vec::new(); share.len()];
        for (k, l) in links.iter().enumerate() {
            adjacency[l.a].push((l.b, k));
            adjacency[l.b].push((l.a, k));
        }
        RiskModel {
            share,
            pressure: pressure.to_vec(),
            own,
            links,
            adjacency,
        }
    }

    pub fn len(&self) -> usize {
        self.share.len()
    }

    pub fn is_empty(&self) -> bool {
        self.share.is_empty()
    }

    /// R = sum_i pi_i a_i^2 r_i^2 + sum_links (pi_i + pi_j) a_i a_j k_ij r_i r_j.
    pub fn risk(&self, remaining: &[f64]) -> f64 {
        let own: f64 = self.own.iter().zip(remaining).map(|(o, r)| o * r * r).sum();
        let pairs: f64 = self
            .links
            .iter()
            .map(|l| l.weight * remaining[l.a] * remaining[l.b])
            .sum();
        own + pairs
    }

    /// R with nothing treated.
    pub fn risk_before(&self) -> f64 {
        self.risk(&vec![1.0; self.len()])
    }

    /// Each patch's share of R before treatment: its own term plus half of each of its links.
    /// The shares sum to 1.
    pub fn risk_shares(&self) -> Vec<f64> {
        let mut part = self.own.clone();
        for l in &self.links {
            part[l.a] += l.weight / 2.0;
            part[l.b] += l.weight / 2.0;
        }
        let total: f64 = part.iter().sum();
        if total > 0.0 {
            part.iter_mut().for_each(|p| *p /= total);
        }
        part
    }

    /// y = M_r x with m_ij = k_ij a_i r_i a_j r_j (i != j), m_ii = 0.
    fn multiply(&self, remaining: &[f64], x: &[f64], y: &mut [f64]) {
        y.iter_mut().for_each(|v| *v = 0.0);
        for l in &self.links {
            let m = l.kernel * self.share[l.a] * remaining[l.a] * self.share[l.b] * remaining[l.b];
            y[l.a] += m * x[l.b];
            y[l.b] += m * x[l.a];
        }
    }

    /// Metapopulation capacity lambda_M of the landscape after treatment `remaining`, by shifted
    /// power iteration on the sparse symmetric matrix (the shift keeps bipartite graphs from
    /// oscillating).
    pub fn capacity(&self, remaining: &[f64]) -> Capacity {
        self.capacity_until(remaining, &Deadline::never())
    }

    /// As [`RiskModel::capacity`], stopping at `deadline` (after at least
    /// [`MIN_ITERATIONS`]); [`Capacity::converged`] says whether it got there.
    pub fn capacity_until(&self, remaining: &[f64], deadline: &Deadline) -> Capacity {
        let n = self.len();
        if n == 0 {
            return Capacity {
                lambda: 0.0,
                vector: Vec::new(),
                iterations: 0,
                residual: 0.0,
                converged: true,
            };
        }
        // Gershgorin bound on lambda for the shift and the zero test.
        let mut row = vec![0.0; n];
        for l in &self.links {
            let m = l.kernel * self.share[l.a] * remaining[l.a] * self.share[l.b] * remaining[l.b];
            row[l.a] += m;
            row[l.b] += m;
        }
        let bound = row.iter().cloned().fold(0.0, f64::max);
        let mut x = vec![1.0 / (n as f64).sqrt(); n];
        if bound <= 0.0 {
            return Capacity {
                lambda: 0.0,
                vector: x,
                iterations: 0,
                residual: 0.0,
                converged: true,
            };
        }
        let shift = 0.25 * bound;
        let mut y = vec![0.0; n];
        let mut lambda = 0.0;
        let mut residual = f64::INFINITY;
        let mut iterations = 0;
        let max_iterations = 200_000;
        while iterations < max_iterations {
            iterations += 1;
            self.multiply(remaining, &x, &mut y);
            lambda = x.iter().zip(&y).map(|(a, b)| a * b).sum::<f64>();
            residual = x
                .iter()
                .zip(&y)
                .map(|(a, b)| (b - lambda * a).powi(2))
                .sum::<f64>()
                .sqrt();
            if residual <= 1e-11 * bound {
                break;
            }
            if iterations >= MIN_ITERATIONS && deadline.passed() {
                break;
            }
            for (yi, xi) in y.iter_mut().zip(&x) {
                *yi += shift * xi;
            }
            let norm = y.iter().map(|v| v * v).sum::<f64>().sqrt();
            for (xi, yi) in x.iter_mut().zip(&y) {
                *xi = yi / norm;
            }
        }
        Capacity {
            lambda,
            vector: x,
            iterations,
            residual,
            converged: residual <= 1e-11 * bound,
        }
    }

    /// Equilibrium establishment probabilities including introductions:
    /// p_i = u_i / (u_i + delta), u_i = a_i r_i (sum_j k_ij a_j r_j p_j + iota pi_i),
    /// by fixed-point iteration from p = 1 (monotone, so it converges to the largest fixed point).
    pub fn establishment(&self, remaining: &[f64], delta: f64, iota: f64) -> Vec<f64> {
        self.establishment_until(remaining, delta, iota, &Deadline::never())
            .0
    }

    /// As [`RiskModel::establishment`], stopping at `deadline` (after at least
    /// [`MIN_ITERATIONS`]); the flag is true when the iteration converged.
    pub fn establishment_until(
        &self,
        remaining: &[f64],
        delta: f64,
        iota: f64,
        deadline: &Deadline,
    ) -> (Vec<f64>, bool) {
        let n = self.len();
        let mut p = vec![1.0; n];
        let mut s = vec![0.0; n];
        for iteration in 0..100_000 {
            if iteration >= MIN_ITERATIONS && deadline.passed() {
                return (p, false);
            }
            s.iter_mut().for_each(|v| *v = 0.0);
            for l in &self.links {
                s[l.a] += l.kernel * self.share[l.b] * remaining[l.b] * p[l.b];
                s[l.b] += l.kernel * self.share[l.a] * remaining[l.a] * p[l.a];
            }
            let mut change: f64 = 0.0;
            for i in 0..n {
                let u = self.share[i] * remaining[i] * (s[i] + iota * self.pressure[i]);
                let next = if u + delta > 0.0 {
                    u / (u + delta)
                } else {
                    0.0
                };
                change = change.max((next - p[i]).abs());
                p[i] = next;
            }
            if change < 1e-13 {
                return (p, true);
            }
        }
        (p, false)
    }

    /// The persistence threshold delta = e/c used for p*: lambda_M before / `persistence_ratio`;
    /// with no links at all, sum a_i^2 / `persistence_ratio`.
    pub fn delta(&self, lambda_before: f64, persistence_ratio: f64) -> f64 {
        let base = if lambda_before > 0.0 {
            lambda_before
        } else {
            self.share.iter().map(|a| a * a).sum()
        };
        base / persistence_ratio
    }
}
