//! Calibration: the likelihood against brute force over hidden states, the mean-field filter
//! against the exact likelihood, recovery of known parameters from simulated surveys, and the
//! command on the demo.

mod common;

use hostcut::core::kernel::KernelKind;
use hostcut::core::progress::Bars;
use hostcut::model::calibrate::{
    self, Geometry, Observations, Theta, exact_log_likelihood, fit_family, log_likelihood,
};
use hostcut::model::simulate::{self, Landscape, Params, SplitMix};

fn random_geometry(n: usize, side: f64, seed: u64) -> (Geometry, Vec<(f64, f64)>) {
    let mut g = SplitMix::new(seed);
    let pts: Vec<(f64, f64)> = (0..n).map(|_| (g.unit() * side, g.unit() * side)).collect();
    let sizes: Vec<f64> = (0..n).map(|_| 0.4 + 1.6 * g.unit()).collect();
    let total: f64 = sizes.iter().sum();
    let mut pairs = Vec::new();
    for i in 0..n {
        for j in i + 1..n {
            pairs.push((i, j, (pts[i].0 - pts[j].0).hypot(pts[i].1 - pts[j].1)));
        }
    }
    (
        Geometry {
            share: sizes.iter().map(|s| s / total).collect(),
            pairs,
            epsilon: 1e-3,
            extinction_exponent: 1.0,
        },
        pts,
    )
}

/// Sum over every assignment of the hidden (unsurveyed) patch-years of the path probability:
/// the likelihood by definition.
fn brute_force(
    g: &Geometry,
    obs: &Observations,
    family: KernelKind,
    theta: &Theta,
    pressure: &[f64],
) -> f64 {
    let n = g.share.len();
    let years = obs.states.len();
    let hidden: Vec<(usize, usize)> = (0..years)
        .flat_map(|t| (0..n).map(move |i| (t, i)))
        .filter(|&(t, i)| obs.states[t][i].is_none())
        .collect();
    let first: Vec<bool> = obs.states[0].iter().flatten().copied().collect();
    let q0 = if first.is_empty() {
        0.5
    } else {
        (first.iter().filter(|s| **s).count() as f64 / first.len() as f64).clamp(0.01, 0.99)
    };
    let area: Vec<f64> = g.share.iter().map(|a| n as f64 * a).collect();
    let k = |i: usize, j: usize| {
        let d = g
            .pairs
            .iter()
            .find(|p| (p.0 == i.min(j)) && (p.1 == i.max(j)))
            .unwrap()
            .2;
        let v = calibrate::kernel(family, d, theta.alpha_m);
        if v >= g.epsilon { v } else { 0.0 }
    };
    let mut total = 0.0;
    for mask in 0..(1u64 << hidden.len()) {
        let mut s: Vec<Vec<bool>> = obs
            .states
            .iter()
            .map(|y| y.iter().map(|o| o.unwrap_or(false)).collect())
            .collect();
        for (b, &(t, i)) in hidden.iter().enumerate() {
            s[t][i] = (mask >> b) & 1 == 1;
        }
        let mut p = 1.0;
        for &(t, i) in &hidden {
            if t == 0 {
                p *= if s[0][i] { q0 } else { 1.0 - q0 };
            }
        }
        for t in 1..years {
            for i in 0..n {
                let conn: f64 = (0..n)
                    .filter(|&j| j != i && s[t - 1][j])
                    .map(|j| k(i, j) * area[j])
                    .sum();
                let pc = 1.0
                    - (-theta.colonisation * area[i] * (conn + theta.introduction * pressure[i]))
                        .exp();
                let pe = (theta.extinction / area[i]).min(1.0);
                let occ = if s[t - 1][i] { 1.0 - pe } else { pc };
                p *= if s[t][i] { occ } else { 1.0 - occ };
            }
        }
        total += p;
    }
    total.ln()
}

fn theta() -> Theta {
    Theta {
        alpha_m: 300.0,
        colonisation: 0.6,
        extinction: 0.3,
        introduction: 0.08,
    }
}

#[test]
fn exact_likelihood_equals_brute_force_over_hidden_states() {
    for seed in 0..6 {
        let (g, _) = random_geometry(3, 800.0, seed);
        let mut r = SplitMix::new(100 + seed);
        // 4 years, about a third of patch-years unsurveyed.
        let states: Vec<Vec<Option<bool>>> = (0..4)
            .map(|_| {
                (0..3)
                    .map(|_| (r.unit() > 0.35).then(|| r.unit() < 0.5))
                    .collect()
            })
            .collect();
        let obs = Observations {
            first_year: 2020,
            states,
        };
        let pressure = [1.0, 2.0, 1.0];
        for family in [KernelKind::Exp, KernelKind::Cauchy] {
            let exact = exact_log_likelihood(&g, &obs, family, &theta(), &pressure);
            let brute = brute_force(&g, &obs, family, &theta(), &pressure);
            assert!(
                (exact - brute).abs() < 1e-10 * brute.abs().max(1.0),
                "seed {seed}: forward {exact} vs brute force {brute}"
            );
        }
    }
}

#[test]
fn mean_field_filter_is_exact_with_complete_surveys_and_its_bias_with_gaps_is_small() {
    let (g, _) = random_geometry(6, 900.0, 3);
    let mut r = SplitMix::new(9);
    let complete: Vec<Vec<Option<bool>>> = (0..6)
        .map(|_| (0..6).map(|_| Some(r.unit() < 0.5)).collect())
        .collect();
    let pressure = [1.0; 6];
    let obs = Observations {
        first_year: 2020,
        states: complete.clone(),
    };
    let a = log_likelihood(&g, &obs, KernelKind::Exp, &theta(), &pressure);
    let b = exact_log_likelihood(&g, &obs, KernelKind::Exp, &theta(), &pressure);
    assert!((a - b).abs() < 1e-9, "complete data: {a} vs {b}");
    // Drop a quarter of the later patch-years: the approximation's bias, measured.
    let mut gaps = complete;
    for (t, year) in gaps.iter_mut().enumerate().skip(1) {
        for (i, s) in year.iter_mut().enumerate() {
            if (t * 7 + i * 3) % 4 == 0 {
                *s = None;
            }
        }
    }
    let obs = Observations {
        first_year: 2020,
        states: gaps,
    };
    let a = log_likelihood(&g, &obs, KernelKind::Exp, &theta(), &pressure);
    let b = exact_log_likelihood(&g, &obs, KernelKind::Exp, &theta(), &pressure);
    eprintln!(
        "with gaps: mean-field {a:.4} vs exact {b:.4} (bias {:.4})",
        a - b
    );
    assert!((a - b).abs() < 0.05 * b.abs(), "bias {}", a - b);
}

/// Surveys simulated by the tool's own simulator (every patch every year) with known
/// parameters, fitted back: how often the 95 % profile interval for alpha covers the truth, and
/// whether it narrows with more years.
#[test]
fn known_parameters_are_recovered_and_intervals_tighten_with_more_years() {
    let truth = Params {
        extinction: 0.25,
        colonisation: 0.5,
        introduction: 0.05,
        ..Params::default()
    };
    let alpha_true = 250.0;
    let grid = calibrate::alpha_grid(40.0, 2500.0, 13);
    let mut covered = 0;
    let mut tried = 0;
    let (mut width_short, mut width_long) = (0.0, 0.0);
    for rep in 0..12u64 {
        let (g, _) = random_geometry(40, 3000.0, 1000 + rep);
        let links: Vec<(usize, usize, f64)> = g
            .pairs
            .iter()
            .map(|&(i, j, d)| (i, j, (-d / alpha_true).exp()))
            .filter(|l| l.2 >= 1e-3)
            .collect();
        let mut init = SplitMix::new(rep);
        let land = Landscape {
            share: g.share.clone(),
            pressure: vec![1.0; 40],
            links,
            long_links: Vec::new(),
            initial: (0..40).map(|_| init.unit() < 0.3).collect(),
        };
        let hist = simulate::history(&land, &truth, 14, 77, rep, &[1.0; 40]);
        for (years, width) in [(5usize, &mut width_short), (15, &mut width_long)] {
            let obs = Observations {
                first_year: 2010,
                states: hist[..years]
                    .iter()
                    .map(|y| y.iter().map(|&o| Some(o)).collect())
                    .collect(),
            };
            let fit = fit_family(&g, &obs, KernelKind::Exp, &grid, &|_| vec![1.0; 40]);
            let (lo, hi) = (
                fit.alpha_low.unwrap_or(grid[0]),
                fit.alpha_high.unwrap_or(*grid.last().unwrap()),
            );
            *width += (hi / lo).ln();
            if years == 15 {
                tried += 1;
                if lo <= alpha_true && alpha_true <= hi {
                    covered += 1;
                }
            }
        }
    }
    eprintln!(
        "alpha 95% intervals covered the truth in {covered}/{tried}; mean ln-width 5 years {:.2}, 15 years {:.2}",
        width_short / tried as f64,
        width_long / tried as f64
    );
    assert!(covered * 4 >= tried * 3, "coverage {covered}/{tried}");
    assert!(width_long < width_short, "intervals narrow with more years");
}

use common::*;

fn demo(dir: &std::path::Path) {
    let o = run(dir, &["demo", "--out", "demo", "--quiet"]);
    assert!(o.status.success(), "{}", stderr(&o));
}

/// The demo's surveys were simulated with an exp kernel at alpha = 200 m (src/demo.rs): the fit
/// should favour exp and its interval should hold 200 m; the result then drives plan, ensemble
/// and simulate.
#[test]
fn demo_surveys_calibrate_and_feed_plan_ensemble_and_simulate() {
    let dir = tempfile::tempdir().unwrap();
    demo(dir.path());
    let o = run(
        dir.path(),
        &[
            "calibrate",
            "--plan",
            "demo",
            "--surveys",
            "demo/inputs/surveys.csv",
            "--out",
            "cal",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    assert!(text.contains("favour the exp kernel"), "{text}");
    let cal: toml::Value =
        toml::from_str(&std::fs::read_to_string(dir.path().join("cal/calibration.toml")).unwrap())
            .unwrap();
    let c = &cal["calibration"];
    let (lo, est, hi) = (
        c["alpha_low_m"].as_float().unwrap(),
        c["alpha_m"].as_float().unwrap(),
        c["alpha_high_m"].as_float().unwrap(),
    );
    assert!(
        lo <= 200.0 && 200.0 <= hi,
        "interval {lo}-{hi} misses the 200 m truth"
    );
    assert!(lo < est && est < hi);
    assert!(c["aic_difference"].as_float().unwrap() > 0.0);
    let rows = Table::read(&dir.path().join("cal/calibration.csv")).rows;
    assert_eq!(rows.len(), 12, "6 rows per family");
    let unassigned = Table::read(&dir.path().join("cal/unassigned_surveys.csv")).rows;
    assert_eq!(
        unassigned.len(),
        4,
        "the four visits outside the county are reported"
    );
    let svg = std::fs::read_to_string(dir.path().join("cal/likelihood.svg")).unwrap();
    roxmltree::Document::parse(&svg).unwrap();

    let scenario = "demo/scenario.resolved.toml";
    let o = run(
        dir.path(),
        &[
            "plan",
            "--scenario",
            scenario,
            "--calibration",
            "cal/calibration.toml",
            "--out",
            "p",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let s = summary(&dir.path().join("p"));
    assert!((s["alpha_m"].as_f64().unwrap() - est).abs() < 1e-9);
    assert_eq!(s["kernel"], "exp");
    let o = run(
        dir.path(),
        &[
            "plan",
            "--scenario",
            scenario,
            "--ensemble",
            "cal/calibration.toml",
            "--out",
            "e",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let s = summary(&dir.path().join("e"));
    assert_eq!(s["ensemble"]["scenarios"].as_array().unwrap().len(), 3);
    let o = run(
        dir.path(),
        &[
            "simulate", "--plan", "p", "--runs", "20", "--years", "3", "--out", "sim", "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let sim: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("sim/sim.json")).unwrap())
            .unwrap();
    assert_eq!(
        sim["params"]["colonisation"].as_f64().unwrap(),
        c["colonisation"].as_float().unwrap(),
        "simulate takes the fitted rates from the plan's calibration"
    );
}

#[test]
fn surveys_are_assigned_inside_nearest_or_reported() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "stands.csv",
        "id,x,y,stems\nA,500000,4480000,300\nB,501000,4480000,200\n",
    );
    let mut csv = String::from("x,y,year,result\n");
    csv.push_str("500050,4480000,2020,negative\n"); // 50 m from A: nearest within 100 m
    csv.push_str("500500,4480000,2020,positive\n"); // 500 m from both: too far
    csv.push_str("501000,4480020,2020,positive\n"); // B
    write(dir.path(), "s.csv", &csv);
    let o = run(
        dir.path(),
        &[
            "calibrate",
            "--inventory",
            "stands.csv",
            "--crs",
            "EPSG:32618",
            "--surveys",
            "s.csv",
            "--out",
            "cal",
        ],
    );
    // One year of surveys: nothing to fit, refused with how much more would help.
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("transitions") && stderr(&o).contains("more patch-years"),
        "{}",
        stderr(&o)
    );
    // The assignment itself (library): inside a raster patch, nearest within the radius, too far.
    use hostcut::model::calibrate::surveys::{Placement, Survey, assign, observations};
    let sv = |x: f64, y: f64, year: i32, positive: bool| Survey {
        line: 0,
        x,
        y,
        year,
        positive,
        date: String::new(),
        source: String::new(),
    };
    let scenario = hostcut::core::scenario::parse_scenario(
        "[host]\ninventory = \"stands.csv\"\ncrs = \"EPSG:32618\"\n",
        "test",
        dir.path(),
    )
    .unwrap();
    let prepared = hostcut::planning::prepare::prepare(&scenario, &|_| {}, Bars::Hidden).unwrap();
    let surveys = [
        sv(500050.0, 4480000.0, 2020, false),
        sv(500500.0, 4480000.0, 2020, true),
        sv(501000.0, 4480020.0, 2020, true),
        sv(501010.0, 4480000.0, 2020, false),
        sv(500000.0, 4480000.0, 2021, true),
    ];
    let placed = assign(&surveys, &prepared.patches, 100.0);
    assert_eq!(placed[0], Placement::Nearest(0, 50.0));
    assert!(matches!(placed[1], Placement::TooFar(Some(_), d) if (d - 500.0).abs() < 1e-9));
    assert!(matches!(placed[2], Placement::Nearest(1, _)));
    let obs = observations(&surveys, &placed, 2).unwrap();
    assert_eq!(obs.first_year, 2020);
    // B: one positive and one negative visit in 2020 -> occupied.
    assert_eq!(obs.states[0], vec![Some(false), Some(true)]);
    assert_eq!(obs.states[1], vec![Some(true), None]);
    // Raster patches have outlines: a survey inside one is `Inside`.
    demo(dir.path());
    let prepared = hostcut::planning::prepare::prepare(
        &hostcut::core::scenario::read_scenario(&dir.path().join("demo/scenario.resolved.toml"))
            .unwrap(),
        &|_| {},
        Bars::Hidden,
    )
    .unwrap();
    let p = &prepared.patches.items[0];
    let cell = p.outline.as_ref().unwrap().0[0].exterior().0[0];
    let inside = sv(cell.x + 5.0, cell.y - 5.0, 2020, true);
    let got = assign(std::slice::from_ref(&inside), &prepared.patches, 0.0);
    assert!(matches!(got[0], Placement::Inside(_)), "{got:?}");
}

#[test]
fn surveys_that_cannot_identify_alpha_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    demo(dir.path());
    // The demo's visits with every result negative: nothing spreads, so no scale is favoured.
    let text = std::fs::read_to_string(dir.path().join("demo/inputs/surveys.csv")).unwrap();
    write(dir.path(), "neg.csv", &text.replace("positive", "negative"));
    let o = run(
        dir.path(),
        &[
            "calibrate",
            "--plan",
            "demo",
            "--surveys",
            "neg.csv",
            "--out",
            "cal",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", stdout(&o));
    assert!(stderr(&o).contains("cannot pin down"), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("more surveyed patch-years"),
        "{}",
        stderr(&o)
    );
    assert!(!dir.path().join("cal").exists());
    write(dir.path(), "bad.csv", "x,y,year,result\n1,2,2020,maybe\n");
    let o = run(
        dir.path(),
        &[
            "calibrate",
            "--plan",
            "demo",
            "--surveys",
            "bad.csv",
            "--out",
            "cal",
        ],
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("line 2"), "{}", stderr(&o));
}
