//! Calibration: the likelihood against brute force over hidden states, the mean-field filter
//! against the exact likelihood, and recovery of known parameters from simulated surveys.

mod common;

use hostcut::calibrate::{
    self, Geometry, Observations, Theta, exact_log_likelihood, fit_family, log_likelihood,
};
use hostcut::cli::KernelKind;
use hostcut::simulate::{self, Landscape, Params, SplitMix};

fn random_geometry(n: usize, side: f64, seed: u64) -> (Geometry, Vec<(f64, f64)>) {
    let mut g = SplitMix::new(seed);
    let pts: Vec<(f64, f64)> = (0..n)
        .map(|_| (g.uniform() * side, g.uniform() * side))
        .collect();
    let sizes: Vec<f64> = (0..n).map(|_| 0.4 + 1.6 * g.uniform()).collect();
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
                    .map(|_| (r.uniform() > 0.35).then(|| r.uniform() < 0.5))
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
        .map(|_| (0..6).map(|_| Some(r.uniform() < 0.5)).collect())
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
            initial: (0..40).map(|_| init.uniform() < 0.3).collect(),
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
