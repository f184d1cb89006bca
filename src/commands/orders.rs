//! `hostcut orders`: crew-day work orders from a plan folder — orders.csv, orders.geojson,
//! orders.gpkg (patches, stops, routes), orders.json and a self-contained printable report.html.
//!
//! Resolves the flags (depot, workdays, start date, crew limits), builds the schedule
//! (`field::orders`) and writes the report (`report::orders`).

use std::fmt::Write as _;

use crate::app::cli::OrdersArgs;
use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::core::printer::Printer;
use crate::field::calendar::{Date, Workdays};
use crate::field::contract::{self, PlanFolder};
use crate::field::orders::{self, Options};
use crate::input::gis::{self, Crs};
use crate::report;
use crate::report::output::Staging;

fn pair(text: &str, flag: &str) -> Result<(f64, f64)> {
    let bad = || {
        Error::input_with_hint(
            format!("`{flag} {text}` is not two numbers"),
            format!("write it as `{flag} 503900,4472300` (no spaces)"),
        )
    };
    let (a, b) = text.split_once(',').ok_or_else(bad)?;
    let a: f64 = a.trim().parse().map_err(|_| bad())?;
    let b: f64 = b.trim().parse().map_err(|_| bad())?;
    if a.is_finite() && b.is_finite() {
        Ok((a, b))
    } else {
        Err(bad())
    }
}

fn today() -> Date {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs())
        .unwrap_or(0);
    Date::from_day_number((secs / 86_400) as i64)
}

pub fn run(args: &OrdersArgs, printer: Printer) -> Result<String> {
    let folder = PlanFolder::read(&args.plan_dir)?;
    let crs = Crs::parse(&folder.crs, "the plan's CRS (summary.json)")?;
    let depot = match (&args.depot, &args.depot_lonlat) {
        (Some(d), _) => Some(pair(d, "--depot")?),
        (None, Some(d)) => {
            let (lon, lat) = pair(d, "--depot-lonlat")?;
            if !(-180.0..=180.0).contains(&lon) || !(-90.0..=90.0).contains(&lat) {
                return Err(Error::input(format!(
                    "`--depot-lonlat {d}` is not a longitude,latitude (longitude first)"
                )));
            }
            let both = gis::transform_points("EPSG:4326", &crs.wkt, &[(lon, lat), (lat, lon)])
                .unwrap_or_default();
            // Latitude first is the usual slip: refuse it when the swapped pair lands by the work.
            if let (Some(centre), [given, swapped]) = (orders::default_depot(&folder), &both[..]) {
                let far = |p: &(f64, f64)| (p.0 - centre.0).hypot(p.1 - centre.1);
                if far(given) > 50_000.0 && far(swapped) < far(given) / 10.0 {
                    return Err(Error::input_with_hint(
                        format!(
                            "`--depot-lonlat {d}` lands far from the work, but reversed it lands beside it"
                        ),
                        "give longitude first, then latitude",
                    ));
                }
            }
            Some(gis::transform_points("EPSG:4326", &crs.wkt, &[(lon, lat)])?[0])
        }
        (None, None) => None,
    };
    // A depot is a yard, not a survey mark: to the centimetre, so the same place given as x,y
    // or as lon/lat (a round trip through PROJ moves it by micrometres) gives the same orders.
    let depot = depot.map(|(x, y)| ((x * 100.0).round() / 100.0, (y * 100.0).round() / 100.0));
    let workdays = Workdays::parse(&args.workdays).ok_or_else(|| {
        Error::input_with_hint(
            format!("`--workdays {}` names no days of the week", args.workdays),
            "write e.g. `mon-fri`, `mon-sat` or `mon,wed,fri`",
        )
    })?;
    let start = match &args.start_date {
        Some(s) => Date::parse(s).ok_or_else(|| {
            Error::input(format!("`--start-date {s}` is not a date like 2027-07-05"))
        })?,
        None => orders::default_start(&folder, today()),
    };
    if !(args.day_hours > 0.0 && args.day_hours <= 24.0) {
        return Err(Error::input("`--day-hours` must be above 0 and at most 24"));
    }
    if !(args.speed_kmh > 0.0 && args.speed_kmh.is_finite()) {
        return Err(Error::input("`--speed-kmh` must be above 0"));
    }
    if !(args.detour_factor >= 1.0 && args.detour_factor.is_finite()) {
        return Err(Error::input(
            "`--detour-factor` must be at least 1 (road distance is never shorter than the straight line)",
        ));
    }
    if args.crews == 0 || args.max_stops == 0 {
        return Err(Error::input(
            "`--crews` and `--max-stops` must be at least 1",
        ));
    }
    let curve_svg = match &args.curve {
        // A curve written into the plan folder itself is used without asking.
        None => std::fs::read_to_string(args.plan_dir.join("curve.svg")).ok(),
        Some(dir) => {
            let path = dir.join("curve.svg");
            let text = std::fs::read_to_string(&path).map_err(|_| {
                Error::input_with_hint(
                    format!("`{}` has no curve.svg", dir.display()),
                    "give the `--out` folder of a `hostcut curve` run",
                )
            })?;
            Some(text)
        }
    };
    let options = Options {
        depot,
        crews: args.crews,
        day_hours: args.day_hours,
        speed_kmh: args.speed_kmh,
        detour: args.detour_factor,
        start,
        workdays,
        max_stops: args.max_stops,
    };
    let schedule = orders::schedule(&folder, &options)?;

    let outlines = orders::outlines(&args.plan_dir, &crs)?;
    let ctx = report::orders::Orders::new(&folder, crs, schedule, options, outlines);

    let out = std::path::absolute(&args.out).map_err(|e| Error::io("resolve", &args.out, e))?;
    let staging = Staging::new(&out, args.force, "orders")?;
    let summary = report::orders::write(&ctx, &staging, curve_svg.as_deref())?;
    staging.commit()?;
    let s = &ctx.schedule;

    let mut text = String::new();
    if folder.planned.is_empty() {
        let _ = writeln!(
            text,
            "the plan treats no patches, so there is nothing to order (raise the plan's budget or check its eligibility rules)"
        );
    }
    if !printer.is_quiet() {
        let _ = writeln!(
            text,
            "hostcut orders: {} treated patches -> {} crew-days for {} crew{} ({} workdays from {start})",
            folder.planned.len(),
            s.days.len(),
            args.crews,
            if args.crews == 1 { "" } else { "s" },
            workdays
        );
        if let (Some(a), Some(b)) = (&summary.first_date, &summary.last_date) {
            let _ = writeln!(text, "  work from {a} to {b}");
        }
        let _ = writeln!(
            text,
            "  {:.1} h of work and {:.1} h of travel (straight line x {} at {} km/h, an assumption; depot {})",
            summary.work_hours,
            summary.travel_hours,
            args.detour_factor,
            args.speed_kmh,
            if s.depot_is_default {
                "at the centroid of the treated patches".to_string()
            } else {
                format!("{:.0},{:.0}", s.depot.0, s.depot.1)
            }
        );
        if s.split_patches > 0 {
            let _ = writeln!(
                text,
                "  {} patch{} too big for one day {} split across days",
                s.split_patches,
                if s.split_patches == 1 { "" } else { "es" },
                if s.split_patches == 1 { "is" } else { "are" }
            );
        }
    }
    for m in &s.missing {
        let _ = writeln!(
            text,
            "warning: the crews cannot finish {} inside its window ({}): {} crew-day{} missing; add crews or workdays, start earlier, or carry the work to next season",
            m.methods.join(" and "),
            contract::window(&m.months),
            m.crew_days,
            if m.crew_days == 1 { " is" } else { "s are" }
        );
    }
    if !printer.is_quiet() {
        let _ = writeln!(
            text,
            "outputs in {}: orders.csv, orders.geojson, orders.gpkg, orders.json, report.html, cautions.txt",
            out.display()
        );
    }
    text.push('\n');
    text.push_str(&cautions::standing_text());
    Ok(text)
}
