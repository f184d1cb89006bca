//! `hostcut survey`: where this season's survey hours find the most undetected populations.
//! Writes survey_sites.csv, survey.geojson, survey_curve.csv, survey_curve.svg, summary.json,
//! cautions.txt and survey_methods.used.toml.

use crate::app::resolve::survey::SurveySettings;
use crate::core::cautions;
use crate::core::error::Result;
use crate::core::printer::Printer;
use crate::model::calibrate::surveys;
use crate::planning::survey::{self, read_sites};
use crate::report::format;
use crate::report::survey as survey_report;

pub fn run(resolved: &SurveySettings, printer: Printer) -> Result<String> {
    let settings = &resolved.settings;
    let req = &resolved.request;
    let records = match &resolved.surveys {
        Some(path) => surveys::read_surveys(path)?,
        None => Vec::new(),
    };
    let (staging, prepared) = super::stage_and_prepare(settings, "survey", printer)?;
    let user_sites = match &resolved.sites {
        Some(path) => read_sites(path, &prepared.patches.crs)?,
        None => Vec::new(),
    };
    printer.progress("choosing sites, methods and visits");
    let plan = survey::plan_surveys(
        &prepared,
        &resolved.methods,
        &user_sites,
        &records,
        req,
        &settings.deadline(),
    )?;
    let summary = survey_report::write(
        &staging,
        &prepared.patches.crs,
        &plan,
        &resolved.methods,
        req,
    )?;
    let out = staging.commit()?;

    let mut t = printer.text();
    t.line(format_args!(
        "hostcut survey: {} candidate sites ({} patches, {} of your sites), {} known populations (detections and positive surveys: sources, not candidates){}",
        summary.candidate_sites,
        plan.sites.iter().filter(|s| s.kind == "patch" && !s.known).count(),
        plan.sites.iter().filter(|s| s.kind == "site" && !s.known).count(),
        summary.known_populations,
        match plan.season {
            Some(y) => format!("; season {y}"),
            None => String::new(),
        }
    ));
    if records.is_empty() {
        t.line(format_args!(
            "  no survey records given: every site counts as not surveyed in the {} years of history (give them with `--surveys FILE`, the `calibrate` format)",
            req.history_years
        ));
    } else {
        t.line(format_args!(
            "  {} survey records read: {} too far from any site (over {} m), {} outside the {} years of history",
            plan.surveys_read,
            plan.surveys_unassigned,
            format::thousands(req.survey_radius_m),
            plan.surveys_outside_window,
            req.history_years
        ));
    }
    t.line(format_args!(
        "survey {} site{} with {} visit{} in {} of {} hours: {} {} (sum of p_present x (1 - (1 - d)^visits))",
        summary.sites_chosen,
        if summary.sites_chosen == 1 { "" } else { "s" },
        summary.visits,
        if summary.visits == 1 { "" } else { "s" },
        format::fixed(summary.hours_used, 1),
        format::thousands(req.hours),
        format::fixed(summary.expected_finds, 2),
        "expected populations found",
    ));
    t.line(format_args!(
        "  {}: {}; {} {}, proven bound {}, gap {} (gap = (bound - found) / bound)",
        summary.objective_name,
        format::fixed(summary.objective, 3),
        if summary.status == "optimal" {
            "proven optimal"
        } else {
            "stopped at the time limit"
        },
        "(HiGHS, multiple-choice knapsack)",
        format::fixed(summary.bound, 3),
        format::share_percent(summary.gap)
    ));
    let order = plan.chosen_order();
    if !order.is_empty() {
        t.line("first sites (all in survey_sites.csv):");
        for &i in order.iter().take(8) {
            let s = &plan.sites[i];
            let v = plan.visits[i].expect("chosen");
            let m = &resolved.methods.methods[v.method];
            t.line(format_args!(
                "  {:<12} {} x {:<12} p_present {:.2}  {}",
                s.id,
                v.visits,
                m.id,
                s.p_present,
                plan.why(i, req.rates)
            ));
        }
    }
    t.line(format_args!(
        "model: yearly colonisation 1 - exp(-c A (S + iota pi)) with c {}, iota {} from {}; past negative visits count with detection {}",
        format::significant(req.rates.colonisation, 3),
        format::significant(req.rates.introduction, 3),
        req.rates_source,
        req.past_detection
    ));
    t.line(format_args!(
        "survey methods: {} (detection and hours per visit are illustrative unless you set them)",
        resolved.methods.origin
    ));
    t.line(format_args!(
        "travel: {}; depot {} at {:.0},{:.0}",
        survey_report::travel_text(req),
        if plan.depot_given {
            "(`--depot`, or the plan's scenario)"
        } else {
            "(default: the centre of the sites; set `--depot X,Y`)"
        },
        plan.depot.0,
        plan.depot.1
    ));
    t.line(format_args!(
        "outputs in {}: survey_sites.csv, survey.geojson, survey_curve.csv, survey_curve.svg, summary.json, cautions.txt, survey_methods.used.toml",
        out.display()
    ));
    // Surveys prescribe no product: the survey caution, with the treatment cautions in
    // cautions.txt for the crews that will treat what is found.
    t.cautions(
        &format!(
            "SURVEY CAUTION - read before going out\n{}\n(the treatment cautions for what is found are in cautions.txt)",
            cautions::SURVEY
        ),
        false,
    );
    Ok(t.into_string())
}
