//! The patch graph: which patches can exchange insects (links found with an R*-tree, never by
//! testing all pairs), the kernel weight of each link, and each patch's introduction pressure
//! from corridors and detections. Links are counted before any is stored, so a graph too large
//! for the memory budget is refused before it is built ([`build_graph_within`]).
//!
//! # Units
//! Distances in metres between stem-weighted centroids (working CRS); the kernel is
//! dimensionless in [0, 1].

use geo::{BoundingRect, Distance, Euclidean};
use rstar::primitives::{GeomWithData, Line as RLine};
use rstar::{AABB, RTree};

use crate::core::error::Result;
use crate::core::kernel::Kernel;
use crate::core::memory::{Budget, LinkCount, RasterCost};
use crate::core::site::PatchId;
use crate::input::layers::Corridor;
use crate::input::patches::Patches;

/// The most links this version plans with, written once in [`crate::core::memory`].
pub use crate::core::memory::MAX_LINKS;

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

/// Finds the links between points: an R*-tree over them, queried once per point to count the
/// links (without storing any) and once more to build them.
pub struct LinkFinder<'a> {
    points: &'a [(f64, f64)],
    tree: RTree<GeomWithData<[f64; 2], usize>>,
    kernel: Kernel,
    epsilon: f64,
    /// Query radius: slightly past the cutoff, so rounding never drops a link (k itself decides).
    radius: f64,
}

impl<'a> LinkFinder<'a> {
    pub fn new(points: &'a [(f64, f64)], kernel: Kernel, epsilon: f64) -> LinkFinder<'a> {
        let tree = RTree::bulk_load(
            points
                .iter()
                .enumerate()
                .map(|(i, &(x, y))| GeomWithData::new([x, y], i))
                .collect(),
        );
        LinkFinder {
            points,
            tree,
            kernel,
            epsilon,
            radius: kernel.cutoff(epsilon) * (1.0 + 1e-9) + 1e-9,
        }
    }

    /// The links of point `i` to points `j > i`, as (j, distance, kernel), in order of j.
    fn links_of(&self, i: usize, mut each: impl FnMut(usize, f64, f64)) {
        let (x, y) = self.points[i];
        for g in self
            .tree
            .locate_within_distance([x, y], self.radius * self.radius)
        {
            let j = g.data;
            if j <= i {
                continue;
            }
            let (xj, yj) = self.points[j];
            let d = ((x - xj).powi(2) + (y - yj).powi(2)).sqrt();
            let k = self.kernel.value(d);
            if k >= self.epsilon {
                each(j, d, k);
            }
        }
    }

    /// Count the links without storing one. Points are visited in a scattered order (a stride
    /// coprime with n), so once more than `stop_above` links are certain the pass stops and
    /// extrapolates from the points visited: each link is found from its lower end, so the
    /// visited share of points finds about that share of links.
    pub fn count(&self, stop_above: usize) -> LinkCount {
        let n = self.points.len();
        let stride = scatter_stride(n);
        let mut found = 0usize;
        for visited in 0..n {
            let i = ((visited as u128 * stride as u128) % n as u128) as usize;
            self.links_of(i, |_, _, _| found += 1);
            if found > stop_above && visited + 1 < n {
                let estimate = found as f64 * n as f64 / (visited + 1) as f64;
                return LinkCount {
                    links: (estimate.round() as usize).max(found),
                    exact: false,
                    visited: visited + 1,
                    at_least: found,
                };
            }
        }
        LinkCount {
            links: found,
            exact: true,
            visited: n,
            at_least: found,
        }
    }

    /// Build the graph, its edge list allocated once at `capacity` (the counted links).
    pub fn build(&self, capacity: usize) -> PatchGraph {
        let mut edges = Vec::with_capacity(capacity);
        let mut near: Vec<(usize, f64, f64)> = Vec::new();
        for i in 0..self.points.len() {
            near.clear();
            self.links_of(i, |j, d, k| near.push((j, d, k)));
            near.sort_unstable_by_key(|l| l.0);
            edges.extend(near.iter().map(|&(j, distance, kernel)| Edge {
                a: PatchId(i as u32),
                b: PatchId(j as u32),
                distance,
                kernel,
            }));
        }
        PatchGraph {
            n: self.points.len(),
            edges,
        }
    }
}

/// A stride near n / golden ratio and coprime with n: visiting k * stride mod n for k = 0..n
/// reaches every point once, spread over the whole list.
fn scatter_stride(n: usize) -> usize {
    if n <= 2 {
        return 1;
    }
    fn gcd(a: usize, b: usize) -> usize {
        if b == 0 { a } else { gcd(b, a % b) }
    }
    let mut s = ((n as f64) * 0.618_033_988_75).round() as usize;
    s = s.clamp(1, n - 1);
    while gcd(s, n) != 1 {
        s += 1;
    }
    s
}

/// Link every pair of points whose kernel value is at least `epsilon` (no memory check: for
/// small landscapes and tests; planning goes through [`build_graph_within`]).
pub fn build_graph(points: &[(f64, f64)], kernel: Kernel, epsilon: f64) -> PatchGraph {
    let finder = LinkFinder::new(points, kernel, epsilon);
    let count = finder.count(usize::MAX);
    finder.build(count.links)
}

/// [`build_graph`] after a counting pass: refused (exit 2) before any link is stored when the
/// links exceed [`crate::core::memory::MAX_LINKS`] or, with the patches, the memory budget. `what`
/// names the graph in the message; `raster` and `suitability` say what else the run
/// holds.
pub fn build_graph_within(
    points: &[(f64, f64)],
    kernel: Kernel,
    epsilon: f64,
    budget: &Budget,
    what: &str,
    raster: RasterCost,
    suitability: bool,
) -> Result<PatchGraph> {
    let finder = LinkFinder::new(points, kernel, epsilon);
    let allowed = budget.links_allowed(points.len(), raster, suitability);
    let count = finder.count(allowed);
    budget.check_links(
        what,
        count,
        points.len(),
        raster,
        suitability,
        kernel.cutoff(epsilon),
    )?;
    Ok(finder.build(count.links))
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
