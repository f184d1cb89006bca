//! `hostcut curve`: the planning flags without `--budget`, the budget levels, `--jobs` and
//! `--currency`.

use super::Settings;
use crate::app::cli::CurveArgs;
use crate::core::error::{Error, Result};
use crate::planning::curve::{self, Budgets};

/// Settings of one `curve` run.
#[derive(Debug, Clone)]
pub struct CurveSettings {
    pub settings: Settings,
    pub budgets: Budgets,
    pub jobs: usize,
    /// `--currency`: the code shown on amounts instead of the catalogue's.
    pub currency: Option<String>,
    /// `--exchange-rate`: units of `currency` per unit of the catalogue's currency.
    pub exchange_rate: Option<f64>,
    /// `--plan DIR`: the plan whose budget is a level of the curve.
    pub plan_dir: Option<std::path::PathBuf>,
    /// The justification page's title, place and date.
    pub page: PageLabels,
}

pub use crate::report::curve::PageLabels;

pub fn resolve(args: &CurveArgs) -> Result<CurveSettings> {
    if args.inputs.budget.is_some() {
        return Err(Error::input_with_hint(
            "`hostcut curve` plans at many budgets, not one `--budget`",
            "use `--budgets 5000,10000,20000` or `--budget-range 0:60000:20`",
        ));
    }
    let plan_folder = super::plan_folder_of(args.plan_dir.as_deref())?;
    for b in &args.budgets {
        if !(b.is_finite() && *b >= 0.0) {
            return Err(Error::input_with_hint(
                format!("`--budgets`: {b} is not a budget of 0 or more"),
                "e.g. `--budgets 5000,10000,20000`",
            ));
        }
    }
    if let Some(rate) = args.exchange_rate
        && !(rate.is_finite() && rate > 0.0)
    {
        return Err(Error::input_with_hint(
            format!("`--exchange-rate {rate}` is not a rate above 0"),
            "give units of `--currency` per unit of the catalogue's currency, e.g. `--currency EUR --exchange-rate 0.92`",
        ));
    }
    let label = |v: &Option<String>| {
        v.as_deref()
            .map(|t| t.trim().to_string())
            .filter(|t| !t.is_empty())
    };
    if args.jobs == 0 {
        return Err(Error::input("`--jobs` must be at least 1"));
    }
    let range = args
        .budget_range
        .as_deref()
        .map(curve::parse_range)
        .transpose()?;
    let settings = super::single_kernel(
        &args.inputs,
        plan_folder,
        "curve",
        "`hostcut curve` works on one dispersal kernel; the scenarios of an ensemble apply to `hostcut plan`",
        "give one kernel, e.g. `--kernel exp:200`, to curve each scenario in turn",
    )?;
    Ok(CurveSettings {
        settings,
        budgets: if args.budgets.is_empty() {
            Budgets::Range(range)
        } else {
            Budgets::Listed(args.budgets.clone())
        },
        jobs: args.jobs,
        currency: args.currency.clone(),
        exchange_rate: args.exchange_rate,
        plan_dir: args.plan_dir.clone(),
        page: PageLabels {
            title: label(&args.title),
            place: label(&args.place),
            date: label(&args.date),
        },
    })
}
