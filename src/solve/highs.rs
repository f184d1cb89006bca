//! The HiGHS runner: solve a built model with the run's limits, a fixed seed and thread count,
//! and read the assignment and the dual bound back. The formulations that build the model are
//! in `optimise`.

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
}

/// Solve a built model with the run's limits, a fixed seed and thread count. `None` when HiGHS
/// proves it infeasible.
pub(crate) fn run_highs(built: Built, limits: Limits, n: usize) -> Result<Option<HighsRun>> {
    let Built {
        mut model,
        x_columns,
    } = built;
    // HOSTCUT_SOLVER_LOG=1 shows HiGHS's own log on stdout (for developers).
    let log = std::env::var_os("HOSTCUT_SOLVER_LOG").is_some();
    model.set_option("output_flag", log);
    model.set_option("log_to_console", log);
    model.set_option("time_limit", limits.time_limit_s.max(0.01));
    model.set_option("mip_rel_gap", limits.gap);
    model.set_option("mip_abs_gap", 1e-9);
    // Fixed seed and thread count, so the same problem gives the same plan on any machine
    // (HiGHS's MIP is deterministic for a given thread count).
    model.set_option("random_seed", 0);
    model.set_option("threads", limits.threads.unwrap_or(2) as i32);
    let solved = model
        .try_solve()
        .map_err(|e| Error::Internal(format!("HiGHS failed: {e:?}")))?;
    use highs::HighsModelStatus as S;
    let has_solution = solved.primal_solution_status() == highs::HighsSolutionStatus::Feasible;
    let status = match solved.status() {
        S::Optimal | S::ObjectiveBound | S::ObjectiveTarget => Status::Optimal,
        S::Infeasible | S::UnboundedOrInfeasible => return Ok(None),
        S::ReachedTimeLimit
        | S::ReachedIterationLimit
        | S::ReachedSolutionLimit
        | S::ReachedInterrupt
        | S::ReachedMemoryLimit => Status::TimeLimit,
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
    }))
}
