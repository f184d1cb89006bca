//! `hostcut demo`: make the invented landscape in `OUT/inputs` and plan it like any other run,
//! so `OUT` is an ordinary plan folder.

use crate::cli::{DemoArgs, PlanArgs};
use crate::demo;
use crate::error::{Error, Result};
use crate::settings;

use super::plan::RunReport;

pub fn run(args: &DemoArgs) -> Result<RunReport> {
    let out = std::path::absolute(&args.out).map_err(|e| Error::io("resolve", &args.out, e))?;
    if out.exists()
        && std::fs::read_dir(&out)
            .map(|mut d| d.next().is_some())
            .unwrap_or(false)
        && !args.force
    {
        return Err(Error::input_with_hint(
            format!("output folder `{}` is not empty", out.display()),
            "give a new folder, or add `--force` to replace it",
        ));
    }
    if args.force && out.exists() {
        std::fs::remove_dir_all(&out).map_err(|e| Error::io("replace", &out, e))?;
    }
    let inputs = out.join("inputs");
    demo::write_inputs(&inputs)?;
    let plan_args = PlanArgs {
        scenario: Some(inputs.join("scenario.toml")),
        out: Some(out.clone()),
        force: true,
        quiet: args.quiet,
        ..Default::default()
    };
    let settings = settings::resolve(&plan_args)?;
    let mut report = super::plan::run(&settings)?;
    report.text.push_str(&format!(
        "\ndemo inputs (invented Hollin County) are in {}\nopen plan.geojson in a desktop GIS; plan.csv is the prioritised treatment list\n",
        inputs.display()
    ));
    Ok(report)
}
