//! Multi-season programmes: one season equals the single-season plan, the MIP equals brute
//! force on tiny multi-season instances, follow-ups are funded whenever the money allows, and
//! the season-by-season (myopic) plan is never better over the horizon.

use hostcut::cli::KernelKind;
use hostcut::graph::{Kernel, build_graph};
use hostcut::model::RiskModel;
use hostcut::optimise::{Assignment, Limits, Problem, Status, solve};
use hostcut::patches::{Access, Herbicide, Patch, PatchId, Site};
use hostcut::program::{self, Horizon, ProgramProblem};
use hostcut::treatments::{Catalogue, choices_for};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

struct Instance {
    patches: Vec<Patch>,
    model: RiskModel,
    catalogue: Catalogue,
}

fn instance(seed: u64, n: usize) -> Instance {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let (catalogue, _) = Catalogue::load(None).unwrap();
    let points: Vec<(f64, f64)> = (0..n)
        .map(|_| (rng.gen_range(0.0..1200.0), rng.gen_range(0.0..1200.0)))
        .collect();
    let patches: Vec<Patch> = (0..n)
        .map(|i| Patch {
            id: PatchId(i as u32),
            label: format!("T{i}"),
            x: points[i].0,
            y: points[i].1,
            stems: rng.gen_range(20.0..400.0),
            area_ha: None,
            outline: None,
            site: Site {
                parcel: String::new(),
                access: if rng.gen_bool(0.1) {
                    Access::Denied
                } else {
                    Access::Open
                },
                herbicide: if rng.gen_bool(0.2) {
                    Herbicide::Prohibited
                } else {
                    Herbicide::Allowed
                },
                cost_factor: rng.gen_range(0.8..1.4),
                contact: String::new(),
            },
            pressure_override: None,
            suitability: None,
        })
        .collect();
    let stems: Vec<f64> = patches.iter().map(|p| p.stems).collect();
    let pressure: Vec<f64> = (0..n).map(|_| 1.0 + rng.gen_range(0.0..3.0)).collect();
    let graph = build_graph(
        &points,
        Kernel {
            kind: KernelKind::Exp,
            alpha_m: rng.gen_range(150.0..500.0),
        },
        0.001,
    );
    let model = RiskModel::new(&stems, &pressure, &graph);
    Instance {
        patches,
        model,
        catalogue,
    }
}

fn programme<'a>(
    inst: &'a Instance,
    horizon: &Horizon,
    budgets: Vec<f64>,
    methods: usize,
) -> ProgramProblem<'a> {
    let courses = inst
        .patches
        .iter()
        .map(|p| {
            let choices: Vec<_> = choices_for(&inst.catalogue, p, false)
                .into_iter()
                .take(methods)
                .collect();
            program::courses(&inst.catalogue, p, &choices, horizon)
        })
        .collect();
    ProgramProblem {
        model: &inst.model,
        courses,
        untreated: horizon.untreated(),
        weights: horizon.weights(),
        budgets,
        hours: None,
        required: vec![false; inst.patches.len()],
    }
}

fn exact() -> Limits {
    Limits::new(60.0, 0.0)
}

fn brute_force(p: &ProgramProblem) -> f64 {
    fn walk(p: &ProgramProblem, i: usize, a: &mut Assignment, best: &mut f64) {
        if i == p.len() {
            if p.feasible(a) {
                *best = best.min(p.objective(a));
            }
            return;
        }
        a[i] = None;
        walk(p, i + 1, a, best);
        for k in 0..p.courses[i].len() {
            a[i] = Some(k);
            walk(p, i + 1, a, best);
        }
        a[i] = None;
    }
    let mut best = f64::INFINITY;
    walk(p, 0, &mut vec![None; p.len()], &mut best);
    best
}

#[test]
fn one_season_programme_is_the_plan() {
    for seed in 0..15 {
        let inst = instance(seed, 7);
        let horizon = Horizon {
            seasons: 1,
            growth: 0.1,
            regrowth: 0.5,
            discount: 0.9,
        };
        let choices: Vec<_> = inst
            .patches
            .iter()
            .map(|p| choices_for(&inst.catalogue, p, false))
            .collect();
        let total: f64 = choices
            .iter()
            .map(|c| c.iter().map(|c| c.cost).fold(0.0, f64::max))
            .sum();
        let budget = total * 0.4;
        let plan_problem = Problem {
            model: &inst.model,
            choices: choices.clone(),
            budget,
            crew_hours: None,
            required: vec![false; 7],
            excluded: vec![false; 7],
        };
        let plan = solve(&plan_problem, exact()).unwrap();
        let prog = programme(&inst, &horizon, vec![budget], 10);
        let got = program::solve(&prog, exact(), None).unwrap();
        assert!(
            (got.objective - plan.risk_after).abs() <= 1e-9 * plan.risk_after,
            "seed {seed}: programme {} vs plan {}",
            got.objective,
            plan.risk_after
        );
        // Same patches and methods when the optimum is unique (it is on these instances).
        for i in 0..7 {
            let prog_method = got.assignment[i].map(|k| prog.courses[i][k].method);
            let plan_method = plan.assignment[i].map(|o| choices[i][o].method.0 as usize);
            assert_eq!(prog_method, plan_method, "seed {seed}, patch {i}");
        }
    }
}

#[test]
fn multi_season_mip_equals_brute_force() {
    for seed in 0..12 {
        let inst = instance(100 + seed, 4);
        let seasons = 2 + (seed as usize % 2);
        let horizon = Horizon {
            seasons,
            growth: 0.15,
            regrowth: 0.5,
            discount: 0.9,
        };
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let budgets: Vec<f64> = (0..seasons).map(|_| rng.gen_range(300.0..2500.0)).collect();
        let prog = programme(&inst, &horizon, budgets, 2);
        let brute = brute_force(&prog);
        let got = program::solve(&prog, exact(), None).unwrap();
        assert!(
            (got.objective - brute).abs() <= 1e-9 * brute,
            "seed {seed}: MIP {} vs brute force {brute}",
            got.objective
        );
        assert!(got.bound <= brute * (1.0 + 1e-9));
        let myopic = program::myopic(&prog, exact()).unwrap();
        assert!(prog.feasible(&myopic));
        assert!(
            got.objective <= prog.objective(&myopic) * (1.0 + 1e-9),
            "seed {seed}: the myopic plan beats the programme"
        );
    }
}

#[test]
fn follow_ups_are_funded_whenever_the_budget_allows() {
    for seed in 0..10 {
        let inst = instance(200 + seed, 8);
        let horizon = Horizon {
            seasons: 3,
            growth: 0.1,
            regrowth: 0.6,
            discount: 1.0,
        };
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let budgets: Vec<f64> = (0..3).map(|_| rng.gen_range(800.0..4000.0)).collect();
        let prog = programme(&inst, &horizon, budgets.clone(), 2);
        let got = program::solve(&prog, exact(), None).unwrap();
        assert_ne!(got.status, Status::Infeasible);
        let spent = prog.spent(&got.assignment);
        for i in 0..prog.len() {
            let Some(k) = got.assignment[i] else {
                continue;
            };
            let c = &prog.courses[i][k];
            let next = c.start + c.follow_ups + 1;
            if next >= 3 {
                continue;
            }
            // The same course with one more follow-up: it must not fit that season's budget.
            let longer = prog.courses[i]
                .iter()
                .find(|d| {
                    d.start == c.start && d.method == c.method && d.follow_ups == c.follow_ups + 1
                })
                .unwrap();
            let extra = longer.cost[next];
            assert!(
                spent[next] + extra > budgets[next] - 1e-6,
                "seed {seed}: patch {i}'s follow-up in season {} ({extra:.2}) fits the {:.2} left",
                next + 1,
                budgets[next] - spent[next]
            );
        }
    }
    // With money to spare every course runs to the end of the horizon.
    let inst = instance(300, 6);
    let horizon = Horizon {
        seasons: 3,
        growth: 0.1,
        regrowth: 0.6,
        discount: 1.0,
    };
    let prog = programme(&inst, &horizon, vec![1e9; 3], 4);
    let got = program::solve(&prog, exact(), None).unwrap();
    for i in 0..prog.len() {
        if let Some(k) = got.assignment[i] {
            let c = &prog.courses[i][k];
            assert_eq!(
                c.start + c.follow_ups,
                2,
                "patch {i} stops its follow-ups early"
            );
        }
    }
}
