//! Issue 23's search on every landscape shape of `hostcut bench --shape`: variable fixing never
//! removes every optimal plan, the core it leaves has the same R as the whole, and the bounds of
//! the large-model path (local search, fixing, probing, the core) never lie above the optimum.
//! Oracles: brute-force enumeration (`heuristics::brute_force`, every assignment checked by
//! definition) on small instances, and HiGHS's proven optimum (transportation MIP, gap 0) on
//! medium ones. Reduced-cost fixing and probing are common practice in integer programming.

mod common;

use common::random_instance;
use hostcut::solve::fixing::{Core, fix, probe};
use hostcut::solve::heuristics::{brute_force, greedy};
use hostcut::solve::instance::{InstanceSpec, Shape};
use hostcut::solve::optimise::solve;
use hostcut::solve::problem::{Assignment, Limits, Problem, Status};
use hostcut::solve::relax::{self, Stop};

/// The shape's instance at `patches` patches, its budget from the seed (2-60 %).
fn spec(shape: Shape, patches: usize, seed: u64) -> InstanceSpec {
    let budgets = [0.02, 0.1, 0.3, 0.6];
    let mut s = shape.spec(patches, 3, budgets[(seed % 4) as usize], seed);
    // Small instances: a few spikes rather than one in 500.
    if shape == Shape::Spikes {
        s.spikes = 2;
    }
    s
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * a.abs().max(b.abs()).max(1e-300)
}

/// Limits that force the large-model path (relaxation, local search, fixing, the core).
fn large(time_s: f64) -> Limits {
    Limits {
        max_memory_gb: 0.0,
        ..Limits::new(time_s, 0.0)
    }
}

#[test]
fn fixing_and_probing_keep_an_optimal_plan_against_brute_force() {
    let (mut checked, mut removed) = (0, 0);
    for shape in Shape::ALL {
        for seed in 1..=10u64 {
            let instance = random_instance(&spec(shape, 8, seed));
            let problem = instance.problem();
            let Some((_, optimum)) = brute_force(&problem) else {
                continue;
            };
            let Some((plan, risk)) = greedy(&problem) else {
                continue;
            };
            let stop = Stop {
                gap: 0.0,
                max_iterations: 200,
                time_limit_s: 5.0,
            };
            let Some(bound) = relax::bound(&problem, &plan, risk, stop) else {
                continue;
            };
            assert!(
                bound.value <= optimum * (1.0 + 1e-9),
                "{shape:?} seed {seed}: relaxation bound above brute force"
            );
            let forced = bound.forced.clone().unwrap_or_else(|| {
                // Message passing did not run (the gap closed first): no reduced costs.
                (0..problem.len())
                    .map(|i| {
                        std::iter::once(None)
                            .filter(|_| !problem.required[i])
                            .chain(
                                (0..problem.choices[i].len())
                                    .filter(|_| !problem.excluded[i])
                                    .map(Some),
                            )
                            .map(|o| (o, f64::NEG_INFINITY))
                            .collect()
                    })
                    .collect()
            });
            let fixed = fix(&problem, &forced, &plan, risk);
            let everyone: Vec<usize> = (0..problem.len()).collect();
            let bound_of =
                |p: &Problem, start: &Assignment| relax::convex_bound(p, start, risk, 200, 5.0);
            let fixed = probe(&problem, fixed, &plan, risk, &everyone, &bound_of, &|| {
                false
            });
            removed += fixed.removed;
            checked += 1;
            let mut only = fixed.clone();
            only.removed = only.removed.max(1);
            let core = Core::build(&problem, &only).expect("a core");
            let core_problem = core.problem();
            let (core_plan, core_optimum) = brute_force(&core_problem)
                .expect("the greedy plan is kept, so the core is feasible");
            assert!(
                close(core_optimum, optimum),
                "{shape:?} seed {seed}: the core's optimum {core_optimum} is not the whole's {optimum} ({} options removed)",
                fixed.removed
            );
            let whole = core.expand(&core_plan);
            assert!(problem.feasible(&whole));
            assert!(
                close(problem.risk(&whole), core_optimum),
                "{shape:?} seed {seed}: core R differs from whole R"
            );
            let back = core.restrict(&whole).expect("an expanded plan restricts");
            assert_eq!(back, core_plan);
            assert!(fixed.removed_bound > optimum * (1.0 - 1e-9) || fixed.removed == 0);
            assert!(
                fixed.branch_bound <= optimum * (1.0 + 1e-9),
                "{shape:?} seed {seed}: branching bound {} above brute force {optimum}",
                fixed.branch_bound
            );
        }
    }
    assert!(checked >= 40, "only {checked} instances checked");
    assert!(
        removed > 0,
        "fixing removed nothing on any instance: the test would prove nothing"
    );
}

#[test]
fn large_path_bounds_never_exceed_brute_force_on_every_shape() {
    for shape in Shape::ALL {
        for seed in 1..=4u64 {
            let instance = random_instance(&spec(shape, 9, seed));
            let problem = instance.problem();
            let Some((_, optimum)) = brute_force(&problem) else {
                continue;
            };
            let s = solve(&problem, large(10.0)).expect("solve");
            if s.status == Status::Infeasible {
                continue;
            }
            assert!(problem.feasible(&s.assignment));
            assert!(close(problem.risk(&s.assignment), s.risk_after));
            assert!(
                s.risk_after >= optimum * (1.0 - 1e-9),
                "{shape:?} seed {seed}: plan below the optimum"
            );
            assert!(
                s.bound <= optimum * (1.0 + 1e-9),
                "{shape:?} seed {seed}: bound {} above the optimum {optimum} ({}, {})",
                s.bound,
                s.path,
                s.bound_from
            );
        }
    }
}

#[test]
fn large_path_bounds_never_exceed_highs_proven_optimum_on_medium_instances() {
    // Crew hours bind on the crew shape; 40 patches is beyond brute force.
    let mut compared = 0;
    for shape in Shape::ALL {
        let instance = random_instance(&spec(shape, 40, 3));
        let problem = instance.problem();
        let exact = solve(&problem, Limits::new(120.0, 0.0)).expect("HiGHS");
        if exact.status != Status::Optimal {
            continue;
        }
        compared += 1;
        let s = solve(&problem, large(3.0)).expect("large path");
        assert!(
            s.bound <= exact.risk_after * (1.0 + 1e-7),
            "{shape:?}: bound {} above HiGHS's proven optimum {} ({}, {})",
            s.bound,
            exact.risk_after,
            s.path,
            s.bound_from
        );
        assert!(s.risk_after >= exact.risk_after * (1.0 - 1e-7));
    }
    assert!(
        compared >= 3,
        "HiGHS proved only {compared} medium instances"
    );
}
