//! From a plan to crew-days: which stops each crew visits on which date, in what order, with how
//! much travel, inside each method's season window.
//!
//! 1. Every treated patch becomes a stop at its centroid with the plan's crew hours. A patch whose
//!    work plus the trip from and back to the depot does not fit one day is split into equal
//!    parts (each part carries its share of the stems) that go on different days.
//! 2. Stops are grouped by season window (methods with the same months share days). Each group
//!    gets one tour over all its stops ([`routing::order`]), which [`routing::split`] cuts into
//!    days that fit the working hours and the stop limit; each day is then ordered again (exactly
//!    up to [`routing::EXACT_MAX`] stops).
//! 3. Days go onto the calendar from the start date, `crews` per workday, earliest-closing window
//!    first and, within a window, the days that buy the most risk reduction first. The days of a
//!    split patch go to one crew on its following workdays where their window allows, and its
//!    parts are numbered in the order they are worked. Days that do not fit inside their window
//!    are kept, undated, and counted as missing crew-days.
//!
//! Travel comes from the [`TravelModel`]: shortest drives on a road network (`--roads`), or
//! straight-line distance x detour factor / speed, an assumption the outputs state. A stand no
//! road from the depot reaches is not scheduled and is listed in [`Schedule::unreached`]
//! (`field::travel` says why); one farther than the walk limit from a road is scheduled with the
//! walk counted and listed in [`Schedule::far_from_road`].

use std::collections::{BTreeMap, BTreeSet, HashMap};
use std::path::Path;

use geo::Geometry;

use crate::core::error::{Error, Result};
use crate::field::calendar::{Date, Workdays};
use crate::field::contract::{self, PlanFolder};
use crate::field::routing;
use crate::field::travel::{TravelModel, unreachable_reason};
use crate::input::gis::{self, Crs};
use crate::input::treatments::MethodId;

/// Common practice (from memory): about 2 stops of patch work per hour is already brisk; a crew
/// sheet with more than a dozen sites is hard to follow.
pub const DEFAULT_MAX_STOPS: usize = 12;

#[derive(Debug, Clone)]
pub struct Options {
    /// Depot in the plan's CRS; `None` = centroid of the treated patches.
    pub depot: Option<(f64, f64)>,
    pub crews: usize,
    pub day_hours: f64,
    pub start: Date,
    pub workdays: Workdays,
    pub max_stops: usize,
}

/// One visit of a crew to a patch (or to one part of a split patch).
#[derive(Debug, Clone)]
pub struct Stop {
    /// Row of plan.csv.
    pub row: usize,
    pub patch_id: String,
    /// 1-based part number and number of parts (1 of 1 unless the patch is split).
    pub part: usize,
    pub parts: usize,
    pub method: String,
    pub method_id: MethodId,
    /// What each size class gets at this stop (stems scaled to the part); empty without size
    /// classes.
    pub prescription: String,
    pub stems: f64,
    pub work_hours: f64,
    /// Travel from the previous stop (or the depot) to this one.
    pub travel_hours: f64,
    /// Kilometres driven from the previous stop (or the depot): road km, or straight-line km x
    /// the detour factor without roads.
    pub travel_km: f64,
    pub x: f64,
    pub y: f64,
    pub value_pct: f64,
}

/// One crew's working day.
#[derive(Debug, Clone)]
pub struct CrewDay {
    /// 1-based crew; `None` when the day could not be scheduled inside its window.
    pub crew: Option<usize>,
    /// The crew's own day number (1, 2, ...), or the number among unscheduled days.
    pub day: usize,
    pub date: Option<Date>,
    pub months: Vec<u8>,
    pub stops: Vec<Stop>,
    /// Travel from the last stop back to the depot.
    pub return_hours: f64,
    pub return_km: f64,
    /// The line driven (and walked) from the depot through the stops and back, working CRS.
    pub route: Vec<(f64, f64)>,
}

impl CrewDay {
    pub fn travel_hours(&self) -> f64 {
        self.stops.iter().map(|s| s.travel_hours).sum::<f64>() + self.return_hours
    }
    pub fn travel_km(&self) -> f64 {
        self.stops.iter().map(|s| s.travel_km).sum::<f64>() + self.return_km
    }
    pub fn work_hours(&self) -> f64 {
        self.stops.iter().map(|s| s.work_hours).sum()
    }
    pub fn hours(&self) -> f64 {
        self.travel_hours() + self.work_hours()
    }
    pub fn value_pct(&self) -> f64 {
        self.stops.iter().map(|s| s.value_pct).sum()
    }
}

/// Crew-days that did not fit their season window.
#[derive(Debug, Clone)]
pub struct Missing {
    pub months: Vec<u8>,
    pub methods: Vec<String>,
    pub crew_days: usize,
}

#[derive(Debug, Clone)]
pub struct Schedule {
    pub depot: (f64, f64),
    pub depot_is_default: bool,
    /// Scheduled days by date then crew, then the unscheduled days.
    pub days: Vec<CrewDay>,
    pub missing: Vec<Missing>,
    pub split_patches: usize,
    /// `road network` or `straight line`, and the sentence that says how travel was found.
    pub travel_model: &'static str,
    pub travel_text: String,
    /// Treated patches no road from the depot reaches (or none back): not scheduled.
    pub unreached: Vec<Unreached>,
    /// The depot (`patch_id` `depot`) and stands farther from a road than the walk limit.
    pub far_from_road: Vec<FarFromRoad>,
}

/// A treated patch left unscheduled because no road joins it to the depot.
#[derive(Debug, Clone)]
pub struct Unreached {
    /// Row of plan.csv.
    pub row: usize,
    pub patch_id: String,
    pub reason: String,
}

/// A point farther from every road than the walk limit (the walk is counted at walking speed).
#[derive(Debug, Clone)]
pub struct FarFromRoad {
    pub patch_id: String,
    pub walk_m: f64,
    pub max_walk_m: f64,
}

impl Schedule {
    pub fn scheduled(&self) -> impl Iterator<Item = &CrewDay> {
        self.days.iter().filter(|d| d.date.is_some())
    }
    pub fn missing_days(&self) -> usize {
        self.missing.iter().map(|m| m.crew_days).sum()
    }
    pub fn last_date(&self) -> Option<Date> {
        self.scheduled().filter_map(|d| d.date).max()
    }
}

/// The centroid of the treated patches (the default depot).
pub fn default_depot(folder: &PlanFolder) -> Option<(f64, f64)> {
    let n = folder.planned.len() as f64;
    (n > 0.0).then(|| {
        (
            folder.planned.iter().map(|p| p.x).sum::<f64>() / n,
            folder.planned.iter().map(|p| p.y).sum::<f64>() / n,
        )
    })
}

/// Build the crew-days for a plan folder.
pub fn schedule(folder: &PlanFolder, o: &Options, travel: &TravelModel) -> Result<Schedule> {
    let straight_ok = match travel {
        TravelModel::StraightLine { detour, speed_kmh } => *speed_kmh > 0.0 && *detour >= 1.0,
        TravelModel::Roads(_) => true,
    };
    if o.crews == 0 || o.day_hours <= 0.0 || !straight_ok {
        return Err(Error::input(
            "crews must be at least 1, day hours and speed above 0, and the detour factor at least 1",
        ));
    }
    let depot_is_default = o.depot.is_none();
    let depot = o
        .depot
        .or_else(|| default_depot(folder))
        .unwrap_or((0.0, 0.0));

    // Travel among the depot (point 0) and every treated patch (point row + 1).
    let points: Vec<(f64, f64)> = std::iter::once(depot)
        .chain(folder.planned.iter().map(|p| (p.x, p.y)))
        .collect();
    let legs = travel.legs(&points)?;
    let unreached: Vec<Unreached> = legs
        .unreachable()
        .iter()
        .map(|(k, u)| Unreached {
            row: k - 1,
            patch_id: folder.planned[k - 1].patch_id.clone(),
            reason: unreachable_reason(u),
        })
        .collect();
    let max_walk_m = match travel {
        TravelModel::Roads(r) => r.max_walk_m,
        TravelModel::StraightLine { .. } => f64::INFINITY,
    };
    let far_from_road = legs
        .far_from_road()
        .iter()
        .map(|&(k, walk_m)| FarFromRoad {
            patch_id: if k == 0 {
                "depot".to_string()
            } else {
                folder.planned[k - 1].patch_id.clone()
            },
            walk_m,
            max_walk_m,
        })
        .collect();

    // 1. Stops, split where one day is not enough.
    let mut stops: Vec<Stop> = Vec::new();
    let mut split_patches = 0;
    for (row, p) in folder.planned.iter().enumerate() {
        if unreached.iter().any(|u| u.row == row) {
            continue;
        }
        let round_trip = legs.hours(0, row + 1) + legs.hours(row + 1, 0);
        let room = o.day_hours - round_trip;
        if room <= 0.05 * o.day_hours {
            return Err(Error::input_with_hint(
                format!(
                    "patch {} is {:.1} h from the depot and back, which leaves no time for work in a {} h day",
                    p.patch_id, round_trip, o.day_hours
                ),
                "put the depot nearer the work (`--depot`), raise `--speed-kmh` or `--day-hours`, or plan a far area separately",
            ));
        }
        // Whole days of work first, the rest as a part that can share a day with other stops.
        let parts = ((p.crew_hours / room) - 1e-6).ceil().max(1.0) as usize;
        if parts > 1 {
            split_patches += 1;
        }
        // Whole stems (a crew counts stems; a raster's estimate is rounded), the last part
        // taking the rest, so the parts sum to the patch's stems.
        let mut stems_left = p.stems.round();
        for part in 1..=parts {
            let hours = if part == parts {
                p.crew_hours - room * (parts - 1) as f64
            } else {
                room
            };
            let share = hours / p.crew_hours.max(1e-12);
            let stems = if part == parts {
                stems_left
            } else {
                (p.stems.round() * share).round().min(stems_left)
            };
            stems_left -= stems;
            stops.push(Stop {
                row,
                patch_id: p.patch_id.clone(),
                part,
                parts,
                method: p.method.clone(),
                method_id: p.method_id,
                prescription: p.prescription_text(
                    &folder.catalogue,
                    if p.stems > 0.0 { stems / p.stems } else { 1.0 },
                ),
                stems,
                work_hours: hours,
                travel_hours: 0.0,
                travel_km: 0.0,
                x: p.x,
                y: p.y,
                value_pct: p.reduction_pct * share,
            });
        }
    }

    // 2. Days per season window.
    let mut groups: BTreeMap<Vec<u8>, Vec<usize>> = BTreeMap::new();
    for (k, s) in stops.iter().enumerate() {
        let method = folder.catalogue.method(s.method_id);
        let mut months = method.months.clone();
        // A prescription of several methods is done in the months every one of them allows
        // (the primary method's window when they share none).
        let shared: Vec<u8> = months
            .iter()
            .copied()
            .filter(|mo| {
                folder
                    .methods_of(&folder.planned[s.row])
                    .iter()
                    .all(|m| m.months.contains(mo))
            })
            .collect();
        if !shared.is_empty() {
            months = shared;
        }
        months.sort_unstable();
        months.dedup();
        groups.entry(months).or_default().push(k);
    }
    let mut days: Vec<CrewDay> = Vec::new();
    // Each day's visit (depot, points, depot), for its route line.
    let mut visits: Vec<Vec<usize>> = Vec::new();
    for (months, members) in &groups {
        // The group's points: the depot, then each member's patch.
        let keep: Vec<usize> = std::iter::once(0)
            .chain(members.iter().map(|&k| stops[k].row + 1))
            .collect();
        let m = legs.matrix(&keep);
        let work: Vec<f64> = std::iter::once(0.0)
            .chain(members.iter().map(|&k| stops[k].work_hours))
            .collect();
        let nodes: Vec<usize> = (1..keep.len()).collect();
        let tour = if nodes.len() <= routing::EXACT_MAX {
            routing::exact(&m, &nodes)
        } else {
            let starts = if nodes.len() > 400 { 2 } else { 8 };
            routing::heuristic(&m, &nodes, starts)
        };
        let cuts = routing::split(&m, &tour, &work, o.day_hours, o.max_stops.max(1))
            .ok_or_else(|| Error::Internal("a split stop does not fit one day".into()))?;
        let cut_days: Vec<Vec<usize>> = cuts
            .iter()
            .map(|c| routing::order(&m, &tour[c.from..c.to]))
            .collect();
        for ordered in routing::consolidate(&m, &work, cut_days, o.day_hours, o.max_stops.max(1)) {
            let mut prev = 0;
            let mut day_stops = Vec::new();
            for &node in &ordered {
                let mut s = stops[members[node - 1]].clone();
                s.travel_hours = m.get(prev, node);
                s.travel_km = legs.km(keep[prev], keep[node]);
                prev = node;
                day_stops.push(s);
            }
            let visit: Vec<usize> = std::iter::once(0)
                .chain(ordered.iter().map(|&node| keep[node]))
                .chain(std::iter::once(0))
                .collect();
            days.push(CrewDay {
                crew: None,
                day: 0,
                date: None,
                months: months.clone(),
                stops: day_stops,
                return_hours: m.get(prev, 0),
                return_km: legs.km(keep[prev], 0),
                route: Vec::new(),
            });
            visits.push(visit);
        }
    }

    for (day, route) in days.iter_mut().zip(legs.routes(travel, &visits)) {
        day.route = route;
    }

    // 3. Calendar.
    let window_end = |d: &CrewDay| d.months.iter().copied().max().unwrap_or(12);
    let first_priority = |d: &CrewDay| d.stops.iter().map(|s| s.row).min().unwrap_or(0);
    let mut pending: Vec<usize> = (0..days.len()).collect();
    pending.sort_by(|&a, &b| {
        let (da, db) = (&days[a], &days[b]);
        window_end(da)
            .cmp(&window_end(db))
            .then(db.value_pct().total_cmp(&da.value_pct()))
            .then(first_priority(da).cmp(&first_priority(db)))
    });
    // The days holding parts of one split patch (and of split patches sharing a day with them)
    // form a run, in the waiting order: a crew that starts a run is kept for its next day on
    // its next workday, where the day's window allows it (else the day waits like any other).
    let mut run_of: Vec<Option<usize>> = vec![None; days.len()];
    let mut runs: Vec<Vec<usize>> = Vec::new();
    for &k in &pending {
        if run_of[k].is_some() {
            continue;
        }
        let split = |d: &CrewDay| -> Vec<String> {
            d.stops
                .iter()
                .filter(|s| s.parts > 1)
                .map(|s| s.patch_id.clone())
                .collect()
        };
        let mut patches: BTreeSet<String> = split(&days[k]).into_iter().collect();
        if patches.is_empty() {
            continue;
        }
        // Grow the run until no other waiting day shares one of its patches.
        let mut members = vec![k];
        run_of[k] = Some(runs.len());
        loop {
            let mut grew = false;
            for &j in &pending {
                if run_of[j].is_none() && split(&days[j]).iter().any(|p| patches.contains(p)) {
                    run_of[j] = Some(runs.len());
                    members.push(j);
                    patches.extend(split(&days[j]));
                    grew = true;
                }
            }
            if !grew {
                break;
            }
        }
        let order: HashMap<usize, usize> =
            pending.iter().enumerate().map(|(n, &d)| (d, n)).collect();
        members.sort_by_key(|d| order[d]);
        runs.push(members);
    }
    let mut per_crew = vec![0usize; o.crews];
    // The run day each crew keeps for its next workday.
    let mut kept: Vec<Option<usize>> = vec![None; o.crews];
    let mut date = o.start;
    while !pending.is_empty() && date.year == o.start.year {
        if o.workdays.works(date) {
            let mut busy = vec![false; o.crews];
            let mut taken: Vec<usize> = Vec::new();
            macro_rules! assign {
                ($k:expr, $crew:expr) => {{
                    let (k, crew) = ($k, $crew);
                    per_crew[crew] += 1;
                    days[k].crew = Some(crew + 1);
                    days[k].day = per_crew[crew];
                    days[k].date = Some(date);
                    busy[crew] = true;
                    taken.push(k);
                }};
            }
            for crew in 0..o.crews {
                if let Some(k) = kept[crew].take()
                    && days[k].months.contains(&date.month)
                {
                    assign!(k, crew);
                }
            }
            let mut crew = 0;
            for &k in &pending {
                while crew < o.crews && busy[crew] {
                    crew += 1;
                }
                if crew == o.crews {
                    break;
                }
                // One day of a run a date: a run is worked day after day, not side by side.
                let run_today =
                    run_of[k].is_some_and(|r| taken.iter().any(|&t| run_of[t] == Some(r)));
                if taken.contains(&k)
                    || kept.contains(&Some(k))
                    || run_today
                    || !days[k].months.contains(&date.month)
                {
                    continue;
                }
                assign!(k, crew);
            }
            pending.retain(|k| !taken.contains(k));
            // Each crew that worked a run day keeps the run's next waiting day.
            for &k in &taken {
                let (Some(run), Some(crew)) = (run_of[k], days[k].crew) else {
                    continue;
                };
                // Rather a day of the same patches only (the next whole part), then one that
                // shares a patch (a last part beside others), then any: each patch's days in a row.
                let split = |d: usize| -> BTreeSet<&str> {
                    days[d]
                        .stops
                        .iter()
                        .filter(|s| s.parts > 1)
                        .map(|s| s.patch_id.as_str())
                        .collect()
                };
                let here = split(k);
                let next = runs[run]
                    .iter()
                    .copied()
                    .filter(|d| pending.contains(d) && !kept.contains(&Some(*d)))
                    .min_by_key(|&d| {
                        let there = split(d);
                        if there.is_subset(&here) {
                            0
                        } else if !there.is_disjoint(&here) {
                            1
                        } else {
                            2
                        }
                    });
                if kept[crew - 1].is_none() {
                    kept[crew - 1] = next;
                }
            }
        }
        date = date.plus_days(1);
    }
    // What cannot be done in its window, named by the methods of the days left over (a
    // prescription's window is the overlap of its methods' months, so no one catalogue method
    // need have exactly that window).
    let mut missing: BTreeMap<Vec<u8>, (usize, BTreeSet<String>)> = BTreeMap::new();
    for (n, &k) in pending.iter().enumerate() {
        days[k].day = n + 1;
        let e = missing.entry(days[k].months.clone()).or_default();
        e.0 += 1;
        e.1.extend(days[k].stops.iter().map(|s| s.method.clone()));
    }
    let missing = missing
        .into_iter()
        .map(|(months, (crew_days, methods))| Missing {
            months,
            methods: methods.into_iter().collect(),
            crew_days,
        })
        .collect();
    // Dated days by date and crew; then the unscheduled ones in the order they were waiting.
    days.sort_by_key(|d| (d.date.is_none(), d.date, d.crew, d.day));
    // A split patch's parts are numbered in the order they are worked (part 1 first), each
    // keeping its own stems and hours.
    let mut worked: HashMap<String, usize> = HashMap::new();
    for d in &mut days {
        for s in d.stops.iter_mut().filter(|s| s.parts > 1) {
            let n = worked.entry(s.patch_id.clone()).or_default();
            *n += 1;
            s.part = *n;
        }
    }
    Ok(Schedule {
        depot,
        depot_is_default,
        days,
        missing,
        split_patches,
        travel_model: travel.name(),
        travel_text: travel.describe_legs(&legs),
        unreached,
        far_from_road,
    })
}

/// The default first working day: today if today is inside a window of a method in the plan,
/// else the first of the next month that opens one.
pub fn default_start(folder: &PlanFolder, today: Date) -> Date {
    let months: BTreeSet<u8> = folder
        .planned
        .iter()
        .map(|p| folder.method_of(p))
        .flat_map(|m| m.months.iter().copied())
        .collect();
    if months.is_empty() || months.contains(&today.month) {
        return today;
    }
    for k in 1..=12 {
        let m0 = (today.month as u32 - 1 + k) % 12 + 1;
        let year = today.year + ((today.month as u32 - 1 + k) / 12) as i32;
        if months.contains(&(m0 as u8)) {
            return Date::new(year, m0 as u8, 1).expect("valid first of month");
        }
    }
    today
}

/// The patch outlines of the plan's map (plan.geojson), by patch id, in the working CRS; empty
/// when the folder has no map (a plan from an inventory of points).
pub fn outlines(plan_dir: &Path, crs: &Crs) -> Result<HashMap<String, Geometry<f64>>> {
    let plan_map = plan_dir.join("plan.geojson");
    let mut outlines = HashMap::new();
    if plan_map.is_file() {
        let layer = gis::read_vector(&plan_map, None, crs, None, "the plan's map", "--plan")?;
        for f in layer.features {
            if let Some(id) = f.fields.get("patch_id") {
                outlines.insert(id.as_text(), f.geometry);
            }
        }
    }
    Ok(outlines)
}

/// What the crew is told to do at one stop, in plain words, and the dates that follow from it.
#[derive(Debug, Clone)]
pub struct Instructions {
    pub text: String,
    pub fell_after: Option<Date>,
    pub follow_up: Option<String>,
}

/// Earliest date to fell stems treated on `date`: 30 days or more after treatment, so the
/// herbicide reaches the roots (Penn State Extension tree-of-heaven guidance; USDA Forest
/// Service 2014; methods notes section 6).
pub fn fell_after(date: Date) -> Date {
    date.plus_days(30)
}

pub fn instructions(folder: &PlanFolder, stop: &Stop, date: Option<Date>) -> Instructions {
    let p = &folder.planned[stop.row];
    let method = folder.method_of(p);
    let methods = folder.methods_of(p);
    let herbicide = methods.iter().any(|m| m.herbicide);
    let mut text = Vec::new();
    if p.no_herbicide() {
        text.push("NO HERBICIDE ON THIS SITE.".to_string());
    }
    if stop.prescription.is_empty() {
        text.push(method.label.clone());
    } else {
        // Which stems get which method, then each method in words.
        text.push(format!("Prescription: {}.", stop.prescription));
        for m in &methods {
            text.push(format!("{}: {}.", m.id.replace('_', " "), m.label));
        }
    }
    if stop.parts > 1 {
        text.push(format!(
            "Part {} of {}: about {:.0} of the patch's {:.0} stems today.",
            stop.part, stop.parts, stop.stems, p.stems
        ));
    }
    if herbicide {
        text.push("Apply per the product label.".into());
        if let Some(r) = p.restriction() {
            text.push(format!(
                "Restricted site ({}): confirm the site's conditions with its manager before any herbicide work.",
                r.trim_start_matches("restricted site: ")
            ));
        }
    }
    if let Some(w) = p.near_water() {
        text.push(format!(
            "Near water ({}): {}keep the label's buffer from the water.",
            w.trim_start_matches("near water: "),
            if herbicide {
                "use only a product labelled for aquatic sites; "
            } else {
                ""
            }
        ));
    } else if herbicide && p.cautions.split(';').any(|c| c == "WATER_UNCHECKED") {
        text.push("Water not checked: look for streams, ponds, wells and wetlands and keep the label's buffer.".into());
    } else if p.cautions.split(';').any(|c| c == "WATER") {
        text.push("Keep the label's buffer from water.".into());
    }
    if p.access == "permission" {
        text.push(format!(
            "Landowner permission first{}.",
            if p.contact.is_empty() {
                String::new()
            } else {
                format!(": call {} before entry", p.contact)
            }
        ));
    }
    let fell = methods
        .iter()
        .any(|m| m.cautions.iter().any(|c| c == "FELL30"));
    let fell_after = date.filter(|_| fell).map(fell_after);
    if let Some(f) = fell_after {
        text.push(format!("Do not fell treated stems before {f}."));
    }
    // The earliest follow-up of the methods used, each by its own follow-up method's window.
    let follow_up = date.and_then(|d| {
        p.methods_used()
            .into_iter()
            .filter_map(|m| method_follow_up(folder, m, d))
            .min()
    });
    if let Some(f) = &follow_up {
        text.push(format!("Follow-up visit from {f}."));
    }
    Instructions {
        text: text.join(" "),
        fell_after,
        follow_up,
    }
}

/// When the follow-up visit after method `m`, applied on `date`, is due (YYYY-MM-DD): the start
/// of its follow-up method's window next season; None for a method without the FOLLOWUP
/// caution.
pub fn method_follow_up(folder: &PlanFolder, m: MethodId, date: Date) -> Option<String> {
    let method = folder.catalogue.method(m);
    method.cautions.iter().any(|c| c == "FOLLOWUP").then(|| {
        let follow = folder.catalogue.method(folder.catalogue.follow_up_of(m));
        contract::follow_up_due(follow, (date.year, date.month, date.day))
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn felling_waits_thirty_days() {
        let d = Date::new(2027, 9, 20).unwrap();
        assert_eq!(fell_after(d).to_string(), "2027-10-20");
    }
}
