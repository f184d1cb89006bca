//! Planning across dispersal scenarios: several kernels (family and scale, with weights) over the
//! same patches. The weighted-mean objective is one combined risk model (R is linear in its
//! weights, so sum_s w_s R_s has own terms sum_s w_s pi_i^s a_i^2 and link weights
//! sum_s w_s w_ij^s over the union of links); the worst-case and largest-regret objectives are
//! solved exactly by [`crate::solve::mip::minmax::solve_minmax`].

use std::collections::BTreeMap;

use crate::model::risk::{Link, RiskModel};

/// The weighted mean of risk models over the same patches (weights are normalised to sum to 1).
pub fn combine(models: &[RiskModel], weights: &[f64]) -> RiskModel {
    assert!(!models.is_empty() && models.len() == weights.len());
    let total: f64 = weights.iter().sum();
    let w: Vec<f64> = weights.iter().map(|x| x / total).collect();
    let n = models[0].len();
    let mut own = vec![0.0; n];
    let mut pressure = vec![0.0; n];
    let mut links: BTreeMap<(usize, usize), (f64, f64)> = BTreeMap::new();
    for (m, &ws) in models.iter().zip(&w) {
        for i in 0..n {
            own[i] += ws * m.own[i];
            pressure[i] += ws * m.pressure[i];
        }
        for l in &m.links {
            let e = links
                .entry((l.a.min(l.b), l.a.max(l.b)))
                .or_insert((0.0, 0.0));
            e.0 += ws * l.kernel;
            e.1 += ws * l.weight;
        }
    }
    let links: Vec<Link> = links
        .into_iter()
        .map(|((a, b), (kernel, weight))| Link {
            a,
            b,
            kernel,
            weight,
        })
        .collect();
    let mut adjacency = vec![Vec::new(); n];
    for (k, l) in links.iter().enumerate() {
        adjacency[l.a].push((l.b, k));
        adjacency[l.b].push((l.a, k));
    }
    RiskModel {
        share: models[0].share.clone(),
        pressure,
        own,
        links,
        adjacency,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::core::site::PatchId;
    use crate::model::graph::{Edge, PatchGraph};

    fn model(kernels: &[(usize, usize, f64)], pressure: &[f64]) -> RiskModel {
        let edges = kernels
            .iter()
            .map(|&(a, b, k)| Edge {
                a: PatchId(a as u32),
                b: PatchId(b as u32),
                distance: 0.0,
                kernel: k,
            })
            .collect();
        let graph = PatchGraph {
            n: pressure.len(),
            edges,
        };
        RiskModel::new(&[1.0, 2.0, 3.0], pressure, &graph)
    }

    #[test]
    fn combined_risk_is_the_weighted_mean_for_any_treatment() {
        let a = model(&[(0, 1, 0.5), (1, 2, 0.2)], &[1.0, 2.0, 1.0]);
        let b = model(&[(0, 2, 0.3)], &[1.5, 1.0, 1.0]);
        let c = combine(&[a.clone(), b.clone()], &[3.0, 1.0]);
        for r in [[1.0, 1.0, 1.0], [0.1, 1.0, 0.5], [0.0, 0.3, 1.0]] {
            let want = 0.75 * a.risk(&r) + 0.25 * b.risk(&r);
            assert!((c.risk(&r) - want).abs() < 1e-15, "{r:?}");
        }
        let one = combine(std::slice::from_ref(&a), &[2.0]);
        assert_eq!(one.own, a.own);
        assert_eq!(one.links, a.links);
    }
}
