//! The exact component decomposition (src/solve/decompose.rs) against brute-force enumeration on
//! tiny instances (the tests' random instances, tests/common) and against the monolithic transportation MIP on larger random ones: patch
//! clusters far enough apart share no link, so the merge must find the same optimum.

mod common;

use common::{Instance, random_instance, small_spec};
use hostcut::core::kernel::KernelKind;
use hostcut::solve::decompose;
use hostcut::solve::heuristics::brute_force;
use hostcut::solve::optimise::solve;
use hostcut::solve::problem::{Limits, Status};

/// `clusters` groups of patches, their centres uniform on a square 50 km a side per cluster
/// (so far apart), the kernel exponential and cut off well inside that.
fn instance(seed: u64, patches: usize, clusters: usize) -> Instance {
    let mut spec = small_spec(seed, patches);
    spec.landscape.clusters = clusters;
    spec.landscape.side_m = 50_000.0 * clusters as f64;
    spec.landscape.spread_m = 300.0;
    spec.landscape.kernel.kind = KernelKind::Exp;
    spec.required_share = 0.08;
    spec.excluded_share = 0.08;
    random_instance(&spec)
}

#[test]
fn component_merge_equals_brute_force_on_tiny_instances() {
    let mut compared = 0;
    for seed in 0..40 {
        let inst = instance(seed, 3 + (seed % 7) as usize, 3);
        if inst.land.model.len() > 9 {
            continue;
        }
        let p = inst.problem();
        // With the built-in host weights a patch has more prescriptions, and a component may be
        // too large to enumerate: then there is no merge to compare.
        let Some(pieces) = decompose::pieces(&p) else {
            continue;
        };
        assert!(pieces.len() >= 2);
        let exact = brute_force(&p);
        let solved = solve(&p, Limits::new(30.0, 0.0)).unwrap();
        match exact {
            None => assert_eq!(solved.status, Status::Infeasible, "seed {seed}"),
            Some((_, best)) => {
                assert_eq!(
                    solved.status,
                    Status::Optimal,
                    "seed {seed}: gap {}",
                    solved.gap
                );
                assert!(
                    p.feasible(&solved.assignment),
                    "seed {seed}: plan infeasible"
                );
                assert!(
                    (solved.risk_after - best).abs() <= 1e-9 * best,
                    "seed {seed}: merge {} vs brute force {best}",
                    solved.risk_after
                );
                compared += 1;
            }
        }
    }
    assert!(compared >= 15, "only {compared} instances compared");
}

#[test]
fn decomposed_and_monolithic_solves_agree_on_random_instances() {
    let mut compared = 0;
    for seed in 100..120 {
        let inst = instance(seed, 24 + (seed % 12) as usize, 12);
        let p = inst.problem();
        assert!(
            decompose::pieces(&p).is_some(),
            "seed {seed}: not decomposed"
        );
        let merged = solve(&p, Limits::new(60.0, 0.0)).unwrap();
        let whole = solve(
            &p,
            Limits {
                assist: false,
                ..Limits::new(60.0, 0.0)
            },
        )
        .unwrap();
        assert_eq!(merged.status, whole.status, "seed {seed}");
        if whole.status == Status::Infeasible {
            continue;
        }
        assert_eq!(
            whole.status,
            Status::Optimal,
            "seed {seed}: monolithic gap {}",
            whole.gap
        );
        assert!(
            (merged.risk_after - whole.risk_after).abs() <= 1e-8 * whole.risk_after,
            "seed {seed}: decomposed {} vs monolithic {}",
            merged.risk_after,
            whole.risk_after
        );
        assert!(p.feasible(&merged.assignment));
        compared += 1;
    }
    assert!(compared >= 12, "only {compared} instances compared");
}

/// The frontier keeps exactly the plans no other plan beats: checked against a plain
/// all-pairs dominance filter over every enumerated plan of a four-patch component.
#[test]
fn frontier_is_the_set_of_undominated_plans() {
    let inst = instance(7, 4, 1);
    let p = inst.problem();
    let members: Vec<usize> = (0..p.len()).collect();
    let front = decompose::frontier(&p, &members);
    assert!(!front.is_empty());
    for a in &front {
        for b in &front {
            if std::ptr::eq(a, b) {
                continue;
            }
            let dominates = b.cost <= a.cost
                && (p.crew_hours.is_none() || b.hours <= a.hours)
                && b.risk <= a.risk;
            assert!(!dominates || (b.cost == a.cost && b.risk == a.risk && b.hours == a.hours));
        }
        let plan: Vec<Option<usize>> = a.plan.clone();
        assert!((p.risk(&plan) - a.risk).abs() <= 1e-15 + 1e-12 * a.risk);
    }
}
