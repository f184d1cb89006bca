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

/// One straight road piece between two nodes, the unit of snapping.
#[derive(Debug, Clone, Copy)]
struct Span {
    a: u32,
    b: u32,
    metres: f64,
    /// Hours a → b, infinite where not allowed.
    forward_hours: f64,
    /// Hours b → a, infinite where not allowed.
    backward_hours: f64,
}

/// What was built, for messages and outputs.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct NetworkStats {
    pub segments: usize,
    pub nodes: usize,
    /// Directed arcs (a two-way road piece is two arcs).
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
    /// Node coordinates, working CRS.
    pub nodes: Vec<(f64, f64)>,
    /// Arcs leaving node v are `first_out[v]..first_out[v + 1]`.
    first_out: Vec<u32>,
    head: Vec<u32>,
    hours: Vec<f64>,
    metres: Vec<f64>,
    spans: Vec<Span>,
    tree: RTree<GeomWithData<Line<[f64; 2]>, u32>>,
    /// Piece of every node.
    piece_of: Vec<u32>,
    pub pieces: Vec<Piece>,
    pub stats: NetworkStats,
    walk_kmh: f64,
    max_walk_m: f64,
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

/// Where a snapped point joins the graph: (node, hours, metres) to leave by, or to arrive by.
fn access(network: &RoadNetwork, snap: &Snap) -> Vec<(u32, f64, f64)> {
    let s = network.spans[snap.span as usize];
    if let Some(node) = network.at_node(snap) {
        return vec![(node, 0.0, 0.0)];
    }
    let mut out = Vec::with_capacity(2);
    if s.forward_hours.is_finite() {
        out.push((
            s.b,
            (1.0 - snap.along) * s.forward_hours,
            (1.0 - snap.along) * s.metres,
        ));
    }
    if s.backward_hours.is_finite() {
        out.push((s.a, snap.along * s.backward_hours, snap.along * s.metres));
    }
    out
}

fn egress(network: &RoadNetwork, snap: &Snap) -> Vec<(u32, f64, f64)> {
    let s = network.spans[snap.span as usize];
    if let Some(node) = network.at_node(snap) {
        return vec![(node, 0.0, 0.0)];
    }
    let mut out = Vec::with_capacity(2);
    if s.forward_hours.is_finite() {
        out.push((s.a, snap.along * s.forward_hours, snap.along * s.metres));
    }
    if s.backward_hours.is_finite() {
        out.push((
            s.b,
            (1.0 - snap.along) * s.backward_hours,
            (1.0 - snap.along) * s.metres,
        ));
    }
    out
}

/// Drive along one span from one snapped point to another on the same span, if allowed.
fn same_span(network: &RoadNetwork, from: &Snap, to: &Snap) -> Option<(f64, f64)> {
    if from.span != to.span || network.at_node(from).is_some() || network.at_node(to).is_some() {
        return None;
    }
    let s = network.spans[from.span as usize];
    let d = to.along - from.along;
    if d >= 0.0 && s.forward_hours.is_finite() {
        Some((d * s.forward_hours, d * s.metres))
    } else if d <= 0.0 && s.backward_hours.is_finite() {
        Some((-d * s.backward_hours, -d * s.metres))
    } else {
        None
    }
}

/// A reusable Dijkstra search over one network.
struct Search {
    dist: Vec<f64>,
    metres: Vec<f64>,
    pred: Vec<u32>,
    settled: Vec<bool>,
    touched: Vec<u32>,
    /// Target marks: `mark[v] == stamp` when v is an end node of a point still to settle.
    mark: Vec<u32>,
    stamp: u32,
    heap: BinaryHeap<Reverse<(u64, u32)>>,
}

impl Search {
    fn new(nodes: usize) -> Search {
        Search {
            dist: vec![f64::INFINITY; nodes],
            metres: vec![0.0; nodes],
            pred: vec![u32::MAX; nodes],
            settled: vec![false; nodes],
            touched: Vec::new(),
            mark: vec![0; nodes],
            stamp: 0,
            heap: BinaryHeap::new(),
        }
    }

    fn reset(&mut self) {
        for &v in &self.touched {
            self.dist[v as usize] = f64::INFINITY;
            self.pred[v as usize] = u32::MAX;
            self.settled[v as usize] = false;
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
            if h < self.dist[v as usize] {
                if self.dist[v as usize].is_infinite() {
                    self.touched.push(v);
                }
                self.dist[v as usize] = h;
                self.metres[v as usize] = m;
                self.heap.push(Reverse((h.to_bits(), v)));
            }
        }
        while let Some(Reverse((bits, u))) = self.heap.pop() {
            let ui = u as usize;
            if self.settled[ui] || f64::from_bits(bits) > self.dist[ui] {
                continue;
            }
            self.settled[ui] = true;
            if !all && self.mark[ui] == self.stamp {
                remaining -= 1;
                if remaining == 0 {
                    break;
                }
            }
            let du = self.dist[ui];
            let mu = self.metres[ui];
            let range = network.first_out[ui] as usize..network.first_out[ui + 1] as usize;
            for arc in range {
                let v = network.head[arc] as usize;
                let dv = du + network.hours[arc];
                if dv < self.dist[v] {
                    if self.dist[v].is_infinite() {
                        self.touched.push(v as u32);
                    }
                    self.dist[v] = dv;
                    self.metres[v] = mu + network.metres[arc];
                    self.pred[v] = u;
                    self.heap.push(Reverse((dv.to_bits(), v as u32)));
                }
            }
        }
    }

    /// Best (hours, metres, end node) to reach a point through its egress ends.
    fn arrive(&self, ends: &[(u32, f64, f64)]) -> Option<(f64, f64, u32)> {
        let mut best: Option<(f64, f64, u32)> = None;
        for &(v, h, m) in ends {
            let d = self.dist[v as usize];
            if d.is_finite() && best.is_none_or(|(b, _, _)| d + h < b) {
                best = Some((d + h, self.metres[v as usize] + m, v));
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
        // Arcs as (tail, head, hours, metres), and spans.
        let mut arcs: Vec<(u32, u32, f64, f64)> = Vec::new();
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
                    if forward {
                        arcs.push((u, v, hours, metres));
                    }
                    if backward {
                        arcs.push((v, u, hours, metres));
                    }
                    spans.push(Span {
                        a: u,
                        b: v,
                        metres,
                        forward_hours: if forward { hours } else { f64::INFINITY },
                        backward_hours: if backward { hours } else { f64::INFINITY },
                    });
                    stats.road_km += metres / 1000.0;
                }
                previous = Some(v);
            }
        }
        let nodes = index.nodes;
        if nodes.len() >= u32::MAX as usize || arcs.len() >= u32::MAX as usize {
            return Err(Error::input(format!(
                "road network of {} nodes and {} arcs is larger than this tool handles (2^32)",
                nodes.len(),
                arcs.len()
            )));
        }
        // Compressed sparse rows by a counting sort on the tail (stable: input order kept).
        let n = nodes.len();
        let mut first_out = vec![0u32; n + 1];
        for &(u, _, _, _) in &arcs {
            first_out[u as usize + 1] += 1;
        }
        for v in 0..n {
            first_out[v + 1] += first_out[v];
        }
        let mut fill = first_out.clone();
        let mut head = vec![0u32; arcs.len()];
        let mut hours = vec![0.0; arcs.len()];
        let mut metres = vec![0.0; arcs.len()];
        for &(u, v, h, m) in &arcs {
            let at = fill[u as usize] as usize;
            fill[u as usize] += 1;
            head[at] = v;
            hours[at] = h;
            metres[at] = m;
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
        let mut root_km: BTreeMap<u32, (f64, usize)> = BTreeMap::new();
        for &r in &roots {
            root_km.entry(r).or_default().1 += 1;
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
        let piece_of: Vec<u32> = roots.iter().map(|r| number[r]).collect();
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
        stats.arcs = head.len();
        Ok(RoadNetwork {
            nodes,
            first_out,
            head,
            hours,
            metres,
            spans,
            tree,
            piece_of,
            pieces,
            stats,
            walk_kmh: options.walk_kmh,
            max_walk_m: options.max_walk_m,
        })
    }

    /// The node a snapped point sits on, when it is at (within a micrometre of) a span's end.
    fn at_node(&self, snap: &Snap) -> Option<u32> {
        let s = self.spans[snap.span as usize];
        let along_m = snap.along * s.metres;
        if along_m <= 1e-6 {
            Some(s.a)
        } else if s.metres - along_m <= 1e-6 {
            Some(s.b)
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
                        let mut search = Search::new(self.nodes.len());
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
                                if let Some((h, m)) = same_span(self, &snaps[i], &snaps[j])
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
    /// the road where the drive starts, the nodes passed, the point where it ends (walks not
    /// included). `None` when there is no way.
    pub fn path(&self, from: &Snap, to: &Snap) -> Option<Vec<(f64, f64)>> {
        let ends = egress(self, to);
        let mut search = Search::new(self.nodes.len());
        let targets: Vec<u32> = ends.iter().map(|e| e.0).collect();
        search.run(self, &access(self, from), &targets);
        let through = search.arrive(&ends);
        let direct = same_span(self, from, to);
        match (through, direct) {
            (None, None) => None,
            (Some((h, _, _)), Some((d, _))) if d <= h => Some(vec![from.on_road, to.on_road]),
            (None, Some(_)) => Some(vec![from.on_road, to.on_road]),
            (Some((_, _, end)), _) => {
                let mut chain = vec![end];
                let mut v = end;
                while search.pred[v as usize] != u32::MAX {
                    v = search.pred[v as usize];
                    chain.push(v);
                }
                chain.reverse();
                let mut line = vec![from.on_road];
                line.extend(chain.iter().map(|&v| self.nodes[v as usize]));
                line.push(to.on_road);
                line.dedup();
                Some(line)
            }
        }
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

/// What [`bench_grid`] measured.
#[derive(Debug, Clone, PartialEq)]
pub struct GridBench {
    pub nodes: usize,
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
/// every vertex jittered up to 10 m so no two paths tie), as road segments, one per street.
pub fn grid_segments(side: usize) -> Vec<RoadSegment> {
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
    let class = |k: usize| {
        if k % 10 == 0 {
            "primary"
        } else {
            "residential"
        }
    };
    let mut out = Vec::with_capacity(2 * side);
    for r in 0..side {
        out.push(RoadSegment {
            points: (0..side).map(|c| at(r, c)).collect(),
            class: class(r).to_string(),
            oneway: OneWay::Both,
            speed_kmh: None,
            feature: out.len() + 1,
        });
    }
    for c in 0..side {
        out.push(RoadSegment {
            points: (0..side).map(|r| at(r, c)).collect(),
            class: class(c).to_string(),
            oneway: OneWay::Both,
            speed_kmh: None,
            feature: out.len() + 1,
        });
    }
    out
}

/// The road-network benchmark: build a grid of about `2 side^2` road pieces, compute the travel
/// among a depot and `stops` stops spread over it (`threads` searches at a time), order one tour
/// and split it into 8-hour days of at most 10 stops (1.5 h of work each), and the same with
/// straight-line travel (x 1.3 at 30 km/h) for comparison. Peak memory is the caller's to read.
pub fn bench_grid(side: usize, stops: usize, threads: usize) -> Result<GridBench> {
    use crate::field::routing;
    use std::time::Instant;
    let started = Instant::now();
    let segments = grid_segments(side);
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
        let mut options = NetworkOptions::default();
        options.speeds = SpeedTable::single(36.0); // 10 m/s
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
