//! The exact MIP written to an MPS file through HiGHS's own writer (`--write-mps`).

use crate::core::error::{Error, Result};
use crate::core::scenario::Formulation;
use crate::solve::mip::compact::build_compact;
use crate::solve::mip::direct::build_direct;
use crate::solve::mip::highs::Built;
use crate::solve::mip::transport::build_transport;
use crate::solve::problem::Problem;

/// Write the exact MIP in the given formulation (no warm start) to an MPS file through HiGHS's own writer. The objective is R x 1000 / R before, with the constant
/// carried by a column fixed at 1, so its optimum times R before / 1000 is the least achievable R.
pub fn write_mps(
    problem: &Problem,
    path: &std::path::Path,
    formulation: Formulation,
) -> Result<()> {
    let risk_before = problem.model.risk_before();
    if risk_before <= 0.0 {
        return Err(Error::input("there is no risk to model: nothing to write"));
    }
    let ext_ok = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("mps"));
    if !ext_ok {
        return Err(Error::input_with_hint(
            format!(
                "`--write-mps {}`: the file must end in .mps",
                path.display()
            ),
            "e.g. `--write-mps plan.mps`",
        ));
    }
    let scale = 1e3 / risk_before;
    let Built { mut model, .. } = match formulation {
        Formulation::Transport => build_transport(problem, scale, None, None)?,
        Formulation::Compact => build_compact(problem, scale, None)?,
        Formulation::Direct => build_direct(problem, scale)?,
    };
    let file = path.to_string_lossy().into_owned();
    model.set_option("output_flag", false);
    model.set_option("write_model_to_file", true);
    model.set_option("write_model_file", file.as_str());
    // Writing happens when the run starts; stop straight after.
    model.set_option("time_limit", 0.0);
    let _ = model.try_solve();
    if !path.is_file() {
        return Err(Error::Internal(format!(
            "HiGHS did not write `{}`",
            path.display()
        )));
    }
    Ok(())
}
