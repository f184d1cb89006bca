//! The min-max solve over an ensemble of risk models ([`MinMax`]): the transportation
//! formulation with an epigraph variable, run by HiGHS.

use std::time::Instant;

use crate::core::error::Result;
use crate::solve::mip::highs::run_highs;
use crate::solve::mip::transport::build_transport;
use crate::solve::problem::{Assignment, Limits, MinMax, OPTIMAL_GAP, Problem, SolverPath, Status};

/// The answer to a min-max solve.
#[derive(Debug, Clone)]
pub struct MinMaxSolved {
    pub assignment: Assignment,
    /// max_s scale_s (R_s - offset_s) of the assignment.
    pub value: f64,
    /// A proven lower bound on the least achievable value.
    pub bound: f64,
    /// (value - bound) / max_s scale_s R_s(assignment): the gap on the risk that remains (the
    /// worst-scenario R for the worst case; each R as a share of its scenario's least R for
    /// the regret).
    pub gap: f64,
    pub status: Status,
    pub seconds: f64,
    /// How the plan was found: [`SolverPath::MinMaxMip`], `EverythingFits`,
    /// `StartWithinGap`, `NothingToChoose` or `NotStarted`.
    pub path: SolverPath,
}

/// Minimise max_s scale_s (R_s - offset_s) over feasible plans, exactly (transportation formulation with
/// an epigraph variable), warm-started from the best of `starts`. `floor` is a lower bound known
/// beforehand (e.g. max_s of scale_s times each scenario's own proven bound minus its offset: no plan does
/// better in scenario s than its optimum); the reported bound is the larger of it and HiGHS's.
pub fn solve_minmax(
    problem: &Problem,
    mm: &MinMax,
    limits: Limits,
    starts: &[Assignment],
    floor: f64,
) -> Result<MinMaxSolved> {
    let start_time = Instant::now();
    let n = problem.len();
    let warm = starts
        .iter()
        .filter(|a| a.len() == n && problem.feasible(a))
        .min_by(|a, b| mm.value(problem, a).total_cmp(&mm.value(problem, b)))
        .cloned();
    let done = |assignment: Assignment, bound: f64, status: Status, path: SolverPath| {
        let value = mm.value(problem, &assignment);
        let bound = if bound.is_finite() {
            bound.max(floor)
        } else {
            floor
        };
        let worst = mm.scaled_worst(problem, &assignment);
        let bound = bound.min(value);
        let gap = if worst > 0.0 {
            ((value - bound) / worst).max(0.0)
        } else {
            0.0
        };
        let status = if status == Status::Optimal && gap > OPTIMAL_GAP {
            Status::GapLimit
        } else {
            status
        };
        MinMaxSolved {
            assignment,
            value,
            bound,
            gap,
            status,
            seconds: start_time.elapsed().as_secs_f64(),
            path,
        }
    };
    // Every R_s only grows with each r_i, so treating everything, when it fits, is optimal.
    let (everything, _) = problem.everything();
    if problem.feasible(&everything) {
        let v = mm.value(problem, &everything);
        return Ok(done(
            everything,
            v,
            Status::Optimal,
            SolverPath::EverythingFits,
        ));
    }
    // A start already within the requested gap of the known floor needs no search.
    if let Some(w) = &warm {
        let worst = mm.scaled_worst(problem, w);
        if worst > 0.0 && (mm.value(problem, w) - floor) / worst <= limits.gap {
            return Ok(done(
                w.clone(),
                floor,
                Status::Optimal,
                SolverPath::StartWithinGap,
            ));
        }
    }
    let worst_before = mm.scaled_worst(problem, &vec![None; n]);
    if worst_before <= 0.0 {
        return Ok(done(
            vec![None; n],
            f64::NEG_INFINITY,
            Status::Optimal,
            SolverPath::NothingToChoose,
        ));
    }
    let scale = 1e3 / worst_before;
    let built = build_transport(problem, scale, warm.as_ref(), Some(mm))?;
    let infeasible = || MinMaxSolved {
        assignment: vec![None; n],
        value: f64::NAN,
        bound: f64::NAN,
        gap: f64::NAN,
        status: Status::Infeasible,
        seconds: start_time.elapsed().as_secs_f64(),
        path: SolverPath::MinMaxMip,
    };
    let Some(run) = run_highs(built, limits, n, warm.is_some())? else {
        return Ok(infeasible());
    };
    let mut assignment = run.assignment;
    if !run.has_solution || !problem.feasible(&assignment) {
        match &warm {
            Some(w) => assignment = w.clone(),
            None => return Ok(infeasible()),
        }
    }
    if let Some(w) = warm.as_ref()
        && mm.value(problem, w) < mm.value(problem, &assignment)
    {
        assignment = w.clone();
    }
    let bound = (run.objective_bound / scale).max(floor);
    let path = if run.started {
        SolverPath::MinMaxMip
    } else {
        SolverPath::NotStarted
    };
    Ok(done(assignment, bound, run.status, path))
}
