//! `hostcut contract` and `hostcut record`: the plan folder read and checked, the output folder
//! made absolute.

use std::path::PathBuf;

use crate::app::cli::{ContractArgs, RecordArgs};
use crate::core::error::{Error, Result};
use crate::field::contract::{ExtraStems, PlanFolder};
use crate::report::format::AreaUnit;

/// Settings of one `contract` run.
pub struct ContractSettings {
    pub folder: PlanFolder,
    /// Units of printed areas (bid schedule, scope of work).
    pub area_units: AreaUnit,
    pub out: PathBuf,
    pub force: bool,
}

/// Settings of one `record` run.
pub struct RecordSettings {
    pub folder: PlanFolder,
    /// The filled completion file.
    pub completed: PathBuf,
    /// How stems above the plan are treated.
    pub extra: ExtraStems,
    pub out: PathBuf,
    pub force: bool,
}

fn absolute(out: &std::path::Path) -> Result<PathBuf> {
    std::path::absolute(out).map_err(|e| Error::io("resolve", out, e))
}

pub fn contract(args: &ContractArgs) -> Result<ContractSettings> {
    let folder = PlanFolder::read(&args.plan_dir)?;
    Ok(ContractSettings {
        folder,
        area_units: AreaUnit::parse(&args.area_units).unwrap_or_default(),
        out: absolute(&args.output.out)?,
        force: args.output.force,
    })
}

pub fn record(args: &RecordArgs) -> Result<RecordSettings> {
    let pct = args.extra_stems_tolerance_pct;
    if !(pct.is_finite() && pct >= 0.0) {
        return Err(Error::input_with_hint(
            format!("`--extra-stems-tolerance-pct {pct}` must be a percentage 0 or more"),
            "the default is 25 (stems up to 25 % above the plan are accepted with a warning)",
        ));
    }
    let folder = PlanFolder::read(&args.plan_dir)?;
    Ok(RecordSettings {
        folder,
        completed: args.completed.clone(),
        extra: ExtraStems {
            tolerance: args.extra_stems_tolerance_pct / 100.0,
            accept_all: args.accept_extra_stems,
        },
        out: absolute(&args.output.out)?,
        force: args.output.force,
    })
}
