//! `hostcut bench`: the exact MIP's formulations on one synthetic landscape, each solved by
//! HiGHS to the same gap and time limit, with greedy as a second baseline. Times are wall
//! seconds on this machine; compare them as ratios within one run.

use std::fmt::Write as _;

use crate::app::cli::BenchArgs;
use crate::core::error::{Error, Result};
use crate::core::kernel::Kernel;
use crate::core::kernel::KernelKind;
use crate::core::printer::Printer;
use crate::core::scenario::Formulation;
use crate::model::synthetic::Spec;
use crate::solve::instance::{Instance, InstanceSpec, Shape};
use crate::solve::optimise;
use crate::solve::problem::Limits;

pub fn run(args: &BenchArgs, printer: Printer) -> Result<String> {
    if let Some(side) = args.raster_side {
        return raster(args, side, printer);
    }
    if args.suite || !args.shape.is_empty() {
        return suite(args, &printer);
    }
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
    let instance = Instance::generate(&InstanceSpec {
        mixed_classes: args.mixed_classes,
        ..InstanceSpec::new(spec, args.methods, args.budget_share)
    })?;
    let land = &instance.land;
    let problem = instance.problem();
    let n = problem.len();
    let mut t = String::new();
    let _ = writeln!(
        t,
        "synthetic landscape: {n} patches, {} links, {} methods, {} choices ({}), budget {:.2} ({:.0}% of treating everything), seed {}",
        land.graph.edges.len(),
        args.methods,
        problem.choices.iter().map(Vec::len).sum::<usize>(),
        if args.mixed_classes {
            "a size-class mix of its own per patch"
        } else {
            "the default size mix"
        },
        problem.budget,
        100.0 * args.budget_share,
        args.seed
    );
    let _ = writeln!(
        t,
        "{:<10} {:>12} {:>14} {:>14} {:>10} {:>9}  path (bound from)",
        "method", "status", "risk after", "bound", "gap", "seconds"
    );
    let clock = std::time::Instant::now();
    if let Some((_, r)) = crate::solve::heuristics::greedy(&problem) {
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
            "{name:<10} {:>12} {:>14.8} {:>14.8} {:>10.2e} {:>9.2}  {} ({})",
            s.status.as_str(),
            s.risk_after,
            s.bound,
            s.gap,
            s.seconds,
            s.path,
            s.bound_from
        );
    }
    if let Some(&(_, base_s, base_r)) = times.iter().find(|t| t.0 == "direct") {
        for &(name, seconds, risk) in times.iter().filter(|t| t.0 != "direct") {
            let _ = writeln!(
                t,
                "{name} against direct: {:.2e} x the time, risk after {:+.3}%",
                seconds / base_s.max(1e-9),
                100.0 * (risk - base_r) / base_r.max(1e-300)
            );
        }
    }
    if let Some(path) = &args.write_mps {
        let path = std::path::absolute(path).map_err(|e| Error::io("resolve", path, e))?;
        crate::solve::mip::mps::write_mps(&problem, &path, Formulation::Direct)?;
        let _ = writeln!(t, "direct formulation's MIP written to {}", path.display());
    }
    Ok(t)
}

/// One solver's result in a shape row.
struct Cell {
    risk: f64,
    bound: Option<f64>,
    gap: Option<f64>,
    seconds: f64,
    note: String,
}

impl Cell {
    fn markdown(&self) -> String {
        let num = |v: Option<f64>, f: &dyn Fn(f64) -> String| v.map(f).unwrap_or("—".into());
        format!(
            "{} | {} | {} | {:.1}{}",
            num(Some(self.risk).filter(|r| r.is_finite()), &|r| format!(
                "{r:.6e}"
            )),
            num(self.bound, &|b| format!("{b:.6e}")),
            num(self.gap, &|g| format!("{:.2} %", 100.0 * g)),
            self.seconds,
            if self.note.is_empty() {
                String::new()
            } else {
                format!(" ({})", self.note)
            }
        )
    }
}

/// `--shape`/`--suite`: for every shape and budget, hostcut's solver, plain HiGHS on the direct
/// formulation given the same time (its model refused above `--baseline-max-gb`), and the
/// greedy plan, as one markdown table sorted by hostcut's gap, worst first. Greedy's gap is
/// against the best bound proven in its row.
fn suite(args: &BenchArgs, printer: &Printer) -> Result<String> {
    let shapes: Vec<Shape> = if args.shape.is_empty() {
        Shape::ALL.to_vec()
    } else {
        args.shape
            .iter()
            .map(|s| {
                Shape::parse(s).ok_or_else(|| {
                    Error::input(format!(
                        "`--shape`: `{s}` is not tight, overlap, scatter, cauchy, crew or spikes"
                    ))
                })
            })
            .collect::<Result<_>>()?
    };
    let budgets: Vec<f64> = if !args.budget_shares.is_empty() {
        args.budget_shares.clone()
    } else if args.suite {
        vec![0.02, 0.1, 0.3, 0.6]
    } else {
        vec![args.budget_share]
    };
    if args.patches == 0 || args.methods == 0 || budgets.iter().any(|b| !(*b > 0.0 && *b <= 1.0)) {
        return Err(Error::input(
            "`--patches` and `--methods` must be at least 1 and every budget share in (0, 1]",
        ));
    }
    let mut rows: Vec<(f64, String)> = Vec::new();
    for &shape in &shapes {
        for &share in &budgets {
            printer.progress(&format!(
                "bench: {} patches, shape {}, budget {:.0} %",
                args.patches,
                shape.as_str(),
                100.0 * share
            ));
            let instance =
                Instance::generate(&shape.spec(args.patches, args.methods, share, args.seed))?;
            let problem = instance.problem();
            let clock = std::time::Instant::now();
            let greedy = crate::solve::heuristics::greedy(&problem);
            let greedy_s = clock.elapsed().as_secs_f64();
            let ours = optimise::solve(&problem, Limits::new(args.time_limit_s, args.gap))?;
            let hostcut = Cell {
                risk: ours.risk_after,
                bound: Some(ours.bound),
                gap: Some(ours.gap),
                seconds: ours.seconds,
                note: ours.status.as_str().into(),
            };
            let need_gb = crate::solve::mip::transport::estimated_gb(&problem);
            let direct = if need_gb > args.baseline_max_gb {
                Cell {
                    risk: f64::NAN,
                    bound: None,
                    gap: None,
                    seconds: 0.0,
                    note: format!("not run: about {need_gb:.1} GB"),
                }
            } else {
                let limits = Limits {
                    formulation: Formulation::Direct,
                    assist: false,
                    ..Limits::new(args.time_limit_s, args.gap)
                };
                match optimise::solve(&problem, limits) {
                    Ok(s) => Cell {
                        risk: s.risk_after,
                        bound: Some(s.bound).filter(|b| b.is_finite()),
                        gap: Some(s.gap).filter(|g| g.is_finite()),
                        seconds: s.seconds,
                        note: s.status.as_str().into(),
                    },
                    Err(e) => Cell {
                        risk: f64::NAN,
                        bound: None,
                        gap: None,
                        seconds: 0.0,
                        note: format!("failed: {e}"),
                    },
                }
            };
            let best_bound = hostcut
                .bound
                .into_iter()
                .chain(direct.bound)
                .fold(f64::NEG_INFINITY, f64::max);
            let greedy_cell = match &greedy {
                Some((_, r)) => Cell {
                    risk: *r,
                    bound: None,
                    gap: (best_bound.is_finite() && *r > 0.0)
                        .then(|| ((r - best_bound) / r).max(0.0)),
                    seconds: greedy_s,
                    note: String::new(),
                },
                None => Cell {
                    risk: f64::NAN,
                    bound: None,
                    gap: None,
                    seconds: greedy_s,
                    note: "infeasible".into(),
                },
            };
            let vs_direct = if direct.risk.is_finite() && direct.risk > 0.0 {
                format!(
                    "{:+.2} %",
                    100.0 * (hostcut.risk - direct.risk) / direct.risk
                )
            } else {
                "—".into()
            };
            rows.push((
                ours.gap,
                format!(
                    "| {} | {} | {} | {:.0} % | {} | {} | {} | {} |",
                    shape.as_str(),
                    problem.len(),
                    problem.model.links.len(),
                    100.0 * share,
                    hostcut.markdown(),
                    direct.markdown(),
                    greedy_cell.markdown(),
                    vs_direct
                ),
            ));
        }
    }
    rows.sort_by(|a, b| b.0.total_cmp(&a.0));
    let mut t = String::new();
    let _ = writeln!(
        t,
        "{} patches, {} methods, seed {}, `--time-limit-s {}` each for hostcut and plain HiGHS, `--gap {}`; gaps proven, greedy's against the best bound in its row",
        args.patches, args.methods, args.seed, args.time_limit_s, args.gap
    );
    let _ = writeln!(t);
    let _ = writeln!(
        t,
        "| shape | patches | links | budget | hostcut risk after | hostcut bound | hostcut gap | hostcut s (status) | direct risk after | direct bound | direct gap | direct s (status) | greedy risk after | greedy bound | greedy gap | greedy s | hostcut vs direct plan |"
    );
    let _ = writeln!(t, "|{}", "---|".repeat(17));
    for (_, row) in rows {
        let _ = writeln!(t, "{row}");
    }
    Ok(t)
}

/// The raster path at scale: write a synthetic host raster (not timed), read it once through
/// GDAL in the labeller's strips (the baseline: the I/O floor), then build the patches, graph
/// and risk model from it as `hostcut plan` does.
fn raster(args: &BenchArgs, side: usize, printer: Printer) -> Result<String> {
    use crate::core::scenario::Scenario;
    use crate::model::synthetic::{RasterSpec, write_raster};
    if side == 0 || args.patches == 0 || args.cell_m.is_nan() || args.cell_m <= 0.0 {
        return Err(Error::input(
            "`--raster-side`, `--patches` and `--cell-m` must be above 0",
        ));
    }
    let spec = RasterSpec {
        width: side,
        height: side,
        cell_m: args.cell_m,
        clumps: args.patches,
        clusters: args.clusters,
        spread_cells: args.spread_m / args.cell_m,
        seed: args.seed,
    };
    let (path, temporary) = match &args.raster_file {
        Some(p) => (p.clone(), false),
        None => (
            std::env::temp_dir().join(format!(
                "hostcut-bench-{}-{side}-{}.tif",
                std::process::id(),
                args.seed
            )),
            true,
        ),
    };
    let mut t = String::new();
    let clock = std::time::Instant::now();
    if path.exists() && !temporary {
        let _ = writeln!(t, "raster {} exists: reused (its own spec)", path.display());
    } else {
        write_raster(&path, spec)?;
        let _ = writeln!(
            t,
            "synthetic raster: {side} x {side} cells ({:.3e}), {} m cells, {} clumps in {} clusters, seed {}, written in {:.2} s (not timed below)",
            (side * side) as f64,
            args.cell_m,
            args.patches,
            args.clusters,
            args.seed,
            clock.elapsed().as_secs_f64()
        );
    }
    let result = (|| -> Result<()> {
        let mut scenario = Scenario::default();
        scenario.host.path = Some(path.clone());
        scenario.model.alpha_m = args.alpha_m;
        let budget = crate::core::memory::Budget::new(scenario.solver.max_memory_gb);
        // Baseline: every value read once through GDAL in the labeller's strips.
        let clock = std::time::Instant::now();
        let file = crate::input::gis::open_raster(&path, None, &budget)?;
        let dataset = file.dataset()?;
        let strip = crate::input::patches::strip_rows(&file);
        let (mut row0, mut host_cells) = (0, 0usize);
        while row0 < file.frame.height {
            let rows = strip.min(file.frame.height - row0);
            let values = file.read_rows_from(&dataset, row0, rows)?;
            host_cells += values.iter().filter(|&&v| v >= 10.0).count();
            row0 += rows;
        }
        drop(dataset);
        let read_s = clock.elapsed().as_secs_f64();
        let _ = writeln!(
            t,
            "read once in strips of {strip} rows (baseline): {read_s:.2} s, {host_cells} cells at or above 10 stems/ha"
        );
        let clock = std::time::Instant::now();
        let stages = std::cell::RefCell::new(Vec::new());
        let prepared = crate::planning::prepare::prepare(
            &scenario,
            &|line: &str| {
                stages.borrow_mut().push(format!(
                    "  {:>7.2} s  {line}",
                    clock.elapsed().as_secs_f64()
                ));
            },
            printer.bars(),
        )?;
        let ones = vec![1.0; prepared.patches.len()];
        let capacity = prepared.model.capacity(&ones);
        stages.borrow_mut().push(format!(
            "  {:>7.2} s  lambda_M {:.6e} by power iteration ({} iterations, residual {:.1e})",
            clock.elapsed().as_secs_f64(),
            capacity.lambda,
            capacity.iterations,
            capacity.residual
        ));
        let seconds = clock.elapsed().as_secs_f64();
        for line in stages.borrow().iter() {
            let _ = writeln!(t, "{line}");
        }
        let _ = writeln!(
            t,
            "raster to patch graph, risk model and lambda_M: {seconds:.2} s ({:.2}x the read), {} patches, {} links",
            seconds / read_s.max(1e-9),
            prepared.patches.len(),
            prepared.graph.edges.len()
        );
        if let Some(peak) = peak_memory_mb() {
            let _ = writeln!(t, "peak resident memory of this process: {peak:.0} MB");
        }
        Ok(())
    })();
    if temporary {
        let _ = std::fs::remove_file(&path);
    }
    result?;
    Ok(t)
}

/// The process's peak resident set (VmHWM), megabytes, where /proc tells it.
fn peak_memory_mb() -> Option<f64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb / 1000.0)
}
