//! `hostcut contract` (bid_schedule.csv, scope_of_work.md/.html, completion_template.csv) and
//! `hostcut record` (checks a filled completion file; writes inventory.next.csv and a planned-
//! versus-done report): resolve → `field::contract` → `report::contract` → stdout.

use crate::app::resolve::contract::{ContractSettings, RecordSettings};
use crate::core::error::Result;
use crate::core::printer;
use crate::field::{contract, plan_folder};
use crate::report::contract as contract_report;
use crate::report::output::Staging;

pub fn run_contract(settings: &ContractSettings) -> Result<String> {
    let folder = &settings.folder;
    let staging = Staging::new(&settings.out, settings.force, "contract")?;
    let items = contract::line_items(folder);
    contract_report::write_bid(&staging, folder, &items, settings.area_units)?;
    let out = staging.commit()?;
    Ok(contract_report::bid_text(folder, &items, &out))
}

pub fn run_record(settings: &RecordSettings) -> Result<String> {
    let folder = &settings.folder;
    let completion = contract::check_completion(folder, &settings.completed, settings.extra)?;
    for w in &completion.warnings {
        printer::note(format_args!("warning: {w}"));
    }
    let outlines = plan_folder::outlines(folder)?;
    let staging = Staging::new(&settings.out, settings.force, "record")?;
    let season = contract::season(folder, &completion, &outlines);
    contract_report::write_season(&staging, folder, &season)?;
    let out = staging.commit()?;
    Ok(contract_report::season_text(&season, &out))
}
