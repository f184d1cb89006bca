//! Survey planning (issue 24): p_present against hand-computed cases (the colonisation law of
//! docs/model.md and Bayes' rule for a negative visit, MacKenzie et al. 2002), the survey
//! knapsack against brute force and against CBC on an MPS file, and the command on the demo.

mod common;

use hostcut::core::deadline::Deadline;
use hostcut::core::kernel::{Kernel, KernelKind};
use hostcut::core::rng::SplitMix;
use hostcut::model::survey::{
    History, Rates, SiteModel, after_negative, colonisation, detect_in, p_present,
    years_since_negative,
};
use hostcut::solve::problem::Status;
use hostcut::solve::survey::{Knapsack, SurveyOption};

fn close(a: f64, b: f64, tol: f64) -> bool {
    (a - b).abs() <= tol
}

/// The worked example of docs/model.md ("Survey planning"), computed by hand:
/// a source of host 2 at 200 m, exponential kernel alpha 200 m, c = 0.5, iota = 0.05, a
/// candidate of host 1 and pressure 1:
/// S = e^-1 x 2 = 0.735759; q = 1 - exp(-0.5 x 1 x (0.735759 + 0.05)) = 0.324890.
#[test]
fn colonisation_probability_matches_the_worked_example() {
    let kernel = Kernel {
        kind: KernelKind::Exp,
        alpha_m: 200.0,
    };
    let rates = Rates {
        colonisation: 0.5,
        introduction: 0.05,
    };
    let sites = [
        SiteModel {
            x: 0.0,
            y: 0.0,
            host: 2.0,
            pressure: 1.0,
            known: true,
        },
        SiteModel {
            x: 200.0,
            y: 0.0,
            host: 1.0,
            pressure: 1.0,
            known: false,
        },
    ];
    let q = colonisation(&sites, kernel, rates);
    let s = (-1.0f64).exp() * 2.0;
    let hand = 1.0 - (-0.5 * (s + 0.05f64)).exp();
    assert!(close(q[1], hand, 1e-12), "{} vs {hand}", q[1]);
    assert!(close(q[1], 0.324890, 5e-7), "{}", q[1]);
    // The known source itself feels no pressure from itself: only introductions.
    assert!(close(q[0], 1.0 - (-0.5f64 * 2.0 * 0.05).exp(), 1e-12));
}

/// Worked example of docs/model.md, by hand: q = 0.1 a year, three years of history, one
/// negative visit (d = 0.4) in the second year.
/// year 1: p = 0.1; year 2: p = 1 - 0.9^2 = 0.19, after the visit
/// 0.19 x 0.6 / (0.19 x 0.6 + 0.81) = 0.114 / 0.924 = 0.1233766; year 3: 1 - 0.8766234 x 0.9 =
/// 0.2110390.
#[test]
fn p_present_grows_and_a_negative_visit_lowers_it_as_bayes_says() {
    let h = History {
        negatives: vec![vec![], vec![0.4], vec![]],
    };
    let p = p_present(0.1, 3, &h);
    assert!(close(p, 0.2110390, 1e-7), "{p}");
    assert_eq!(years_since_negative(3, &h), Some(1));
    // Never surveyed: 1 - 0.9^3.
    assert!(close(p_present(0.1, 3, &History::default()), 0.271, 1e-12));
    assert_eq!(years_since_negative(3, &History::default()), None);
    // k negative visits (MacKenzie et al. 2002): p (1-d)^k / (p (1-d)^k + 1 - p).
    let (p0, d) = (0.3, 0.5);
    let mut p = p0;
    for _ in 0..3 {
        p = after_negative(p, d);
    }
    assert!(close(p, 0.3 * 0.125 / (0.3 * 0.125 + 0.7), 1e-15));
    // Absence is never certain; a perfect method (d = 1) makes it so.
    assert!(after_negative(0.9, 0.99) > 0.0);
    assert_eq!(after_negative(0.9, 1.0), 0.0);
    // Two visits of 0.4: 1 - 0.6^2.
    assert!(close(detect_in(2, 0.4), 0.64, 1e-15));
}

fn random_knapsack(rng: &mut SplitMix, sites: usize, max_options: usize) -> Knapsack {
    let options: Vec<Vec<SurveyOption>> = (0..sites)
        .map(|_| {
            let k = 1 + (rng.next_u64() % max_options as u64) as usize;
            (0..k)
                .map(|_| SurveyOption {
                    value: rng.range(0.0, 1.0),
                    hours: rng.range(0.5, 6.0),
                })
                .collect()
        })
        .collect();
    let total: f64 = options.iter().flatten().map(|o| o.hours).sum();
    Knapsack {
        options,
        hours: rng.range(0.1, 0.6) * total,
    }
}

fn brute_force(k: &Knapsack) -> f64 {
    fn go(k: &Knapsack, i: usize, hours: f64, value: f64, best: &mut f64) {
        if i == k.options.len() {
            *best = best.max(value);
            return;
        }
        go(k, i + 1, hours, value, best);
        for o in &k.options[i] {
            if hours + o.hours <= k.hours + 1e-9 {
                go(k, i + 1, hours + o.hours, value + o.value, best);
            }
        }
    }
    let mut best = 0.0;
    go(k, 0, 0.0, 0.0, &mut best);
    best
}

/// The exact choice equals the brute-force optimum (every combination enumerated) on small
/// random instances, is proven optimal with a zero gap, and respects the hours.
#[test]
fn knapsack_equals_brute_force_on_small_random_instances() {
    let mut rng = SplitMix::new(24);
    for case in 0..40 {
        let k = random_knapsack(&mut rng, 2 + case % 6, 4);
        let got = k.solve(&Deadline::after(30.0)).unwrap();
        let best = brute_force(&k);
        assert_eq!(got.status, Status::Optimal, "case {case}");
        assert!(
            close(got.value, best, 1e-6),
            "case {case}: {} vs {best}",
            got.value
        );
        assert!(got.hours <= k.hours + 1e-6, "case {case}");
        assert!(
            got.bound >= got.value - 1e-9 && got.gap <= 1e-6,
            "case {case}"
        );
        let (v, h) = k.evaluate(&got.choice);
        assert!(close(v, got.value, 1e-12) && close(h, got.hours, 1e-12));
    }
}

/// A hand-computed case: three sites, hours 5.
/// site A: 1 visit 2 h value 0.30, 2 visits 4 h value 0.48; site B: 1 visit 3 h value 0.25;
/// site C: 1 visit 1 h value 0.10. Feasible sets within 5 h: A1+B (5 h, 0.55), A2+C (5 h, 0.58),
/// A1+C (3 h, 0.40), B+C (4 h, 0.35): the best is A twice and C once, 0.58.
#[test]
fn knapsack_hand_computed_example() {
    let o = |value, hours| SurveyOption { value, hours };
    let k = Knapsack {
        options: vec![
            vec![o(0.30, 2.0), o(0.48, 4.0)],
            vec![o(0.25, 3.0)],
            vec![o(0.10, 1.0)],
        ],
        hours: 5.0,
    };
    let got = k.solve(&Deadline::after(30.0)).unwrap();
    assert_eq!(got.choice, vec![Some(1), None, Some(0)]);
    assert!(close(got.value, 0.58, 1e-9));
}

/// A medium instance written to MPS by HiGHS and solved by CBC (COIN-OR Branch and Cut, the
/// `cbc` binary): the same optimum. The MPS minimises -value, so CBC's objective is -optimum.
#[test]
fn knapsack_equals_cbc_on_a_medium_instance() {
    let mut rng = SplitMix::new(2009);
    let k = random_knapsack(&mut rng, 60, 9);
    let got = k.solve(&Deadline::after(60.0)).unwrap();
    assert_eq!(got.status, Status::Optimal);
    let dir = std::env::temp_dir().join(format!("hostcut-survey-cbc-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let mps = dir.join("survey.mps");
    k.write_mps(&mps).unwrap();
    let out = std::process::Command::new("cbc")
        .arg(&mps)
        .args(["ratio", "0", "allow", "0", "solve", "quit"])
        .output()
        .expect("run cbc (apt-get install coinor-cbc)");
    let text = String::from_utf8_lossy(&out.stdout);
    let line = text
        .lines()
        .find(|l| l.starts_with("Objective value:"))
        .unwrap_or_else(|| panic!("no objective in CBC's output:\n{text}"));
    let cbc: f64 = line
        .trim_start_matches("Objective value:")
        .trim()
        .parse()
        .unwrap();
    assert!(text.contains("Optimal solution found"), "{text}");
    assert!(
        close(-cbc, got.value, 1e-6),
        "CBC {} vs HiGHS {}",
        -cbc,
        got.value
    );
    std::fs::remove_dir_all(&dir).ok();
}

/// Dropping a site's dominated options (no fewer hours and no more finds than another) keeps
/// the optimum: the knapsack of the undominated options has the brute-force optimum of all.
#[test]
fn dropping_dominated_options_keeps_the_optimum() {
    let mut rng = SplitMix::new(7);
    for case in 0..30 {
        let k = random_knapsack(&mut rng, 2 + case % 5, 6);
        let reduced = Knapsack {
            options: k
                .options
                .iter()
                .map(|o| {
                    hostcut::solve::survey::undominated(o)
                        .into_iter()
                        .map(|i| o[i])
                        .collect()
                })
                .collect(),
            hours: k.hours,
        };
        assert!(
            close(brute_force(&reduced), brute_force(&k), 1e-12),
            "case {case}"
        );
    }
}

/// The exact choice is never worse than the greedy by expected finds per hour (the rule a
/// person would use: best ratio first, one option per site, while the hours last), and doubling
/// the hours never lowers it.
#[test]
fn never_worse_than_greedy_and_more_hours_never_find_less() {
    let mut rng = SplitMix::new(1974);
    for case in 0..15 {
        let k = random_knapsack(&mut rng, 20, 5);
        let got = k.solve(&Deadline::after(30.0)).unwrap();
        let mut all: Vec<(usize, SurveyOption)> = k
            .options
            .iter()
            .enumerate()
            .flat_map(|(i, o)| o.iter().map(move |x| (i, *x)))
            .collect();
        all.sort_by(|a, b| (b.1.value / b.1.hours).total_cmp(&(a.1.value / a.1.hours)));
        let (mut used, mut hours, mut greedy) = (vec![false; k.options.len()], 0.0, 0.0);
        for (i, o) in all {
            if !used[i] && hours + o.hours <= k.hours {
                used[i] = true;
                hours += o.hours;
                greedy += o.value;
            }
        }
        assert!(got.value >= greedy - 1e-9, "case {case}");
        let double = Knapsack {
            options: k.options.clone(),
            hours: 2.0 * k.hours,
        };
        assert!(double.solve(&Deadline::after(30.0)).unwrap().value >= got.value - 1e-9);
    }
}

/// The command on the demo county, with its survey history and two sites of the user's (a rail
/// yard and a warehouse, as GeoJSON points): every number a crew reads is recomputed from
/// survey_sites.csv (expected finds = p_present x (1 - (1 - d)^visits), MacKenzie et al. 2002
/// detection over repeat visits) and matches summary.json; the curve never falls as hours grow;
/// the caution is on every crew output.
#[test]
fn survey_on_the_demo_recomputes_from_its_outputs() {
    use common::{Table, run, stderr, stdout};
    let dir = tempfile::tempdir().unwrap();
    let o = run(dir.path(), &["demo", "--out", "demo", "--quiet"]);
    assert!(o.status.success(), "{}", stderr(&o));
    std::fs::write(
        dir.path().join("sites.geojson"),
        r#"{"type":"FeatureCollection","features":[
{"type":"Feature","properties":{"id":"rail-yard"},"geometry":{"type":"Point","coordinates":[-74.9575,40.4035]}},
{"type":"Feature","properties":{"id":"warehouse"},"geometry":{"type":"Point","coordinates":[-74.9700,40.3950]}}]}"#,
    )
    .unwrap();
    let o = run(
        dir.path(),
        &[
            "survey",
            "--plan",
            "demo",
            "--hours",
            "40",
            "--surveys",
            "demo/inputs/surveys.csv",
            "--sites",
            "sites.geojson",
            "--depot",
            "501250,4471750",
            "--out",
            "s",
        ],
    );
    let text = stdout(&o);
    assert!(o.status.success(), "{}\n{text}", stderr(&o));
    assert!(text.contains("2 of your sites"), "{text}");
    assert!(
        text.contains("proven optimal") && text.contains("gap"),
        "{text}"
    );
    assert!(text.contains("state department of agriculture"), "{text}");
    let s = dir.path().join("s");
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(s.join("summary.json")).unwrap()).unwrap();
    assert_eq!(summary["status"], "optimal");
    // The yard given with `--depot` is the one every drive starts from.
    assert_eq!(summary["depot"][0].as_f64(), Some(501250.0));
    assert_eq!(summary["depot"][1].as_f64(), Some(4471750.0));
    let table = Table::read(&s.join("survey_sites.csv"));
    assert!(!table.is_empty());
    let (mut finds, mut hours) = (0.0, 0.0);
    for row in &table.rows {
        let (p, d, v) = (
            row.num("p_present"),
            row.num("p_detect_visit"),
            row.num("visits"),
        );
        let e = p * (1.0 - (1.0 - d).powf(v));
        assert!(
            (e - row.num("expected_finds")).abs() < 2e-4,
            "{}",
            row.get("site_id")
        );
        assert!(
            row.get("caution")
                .contains("state department of agriculture")
        );
        assert!(!row.get("why").is_empty());
        finds += row.num("expected_finds");
        hours += row.num("hours");
    }
    let n = table.len() as f64;
    let reported = summary["expected_finds"].as_f64().unwrap();
    assert!(
        (finds - reported).abs() < 1e-4 * n + 1e-9,
        "{finds} vs {reported}"
    );
    assert!((hours - summary["hours_used"].as_f64().unwrap()).abs() < 0.01 * n);
    assert!(summary["hours_used"].as_f64().unwrap() <= 40.0 + 1e-9);
    let bound = summary["bound"].as_f64().unwrap();
    assert!(bound >= reported - 1e-9 && summary["gap"].as_f64().unwrap() <= 1e-6);
    let curve = Table::read(&s.join("survey_curve.csv"));
    for w in curve.rows.windows(2) {
        assert!(w[1].num("objective") >= w[0].num("objective") - 1e-9);
        assert!(w[1].num("survey_hours") > w[0].num("survey_hours"));
    }
    let geojson = std::fs::read_to_string(s.join("survey.geojson")).unwrap();
    assert_eq!(geojson.matches("\"Feature\"").count(), table.len());
    assert!(
        std::fs::read_to_string(s.join("cautions.txt"))
            .unwrap()
            .contains("state department of agriculture")
    );

    // Inputs a person can get wrong are refused (exit 2), never guessed.
    for bad in [["--hours", "0"], ["--weight", "stems"]] {
        let mut args = vec!["survey", "--plan", "demo", "--out", "bad"];
        if bad[0] == "--hours" {
            args.extend(bad);
        } else {
            args.extend(["--hours", "10"]);
            args.extend(bad);
        }
        let o = run(dir.path(), &args);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", stderr(&o));
    }
}
