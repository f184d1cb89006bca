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
