//! The optimiser's orchestrator: choose at most one method per patch to minimise the
//! connected-host risk R under the budget and crew hours. [`solve_from`] takes the greedy start
//! (`heuristics`), the relaxation bound and its rounded plan (`relax`), then either stops (the
//! gap is met), searches locally (models too large for HiGHS), merges small components exactly
//! (`decompose`) or runs the exact MIP in the chosen formulation (`mip`), and says which path
//! it took and which proof gave the bound.
//!
//! # Units
//! Costs in catalogue currency, hours in crew hours, R in share-squared units.

use std::time::Instant;

use crate::core::error::{Error, Result};
use crate::core::scenario::Formulation;
use crate::solve::fixing::{Core, Fixed, fix, probe};
use crate::solve::heuristics::{greedy, prune_worthless, round, search};
use crate::solve::mip::compact::build_compact;
use crate::solve::mip::direct::build_direct;
use crate::solve::mip::highs::run_highs;
use crate::solve::mip::transport::{build_transport, estimated_gb};
use crate::solve::problem::{
    Assignment, BoundSource, Limits, OPTIMAL_GAP, Problem, Solved, SolverPath, Status,
};
use crate::solve::{decompose, relax};

/// Models estimated above this size skip HiGHS: relaxation and local search alone.
pub const LARGE_MODEL_GB: f64 = 0.2;

/// Frank–Wolfe iterations spent on problems small enough for the MIP.
const SMALL_RELAX_ITERATIONS: usize = 300;

/// Solve the MIP exactly (or to `limits`), warm-started from the greedy plan.
pub fn solve(problem: &Problem, limits: Limits) -> Result<Solved> {
    solve_from(problem, limits, None)
}

/// As [`solve`], warm-started from the better of the greedy plan and `start` (e.g. the
/// neighbouring point of a budget curve) when `start` is feasible here.
pub fn solve_from(problem: &Problem, limits: Limits, start: Option<&Assignment>) -> Result<Solved> {
    let start_time = Instant::now();
    let n = problem.len();
    let greedy = greedy(problem);
    let warm: Option<(Assignment, f64)> = match (
        start.filter(|a| a.len() == n && problem.feasible(a)),
        &greedy,
    ) {
        (Some(a), Some((_, g))) if problem.risk(a) < *g => Some((a.clone(), problem.risk(a))),
        (Some(a), None) => Some((a.clone(), problem.risk(a))),
        _ => greedy.clone(),
    };
    let risk_before = problem.model.risk_before();
    let any_choice = (0..n).any(|i| !problem.excluded[i] && !problem.choices[i].is_empty());
    let required_without_choice = (0..n)
        .any(|i| problem.required[i] && (problem.excluded[i] || problem.choices[i].is_empty()));
    if required_without_choice {
        return Ok(infeasible(n, risk_before, greedy, start_time));
    }
    if !any_choice || risk_before <= 0.0 {
        let assignment = vec![None; n];
        let risk = problem.risk(&assignment);
        return Ok(Solved {
            assignment,
            risk_after: risk,
            bound: risk,
            gap: 0.0,
            status: Status::Optimal,
            seconds: start_time.elapsed().as_secs_f64(),
            greedy,
            path: SolverPath::NothingToChoose,
            bound_from: BoundSource::Exact,
        });
    }
    // Treating everything with its most effective method is optimal when it fits, and its risk
    // bounds R from below at any budget.
    let (mut everything, floor) = problem.everything();
    if problem.feasible(&everything) {
        prune_worthless(problem, &mut everything);
        return Ok(Solved {
            assignment: everything,
            risk_after: floor,
            bound: floor,
            gap: 0.0,
            status: Status::Optimal,
            seconds: start_time.elapsed().as_secs_f64(),
            greedy,
            path: SolverPath::EverythingFits,
            bound_from: BoundSource::Exact,
        });
    }
    let need_gb = estimated_gb(problem);
    if !limits.assist && need_gb > limits.max_memory_gb {
        return Err(Error::input_with_hint(
            format!(
                "the exact model for {} patches and {} links needs about {need_gb:.2} GB, more than `--max-memory-gb {}`",
                n,
                problem.model.links.len(),
                limits.max_memory_gb
            ),
            "raise `--epsilon` or lower `--alpha-m` to keep fewer links, split the area, or raise `--max-memory-gb` if the machine has the memory",
        ));
    }
    // A convex relaxation bound (src/solve/relax/) and its rounded plan, cheap next to the MIP.
    // Large problems, whose exact model HiGHS cannot take in (or would not get through its
    // root LP) within the limits, are solved by relaxation and local search alone.
    let large = limits.assist && need_gb > limits.max_memory_gb.min(LARGE_MODEL_GB);
    let mut warm = warm;
    let mut relaxed_bound = f64::NEG_INFINITY;
    let mut forced = None;
    if let Some((plan, risk)) = warm.clone().filter(|_| limits.assist) {
        let stop = relax::Stop {
            gap: limits.gap,
            max_iterations: if large {
                usize::MAX
            } else {
                SMALL_RELAX_ITERATIONS
            },
            time_limit_s: if large {
                0.5 * limits.deadline.remaining_s()
            } else {
                (0.1 * limits.deadline.remaining_s()).min(2.0)
            },
        };
        if let Some(relaxation) = relax::bound(problem, &plan, risk, stop) {
            relaxed_bound = relaxation.value;
            forced = relaxation.forced.clone();
            let rounded = round(problem, &relaxation.weights);
            let r = problem.risk(&rounded);
            if r < risk && problem.feasible(&rounded) {
                warm = Some((rounded, r));
            }
        }
    }
    let bound_of = |risk: f64, dual: f64| dual.max(floor).max(relaxed_bound).min(risk).max(0.0);
    // The proof behind `bound_of` (ties go to the cheaper proof).
    let bound_from = |dual: f64| {
        if floor >= relaxed_bound && floor >= dual {
            BoundSource::Floor
        } else if relaxed_bound >= dual {
            BoundSource::Relaxation
        } else {
            BoundSource::HighsDual
        }
    };
    let gap_of = |risk: f64, bound: f64| {
        if risk > 0.0 {
            ((risk - bound) / risk).max(0.0)
        } else {
            0.0
        }
    };
    // Components that cannot interact, each small enough to enumerate, are merged exactly
    // under the one budget (src/solve/decompose.rs) instead of the monolithic formulation.
    let early = limits.assist
        && warm
            .as_ref()
            .is_some_and(|(_, r)| gap_of(*r, bound_of(*r, f64::NEG_INFINITY)) <= limits.gap);
    let pieces = if limits.assist && !early {
        decompose::pieces(problem)
    } else {
        None
    };
    if let Some((plan, risk)) = warm.clone().filter(|_| limits.assist)
        && (early || (large && pieces.is_none()))
    {
        if !early {
            return large_search(
                problem,
                limits,
                (plan, risk),
                forced,
                relaxed_bound,
                floor,
                greedy,
                start_time,
            );
        }
        let mut assignment = plan;
        prune_worthless(problem, &mut assignment);
        let risk_after = risk.min(problem.risk(&assignment));
        let bound = bound_of(risk_after, f64::NEG_INFINITY);
        let gap = gap_of(risk_after, bound);
        return Ok(Solved {
            assignment,
            risk_after,
            bound,
            gap,
            status: if gap <= OPTIMAL_GAP {
                Status::Optimal
            } else {
                Status::GapLimit
            },
            seconds: start_time.elapsed().as_secs_f64(),
            greedy,
            path: SolverPath::GreedyAndRounding,
            bound_from: bound_from(f64::NEG_INFINITY),
        });
    }
    // HiGHS sees R scaled so that R before treatment = 1000: coefficients stay in a range it
    // handles well, and the objective at any sensible plan stays above 1 for its relative gap.
    let scale = 1e3 / risk_before;

    let path = match limits.formulation {
        _ if pieces.is_some() => SolverPath::ComponentMerge,
        Formulation::Compact => SolverPath::CompactMip,
        Formulation::Direct => SolverPath::DirectMip,
        Formulation::Transport => SolverPath::TransportMip,
    };
    let built = match limits.formulation {
        _ if pieces.is_some() => decompose::build_merge(
            problem,
            pieces.as_deref().unwrap_or_default(),
            scale,
            warm.as_ref().map(|w| &w.0),
        )?,
        Formulation::Compact => build_compact(problem, scale, warm.as_ref().map(|w| &w.0))?,
        Formulation::Direct => build_direct(problem, scale)?,
        Formulation::Transport => {
            build_transport(problem, scale, warm.as_ref().map(|w| &w.0), None)?
        }
    };
    let Some(run) = run_highs(built, limits, n, warm.is_some())? else {
        return Ok(infeasible(n, risk_before, greedy, start_time));
    };
    let (mut status, mut assignment, has_solution) = (run.status, run.assignment, run.has_solution);
    let path = if run.started {
        path
    } else {
        SolverPath::NotStarted
    };
    let dual = run.objective_bound / scale;
    let mut risk_after = problem.risk(&assignment);
    if !has_solution || !problem.feasible(&assignment) {
        match &warm {
            Some((g, r)) => {
                assignment = g.clone();
                risk_after = *r;
            }
            None => return Ok(infeasible(n, risk_before, greedy, start_time)),
        }
    }
    if let Some((g, r)) = warm.as_ref().filter(|(_, r)| *r < risk_after) {
        assignment = g.clone();
        risk_after = *r;
    }
    prune_worthless(problem, &mut assignment);
    let bound = bound_of(risk_after, dual);
    let gap = gap_of(risk_after, bound);
    if status == Status::Optimal && gap > OPTIMAL_GAP {
        status = Status::GapLimit;
    }
    Ok(Solved {
        assignment,
        risk_after,
        bound,
        gap,
        status,
        seconds: start_time.elapsed().as_secs_f64(),
        greedy,
        path,
        bound_from: bound_from(dual),
    })
}

/// A core is searched again only when the fixing removed at least this share of the options
/// (each level strictly smaller, so the recursion ends).
const CORE_MIN_REMOVED: f64 = 0.05;

/// The large-model path (issue 23): local search with restarts for a share of the time, then
/// variable fixing from the relaxation's forced bounds and the core that is left solved by
/// [`solve_from`] (HiGHS with the incumbent as its start when the core is small enough, else the
/// same path again on the core), then restarts with whatever time is left. Every bound is
/// proven: the relaxation's, the floor, or the core's with the fixing's bound on the plans it
/// removed.
#[allow(clippy::too_many_arguments)]
fn large_search(
    problem: &Problem,
    limits: Limits,
    (plan, risk): (Assignment, f64),
    forced: Option<Vec<Vec<(Option<usize>, f64)>>>,
    relaxed_bound: f64,
    floor: f64,
    greedy: Option<(Assignment, f64)>,
    start_time: Instant,
) -> Result<Solved> {
    let mut bound = relaxed_bound.max(floor);
    let mut bound_from = if floor >= relaxed_bound {
        BoundSource::Floor
    } else {
        BoundSource::Relaxation
    };
    let gap_of = |risk: f64, bound: f64| {
        if risk > 0.0 {
            ((risk - bound.min(risk).max(0.0)) / risk).max(0.0)
        } else {
            0.0
        }
    };
    let first = limits.deadline.fraction(0.35);
    let (mut plan, mut risk, mut exhausted) = search(problem, plan, risk, 1, |r| {
        gap_of(r, bound) <= limits.gap || first.passed()
    });
    let mut path = SolverPath::RelaxationAndLocalSearch;
    if gap_of(risk, bound) > limits.gap
        && !limits.deadline.passed()
        && let Some(forced) = &forced
    {
        let fixed = fix(problem, forced, &plan, risk);
        let options: usize = forced.iter().map(|f| f.len()).sum();
        let by_reduced_cost = fixed.removed;
        // Probing the patches that carry most of the risk, with the convex reformulation's
        // bound on each restriction (exact in the probed patch's own term, where the
        // relaxation of a dominant patch is loosest).
        let fixed = probe_dominant(problem, fixed, &plan, risk, limits);
        let probed = fixed.removed - by_reduced_cost;
        // Branching on one probed patch bounds every plan the fixing kept; the removed ones
        // are bounded by their own forced bounds.
        let branched = fixed.branch_bound.min(fixed.removed_bound);
        if branched.is_finite() && branched > bound {
            bound = branched.min(risk);
            bound_from = BoundSource::FixedCore;
        }
        if ((fixed.removed as f64) >= CORE_MIN_REMOVED * options as f64 || probed > 0)
            && let Some(core) = Core::build(problem, &fixed)
        {
            let core_problem = core.problem();
            let start = core.restrict(&plan);
            let sub = solve_from(&core_problem, limits, start.as_ref())?;
            if sub.status != Status::Infeasible {
                path = SolverPath::FixedCore;
                let whole = core.expand(&sub.assignment);
                let r = problem.risk(&whole);
                if r < risk && problem.feasible(&whole) {
                    plan = whole;
                    risk = r;
                }
                let core_bound = sub.bound.min(fixed.removed_bound);
                if core_bound.is_finite() && core_bound > bound {
                    bound = core_bound;
                    bound_from = BoundSource::FixedCore;
                }
                exhausted = matches!(sub.status, Status::NoImprovingMove | Status::Optimal);
            }
        }
    }
    if gap_of(risk, bound) > limits.gap && !limits.deadline.passed() {
        let (p, r, e) = search(problem, plan, risk, 2, |r| {
            gap_of(r, bound) <= limits.gap || limits.deadline.passed()
        });
        (plan, risk, exhausted) = (p, r, e);
    }
    prune_worthless(problem, &mut plan);
    let risk_after = risk.min(problem.risk(&plan));
    let bound = bound.min(risk_after).max(0.0);
    let gap = gap_of(risk_after, bound);
    let status = if gap <= OPTIMAL_GAP {
        Status::Optimal
    } else if gap <= limits.gap {
        Status::GapLimit
    } else if exhausted {
        Status::NoImprovingMove
    } else {
        Status::TimeLimit
    };
    Ok(Solved {
        assignment: plan,
        risk_after,
        bound,
        gap,
        status,
        seconds: start_time.elapsed().as_secs_f64(),
        greedy,
        path,
        bound_from,
    })
}

/// Patches probed at most, by their share of the risk before treatment.
const PROBE_PATCHES: usize = 32;

/// Frank–Wolfe iterations per probe.
const PROBE_ITERATIONS: usize = 64;

/// [`probe`] on the [`PROBE_PATCHES`] patches with the largest risk shares that still have a
/// choice, within a quarter of the time left.
fn probe_dominant(
    problem: &Problem,
    fixed: Fixed,
    plan: &Assignment,
    risk: f64,
    limits: Limits,
) -> Fixed {
    let shares = problem.model.risk_shares();
    let mut order: Vec<usize> = (0..problem.len())
        .filter(|&i| fixed.allowed[i].len() > 1)
        .collect();
    order.sort_by(|&a, &b| shares[b].total_cmp(&shares[a]).then(a.cmp(&b)));
    order.truncate(PROBE_PATCHES);
    let until = limits.deadline.fraction(0.25);
    let bound_of = |p: &Problem, start: &Assignment| {
        relax::convex_bound(p, start, risk, PROBE_ITERATIONS, until.remaining_s())
    };
    probe(problem, fixed, plan, risk, &order, &bound_of, &|| {
        until.passed()
    })
}

fn infeasible(
    n: usize,
    risk_before: f64,
    greedy: Option<(Assignment, f64)>,
    start: Instant,
) -> Solved {
    Solved {
        assignment: vec![None; n],
        risk_after: risk_before,
        bound: f64::NAN,
        gap: f64::NAN,
        status: Status::Infeasible,
        seconds: start.elapsed().as_secs_f64(),
        greedy,
        path: SolverPath::Infeasible,
        bound_from: BoundSource::None,
    }
}
