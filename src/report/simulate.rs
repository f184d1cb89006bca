//! The simulation's outputs: sim.csv (occupied host per year and strategy), patch_occupancy.csv,
//! sim.svg (mean and 5–95 % band), sim.json and cautions.txt.
//!
//! # Units
//! Occupied host as a share of all host (0–1) in the CSVs, in percent on the chart.

use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::core::scenario::SimulateSection;
use crate::model::simulate;
use crate::planning::prepare::Prepared;
use crate::planning::simulate::{self as planning_sim, Simulation, pct};
use crate::report::chart::{self, Marker, Series, Style};
use crate::report::output::{self, Staging};

/// The line style of each strategy (black and white print tells them apart by dash).
fn style(id: &str) -> Style {
    match id {
        "none" => Style::LongDash,
        "plan" => Style::Main,
        "greedy" => Style::Dashed,
        "density" => Style::Dotted,
        "biggest" => Style::DashDot,
        "corridor" => Style::LongDash,
        _ => Style::DashDot,
    }
}

fn num(v: f64) -> String {
    if v.is_finite() {
        format!("{}", (v * 1e6).round() / 1e6)
    } else {
        String::new()
    }
}

/// The run's record, `simulate.resolved.toml` (not `scenario.resolved.toml`, which marks a plan
/// folder): the inputs as read, the catalogue kept beside it, and the `[simulate]` table of
/// what the simulation ran with, so `hostcut simulate --scenario simulate.resolved.toml`
/// repeats it.
pub fn write_record(
    staging: &Staging,
    prepared: &Prepared,
    record: &SimulateSection,
) -> Result<()> {
    let mut scenario = prepared.resolved.clone();
    scenario.simulate = Some(record.clone());
    output::write_record(
        staging,
        RECORD,
        &scenario,
        &prepared.catalogue_text,
        "Every input and setting this simulation used; repeat it with `hostcut simulate --scenario simulate.resolved.toml --out NEW` (a flag given again wins over its [simulate] entry).",
    )
}

/// The file name of the simulation's record.
pub const RECORD: &str = "simulate.resolved.toml";

pub fn write(staging: &Staging, prepared: &Prepared, sim: &Simulation) -> Result<()> {
    let (traces, years, runs) = (&sim.traces, sim.summary.years, sim.summary.runs);
    // sim.csv
    let mut w = crate::core::csv_cells::Writer::new();
    w.row([
        "year",
        "strategy",
        "occupied_host_mean",
        "occupied_host_p05",
        "occupied_host_p50",
        "occupied_host_p95",
        "occupied_patches_mean",
    ])?;
    let mut bands = Vec::new();
    let mut lines = Vec::new();
    for (name, t) in sim.strategies.iter().zip(traces) {
        let (label, style) = (planning_sim::label(name), style(name));
        let mut band = Vec::new();
        let mut line = Vec::new();
        for year in 0..=years as usize {
            let mut v: Vec<f64> = t.occupied_host.iter().map(|r| r[year]).collect();
            v.sort_by(f64::total_cmp);
            let mean = v.iter().sum::<f64>() / v.len() as f64;
            let count = t
                .occupied_patches
                .iter()
                .map(|r| r[year] as f64)
                .sum::<f64>()
                / t.occupied_patches.len() as f64;
            let (p05, p50, p95) = (
                simulate::quantile(&v, 0.05),
                simulate::quantile(&v, 0.5),
                simulate::quantile(&v, 0.95),
            );
            w.row([
                year.to_string(),
                name.to_string(),
                num(mean),
                num(p05),
                num(p50),
                num(p95),
                num(count),
            ])?;
            band.push((year as f64, pct(p05), pct(p95)));
            line.push((year as f64, pct(mean)));
        }
        bands.push(band);
        lines.push(Series {
            id: name.to_string(),
            label: label.to_string(),
            points: line,
            style,
        });
    }
    staging.write("sim.csv", w.into_bytes()?)?;

    // patch_occupancy.csv
    let mut w = crate::core::csv_cells::Writer::new();
    let mut header = vec!["patch_id".to_string()];
    header.extend(sim.strategies.iter().map(|s| s.to_string()));
    w.row(&header)?;
    for (i, p) in prepared.patches.items.iter().enumerate() {
        let mut row = vec![p.label.clone()];
        for t in traces {
            row.push(num(t.final_occupied[i] as f64 / runs as f64));
        }
        w.row(&row)?;
    }
    staging.write("patch_occupancy.csv", w.into_bytes()?)?;

    // sim.svg
    let y_max = bands
        .iter()
        .flatten()
        .map(|b| b.2)
        .fold(1.0, f64::max)
        .ceil();
    // A marker where a strategy first leaves less host occupied than the plan: the chart
    // shows what the verdict says.
    let markers: Vec<Marker> = sim
        .summary
        .versus_plan
        .iter()
        .filter_map(|v| {
            planning_sim::first_better_year(v).map(|year| Marker {
                x: year as f64,
                label: format!(
                    "{} below the plan from year {year}",
                    planning_sim::label(v.strategy)
                ),
                strong: false,
            })
        })
        .collect();
    let svg = chart::fan_chart(
        &format!("Occupied host over {years} years ({runs} runs; mean and 5-95% band)"),
        "year (treatment at the start of year 1)",
        "occupied host (% of all host)",
        &|x| format!("{x:.0}"),
        (y_max * 1.1).ceil(),
        &lines,
        &markers,
        &bands,
    );
    staging.write("sim.svg", &svg)?;

    // proxy.csv: the plans of the proxy check, scored by R and by the simulation.
    if sim.summary.proxy_check.is_some() {
        let mut w = crate::core::csv_cells::Writer::new();
        w.row([
            "plan",
            "risk_after",
            "mean_occupied_host_pct",
            "final_occupied_host_pct",
        ])?;
        for p in &sim.proxy_plans {
            w.row([
                p.plan.clone(),
                crate::report::format::significant(p.risk_after, 10),
                crate::report::format::significant(p.mean_occupied_host_pct, 10),
                crate::report::format::significant(p.final_occupied_host_pct, 10),
            ])?;
        }
        staging.write("proxy.csv", w.into_bytes()?)?;
    }
    let json = serde_json::to_string_pretty(&sim.summary)
        .map_err(|e| Error::Internal(format!("sim.json: {e}")))?;
    staging.write("sim.json", json + "\n")?;
    staging.write("cautions.txt", cautions::standing_text())?;
    Ok(())
}
