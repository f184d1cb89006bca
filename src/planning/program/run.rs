//! The programme planned within one command deadline: the season-by-season (myopic) plan, the
//! season floor, then the programme's exact model when it can finish.

use super::{Horizon, ProgramProblem, ProgramSolved};
use crate::core::deadline::Deadline;
use crate::core::error::{Error, Result};
use crate::core::printer::Printer;
use crate::core::scenario::SolverSection;
use crate::planning::prepare::Prepared;
use crate::solve::problem::{Assignment, Limits, Status};

/// A solved programme with its myopic comparison.
pub struct ProgramRun<'a> {
    pub problem: ProgramProblem<'a>,
    pub myopic: Assignment,
    pub solved: ProgramSolved,
    /// Columns of the programme's exact model.
    pub columns: usize,
    /// True when the exact model could not finish in the time left and was not run.
    pub exact_skipped: bool,
    /// The deadline the searches ran to (the command's, less the outputs' time).
    pub deadline: Deadline,
}

/// Plan `horizon` on the prepared landscape with one budget (and crew-hour limit) per season.
///
/// One deadline for the whole command: the season-by-season plan gets a quarter of the time
/// left, the season bounds (valid wherever their solves stop) a third of what then remains, and
/// the programme itself the rest; within each phase the seasons share their part. When the
/// programme's MIP is too large for HiGHS to start on in that rest, the bounds get all of it
/// (the season-by-season plan then stands, and only its proven gap can improve).
pub fn plan_program<'a>(
    prepared: &'a Prepared,
    horizon: &Horizon,
    budgets: &[f64],
    hours: Option<&[f64]>,
    command: Deadline,
    solver: &SolverSection,
    printer: Printer,
) -> Result<ProgramRun<'a>> {
    let courses = prepared
        .patches
        .items
        .iter()
        .enumerate()
        .map(|(i, p)| {
            if prepared.excluded[i] {
                Vec::new()
            } else {
                super::courses(&prepared.catalogue, p, &prepared.choices[i], horizon)
            }
        })
        .collect();
    let problem = ProgramProblem {
        model: &prepared.model,
        courses,
        untreated: horizon.untreated(),
        weights: horizon.weights(),
        budgets: budgets.to_vec(),
        hours: hours.map(|h| h.to_vec()),
        required: prepared.required.clone(),
    };
    let deadline = crate::planning::plan::keep_for_outputs(
        command,
        solver.time_limit_s,
        prepared.patches.len(),
        horizon.seasons,
        printer,
    );
    let limits = Limits {
        max_memory_gb: solver.max_memory_gb,
        formulation: solver.formulation,
        ..Limits::until(deadline, solver.gap)
    };
    printer.progress("planning season by season (the myopic comparison)");
    let myopic = super::myopic(
        &problem,
        Limits {
            deadline: deadline.fraction(0.25),
            ..limits
        },
    )?;
    printer.progress("bounding each season from below");
    // The programme's MIP is worth its time when HiGHS would get at least as long to search
    // as it may overrun by.
    let exact_fits = deadline.fraction(2.0 / 3.0).remaining_s()
        >= 2.0 * crate::solve::mip::highs::highs_overrun_s(super::columns(&problem));
    let floor = super::season_floor(
        &problem,
        Limits {
            deadline: deadline.fraction(if exact_fits { 1.0 / 3.0 } else { 1.0 }),
            ..limits
        },
    )?;
    let columns = super::columns(&problem);
    let exact_skipped = crate::solve::mip::highs::highs_cannot_finish(columns, &limits);
    if exact_skipped {
        printer.note(format_args!(
            "note: the programme's exact model ({columns} columns) cannot be solved in the {:.1} s left of `--time-limit-s {}`: the season-by-season plan stands, bounded by the season floor",
            deadline.remaining_s(),
            solver.time_limit_s
        ));
    } else {
        printer.progress(&format!("optimising {} seasons together", horizon.seasons));
    }
    let solved = super::solve(&problem, limits, Some(&myopic), floor)?;
    if solved.status == Status::Infeasible {
        return Err(Error::input_with_hint(
            "no programme fits: the required patches cannot be treated within the seasons' budgets and hours",
            "raise `--budgets`, or require fewer patches",
        ));
    }
    Ok(ProgramRun {
        problem,
        myopic,
        solved,
        columns,
        exact_skipped,
        deadline,
    })
}
