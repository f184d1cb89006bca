//! `hostcut demo`: make the invented landscape in `OUT/inputs` and plan it like any other run,
//! so `OUT` is an ordinary plan folder. The inputs and the plan are built in one staging folder
//! and swapped in whole (see [`crate::report::output::Staging`]): `--force` replaces only an earlier
//! demo folder, never a folder of the user's.

use crate::app::cli::{DemoArgs, PlanArgs};
use crate::app::demo;
use crate::app::resolve;
use crate::core::error::{Error, Result};
use crate::core::printer::Printer;
use crate::report::output::Staging;

use super::plan::RunReport;

pub fn run(args: &DemoArgs, printer: Printer) -> Result<RunReport> {
    // `--time-limit-s` of the demo scenario counts from here, inputs written included.
    let started = std::time::Instant::now();
    let out = std::path::absolute(&args.out).map_err(|e| Error::io("resolve", &args.out, e))?;
    let staging = Staging::new(&out, args.force, "demo")?;
    let staged_inputs = staging.path("inputs");
    demo::write_inputs(&staged_inputs)?;
    let plan_args = PlanArgs {
        scenario: Some(staged_inputs.join("scenario.toml")),
        out: Some(out.clone()),
        ..Default::default()
    };
    let mut settings = resolve::resolve(&plan_args)?;
    settings.started = started;
    let mut text = super::plan::run_into(&settings, &staging, None, printer)?;
    let out = staging.commit()?;
    // Under `--quiet` the demo's stdout is the plan's: its cautions block alone.
    if !printer.is_quiet() {
        text.push_str(&format!(
        "\ndemo inputs (invented Hollin County) are in {}\nopen plan.geojson in a desktop GIS; plan.csv is the prioritised treatment list\nwork orders with the crews routed on the county's roads from its yard:\n  hostcut orders --plan {} --roads {} --depot 501250,4471750 --out {}-orders\nwhere this season's survey hours are most likely to find an undetected population:\n  hostcut survey --plan {} --hours 80 --surveys {} --depot 501250,4471750 --out {}-survey\n",
        out.join("inputs").display(),
        out.display(),
        out.join("inputs").join("roads.gpkg").display(),
        out.display(),
        out.display(),
        out.join("inputs").join("surveys.csv").display(),
        out.display()
    ));
    }
    Ok(RunReport { out, text })
}
