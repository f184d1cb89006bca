//! `hostcut orders`: the flags checked and resolved before anything is scheduled — the plan
//! folder read, the depot (x,y or lon/lat, with the latitude-first slip refused), workdays, the
//! start date, crew limits, the budget curve to include, and the travel model: a road layer
//! (`--roads` with its layer, field and speed flags) or straight line x detour at one speed.
//!
//! A flag that only means something for the other travel model is refused, never dropped:
//! `--speed-kmh` and `--detour-factor` with `--roads`; the `--roads-*` flags without it (clap).
//!
//! # Units
//! Depot in the plan's CRS (metres) or WGS 84 degrees; hours; km/h.

use std::path::PathBuf;

use crate::app::cli::OrdersArgs;
use crate::core::error::{Error, Result};
use crate::field::calendar::{Date, Workdays};
use crate::field::contract::PlanFolder;
use crate::field::orders::{self, Options};
use crate::field::travel::RoadSettings;
use crate::input::gis::{self, Crs};
use crate::input::roads::{NamedFields, RoadFields};

/// Straight-line travel when no road layer is given: the speed and detour factor (common
/// practice for rural roads, from memory; stated in every output as an assumption).
pub const DEFAULT_SPEED_KMH: f64 = 30.0;
pub const DEFAULT_DETOUR: f64 = 1.3;

/// How travel is to be found, as the user asked.
#[derive(Debug, Clone, PartialEq)]
pub enum TravelSettings {
    StraightLine { detour: f64, speed_kmh: f64 },
    Roads(RoadSettings),
}

/// Settings of one `orders` run.
pub struct OrdersSettings {
    pub folder: PlanFolder,
    pub plan_dir: PathBuf,
    pub crs: Crs,
    pub options: Options,
    pub travel: TravelSettings,
    /// The budget curve's SVG to include, when there is one.
    pub curve_svg: Option<String>,
    pub out: PathBuf,
    pub force: bool,
}

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

fn depot(args: &OrdersArgs, folder: &PlanFolder, crs: &Crs) -> Result<Option<(f64, f64)>> {
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
            if let (Some(centre), [given, swapped]) = (orders::default_depot(folder), &both[..]) {
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
    Ok(depot.map(|(x, y)| ((x * 100.0).round() / 100.0, (y * 100.0).round() / 100.0)))
}

fn travel(args: &OrdersArgs) -> Result<TravelSettings> {
    let Some(path) = &args.roads else {
        let speed_kmh = args.speed_kmh.unwrap_or(DEFAULT_SPEED_KMH);
        let detour = args.detour_factor.unwrap_or(DEFAULT_DETOUR);
        if !(speed_kmh > 0.0 && speed_kmh.is_finite()) {
            return Err(Error::input("`--speed-kmh` must be above 0"));
        }
        if !(detour >= 1.0 && detour.is_finite()) {
            return Err(Error::input(
                "`--detour-factor` must be at least 1 (road distance is never shorter than the straight line)",
            ));
        }
        return Ok(TravelSettings::StraightLine { detour, speed_kmh });
    };
    for (given, flag) in [
        (args.speed_kmh.is_some(), "--speed-kmh"),
        (args.detour_factor.is_some(), "--detour-factor"),
    ] {
        if given {
            return Err(Error::input_with_hint(
                format!(
                    "`{flag}` is for straight-line travel, but `--roads` routes on the road network"
                ),
                format!(
                    "drop `{flag}`; with `--roads`, speeds come from the road layer and its classes, or give one speed for every road with `--road-speed-kmh`"
                ),
            ));
        }
    }
    if let Some(kmh) = args.road_speed_kmh
        && !(kmh > 0.0 && kmh.is_finite())
    {
        return Err(Error::input("`--road-speed-kmh` must be above 0"));
    }
    let defaults = RoadFields::default();
    let fields = RoadFields {
        layer: args.roads_layer.clone(),
        class: args.roads_class_field.clone().unwrap_or(defaults.class),
        oneway: args.roads_oneway_field.clone().unwrap_or(defaults.oneway),
        speed: args.roads_speed_field.clone().unwrap_or(defaults.speed),
        named: NamedFields {
            class: args.roads_class_field.is_some(),
            oneway: args.roads_oneway_field.is_some(),
            speed: args.roads_speed_field.is_some(),
        },
    };
    let path = std::path::absolute(path).map_err(|e| Error::io("resolve", path, e))?;
    Ok(TravelSettings::Roads(RoadSettings {
        path,
        fields,
        speed_kmh: args.road_speed_kmh,
    }))
}

pub fn resolve(args: &OrdersArgs) -> Result<OrdersSettings> {
    let folder = PlanFolder::read(&args.plan_dir)?;
    let crs = Crs::parse(&folder.crs, "the plan's CRS (summary.json)")?;
    let depot = depot(args, &folder, &crs)?;
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
    let travel = travel(args)?;
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
    let out = std::path::absolute(&args.out).map_err(|e| Error::io("resolve", &args.out, e))?;
    Ok(OrdersSettings {
        folder,
        plan_dir: args.plan_dir.clone(),
        crs,
        options: Options {
            depot,
            crews: args.crews,
            day_hours: args.day_hours,
            start,
            workdays,
            max_stops: args.max_stops,
        },
        travel,
        curve_svg,
        out,
        force: args.force,
    })
}
