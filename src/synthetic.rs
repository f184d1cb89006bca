//! Synthetic landscapes of a given size for benchmarks and tests: clustered patches, stems,
//! a corridor raising the pressure of the patches near it, deterministic by seed. Invented
//! data: never a real place.

use crate::graph::{Kernel, PatchGraph, build_graph};
use crate::model::RiskModel;
use crate::patches::{Access, Herbicide, Patch, PatchId, Site};
use crate::rng::SplitMix;

/// What to generate.
#[derive(Debug, Clone, Copy)]
pub struct Spec {
    pub patches: usize,
    /// Clusters the patches gather in (1 = one cloud).
    pub clusters: usize,
    /// Side of the square area, metres.
    pub side_m: f64,
    /// Spread of a cluster (standard deviation, metres).
    pub spread_m: f64,
    pub kernel: Kernel,
    pub epsilon: f64,
    pub seed: u64,
}

/// A generated landscape.
pub struct Landscape {
    pub patches: Vec<Patch>,
    pub graph: PatchGraph,
    pub model: RiskModel,
}

/// Generate: cluster centres uniform in the square, patches normal around them (Box–Muller),
/// stems log-normal (median 150), pressure 1 + 3 within 300 m of a corridor across the middle,
/// one patch in ten on land where herbicide is prohibited.
pub fn generate(spec: &Spec) -> Landscape {
    let mut r = SplitMix::new(spec.seed);
    let centres: Vec<(f64, f64)> = (0..spec.clusters.max(1))
        .map(|_| (r.unit() * spec.side_m, r.unit() * spec.side_m))
        .collect();
    let mut normal = move || {
        let (u1, u2) = (r.unit().max(1e-12), r.unit());
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    };
    let mut patches = Vec::with_capacity(spec.patches);
    for i in 0..spec.patches {
        let c = centres[i % centres.len()];
        let x = (c.0 + spec.spread_m * normal()).clamp(0.0, spec.side_m);
        let y = (c.1 + spec.spread_m * normal()).clamp(0.0, spec.side_m);
        let stems = (150.0 * (0.8 * normal()).exp()).clamp(5.0, 5000.0).round();
        let near_corridor = (y - spec.side_m / 2.0).abs() <= 300.0;
        patches.push(Patch {
            id: PatchId(i as u32),
            label: format!("S{i:06}"),
            x,
            y,
            stems,
            area_ha: None,
            outline: None,
            site: Site {
                parcel: String::new(),
                access: Access::Open,
                herbicide: if i % 10 == 7 {
                    Herbicide::Prohibited
                } else {
                    Herbicide::Allowed
                },
                cost_factor: 1.0,
                contact: String::new(),
            },
            pressure_override: Some(if near_corridor { 4.0 } else { 1.0 }),
            suitability: None,
        });
    }
    let points: Vec<(f64, f64)> = patches.iter().map(|p| (p.x, p.y)).collect();
    let graph = build_graph(&points, spec.kernel, spec.epsilon);
    let stems: Vec<f64> = patches.iter().map(|p| p.stems).collect();
    let pressure: Vec<f64> = patches
        .iter()
        .map(|p| p.pressure_override.unwrap_or(1.0))
        .collect();
    let model = RiskModel::new(&stems, &pressure, &graph);
    Landscape {
        patches,
        graph,
        model,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cli::KernelKind;

    #[test]
    fn same_seed_same_landscape() {
        let spec = Spec {
            patches: 50,
            clusters: 3,
            side_m: 2000.0,
            spread_m: 200.0,
            kernel: Kernel {
                kind: KernelKind::Exp,
                alpha_m: 200.0,
            },
            epsilon: 1e-3,
            seed: 4,
        };
        let (a, b) = (generate(&spec), generate(&spec));
        assert_eq!(a.graph.edges.len(), b.graph.edges.len());
        assert!(
            a.patches
                .iter()
                .zip(&b.patches)
                .all(|(p, q)| p.x == q.x && p.stems == q.stems)
        );
        assert_eq!(a.patches.len(), 50);
        let other = generate(&Spec { seed: 5, ..spec });
        assert!(
            a.patches
                .iter()
                .zip(&other.patches)
                .any(|(p, q)| p.x != q.x)
        );
    }
}
