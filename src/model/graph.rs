//! The patch graph: which patches can exchange insects (links found with an R*-tree, never by
//! testing all pairs), the kernel weight of each link, and each patch's introduction pressure
//! from corridors and detections.
//!
//! # Units
//! Distances in metres between stem-weighted centroids (working CRS); the kernel is
//! dimensionless in [0, 1].

use geo::{BoundingRect, Distance, Euclidean};
use rstar::primitives::{GeomWithData, Line as RLine};
use rstar::{AABB, RTree};

use crate::core::kernel::Kernel;
use crate::core::site::PatchId;
use crate::input::layers::Corridor;
use crate::input::patches::Patches;

/// The most links this version plans with (one graph, the scenarios of an ensemble together,
/// or the widest graph a calibration searches): beyond it the models no longer fit in memory.
pub const MAX_LINKS: usize = 5_000_000;

/// A link between two patches, `a < b`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Edge {
    pub a: PatchId,
    pub b: PatchId,
    pub distance: f64,
    pub kernel: f64,
}

/// Links between patches with k(d) >= epsilon.
#[derive(Debug, Clone)]
pub struct PatchGraph {
    pub n: usize,
    pub edges: Vec<Edge>,
}

impl PatchGraph {
    /// Neighbour lists: for each patch, (neighbour, edge index).
    pub fn adjacency(&self) -> Vec<Vec<(usize, usize)>> {
        let mut adj = vec![Vec::new(); self.n];
        for (e, edge) in self.edges.iter().enumerate() {
            adj[edge.a.index()].push((edge.b.index(), e));
            adj[edge.b.index()].push((edge.a.index(), e));
        }
        adj
    }
}

/// Link every pair of points whose kernel value is at least `epsilon`.
pub fn build_graph(points: &[(f64, f64)], kernel: Kernel, epsilon: f64) -> PatchGraph {
    let tree = RTree::bulk_load(
        points
            .iter()
            .enumerate()
            .map(|(i, &(x, y))| GeomWithData::new([x, y], i))
            .collect(),
    );
    // Query slightly past the cutoff and test k itself, so rounding never drops a link.
    let radius = kernel.cutoff(epsilon) * (1.0 + 1e-9) + 1e-9;
    let mut edges = Vec::new();
    for (i, &(x, y)) in points.iter().enumerate() {
        let mut near: Vec<usize> = tree
            .locate_within_distance([x, y], radius * radius)
            .map(|g| g.data)
            .filter(|&j| j > i)
            .collect();
        near.sort_unstable();
        for j in near {
            let (xj, yj) = points[j];
            let d = ((x - xj).powi(2) + (y - yj).powi(2)).sqrt();
            let k = kernel.value(d);
            if k >= epsilon {
                edges.push(Edge {
                    a: PatchId(i as u32),
                    b: PatchId(j as u32),
                    distance: d,
                    kernel: k,
                });
            }
        }
    }
    PatchGraph {
        n: points.len(),
        edges,
    }
}

/// Introduction pressure of each patch and the corridors within reach of it.
#[derive(Debug, Clone)]
pub struct Pressure {
    pub values: Vec<f64>,
    /// Names of the corridors whose buffer reaches each patch.
    pub corridors: Vec<Vec<String>>,
}

/// pi_i = 1 + sum_c beta_c [dist(patch i, corridor c) <= b_c] + gamma sum_d k(dist(i, d)),
/// with detections farther than the kernel cutoff ignored; an inventory `pressure` replaces it.
pub fn pressure(
    patches: &Patches,
    corridors: &[Corridor],
    detections: &[(f64, f64)],
    gamma: f64,
    kernel: Kernel,
    epsilon: f64,
) -> Pressure {
    let n = patches.len();
    let mut values = vec![1.0; n];
    let mut near = vec![Vec::new(); n];
    for corridor in corridors {
        let segments: Vec<RLine<[f64; 2]>> = corridor
            .lines
            .0
            .iter()
            .flat_map(|l| l.lines())
            .map(|s| RLine::new([s.start.x, s.start.y], [s.end.x, s.end.y]))
            .collect();
        let tree = RTree::bulk_load(segments);
        for (i, patch) in patches.items.iter().enumerate() {
            let geometry = patch.geometry();
            let Some(rect) = geometry.bounding_rect() else {
                continue;
            };
            let b = corridor.buffer_m;
            let envelope = AABB::from_corners(
                [rect.min().x - b, rect.min().y - b],
                [rect.max().x + b, rect.max().y + b],
            );
            let within = tree.locate_in_envelope_intersecting(&envelope).any(|s| {
                let line = geo::Line::new(
                    geo::coord! { x: s.from[0], y: s.from[1] },
                    geo::coord! { x: s.to[0], y: s.to[1] },
                );
                Euclidean.distance(&geometry, &line) <= b
            });
            if within {
                values[i] += corridor.weight;
                near[i].push(corridor.name.clone());
            }
        }
    }
    if !detections.is_empty() && gamma > 0.0 {
        let tree = RTree::bulk_load(detections.iter().map(|&(x, y)| [x, y]).collect());
        let radius = kernel.cutoff(epsilon);
        for (i, patch) in patches.items.iter().enumerate() {
            let sum: f64 = tree
                .locate_within_distance([patch.x, patch.y], radius * radius)
                .map(|p| kernel.value(((p[0] - patch.x).powi(2) + (p[1] - patch.y).powi(2)).sqrt()))
                .sum();
            values[i] += gamma * sum;
        }
    }
    for (i, patch) in patches.items.iter().enumerate() {
        if let Some(p) = patch.pressure_override {
            values[i] = p;
        }
    }
    Pressure {
        values,
        corridors: near,
    }
}
