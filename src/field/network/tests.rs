//! Unit tests of the road network on hand-made roads (hand arithmetic).

use crate::field::network::types::{NetworkOptions, RoadNetwork, SpeedTable, TravelMethod};
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
    // common-practice table); the merged node keeps the first vertex seen. Searches sum whole
    // ticks (2^-36 h, 2^-16 m per arc, `types::TICKS_PER_HOUR`): 1e-10 h and 1e-7 km here.
    let second_km = 0.2f64.hypot(1000.0) / 1000.0;
    let expected = 1.0 / 65.0 + second_km / 30.0;
    assert!((t.hours(0, 1) - expected).abs() < 1e-10);
    assert!((t.km(0, 1) - (1.0 + second_km)).abs() < 1e-7);
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
    // Forward: 100 m along the one-way. Back: 50 m + 100 + 200 + 100 + 50 m = 500 m (to the
    // ticks the searches sum: 1e-10 h, 1e-7 km).
    assert!((t.km(0, 1) - 0.1).abs() < 1e-7);
    assert!((t.km(1, 0) - 0.5).abs() < 1e-7);
    assert!((t.hours(1, 0) - 0.5 / 36.0).abs() < 1e-10);
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
    // hours and road kilometres between road vertices, one-way pieces included, by both search
    // methods. The network sums whole ticks (each arc's hours rounded to 2^-36 h, its metres to
    // 2^-16 m: see `types::TICKS_PER_HOUR`), so they agree to within 2^-37 h and 2^-17 m per
    // piece: 1e-9 h and 1 mm on these drives of at most 90 pieces.
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
        for method in [TravelMethod::Dijkstra, TravelMethod::Hierarchy] {
            let travel = net.travel_by(&points, 2, method).unwrap();
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
                        (th - h).abs() <= 1e-9,
                        "round {round}: {u} -> {v}: {th} h, plain {h} h"
                    );
                    assert!(
                        (tk - m / 1000.0).abs() <= 1e-6,
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
}

/// Random roads for the comparisons below: `n` vertices in a 2 km square, roads of 2–4 vertices,
/// a third one-way each way, some at 65 km/h (the class table's primary).
fn random_roads(n: usize, next: &mut impl FnMut() -> f64) -> Vec<RoadSegment> {
    let vertices: Vec<(f64, f64)> = (0..n).map(|_| (next() * 2000.0, next() * 2000.0)).collect();
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
        roads.push(segment(&points, class, oneway));
    }
    roads
}

/// The two methods' travel agree to the bit; the route lines of the drives to and from the
/// depot (kept from the searches: the hierarchy's unpacked shortcuts against Dijkstra's arcs)
/// are as long as the drives' kilometres, and the same lines when `same_lines` (where no two
/// drives tie: on exact ties either method may draw another of the equal drives).
fn assert_same_travel(
    net: &RoadNetwork,
    points: &[(f64, f64)],
    what: &str,
    same_lines: bool,
) -> usize {
    let plain = net.travel_by(points, 2, TravelMethod::Dijkstra).unwrap();
    let hierarchy = net.travel_by(points, 2, TravelMethod::Hierarchy).unwrap();
    assert_eq!(plain.method, TravelMethod::Dijkstra);
    assert_eq!(hierarchy.method, TravelMethod::Hierarchy);
    let n = points.len();
    let mut finite = 0;
    for i in 0..n {
        for j in 0..n {
            let (a, b) = (plain.hours(i, j), hierarchy.hours(i, j));
            assert!(
                a.to_bits() == b.to_bits()
                    && plain.km(i, j).to_bits() == hierarchy.km(i, j).to_bits(),
                "{what}: {i} -> {j}: Dijkstra {a} h {} km, hierarchy {b} h {} km",
                plain.km(i, j),
                hierarchy.km(i, j)
            );
            finite += usize::from(a.is_finite() && i != j);
        }
    }
    assert_eq!(plain.unreachable, hierarchy.unreachable, "{what}");
    let length = |line: &[(f64, f64)]| -> f64 {
        line.windows(2)
            .map(|w| (w[1].0 - w[0].0).hypot(w[1].1 - w[0].1))
            .sum::<f64>()
            / 1000.0
    };
    for j in 1..n {
        let (a, b) = (
            net.route(&plain, &[0, j, 0]),
            net.route(&hierarchy, &[0, j, 0]),
        );
        for (t, lines) in [(&plain, &a), (&hierarchy, &b)] {
            for (leg, (from, to)) in lines.iter().zip([(0, j), (j, 0)]) {
                if t.km(from, to).is_finite() && !leg.is_empty() {
                    assert!(
                        (length(leg) - t.km(from, to)).abs() < 1e-6,
                        "{what}: {:?} route line {from} -> {to} is {} km, the drive {} km",
                        t.method,
                        length(leg),
                        t.km(from, to)
                    );
                }
            }
        }
        if same_lines {
            assert_eq!(a, b, "{what}: route lines 0 -> {j} -> 0");
        }
    }
    finite
}

#[test]
fn hierarchy_travel_equals_dijkstra_on_random_graphs_with_one_way_arcs() {
    // Reference: the Dijkstra searches (checked above against the textbook algorithm). The
    // contraction hierarchy must give the same hours and metres to the bit, between points
    // snapped anywhere on the roads (mid-piece, on one-way pieces), and the same route lines.
    let mut state = 0x0bad_cafe_f00d_1234_u64;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    let mut compared = 0;
    for round in 0..30 {
        let roads = random_roads(20 + round * 4, &mut next);
        let net = RoadNetwork::build(&roads, &NetworkOptions::default()).unwrap();
        let points: Vec<(f64, f64)> = (0..25)
            .map(|_| (next() * 2000.0, next() * 2000.0))
            .collect();
        compared += assert_same_travel(&net, &points, &format!("round {round}"), true);
    }
    assert!(compared > 5000, "only {compared} drives compared");
}

/// A `side` x `side` grid of 100 m blocks with no jitter: even streets at `fast` km/h, odd ones
/// at 30; every third street one-way (alternately each way) when `one_way`.
fn even_grid(side: usize, fast: f64, one_way: bool) -> Vec<RoadSegment> {
    let mut roads = Vec::new();
    for k in 0..side {
        let along = |c: usize| c as f64 * 100.0;
        let oneway = match (one_way, k % 6) {
            (true, 0) => OneWay::Forward,
            (true, 3) => OneWay::Reverse,
            _ => OneWay::Both,
        };
        let speed = if k % 2 == 0 { fast } else { 30.0 };
        for points in [
            (0..side).map(|c| (along(c), along(k))).collect::<Vec<_>>(),
            (0..side).map(|r| (along(k), along(r))).collect(),
        ] {
            let mut s = segment(&points, "residential", oneway);
            s.speed_kmh = Some(speed);
            roads.push(s);
        }
    }
    roads
}

#[test]
fn ties_leave_the_metres_alike_in_both_methods() {
    // A grid of equal blocks where even streets are twice as fast: four blocks on a fast street
    // take as long as two on a slow one (hand arithmetic), so many drives tie in hours with
    // different metres. Both methods break a tie by the shorter drive (hours to the tick, then
    // metres): the same hours and kilometres to the bit, one-way streets or not.
    for one_way in [false, true] {
        let net =
            RoadNetwork::build(&even_grid(40, 60.0, one_way), &NetworkOptions::default()).unwrap();
        let mut points = Vec::new();
        for r in 0..13 {
            for c in (0..13).step_by(3) {
                points.push((c as f64 * 100.0 + 50.0 * (r % 2) as f64, r as f64 * 100.0));
            }
        }
        let compared = assert_same_travel(&net, &points, &format!("one-way {one_way}"), false);
        assert!(compared > 2000);
    }
}

#[test]
fn a_tie_in_hours_takes_the_shorter_road() {
    // (0, 0) → (1000, 0): 1 km straight at 30 km/h, or 2 km round the top at 60 km/h — the same
    // 2 minutes (hand arithmetic). Stubs make both ends graph nodes, so the two drives are
    // parallel arcs; the shorter is taken by both methods, each way.
    let mut fast = segment(
        &[(0.0, 0.0), (0.0, 500.0), (1000.0, 500.0), (1000.0, 0.0)],
        "residential",
        OneWay::Both,
    );
    fast.speed_kmh = Some(60.0);
    let roads = vec![
        fast,
        segment(&[(0.0, 0.0), (1000.0, 0.0)], "residential", OneWay::Both),
        segment(&[(-100.0, 0.0), (0.0, 0.0)], "residential", OneWay::Both),
        segment(&[(1000.0, 0.0), (1100.0, 0.0)], "residential", OneWay::Both),
    ];
    let net = RoadNetwork::build(&roads, &NetworkOptions::default()).unwrap();
    for method in [TravelMethod::Dijkstra, TravelMethod::Hierarchy] {
        let t = net
            .travel_by(&[(0.0, 0.0), (1000.0, 0.0)], 1, method)
            .unwrap();
        assert!((t.hours(0, 1) - 1.0 / 30.0).abs() < 1e-9, "{method:?}");
        assert!(
            (t.km(0, 1) - 1.0).abs() < 1e-9,
            "{method:?}: {} km",
            t.km(0, 1)
        );
        assert!(
            (t.km(1, 0) - 1.0).abs() < 1e-9,
            "{method:?}: {} km",
            t.km(1, 0)
        );
        let line = net.route(&t, &[0, 1]);
        assert_eq!(line[0], vec![(0.0, 0.0), (1000.0, 0.0)], "{method:?}");
    }
}

#[test]
fn the_method_is_picked_by_size() {
    // The thresholds of `TravelMethod::for_size` (measured: docs/benchmarks.md).
    let (points, nodes) = (
        TravelMethod::HIERARCHY_FROM_POINTS_PER_THREAD,
        TravelMethod::HIERARCHY_FROM_NODES,
    );
    let pick = TravelMethod::for_size;
    assert_eq!(pick(points, nodes, 1), TravelMethod::Hierarchy);
    assert_eq!(pick(2 * points, nodes, 2), TravelMethod::Hierarchy);
    assert_eq!(pick(2 * points - 1, nodes, 2), TravelMethod::Dijkstra);
    assert_eq!(pick(points, nodes - 1, 1), TravelMethod::Dijkstra);
    // A small network keeps Dijkstra's searches whatever the points.
    let net = RoadNetwork::build(&even_grid(6, 60.0, false), &NetworkOptions::default()).unwrap();
    let many: Vec<(f64, f64)> = (0..points).map(|k| ((k % 6) as f64 * 100.0, 0.0)).collect();
    assert_eq!(net.travel(&many, 1).unwrap().method, TravelMethod::Dijkstra);
}
