//! The planner's own path (inventory CSV → patches → graph → model → MIP → summary.json) on the
//! public 0-1 knapsack instances P01–P08. Source: J. Burkardt, "KNAPSACK_01" test data (Florida
//! State University), as listed in the methods notes §7 with re-verified optima.
//!
//! With patches 1,000 km apart there are no links, every patch has the same stems (a_i = 1/n),
//! pressure_i = profit_i n^2 makes its own risk term pi_i a_i^2 equal its profit, and one method
//! with effectiveness 1 and cost = weight (cost_per_patch 1 x cost_factor = weight) removes it.
//! So risk_before - risk_after is the knapsack value, and the optimiser must reach the optimum.

mod common;

use common::*;

struct Instance {
    name: &'static str,
    capacity: f64,
    weights: &'static [f64],
    profits: &'static [f64],
    optimum: f64,
}

const INSTANCES: &[Instance] = &[
    Instance {
        name: "P01",
        capacity: 165.0,
        weights: &[23., 31., 29., 44., 53., 38., 63., 85., 89., 82.],
        profits: &[92., 57., 49., 68., 60., 43., 67., 84., 87., 72.],
        optimum: 309.0,
    },
    Instance {
        name: "P02",
        capacity: 26.0,
        weights: &[12., 7., 11., 8., 9.],
        profits: &[24., 13., 23., 15., 16.],
        optimum: 51.0,
    },
    Instance {
        name: "P03",
        capacity: 190.0,
        weights: &[56., 59., 80., 64., 75., 17.],
        profits: &[50., 50., 64., 46., 50., 5.],
        optimum: 150.0,
    },
    Instance {
        name: "P04",
        capacity: 50.0,
        weights: &[31., 10., 20., 19., 4., 3., 6.],
        profits: &[70., 20., 39., 37., 7., 5., 10.],
        optimum: 107.0,
    },
    Instance {
        name: "P05",
        capacity: 104.0,
        weights: &[25., 35., 45., 5., 25., 3., 2., 2.],
        profits: &[350., 400., 450., 20., 70., 8., 5., 5.],
        optimum: 900.0,
    },
    Instance {
        name: "P06",
        capacity: 170.0,
        weights: &[41., 50., 49., 59., 55., 57., 60.],
        profits: &[442., 525., 511., 593., 546., 564., 617.],
        optimum: 1735.0,
    },
    Instance {
        name: "P07",
        capacity: 750.0,
        weights: &[
            70., 73., 77., 80., 82., 87., 90., 94., 98., 106., 110., 113., 115., 118., 120.,
        ],
        profits: &[
            135., 139., 149., 150., 156., 163., 173., 184., 192., 201., 210., 214., 221., 229.,
            240.,
        ],
        optimum: 1458.0,
    },
    Instance {
        name: "P08",
        capacity: 6404180.0,
        weights: &[
            382745., 799601., 909247., 729069., 467902., 44328., 34610., 698150., 823460., 903959.,
            853665., 551830., 610856., 670702., 488960., 951111., 323046., 446298., 931161.,
            31385., 496951., 264724., 224916., 169684.,
        ],
        profits: &[
            825594., 1677009., 1676628., 1523970., 943972., 97426., 69666., 1296457., 1679693.,
            1902996., 1844992., 1049289., 1252836., 1319836., 953277., 2067538., 675367., 853655.,
            1826027., 65731., 901489., 577243., 466257., 369261.,
        ],
        optimum: 13549094.0,
    },
];

#[test]
fn knapsack_instances_reach_their_optima_through_the_planner() {
    for inst in INSTANCES {
        let dir = tempfile::tempdir().unwrap();
        let n = inst.weights.len() as f64;
        let mut csv = String::from("id,x,y,stems,pressure,cost_factor\n");
        for (k, (w, p)) in inst.weights.iter().zip(inst.profits).enumerate() {
            csv.push_str(&format!(
                "item{},{},{},10,{},{}\n",
                k + 1,
                500_000.0,
                1_000_000.0 * (k as f64 + 1.0),
                p * n * n,
                w
            ));
        }
        write(dir.path(), "items.csv", &csv);
        write(dir.path(), "remove.toml", &catalogue(1.0, 1.0, 0.0));
        let budget = inst.capacity.to_string();
        let o = run(
            dir.path(),
            &[
                "plan",
                "--inventory",
                "items.csv",
                "--crs",
                "EPSG:32618",
                "--treatments",
                "remove.toml",
                "--budget",
                &budget,
                "--gap",
                "0",
                "--out",
                "out",
                "--quiet",
            ],
        );
        assert!(o.status.success(), "{}: {}", inst.name, stderr(&o));
        let s = summary(&dir.path().join("out"));
        assert_eq!(s["n_edges"], 0, "{}: patches must not be linked", inst.name);
        let before = s["risk_before"].as_f64().unwrap();
        let after = s["risk_after"].as_f64().unwrap();
        let total: f64 = inst.profits.iter().sum();
        assert!(
            (before - total).abs() <= 1e-9 * total,
            "{}: risk_before {before} != sum of profits {total}",
            inst.name
        );
        let value = before - after;
        assert!(
            (value - inst.optimum).abs() <= 1e-6 * inst.optimum,
            "{}: planner reached {value}, optimum {}",
            inst.name,
            inst.optimum
        );
        assert_eq!(s["status"], "optimal", "{}", inst.name);
        assert!(s["spent"].as_f64().unwrap() <= inst.capacity + 1e-6);
    }
}

/// With no links and one method that removes a patch, the relaxation of src/solve/relax/ is the
/// LP relaxation of the 0-1 knapsack, whose value is Dantzig's bound (Dantzig 1957, from
/// memory): items by profit/weight, the first that does not fit taken fractionally. On P01–P08
/// the relaxation's bound on R must equal risk_before - Dantzig's bound and lie below the
/// optimum's R.
#[test]
fn relaxation_equals_dantzig_bound_on_the_public_instances() {
    use hostcut::core::kernel::Kernel;
    use hostcut::input::treatments::{Choice, MethodId};
    use hostcut::model::graph::build_graph;
    use hostcut::model::risk::RiskModel;
    use hostcut::solve::problem::Problem;
    use hostcut::solve::relax::{Stop, bound};
    for inst in INSTANCES {
        let n = inst.weights.len();
        let points: Vec<(f64, f64)> = (0..n).map(|i| (i as f64 * 1e6, 0.0)).collect();
        let graph = build_graph(
            &points,
            Kernel {
                kind: hostcut::core::kernel::KernelKind::Exp,
                alpha_m: 100.0,
            },
            0.001,
        );
        let stems = vec![1.0; n];
        let pressure: Vec<f64> = inst.profits.iter().map(|p| p * (n * n) as f64).collect();
        let model = RiskModel::new(&stems, &pressure, &graph);
        assert!(model.links.is_empty());
        let problem = Problem {
            model: &model,
            choices: inst
                .weights
                .iter()
                .map(|w| {
                    vec![Choice {
                        method: MethodId(0),
                        cost: *w,
                        hours: 0.0,
                        remaining: 0.0,
                    }]
                })
                .collect(),
            budget: inst.capacity,
            crew_hours: None,
            required: vec![false; n],
            excluded: vec![false; n],
        };
        let mut items: Vec<usize> = (0..n).collect();
        items.sort_by(|&a, &b| {
            (inst.profits[b] / inst.weights[b]).total_cmp(&(inst.profits[a] / inst.weights[a]))
        });
        let (mut left, mut dantzig) = (inst.capacity, 0.0);
        for &k in &items {
            let take = (left / inst.weights[k]).min(1.0);
            dantzig += take * inst.profits[k];
            left -= take * inst.weights[k];
            if left <= 0.0 {
                break;
            }
        }
        let before = model.risk_before();
        let start = vec![None; n];
        let stop = Stop {
            gap: 0.0,
            max_iterations: 100,
            time_limit_s: 10.0,
        };
        let b = bound(&problem, &start, before, stop).unwrap();
        let lp = before - b.value;
        assert!(
            (lp - dantzig).abs() <= 1e-9 * dantzig,
            "{}: relaxation removes {lp}, Dantzig's bound is {dantzig}",
            inst.name
        );
        assert!(
            lp >= inst.optimum - 1e-6,
            "{}: LP below the optimum",
            inst.name
        );
    }
}
