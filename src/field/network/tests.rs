//! Unit tests of the road network on hand-made roads (hand arithmetic).

use crate::field::network::types::{NetworkOptions, RoadNetwork, SpeedTable};
use crate::input::roads::{OneWay, RoadSegment};

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

#[test]
fn travel_equals_plain_dijkstra_on_random_graphs_with_one_way_arcs() {
    // Outside source: Dijkstra's algorithm (Dijkstra 1959) as the textbook gives it, run here on
    // every road piece (no chains, no snapping) with a linear scan for the nearest node. The
    // network's travel (chains of pieces as single arcs, a heap, stops early) must find the same
    // hours and road kilometres between road vertices, one-way pieces included; the sums are
    // taken in another order (a chain's pieces first), so they agree to 1e-12 relative.
    let mut state = 0x1234_5678_9abc_def1_u64;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    for round in 0..20 {
        let n = 30 + round * 3;
        let vertices: Vec<(f64, f64)> =
            (0..n).map(|_| (next() * 2000.0, next() * 2000.0)).collect();
        let mut roads = Vec::new();
        for _ in 0..n + n / 2 {
            let len = 2 + (next() * 3.0) as usize;
            let mut ids = vec![(next() * n as f64) as usize];
            while ids.len() < len {
                let v = (next() * n as f64) as usize;
                if !ids.contains(&v) {
                    ids.push(v);
                }
            }
            let oneway = match (next() * 3.0) as usize {
                0 => OneWay::Forward,
                1 => OneWay::Reverse,
                _ => OneWay::Both,
            };
            let class = if next() < 0.3 {
                "primary"
            } else {
                "residential"
            };
            let points: Vec<(f64, f64)> = ids.iter().map(|&v| vertices[v]).collect();
            roads.push((ids, segment(&points, class, oneway)));
        }
        let segments: Vec<RoadSegment> = roads.iter().map(|(_, s)| s.clone()).collect();
        let options = NetworkOptions::default();
        let net = RoadNetwork::build(&segments, &options).unwrap();
        // The plain graph: every piece an arc (or two), at its class's speed.
        let mut out: Vec<Vec<(usize, f64, f64)>> = vec![Vec::new(); n];
        for (ids, s) in &roads {
            let kmh = options.speeds.speed(s).unwrap();
            for w in ids.windows(2) {
                let (a, b) = (vertices[w[0]], vertices[w[1]]);
                let metres = (b.0 - a.0).hypot(b.1 - a.1);
                let hours = metres / 1000.0 / kmh;
                if s.oneway != OneWay::Reverse {
                    out[w[0]].push((w[1], hours, metres));
                }
                if s.oneway != OneWay::Forward {
                    out[w[1]].push((w[0], hours, metres));
                }
            }
        }
        let dijkstra = |source: usize| -> Vec<(f64, f64)> {
            let mut best = vec![(f64::INFINITY, 0.0); n];
            let mut done = vec![false; n];
            best[source] = (0.0, 0.0);
            loop {
                let u = (0..n)
                    .filter(|&v| !done[v] && best[v].0.is_finite())
                    .min_by(|&a, &b| best[a].0.total_cmp(&best[b].0));
                let Some(u) = u else { break };
                done[u] = true;
                for &(v, h, m) in &out[u] {
                    if best[u].0 + h < best[v].0 {
                        best[v] = (best[u].0 + h, best[u].1 + m);
                    }
                }
            }
            best
        };
        // Route among the vertices that some road uses.
        let used: Vec<usize> = (0..n)
            .filter(|v| roads.iter().any(|(ids, _)| ids.contains(v)))
            .collect();
        let points: Vec<(f64, f64)> = used.iter().map(|&v| vertices[v]).collect();
        let travel = net.travel(&points, 2).unwrap();
        let mut finite = 0;
        for (i, &u) in used.iter().enumerate() {
            let plain = dijkstra(u);
            for (j, &v) in used.iter().enumerate() {
                let (h, m) = plain[v];
                let (th, tk) = (travel.hours(i, j), travel.km(i, j));
                if h.is_infinite() {
                    assert!(
                        th.is_infinite(),
                        "round {round}: {u} -> {v}: {th} h, plain none"
                    );
                    continue;
                }
                finite += 1;
                assert!(
                    (th - h).abs() <= 1e-12 * h.max(1e-9),
                    "round {round}: {u} -> {v}: {th} h, plain {h} h"
                );
                assert!(
                    (tk - m / 1000.0).abs() <= 1e-9 * (m / 1000.0).max(1e-9),
                    "round {round}: {u} -> {v}: {tk} km, plain {} km",
                    m / 1000.0
                );
            }
        }
        assert!(
            finite > used.len() * 2,
            "round {round}: too few drives to compare"
        );
    }
}
