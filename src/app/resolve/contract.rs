//! `hostcut contract` and `hostcut record`: the plan folder read and checked, the output folder
//! made absolute.

use std::path::PathBuf;

use crate::app::cli::{ContractArgs, RecordArgs};
use crate::core::error::{Error, Result};
use crate::field::contract::PlanFolder;

/// Settings of one `contract` run.
pub struct ContractSettings {
    pub folder: PlanFolder,
    pub out: PathBuf,
    pub force: bool,
}

/// Settings of one `record` run.
pub struct RecordSettings {
    pub folder: PlanFolder,
    /// The filled completion file.
    pub completed: PathBuf,
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
        out: absolute(&args.output.out)?,
        force: args.output.force,
    })
}

pub fn record(args: &RecordArgs) -> Result<RecordSettings> {
    let folder = PlanFolder::read(&args.plan_dir)?;
    Ok(RecordSettings {
        folder,
        completed: args.completed.clone(),
        out: absolute(&args.output.out)?,
        force: args.output.force,
    })
}
