//! The HiGHS runner: solve a built model with the run's limits, a fixed seed and thread count,
//! and read the assignment and the dual bound back. The formulations that build the model are
//! in the sibling files of `mip`.

use std::time::Instant;

use crate::core::error::{Error, Result};
use crate::solve::problem::{Assignment, Limits, Status};

/// A built HiGHS model and, per patch, (choice index, column) of each x_io.
pub(crate) struct Built {
    pub(crate) model: highs::Model,
    /// Per patch: (option index, column of its binary).
    pub(crate) x_columns: Vec<Vec<(usize, usize)>>,
}

/// What HiGHS returned: the status (never infeasible: that is `None` from [`run_highs`]), the
/// assignment read from the x columns, and its dual bound on the (scaled) objective.
pub(crate) struct HighsRun {
    pub(crate) status: Status,
    pub(crate) assignment: Assignment,
    pub(crate) has_solution: bool,
    pub(crate) objective_bound: f64,
    /// False when HiGHS was not started for lack of time (see [`run_highs`]).
    pub(crate) started: bool,
}

/// Seconds HiGHS may run past its `time_limit` per column of the model: presolve, reading the
/// MIP start and setting up the root do not look at the clock. Measured on the project's
/// 2-core machine (docs/benchmarks.md): 0.1-2 s past the limit at 100,000 columns, 1-13 s at
/// 690,000; this rate covers nearly all of them.
pub const HIGHS_SETUP_S_PER_COLUMN: f64 = 2e-5;

/// Seconds HiGHS may run past its `time_limit` on a model of `columns` columns.
pub fn highs_overrun_s(columns: usize) -> f64 {
    HIGHS_SETUP_S_PER_COLUMN * columns as f64
}

/// True when less than the time HiGHS may overrun by on a model of `columns` columns is left
/// before the command's searches must end ([`Deadline::overall`]): started now, HiGHS would
/// push the command past its limit.
pub fn highs_cannot_finish(columns: usize, limits: &Limits) -> bool {
    limits.deadline.overall().remaining_s() < highs_overrun_s(columns)
}

/// Solve a built model with the run's limits, a fixed seed and thread count. `None` when HiGHS
/// proves it infeasible.
///
/// HiGHS is stopped by the deadline less the time it may overrun by
/// ([`HIGHS_SETUP_S_PER_COLUMN`]); a step's overrun comes out of the steps after it. When
/// `has_start` (the caller holds a feasible plan to fall back on) and less than that overrun
/// is left before the command's searches must end, HiGHS is not started at all: it would push
/// the command past its limit. The run then reports the time limit with no solution and no
/// bound of its own.
pub(crate) fn run_highs(
    built: Built,
    limits: Limits,
    n: usize,
    has_start: bool,
) -> Result<Option<HighsRun>> {
    let Built {
        mut model,
        x_columns,
    } = built;
    // HOSTCUT_SOLVER_LOG=1 shows HiGHS's own log on stdout (for developers).
    let log = std::env::var_os("HOSTCUT_SOLVER_LOG").is_some();
    let remaining = limits.deadline.remaining_s();
    let overrun = highs_overrun_s(model.num_cols());
    if has_start && highs_cannot_finish(model.num_cols(), &limits) {
        if log {
            println!(
                "hostcut: HiGHS not started: {:.2} s left, it may overrun by {overrun:.2} s on {} columns",
                limits.deadline.overall().remaining_s(),
                model.num_cols()
            );
        }
        return Ok(Some(HighsRun {
            status: Status::TimeLimit,
            assignment: vec![None; n],
            has_solution: false,
            objective_bound: f64::NEG_INFINITY,
            started: false,
        }));
    }
    model.set_option("output_flag", log);
    model.set_option("log_to_console", log);
    // HiGHS's clock starts now: give it what is left of the deadline less its overrun (at least
    // a moment, so a search started at the deadline still returns its warm start and bound).
    let time_limit = (remaining - overrun).clamp(0.01, 1e9);
    if log {
        println!("hostcut: HiGHS time_limit {time_limit:.2} s");
    }
    model.set_option("time_limit", time_limit);
    model.set_option("mip_rel_gap", limits.gap);
    model.set_option("mip_abs_gap", 1e-9);
    // Fixed seed and thread count, so the same problem gives the same plan on any machine
    // (HiGHS's MIP is deterministic for a given thread count).
    model.set_option("random_seed", 0);
    model.set_option("threads", limits.threads.unwrap_or(2) as i32);
    let highs_clock = Instant::now();
    let solved = model
        .try_solve()
        .map_err(|e| Error::Internal(format!("HiGHS failed: {e:?}")))?;
    if log {
        println!(
            "hostcut: HiGHS took {:.2} s of its {time_limit:.2} s",
            highs_clock.elapsed().as_secs_f64()
        );
    }
    use highs::HighsModelStatus as S;
    let has_solution = solved.primal_solution_status() == highs::HighsSolutionStatus::Feasible;
    let status = match solved.status() {
        S::Optimal | S::ObjectiveBound | S::ObjectiveTarget => Status::Optimal,
        S::Infeasible | S::UnboundedOrInfeasible => return Ok(None),
        S::ReachedTimeLimit => Status::TimeLimit,
        other => {
            return Err(Error::Internal(format!(
                "HiGHS ended with status {other:?}"
            )));
        }
    };
    let mut assignment: Assignment = vec![None; n];
    if has_solution {
        let values = solved.get_solution();
        let values = values.columns();
        for i in 0..n {
            for &(o, col) in &x_columns[i] {
                if values[col] > 0.5 {
                    assignment[i] = Some(o);
                }
            }
        }
    }
    let objective_bound = solved
        .double_info_value(c"mip_dual_bound")
        .unwrap_or(f64::NEG_INFINITY);
    Ok(Some(HighsRun {
        status,
        assignment,
        has_solution,
        objective_bound,
        started: true,
    }))
}
