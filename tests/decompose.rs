//! The exact component decomposition (src/decompose.rs) against brute-force enumeration on
//! tiny instances and against the monolithic transportation MIP on larger random ones: patch
//! clusters far enough apart share no link, so the merge must find the same optimum.

use hostcut::core::kernel::Kernel;
use hostcut::core::kernel::KernelKind;
use hostcut::input::treatments::{Choice, MethodId};
use hostcut::model::graph::build_graph;
use hostcut::model::risk::RiskModel;
use hostcut::solve::decompose;
use hostcut::solve::heuristics::brute_force;
use hostcut::solve::optimise::solve;
use hostcut::solve::problem::{Limits, Problem, Status};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

struct Instance {
    model: RiskModel,
    choices: Vec<Vec<Choice>>,
    budget: f64,
    crew_hours: Option<f64>,
    required: Vec<bool>,
    excluded: Vec<bool>,
}

/// `clusters` groups of 1-4 patches, 50 km apart, kernel cut off well inside that.
fn instance(seed: u64, clusters: usize) -> Instance {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut points = Vec::new();
    for c in 0..clusters {
        let size = rng.gen_range(1..=4);
        for _ in 0..size {
            points.push((
                c as f64 * 50_000.0 + rng.gen_range(0.0..800.0),
                rng.gen_range(0.0..800.0),
            ));
        }
    }
    let n = points.len();
    let stems: Vec<f64> = (0..n).map(|_| rng.gen_range(10.0..500.0)).collect();
    let pressure: Vec<f64> = (0..n).map(|_| rng.gen_range(1.0..5.0)).collect();
    let graph = build_graph(
        &points,
        Kernel {
            kind: KernelKind::Exp,
            alpha_m: rng.gen_range(150.0..500.0),
        },
        0.001,
    );
    let model = RiskModel::new(&stems, &pressure, &graph);
    let methods: Vec<(f64, f64, f64, f64)> = (0..3)
        .map(|_| {
            (
                rng.gen_range(0.3..1.0),
                rng.gen_range(50.0..300.0),
                rng.gen_range(0.5..5.0),
                rng.gen_range(0.005..0.05),
            )
        })
        .collect();
    let choices: Vec<Vec<Choice>> = (0..n)
        .map(|i| {
            let allowed: Vec<usize> = if rng.gen_bool(0.1) {
                vec![]
            } else if rng.gen_bool(0.2) {
                vec![2]
            } else {
                vec![0, 1, 2]
            };
            let factor = rng.gen_range(0.8..1.5);
            allowed
                .into_iter()
                .map(|m| {
                    let (e, per_patch, per_stem, hours) = methods[m];
                    Choice {
                        method: MethodId(m as u16),
                        cost: (per_patch + per_stem * stems[i]) * factor,
                        hours: hours * stems[i],
                        remaining: 1.0 - e,
                    }
                })
                .collect()
        })
        .collect();
    let total: f64 = choices
        .iter()
        .map(|c: &Vec<Choice>| c.iter().map(|c| c.cost).fold(0.0, f64::max))
        .sum();
    let budget = total * rng.gen_range(0.15..0.6);
    let crew_hours = rng
        .gen_bool(0.4)
        .then(|| stems.iter().sum::<f64>() * rng.gen_range(0.005..0.03));
    let mut required = vec![false; n];
    let mut excluded = vec![false; n];
    for i in 0..n {
        if !choices[i].is_empty() && rng.gen_bool(0.08) {
            required[i] = true;
        } else if rng.gen_bool(0.08) {
            excluded[i] = true;
        }
    }
    Instance {
        model,
        choices,
        budget,
        crew_hours,
        required,
        excluded,
    }
}

fn problem(inst: &Instance) -> Problem<'_> {
    Problem {
        model: &inst.model,
        choices: inst.choices.clone(),
        budget: inst.budget,
        crew_hours: inst.crew_hours,
        required: inst.required.clone(),
        excluded: inst.excluded.clone(),
    }
}

#[test]
fn component_merge_equals_brute_force_on_tiny_instances() {
    let mut compared = 0;
    for seed in 0..40 {
        let inst = instance(seed, 3);
        if inst.model.len() > 9 {
            continue;
        }
        let p = problem(&inst);
        let pieces = decompose::pieces(&p).expect("several small components");
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
        let inst = instance(seed, 12);
        let p = problem(&inst);
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
    let inst = instance(7, 1);
    let p = problem(&inst);
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
