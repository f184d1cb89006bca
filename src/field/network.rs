//! Road travel: a routable directed graph built from road segments, points (depot, stops) snapped
//! onto it, and travel matrices in hours and road kilometres by shortest paths.
//!
//! Takes [`RoadSegment`]s (from `input::roads`) and the points to route between; gives a
//! [`RoadNetwork`] (nodes, arcs in compressed sparse rows, an R*-tree of road pieces, weakly
//! connected pieces) and a [`Travel`] (matrix, snaps, points too far from a road, points that
//! cannot reach the depot or be reached from it). [`Travel::matrix`] is the
//! `field::routing::Matrix` that tours and day splitting take.
//!
//! - **Nodes** are the segments' vertices; vertices closer than the snapping tolerance
//!   ([`NetworkOptions::snap_tolerance_m`], 0.5 m by default) become one node, so roads meet where
//!   they share a vertex. Lines that cross without a shared vertex (a bridge over a road) do not
//!   meet: nothing is noded or bridged by geometry.
//! - **Arcs**, one per consecutive vertex pair and drivable direction, carry the length and the
//!   travel time at the road's speed: the layer's own speed > the class table > one default.
//! - **Points** are snapped to the nearest point on any road piece; the walk from the point to
//!   the road is counted at [`NetworkOptions::walk_kmh`] (4 km/h) each way, and points farther
//!   than [`NetworkOptions::max_walk_m`] (500 m) are reported. Nothing is split: a snapped point
//!   reaches the piece's ends at the share of its time along the piece, in the directions the
//!   piece may be driven.
//! - **Shortest paths** by Dijkstra's algorithm (Dijkstra 1959, *Numerische Mathematik* 1:269–271)
//!   with a binary heap, on travel time; the road kilometres are those of the fastest path. One
//!   search per point, stopping when every other point's road ends are settled; searches are
//!   spread over threads.
//! - **Pieces** (weakly connected components) are reported; a point on another piece than the
//!   depot, or one that one-way streets leave unreachable, is reported and its travel is
//!   infinite — never bridged.
//!
//! Default speeds by OpenStreetMap `highway` class ([`SpeedTable::osm_defaults`]) are common
//! practice for rural and small-town roads, from memory, not a published table: motorway 100,
//! trunk 80, primary 65, secondary 55, tertiary 45, unclassified 35, residential 30, living
//! street 10, service 20, track 15 km/h (links a little slower than their road), any other class
//! the default 30 km/h (the straight-line routing's speed). Paths, footways, cycleways,
//! bridleways, steps, pedestrian ways and roads proposed or under construction are not drivable.
//!
//! # Units
//! Coordinates in the working CRS (projected, metres); lengths in metres inside, kilometres in
//! [`Travel`]; speeds in km/h; times in hours.

use std::cmp::Reverse;
use std::collections::{BTreeMap, BinaryHeap, HashMap};
use std::hash::{BuildHasherDefault, Hasher};

use rstar::primitives::{GeomWithData, Line};
use rstar::{PointDistance, RTree};

use crate::core::error::{Error, Result};
use crate::field::routing::Matrix;
use crate::input::roads::{OneWay, RoadSegment};

/// Speed of a road class, km/h, or `None` for a class that is not driven.
#[derive(Debug, Clone, PartialEq)]
pub struct SpeedTable {
    classes: BTreeMap<String, Option<f64>>,
    /// Speed of a class not in the table (and of segments without a class), km/h.
    pub default_kmh: f64,
}

/// OpenStreetMap highway classes and their default speeds (see the module doc).
const OSM_SPEEDS: &[(&str, Option<f64>)] = &[
    ("motorway", Some(100.0)),
    ("motorway_link", Some(60.0)),
    ("trunk", Some(80.0)),
    ("trunk_link", Some(50.0)),
    ("primary", Some(65.0)),
    ("primary_link", Some(45.0)),
    ("secondary", Some(55.0)),
    ("secondary_link", Some(40.0)),
    ("tertiary", Some(45.0)),
    ("tertiary_link", Some(35.0)),
    ("unclassified", Some(35.0)),
    ("residential", Some(30.0)),
    ("living_street", Some(10.0)),
    ("service", Some(20.0)),
    ("track", Some(15.0)),
    ("road", Some(30.0)),
    ("path", None),
    ("footway", None),
    ("cycleway", None),
    ("bridleway", None),
    ("steps", None),
    ("pedestrian", None),
    ("corridor", None),
    ("sidewalk", None),
    ("crossing", None),
    ("platform", None),
    ("elevator", None),
    ("bus_guideway", None),
    ("busway", None),
    ("raceway", None),
    ("proposed", None),
    ("construction", None),
    ("abandoned", None),
    ("disused", None),
];

impl SpeedTable {
    /// The OpenStreetMap highway classes (module doc), any other class at 30 km/h.
    pub fn osm_defaults() -> SpeedTable {
        SpeedTable {
            classes: OSM_SPEEDS
                .iter()
                .map(|(c, s)| (c.to_string(), *s))
                .collect(),
            default_kmh: 30.0,
        }
    }

    /// One speed for every road (no class table): a layer's own speeds still come first.
    pub fn single(kmh: f64) -> SpeedTable {
        SpeedTable {
            classes: BTreeMap::new(),
            default_kmh: kmh,
        }
    }

    /// Set one class's speed (`None`: not drivable). Classes are matched in lower case.
    pub fn set(&mut self, class: &str, kmh: Option<f64>) {
        self.classes.insert(class.trim().to_ascii_lowercase(), kmh);
    }

    /// The speed of a segment: `None` when its class is not driven, else its own speed, its
    /// class's, or the default.
    pub fn speed(&self, segment: &RoadSegment) -> Option<f64> {
        match self.classes.get(&segment.class) {
            Some(None) => None,
            Some(Some(class_kmh)) => Some(segment.speed_kmh.unwrap_or(*class_kmh)),
            None => Some(segment.speed_kmh.unwrap_or(self.default_kmh)),
        }
    }
}

/// How the network is built and points are snapped.
#[derive(Debug, Clone, PartialEq)]
pub struct NetworkOptions {
    pub speeds: SpeedTable,
    /// Vertices closer than this are one node, metres.
    pub snap_tolerance_m: f64,
    /// Walking speed between a point and its road, km/h.
    pub walk_kmh: f64,
    /// Points farther than this from every road are reported, metres.
    pub max_walk_m: f64,
}

impl Default for NetworkOptions {
    fn default() -> Self {
        NetworkOptions {
            speeds: SpeedTable::osm_defaults(),
            snap_tolerance_m: 0.5,
            walk_kmh: 4.0,
            max_walk_m: 500.0,
        }
    }
}

/// A node of the road graph (dense index into [`RoadNetwork::nodes`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct NodeId(pub u32);

/// A weakly connected piece of the road graph; piece 0 is the longest.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct PieceId(pub u32);

/// One straight road piece between two vertices, the unit of snapping, and where it lies in its
/// chain.
#[derive(Debug, Clone, Copy)]
struct Span {
    a: u32,
    b: u32,
    metres: f64,
    /// Hours a → b, infinite where not allowed.
    forward_hours: f64,
    /// Hours b → a, infinite where not allowed.
    backward_hours: f64,
    chain: u32,
    /// Whether a → b runs the chain's way (s → t).
    aligned: bool,
    /// Position in the chain's list of spans.
    index: u32,
    /// Chain hours s → t, hours t → s and metres over the spans before this one.
    before_forward: f64,
    before_backward: f64,
    before_metres: f64,
}

/// A road between two graph nodes through vertices where nothing else meets (a chain of
/// spans): the graph's arcs. Driving rules are the same along a chain (a vertex joins two spans
/// into a chain only when they allow the same directions through it).
#[derive(Debug, Clone, Copy)]
struct Chain {
    /// Graph nodes at the start and end.
    s: u32,
    t: u32,
    /// The chain's spans in s → t order are `chain_spans[first..first + count]`.
    first: u32,
    count: u32,
    /// Vertex at s.
    start_vertex: u32,
    forward_hours: f64,
    backward_hours: f64,
    metres: f64,
}

/// What was built, for messages and outputs.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct NetworkStats {
    pub segments: usize,
    /// Road vertices after merging.
    pub nodes: usize,
    /// Road pieces between consecutive vertices.
    pub spans: usize,
    /// Graph nodes: vertices where roads meet or end (a vertex joining just two pieces with the
    /// same driving rules is passed through, not searched).
    pub graph_nodes: usize,
    /// Directed graph arcs (a two-way road between graph nodes is two arcs).
    pub arcs: usize,
    /// Road length drivable in at least one direction, km.
    pub road_km: f64,
    /// Segments left out because their class is not driven, by class.
    pub not_drivable: BTreeMap<String, usize>,
    /// Consecutive vertices that fell into one node (zero-length pieces).
    pub zero_length: usize,
}

/// A weakly connected piece: how big it is.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Piece {
    pub nodes: usize,
    pub road_km: f64,
}

type FastMap<K, V> = HashMap<K, V, BuildHasherDefault<CellHasher>>;

/// A multiplicative hasher for grid cells (deterministic; the keys are not user-chosen strings,
/// so no defence against collision attacks is needed).
#[derive(Default)]
struct CellHasher(u64);

impl Hasher for CellHasher {
    fn finish(&self) -> u64 {
        self.0
    }
    fn write(&mut self, bytes: &[u8]) {
        for &b in bytes {
            self.write_u64(b as u64);
        }
    }
    fn write_i64(&mut self, i: i64) {
        self.write_u64(i as u64);
    }
    fn write_u64(&mut self, i: u64) {
        self.0 = (self.0.rotate_left(5) ^ i).wrapping_mul(0x51_7c_c1_b7_27_22_0a_95);
    }
}

/// Nodes by grid cell of side `tolerance`: the first node of a cell and a chain through
/// `next_in_cell`, so a vertex finds any node within the tolerance in the 3 x 3 cells around it.
struct NodeIndex {
    tolerance: f64,
    nodes: Vec<(f64, f64)>,
    first_in_cell: FastMap<(i64, i64), u32>,
    next_in_cell: Vec<u32>,
}

impl NodeIndex {
    fn new(tolerance: f64) -> NodeIndex {
        NodeIndex {
            tolerance,
            nodes: Vec::new(),
            first_in_cell: FastMap::default(),
            next_in_cell: Vec::new(),
        }
    }

    /// The nearest node within the tolerance of `p` (lowest id on ties), or a new one at `p`.
    fn node_at(&mut self, p: (f64, f64)) -> u32 {
        let (cx, cy) = (
            (p.0 / self.tolerance).floor() as i64,
            (p.1 / self.tolerance).floor() as i64,
        );
        let mut best: Option<(f64, u32)> = None;
        for dx in -1..=1 {
            for dy in -1..=1 {
                let mut at = self.first_in_cell.get(&(cx + dx, cy + dy)).copied();
                while let Some(v) = at {
                    let q = self.nodes[v as usize];
                    let d = (q.0 - p.0).hypot(q.1 - p.1);
                    if d <= self.tolerance && best.is_none_or(|(bd, bv)| (d, v) < (bd, bv)) {
                        best = Some((d, v));
                    }
                    at = Some(self.next_in_cell[v as usize]).filter(|&n| n != u32::MAX);
                }
            }
        }
        if let Some((_, v)) = best {
            return v;
        }
        let v = self.nodes.len() as u32;
        self.nodes.push(p);
        let previous = self.first_in_cell.insert((cx, cy), v);
        self.next_in_cell.push(previous.unwrap_or(u32::MAX));
        v
    }
}

/// A routable road graph in compressed sparse rows.
#[derive(Debug, Clone)]
pub struct RoadNetwork {
    /// Vertex coordinates, working CRS.
    pub nodes: Vec<(f64, f64)>,
    /// Arcs leaving graph node v are `first_out[v]..first_out[v + 1]`.
    first_out: Vec<u32>,
    arcs: Vec<Arc>,
    /// Chain of each arc, with the top bit set when the arc runs the chain t → s.
    arc_chain: Vec<u32>,
    /// Vertex of each graph node.
    graph_vertex: Vec<u32>,
    chains: Vec<Chain>,
    chain_spans: Vec<u32>,
    spans: Vec<Span>,
    tree: RTree<GeomWithData<Line<[f64; 2]>, u32>>,
    /// Piece of every vertex.
    piece_of: Vec<u32>,
    pub pieces: Vec<Piece>,
    pub stats: NetworkStats,
    walk_kmh: f64,
    max_walk_m: f64,
}

const REVERSED: u32 = 1 << 31;

/// One graph arc, its data side by side for the search's memory traffic.
#[derive(Debug, Clone, Copy)]
struct Arc {
    hours: f64,
    metres: f64,
    head: u32,
}

/// Position of (x, y) (each in 0..2^16) along a Hilbert curve (the classic iterative `xy2d`;
/// common practice for ordering points so that near points get near numbers).
fn hilbert(mut x: u32, mut y: u32) -> u64 {
    let n: u32 = 1 << 16;
    let mut d = 0u64;
    let mut s = n / 2;
    while s > 0 {
        let rx = u32::from(x & s > 0);
        let ry = u32::from(y & s > 0);
        d += u64::from(s) * u64::from(s) * u64::from((3 * rx) ^ ry);
        if ry == 0 {
            if rx == 1 {
                x = n - 1 - x;
                y = n - 1 - y;
            }
            std::mem::swap(&mut x, &mut y);
        }
        s /= 2;
    }
    d
}

/// A point snapped onto the road network.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Snap {
    /// The point itself.
    pub point: (f64, f64),
    /// The nearest point on a road.
    pub on_road: (f64, f64),
    /// Straight walk from the point to the road, metres.
    pub walk_m: f64,
    pub piece: PieceId,
    span: u32,
    /// Position along the span from a (0) to b (1).
    along: f64,
}

/// Why a point has no travel to or from the depot.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Unreachable {
    /// Its road is on another piece than the depot's.
    OtherPiece {
        piece: PieceId,
        depot_piece: PieceId,
    },
    /// Same piece, but one-way streets leave no way there (`to_point`) or back (`to_depot`).
    OneWay { to_point: bool, to_depot: bool },
}

/// Travel among points by road: point 0 is the depot.
#[derive(Debug, Clone)]
pub struct Travel {
    pub n: usize,
    /// Row-major hours from i to j: walk to the road, drive, walk to the stand; infinite where
    /// there is no way.
    pub hours: Vec<f64>,
    /// Row-major road kilometres of the fastest drive from i to j (the walks not included).
    pub km: Vec<f64>,
    pub snaps: Vec<Snap>,
    /// Points farther from every road than the maximum walk, with their walk in metres.
    pub far_from_road: Vec<(usize, f64)>,
    /// Points the depot cannot reach or that cannot reach the depot, and why.
    pub unreachable: Vec<(usize, Unreachable)>,
}

impl Travel {
    pub fn hours(&self, i: usize, j: usize) -> f64 {
        self.hours[i * self.n + j]
    }

    pub fn km(&self, i: usize, j: usize) -> f64 {
        self.km[i * self.n + j]
    }

    /// The routing matrix of hours (may be asymmetric where one-way streets are). Points in
    /// [`Travel::unreachable`] have infinite rows or columns: drop them with
    /// [`Travel::subset`] first.
    pub fn matrix(&self) -> Matrix {
        Matrix::from_rows(self.n, self.hours.clone())
    }

    /// The travel among `keep` (indices into this travel's points; `keep[0]` becomes the depot).
    pub fn subset(&self, keep: &[usize]) -> Travel {
        let n = keep.len();
        let mut hours = Vec::with_capacity(n * n);
        let mut km = Vec::with_capacity(n * n);
        for &i in keep {
            for &j in keep {
                hours.push(self.hours(i, j));
                km.push(self.km(i, j));
            }
        }
        let position = |p: usize| keep.iter().position(|&k| k == p);
        Travel {
            n,
            hours,
            km,
            snaps: keep.iter().map(|&k| self.snaps[k]).collect(),
            far_from_road: self
                .far_from_road
                .iter()
                .filter_map(|&(p, w)| position(p).map(|q| (q, w)))
                .collect(),
            unreachable: self
                .unreachable
                .iter()
                .filter_map(|&(p, u)| position(p).map(|q| (q, u)))
                .collect(),
        }
    }
}

/// Where a snapped point lies on its chain: hours s → point and point → s, metres from s.
#[derive(Debug, Clone, Copy)]
struct Position {
    chain: Chain,
    forward_before: f64,
    backward_before: f64,
    metres_before: f64,
}

/// Where a snapped point joins the graph: (graph node, hours, metres) to leave by.
fn access(network: &RoadNetwork, snap: &Snap) -> Vec<(u32, f64, f64)> {
    if let Some(node) = network.at_node(snap) {
        return vec![(node, 0.0, 0.0)];
    }
    let p = network.position(snap);
    let c = p.chain;
    let mut out = Vec::with_capacity(2);
    if c.forward_hours.is_finite() {
        out.push((
            c.t,
            c.forward_hours - p.forward_before,
            c.metres - p.metres_before,
        ));
    }
    if c.backward_hours.is_finite() {
        out.push((c.s, p.backward_before, p.metres_before));
    }
    out
}

/// Where a snapped point is arrived at from the graph: (graph node, hours, metres) from there.
fn egress(network: &RoadNetwork, snap: &Snap) -> Vec<(u32, f64, f64)> {
    if let Some(node) = network.at_node(snap) {
        return vec![(node, 0.0, 0.0)];
    }
    let p = network.position(snap);
    let c = p.chain;
    let mut out = Vec::with_capacity(2);
    if c.forward_hours.is_finite() {
        out.push((c.s, p.forward_before, p.metres_before));
    }
    if c.backward_hours.is_finite() {
        out.push((
            c.t,
            c.backward_hours - p.backward_before,
            c.metres - p.metres_before,
        ));
    }
    out
}

/// Drive along one chain from one snapped point to another on the same chain, if allowed:
/// (hours, metres, whether it runs the chain's way).
fn same_chain(network: &RoadNetwork, from: &Snap, to: &Snap) -> Option<(f64, f64, bool)> {
    if network.at_node(from).is_some() || network.at_node(to).is_some() {
        return None;
    }
    let (pf, pt) = (network.position(from), network.position(to));
    if network.spans[from.span as usize].chain != network.spans[to.span as usize].chain {
        return None;
    }
    let c = pf.chain;
    let d = pt.metres_before - pf.metres_before;
    if d >= 0.0 && c.forward_hours.is_finite() {
        Some((pt.forward_before - pf.forward_before, d, true))
    } else if d <= 0.0 && c.backward_hours.is_finite() {
        Some((pf.backward_before - pt.backward_before, -d, false))
    } else {
        None
    }
}

/// A reusable Dijkstra search over one network.
struct Search {
    /// Hours and metres of the best path found to each node.
    best: Vec<(f64, f64)>,
    /// Arc by which each node was reached, `u32::MAX` for a source.
    pred: Vec<u32>,
    touched: Vec<u32>,
    /// Target marks: `mark[v] == stamp` when v is an end node of a point still to settle.
    mark: Vec<u32>,
    stamp: u32,
    heap: BinaryHeap<Reverse<(u64, u32)>>,
}

impl Search {
    fn new(nodes: usize) -> Search {
        Search {
            best: vec![(f64::INFINITY, 0.0); nodes],
            pred: vec![u32::MAX; nodes],
            touched: Vec::new(),
            mark: vec![0; nodes],
            stamp: 0,
            heap: BinaryHeap::new(),
        }
    }

    fn reset(&mut self) {
        for &v in &self.touched {
            self.best[v as usize].0 = f64::INFINITY;
            self.pred[v as usize] = u32::MAX;
        }
        self.touched.clear();
        self.heap.clear();
    }

    /// Shortest times from `sources` (node, hours, metres already spent) until every node in
    /// `targets` is settled (all nodes when `targets` is empty).
    fn run(&mut self, network: &RoadNetwork, sources: &[(u32, f64, f64)], targets: &[u32]) {
        self.reset();
        self.stamp = self.stamp.wrapping_add(1);
        if self.stamp == 0 {
            self.mark.iter_mut().for_each(|m| *m = 0);
            self.stamp = 1;
        }
        let mut remaining = 0usize;
        for &t in targets {
            if self.mark[t as usize] != self.stamp {
                self.mark[t as usize] = self.stamp;
                remaining += 1;
            }
        }
        let all = targets.is_empty();
        for &(v, h, m) in sources {
            if h < self.best[v as usize].0 {
                if self.best[v as usize].0.is_infinite() {
                    self.touched.push(v);
                }
                self.best[v as usize] = (h, m);
                self.heap.push(Reverse((h.to_bits(), v)));
            }
        }
        while let Some(Reverse((bits, u))) = self.heap.pop() {
            let ui = u as usize;
            // Entries are pushed only on a strict improvement, so the one whose cost equals
            // the node's distance is its only live entry: each node is settled once.
            if f64::from_bits(bits) > self.best[ui].0 {
                continue;
            }
            if !all && self.mark[ui] == self.stamp {
                remaining -= 1;
                if remaining == 0 {
                    break;
                }
            }
            let (du, mu) = self.best[ui];
            let range = network.first_out[ui] as usize..network.first_out[ui + 1] as usize;
            for (data, arc) in network.arcs[range.clone()].iter().zip(range) {
                let v = data.head as usize;
                let dv = du + data.hours;
                if dv < self.best[v].0 {
                    if self.best[v].0.is_infinite() {
                        self.touched.push(v as u32);
                    }
                    self.best[v] = (dv, mu + data.metres);
                    self.pred[v] = arc as u32;
                    self.heap.push(Reverse((dv.to_bits(), v as u32)));
                }
            }
        }
    }

    /// Best (hours, metres, end node) to reach a point through its egress ends.
    fn arrive(&self, ends: &[(u32, f64, f64)]) -> Option<(f64, f64, u32)> {
        let mut best: Option<(f64, f64, u32)> = None;
        for &(v, h, m) in ends {
            let d = self.best[v as usize].0;
            if d.is_finite() && best.is_none_or(|(b, _, _)| d + h < b) {
                best = Some((d + h, self.best[v as usize].1 + m, v));
            }
        }
        best
    }
}

impl RoadNetwork {
    /// Build the graph from `segments` (see the module doc for nodes, arcs and speeds).
    pub fn build(segments: &[RoadSegment], options: &NetworkOptions) -> Result<RoadNetwork> {
        let tolerance = options.snap_tolerance_m;
        if !(tolerance > 0.0 && tolerance.is_finite()) {
            return Err(Error::input_with_hint(
                format!("road snapping tolerance {tolerance} m is not a positive distance"),
                "give a tolerance in metres such as 0.5",
            ));
        }
        if !(options.walk_kmh > 0.0 && options.walk_kmh.is_finite()) {
            return Err(Error::input(format!(
                "walking speed {} km/h is not a positive speed",
                options.walk_kmh
            )));
        }
        let mut stats = NetworkStats {
            segments: segments.len(),
            ..NetworkStats::default()
        };
        let mut index = NodeIndex::new(tolerance);
        let mut spans: Vec<Span> = Vec::new();
        for segment in segments {
            let Some(kmh) = options.speeds.speed(segment) else {
                *stats.not_drivable.entry(segment.class.clone()).or_default() += 1;
                continue;
            };
            let mut previous: Option<u32> = None;
            for &p in &segment.points {
                let v = index.node_at(p);
                if let Some(u) = previous {
                    if u == v {
                        stats.zero_length += 1;
                        continue;
                    }
                    let (pu, pv) = (index.nodes[u as usize], index.nodes[v as usize]);
                    let metres = (pv.0 - pu.0).hypot(pv.1 - pu.1);
                    let hours = metres / (kmh * 1000.0);
                    let forward = matches!(segment.oneway, OneWay::Both | OneWay::Forward);
                    let backward = matches!(segment.oneway, OneWay::Both | OneWay::Reverse);
                    spans.push(Span {
                        a: u,
                        b: v,
                        metres,
                        forward_hours: if forward { hours } else { f64::INFINITY },
                        backward_hours: if backward { hours } else { f64::INFINITY },
                        chain: u32::MAX,
                        aligned: true,
                        index: 0,
                        before_forward: 0.0,
                        before_backward: 0.0,
                        before_metres: 0.0,
                    });
                    stats.road_km += metres / 1000.0;
                }
                previous = Some(v);
            }
        }
        let nodes = index.nodes;
        if nodes.len() >= (u32::MAX >> 1) as usize || spans.len() >= (u32::MAX >> 1) as usize {
            return Err(Error::input(format!(
                "road network of {} vertices and {} pieces is larger than this tool handles (2^31)",
                nodes.len(),
                spans.len()
            )));
        }
        let n = nodes.len();
        let (mut chains, chain_spans, mut graph_vertex) = chains(n, &mut spans);
        // Number graph nodes along a Hilbert curve, so a search's frontier touches memory that
        // is near together (measured: the 10^6-piece grid of docs/benchmarks.md).
        if !graph_vertex.is_empty() {
            let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
            for &v in &graph_vertex {
                let p = nodes[v as usize];
                (x0, y0, x1, y1) = (x0.min(p.0), y0.min(p.1), x1.max(p.0), y1.max(p.1));
            }
            let scale = 65535.0 / (x1 - x0).max(y1 - y0).max(1e-9);
            let key = |v: u32| {
                let p = nodes[v as usize];
                hilbert(((p.0 - x0) * scale) as u32, ((p.1 - y0) * scale) as u32)
            };
            let mut order: Vec<u32> = (0..graph_vertex.len() as u32).collect();
            order.sort_by_key(|&g| (key(graph_vertex[g as usize]), g));
            let mut new_id = vec![0u32; order.len()];
            for (k, &g) in order.iter().enumerate() {
                new_id[g as usize] = k as u32;
            }
            graph_vertex = order.iter().map(|&g| graph_vertex[g as usize]).collect();
            for c in &mut chains {
                c.s = new_id[c.s as usize];
                c.t = new_id[c.t as usize];
            }
        }
        // Arcs as (tail, head, hours, metres, chain with direction bit), one per chain and
        // drivable direction; a chain from a node back to itself gives no arc.
        let mut arcs: Vec<(u32, u32, f64, f64, u32)> = Vec::new();
        for (k, c) in chains.iter().enumerate() {
            if c.s == c.t {
                continue;
            }
            if c.forward_hours.is_finite() {
                arcs.push((c.s, c.t, c.forward_hours, c.metres, k as u32));
            }
            if c.backward_hours.is_finite() {
                arcs.push((c.t, c.s, c.backward_hours, c.metres, k as u32 | REVERSED));
            }
        }
        // Compressed sparse rows by a counting sort on the tail (stable: input order kept).
        let graph_nodes = graph_vertex.len();
        let mut first_out = vec![0u32; graph_nodes + 1];
        for a in &arcs {
            first_out[a.0 as usize + 1] += 1;
        }
        for v in 0..graph_nodes {
            first_out[v + 1] += first_out[v];
        }
        let mut fill = first_out.clone();
        let mut arc_data = vec![
            Arc {
                hours: 0.0,
                metres: 0.0,
                head: 0
            };
            arcs.len()
        ];
        let mut arc_chain = vec![0u32; arcs.len()];
        for &(u, v, h, m, c) in &arcs {
            let at = fill[u as usize] as usize;
            fill[u as usize] += 1;
            arc_data[at] = Arc {
                hours: h,
                metres: m,
                head: v,
            };
            arc_chain[at] = c;
        }
        drop(arcs);
        // Weakly connected pieces by union-find over spans.
        let mut parent: Vec<u32> = (0..n as u32).collect();
        fn find(parent: &mut [u32], mut v: u32) -> u32 {
            while parent[v as usize] != v {
                parent[v as usize] = parent[parent[v as usize] as usize];
                v = parent[v as usize];
            }
            v
        }
        for s in &spans {
            let (ra, rb) = (find(&mut parent, s.a), find(&mut parent, s.b));
            if ra != rb {
                let (lo, hi) = (ra.min(rb), ra.max(rb));
                parent[hi as usize] = lo;
            }
        }
        let roots: Vec<u32> = (0..n as u32).map(|v| find(&mut parent, v)).collect();
        let mut has_span = vec![false; n];
        for s in &spans {
            has_span[s.a as usize] = true;
            has_span[s.b as usize] = true;
        }
        // Vertices of no span (a segment all within the tolerance) belong to no piece.
        let mut root_km: BTreeMap<u32, (f64, usize)> = BTreeMap::new();
        for (v, &r) in roots.iter().enumerate() {
            if has_span[v] {
                root_km.entry(r).or_default().1 += 1;
            }
        }
        for s in &spans {
            root_km.get_mut(&roots[s.a as usize]).expect("root").0 += s.metres / 1000.0;
        }
        // Number pieces by road length, longest first (ties: lowest node first).
        let mut order: Vec<(u32, f64, usize)> =
            root_km.iter().map(|(&r, &(km, c))| (r, km, c)).collect();
        order.sort_by(|x, y| y.1.total_cmp(&x.1).then(x.0.cmp(&y.0)));
        let mut number: HashMap<u32, u32> = HashMap::with_capacity(order.len());
        let mut pieces = Vec::with_capacity(order.len());
        for (k, &(r, km, count)) in order.iter().enumerate() {
            number.insert(r, k as u32);
            pieces.push(Piece {
                nodes: count,
                road_km: km,
            });
        }
        let piece_of: Vec<u32> = roots
            .iter()
            .map(|r| number.get(r).copied().unwrap_or(u32::MAX))
            .collect();
        let tree = RTree::bulk_load(
            spans
                .iter()
                .enumerate()
                .map(|(k, s)| {
                    let (pa, pb) = (nodes[s.a as usize], nodes[s.b as usize]);
                    GeomWithData::new(Line::new([pa.0, pa.1], [pb.0, pb.1]), k as u32)
                })
                .collect(),
        );
        stats.nodes = n;
        stats.spans = spans.len();
        stats.graph_nodes = graph_nodes;
        stats.arcs = arc_data.len();
        Ok(RoadNetwork {
            nodes,
            first_out,
            arcs: arc_data,
            arc_chain,
            graph_vertex,
            chains,
            chain_spans,
            spans,
            tree,
            piece_of,
            pieces,
            stats,
            walk_kmh: options.walk_kmh,
            max_walk_m: options.max_walk_m,
        })
    }

    /// Where a snapped point lies on its chain.
    fn position(&self, snap: &Snap) -> Position {
        let span = self.spans[snap.span as usize];
        let chain = self.chains[span.chain as usize];
        let share = if span.aligned {
            snap.along
        } else {
            1.0 - snap.along
        };
        let (ahead, back) = if span.aligned {
            (span.forward_hours, span.backward_hours)
        } else {
            (span.backward_hours, span.forward_hours)
        };
        let partial = |hours: f64| if share > 0.0 { share * hours } else { 0.0 };
        Position {
            chain,
            forward_before: span.before_forward + partial(ahead),
            backward_before: span.before_backward + partial(back),
            metres_before: span.before_metres + share * span.metres,
        }
    }

    /// The graph node a snapped point sits on, when it is at (within a micrometre of) a
    /// chain's end.
    fn at_node(&self, snap: &Snap) -> Option<u32> {
        let p = self.position(snap);
        if p.metres_before <= 1e-6 {
            Some(p.chain.s)
        } else if p.chain.metres - p.metres_before <= 1e-6 {
            Some(p.chain.t)
        } else {
            None
        }
    }

    /// The nearest point on any road to `point`; `None` when the network has no road.
    pub fn snap(&self, point: (f64, f64)) -> Option<Snap> {
        let query = [point.0, point.1];
        let nearest = self.tree.nearest_neighbor(&query)?;
        let on = nearest.geom().nearest_point(&query);
        let walk_m = nearest.distance_2(&query).sqrt();
        let span = nearest.data;
        let s = self.spans[span as usize];
        let (pa, pb) = (self.nodes[s.a as usize], self.nodes[s.b as usize]);
        let along = if s.metres > 0.0 {
            (((on[0] - pa.0) * (pb.0 - pa.0) + (on[1] - pa.1) * (pb.1 - pa.1))
                / (s.metres * s.metres))
                .clamp(0.0, 1.0)
        } else {
            0.0
        };
        Some(Snap {
            point,
            on_road: (on[0], on[1]),
            walk_m,
            piece: PieceId(self.piece_of[s.a as usize]),
            span,
            along,
        })
    }

    /// The vertices of a chain in s → t order.
    fn chain_vertices(&self, chain: &Chain) -> Vec<u32> {
        let mut out = vec![chain.start_vertex];
        let spans = &self.chain_spans[chain.first as usize..(chain.first + chain.count) as usize];
        for &k in spans {
            let span = self.spans[k as usize];
            out.push(if span.aligned { span.b } else { span.a });
        }
        out
    }

    fn walk_hours(&self, snap: &Snap) -> f64 {
        snap.walk_m / (self.walk_kmh * 1000.0)
    }

    /// Travel among `points` (point 0 the depot) by shortest paths, one search per point,
    /// spread over `threads` threads. An empty network is an input error.
    pub fn travel(&self, points: &[(f64, f64)], threads: usize) -> Result<Travel> {
        let n = points.len();
        let snaps: Vec<Snap> = points
            .iter()
            .map(|&p| {
                self.snap(p).ok_or_else(|| {
                    Error::input_with_hint(
                        "the road layer has no drivable road",
                        "check the road layer and its class field: every road may be of a class that is not driven (footway, path, ...)",
                    )
                })
            })
            .collect::<Result<_>>()?;
        let exits: Vec<Vec<(u32, f64, f64)>> = snaps.iter().map(|s| egress(self, s)).collect();
        let targets: Vec<u32> = exits.iter().flatten().map(|e| e.0).collect();
        let threads = threads.clamp(1, n.max(1));
        let rows: Vec<(usize, Vec<f64>, Vec<f64>)> = std::thread::scope(|scope| {
            let handles: Vec<_> = (0..threads)
                .map(|t| {
                    let (snaps, exits, targets) = (&snaps, &exits, &targets);
                    scope.spawn(move || {
                        let mut search = Search::new(self.graph_vertex.len());
                        let mut out = Vec::new();
                        for i in (t..n).step_by(threads) {
                            search.run(self, &access(self, &snaps[i]), targets);
                            let mut hours = vec![f64::INFINITY; n];
                            let mut km = vec![f64::INFINITY; n];
                            for j in 0..n {
                                if i == j {
                                    hours[j] = 0.0;
                                    km[j] = 0.0;
                                    continue;
                                }
                                let mut best = search.arrive(&exits[j]).map(|(h, m, _)| (h, m));
                                if let Some((h, m, _)) = same_chain(self, &snaps[i], &snaps[j])
                                    && best.is_none_or(|(b, _)| h < b)
                                {
                                    best = Some((h, m));
                                }
                                if let Some((h, m)) = best {
                                    hours[j] =
                                        self.walk_hours(&snaps[i]) + h + self.walk_hours(&snaps[j]);
                                    km[j] = m / 1000.0;
                                }
                            }
                            out.push((i, hours, km));
                        }
                        out
                    })
                })
                .collect();
            handles
                .into_iter()
                .flat_map(|h| h.join().expect("a travel search thread panicked"))
                .collect()
        });
        let mut hours = vec![0.0; n * n];
        let mut km = vec![0.0; n * n];
        for (i, h, k) in rows {
            hours[i * n..(i + 1) * n].copy_from_slice(&h);
            km[i * n..(i + 1) * n].copy_from_slice(&k);
        }
        let far_from_road = snaps
            .iter()
            .enumerate()
            .filter(|(_, s)| s.walk_m > self.max_walk_m)
            .map(|(k, s)| (k, s.walk_m))
            .collect();
        let mut unreachable = Vec::new();
        if n > 0 {
            let depot_piece = snaps[0].piece;
            for (k, s) in snaps.iter().enumerate().skip(1) {
                if s.piece != depot_piece {
                    unreachable.push((
                        k,
                        Unreachable::OtherPiece {
                            piece: s.piece,
                            depot_piece,
                        },
                    ));
                    continue;
                }
                let to_point = hours[k].is_infinite();
                let to_depot = hours[k * n].is_infinite();
                if to_point || to_depot {
                    unreachable.push((k, Unreachable::OneWay { to_point, to_depot }));
                }
            }
        }
        Ok(Travel {
            n,
            hours,
            km,
            snaps,
            far_from_road,
            unreachable,
        })
    }

    /// The road geometry of the fastest drive from one snapped point to another: the point on
    /// the road where the drive starts, the vertices passed, the point where it ends (walks not
    /// included). `None` when there is no way.
    pub fn path(&self, from: &Snap, to: &Snap) -> Option<Vec<(f64, f64)>> {
        let ends = egress(self, to);
        let starts = access(self, from);
        let mut search = Search::new(self.graph_vertex.len());
        let targets: Vec<u32> = ends.iter().map(|e| e.0).collect();
        search.run(self, &starts, &targets);
        let through = search.arrive(&ends);
        let direct = same_chain(self, from, to);
        let mut line = vec![from.on_road];
        // The vertices strictly between a snapped point and its chain's end (or start).
        let tail = |snap: &Snap, towards_t: bool| -> Vec<(f64, f64)> {
            if self.at_node(snap).is_some() {
                return Vec::new();
            }
            let span = self.spans[snap.span as usize];
            let chain = self.chains[span.chain as usize];
            let vertices = self.chain_vertices(&chain);
            let k = span.index as usize;
            let picked: Vec<u32> = if towards_t {
                vertices[k + 1..].to_vec()
            } else {
                vertices[..=k].iter().rev().copied().collect()
            };
            picked.iter().map(|&v| self.nodes[v as usize]).collect()
        };
        match (through, direct) {
            (None, None) => return None,
            (through, Some((d, _, aligned))) if through.is_none_or(|(h, _, _)| d <= h) => {
                let (pf, pt) = (self.position(from), self.position(to));
                let chain = pf.chain;
                let vertices = self.chain_vertices(&chain);
                let (lo, hi) = (
                    pf.metres_before.min(pt.metres_before),
                    pf.metres_before.max(pt.metres_before),
                );
                let mut between: Vec<(f64, f64)> = Vec::new();
                let mut at = 0.0;
                for (k, &span_id) in self.chain_spans
                    [chain.first as usize..(chain.first + chain.count) as usize]
                    .iter()
                    .enumerate()
                {
                    at += self.spans[span_id as usize].metres;
                    if at > lo && at < hi {
                        between.push(self.nodes[vertices[k + 1] as usize]);
                    }
                }
                if !aligned {
                    between.reverse();
                }
                line.extend(between);
            }
            (Some((_, _, end)), _) => {
                // Arcs back from the end node to a source.
                let mut arcs = Vec::new();
                let mut v = end;
                while search.pred[v as usize] != u32::MAX {
                    let arc = search.pred[v as usize];
                    arcs.push(arc);
                    let c = self.chains[(self.arc_chain[arc as usize] & !REVERSED) as usize];
                    v = if self.arc_chain[arc as usize] & REVERSED != 0 {
                        c.t
                    } else {
                        c.s
                    };
                }
                arcs.reverse();
                let first = v;
                // From the point to the first graph node.
                if self.at_node(from).is_none() {
                    let c = self.position(from).chain;
                    line.extend(tail(from, first == c.t && c.forward_hours.is_finite()));
                }
                line.push(self.nodes[self.graph_vertex[first as usize] as usize]);
                for arc in arcs {
                    let code = self.arc_chain[arc as usize];
                    let c = self.chains[(code & !REVERSED) as usize];
                    let mut vertices = self.chain_vertices(&c);
                    if code & REVERSED != 0 {
                        vertices.reverse();
                    }
                    line.extend(vertices[1..].iter().map(|&v| self.nodes[v as usize]));
                }
                // From the last graph node to the point.
                if self.at_node(to).is_none() {
                    let c = self.position(to).chain;
                    let mut rest = tail(to, end == c.t && c.backward_hours.is_finite());
                    rest.reverse();
                    line.extend(rest);
                }
            }
            (None, Some(_)) => unreachable!("handled by the guard above"),
        }
        line.push(to.on_road);
        line.dedup();
        Some(line)
    }

    /// The road geometry of each leg of a visit of `order` (indices into `travel`'s points),
    /// e.g. `[0, 3, 1, 0]` for depot → 3 → 1 → depot; an empty leg where there is no way.
    pub fn route(&self, travel: &Travel, order: &[usize]) -> Vec<Vec<(f64, f64)>> {
        order
            .windows(2)
            .map(|w| {
                self.path(&travel.snaps[w[0]], &travel.snaps[w[1]])
                    .unwrap_or_default()
            })
            .collect()
    }
}

/// Group spans into chains between graph nodes: a vertex where exactly two spans meet, leading
/// to two other vertices and allowing the same directions through, is passed through; every
/// other vertex with a span is a graph node (and one vertex of each ring of passed-through
/// vertices). Fills each span's chain fields; gives the chains, their spans in order and the
/// vertex of each graph node.
fn chains(n: usize, spans: &mut [Span]) -> (Vec<Chain>, Vec<u32>, Vec<u32>) {
    // Spans at each vertex, in compressed sparse rows.
    let mut first = vec![0u32; n + 1];
    for s in spans.iter() {
        first[s.a as usize + 1] += 1;
        first[s.b as usize + 1] += 1;
    }
    for v in 0..n {
        first[v + 1] += first[v];
    }
    let mut fill = first.clone();
    let mut at_vertex = vec![0u32; 2 * spans.len()];
    for (k, s) in spans.iter().enumerate() {
        for v in [s.a, s.b] {
            at_vertex[fill[v as usize] as usize] = k as u32;
            fill[v as usize] += 1;
        }
    }
    drop(fill);
    // (into v allowed, out of v allowed) along a span.
    let rules_at = |span: &Span, v: u32| {
        if v == span.b {
            (
                span.forward_hours.is_finite(),
                span.backward_hours.is_finite(),
            )
        } else {
            (
                span.backward_hours.is_finite(),
                span.forward_hours.is_finite(),
            )
        }
    };
    let other = |span: &Span, v: u32| if span.a == v { span.b } else { span.a };
    let mut through: Vec<bool> = (0..n)
        .map(|v| {
            let (lo, hi) = (first[v] as usize, first[v + 1] as usize);
            if hi - lo != 2 {
                return false;
            }
            let v = v as u32;
            let (e1, e2) = (
                &spans[at_vertex[lo] as usize],
                &spans[at_vertex[lo + 1] as usize],
            );
            if other(e1, v) == other(e2, v) {
                return false;
            }
            let ((in1, out1), (in2, out2)) = (rules_at(e1, v), rules_at(e2, v));
            in1 == out2 && in2 == out1
        })
        .collect();
    let mut graph_id = vec![u32::MAX; n];
    let mut graph_vertex: Vec<u32> = Vec::new();
    let mut id_of = |v: u32, graph_vertex: &mut Vec<u32>| {
        if graph_id[v as usize] == u32::MAX {
            graph_id[v as usize] = graph_vertex.len() as u32;
            graph_vertex.push(v);
        }
        graph_id[v as usize]
    };
    let mut chains: Vec<Chain> = Vec::new();
    let mut chain_spans: Vec<u32> = Vec::with_capacity(spans.len());
    let mut assigned = vec![false; spans.len()];
    let mut ring_cursor = 0usize;
    let mut next_kept = 0usize;
    loop {
        // Kept vertices in order, then one vertex of each ring left.
        let start =
            if let Some(v) = (next_kept..n).find(|&v| !through[v] && first[v + 1] > first[v]) {
                next_kept = v + 1;
                v as u32
            } else {
                next_kept = n;
                while ring_cursor < spans.len() && assigned[ring_cursor] {
                    ring_cursor += 1;
                }
                if ring_cursor == spans.len() {
                    break;
                }
                let v = spans[ring_cursor].a;
                through[v as usize] = false;
                v
            };
        for slot in first[start as usize]..first[start as usize + 1] {
            let k0 = at_vertex[slot as usize] as usize;
            if assigned[k0] {
                continue;
            }
            let chain_id = chains.len() as u32;
            let first_span = chain_spans.len() as u32;
            let (mut v, mut k) = (start, k0);
            let (mut forward, mut backward, mut metres) = (0.0, 0.0, 0.0);
            let mut index = 0u32;
            let end = loop {
                assigned[k] = true;
                let span = &mut spans[k];
                let aligned = span.a == v;
                let (ahead, back) = if aligned {
                    (span.forward_hours, span.backward_hours)
                } else {
                    (span.backward_hours, span.forward_hours)
                };
                span.chain = chain_id;
                span.aligned = aligned;
                span.index = index;
                span.before_forward = forward;
                span.before_backward = backward;
                span.before_metres = metres;
                forward += ahead;
                backward += back;
                metres += span.metres;
                chain_spans.push(k as u32);
                index += 1;
                let next = if aligned { span.b } else { span.a };
                if !through[next as usize] || next == start {
                    break next;
                }
                let lo = first[next as usize] as usize;
                k = if at_vertex[lo] as usize == k {
                    at_vertex[lo + 1] as usize
                } else {
                    at_vertex[lo] as usize
                };
                v = next;
            };
            let s = id_of(start, &mut graph_vertex);
            let t = id_of(end, &mut graph_vertex);
            chains.push(Chain {
                s,
                t,
                first: first_span,
                count: index,
                start_vertex: start,
                forward_hours: forward,
                backward_hours: backward,
                metres,
            });
        }
    }
    (chains, chain_spans, graph_vertex)
}

/// What [`bench_grid`] measured.
#[derive(Debug, Clone, PartialEq)]
pub struct GridBench {
    pub nodes: usize,
    pub graph_nodes: usize,
    pub road_pieces: usize,
    pub arcs: usize,
    pub stops: usize,
    pub build_s: f64,
    pub travel_s: f64,
    pub routes_s: f64,
    pub road_tour_hours: f64,
    pub road_days: usize,
    pub straight_s: f64,
    pub straight_tour_hours: f64,
    pub straight_days: usize,
}

/// A `side` x `side` grid of 100 m streets (every tenth street 65 km/h, the rest 30 km/h,
/// every crossing jittered up to 10 m so no two paths tie) with `shape_points` vertices between
/// crossings (as a road layer has where streets bend), as road segments, one per street.
pub fn grid_segments(side: usize, shape_points: usize) -> Vec<RoadSegment> {
    let mut state = 0x2545_f491_4f6c_dd1d_u64;
    let mut jitter: Vec<(f64, f64)> = Vec::with_capacity(side * side);
    for _ in 0..side * side {
        let mut next = || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state >> 11) as f64 / (1u64 << 53) as f64 * 20.0 - 10.0
        };
        jitter.push((next(), next()));
    }
    let at = |r: usize, c: usize| {
        let j = jitter[r * side + c];
        (c as f64 * 100.0 + j.0, r as f64 * 100.0 + j.1)
    };
    let street = |crossings: Vec<(f64, f64)>| {
        let mut points = vec![crossings[0]];
        for w in crossings.windows(2) {
            for k in 1..=shape_points {
                let t = k as f64 / (shape_points + 1) as f64;
                // A gentle bend: 2 m off the straight line.
                let bend = if k % 2 == 1 { 2.0 } else { -2.0 };
                points.push((
                    w[0].0 + t * (w[1].0 - w[0].0) + bend,
                    w[0].1 + t * (w[1].1 - w[0].1) + bend,
                ));
            }
            points.push(w[1]);
        }
        points
    };
    let class = |k: usize| {
        if k.is_multiple_of(10) {
            "primary"
        } else {
            "residential"
        }
    };
    let mut out = Vec::with_capacity(2 * side);
    for r in 0..side {
        out.push(RoadSegment {
            points: street((0..side).map(|c| at(r, c)).collect()),
            class: class(r).to_string(),
            oneway: OneWay::Both,
            speed_kmh: None,
            feature: out.len() + 1,
        });
    }
    for c in 0..side {
        out.push(RoadSegment {
            points: street((0..side).map(|r| at(r, c)).collect()),
            class: class(c).to_string(),
            oneway: OneWay::Both,
            speed_kmh: None,
            feature: out.len() + 1,
        });
    }
    out
}

/// The road-network benchmark: build a grid of `2 side (side - 1) (shape_points + 1)` road
/// pieces ([`grid_segments`]), compute the travel
/// among a depot and `stops` stops spread over it (`threads` searches at a time), order one tour
/// and split it into 8-hour days of at most 10 stops (1.5 h of work each), and the same with
/// straight-line travel (x 1.3 at 30 km/h) for comparison. Peak memory is the caller's to read.
pub fn bench_grid(
    side: usize,
    shape_points: usize,
    stops: usize,
    threads: usize,
) -> Result<GridBench> {
    use crate::field::routing;
    use std::time::Instant;
    let started = Instant::now();
    let segments = grid_segments(side, shape_points);
    let network = RoadNetwork::build(&segments, &NetworkOptions::default())?;
    drop(segments);
    let build_s = started.elapsed().as_secs_f64();
    let extent = (side as f64 - 1.0) * 100.0;
    let mut state = 0x9e37_79b9_7f4a_7c15_u64;
    let mut next = || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    let points: Vec<(f64, f64)> = (0..=stops)
        .map(|_| (next() * extent, next() * extent))
        .collect();
    let work: Vec<f64> = std::iter::once(0.0)
        .chain(std::iter::repeat_n(1.5, stops))
        .collect();
    let plan = |m: &Matrix| -> Result<(f64, usize)> {
        let nodes: Vec<usize> = (1..m.len()).collect();
        let starts = if nodes.len() > 400 { 2 } else { 8 };
        let tour = routing::heuristic(m, &nodes, starts);
        let cuts = routing::split(m, &tour, &work, 8.0, 10)
            .ok_or_else(|| Error::Internal("a bench stop does not fit a day".into()))?;
        Ok((routing::tour_length(m, &tour), cuts.len()))
    };
    let started = Instant::now();
    let travel = network.travel(&points, threads)?;
    let travel_s = started.elapsed().as_secs_f64();
    let started = Instant::now();
    let (road_tour_hours, road_days) = plan(&travel.matrix())?;
    let routes_s = started.elapsed().as_secs_f64();
    let started = Instant::now();
    let straight = Matrix::from_points(&points, 1.3, 30.0);
    let (straight_tour_hours, straight_days) = plan(&straight)?;
    let straight_s = started.elapsed().as_secs_f64();
    Ok(GridBench {
        nodes: network.stats.nodes,
        graph_nodes: network.stats.graph_nodes,
        road_pieces: network.spans.len(),
        arcs: network.stats.arcs,
        stops,
        build_s,
        travel_s,
        routes_s,
        road_tour_hours,
        road_days,
        straight_s,
        straight_tour_hours,
        straight_days,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn segment(points: &[(f64, f64)], class: &str, oneway: OneWay) -> RoadSegment {
        RoadSegment {
            points: points.to_vec(),
            class: class.to_string(),
            oneway,
            speed_kmh: None,
            feature: 1,
        }
    }

    #[test]
    fn vertices_within_tolerance_merge_and_speeds_follow_the_class() {
        // Two 1 km roads meeting within 0.3 m: one node (tolerance 0.5 m); hand arithmetic.
        let roads = vec![
            segment(&[(0.0, 0.0), (1000.0, 0.0)], "primary", OneWay::Both),
            segment(
                &[(1000.2, 0.2), (1000.2, 1000.0)],
                "residential",
                OneWay::Both,
            ),
            segment(&[(0.0, 0.0), (0.0, 50.0)], "footway", OneWay::Both),
        ];
        let net = RoadNetwork::build(&roads, &NetworkOptions::default()).unwrap();
        assert_eq!(net.stats.nodes, 3);
        assert_eq!(net.pieces.len(), 1);
        assert_eq!(net.stats.not_drivable.get("footway"), Some(&1));
        let t = net.travel(&[(0.0, 0.0), (1000.2, 1000.0)], 1).unwrap();
        // 1 km at 65 km/h, then (1000, 0) → (1000.2, 1000) at 30 km/h (the module doc's
        // common-practice table); the merged node keeps the first vertex seen.
        let second_km = 0.2f64.hypot(1000.0) / 1000.0;
        let expected = 1.0 / 65.0 + second_km / 30.0;
        assert!((t.hours(0, 1) - expected).abs() < 1e-12);
        assert!((t.km(0, 1) - (1.0 + second_km)).abs() < 1e-12);
        assert!(t.unreachable.is_empty());
    }

    #[test]
    fn a_point_mid_span_on_a_one_way_goes_forward_only() {
        // 0 → 100 → 200 one-way, plus a two-way loop back 200 → (200, 100) → (0, 100) → 0.
        let roads = vec![
            segment(&[(0.0, 0.0), (200.0, 0.0)], "", OneWay::Forward),
            segment(
                &[(200.0, 0.0), (200.0, 100.0), (0.0, 100.0), (0.0, 0.0)],
                "",
                OneWay::Both,
            ),
        ];
        let options = NetworkOptions {
            speeds: SpeedTable::single(36.0), // 10 m/s
            ..NetworkOptions::default()
        };
        let net = RoadNetwork::build(&roads, &options).unwrap();
        let t = net.travel(&[(50.0, 0.0), (150.0, 0.0)], 1).unwrap();
        // Forward: 100 m along the one-way. Back: 50 m + 100 + 200 + 100 + 50 m = 500 m.
        assert!((t.km(0, 1) - 0.1).abs() < 1e-12);
        assert!((t.km(1, 0) - 0.5).abs() < 1e-12);
        assert!((t.hours(1, 0) - 0.5 / 36.0).abs() < 1e-12);
        let path = net.path(&t.snaps[1], &t.snaps[0]).unwrap();
        assert_eq!(path.first(), Some(&(150.0, 0.0)));
        assert_eq!(path.last(), Some(&(50.0, 0.0)));
        assert!(path.contains(&(0.0, 100.0)));
    }
}
