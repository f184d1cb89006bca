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
//!   spread over threads. For many points on a large network
//!   ([`TravelMethod::for_size`]: from 230 points per thread on 20,000 graph nodes) a
//!   contraction hierarchy is built for the matrix instead (`hierarchy.rs`, Geisberger et al.
//!   2008) and queried many-to-many with buckets (Knopp et al. 2007); [`Travel::method`] says
//!   which was used.
//! - **Costs and ties**: every search adds whole ticks (2^-36 h and 2^-16 m; each arc's time and
//!   length rounded once, so hours agree with plain `f64` sums to 2^-37 h and metres to
//!   2^-17 m per road piece) and compares hours first, then metres: of two drives equally fast
//!   to the tick the shorter is taken. Sums in whole ticks do not depend on their order, so both
//!   methods give the same hours and kilometres to the bit; where two drives tie in both, their
//!   route lines may differ, never their hours or kilometres.
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

mod bench;
mod build;
mod hierarchy;
mod search;
#[cfg(test)]
mod tests;
mod types;

pub use bench::{GridBench, bench_grid, grid_segments};
pub use types::{
    NetworkOptions, NetworkStats, NodeId, Piece, PieceId, RoadNetwork, Snap, SpeedTable, Travel,
    TravelMethod, Unreachable,
};
