//! What the road network's files share: speeds and options, the graph's own types
//! ([`RoadNetwork`], its spans, chains and arcs), snapped points and [`Travel`].
//!
//! # Units
//! Coordinates in the working CRS (metres); lengths in metres, kilometres in [`Travel`]; speeds in
//! km/h; times in hours.

use std::collections::BTreeMap;

use rstar::RTree;
use rstar::primitives::{GeomWithData, Line};

use crate::field::routing::Matrix;
use crate::input::roads::RoadSegment;

/// Speed of a road class, km/h, or `None` for a class that is not driven.
#[derive(Debug, Clone, PartialEq)]
pub struct SpeedTable {
    pub(super) classes: BTreeMap<String, Option<f64>>,
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

    /// Every drivable class, and any class not in the table, at `kmh`; classes that are not
    /// driven stay so.
    pub fn drive_all_at(&mut self, kmh: f64) {
        for speed in self.classes.values_mut().flatten() {
            *speed = kmh;
        }
        self.default_kmh = kmh;
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
pub(super) struct Span {
    pub(super) a: u32,
    pub(super) b: u32,
    pub(super) metres: f64,
    /// Hours a → b, infinite where not allowed.
    pub(super) forward_hours: f64,
    /// Hours b → a, infinite where not allowed.
    pub(super) backward_hours: f64,
    pub(super) chain: u32,
    /// Whether a → b runs the chain's way (s → t).
    pub(super) aligned: bool,
    /// Position in the chain's list of spans.
    pub(super) index: u32,
    /// Chain hours s → t, hours t → s and metres over the spans before this one.
    pub(super) before_forward: f64,
    pub(super) before_backward: f64,
    pub(super) before_metres: f64,
}

/// A road between two graph nodes through vertices where nothing else meets (a chain of
/// spans): the graph's arcs. Driving rules are the same along a chain (a vertex joins two spans
/// into a chain only when they allow the same directions through it).
#[derive(Debug, Clone, Copy)]
pub(super) struct Chain {
    /// Graph nodes at the start and end.
    pub(super) s: u32,
    pub(super) t: u32,
    /// The chain's spans in s → t order are `chain_spans[first..first + count]`.
    pub(super) first: u32,
    pub(super) count: u32,
    /// Vertex at s.
    pub(super) start_vertex: u32,
    pub(super) forward_hours: f64,
    pub(super) backward_hours: f64,
    pub(super) metres: f64,
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

/// A routable road graph in compressed sparse rows.
#[derive(Debug, Clone)]
pub struct RoadNetwork {
    /// Vertex coordinates, working CRS.
    pub nodes: Vec<(f64, f64)>,
    /// Arcs leaving graph node v are `first_out[v]..first_out[v + 1]`.
    pub(super) first_out: Vec<u32>,
    pub(super) arcs: Vec<Arc>,
    /// Chain of each arc, with the top bit set when the arc runs the chain t → s.
    pub(super) arc_chain: Vec<u32>,
    /// Vertex of each graph node.
    pub(super) graph_vertex: Vec<u32>,
    pub(super) chains: Vec<Chain>,
    pub(super) chain_spans: Vec<u32>,
    pub(super) spans: Vec<Span>,
    pub(super) tree: RTree<GeomWithData<Line<[f64; 2]>, u32>>,
    /// Piece of every vertex.
    pub(super) piece_of: Vec<u32>,
    pub pieces: Vec<Piece>,
    pub stats: NetworkStats,
    pub(super) walk_kmh: f64,
    pub(super) max_walk_m: f64,
}

pub(super) const REVERSED: u32 = 1 << 31;

/// One graph arc, its data side by side for the search's memory traffic; hours and metres in
/// ticks ([`hours_ticks`], [`metres_ticks`]).
#[derive(Debug, Clone, Copy)]
pub(super) struct Arc {
    pub(super) hours: u64,
    pub(super) metres: u64,
    pub(super) head: u32,
}

/// Ticks per hour of the searches' sums: 2^36 (one tick is about 52 ns).
///
/// Shortest paths add whole ticks, so a sum does not depend on the order it is taken in and
/// every search (Dijkstra, the contraction hierarchy) finds the same hours and metres to the
/// last tick; each arc's time is rounded to the nearest tick once (at most 2^-37 h, 26 ns, per
/// arc against plain `f64` sums).
pub(super) const TICKS_PER_HOUR: f64 = (1u64 << 36) as f64;
/// Ticks per metre: 2^16 (one tick is about 15 µm; at most 7.6 µm rounding per arc).
pub(super) const TICKS_PER_METRE: f64 = (1u64 << 16) as f64;
/// No way: more than any sum of real arcs (2^28 h, 2^48 m).
pub(super) const NO_WAY: u64 = u64::MAX;

/// Hours in ticks, rounded to the nearest.
pub(super) fn hours_ticks(hours: f64) -> u64 {
    if hours.is_finite() {
        (hours.max(0.0) * TICKS_PER_HOUR).round() as u64
    } else {
        NO_WAY
    }
}

/// Metres in ticks, rounded to the nearest.
pub(super) fn metres_ticks(metres: f64) -> u64 {
    (metres.max(0.0) * TICKS_PER_METRE).round() as u64
}

/// A drive's cost as the searches compare it: hours in ticks first, then metres in ticks (of
/// two drives equally fast to the tick, the shorter is taken; equal in both, either, with the
/// same hours and metres).
pub(super) type Cost = (u64, u64);

/// Hours of a cost (ticks back to hours; infinite for [`NO_WAY`]).
pub(super) fn cost_hours(cost: Cost) -> f64 {
    if cost.0 == NO_WAY {
        f64::INFINITY
    } else {
        cost.0 as f64 / TICKS_PER_HOUR
    }
}

/// Metres of a cost.
pub(super) fn cost_metres(cost: Cost) -> f64 {
    cost.1 as f64 / TICKS_PER_METRE
}

/// The sum of two costs (saturating at [`NO_WAY`]).
pub(super) fn add(a: Cost, b: Cost) -> Cost {
    if a.0 == NO_WAY || b.0 == NO_WAY {
        (NO_WAY, 0)
    } else {
        (a.0.saturating_add(b.0), a.1.saturating_add(b.1))
    }
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
    pub(super) span: u32,
    /// Position along the span from a (0) to b (1).
    pub(super) along: f64,
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
    /// The drives to and from the depot as the matrix searches found them, kept to draw the
    /// routes without searching again: `(from, to)` with one end the depot, `None` where the
    /// graph has no way (a drive along one chain may still exist).
    pub(super) depot_legs: std::collections::HashMap<(usize, usize), Option<Leg>>,
    /// How the matrix was searched.
    pub method: TravelMethod,
    /// Seconds spent building the contraction hierarchy (0 for Dijkstra searches).
    pub preprocess_s: f64,
    /// Shortcuts the contraction hierarchy added (0 for Dijkstra searches).
    pub shortcuts: usize,
}

/// A drive through the graph kept from a matrix search: the arcs in order, the graph node it
/// leaves from and the one it ends at, and its cost from the point to the point.
#[derive(Debug, Clone)]
pub(super) struct Leg {
    pub(super) arcs: Vec<u32>,
    pub(super) first: u32,
    pub(super) end: u32,
    pub(super) cost: Cost,
}

/// One source's row of the matrix as a search method gives it: the least cost through the graph
/// to every point (`None`: no way through the graph), and the kept drives to or from the depot.
pub(super) type Row = (usize, Vec<Option<Cost>>, Vec<((usize, usize), Option<Leg>)>);

/// How a travel matrix was searched.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TravelMethod {
    /// One Dijkstra search per point (small networks, or few points).
    Dijkstra,
    /// A contraction hierarchy built for the matrix, then bucket many-to-many queries.
    Hierarchy,
}

impl TravelMethod {
    /// Points per search thread from which a contraction hierarchy is used. Measured on both
    /// street grids of docs/benchmarks.md (2026-12-03, same load): building the hierarchy
    /// takes about 40–55 µs of CPU per graph node, mostly on one thread; one Dijkstra search
    /// about 0.21–0.24 µs per graph node, and the searches run on every thread; so the
    /// hierarchy saves wall time from about 50 / 0.22 = 230 points per thread (and CPU time
    /// from half that).
    pub const HIERARCHY_FROM_POINTS_PER_THREAD: usize = 230;
    /// Graph nodes from which a contraction hierarchy is used: below this a whole matrix of
    /// Dijkstra searches takes well under a second.
    pub const HIERARCHY_FROM_NODES: usize = 20_000;

    /// The method for `points` points on a graph of `graph_nodes` nodes, searched on
    /// `threads` threads.
    pub fn for_size(points: usize, graph_nodes: usize, threads: usize) -> TravelMethod {
        if points >= Self::HIERARCHY_FROM_POINTS_PER_THREAD * threads.max(1)
            && graph_nodes >= Self::HIERARCHY_FROM_NODES
        {
            TravelMethod::Hierarchy
        } else {
            TravelMethod::Dijkstra
        }
    }

    /// The method in words, for outputs.
    pub fn as_str(self) -> &'static str {
        match self {
            TravelMethod::Dijkstra => "one Dijkstra search per point",
            TravelMethod::Hierarchy => "a contraction hierarchy with bucket many-to-many queries",
        }
    }
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
            // Kept only while the depot stays the depot.
            depot_legs: if keep.first() == Some(&0) {
                self.depot_legs
                    .iter()
                    .filter_map(|(&(i, j), leg)| Some(((position(i)?, position(j)?), leg.clone())))
                    .collect()
            } else {
                Default::default()
            },
            method: self.method,
            preprocess_s: self.preprocess_s,
            shortcuts: self.shortcuts,
        }
    }
}

/// Where a snapped point lies on its chain: hours s → point and point → s, metres from s.
#[derive(Debug, Clone, Copy)]
pub(super) struct Position {
    pub(super) chain: Chain,
    pub(super) forward_before: f64,
    pub(super) backward_before: f64,
    pub(super) metres_before: f64,
}
