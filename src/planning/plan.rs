//! The plan: the optimiser's choices turned into what people read — treated patches in priority
//! order with cost, hours, cautions and value, and the before/after model metrics.
//!
//! # Units
//! Money in catalogue currency; `value_per_cost` is the risk reduction, in percent of R before
//! treatment, per 1,000 currency units, at the row's place in the priority order.

use crate::core::deadline::Deadline;
use crate::core::error::{Error, Result};
use crate::core::printer::Printer;
use crate::core::scenario::ModelSection;
use crate::core::scenario::SolverSection;
use crate::core::site::PatchId;
use crate::input::patches::Patches;
use crate::input::treatments::{self, Catalogue, Choice, MethodId};
use crate::model::risk::RiskModel;
use crate::solve::optimise;
use crate::solve::problem::{BoundSource, Limits, Problem, Solved, SolverPath, Status};

/// One treated patch.
#[derive(Debug, Clone)]
pub struct PlanRow {
    pub patch: PatchId,
    pub choice: Choice,
    pub cautions: Vec<&'static str>,
    /// Risk reduction at this step, % of R before.
    pub reduction_pct: f64,
    pub value_per_cost: f64,
}

/// Before and after, for the whole landscape and each patch.
#[derive(Debug, Clone)]
pub struct Plan {
    pub rows: Vec<PlanRow>,
    pub method_of: Vec<Option<MethodId>>,
    pub remaining: Vec<f64>,
    pub risk_before: f64,
    pub risk_after: f64,
    pub risk_shares: Vec<f64>,
    pub lambda_before: f64,
    pub lambda_after: f64,
    /// False when lambda_M or the establishment probabilities stopped at the command's time
    /// limit (or their iteration cap) before converging.
    pub metrics_converged: bool,
    pub patch_value: Vec<f64>,
    pub establishment_before: Vec<f64>,
    pub establishment_after: Vec<f64>,
    /// delta = e/c of the establishment model (the persistence threshold on lambda_M).
    pub delta: f64,
    pub greedy_risk_after: Option<f64>,
    pub spent: f64,
    pub crew_hours: f64,
    pub status: Status,
    pub bound: f64,
    pub gap: f64,
    pub solve_seconds: f64,
    /// How the plan was searched for and which proof gave the bound ([`Solved`]'s).
    pub solver_path: SolverPath,
    pub bound_from: BoundSource,
}

impl Plan {
    /// The host expected occupied at equilibrium, sum_i a_i r_i p_i* (a_i the host shares, so
    /// 1 is all host occupied): before the plan (r = 1) and after it.
    pub fn occupied_host(&self, model: &RiskModel) -> (f64, f64) {
        let sum = |r: &dyn Fn(usize) -> f64, p: &[f64]| -> f64 {
            model
                .share
                .iter()
                .zip(p)
                .enumerate()
                .map(|(i, (a, p))| a * r(i) * p)
                .sum()
        };
        (
            sum(&|_| 1.0, &self.establishment_before),
            sum(&|i| self.remaining[i], &self.establishment_after),
        )
    }

    /// Why R and the equilibrium occupied host (p*) fell by very different shares, if they did
    /// ([`crate::planning::divergence::explain_establishment`]).
    pub fn establishment_divergence(
        &self,
        model: &RiskModel,
    ) -> Option<crate::planning::divergence::EstablishmentDivergence> {
        if self.status == Status::Infeasible || self.delta <= 0.0 {
            return None;
        }
        let (before, after) = self.occupied_host(model);
        if before <= 0.0 {
            return None;
        }
        crate::planning::divergence::explain_establishment(
            self.reduction_pct(),
            100.0 * (1.0 - after / before),
            self.lambda_before / self.delta,
            self.lambda_after / self.delta,
        )
    }

    /// Why R and lambda_M fell by very different shares, if they did
    /// ([`crate::planning::divergence`]).
    pub fn divergence(&self) -> Option<crate::planning::divergence::Divergence> {
        if self.lambda_before <= 0.0 || self.status == Status::Infeasible {
            return None;
        }
        let lambda_pct = 100.0 * (1.0 - self.lambda_after / self.lambda_before);
        let treated: Vec<bool> = self.remaining.iter().map(|r| *r < 1.0).collect();
        // patch_value_i = lambda x_i^2: the eigenvector's weights, scaled.
        crate::planning::divergence::explain(
            self.reduction_pct(),
            lambda_pct,
            &self
                .patch_value
                .iter()
                .map(|v| v.max(0.0).sqrt())
                .collect::<Vec<_>>(),
            &self.risk_shares,
            &treated,
        )
    }

    pub fn reduction_pct(&self) -> f64 {
        if self.risk_before > 0.0 {
            100.0 * (1.0 - self.risk_after / self.risk_before)
        } else {
            0.0
        }
    }
}

/// Order the chosen treatments so each prefix buys the most: repeatedly take the chosen patch
/// with the largest risk reduction per unit cost given those already taken.
fn priority_order(problem: &Problem, solved: &Solved) -> Vec<(usize, usize, f64)> {
    let mut left: Vec<(usize, usize)> = solved
        .assignment
        .iter()
        .enumerate()
        .filter_map(|(i, a)| a.map(|o| (i, o)))
        .collect();
    let mut remaining = vec![1.0; problem.len()];
    let mut order = Vec::new();
    while !left.is_empty() {
        let mut best = 0;
        let mut best_ratio = f64::NEG_INFINITY;
        let mut best_gain = 0.0;
        for (k, &(i, o)) in left.iter().enumerate() {
            let gain = problem.gain(&remaining, i, o);
            let cost = problem.choices[i][o].cost;
            let ratio = if cost > 0.0 {
                gain / cost
            } else {
                f64::INFINITY
            };
            if ratio > best_ratio {
                best = k;
                best_ratio = ratio;
                best_gain = gain;
            }
        }
        let (i, o) = left.remove(best);
        remaining[i] = problem.choices[i][o].remaining;
        order.push((i, o, best_gain));
    }
    order
}

/// Assemble the plan from the solve.
pub fn assemble(
    patches: &Patches,
    model: &RiskModel,
    catalogue: &Catalogue,
    problem: &Problem,
    solved: &Solved,
    settings: &ModelSection,
    deadline: &Deadline,
) -> Plan {
    let n = patches.len();
    let remaining = problem.remaining(&solved.assignment);
    let risk_before = model.risk_before();
    let ones = vec![1.0; n];
    // The metrics run in the time the command keeps after its searches, in equal shares.
    let deadline = deadline.for_outputs();
    let before = model.capacity_until(&ones, &deadline.share(4));
    let after = model.capacity_until(&remaining, &deadline.share(3));
    let delta = model.delta(before.lambda, settings.persistence_ratio);
    let (establishment_before, converged_before) = model.establishment_until(
        &ones,
        delta,
        settings.introduction_weight,
        &deadline.share(2),
    );
    let (establishment_after, converged_after) =
        model.establishment_until(&remaining, delta, settings.introduction_weight, &deadline);
    let metrics_converged =
        before.converged && after.converged && converged_before && converged_after;
    let patch_value = before
        .vector
        .iter()
        .map(|x| before.lambda * x * x)
        .collect();
    let rows = priority_order(problem, solved)
        .into_iter()
        .map(|(i, o, gain)| {
            let choice = problem.choices[i][o];
            let reduction_pct = if risk_before > 0.0 {
                100.0 * gain / risk_before
            } else {
                0.0
            };
            let value_per_cost = if choice.cost > 0.0 {
                reduction_pct / choice.cost * 1000.0
            } else {
                f64::INFINITY
            };
            PlanRow {
                patch: PatchId(i as u32),
                choice,
                cautions: treatments::prescription_cautions(catalogue, &choice, &patches.items[i]),
                reduction_pct,
                value_per_cost,
            }
        })
        .collect();
    let method_of = solved
        .assignment
        .iter()
        .enumerate()
        .map(|(i, a)| a.map(|o| problem.choices[i][o].method))
        .collect();
    Plan {
        rows,
        method_of,
        risk_before,
        risk_after: solved.risk_after,
        risk_shares: model.risk_shares(),
        remaining,
        lambda_before: before.lambda,
        lambda_after: after.lambda,
        metrics_converged,
        patch_value,
        establishment_before,
        establishment_after,
        delta,
        greedy_risk_after: solved.greedy.as_ref().map(|g| g.1),
        spent: problem.cost(&solved.assignment),
        crew_hours: problem.hours(&solved.assignment),
        status: solved.status,
        bound: solved.bound,
        gap: solved.gap,
        solve_seconds: solved.seconds,
        solver_path: solved.path,
        bound_from: solved.bound_from,
    }
}

/// Seconds the metrics and the outputs take per patch after the search, measured on a 88,583-
/// patch raster plan (8.2 s writing plan.csv, patches.csv and plan.geojson with outlines,
/// 0.1 s of metrics; docs/benchmarks.md), rounded up.
pub const OUTPUT_S_PER_PATCH: f64 = 1e-4;

/// The command's deadline (`command`) keeping time after the searches for `folders` plan folders of
/// `patches` patches; says so on stderr when reading the layers and writing the outputs leave
/// no time to search.
pub fn keep_for_outputs(
    command: Deadline,
    time_limit_s: f64,
    patches: usize,
    folders: usize,
    printer: Printer,
) -> Deadline {
    let outputs_s = OUTPUT_S_PER_PATCH * (patches * folders) as f64;
    let deadline = command.keeping(outputs_s);
    if deadline.passed() {
        printer.note(format_args!(
            "warning: reading the layers took {:.1} s and writing the outputs of {patches} patches needs about {outputs_s:.1} s more: `--time-limit-s {time_limit_s}` leaves no time to search, so the plan is the best start (greedy or relaxation rounding)",
            deadline.elapsed_s(),
        ));
    }
    deadline
}

/// Why the required patches cannot all be treated: their cheapest methods against the limits.
pub fn infeasible_requirements(problem: &Problem, patches: &Patches, budget: f64) -> Error {
    let required: Vec<usize> = (0..problem.len())
        .filter(|&i| problem.required[i])
        .collect();
    let cheapest = |i: usize, f: &dyn Fn(&crate::input::treatments::Choice) -> f64| {
        problem.choices[i]
            .iter()
            .map(f)
            .fold(f64::INFINITY, f64::min)
    };
    let cost: f64 = required.iter().map(|&i| cheapest(i, &|c| c.cost)).sum();
    let hours: f64 = required.iter().map(|&i| cheapest(i, &|c| c.hours)).sum();
    let ids: Vec<&str> = required
        .iter()
        .map(|&i| patches.items[i].label.as_str())
        .collect();
    let what = match problem.crew_hours {
        Some(h) if hours > h => {
            format!("need at least {hours:.1} crew hours, more than the {h} available")
        }
        _ if cost > budget => format!(
            "cost at least {cost:.2} with their cheapest methods, more than the budget of {budget:.2}"
        ),
        _ => "cannot all be treated within the budget and crew hours together".to_string(),
    };
    Error::input_with_hint(
        format!(
            "no plan fits: the required patches ({}) {what}",
            ids.join(", ")
        ),
        "raise `--budget` / `--crew-hours`, or require fewer patches",
    )
}

/// The plan's search (or `chosen`, the ensemble's plan), a spinner meanwhile; an infeasible
/// result is the input error naming the required patches, and a search stopped by the time
/// limit or out of moves says so on stderr.
pub fn search(
    problem: &Problem,
    chosen: Option<&Solved>,
    limits: Limits,
    solver: &SolverSection,
    patches: &Patches,
    printer: Printer,
) -> Result<Solved> {
    let deadline = limits.deadline;
    let solved = match chosen {
        Some(chosen) => chosen.clone(),
        None => {
            printer.progress("optimising");
            let _spinner = printer.spinner(&format!(
                "optimising {} patches (time limit {} s for the whole command, {:.1} s left; gap {})",
                problem.len(),
                solver.time_limit_s,
                deadline.remaining_s(),
                solver.gap
            ));
            optimise::solve(problem, limits)?
        }
    };
    if solved.status == Status::Infeasible {
        return Err(infeasible_requirements(problem, patches, problem.budget));
    }
    match solved.status {
        Status::TimeLimit => printer.note(format_args!(
            "warning: the optimiser stopped at the time limit (`--time-limit-s {}` for the whole command, {:.1} s used{}); the plan is the best found; proven gap on the remaining risk {:.3}%",
            solver.time_limit_s,
            deadline.elapsed_s(),
            if solved.path == SolverPath::NotStarted {
                "; what was left was too little to start the exact search on a model this size"
            } else {
                ""
            },
            100.0 * solved.gap
        )),
        Status::NoImprovingMove => printer.note(format_args!(
            "warning: the local search found no improving move left after {:.1} s (of the {} s limit); the plan is the best found; proven gap on the remaining risk {:.3}%",
            solved.seconds,
            solver.time_limit_s,
            100.0 * solved.gap
        )),
        _ => {}
    }
    Ok(solved)
}
