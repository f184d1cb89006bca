//! `hostcut plan` across dispersal scenarios: each scenario's own optimum, the weighted-mean
//! plan, the worst-case or least-regret plan, and regret.csv comparing every candidate under
//! every scenario.

use std::fmt::Write as _;

use crate::core::error::{Error, Result};
use crate::core::kernel::Kernel;
use crate::core::memory::LinkCount;
use crate::core::scenario::EnsembleSection;
use crate::core::scenario::Robust;
use crate::model::ensemble;
use crate::model::graph::LinkFinder;
use crate::model::risk::RiskModel;
use crate::planning::prepare::Prepared;
use crate::solve::mip::minmax::solve_minmax;
use crate::solve::optimise;
use crate::solve::problem::{
    Assignment, BoundSource, Limits, MinMax, Problem, Solved, SolverPath, Status,
};

/// What the plan command needs back.
pub struct EnsembleRun {
    /// The plan to write (mean, worst-case or least-regret).
    pub chosen: Solved,
    pub regret_csv: Vec<u8>,
    pub json: serde_json::Value,
    /// Lines for stdout.
    pub text: String,
}

/// Solve across the scenarios of `e`; `prepared.model` becomes their weighted mean.
pub fn solve(
    prepared: &mut Prepared,
    e: &EnsembleSection,
    budget: f64,
    crew_hours: Option<f64>,
    limits: Limits,
    progress: &dyn Fn(&str),
) -> Result<EnsembleRun> {
    let kernels: Vec<Kernel> = e
        .members
        .iter()
        .map(|m| Kernel {
            kind: m.kernel,
            alpha_m: m.alpha_m,
        })
        .collect();
    progress(&format!("building {} dispersal scenarios", kernels.len()));
    // The scenarios' links together are counted, and checked against the budget, before any
    // scenario's graph is built.
    let points: Vec<(f64, f64)> = prepared.patches.items.iter().map(|p| (p.x, p.y)).collect();
    let with_suitability = prepared.resolved.host.suitability.is_some();
    let allowed =
        prepared
            .budget
            .links_allowed(points.len(), prepared.raster_cost(), with_suitability);
    let mut total = LinkCount {
        links: 0,
        exact: true,
        visited: points.len(),
        at_least: 0,
    };
    for k in &kernels {
        let finder = LinkFinder::new(&points, *k, prepared.epsilon);
        let count = finder.count(allowed.saturating_sub(total.at_least));
        total.links += count.links;
        total.at_least += count.at_least;
        if !count.exact {
            total.exact = false;
            total.visited = count.visited;
            break;
        }
    }
    let widest = kernels
        .iter()
        .map(|k| k.cutoff(prepared.epsilon))
        .fold(0.0, f64::max);
    prepared
        .budget
        .check_links(
            &format!("the {} dispersal scenarios' graphs together", kernels.len()),
            total,
            points.len(),
            prepared.raster_cost(),
            with_suitability,
            widest,
        )
        .map_err(|e| match e {
            Error::Input { message, hint } => Error::Input {
                message,
                hint: hint.map(|h| format!("use fewer scenarios or smaller scales; {h}")),
            },
            other => other,
        })?;
    let models: Vec<RiskModel> = kernels
        .iter()
        .map(|k| prepared.model_for(*k).map(|m| m.2))
        .collect::<Result<_>>()?;
    let weights: Vec<f64> = e.members.iter().map(|m| m.weight).collect();
    let total_weight: f64 = weights.iter().sum();
    prepared.model = ensemble::combine(&models, &weights);
    let base = prepared.problem(budget, crew_hours);
    fn in_scenario<'a>(base: &Problem<'a>, m: &'a RiskModel) -> Problem<'a> {
        Problem {
            model: m,
            ..base.clone()
        }
    }

    // The searches run one after another within the command's deadline: each scenario's
    // optimum, the weighted mean, then the robust objective; each takes an equal share of the
    // time left, so time one does not need passes on to the next.
    let mut searches_left = models.len() + 1 + usize::from(e.robust != Robust::Mean);
    let mut next_limits = || {
        let share = Limits {
            deadline: limits.deadline.share(searches_left),
            ..limits
        };
        searches_left = searches_left.saturating_sub(1);
        share
    };

    // Each scenario's own optimum.
    let mut optima: Vec<Solved> = Vec::new();
    for (m, member) in models.iter().zip(&e.members) {
        progress(&format!("optimising for scenario {}", member.name));
        let solved = optimise::solve(&in_scenario(&base, m), next_limits())?;
        if solved.status == Status::Infeasible {
            return Ok(EnsembleRun {
                chosen: solved,
                regret_csv: Vec::new(),
                json: serde_json::Value::Null,
                text: String::new(),
            });
        }
        optima.push(solved);
    }
    progress("optimising the weighted mean over the scenarios");
    let best_start = optima
        .iter()
        .min_by(|a, b| {
            base.risk(&a.assignment)
                .total_cmp(&base.risk(&b.assignment))
        })
        .map(|s| s.assignment.clone());
    let mean = optimise::solve_from(&base, next_limits(), best_start.as_ref())?;
    let greedy = mean.greedy.clone();

    let risk_under = |s: usize, a: &Assignment| models[s].risk(&base.remaining(a));
    // The plans known before the robust search: each scenario's optimum, the mean plan and
    // greedy on the mean model.
    let mut known: Vec<&Assignment> = optima.iter().map(|o| &o.assignment).collect();
    known.push(&mean.assignment);
    if let Some((g, _)) = &greedy {
        known.push(g);
    }
    // The least R known per scenario: its optimum, or a plan that beat it within its gap.
    let least_known: Vec<f64> = (0..models.len())
        .map(|s| {
            known
                .iter()
                .map(|a| risk_under(s, a))
                .fold(optima[s].risk_after, f64::min)
        })
        .collect();
    // Regret is measured as a share of each scenario's least R (as regret.csv's regret_pct
    // ranks the candidates): scenarios of different kernels have R of different sizes, and an
    // absolute regret would let the largest decide alone. A scenario whose least R is 0 keeps
    // an absolute regret (no share of 0 exists).
    let minmax_for = |robust: Robust| match robust {
        Robust::Regret => MinMax {
            models: models.iter().collect(),
            offsets: least_known.clone(),
            scales: least_known
                .iter()
                .map(|&b| if b > 0.0 { 1.0 / b } else { 1.0 })
                .collect(),
        },
        _ => MinMax {
            models: models.iter().collect(),
            offsets: vec![0.0; models.len()],
            scales: vec![1.0; models.len()],
        },
    };
    let (chosen, objective) = match e.robust {
        Robust::Mean => (
            mean.clone(),
            "weighted mean of R over the scenarios".to_string(),
        ),
        robust => {
            progress(&format!(
                "optimising the {} over the scenarios",
                match robust {
                    Robust::Worst => "worst-case R",
                    _ => "largest regret",
                }
            ));
            let mm = minmax_for(robust);
            let mut starts: Vec<Assignment> = optima.iter().map(|o| o.assignment.clone()).collect();
            starts.push(mean.assignment.clone());
            if let Some((g, _)) = &greedy {
                starts.push(g.clone());
            }
            // No plan beats a scenario's proven bound there.
            let floor = optima
                .iter()
                .zip(&mm.offsets)
                .zip(&mm.scales)
                .map(|((o, off), k)| k * (o.bound - off))
                .fold(f64::NEG_INFINITY, f64::max);
            let r = solve_minmax(&base, &mm, next_limits(), &starts, floor)?;
            let objective = match robust {
                Robust::Worst => "worst-case R over the scenarios".to_string(),
                _ => {
                    "largest regret over the scenarios (R minus the scenario's least achievable R, as a share of that R)"
                        .to_string()
                }
            };
            (
                Solved {
                    risk_after: base.risk(&r.assignment),
                    assignment: r.assignment,
                    bound: r.bound,
                    gap: r.gap,
                    status: r.status,
                    seconds: r.seconds,
                    greedy: greedy.clone(),
                    path: r.path,
                    bound_from: match r.path {
                        SolverPath::MinMaxMip => BoundSource::HighsDual,
                        SolverPath::EverythingFits | SolverPath::NothingToChoose => {
                            BoundSource::Exact
                        }
                        _ => BoundSource::ScenarioBounds,
                    },
                },
                objective,
            )
        }
    };

    // Candidates under every scenario.
    let mut candidates: Vec<(String, Assignment)> =
        vec![("ensemble_mean".into(), mean.assignment.clone())];
    if e.robust != Robust::Mean {
        candidates.push((
            format!("robust_{}", e.robust.as_str()),
            chosen.assignment.clone(),
        ));
    }
    for (o, m) in optima.iter().zip(&e.members) {
        candidates.push((format!("optimum:{}", m.name), o.assignment.clone()));
    }
    if let Some((g, _)) = &greedy {
        candidates.push(("greedy".into(), g.clone()));
    }
    // The best known R per scenario: its optimum, or a candidate that did better within the gap.
    let best: Vec<f64> = (0..models.len())
        .map(|s| {
            candidates
                .iter()
                .map(|(_, a)| risk_under(s, a))
                .fold(optima[s].risk_after, f64::min)
        })
        .collect();
    let mut w = crate::core::csv_cells::Writer::new();
    w.row([
        "plan",
        "scenario",
        "kernel",
        "alpha_m",
        "weight",
        "risk_after",
        "scenario_best",
        "regret",
        "regret_pct",
        "cost",
        "n_treated",
    ])?;
    let mut plans_json = Vec::new();
    let mut worst_regret: Vec<(String, f64)> = Vec::new();
    for (name, a) in &candidates {
        let mut max_pct: f64 = 0.0;
        let mut worst_risk: f64 = 0.0;
        let mut mean_risk = 0.0;
        for (s, member) in e.members.iter().enumerate() {
            let r = risk_under(s, a);
            let regret = (r - best[s]).max(0.0);
            let pct = if best[s] > 0.0 {
                100.0 * regret / best[s]
            } else {
                0.0
            };
            max_pct = max_pct.max(pct);
            worst_risk = worst_risk.max(r);
            mean_risk += member.weight / total_weight * r;
            w.row([
                name.clone(),
                member.name.clone(),
                kernels[s].kind.as_str().to_string(),
                member.alpha_m.to_string(),
                member.weight.to_string(),
                format!("{r:.9e}"),
                format!("{:.9e}", best[s]),
                format!("{regret:.9e}"),
                format!("{pct:.4}"),
                format!("{:.2}", base.cost(a) + 0.0),
                a.iter().filter(|x| x.is_some()).count().to_string(),
            ])?;
        }
        worst_regret.push((name.clone(), max_pct));
        plans_json.push(serde_json::json!({
            "plan": name,
            "max_regret_pct": max_pct,
            "worst_risk": worst_risk,
            "mean_risk": mean_risk,
            "cost": base.cost(a) + 0.0,
        }));
    }
    let regret_csv = w.into_bytes()?;
    let mut ranked = worst_regret.clone();
    ranked.sort_by(|a, b| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0)));
    let most = &ranked[0];
    let runner = ranked.get(1);
    // The plan written is the one that optimises the objective; the candidate with the least
    // worst regret may be another plan (a regret ranking is not the worst-case objective), so
    // both are named and the headline R's meaning is stated.
    let written = if e.robust == Robust::Mean {
        "ensemble_mean".to_string()
    } else {
        format!("robust_{}", e.robust.as_str())
    };
    let written_json = plans_json
        .iter()
        .find(|p| p["plan"] == written.as_str())
        .cloned()
        .unwrap_or(serde_json::Value::Null);
    let written_regret = worst_regret
        .iter()
        .find(|r| r.0 == written)
        .map(|r| r.1)
        .unwrap_or(f64::NAN);
    let json = serde_json::json!({
        "robust": e.robust.as_str(),
        "objective": objective,
        "scenarios": e.members.iter().zip(&optima).zip(&best).map(|((m, o), b)| serde_json::json!({
            "name": m.name,
            "kernel": m.kernel.as_str(),
            "alpha_m": m.alpha_m,
            "weight": m.weight / total_weight,
            "optimum_risk": o.risk_after,
            "optimum_status": o.status.as_str(),
            "optimum_gap": o.gap,
            "best_known_risk": b,
        })).collect::<Vec<_>>(),
        "plans": plans_json,
        "written_plan": written_json,
        "most_robust": {
            "plan": most.0,
            "max_regret_pct": most.1,
            "runner_up": runner.map(|r| r.0.clone()),
            "runner_up_max_regret_pct": runner.map(|r| r.1),
        },
    });
    let mut text = String::new();
    let _ = writeln!(
        text,
        "planned across {} dispersal scenarios ({}); objective: {}",
        e.members.len(),
        e.members
            .iter()
            .map(|m| m.name.as_str())
            .collect::<Vec<_>>()
            .join(", "),
        objective
    );
    let _ = writeln!(
        text,
        "  plan written: {written} (worst-case R {:.6}, weighted-mean R {:.6} - the headline R; worst regret {:.2}%)",
        written_json["worst_risk"].as_f64().unwrap_or(f64::NAN),
        written_json["mean_risk"].as_f64().unwrap_or(f64::NAN),
        written_regret
    );
    if most.0 != written {
        let _ = writeln!(
            text,
            "  least worst regret among the candidates: {} ({:.2}%); the plan written optimises the objective above, not the regret (regret.csv)",
            most.0, most.1
        );
    }
    Ok(EnsembleRun {
        chosen,
        regret_csv,
        json,
        text,
    })
}
