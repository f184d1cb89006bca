//! Today's-practice baselines: each follows its rule exactly on hand-made instances, stays
//! feasible, and never beats the exact optimum (property test over the tests' random instances,
//! tests/common, against brute-force enumeration).

mod common;

use common::{random_instance, small_spec};
use hostcut::core::kernel::Kernel;
use hostcut::core::kernel::KernelKind;
use hostcut::core::site::{PatchId, Site};
use hostcut::input::gis::Crs;
use hostcut::input::patches::{Patch, Patches};
use hostcut::input::treatments::{Choice, MethodId};
use hostcut::model::graph::build_graph;
use hostcut::model::risk::RiskModel;
use hostcut::planning::baselines::{self, fill_in_order};
use hostcut::solve::heuristics::brute_force;
use hostcut::solve::optimise::solve;
use hostcut::solve::problem::{Limits, Problem};

fn patches(points: &[(f64, f64)], stems: &[f64]) -> Patches {
    let items = points
        .iter()
        .zip(stems)
        .enumerate()
        .map(|(i, (&(x, y), &s))| Patch {
            id: PatchId(i as u32),
            label: format!("P{i}"),
            x,
            y,
            stems: s,
            area_ha: None,
            outline: None,
            site: Site::default(),
            pressure_override: None,
            suitability: None,
            by_class: None,
        })
        .collect();
    patches_of(items)
}

fn patches_of(items: Vec<Patch>) -> Patches {
    Patches {
        crs: Crs::parse("EPSG:32618", "test").unwrap(),
        items,
        dropped_slivers: 0,
        skipped: Default::default(),
        notes: Vec::new(),
        crs_conversion: None,
        input_linear_units: None,
        water_checked: false,
        source: "inventory",
        runs: Vec::new(),
        frame: None,
    }
}

/// Two methods: a cheap weak one and a dear strong one (the "most effective").
fn two_methods(stems: f64) -> Vec<Choice> {
    vec![
        Choice::single(MethodId(0), 10.0 + stems, 0.01 * stems, 0.4),
        Choice::single(MethodId(1), 10.0 + 3.0 * stems, 0.02 * stems, 0.1),
    ]
}

#[test]
fn biggest_first_walks_the_list_and_skips_what_does_not_fit() {
    let stems = [100.0, 400.0, 50.0, 300.0];
    let p = patches(&[(0.0, 0.0), (5e4, 0.0), (1e5, 0.0), (1.5e5, 0.0)], &stems);
    let graph = build_graph(
        &p.items.iter().map(|q| (q.x, q.y)).collect::<Vec<_>>(),
        Kernel {
            kind: KernelKind::Exp,
            alpha_m: 200.0,
        },
        0.001,
    );
    let model = RiskModel::new(&stems, &[1.0; 4], &graph);
    // Most effective costs: 310, 1210, 160, 910. Budget 1400: take 400-stem (1210), skip 300 (910)
    // and 100 (310) as too dear, then take the 50-stem patch (160): 1370.
    let problem = Problem {
        model: &model,
        choices: stems.iter().map(|&s| two_methods(s)).collect(),
        budget: 1400.0,
        crew_hours: None,
        required: vec![false; 4],
        excluded: vec![false; 4],
    };
    let order = baselines::biggest_first_order(&p);
    assert_eq!(order, vec![1, 3, 0, 2]);
    let a = fill_in_order(&problem, &order).unwrap();
    assert_eq!(a, vec![None, Some(1), Some(1), None]);
    assert!(problem.feasible(&a));
    // With the 400-stem patch excluded: 300 (910) then 100 (310) then 50 (160) = 1380.
    let mut excluded = problem.clone();
    excluded.excluded[1] = true;
    assert_eq!(
        fill_in_order(&excluded, &order).unwrap(),
        vec![Some(1), None, Some(1), Some(1)]
    );
    // Crew hours bind: 0.02 x stems per patch; 8.5 hours lets only the 400-stem one (8 h) in.
    let mut hours = problem.clone();
    hours.crew_hours = Some(8.5);
    assert_eq!(
        fill_in_order(&hours, &order).unwrap(),
        vec![None, Some(1), None, None]
    );
    // A required patch comes first with its most effective method (310), then the list:
    // 400-stem (1210) no longer fits, 300-stem (910) does, 50-stem (160) does: 1380.
    let mut required = problem.clone();
    required.required[0] = true;
    assert_eq!(
        fill_in_order(&required, &order).unwrap(),
        vec![Some(1), None, Some(1), Some(1)]
    );
}

#[test]
fn nearest_and_corridor_orders() {
    let p = patches(
        &[(0.0, 0.0), (1000.0, 0.0), (300.0, 0.0), (5000.0, 0.0)],
        &[10.0, 20.0, 30.0, 40.0],
    );
    assert_eq!(
        baselines::nearest_first_order(&p, (900.0, 0.0)),
        vec![1, 2, 0, 3]
    );
    let near = vec![
        vec![],
        vec!["rail".to_string()],
        vec![],
        vec!["road".to_string()],
    ];
    assert_eq!(baselines::corridor_first_order(&p, &near), vec![3, 1, 2, 0]);
    let depot = baselines::default_depot(&p, &[true, true, false, false]);
    assert_eq!(depot, (500.0, 0.0));
}

#[test]
fn the_optimum_is_never_worse_than_any_baseline() {
    let mut checked = 0;
    for seed in 0..30u64 {
        let mut spec = small_spec(seed, 5 + (seed % 4) as usize);
        spec.methods = 2;
        spec.required_share = 0.0;
        spec.excluded_share = 0.0;
        let inst = random_instance(&spec);
        let n = inst.len();
        let p = patches_of(inst.land.patches.clone());
        let problem = inst.problem();
        let near: Vec<Vec<String>> = (0..n)
            .map(|i| {
                if i % 3 == 0 {
                    vec!["rail".into()]
                } else {
                    vec![]
                }
            })
            .collect();
        let (_, best) = brute_force(&problem).unwrap();
        let solved = solve(&problem, Limits::new(30.0, 0.0)).unwrap();
        assert!((solved.risk_after - best).abs() <= 1e-9 * best);
        for b in baselines::all(&problem, &p, &near, (600.0, 600.0), None) {
            let a = b.assignment.as_ref().unwrap();
            assert!(problem.feasible(a), "seed {seed}: {} infeasible", b.name);
            assert!((problem.risk(a) - b.risk_after).abs() < 1e-15);
            assert!(
                solved.risk_after <= b.risk_after * (1.0 + 1e-12),
                "seed {seed}: {} beat the optimum",
                b.name
            );
            checked += 1;
        }
    }
    assert_eq!(checked, 120);
}
