//! Multi-season programmes: one season equals the single-season plan, the MIP equals brute
//! force on tiny multi-season instances, follow-ups are funded whenever the money allows, and
//! the season-by-season (myopic) plan is never better over the horizon.

use hostcut::input::treatments::choices_for;
use hostcut::planning::program::{self, Horizon, ProgramProblem};
use hostcut::solve::optimise::solve;
use hostcut::solve::problem::{Assignment, Limits, Problem, Status};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// The tests' random instance (tests/common): `n` patches of the bench's landscape with the
/// built-in catalogue; the programme tests take its patches, model and catalogue.
fn instance(seed: u64, n: usize) -> Instance {
    random_instance(&small_spec(seed, n))
}

fn programme<'a>(
    inst: &'a Instance,
    horizon: &Horizon,
    budgets: Vec<f64>,
    methods: usize,
) -> ProgramProblem<'a> {
    let courses = inst
        .land
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
        model: &inst.land.model,
        courses,
        untreated: horizon.untreated(),
        weights: horizon.weights(),
        budgets,
        hours: None,
        required: vec![false; inst.land.patches.len()],
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
            .land
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
            model: &inst.land.model,
            choices: choices.clone(),
            budget,
            crew_hours: None,
            required: vec![false; 7],
            excluded: vec![false; 7],
        };
        let plan = solve(&plan_problem, exact()).unwrap();
        let prog = programme(&inst, &horizon, vec![budget], 10);
        let got = program::solve(&prog, exact(), None, 0.0).unwrap();
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
        let got = program::solve(&prog, exact(), None, 0.0).unwrap();
        assert!(
            (got.objective - brute).abs() <= 1e-9 * brute,
            "seed {seed}: MIP {} vs brute force {brute}",
            got.objective
        );
        assert!(got.bound <= brute * (1.0 + 1e-9));
        let floor = program::season_floor(&prog, exact()).unwrap();
        assert!(
            floor <= brute * (1.0 + 1e-9),
            "seed {seed}: floor {floor} above the optimum {brute}"
        );
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
        let got = program::solve(&prog, exact(), None, 0.0).unwrap();
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
    let got = program::solve(&prog, exact(), None, 0.0).unwrap();
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

mod common;
use common::*;

const STANDS: &str = "id,x,y,stems,access,herbicide\nA,500000,4480000,300,open,allowed\nB,500150,4480050,180,permission,allowed\nC,500400,4480000,220,open,restricted\nD,500600,4480200,90,open,allowed\nE,500900,4480100,260,open,allowed\nF,501300,4480400,140,open,allowed\n";

fn base(extra: &[&str]) -> Vec<String> {
    let mut v: Vec<String> = [
        "--inventory",
        "stands.csv",
        "--crs",
        "EPSG:32618",
        "--gap",
        "0",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    v.extend(extra.iter().map(|s| s.to_string()));
    v
}

fn go(dir: &std::path::Path, cmd: &str, extra: &[&str]) -> std::process::Output {
    let mut args = vec![cmd.to_string()];
    args.extend(base(extra));
    let refs: Vec<&str> = args.iter().map(|s| s.as_str()).collect();
    run(dir, &refs)
}

#[test]
fn programme_folders_feed_orders_and_contracts() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "stands.csv", STANDS);
    let o = go(
        dir.path(),
        "program",
        &[
            "--seasons",
            "3",
            "--budgets",
            "2500,1200,1200",
            "--out",
            "prog",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stdout(&o).contains("whole horizon") && stdout(&o).contains("label is the law"));
    let s = summary(&dir.path().join("prog"));
    let seasons = s["seasons"].as_array().unwrap();
    assert_eq!(seasons.len(), 3);
    for (t, season) in seasons.iter().enumerate() {
        assert_eq!(season["season"], t + 1);
        assert!(season["spent"].as_f64().unwrap() <= season["budget"].as_f64().unwrap() + 1e-6);
        assert!(
            season["risk_after"].as_f64().unwrap() <= season["risk_no_action"].as_f64().unwrap()
        );
    }
    assert!(
        s["objective"].as_f64().unwrap() <= s["objective_myopic"].as_f64().unwrap() * (1.0 + 1e-9)
    );
    assert_eq!(s["status"], "optimal");
    let rows = Table::read(&dir.path().join("prog/program.csv")).rows;
    assert!(
        rows.iter().any(|r| r.get("action") == "new")
            && rows.iter().any(|r| r.get("action") == "follow-up"),
        "{rows:?}"
    );
    // Every season's folder is a plan folder: its costs are program.csv's for that season.
    for t in 1..=3 {
        let folder = dir.path().join(format!("prog/season_{t}"));
        let plan = Table::read(&folder.join("plan.csv")).rows;
        let from_program: f64 = rows
            .iter()
            .filter(|r| r.get("season") == t.to_string() && r.get("action") != "none")
            .map(|r| r.num("cost"))
            .sum();
        let in_plan: f64 = plan.iter().map(|r| r.num("cost")).sum();
        assert!((from_program - in_plan).abs() < 0.011, "season {t}");
        let ord = format!("ord{t}");
        let o = run(
            dir.path(),
            &[
                "orders",
                "--plan",
                &format!("prog/season_{t}"),
                "--out",
                &ord,
                "--start-date",
                "2027-07-01",
                "--quiet",
            ],
        );
        assert!(o.status.success(), "season {t}: {}", stderr(&o));
        let o = run(
            dir.path(),
            &[
                "contract",
                "--plan",
                &format!("prog/season_{t}"),
                "--out",
                &format!("con{t}"),
            ],
        );
        assert!(o.status.success(), "season {t}: {}", stderr(&o));
    }
    let svg = std::fs::read_to_string(dir.path().join("prog/program.svg")).unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    for id in ["programme", "myopic", "none"] {
        assert!(
            doc.descendants().any(|n| n.attribute("id") == Some(id)),
            "{id}"
        );
    }
}

#[test]
fn a_one_season_programme_from_the_command_line_is_the_plan() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "stands.csv", STANDS);
    let o = go(
        dir.path(),
        "program",
        &["--seasons", "1", "--budgets", "2500", "--out", "prog"],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let said =
        String::from_utf8_lossy(&o.stdout).contains("the programme is the season-by-season plan");
    // A programme keeps the one-season r per season (it models regrowth itself), so the plan
    // it equals is the one-season objective's, not the default horizon objective's.
    let o = go(
        dir.path(),
        "plan",
        &["--budget", "2500", "--horizon-years", "1", "--out", "plan"],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let set = |path: &str| {
        let mut v: Vec<(String, String)> = Table::read(&dir.path().join(path))
            .rows
            .into_iter()
            .map(|r| (r.get("patch_id").to_string(), r.get("method").to_string()))
            .collect();
        v.sort();
        v
    };
    assert_eq!(set("prog/season_1/plan.csv"), set("plan/plan.csv"));
    let p = summary(&dir.path().join("plan"));
    let g = summary(&dir.path().join("prog"));
    let (a, b) = (
        p["risk_after"].as_f64().unwrap(),
        g["seasons"][0]["risk_after"].as_f64().unwrap(),
    );
    assert!((a - b).abs() <= 1e-12 * a.max(1e-300), "{a} vs {b}");
    // Issue 22: a programme equal to the season-by-season plan says so (one season: both
    // are the plan, so they agree whenever the optimum is unique, as here).
    let same = g["same_as_season_by_season"]
        .as_bool()
        .expect("same_as_season_by_season");
    assert_eq!(same, said);
    assert!(
        same,
        "one season: the programme is the season-by-season plan"
    );
}

#[test]
fn trap_trees_only_when_asked_and_with_their_sink_effect() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "stands.csv", STANDS);
    write(
        dir.path(),
        "cat.toml",
        r#"
[[method]]
id = "foliar"
label = "Foliar"
effectiveness = 0.5
cost_per_stem = 1.0
cost_per_patch = 50.0
hours_per_stem = 0.01
herbicide = true
months = [7, 8]
cautions = ["LABEL"]

[[method]]
id = "trap_tree"
label = "Trap trees"
effectiveness = 0.5
sink_kill = 0.6
cost_per_stem = 1.0
cost_per_patch = 50.0
hours_per_stem = 0.01
herbicide = true
months = [7, 8]
cautions = ["LABEL"]
"#,
    );
    let o = go(
        dir.path(),
        "plan",
        &[
            "--treatments",
            "cat.toml",
            "--budget",
            "100000",
            "--out",
            "no",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let o = go(
        dir.path(),
        "plan",
        &[
            "--treatments",
            "cat.toml",
            "--budget",
            "100000",
            "--trap-trees",
            "--out",
            "yes",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let methods = |p: &str| -> Vec<String> {
        Table::read(&dir.path().join(p))
            .rows
            .into_iter()
            .map(|r| r.get("method").to_string())
            .collect()
    };
    assert!(methods("no/plan.csv").iter().all(|m| m == "foliar"));
    assert!(methods("yes/plan.csv").iter().all(|m| m == "trap_tree"));
    // Everything treated: R after is R before x r^2 with r = (1 - e)(1 - sink kill) (the model
    // is quadratic in r, so with one r everywhere R scales by r^2), r averaged over the default
    // 10-year horizon at 10 % regrowth: the mean of min(1, r 1.1^(t-1)), t = 1..10
    // (docs/model.md, "The horizon term").
    let (no, yes) = (
        summary(&dir.path().join("no")),
        summary(&dir.path().join("yes")),
    );
    let before = no["risk_before"].as_f64().unwrap();
    let horizon = |r: f64| (0..10).map(|t| (r * 1.1f64.powi(t)).min(1.0)).sum::<f64>() / 10.0;
    let r_no: f64 = horizon(0.5);
    let r_yes: f64 = horizon(0.5 * 0.4);
    assert!((r_no - 0.771794405).abs() < 1e-9, "{r_no}");
    // Denied-access patches would break this; the fixture has none.
    assert!((no["risk_after"].as_f64().unwrap() - before * r_no * r_no).abs() < 1e-12);
    assert!((yes["risk_after"].as_f64().unwrap() - before * r_yes * r_yes).abs() < 1e-12);
}

#[test]
fn bad_programmes_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "stands.csv", STANDS);
    for (extra, message) in [
        (
            vec!["--seasons", "3", "--budgets", "100,200"],
            "2 values for 3 seasons",
        ),
        (
            vec!["--seasons", "0", "--budgets", "100"],
            "between 1 and 10",
        ),
        (
            vec!["--seasons", "2", "--budgets", "100", "--discount", "0"],
            "--discount",
        ),
        (vec!["--seasons", "2", "--budgets=-5"], "is not 0 or more"),
    ] {
        let mut e = extra.clone();
        e.extend(["--out", "bad"]);
        let o = go(dir.path(), "program", &e);
        assert_eq!(o.status.code(), Some(2), "{extra:?}: {}", stderr(&o));
        assert!(stderr(&o).contains(message), "{extra:?}: {}", stderr(&o));
        assert!(!dir.path().join("bad").exists());
    }
}
