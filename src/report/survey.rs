//! The survey plan's files: survey_sites.csv, survey.geojson, survey_curve.csv,
//! survey_curve.svg, summary.json, cautions.txt and survey_methods.used.toml.

use serde::Serialize;

use crate::core::cautions;
use crate::core::error::Result;
use crate::input::gis::{self, Property, ToLonLat};
use crate::input::survey_methods::SurveyMethods;
use crate::model::survey::{Rates, detect_in};
use crate::planning::survey::{SurveyPlan, SurveyRequest};
use crate::report::chart::{self, Marker, Series, Style};
use crate::report::format;
use crate::report::staging::Staging;

/// The columns of survey_sites.csv.
pub const SITE_COLUMNS: [&str; 17] = [
    "rank",
    "site_id",
    "kind",
    "x",
    "y",
    "lon",
    "lat",
    "visits",
    "method",
    "months",
    "hours",
    "p_present",
    "p_detect_visit",
    "expected_finds",
    "why",
    "look_for",
    "caution",
];

/// summary.json.
#[derive(Debug, Serialize)]
pub struct Summary {
    pub command: &'static str,
    /// What is maximised: `expected finds` or `host-weighted expected finds`.
    pub objective_name: String,
    pub objective: f64,
    /// Expected populations found, unweighted (sum of p_present x (1 - (1 - d)^visits)).
    pub expected_finds: f64,
    /// Proven upper bound on the objective.
    pub bound: f64,
    /// (bound - objective) / bound.
    pub gap: f64,
    pub status: String,
    pub hours_available: f64,
    pub hours_used: f64,
    pub sites_chosen: usize,
    pub visits: u32,
    pub candidate_sites: usize,
    pub known_populations: usize,
    pub season: Option<i32>,
    pub history_years: u32,
    pub rates: RatesOut,
    pub travel: String,
    pub depot: [f64; 2],
    pub survey_methods: String,
    pub surveys_read: usize,
    pub surveys_unassigned: usize,
    pub surveys_outside_history: usize,
}

#[derive(Debug, Serialize)]
pub struct RatesOut {
    pub colonisation: f64,
    pub introduction: f64,
    pub source: String,
    pub past_detection: f64,
}

fn r(v: f64, digits: i32) -> String {
    let m = 10f64.powi(digits);
    format!("{}", (v * m).round() / m + 0.0)
}

/// The travel assumption in words.
pub fn travel_text(req: &SurveyRequest) -> String {
    format!(
        "each visit drives from the depot there and back: straight line x {} at {} km/h (no road layer); routing several sites in one day needs less time, so the hours are conservative",
        req.detour, req.speed_kmh
    )
}

/// Write every file into the staging folder; returns the summary.
pub fn write(
    staging: &Staging,
    crs: &gis::Crs,
    plan: &SurveyPlan,
    methods: &SurveyMethods,
    req: &SurveyRequest,
) -> Result<Summary> {
    let order = plan.chosen_order();
    let to = ToLonLat::new(crs)?;
    let points: Vec<(f64, f64)> = order
        .iter()
        .map(|&i| (plan.sites[i].x, plan.sites[i].y))
        .collect();
    let lonlat = to.points(&points)?;
    let rates: Rates = req.rates;
    let mut rows = Vec::with_capacity(order.len());
    let mut features = Vec::with_capacity(order.len());
    for (k, &i) in order.iter().enumerate() {
        let s = &plan.sites[i];
        let v = plan.visits[i].expect("chosen");
        let m = &methods.methods[v.method];
        let hours = v.visits as f64 * (m.hours_per_visit + s.access_hours);
        let finds = s.p_present * detect_in(v.visits, m.detect_per_visit);
        let why = plan.why(i, rates);
        let months = SurveyMethods::months_text(m);
        rows.push(vec![
            (k + 1).to_string(),
            s.id.clone(),
            s.kind.to_string(),
            r(s.x, 2),
            r(s.y, 2),
            r(lonlat[k].0, 7),
            r(lonlat[k].1, 7),
            v.visits.to_string(),
            m.id.clone(),
            months.clone(),
            r(hours, 2),
            r(s.p_present, 4),
            r(m.detect_per_visit, 4),
            r(finds, 4),
            why.clone(),
            m.look_for.clone(),
            cautions::SURVEY.to_string(),
        ]);
        features.push((
            geo::Geometry::Point(geo::Point::new(s.x, s.y)),
            vec![
                Property::Integer(k as i64 + 1),
                Property::Text(s.id.clone()),
                Property::Integer(v.visits as i64),
                Property::Text(m.id.clone()),
                Property::Text(months),
                Property::Number((hours * 100.0).round() / 100.0),
                Property::Number((s.p_present * 1e4).round() / 1e4),
                Property::Number((finds * 1e4).round() / 1e4),
                Property::Text(why),
                Property::Text(cautions::SURVEY.to_string()),
            ],
        ));
    }
    staging.write(
        "survey_sites.csv",
        crate::core::csv_cells::bytes(&SITE_COLUMNS, &rows)?,
    )?;
    let fields = [
        ("rank", Property::Integer(0)),
        ("site_id", Property::Text(String::new())),
        ("visits", Property::Integer(0)),
        ("method", Property::Text(String::new())),
        ("months", Property::Text(String::new())),
        ("hours", Property::Number(0.0)),
        ("p_present", Property::Number(0.0)),
        ("expected_finds", Property::Number(0.0)),
        ("why", Property::Text(String::new())),
        ("caution", Property::Text(String::new())),
    ];
    gis::write_geojson(&staging.path("survey.geojson"), crs, &fields, &features)?;

    let curve_rows: Vec<Vec<String>> = plan
        .curve
        .iter()
        .map(|&(h, v, b, optimal)| {
            vec![
                r(h, 2),
                r(v, 5),
                r(b, 5),
                if optimal { "optimal" } else { "time limit" }.to_string(),
            ]
        })
        .collect();
    staging.write(
        "survey_curve.csv",
        crate::core::csv_cells::bytes(
            &["survey_hours", "objective", "bound", "status"],
            &curve_rows,
        )?,
    )?;
    let y_max = plan.curve.iter().map(|c| c.1).fold(0.0, f64::max) * 1.1;
    let svg = chart::line_chart(
        &format!(
            "{} against survey hours (exact at each point)",
            objective_name(req)
        ),
        "survey hours",
        &objective_name(req),
        &|x| format::thousands(x),
        if y_max > 0.0 { y_max } else { 1.0 },
        &[Series {
            id: "finds".into(),
            label: objective_name(req),
            points: plan.curve.iter().map(|c| (c.0, c.1)).collect(),
            style: Style::Main,
        }],
        &[Marker {
            x: req.hours,
            label: format!("{} h asked for", format::thousands(req.hours)),
            strong: true,
        }],
    );
    staging.write("survey_curve.svg", svg)?;
    staging.write(
        "cautions.txt",
        format!(
            "SURVEY CAUTIONS - read before going out\n{}\nThis list says where survey hours are most likely to find an undetected population; it does not replace your state's survey protocol. Survey only with the landowner's permission.\n\n{}\n",
            cautions::SURVEY,
            cautions::standing_text()
        ),
    )?;
    staging.write("survey_methods.used.toml", &methods.text)?;
    let summary = Summary {
        command: "survey",
        objective_name: objective_name(req),
        objective: plan.chosen.value,
        expected_finds: plan.expected_finds,
        bound: plan.chosen.bound,
        gap: plan.chosen.gap,
        status: match plan.chosen.status {
            crate::solve::problem::Status::Optimal => "optimal".into(),
            _ => "time limit".into(),
        },
        hours_available: req.hours,
        hours_used: plan.chosen.hours,
        sites_chosen: order.len(),
        visits: plan.visits.iter().flatten().map(|v| v.visits).sum(),
        candidate_sites: plan.sites.iter().filter(|s| !s.known).count(),
        known_populations: plan.sites.iter().filter(|s| s.known).count(),
        season: plan.season,
        history_years: plan.history_years,
        rates: RatesOut {
            colonisation: req.rates.colonisation,
            introduction: req.rates.introduction,
            source: req.rates_source.clone(),
            past_detection: req.past_detection,
        },
        travel: travel_text(req),
        depot: [plan.depot.0, plan.depot.1],
        survey_methods: methods.origin.clone(),
        surveys_read: plan.surveys_read,
        surveys_unassigned: plan.surveys_unassigned,
        surveys_outside_history: plan.surveys_outside_window,
    };
    let json = serde_json::to_string_pretty(&summary)
        .map_err(|e| crate::core::error::Error::Internal(format!("summary.json: {e}")))?;
    staging.write("summary.json", json + "\n")?;
    Ok(summary)
}

/// The objective in words.
pub fn objective_name(req: &SurveyRequest) -> String {
    if req.weight_host {
        "host-weighted expected finds".into()
    } else {
        "expected finds".into()
    }
}
