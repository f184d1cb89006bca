//! `hostcut survey`: where this season's survey hours find the most undetected populations.
//!
//! Candidate sites are the plan's patches and the user's sites (`--sites`); each gets
//! p_present from [`crate::model::survey`] (known populations — the detection layer and positive
//! survey records — are the sources, not candidates), each method of the catalogue and each
//! number of visits 1..V an option of hours visits x (hours per visit + the drive from the depot
//! there and back) and value w_i p_i (1 - (1 - d)^visits), and the choice is the exact
//! multiple-choice knapsack of [`crate::solve::survey`], at the hours asked for and at a ladder
//! of other hours for the curve.
//!
//! # Units
//! Metres of the working CRS; hours; km/h; probabilities.

use geo::Centroid;

use crate::core::deadline::Deadline;
use crate::core::error::{Error, Result};
use crate::core::kernel::Kernel;
use crate::input::gis;
use crate::input::survey_methods::SurveyMethods;
use crate::model::calibrate::surveys::{self, Placement, Survey};
use crate::model::survey::{self as law, History, Rates, SiteModel};
use crate::planning::prepare::Prepared;
use crate::solve::survey::{Chosen, Knapsack, SurveyOption};

/// What `survey` was asked to do, resolved.
#[derive(Debug, Clone)]
pub struct SurveyRequest {
    pub hours: f64,
    /// V: most visits to one site.
    pub max_visits: u32,
    /// Weight each site by its host (relative host A_i; a user's site counts 1).
    pub weight_host: bool,
    /// This season's year; none: the year after the last survey record (or no year at all).
    pub season: Option<i32>,
    /// Years of history p_present grows over for a site never surveyed in them.
    pub history_years: u32,
    /// Detection probability of a past negative visit (the records do not say the method).
    pub past_detection: f64,
    /// A survey counts for the patch it falls in, else the nearest site within this distance.
    pub survey_radius_m: f64,
    pub depot: Option<(f64, f64)>,
    pub detour: f64,
    pub speed_kmh: f64,
    pub rates: Rates,
    /// Where the rates came from, in words.
    pub rates_source: String,
}

/// A user's candidate site, read from `--sites`.
#[derive(Debug, Clone)]
pub struct UserSite {
    pub label: String,
    pub geometry: geo::Geometry<f64>,
    pub x: f64,
    pub y: f64,
}

/// Read the user's sites (any GDAL point/line/polygon layer), in the working CRS; the label is
/// the `id` or `name` field when there is one, else S001, S002, ...
pub fn read_sites(path: &std::path::Path, crs: &gis::Crs) -> Result<Vec<UserSite>> {
    let layer = gis::read_vector(path, None, crs, None, "survey sites", "--sites")?;
    let field = layer
        .field("id")
        .or_else(|| layer.field("name"))
        .map(str::to_string);
    let mut out = Vec::new();
    for (k, f) in layer.features.iter().enumerate() {
        let Some(c) = f.geometry.centroid() else {
            continue;
        };
        let label = field
            .as_ref()
            .and_then(|n| f.fields.get(n))
            .map(|v| v.as_text())
            .filter(|t| !t.trim().is_empty())
            .unwrap_or_else(|| format!("S{:03}", k + 1));
        out.push(UserSite {
            label,
            geometry: f.geometry.clone(),
            x: c.x(),
            y: c.y(),
        });
    }
    if out.is_empty() {
        return Err(Error::input(format!(
            "survey sites `{}` has no features with a geometry",
            path.display()
        )));
    }
    Ok(out)
}

/// One site as the outputs show it.
#[derive(Debug, Clone)]
pub struct SiteRow {
    pub id: String,
    /// `patch` or `site` (the user's).
    pub kind: &'static str,
    pub x: f64,
    pub y: f64,
    pub geometry: geo::Geometry<f64>,
    /// A_i.
    pub host: f64,
    pub pressure: f64,
    pub corridors: Vec<String>,
    pub known: bool,
    /// S_i, connectivity to known populations, and the distance to the nearest one.
    pub connectivity: f64,
    pub nearest_known_m: Option<f64>,
    /// q_i, the yearly colonisation probability.
    pub q: f64,
    pub p_present: f64,
    pub years_since_negative: Option<usize>,
    pub negative_visits: usize,
    /// Round trip from the depot, hours.
    pub access_hours: f64,
    pub weight: f64,
}

/// What one site was given.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Visit {
    pub method: usize,
    pub visits: u32,
}

/// The survey plan and its curve.
#[derive(Debug, Clone)]
pub struct SurveyPlan {
    pub sites: Vec<SiteRow>,
    /// Per site, the option list's (method, visits).
    pub options: Vec<Vec<Visit>>,
    pub knapsack: Knapsack,
    pub chosen: Chosen,
    /// Per candidate site (index into `sites`), what was chosen.
    pub visits: Vec<Option<Visit>>,
    /// Expected finds, unweighted, of the choice.
    pub expected_finds: f64,
    /// (hours, objective, bound, proven optimal) at each level of the curve.
    pub curve: Vec<(f64, f64, f64, bool)>,
    pub depot: (f64, f64),
    pub depot_given: bool,
    pub season: Option<i32>,
    pub first_year: Option<i32>,
    pub surveys_read: usize,
    pub surveys_unassigned: usize,
    pub surveys_outside_window: usize,
    pub history_years: u32,
}

/// Plan the season's surveys.
pub fn plan_surveys(
    prepared: &Prepared,
    methods: &SurveyMethods,
    user_sites: &[UserSite],
    records: &[Survey],
    req: &SurveyRequest,
    deadline: &Deadline,
) -> Result<SurveyPlan> {
    let patches = &prepared.patches;
    let n = patches.len();
    let m = &prepared.model;
    let initial = prepared.landscape().initial;
    let mut sites: Vec<SiteRow> = Vec::with_capacity(n + user_sites.len());
    for (i, p) in patches.items.iter().enumerate() {
        sites.push(SiteRow {
            id: p.label.clone(),
            kind: "patch",
            x: p.x,
            y: p.y,
            geometry: p.geometry(),
            host: n as f64 * m.share[i],
            pressure: prepared.pressure.values[i],
            corridors: prepared.pressure.corridors[i].clone(),
            known: initial[i],
            connectivity: 0.0,
            nearest_known_m: None,
            q: 0.0,
            p_present: 0.0,
            years_since_negative: None,
            negative_visits: 0,
            access_hours: 0.0,
            weight: 1.0,
        });
    }
    for s in user_sites {
        let (pressure, corridors) = law::site_pressure(
            &s.geometry,
            (s.x, s.y),
            &prepared.corridors,
            &prepared.detections,
            prepared.detection_weight,
            prepared.kernel,
            prepared.epsilon,
        );
        sites.push(SiteRow {
            id: s.label.clone(),
            kind: "site",
            x: s.x,
            y: s.y,
            geometry: s.geometry.clone(),
            host: 1.0,
            pressure,
            corridors,
            known: false,
            connectivity: 0.0,
            nearest_known_m: None,
            q: 0.0,
            p_present: 0.0,
            years_since_negative: None,
            negative_visits: 0,
            access_hours: 0.0,
            weight: 1.0,
        });
    }
    // The records: each to the patch it falls in, else the nearest site within the radius.
    let placed = surveys::assign(records, patches, req.survey_radius_m);
    let mut at: Vec<Option<usize>> = Vec::with_capacity(records.len());
    for (r, p) in records.iter().zip(&placed) {
        at.push(match p {
            Placement::Inside(i) | Placement::Nearest(i, _) => Some(*i),
            Placement::TooFar(..) => (n..sites.len())
                .map(|k| (k, (sites[k].x - r.x).hypot(sites[k].y - r.y)))
                .filter(|&(_, d)| d <= req.survey_radius_m)
                .min_by(|a, b| a.1.total_cmp(&b.1))
                .map(|(k, _)| k),
        });
    }
    let season = req
        .season
        .or_else(|| records.iter().map(|r| r.year).max().map(|y| y + 1));
    let years = req.history_years as usize;
    let first_year = season.map(|s| s - req.history_years as i32 + 1);
    let mut histories = vec![History::default(); sites.len()];
    let (mut unassigned, mut outside) = (0, 0);
    for (r, k) in records.iter().zip(&at) {
        let Some(k) = *k else {
            unassigned += 1;
            continue;
        };
        if r.positive {
            sites[k].known = true;
            continue;
        }
        let (Some(first), Some(season)) = (first_year, season) else {
            continue;
        };
        if r.year < first || r.year > season {
            outside += 1;
            continue;
        }
        let h = &mut histories[k];
        if h.negatives.len() < years {
            h.negatives.resize(years, Vec::new());
        }
        h.negatives[(r.year - first) as usize].push(req.past_detection);
    }
    let models: Vec<SiteModel> = sites
        .iter()
        .map(|s| SiteModel {
            x: s.x,
            y: s.y,
            host: s.host,
            pressure: s.pressure,
            known: s.known,
        })
        .collect();
    let q = law::colonisation(&models, prepared.kernel, req.rates);
    let depot = req.depot.unwrap_or_else(|| centre(&sites));
    let sources: Vec<usize> = (0..sites.len()).filter(|&j| sites[j].known).collect();
    for (k, s) in sites.iter_mut().enumerate() {
        s.q = q[k];
        s.connectivity = connectivity(&models, k, prepared.kernel);
        s.nearest_known_m = sources
            .iter()
            .filter(|&&j| j != k)
            .map(|&j| (models[j].x - s.x).hypot(models[j].y - s.y))
            .min_by(f64::total_cmp);
        s.p_present = if s.known {
            1.0
        } else {
            law::p_present(q[k], years, &histories[k])
        };
        s.years_since_negative = law::years_since_negative(years, &histories[k]);
        s.negative_visits = histories[k].negatives.iter().map(Vec::len).sum();
        let d = (s.x - depot.0).hypot(s.y - depot.1);
        s.access_hours = 2.0 * d * req.detour / (req.speed_kmh * 1000.0);
        s.weight = if req.weight_host { s.host } else { 1.0 };
    }
    let mut options: Vec<Vec<Visit>> = Vec::with_capacity(sites.len());
    let mut items = Vec::with_capacity(sites.len());
    for s in &sites {
        let mut o = Vec::new();
        let mut it = Vec::new();
        if !s.known && s.p_present > 0.0 {
            for (mi, method) in methods.methods.iter().enumerate() {
                for v in 1..=req.max_visits {
                    o.push(Visit {
                        method: mi,
                        visits: v,
                    });
                    it.push(SurveyOption {
                        value: s.weight * s.p_present * law::detect_in(v, method.detect_per_visit),
                        hours: v as f64 * (method.hours_per_visit + s.access_hours),
                    });
                }
            }
        }
        let keep = crate::solve::survey::undominated(&it);
        options.push(keep.iter().map(|&k| o[k]).collect());
        items.push(keep.iter().map(|&k| it[k]).collect());
    }
    let knapsack = Knapsack {
        options: items,
        hours: req.hours,
    };
    let chosen = knapsack.solve(&deadline.fraction(0.5))?;
    let visits: Vec<Option<Visit>> = chosen
        .choice
        .iter()
        .enumerate()
        .map(|(i, c)| c.map(|o| options[i][o]))
        .collect();
    let expected_finds = visits
        .iter()
        .zip(&sites)
        .filter_map(|(v, s)| {
            v.map(|v| {
                s.p_present * law::detect_in(v.visits, methods.methods[v.method].detect_per_visit)
            })
        })
        .sum();
    let mut curve = vec![(0.0, 0.0, 0.0, true)];
    let others = CURVE_LEVELS.iter().filter(|&&f| f != 1.0).count();
    let mut done = 0;
    for f in CURVE_LEVELS {
        let hours = req.hours * f;
        let k = Knapsack {
            options: knapsack.options.clone(),
            hours,
        };
        // Each other level gets an equal share of the time left.
        let c = if f == 1.0 {
            chosen.clone()
        } else {
            done += 1;
            k.solve(&deadline.share(others + 1 - done))?
        };
        curve.push((
            hours,
            c.value,
            c.bound,
            c.status == crate::solve::problem::Status::Optimal,
        ));
    }
    Ok(SurveyPlan {
        sites,
        options,
        knapsack,
        chosen,
        visits,
        expected_finds,
        curve,
        depot,
        depot_given: req.depot.is_some(),
        season,
        first_year,
        surveys_read: records.len(),
        surveys_unassigned: unassigned,
        surveys_outside_window: outside,
        history_years: req.history_years,
    })
}

/// The survey hours of the curve, as multiples of the hours asked for.
pub const CURVE_LEVELS: [f64; 8] = [0.25, 0.5, 0.75, 1.0, 1.25, 1.5, 2.0, 3.0];

fn centre(sites: &[SiteRow]) -> (f64, f64) {
    let n = sites.len().max(1) as f64;
    (
        sites.iter().map(|s| s.x).sum::<f64>() / n,
        sites.iter().map(|s| s.y).sum::<f64>() / n,
    )
}

fn connectivity(models: &[SiteModel], k: usize, kernel: Kernel) -> f64 {
    let s = &models[k];
    models
        .iter()
        .enumerate()
        .filter(|(j, o)| *j != k && o.known)
        .map(|(_, o)| kernel.value((o.x - s.x).hypot(o.y - s.y)) * o.host)
        .sum()
}

impl SurveyPlan {
    /// The main reason a site is on the list, in words.
    pub fn why(&self, i: usize, rates: Rates) -> String {
        let s = &self.sites[i];
        let intro = rates.introduction * s.pressure;
        let mut main = if s.connectivity > intro {
            match s.nearest_known_m {
                Some(d) => format!("near a known population ({:.0} m)", d),
                None => "near a known population".to_string(),
            }
        } else if !s.corridors.is_empty() {
            format!(
                "high introduction pressure (near {})",
                s.corridors.join(", ")
            )
        } else if s.pressure > 1.0 {
            "introduction pressure from detections nearby".to_string()
        } else {
            "background introduction pressure".to_string()
        };
        if s.host >= 2.0 {
            main.push_str(&format!(" on much host ({:.1} x an average patch)", s.host));
        }
        match s.years_since_negative {
            None => main.push_str(&format!(
                "; not surveyed in the {} years of history",
                self.history_years()
            )),
            Some(y) if y >= 2 => main.push_str(&format!("; not surveyed for {y} years")),
            Some(_) => {}
        }
        main
    }

    fn history_years(&self) -> u32 {
        self.history_years
    }

    /// Indices of the sites chosen, most expected finds first.
    pub fn chosen_order(&self) -> Vec<usize> {
        let mut order: Vec<usize> = (0..self.sites.len())
            .filter(|&i| self.visits[i].is_some())
            .collect();
        let value = |i: usize| {
            self.chosen.choice[i]
                .map(|o| self.knapsack.options[i][o].value)
                .unwrap_or(0.0)
        };
        order.sort_by(|&a, &b| value(b).total_cmp(&value(a)).then(a.cmp(&b)));
        order
    }
}
