//! `hostcut bench`: the exact MIP's formulations on one synthetic landscape, each solved by
//! HiGHS to the same gap and time limit, with greedy as a second baseline. Times are wall
//! seconds on this machine; compare them as ratios within one run.

use std::fmt::Write as _;

use crate::cli::{BenchArgs, KernelKind};
use crate::error::{Error, Result};
use crate::graph::Kernel;
use crate::optimise::{self, Formulation, Limits, Problem};
use crate::synthetic::{self, Spec};
use crate::treatments::{self, Catalogue};

pub fn run(args: &BenchArgs) -> Result<String> {
    if args.patches == 0
        || args.methods == 0
        || !(args.budget_share > 0.0 && args.budget_share <= 1.0)
    {
        return Err(Error::input(
            "`--patches` and `--methods` must be at least 1 and `--budget-share` in (0, 1]",
        ));
    }
    // (name, formulation, with the relaxation, rounding and local search beside HiGHS)
    let runs: Vec<(&str, Formulation, bool)> = args
        .formulations
        .iter()
        .map(|f| match f.trim() {
            "hostcut" => Ok(("hostcut", Formulation::Transport, true)),
            "transport" => Ok(("transport", Formulation::Transport, false)),
            "compact" => Ok(("compact", Formulation::Compact, false)),
            "direct" => Ok(("direct", Formulation::Direct, false)),
            other => Err(Error::input(format!(
                "`--formulations`: `{other}` is not hostcut, transport, compact or direct"
            ))),
        })
        .collect::<Result<_>>()?;
    let spec = Spec {
        patches: args.patches,
        clusters: args.clusters,
        side_m: args.side_m,
        spread_m: args.spread_m,
        kernel: Kernel {
            kind: KernelKind::Exp,
            alpha_m: args.alpha_m,
        },
        epsilon: 1e-3,
        seed: args.seed,
    };
    let land = synthetic::generate(&spec);
    let (catalogue, _) = Catalogue::load(None)?;
    let choices: Vec<_> = land
        .patches
        .iter()
        .map(|p| {
            treatments::choices_for(&catalogue, p, false)
                .into_iter()
                .filter(|c| (c.method.0 as usize) < args.methods)
                .collect::<Vec<_>>()
        })
        .collect();
    let n = land.patches.len();
    let mut problem = Problem {
        model: &land.model,
        choices,
        budget: f64::INFINITY,
        crew_hours: None,
        required: vec![false; n],
        excluded: vec![false; n],
    };
    let everything = problem.cost(&problem.everything().0);
    problem.budget = (args.budget_share * everything * 100.0).round() / 100.0;
    let mut t = String::new();
    let _ = writeln!(
        t,
        "synthetic landscape: {n} patches, {} links, {} methods, budget {:.2} ({:.0}% of treating everything), seed {}",
        land.graph.edges.len(),
        args.methods,
        problem.budget,
        100.0 * args.budget_share,
        args.seed
    );
    let _ = writeln!(
        t,
        "{:<10} {:>12} {:>14} {:>14} {:>10} {:>9}",
        "method", "status", "risk after", "bound", "gap", "seconds"
    );
    let clock = std::time::Instant::now();
    if let Some((_, r)) = optimise::greedy(&problem) {
        let _ = writeln!(
            t,
            "{:<10} {:>12} {:>14.8} {:>14} {:>10} {:>9.2}",
            "greedy",
            "heuristic",
            r,
            "",
            "",
            clock.elapsed().as_secs_f64()
        );
    }
    let mut times: Vec<(&str, f64, f64)> = Vec::new();
    for (name, formulation, assist) in runs {
        let limits = Limits {
            formulation,
            assist,
            ..Limits::new(args.time_limit_s, args.gap)
        };
        let s = optimise::solve(&problem, limits)?;
        times.push((name, s.seconds, s.risk_after));
        let _ = writeln!(
            t,
            "{name:<10} {:>12} {:>14.8} {:>14.8} {:>10.2e} {:>9.2}",
            s.status.as_str(),
            s.risk_after,
            s.bound,
            s.gap,
            s.seconds
        );
    }
    if let Some(&(_, base_s, base_r)) = times.iter().find(|t| t.0 == "direct") {
        for &(name, seconds, risk) in times.iter().filter(|t| t.0 != "direct") {
            let _ = writeln!(
                t,
                "{name} against direct: {:.3}x the time, risk after {:+.3}%",
                seconds / base_s.max(1e-9),
                100.0 * (risk - base_r) / base_r.max(1e-300)
            );
        }
    }
    if let Some(path) = &args.write_mps {
        let path = std::path::absolute(path).map_err(|e| Error::io("resolve", path, e))?;
        optimise::write_mps(&problem, &path, Formulation::Direct)?;
        let _ = writeln!(t, "direct formulation's MIP written to {}", path.display());
    }
    Ok(t)
}
