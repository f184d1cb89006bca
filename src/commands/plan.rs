//! `hostcut plan`: layers in → patches → graph → model → optimiser → plan → outputs.

use std::fmt::Write as _;
use std::path::PathBuf;

use crate::cautions;
use crate::error::{Error, Result};
use crate::graph::{self, Kernel};
use crate::layers;
use crate::model::RiskModel;
use crate::optimise::{self, Limits, Problem, Status};
use crate::output::{self, Outputs, Staging};
use crate::patches;
use crate::plan;
use crate::settings::Settings;
use crate::treatments::{self, Catalogue};

/// What a finished run reports back to the caller.
#[derive(Debug)]
pub struct RunReport {
    pub out: PathBuf,
    /// The human summary printed on stdout.
    pub text: String,
}

/// Run the whole planning job for resolved settings.
pub fn run(settings: &Settings) -> Result<RunReport> {
    let s = &settings.scenario;
    let staging = Staging::new(&settings.out, settings.force)?;
    let progress = |msg: &str| {
        if !settings.quiet {
            eprintln!("{msg}");
        }
    };

    let (catalogue, catalogue_text) = Catalogue::load(s.plan.treatments.as_deref())?;
    progress("reading layers");
    let layers = layers::load(s)?;
    let patches = patches::build(&layers, &s.host)?;
    progress(&format!(
        "{} patches from the {} host layer",
        patches.len(),
        patches.source
    ));

    let by_label = patches.by_label();
    let mut required = vec![false; patches.len()];
    let mut excluded = vec![false; patches.len()];
    for (ids, flags, flag) in [
        (&s.plan.require, &mut required, "--require"),
        (&s.plan.exclude, &mut excluded, "--exclude"),
    ] {
        for id in ids.iter() {
            match by_label.get(id.as_str()) {
                Some(p) => flags[p.index()] = true,
                None => {
                    let mut known: Vec<&str> = by_label.keys().copied().collect();
                    known.sort_unstable();
                    let sample = known.iter().take(5).copied().collect::<Vec<_>>().join(", ");
                    return Err(Error::input_with_hint(
                        format!("`{flag}`: no patch has id `{id}`"),
                        format!("use ids from patches.csv of a previous run (e.g. {sample})"),
                    ));
                }
            }
        }
    }

    let kernel = Kernel {
        kind: s.model.kernel,
        alpha_m: s.model.alpha_m,
    };
    let points: Vec<(f64, f64)> = patches.items.iter().map(|p| (p.x, p.y)).collect();
    let graph = graph::build_graph(&points, kernel, s.model.epsilon);
    let pressure = graph::pressure(
        &patches,
        &layers.corridors,
        &layers.detections,
        layers.detection_weight,
        kernel,
        s.model.epsilon,
    );
    let stems: Vec<f64> = patches.items.iter().map(|p| p.stems).collect();
    let model = RiskModel::new(&stems, &pressure.values, &graph);
    progress(&format!(
        "{} links within the kernel cutoff ({:.0} m)",
        graph.edges.len(),
        kernel.cutoff(s.model.epsilon)
    ));

    let choices: Vec<_> = patches
        .items
        .iter()
        .map(|p| treatments::choices_for(&catalogue, p))
        .collect();
    let eligible: Vec<bool> = choices
        .iter()
        .zip(&excluded)
        .map(|(c, x)| !c.is_empty() && !x)
        .collect();
    for (i, p) in patches.items.iter().enumerate() {
        if required[i] && choices[i].is_empty() {
            return Err(Error::input_with_hint(
                format!(
                    "`--require`: patch `{}` cannot be treated (access {}, herbicide {})",
                    p.label,
                    p.site.access.as_str(),
                    p.site.herbicide.as_str()
                ),
                "drop it from `--require`, or change its access rules",
            ));
        }
    }
    let budget = s.plan.budget.unwrap_or(0.0);
    let problem = Problem {
        model: &model,
        choices,
        budget,
        crew_hours: s.plan.crew_hours,
        required,
        excluded,
    };
    progress("optimising");
    let solved = optimise::solve(
        &problem,
        Limits {
            time_limit_s: s.solver.time_limit_s,
            gap: s.solver.gap,
        },
    )?;
    let plan = plan::assemble(&patches, &model, &catalogue, &problem, &solved, &s.model);

    let outputs = Outputs {
        patches: &patches,
        pressure: &pressure,
        catalogue: &catalogue,
        plan: &plan,
        eligible: &eligible,
    };
    output::write_tables(&staging, &outputs)?;
    let summary = output::summary(
        &outputs,
        budget,
        s.plan.crew_hours,
        graph.edges.len(),
        &s.model,
    );
    let json = serde_json::to_string_pretty(&summary)
        .map_err(|e| Error::Internal(format!("summary: {e}")))?;
    staging.write("summary.json", json + "\n")?;
    // The plan folder is self-contained: it keeps the catalogue it used.
    staging.write("treatments.used.toml", &catalogue_text)?;
    let mut resolved = s.clone();
    resolved.plan.treatments = Some(settings.out.join("treatments.used.toml"));
    let header = "# Every input and parameter this plan used; repeat it with `hostcut plan --scenario scenario.resolved.toml --out NEW`.\n";
    staging.write(
        "scenario.resolved.toml",
        format!("{header}{}", resolved.to_toml()?),
    )?;
    let out = staging.commit()?;

    let text = human_summary(&summary, &plan, &patches, &catalogue, &out);
    Ok(RunReport { out, text })
}

fn human_summary(
    summary: &output::Summary,
    plan: &plan::Plan,
    patches: &patches::Patches,
    catalogue: &Catalogue,
    out: &std::path::Path,
) -> String {
    let mut t = String::new();
    let c = &summary.currency;
    let _ = writeln!(
        t,
        "hostcut plan: {} patches, {} links, {} eligible for treatment",
        summary.n_patches, summary.n_edges, summary.n_eligible
    );
    if patches.dropped_slivers > 0 {
        let _ = writeln!(
            t,
            "  {} sliver patches below the minimum size were dropped",
            patches.dropped_slivers
        );
    }
    match plan.status {
        Status::Infeasible => {
            let _ = writeln!(
                t,
                "no plan fits: the required patches cost more than the budget or crew hours allow (status infeasible)"
            );
        }
        _ => {
            if plan.rows.is_empty() {
                let _ = writeln!(
                    t,
                    "the budget of {:.0} {c} buys no treatment: the cheapest eligible treatment costs more (empty plan)",
                    summary.budget
                );
            }
            let _ = writeln!(
                t,
                "treat {} patches ({:.0} stems) for {:.2} {c} of {:.2} {c}, {:.1} crew hours",
                summary.n_treated,
                summary.stems_treated,
                summary.spent,
                summary.budget,
                summary.crew_hours
            );
            let _ = writeln!(
                t,
                "connected-host risk index R {:.6} -> {:.6}: {:.1}% less (R = 1 for all host in one patch at pressure 1)",
                summary.risk_before, summary.risk_after, summary.risk_reduction_pct
            );
            if let (Some(g), Some(gr)) = (summary.greedy_reduction_pct, summary.greedy_risk_after) {
                let more = if summary.risk_after > 0.0 {
                    100.0 * (gr / summary.risk_after - 1.0)
                } else {
                    0.0
                };
                if more > 0.05 {
                    let _ = writeln!(
                        t,
                        "  the greedy benefit-per-cost plan would cut {g:.1}%, leaving {more:.1}% more risk than this plan"
                    );
                } else {
                    let _ = writeln!(
                        t,
                        "  the greedy benefit-per-cost plan would cut {g:.1}%: as good as this plan to within {more:.2}% here"
                    );
                }
            }
            let _ = writeln!(
                t,
                "metapopulation capacity {:.6} -> {:.6}",
                summary.lambda_before, summary.lambda_after
            );
            let status = match plan.status {
                Status::Optimal => "proven optimal".to_string(),
                Status::GapLimit => format!(
                    "stopped at the requested gap: within {:.4}% of optimal",
                    100.0 * plan.gap
                ),
                Status::TimeLimit => format!(
                    "stopped at the time limit: within {:.4}% of optimal (proven bound)",
                    100.0 * plan.gap
                ),
                Status::Infeasible => unreachable!(),
            };
            let _ = writeln!(
                t,
                "optimiser: {status} (status {}, gap {:.2e}, {:.1} s)",
                plan.status.as_str(),
                plan.gap,
                plan.solve_seconds
            );
            for row in plan.rows.iter().take(5) {
                let p = &patches.items[row.patch.index()];
                let _ = writeln!(
                    t,
                    "  {:>3}. {:<10} {:<16} {:>8.0} stems {:>10.2} {c}  [{}]",
                    plan.rows
                        .iter()
                        .position(|r| r.patch == row.patch)
                        .unwrap_or(0)
                        + 1,
                    p.label,
                    catalogue.method(row.choice.method).id,
                    p.stems,
                    row.choice.cost,
                    row.cautions.join(" ")
                );
            }
            if plan.rows.len() > 5 {
                let _ = writeln!(t, "  ... {} more in plan.csv", plan.rows.len() - 5);
            }
        }
    }
    let _ = writeln!(
        t,
        "outputs in {}: plan.csv, patches.csv, plan.geojson, summary.json, cautions.txt, scenario.resolved.toml",
        out.display()
    );
    t.push('\n');
    t.push_str(&cautions::standing_text());
    t
}
