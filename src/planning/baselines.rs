//! Today's practice, on the same model, budget, crew hours and eligibility as the plan, so the
//! optimiser never has to be taken on trust. Each rule walks a list of patches and treats each
//! one with its most effective eligible method ([`Problem::most_effective`]; ties: the cheaper) if that still fits the money
//! and hours left, and otherwise skips it and goes on down the list; required patches come first
//! and excluded or untreatable ones never.
//!
//! - `biggest_first`: by stems, largest first (ties by patch order);
//! - `nearest_first`: by distance from the depot, nearest first;
//! - `corridor_first`: patches within any corridor buffer first, then by stems, largest first;
//! - `greedy`: the adaptive benefit-per-cost greedy of [`crate::solve::heuristics::greedy`].
//!
//! # Units
//! Depot coordinates in the working CRS (metres).

use crate::input::patches::Patches;
use crate::solve::heuristics::greedy;
use crate::solve::problem::{Assignment, Problem};

/// One baseline plan and its result.
#[derive(Debug, Clone)]
pub struct Baseline {
    pub name: &'static str,
    /// How a person would say it: "treating the biggest stands first".
    pub phrase: &'static str,
    /// None when the rule cannot fit the required patches.
    pub assignment: Option<Assignment>,
    pub risk_after: f64,
}

/// Walk `order` treating each patch with its most effective method while it fits.
pub fn fill_in_order(problem: &Problem, order: &[usize]) -> Option<Assignment> {
    let n = problem.len();
    let mut assignment: Assignment = vec![None; n];
    for i in 0..n {
        if problem.required[i] {
            assignment[i] = Some(problem.most_effective(i)?);
        }
    }
    if !problem.feasible(&assignment) {
        return None;
    }
    let (mut spent, mut hours) = (problem.cost(&assignment), problem.hours(&assignment));
    let tol = |limit: f64| 1e-9 * limit.abs().max(1.0);
    for &i in order {
        if assignment[i].is_some() || problem.excluded[i] {
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
            assignment[i] = Some(o);
            spent += c.cost;
            hours += c.hours;
        }
    }
    Some(assignment)
}

/// Patch indices by stems, largest first.
pub fn biggest_first_order(patches: &Patches) -> Vec<usize> {
    let mut order: Vec<usize> = (0..patches.len()).collect();
    order.sort_by(|&a, &b| {
        patches.items[b]
            .stems
            .total_cmp(&patches.items[a].stems)
            .then(a.cmp(&b))
    });
    order
}

/// Patch indices by distance from `depot`, nearest first.
pub fn nearest_first_order(patches: &Patches, depot: (f64, f64)) -> Vec<usize> {
    let d = |i: usize| (patches.items[i].x - depot.0).hypot(patches.items[i].y - depot.1);
    let mut order: Vec<usize> = (0..patches.len()).collect();
    order.sort_by(|&a, &b| d(a).total_cmp(&d(b)).then(a.cmp(&b)));
    order
}

/// Patches within a corridor buffer first, each group by stems, largest first.
pub fn corridor_first_order(patches: &Patches, near_corridor: &[Vec<String>]) -> Vec<usize> {
    let mut order = biggest_first_order(patches);
    order.sort_by_key(|&i| near_corridor[i].is_empty());
    order
}

/// The depot the distance rules start from: the scenario's `depot`, else [`default_depot`].
pub fn depot(given: Option<[f64; 2]>, patches: &Patches, eligible: &[bool]) -> (f64, f64) {
    given
        .map(|[x, y]| (x, y))
        .unwrap_or_else(|| default_depot(patches, eligible))
}

/// The default depot: the plain centroid of the eligible patches (of all patches if none is).
pub fn default_depot(patches: &Patches, eligible: &[bool]) -> (f64, f64) {
    let chosen: Vec<usize> = (0..patches.len()).filter(|&i| eligible[i]).collect();
    let chosen = if chosen.is_empty() {
        (0..patches.len()).collect()
    } else {
        chosen
    };
    let n = chosen.len() as f64;
    (
        chosen.iter().map(|&i| patches.items[i].x).sum::<f64>() / n,
        chosen.iter().map(|&i| patches.items[i].y).sum::<f64>() / n,
    )
}

/// Every baseline for `problem` (corridor-first only when some patch is near a corridor).
/// `greedy_plan` reuses the greedy the optimiser already ran.
pub fn all(
    problem: &Problem,
    patches: &Patches,
    near_corridor: &[Vec<String>],
    depot: (f64, f64),
    greedy_plan: Option<Option<(Assignment, f64)>>,
) -> Vec<Baseline> {
    let risk = |a: &Option<Assignment>| a.as_ref().map(|a| problem.risk(a)).unwrap_or(f64::NAN);
    let mut out = Vec::new();
    for (name, phrase, order) in [
        (
            "biggest_first",
            "treating the biggest stands first",
            biggest_first_order(patches),
        ),
        (
            "nearest_first",
            "treating the stands nearest the depot first",
            nearest_first_order(patches, depot),
        ),
        (
            "corridor_first",
            "treating the stands along the corridors first",
            corridor_first_order(patches, near_corridor),
        ),
    ] {
        // Without a patch near any corridor the corridor order is the biggest-first order:
        // reporting it would show one rule twice under two names.
        if name == "corridor_first" && near_corridor.iter().all(Vec::is_empty) {
            continue;
        }
        let assignment = fill_in_order(problem, &order);
        out.push(Baseline {
            name,
            phrase,
            risk_after: risk(&assignment),
            assignment,
        });
    }
    let g = greedy_plan.unwrap_or_else(|| greedy(problem));
    out.push(Baseline {
        name: "greedy",
        phrase: "the greedy benefit-per-cost rule",
        risk_after: g.as_ref().map(|g| g.1).unwrap_or(f64::NAN),
        assignment: g.map(|g| g.0),
    });
    out
}

/// summary.json's `baselines`.
pub fn baseline_summaries(
    problem: &Problem,
    patches: &Patches,
    baselines: &[Baseline],
    risk_before: f64,
    plan_risk: f64,
) -> serde_json::Map<String, serde_json::Value> {
    let mut map = serde_json::Map::new();
    for b in baselines {
        let value = match &b.assignment {
            None => serde_json::json!({ "feasible": false }),
            Some(a) => {
                let n_treated = a.iter().filter(|x| x.is_some()).count();
                let stems: f64 = a
                    .iter()
                    .enumerate()
                    .filter(|(_, x)| x.is_some())
                    .map(|(i, _)| patches.items[i].stems)
                    .sum();
                serde_json::json!({
                    "feasible": true,
                    "risk_after": b.risk_after,
                    "reduction_pct": if risk_before > 0.0 { 100.0 * (1.0 - b.risk_after / risk_before) } else { 0.0 },
                    "spent": problem.cost(a),
                    "crew_hours": problem.hours(a),
                    "n_treated": n_treated,
                    "stems_treated": stems,
                    "risk_ratio_to_plan": if plan_risk > 0.0 { b.risk_after / plan_risk } else { f64::NAN },
                })
            }
        };
        map.insert(b.name.to_string(), value);
    }
    map
}

/// "this plan leaves N× less risk than treating the biggest stands first", against the best
/// of the rule-of-thumb baselines a person would otherwise follow, or a plain statement that a
/// baseline is as good.
pub fn comparison_line(baselines: &[Baseline], plan_risk: f64) -> Option<String> {
    let biggest = baselines.iter().find(|b| b.name == "biggest_first")?;
    let mut lines = Vec::new();
    for b in baselines.iter().filter(|b| b.assignment.is_some()) {
        let ratio = if plan_risk > 0.0 {
            b.risk_after / plan_risk
        } else {
            f64::INFINITY
        };
        if ratio <= 1.0005 {
            lines.push(format!(
                "  {} does as well as this plan here (same remaining risk within 0.05%)",
                b.phrase
            ));
        } else {
            // Small differences read better as a percentage than as "1.00×".
            let amount = if ratio < 1.1 {
                format!("{:.1}% less risk", 100.0 * (1.0 - 1.0 / ratio))
            } else {
                format!("{ratio:.2}× less risk")
            };
            if b.name == biggest.name {
                lines.insert(0, format!("this plan leaves {amount} than {}", b.phrase));
            } else {
                lines.push(format!("  and {amount} than {}", b.phrase));
            }
        }
    }
    if biggest.assignment.is_none() {
        lines.insert(
            0,
            "the biggest-first rule cannot fit the required patches".to_string(),
        );
    }
    Some(lines.join("\n"))
}
