//! The road-network benchmark on a generated street grid (`examples/road_bench.rs`,
//! docs/benchmarks.md).
//!
//! # Units
//! Metres, hours, seconds of wall time.

use crate::core::error::{Error, Result};
use crate::field::network::types::{NetworkOptions, RoadNetwork, TravelMethod};
use crate::field::routing::Matrix;
use crate::input::roads::{OneWay, RoadSegment};

/// What [`bench_grid`] measured.
#[derive(Debug, Clone, PartialEq)]
pub struct GridBench {
    pub nodes: usize,
    pub graph_nodes: usize,
    pub road_pieces: usize,
    pub arcs: usize,
    pub stops: usize,
    pub build_s: f64,
    /// How the matrix was searched.
    pub method: TravelMethod,
    /// Seconds of `travel_s` spent building the contraction hierarchy.
    pub preprocess_s: f64,
    pub shortcuts: usize,
    pub travel_s: f64,
    pub routes_s: f64,
    /// Road geometry of every day's route (depot, stops, depot), as `orders` draws it.
    pub geometry_s: f64,
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
/// straight-line travel (x 1.3 at 30 km/h) for comparison. The matrix is searched by `method`,
/// or the one `orders` would pick (`None`). Peak memory is the caller's to read.
pub fn bench_grid(
    side: usize,
    shape_points: usize,
    stops: usize,
    threads: usize,
    method: Option<TravelMethod>,
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
    let plan = |m: &Matrix| -> Result<(f64, usize, Vec<Vec<usize>>)> {
        let nodes: Vec<usize> = (1..m.len()).collect();
        let starts = if nodes.len() > 400 { 2 } else { 8 };
        let tour = routing::heuristic(m, &nodes, starts);
        let cuts = routing::split(m, &tour, &work, 8.0, 10)
            .ok_or_else(|| Error::Internal("a bench stop does not fit a day".into()))?;
        let days = cuts
            .iter()
            .map(|c| {
                let mut visit = vec![0];
                visit.extend(&tour[c.from..c.to]);
                visit.push(0);
                visit
            })
            .collect();
        Ok((routing::tour_length(m, &tour), cuts.len(), days))
    };
    let started = Instant::now();
    let method = method.unwrap_or_else(|| {
        TravelMethod::for_size(points.len(), network.stats.graph_nodes, threads)
    });
    let travel = network.travel_by(&points, threads, method)?;
    let travel_s = started.elapsed().as_secs_f64();
    let started = Instant::now();
    let (road_tour_hours, road_days, visits) = plan(&travel.matrix())?;
    let routes_s = started.elapsed().as_secs_f64();
    let started = Instant::now();
    // As `orders` does it (`field::travel::Legs::routes`): days spread over the threads.
    std::thread::scope(|scope| {
        for t in 0..threads.max(1) {
            let (network, travel, visits) = (&network, &travel, &visits);
            scope.spawn(move || {
                for visit in visits.iter().skip(t).step_by(threads.max(1)) {
                    std::hint::black_box(network.route(travel, visit));
                }
            });
        }
    });
    let geometry_s = started.elapsed().as_secs_f64();
    let started = Instant::now();
    let straight = Matrix::from_points(&points, 1.3, 30.0);
    let (straight_tour_hours, straight_days, _) = plan(&straight)?;
    let straight_s = started.elapsed().as_secs_f64();
    Ok(GridBench {
        nodes: network.stats.nodes,
        graph_nodes: network.stats.graph_nodes,
        road_pieces: network.spans.len(),
        arcs: network.stats.arcs,
        stops,
        build_s,
        method,
        preprocess_s: travel.preprocess_s,
        shortcuts: travel.shortcuts,
        travel_s,
        routes_s,
        geometry_s,
        road_tour_hours,
        road_days,
        straight_s,
        straight_tour_hours,
        straight_days,
    })
}
