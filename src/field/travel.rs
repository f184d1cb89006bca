//! How crews travel between the depot and the stops, for `orders`: either straight-line distance
//! x a detour factor at one speed (an assumption, used only without `--roads`), or shortest paths
//! on a road layer (`--roads`, [`crate::field::network`]).
//!
//! Takes the travel model and the points (point 0 the depot); gives [`Legs`]: hours and
//! kilometres between every pair, the points farther from a road than the walk limit, the points
//! the depot cannot reach by road (or not get back from), and the route geometry of a visit.
//!
//! What happens to a stand no road reaches (another road piece than the depot's, or one-way
//! streets that leave no way there or back): it is **not scheduled** — never bridged by a straight
//! line — and every output lists it (stdout, report.html, orders.csv, orders.json). A stand
//! farther than the walk limit from the nearest road is scheduled with the walk counted at walking
//! speed each way, and listed so its access is checked.
//!
//! # Units
//! Coordinates in the working CRS (metres); hours; kilometres; speeds in km/h.

use std::path::{Path, PathBuf};

use crate::core::error::Result;
use crate::field::network::{
    NetworkOptions, RoadNetwork, SpeedTable, Travel, TravelMethod, Unreachable,
};
use crate::field::routing::Matrix;
use crate::input::gis::Crs;
use crate::input::roads::{FieldSource, RoadFields, RoadSkips, read_roads};

/// The road layer the user named, as resolved from the flags.
#[derive(Debug, Clone, PartialEq)]
pub struct RoadSettings {
    pub path: PathBuf,
    pub fields: RoadFields,
    /// One speed for every drivable road (`--road-speed-kmh`), instead of the class table and
    /// the layer's own speeds.
    pub speed_kmh: Option<f64>,
}

/// A road layer read and built into a routable network.
#[derive(Debug, Clone)]
pub struct Roads {
    pub settings: RoadSettings,
    pub layer_name: String,
    pub driver: String,
    pub source_crs: String,
    /// Where the class, one-way flag and speed were read from.
    pub class_source: FieldSource,
    pub oneway_source: FieldSource,
    pub speed_source: FieldSource,
    pub network: RoadNetwork,
    /// The drivable roads as lines in the working CRS, for the maps.
    pub lines: Vec<Vec<(f64, f64)>>,
    pub skips: RoadSkips,
    /// Walking speed between a stand and its road, km/h, and the walk beyond which a stand is
    /// reported, metres.
    pub walk_kmh: f64,
    pub max_walk_m: f64,
}

/// How travel times are found.
#[derive(Debug, Clone)]
pub enum TravelModel {
    /// Straight-line distance x `detour` at `speed_kmh` (an assumption).
    StraightLine { detour: f64, speed_kmh: f64 },
    /// Shortest paths on a road network.
    Roads(Box<Roads>),
}

/// Read the road layer and build its network, in the working CRS.
pub fn load_roads(settings: &RoadSettings, crs: &Crs) -> Result<Roads> {
    let mut layer = read_roads(&settings.path, crs, &settings.fields)?;
    let mut options = NetworkOptions::default();
    if let Some(kmh) = settings.speed_kmh {
        // One speed for every road that is driven at all: classes that are not driven
        // (footways, paths, ...) stay so; the layer's own speeds are not used.
        let mut speeds = SpeedTable::osm_defaults();
        speeds.drive_all_at(kmh);
        options.speeds = speeds;
        for s in &mut layer.segments {
            s.speed_kmh = None;
        }
    }
    let network = RoadNetwork::build(&layer.segments, &options)?;
    let lines = layer
        .segments
        .iter()
        .filter(|s| options.speeds.speed(s).is_some())
        .map(|s| s.points.clone())
        .collect();
    Ok(Roads {
        settings: settings.clone(),
        layer_name: layer.layer_name,
        driver: layer.driver,
        source_crs: layer.source_crs,
        class_source: layer.class,
        oneway_source: layer.oneway,
        speed_source: layer.speed,
        network,
        lines,
        skips: layer.skips,
        walk_kmh: options.walk_kmh,
        max_walk_m: options.max_walk_m,
    })
}

fn file_name(path: &Path) -> String {
    path.file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| path.display().to_string())
}

impl TravelModel {
    /// The model's name in outputs: `road network` or `straight line`.
    pub fn name(&self) -> &'static str {
        match self {
            TravelModel::StraightLine { .. } => "straight line",
            TravelModel::Roads(_) => "road network",
        }
    }

    /// [`TravelModel::describe`] and, by road, how the travel matrix among `legs` was searched.
    pub fn describe_legs(&self, legs: &Legs) -> String {
        match legs.search_method() {
            Some(method) => format!("{}; travel matrix by {}", self.describe(), method.as_str()),
            None => self.describe(),
        }
    }

    /// One sentence saying how travel was found, for stdout and the report.
    pub fn describe(&self) -> String {
        match self {
            TravelModel::StraightLine { detour, speed_kmh } => format!(
                "straight line x {detour} at {speed_kmh} km/h, an assumption rather than a road network (give a road layer with `--roads`)"
            ),
            TravelModel::Roads(r) => {
                let speeds = match r.settings.speed_kmh {
                    Some(kmh) => format!("{kmh} km/h on every drivable road"),
                    None => "speeds from the layer, else by road class (OpenStreetMap defaults)"
                        .to_string(),
                };
                format!(
                    "road network: shortest drives on {} (layer `{}`, {:.1} km of drivable road in {} piece{}; {speeds}; walks between road and stand at {} km/h)",
                    file_name(&r.settings.path),
                    r.layer_name,
                    r.network.stats.road_km,
                    r.network.pieces.len(),
                    if r.network.pieces.len() == 1 { "" } else { "s" },
                    r.walk_kmh,
                )
            }
        }
    }

    /// Travel among `points` (point 0 the depot).
    pub fn legs(&self, points: &[(f64, f64)]) -> Result<Legs> {
        let n = points.len();
        match self {
            TravelModel::StraightLine { detour, speed_kmh } => {
                let mut hours = vec![0.0; n * n];
                let mut km = vec![0.0; n * n];
                for i in 0..n {
                    for j in 0..n {
                        let d = (points[i].0 - points[j].0).hypot(points[i].1 - points[j].1);
                        // The same arithmetic as `Matrix::from_points`.
                        hours[i * n + j] = d * detour / (speed_kmh * 1000.0);
                        km[i * n + j] = d * detour / 1000.0;
                    }
                }
                Ok(Legs {
                    n,
                    hours,
                    km,
                    points: points.to_vec(),
                    road: None,
                })
            }
            TravelModel::Roads(r) => {
                let threads = std::thread::available_parallelism()
                    .map(|t| t.get())
                    .unwrap_or(1)
                    .min(4);
                let mut travel = r.network.travel(points, threads)?;
                // The matrices move here; the travel keeps its snaps for the route lines.
                let hours = std::mem::take(&mut travel.hours);
                let km = std::mem::take(&mut travel.km);
                Ok(Legs {
                    n,
                    hours,
                    km,
                    points: points.to_vec(),
                    road: Some(travel),
                })
            }
        }
    }
}

/// Travel among the depot (0) and the stops' points.
#[derive(Debug, Clone)]
pub struct Legs {
    pub n: usize,
    hours: Vec<f64>,
    km: Vec<f64>,
    points: Vec<(f64, f64)>,
    road: Option<Travel>,
}

impl Legs {
    pub fn hours(&self, i: usize, j: usize) -> f64 {
        self.hours[i * self.n + j]
    }

    /// Road km of the drive (straight-line km x detour without roads).
    pub fn km(&self, i: usize, j: usize) -> f64 {
        self.km[i * self.n + j]
    }

    /// The routing matrix among `keep` (`keep[0]` becomes node 0).
    pub fn matrix(&self, keep: &[usize]) -> Matrix {
        let mut t = Vec::with_capacity(keep.len() * keep.len());
        for &i in keep {
            for &j in keep {
                t.push(self.hours(i, j));
            }
        }
        Matrix::from_rows(keep.len(), t)
    }

    /// How the road travel matrix was searched (`None` for straight-line travel).
    pub fn search_method(&self) -> Option<TravelMethod> {
        self.road.as_ref().map(|t| t.method)
    }

    /// Points farther from every road than the walk limit, with their walk in metres.
    pub fn far_from_road(&self) -> Vec<(usize, f64)> {
        self.road
            .as_ref()
            .map(|t| t.far_from_road.clone())
            .unwrap_or_default()
    }

    /// Points with no road from the depot or back, and why.
    pub fn unreachable(&self) -> Vec<(usize, Unreachable)> {
        self.road
            .as_ref()
            .map(|t| t.unreachable.clone())
            .unwrap_or_default()
    }

    /// [`Legs::route`] of each visit, the searches spread over the machine's threads (up to 4).
    pub fn routes(&self, model: &TravelModel, visits: &[Vec<usize>]) -> Vec<Vec<(f64, f64)>> {
        let threads = std::thread::available_parallelism()
            .map(|t| t.get())
            .unwrap_or(1)
            .clamp(1, 4)
            .min(visits.len().max(1));
        if threads == 1 || self.road.is_none() {
            return visits.iter().map(|v| self.route(model, v)).collect();
        }
        let mut out: Vec<Vec<(f64, f64)>> = vec![Vec::new(); visits.len()];
        std::thread::scope(|scope| {
            let handles: Vec<_> = (0..threads)
                .map(|t| {
                    scope.spawn(move || {
                        (t..visits.len())
                            .step_by(threads)
                            .map(|k| (k, self.route(model, &visits[k])))
                            .collect::<Vec<_>>()
                    })
                })
                .collect();
            for h in handles {
                for (k, line) in h.join().expect("a route thread panicked") {
                    out[k] = line;
                }
            }
        });
        out
    }

    /// The line a crew follows on a visit of `order` (indices into the points, e.g. `[0, 3, 1,
    /// 0]`): along the roads with the walks to and from each stand, or straight lines without
    /// roads.
    pub fn route(&self, model: &TravelModel, order: &[usize]) -> Vec<(f64, f64)> {
        let mut line: Vec<(f64, f64)> = Vec::new();
        match (model, &self.road) {
            (TravelModel::Roads(r), Some(travel)) => {
                let legs = r.network.route(travel, order);
                for (w, leg) in order.windows(2).zip(legs) {
                    line.push(self.points[w[0]]);
                    line.extend(leg);
                    line.push(self.points[w[1]]);
                }
            }
            _ => line.extend(order.iter().map(|&k| self.points[k])),
        }
        line.dedup();
        line
    }
}

/// A plain reason why a stand has no road from the depot.
pub fn unreachable_reason(u: &Unreachable) -> String {
    match u {
        Unreachable::OtherPiece { piece, depot_piece } => format!(
            "its nearest road is on road piece {} and the depot's on piece {}, which no road in the layer joins",
            piece.0 + 1,
            depot_piece.0 + 1
        ),
        Unreachable::OneWay { to_point, to_depot } => match (to_point, to_depot) {
            (true, true) => "one-way streets leave no way there or back".to_string(),
            (true, false) => "one-way streets leave no way there from the depot".to_string(),
            _ => "one-way streets leave no way back to the depot".to_string(),
        },
    }
}
