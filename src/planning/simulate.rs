//! A plan checked against the stochastic spread simulation: the plan, no action, the greedy
//! rule, densest-first and random feasible plans run through the patch-occupancy model
//! ([`crate::model::simulate`]) with common random numbers, and what the runs say.
//!
//! # Units
//! Occupied host as a share of all host (0–1) in the traces, in percent in the summary.

use serde::Serialize;

use crate::core::error::{Error, Result};
use crate::core::kernel::Kernel;
use crate::core::printer::Printer;
use crate::model::graph;
use crate::model::simulate::{self, Landscape, Params, Trace, Treatment};
use crate::planning::baselines;
use crate::planning::prepare::Prepared;
use crate::planning::proxy;
use crate::solve::optimise;
use crate::solve::problem::{Assignment, Limits, Problem};

/// Every strategy the simulation can run: id, label and why it may match or beat the plan.
/// `corridor` runs only when some patch is near a corridor (otherwise it is `biggest`).
pub const STRATEGIES: [(&str, &str, &str); 7] = [
    ("none", "no treatment", ""),
    ("plan", "the plan", ""),
    (
        "greedy",
        "greedy benefit-per-cost",
        "the greedy rule ranks patches by the same risk reduction per cost the plan maximises, so it differs from the plan only where the budget binds",
    ),
    (
        "density",
        "densest stands first",
        "removing the densest host first takes out the stands that, once occupied, produce the most insects as host regrows, which the one-season risk R does not weigh",
    ),
    (
        "biggest",
        "biggest stands first",
        "removing the most stems first leaves the least host for the insect to occupy in later years, while R weighs host by its connections and pressure this season",
    ),
    (
        "corridor",
        "stands along the corridors first",
        "treating along the corridors removes the host where introductions keep arriving year after year",
    ),
    (
        "random",
        "random feasible plans (mean)",
        "random plans spread treatment over the landscape; matching them means R's ranking buys little on this landscape",
    ),
];

/// The label of strategy `id`.
pub fn label(id: &str) -> &str {
    STRATEGIES.iter().find(|s| s.0 == id).map_or(id, |s| s.1)
}

fn reason(id: &str) -> &str {
    STRATEGIES.iter().find(|s| s.0 == id).map_or("", |s| s.2)
}

/// How long and how often to simulate.
#[derive(Debug, Clone, Copy)]
pub struct Runs {
    pub years: u32,
    pub runs: u32,
    pub seed: u64,
    /// Worker threads.
    pub jobs: usize,
    /// Random feasible plans added to the plan and the rules for the proxy check (0: none).
    pub proxy_plans: usize,
}

#[derive(Serialize)]
pub struct Difference {
    pub mean: f64,
    pub ci95_low: f64,
    pub ci95_high: f64,
}

#[derive(Serialize)]
pub struct StrategyJson {
    pub name: &'static str,
    pub patches_treated: Option<usize>,
    pub cost: Option<f64>,
    pub risk_after: Option<f64>,
    pub final_occupied_host_pct_mean: f64,
    pub mean_occupied_host_pct_over_years: f64,
}

/// One strategy against the plan, paired over runs on common random numbers: strategy minus
/// plan in occupied host, percentage points of all host (negative: the strategy leaves less
/// host occupied than the plan). Intervals: mean ± 1.96 sd / sqrt(n) of the paired
/// differences (normal approximation for a paired mean, common practice; see
/// [`simulate::mean_ci`]).
#[derive(Serialize)]
pub struct VersusPlan {
    pub strategy: &'static str,
    pub final_diff_pct: f64,
    pub final_ci95: [f64; 2],
    pub mean_diff_pct: f64,
    pub mean_ci95: [f64; 2],
    pub per_year: Vec<YearDiff>,
}

#[derive(Serialize)]
pub struct YearDiff {
    pub year: usize,
    pub diff_pct: f64,
    pub ci95: [f64; 2],
}

/// sim.json.
#[derive(Serialize)]
pub struct SimJson {
    pub years: u32,
    pub runs: u32,
    pub seed: u64,
    pub params: Params,
    pub budget: f64,
    pub initially_occupied_patches: usize,
    pub strategies: Vec<StrategyJson>,
    /// none minus plan, percentage points of all host, final year (paired over runs).
    pub plan_advantage_final_pct: Difference,
    /// none minus plan, mean over years 1..=years of occupied host, percentage points.
    pub plan_advantage_mean_pct: Difference,
    /// The untreated landscape's mean-field equilibrium occupied host (% of host), for
    /// comparison with the simulated long run.
    pub equilibrium_occupied_host_pct: f64,
    pub lambda_m_before: f64,
    /// Every strategy other than no action and the plan, against the plan.
    pub versus_plan: Vec<VersusPlan>,
    /// One plain sentence when some strategy does as well as or better than the plan at some
    /// horizon, with why; absent when the plan is better everywhere.
    pub verdict: Option<String>,
    /// Whether plans with a lower R also do better in the simulation ([`proxy`]).
    pub proxy_check: Option<proxy::ProxyCheck>,
}

/// The verdict sentence of [`SimJson::verdict`], or `None` when every strategy is worse than
/// the plan in every year (interval entirely above zero). `horizon_years`: the objective's
/// horizon term (1: the one-season objective), named in the closing sentence.
pub fn verdict(versus: &[VersusPlan], horizon_years: u32) -> Option<String> {
    let mut parts = Vec::new();
    let mut reasons = Vec::new();
    // Whether some strategy other than the plan itself ties or beats it (then the closing
    // sentence on what R leaves out applies).
    let mut differs = false;
    for v in versus {
        let label = label(v.strategy);
        // Same runs in every year on common random numbers: the strategy chose the plan.
        if v.per_year
            .iter()
            .all(|y| y.diff_pct == 0.0 && y.ci95 == [0.0, 0.0])
        {
            parts.push(format!(
                "{label} chose the same treatments as the plan, so it does exactly as well"
            ));
            if !reason(v.strategy).is_empty() {
                reasons.push(reason(v.strategy).to_string());
            }
            continue;
        }
        let better: Vec<usize> = v
            .per_year
            .iter()
            .filter(|y| y.ci95[1] < 0.0)
            .map(|y| y.year)
            .collect();
        let tied: Vec<usize> = v
            .per_year
            .iter()
            .filter(|y| y.ci95[0] <= 0.0 && y.ci95[1] >= 0.0)
            .map(|y| y.year)
            .collect();
        if let (Some(first), Some(last)) = (better.first(), better.last()) {
            differs = true;
            parts.push(if first == last {
                format!("{label} leaves less host occupied than the plan in year {first}")
            } else {
                format!(
                    "{label} leaves less host occupied than the plan in years {first} to {last} ({} of them)",
                    better.len()
                )
            });
        } else if !tied.is_empty() {
            differs = true;
            parts.push(format!(
                "{label} cannot be told from the plan in {} of the years",
                tied.len()
            ));
        } else {
            continue;
        }
        if !reason(v.strategy).is_empty() {
            reasons.push(reason(v.strategy).to_string());
        }
    }
    if parts.is_empty() {
        return None;
    }
    if !differs {
        return Some(format!(
            "{}. Why: {}.",
            parts.join("; "),
            reasons.join("; ")
        ));
    }
    let objective = if horizon_years > 1 {
        format!(
            "The plan minimises the static risk R with each treatment's host averaged over {horizon_years} years of regrowth, but treats once and does not model recolonisation"
        )
    } else {
        "The plan minimises the static risk R after one season of treatment".to_string()
    };
    Some(format!(
        "{}. Why: {}. {objective}, and a one-season treatment fades as host regrows and the insect recolonises; compare with a multi-season programme (`hostcut program`).",
        parts.join("; "),
        reasons.join("; ")
    ))
}

/// The first year in which `v`'s strategy leaves less host occupied than the plan (interval
/// entirely below zero), for the chart's marker.
pub fn first_better_year(v: &VersusPlan) -> Option<usize> {
    v.per_year.iter().find(|y| y.ci95[1] < 0.0).map(|y| y.year)
}

/// The runs of every strategy ([`STRATEGIES`], same order) and their summary.
pub struct Simulation {
    /// The plans of the proxy check, scored by R and by the simulation.
    pub proxy_plans: Vec<proxy::Scored>,
    /// The strategies run, in the order of `traces`: ids of [`STRATEGIES`].
    pub strategies: Vec<&'static str>,
    pub traces: Vec<Trace>,
    pub summary: SimJson,
}

/// The plan to simulate when no plan folder is given: solved at the problem's budget.
pub fn solve_plan(problem: &Problem, limits: Limits, printer: Printer) -> Result<Assignment> {
    printer.progress("solving the plan");
    let solved = optimise::solve(problem, limits)?;
    if solved.status == crate::solve::problem::Status::Infeasible {
        return Err(Error::input(
            "the required patches do not fit the budget and hours: there is no plan to simulate",
        ));
    }
    Ok(solved.assignment)
}

/// Patches by stems per hectare (stems where the area is unknown), densest first.
fn density_order(prepared: &Prepared) -> Vec<usize> {
    let items = &prepared.patches.items;
    let density = |i: usize| {
        let p = &items[i];
        match p.area_ha {
            Some(a) if a > 0.0 => p.stems / a,
            _ => p.stems,
        }
    };
    let mut order: Vec<usize> = (0..items.len()).collect();
    order.sort_by(|&a, &b| density(b).total_cmp(&density(a)).then(a.cmp(&b)));
    order
}

/// A random feasible plan for run `run`: eligible patches in a random order (Fisher–Yates on
/// the run's own stream), each treated with its most effective method while it fits.
fn random_plan(prepared: &Prepared, problem: &Problem, seed: u64, run: u64) -> Vec<f64> {
    let mut order: Vec<usize> = (0..problem.len()).collect();
    let mut g = simulate::stream(seed, run, 0, 1);
    for k in (1..order.len()).rev() {
        let j = (g.unit() * (k + 1) as f64) as usize;
        order.swap(k, j.min(k));
    }
    let a = baselines::fill_in_order(problem, &order).unwrap_or_else(|| vec![None; problem.len()]);
    prepared.treated_host(&a)
}

/// The `k`-th random feasible plan of the proxy check, fixed over runs (its own stream,
/// apart from the runs' streams).
fn random_fixed_plan(problem: &Problem, seed: u64, k: u64) -> Option<Assignment> {
    let mut order: Vec<usize> = (0..problem.len()).collect();
    let mut g = simulate::stream(seed, u64::MAX - k, 0, 2);
    for i in (1..order.len()).rev() {
        let j = (g.unit() * (i + 1) as f64) as usize;
        order.swap(i, j.min(i));
    }
    baselines::fill_in_order(problem, &order)
}

/// The `k`-th perturbed optimum of the proxy check: the plan with one to three of its
/// (not required) treated patches dropped and the money refilled with other patches in a random
/// order, each with its most effective choice while it fits.
fn perturbed_plan(problem: &Problem, plan: &Assignment, seed: u64, k: u64) -> Option<Assignment> {
    let mut g = simulate::stream(seed, u64::MAX - 10_000 - k, 0, 3);
    let mut shuffle = |v: &mut Vec<usize>| {
        for i in (1..v.len()).rev() {
            let j = (g.unit() * (i + 1) as f64) as usize;
            v.swap(i, j.min(i));
        }
    };
    let mut treated: Vec<usize> = (0..plan.len())
        .filter(|&i| plan[i].is_some() && !problem.required[i])
        .collect();
    if treated.is_empty() {
        return None;
    }
    shuffle(&mut treated);
    let drop = (1 + k as usize % 3).min(treated.len());
    let dropped = &treated[..drop];
    let mut a = plan.clone();
    for &i in dropped {
        a[i] = None;
    }
    let mut order: Vec<usize> = (0..a.len()).collect();
    shuffle(&mut order);
    let (mut spent, mut hours) = (problem.cost(&a), problem.hours(&a));
    let tol = |limit: f64| 1e-9 * limit.abs().max(1.0);
    for i in order {
        if a[i].is_some() || problem.excluded[i] || dropped.contains(&i) {
            continue;
        }
        let Some(o) = problem.most_effective(i) else {
            continue;
        };
        let c = problem.choices[i][o];
        let fits_money = spent + c.cost <= problem.budget + tol(problem.budget);
        let fits_hours = problem
            .crew_hours
            .is_none_or(|h| hours + c.hours <= h + tol(h));
        if fits_money && fits_hours {
            a[i] = Some(o);
            spent += c.cost;
            hours += c.hours;
        }
    }
    Some(a)
}

pub fn pct(v: f64) -> f64 {
    v * 100.0
}

/// Simulate `plan` and the other strategies on the prepared landscape.
pub fn simulate_plan(
    prepared: &Prepared,
    problem: &Problem,
    plan: &Assignment,
    params: Params,
    runs: Runs,
    printer: Printer,
) -> Result<Simulation> {
    let budget = problem.budget;
    let greedy = crate::solve::heuristics::greedy(problem).map(|g| g.0);
    let density = baselines::fill_in_order(problem, &density_order(prepared));
    let biggest =
        baselines::fill_in_order(problem, &baselines::biggest_first_order(&prepared.patches));
    let corridors = &prepared.pressure.corridors;
    let with_corridors = corridors.iter().any(|c| !c.is_empty());
    let corridor = with_corridors
        .then(|| {
            baselines::fill_in_order(
                problem,
                &baselines::corridor_first_order(&prepared.patches, corridors),
            )
        })
        .flatten();
    let none: Assignment = vec![None; problem.len()];

    let model = &prepared.model;
    let long_links = match params.long_distance {
        Some(ld) => {
            let points: Vec<(f64, f64)> =
                prepared.patches.items.iter().map(|p| (p.x, p.y)).collect();
            let far = Kernel {
                kind: prepared.kernel.kind,
                alpha_m: prepared.kernel.alpha_m * ld.multiple,
            };
            graph::build_graph_within(
                &points,
                far,
                prepared.epsilon,
                &prepared.budget,
                "the long-distance links of the simulation",
                prepared.raster_cost(),
                prepared.resolved.host.suitability.is_some(),
            )?
            .edges
            .iter()
            .map(|e| (e.a.index(), e.b.index(), e.kernel))
            .collect()
        }
        None => Vec::new(),
    };
    let landscape = Landscape {
        long_links,
        ..prepared.landscape()
    };
    let seed = runs.seed;
    let random = |run: u64| random_plan(prepared, problem, seed, run);
    // Fixed plans by strategy id; a rule whose plan does not fit is left out (it has no plan
    // to simulate), corridor-first without corridors too (it would be biggest-first).
    let mut ids: Vec<&'static str> = vec!["none", "plan"];
    let mut plans: Vec<Option<&Assignment>> = vec![Some(&none), Some(plan)];
    for (id, a) in [
        ("greedy", greedy.as_ref()),
        ("density", density.as_ref()),
        ("biggest", biggest.as_ref()),
        ("corridor", corridor.as_ref()),
    ] {
        if let Some(a) = a {
            ids.push(id);
            plans.push(Some(a));
        }
    }
    ids.push("random");
    plans.push(None);
    let mut treatments: Vec<Treatment> = plans
        .iter()
        .filter_map(|a| a.map(|a| Treatment::Fixed(prepared.treated_host(a))))
        .collect();
    treatments.push(Treatment::PerRun(&random));
    // The proxy check's extra plans: half random feasible plans, half perturbed optima.
    let n_perturbed = runs.proxy_plans / 2;
    let n_random = runs.proxy_plans - n_perturbed;
    let extra: Vec<(String, Assignment)> = (0..n_random as u64)
        .filter_map(|k| {
            random_fixed_plan(problem, seed, k).map(|a| (format!("random_{}", k + 1), a))
        })
        .chain((0..n_perturbed as u64).filter_map(|k| {
            perturbed_plan(problem, plan, seed, k).map(|a| (format!("perturbed_{}", k + 1), a))
        }))
        .collect();
    // The host as treated: the objective's horizon (if any) is a score, not the dynamics.
    treatments.extend(
        extra
            .iter()
            .map(|(_, a)| Treatment::Fixed(prepared.treated_host(a))),
    );
    printer.progress(&format!(
        "simulating {} strategies x {} runs x {} years",
        treatments.len(),
        runs.runs,
        runs.years
    ));
    let mut traces = simulate::simulate(
        &landscape,
        &params,
        &treatments,
        runs.years,
        runs.runs,
        seed,
        runs.jobs,
    );

    let extra_traces = traces.split_off(ids.len());
    let diff = |f: &dyn Fn(&Trace, usize) -> f64| -> Difference {
        let d: Vec<f64> = (0..runs.runs as usize)
            .map(|k| pct(f(&traces[0], k) - f(&traces[1], k)))
            .collect();
        let (mean, lo, hi) = simulate::mean_ci(&d);
        Difference {
            mean,
            ci95_low: lo,
            ci95_high: hi,
        }
    };
    let years = runs.years as usize;
    let final_of = |t: &Trace, k: usize| t.occupied_host[k][years];
    let mean_of = |t: &Trace, k: usize| t.occupied_host[k][1..].iter().sum::<f64>() / years as f64;
    let strategies = ids
        .iter()
        .zip(&traces)
        .zip(plans.iter().copied())
        .map(|((name, t), a)| StrategyJson {
            name: *name,
            patches_treated: a.map(|a| a.iter().filter(|o| o.is_some()).count()),
            cost: a.map(|a| (problem.cost(a) * 100.0).round() / 100.0 + 0.0),
            risk_after: a.map(|a| problem.risk(a)),
            final_occupied_host_pct_mean: pct((0..runs.runs as usize)
                .map(|k| final_of(t, k))
                .sum::<f64>()
                / runs.runs as f64),
            mean_occupied_host_pct_over_years: pct((0..runs.runs as usize)
                .map(|k| mean_of(t, k))
                .sum::<f64>()
                / runs.runs as f64),
        })
        .collect::<Vec<_>>();
    let eq = simulate::equilibrium(&landscape, &params, &vec![1.0; model.len()]);
    let equilibrium_host: f64 = eq.iter().zip(&model.share).map(|(p, a)| p * a).sum();
    let n = runs.runs as usize;
    let paired = |s: usize, f: &dyn Fn(&Trace, usize) -> f64| -> (f64, [f64; 2]) {
        let d: Vec<f64> = (0..n)
            .map(|k| pct(f(&traces[s], k) - f(&traces[1], k)))
            .collect();
        let (m, lo, hi) = simulate::mean_ci(&d);
        (m, [lo, hi])
    };
    let versus_plan: Vec<VersusPlan> = (2..ids.len())
        .map(|s| {
            let (final_diff_pct, final_ci95) = paired(s, &final_of);
            let (mean_diff_pct, mean_ci95) = paired(s, &mean_of);
            let per_year = (1..=years)
                .map(|year| {
                    let (diff_pct, ci95) =
                        paired(s, &|t: &Trace, k: usize| t.occupied_host[k][year]);
                    YearDiff {
                        year,
                        diff_pct,
                        ci95,
                    }
                })
                .collect();
            VersusPlan {
                strategy: ids[s],
                final_diff_pct,
                final_ci95,
                mean_diff_pct,
                mean_ci95,
                per_year,
            }
        })
        .collect();
    let verdict = verdict(&versus_plan, prepared.horizon_years());
    // Proxy check: every fixed plan but no action, and the random fixed plans.
    let over_runs = |t: &Trace, f: &dyn Fn(&Trace, usize) -> f64| {
        pct((0..n).map(|k| f(t, k)).sum::<f64>() / n as f64)
    };
    let mut proxy_plans: Vec<proxy::Scored> = Vec::new();
    for ((id, t), a) in ids.iter().zip(&traces).zip(&plans).skip(1) {
        if let Some(a) = a {
            proxy_plans.push(proxy::Scored {
                plan: id.to_string(),
                risk_after: problem.risk(a),
                mean_occupied_host_pct: over_runs(t, &mean_of),
                final_occupied_host_pct: over_runs(t, &final_of),
            });
        }
    }
    for ((name, a), t) in extra.iter().zip(&extra_traces) {
        proxy_plans.push(proxy::Scored {
            plan: name.clone(),
            risk_after: problem.risk(a),
            mean_occupied_host_pct: over_runs(t, &mean_of),
            final_occupied_host_pct: over_runs(t, &final_of),
        });
    }
    let proxy_check = (runs.proxy_plans > 0).then(|| proxy::check(&proxy_plans, seed));
    let summary = SimJson {
        versus_plan,
        verdict,
        proxy_check,
        years: runs.years,
        runs: runs.runs,
        seed,
        params,
        budget,
        initially_occupied_patches: landscape.initial.iter().filter(|o| **o).count(),
        plan_advantage_final_pct: diff(&final_of),
        plan_advantage_mean_pct: diff(&mean_of),
        strategies,
        equilibrium_occupied_host_pct: pct(equilibrium_host),
        lambda_m_before: model.capacity(&vec![1.0; model.len()]).lambda,
    };
    Ok(Simulation {
        proxy_plans,
        strategies: ids,
        traces,
        summary,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn versus(strategy: &'static str, diffs: &[(f64, [f64; 2])]) -> VersusPlan {
        VersusPlan {
            strategy,
            final_diff_pct: diffs.last().unwrap().0,
            final_ci95: diffs.last().unwrap().1,
            mean_diff_pct: 0.0,
            mean_ci95: [0.0, 0.0],
            per_year: diffs
                .iter()
                .enumerate()
                .map(|(i, (d, ci))| YearDiff {
                    year: i + 1,
                    diff_pct: *d,
                    ci95: *ci,
                })
                .collect(),
        }
    }

    /// A strategy whose runs equal the plan's in every year (on common random numbers: it chose
    /// the same treatments) is said to be the plan itself, without the regrowth explanation,
    /// which is for a strategy that differs from the plan and ties or beats it.
    #[test]
    fn a_strategy_identical_to_the_plan_is_said_to_be_the_plan() {
        let same = versus("greedy", &[(0.0, [0.0, 0.0]); 3]);
        let worse = versus("random", &[(5.0, [4.0, 6.0]); 3]);
        let v = verdict(&[same, worse], 10).unwrap();
        assert!(
            v.starts_with("greedy benefit-per-cost chose the same treatments as the plan"),
            "{v}"
        );
        assert!(!v.contains("fades"), "{v}");
        assert!(!v.contains("random"), "{v}");
        // A tie that is not identical keeps the explanation.
        let tied = versus("density", &[(0.1, [-0.2, 0.4]); 3]);
        let v = verdict(&[tied], 10).unwrap();
        assert!(
            v.contains("cannot be told from the plan in 3 of the years"),
            "{v}"
        );
        assert!(v.contains("hostcut program"), "{v}");
        // Nothing ties or beats the plan: no verdict.
        assert!(verdict(&[versus("random", &[(5.0, [4.0, 6.0]); 3])], 10).is_none());
    }
}
