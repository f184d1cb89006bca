//! Budget curves: the exact optimum at each of a list of budgets, warm-started from the
//! neighbouring point, made monotone (a larger budget can always afford the smaller budget's
//! plan), with the greedy and rule-of-thumb baselines beside it and the knee of the curve.
//!
//! # Units
//! Budgets and costs in catalogue currency; reductions in percent of R before treatment.

pub mod analysis;
pub mod follow_up;
pub mod point;

pub use analysis::{first_reaching, kneedle};
pub use point::Point;

use crate::core::deadline::Deadline;
use crate::core::error::{Error, Result};
use crate::core::printer::Printer;
use crate::planning::baselines;
use crate::planning::curve::analysis::Analysis;
use crate::planning::prepare::Prepared;
use crate::solve::heuristics::greedy;
use crate::solve::optimise::solve_from;
use crate::solve::problem::{Assignment, Limits, Status};

/// The budgets a curve is planned at.
#[derive(Debug, Clone)]
pub enum Budgets {
    /// `--budgets`: these levels.
    Listed(Vec<f64>),
    /// `--budget-range MIN:MAX:STEPS`, or (none given) round levels from 0 to the cost of
    /// treating everything eligible ([`round_levels`]).
    Range(Option<(f64, f64, usize)>),
}

/// Most levels of the default curve.
pub const DEFAULT_LEVELS: usize = 20;

impl Budgets {
    pub fn levels(&self, prepared: &Prepared) -> Vec<f64> {
        match self {
            Budgets::Listed(levels) => levels.clone(),
            Budgets::Range(Some((min, max, steps))) => budget_range(*min, *max, *steps),
            Budgets::Range(None) => round_levels(prepared.cost_of_everything(), DEFAULT_LEVELS),
        }
    }

    /// [`Budgets::levels`] with `must` (the plan's own budget under `--plan`) always among them.
    pub fn levels_with(&self, prepared: &Prepared, must: Option<f64>) -> Vec<f64> {
        let mut levels = self.levels(prepared);
        if let Some(b) = must.filter(|b| b.is_finite() && *b >= 0.0) {
            levels.push(b);
        }
        levels.sort_by(f64::total_cmp);
        levels.dedup();
        levels
    }
}

/// Round budget levels for a page a person reads: 0, s, 2s, ... up to the first multiple of
/// `s` at or above `max`, where the step `s` is the smallest of 1, 2, 2.5 or 5 x 10^k that
/// needs at most `most` levels (common practice for axis and table steps).
pub fn round_levels(max: f64, most: usize) -> Vec<f64> {
    if !(max.is_finite() && max > 0.0) {
        return vec![0.0];
    }
    let most = most.max(2);
    let step = round_step(max / (most - 1) as f64);
    let n = (max / step - 1e-9).ceil().max(1.0) as usize;
    (0..=n).map(|k| k as f64 * step).collect()
}

/// The smallest of 1, 2, 2.5 or 5 x 10^k that is at least `raw`.
pub fn round_step(raw: f64) -> f64 {
    let power = 10f64.powf(raw.log10().floor());
    [1.0, 2.0, 2.5, 5.0, 10.0]
        .iter()
        .map(|m| m * power)
        .find(|s| *s >= raw * (1.0 - 1e-12))
        .unwrap_or(10.0 * power)
}

/// The plan of `--plan DIR`: its budget is a level of the curve, solved from the plan's own
/// assignment, so the curve's point there is the plan's result (or better, if the plan stopped
/// early and the curve's search went further).
#[derive(Debug, Clone)]
pub struct Anchor {
    pub budget: f64,
    pub assignment: Assignment,
}

/// A solved curve and what it says.
pub struct Curve {
    pub points: Vec<Point>,
    pub analysis: Analysis,
}

/// The exact plan at each of `budgets` ([`trace`]) and its analysis; one progress line, then a
/// bar over the levels.
pub fn plan_curve(
    prepared: &Prepared,
    budgets: &[f64],
    crew_hours: Option<f64>,
    limits: Limits,
    depot: (f64, f64),
    jobs: usize,
    anchor: Option<&Anchor>,
    printer: Printer,
) -> Result<Curve> {
    printer.progress(&format!("solving {} budget levels", budgets.len()));
    let points = trace(
        prepared, budgets, crew_hours, limits, depot, jobs, anchor, printer,
    )?;
    let analysis = Analysis::new(&points, prepared.model.risk_before());
    Ok(Curve { points, analysis })
}

/// `steps` budgets evenly from `min` to `max` inclusive (one point when steps is 1).
pub fn budget_range(min: f64, max: f64, steps: usize) -> Vec<f64> {
    if steps <= 1 || max <= min {
        return vec![max.max(min)];
    }
    (0..steps)
        .map(|k| min + (max - min) * k as f64 / (steps - 1) as f64)
        .collect()
}

/// Parse `MIN:MAX:STEPS`.
pub fn parse_range(text: &str) -> Result<(f64, f64, usize)> {
    let bad = || {
        Error::input_with_hint(
            format!("`--budget-range {text}` is not MIN:MAX:STEPS"),
            "e.g. `--budget-range 0:60000:20` (20 budgets from 0 to 60,000)",
        )
    };
    let parts: Vec<&str> = text.split(':').collect();
    if parts.len() != 3 {
        return Err(bad());
    }
    let min: f64 = parts[0].trim().parse().map_err(|_| bad())?;
    let max: f64 = parts[1].trim().parse().map_err(|_| bad())?;
    let steps: usize = parts[2].trim().parse().map_err(|_| bad())?;
    if !(min.is_finite()
        && max.is_finite()
        && min >= 0.0
        && max >= min
        && (1..=500).contains(&steps))
    {
        return Err(Error::input_with_hint(
            format!("`--budget-range {text}`: need 0 <= MIN <= MAX and 1 <= STEPS <= 500"),
            "e.g. `--budget-range 0:60000:20`",
        ));
    }
    Ok((min, max, steps))
}

/// Solve every budget with `jobs` workers that take the budgets in order from one queue (so the
/// hard and easy levels are shared out and no worker idles while levels are left). Each point is
/// solved with one HiGHS thread and warm-started from the better of the greedy plans at its own
/// budget and at its lower neighbour's, so a point's result does not depend on `jobs` or on
/// which worker solved it: the curve is byte-identical for any `--jobs` unless a point stops at
/// its time share. Each level gets `jobs / (levels not yet started)` of the time left before
/// `limits.deadline`, so time an easy level does not need passes on to the levels after it;
/// time left at the end goes to a second look at the levels their share stopped. Then
/// monotonicity is repaired across the whole curve with the neighbours' solved plans.
pub fn trace(
    prepared: &Prepared,
    budgets: &[f64],
    crew_hours: Option<f64>,
    limits: Limits,
    depot: (f64, f64),
    jobs: usize,
    anchor: Option<&Anchor>,
    printer: Printer,
) -> Result<Vec<Point>> {
    let mut budgets = budgets.to_vec();
    budgets.sort_by(f64::total_cmp);
    budgets.dedup();
    let jobs = jobs.clamp(1, budgets.len().max(1));
    let limits = Limits {
        threads: Some(1),
        ..limits
    };
    let budgets = &budgets;
    let bar = printer.bar("solving the budget curve", budgets.len() as u64, "budgets");
    let every: Vec<usize> = (0..budgets.len()).collect();
    let mut points = in_queue(&every, jobs, limits.deadline, |k, deadline| {
        let start = anchor
            .filter(|a| a.budget == budgets[k])
            .map(|a| &a.assignment);
        let point = solve_point(
            prepared,
            budgets,
            k,
            crew_hours,
            Limits { deadline, ..limits },
            depot,
            start,
        );
        bar.inc(1);
        point
    })?;
    // Time the last (often easy) levels did not need goes to the levels stopped by their share:
    // each is searched again from the plan it reached, keeping the better plan and bound.
    let again: Vec<usize> = (0..points.len())
        .filter(|&k| points[k].status == Status::TimeLimit)
        .collect();
    if !again.is_empty() && limits.deadline.remaining_s() >= MIN_SECOND_LOOK_S {
        let first = &points;
        let second = in_queue(&again, jobs, limits.deadline, |k, deadline| {
            solve_point(
                prepared,
                budgets,
                k,
                crew_hours,
                Limits { deadline, ..limits },
                depot,
                Some(&first[k].assignment),
            )
        })?;
        for (&k, point) in again.iter().zip(second) {
            points[k] = better_of(&points[k], point, limits.gap);
        }
    }
    make_monotone(prepared, &mut points, crew_hours);
    Ok(points)
}

/// Run `solve(item, deadline)` for every item on `jobs` threads taking items in order from one
/// queue; each item's deadline is `jobs / (items not yet started)` of the time left before
/// `deadline`. Results in the order of `items`.
fn in_queue<T: Send>(
    items: &[usize],
    jobs: usize,
    deadline: Deadline,
    solve: impl Fn(usize, Deadline) -> Result<T> + Sync,
) -> Result<Vec<T>> {
    let next = std::sync::atomic::AtomicUsize::new(0);
    let (next, solve) = (&next, &solve);
    let results: Vec<Result<Vec<(usize, T)>>> = std::thread::scope(|scope| {
        let handles: Vec<_> = (0..jobs.clamp(1, items.len().max(1)))
            .map(|_| {
                scope.spawn(move || {
                    let mut done = Vec::new();
                    loop {
                        let at = next.fetch_add(1, std::sync::atomic::Ordering::SeqCst);
                        let Some(&item) = items.get(at) else {
                            return Ok(done);
                        };
                        let left = items.len() - at;
                        let share = deadline.fraction((jobs as f64 / left as f64).min(1.0));
                        done.push((at, solve(item, share)?));
                    }
                })
            })
            .collect();
        handles
            .into_iter()
            .map(|h| {
                h.join()
                    .unwrap_or_else(|_| Err(Error::Internal("a curve worker panicked".into())))
            })
            .collect()
    });
    let mut all = Vec::new();
    for r in results {
        all.extend(r?);
    }
    all.sort_by_key(|(at, _)| *at);
    Ok(all.into_iter().map(|(_, t)| t).collect())
}

/// Seconds left after the first pass below which stopped levels are not searched again.
const MIN_SECOND_LOOK_S: f64 = 1.0;

/// The better plan of two searches of the same level, with the larger of their proven bounds;
/// the status follows from the gap that leaves.
fn better_of(first: &Point, second: Point, gap_limit: f64) -> Point {
    let seconds = first.seconds + second.seconds;
    let bound = first.bound.max(second.bound);
    let mut best = if second.risk_after < first.risk_after {
        second
    } else {
        first.clone()
    };
    best.bound = bound.min(best.risk_after);
    best.gap = if best.risk_after > 0.0 {
        ((best.risk_after - best.bound) / best.risk_after).max(0.0)
    } else {
        0.0
    };
    best.status = if best.gap <= crate::solve::problem::OPTIMAL_GAP {
        Status::Optimal
    } else if best.gap <= gap_limit {
        Status::GapLimit
    } else {
        Status::TimeLimit
    };
    best.seconds = seconds;
    best
}

fn solve_point(
    prepared: &Prepared,
    budgets: &[f64],
    k: usize,
    crew_hours: Option<f64>,
    limits: Limits,
    depot: (f64, f64),
    start: Option<&Assignment>,
) -> Result<Point> {
    let budget = budgets[k];
    let problem = prepared.problem(budget, crew_hours);
    // The lower neighbour's greedy plan is affordable here (or, on a second look, the plan the
    // first reached); solve_from keeps the better start.
    let neighbour = match start {
        Some(plan) => Some(plan.clone()),
        None => (k > 0)
            .then(|| greedy(&prepared.problem(budgets[k - 1], crew_hours)))
            .flatten()
            .map(|g| g.0),
    };
    let solved = solve_from(&problem, limits, neighbour.as_ref())?;
    let rules = baselines::all(
        &problem,
        &prepared.patches,
        &prepared.pressure.corridors,
        depot,
        Some(solved.greedy.clone()),
    );
    let greedy_risk_after = solved.greedy.as_ref().map(|g| g.1).unwrap_or(f64::NAN);
    let mut point = Point {
        budget,
        assignment: solved.assignment.clone(),
        risk_after: solved.risk_after,
        bound: solved.bound,
        gap: solved.gap,
        status: solved.status,
        from_neighbour: false,
        spent: 0.0,
        crew_hours: 0.0,
        n_treated: 0,
        stems_treated: 0.0,
        area_ha_treated: 0.0,
        follow_up_cost: 0.0,
        greedy_risk_after,
        baselines: rules
            .iter()
            .filter(|b| b.name != "greedy")
            .map(|b| (b.name, b.risk_after))
            .collect(),
        seconds: solved.seconds,
    };
    fill_totals(prepared, &mut point, crew_hours);
    Ok(point)
}

fn fill_totals(prepared: &Prepared, point: &mut Point, crew_hours: Option<f64>) {
    let problem = prepared.problem(point.budget, crew_hours);
    point.spent = problem.cost(&point.assignment);
    point.crew_hours = problem.hours(&point.assignment);
    let treated: Vec<usize> = (0..point.assignment.len())
        .filter(|&i| point.assignment[i].is_some())
        .collect();
    point.n_treated = treated.len();
    // Whole stems per patch (as plan.csv), so the total is the sum a reader can check.
    point.stems_treated = treated
        .iter()
        .map(|&i| prepared.patches.items[i].stems.round())
        .sum();
    point.area_ha_treated = treated
        .iter()
        .filter_map(|&i| prepared.patches.items[i].area_ha)
        .sum();
    point.follow_up_cost = follow_up::follow_up_cost(prepared, &point.assignment);
}

impl Anchor {
    /// The plan of a plan folder as an assignment of `prepared`'s patches: `planned` holds
    /// (patch id, method id) per treated patch. None when a patch or method does not match
    /// (the plan was made from other inputs); the curve is then solved without it.
    pub fn from_plan(
        prepared: &Prepared,
        budget: f64,
        planned: &[(String, String, String)],
    ) -> Option<Anchor> {
        let mut assignment: Assignment = vec![None; prepared.patches.len()];
        for (patch, method, prescription) in planned {
            let i = prepared
                .patches
                .items
                .iter()
                .position(|p| &p.label == patch)?;
            // By prescription with size classes (several share a primary method), as
            // `simulate --plan` reads a plan back; by method without.
            assignment[i] = Some(prepared.choice_named(i, method, prescription)?);
        }
        Some(Anchor { budget, assignment })
    }
}

/// Risk after never rises with the budget: a point whose plan is worse than a smaller
/// budget's takes that plan (it is affordable), keeps its own proven bound, and says so.
pub fn make_monotone(prepared: &Prepared, points: &mut [Point], crew_hours: Option<f64>) {
    for k in 1..points.len() {
        let (before, rest) = points.split_at_mut(k);
        let previous = &before[k - 1];
        let point = &mut rest[0];
        if point.status != Status::Infeasible
            && previous.status != Status::Infeasible
            && point.risk_after > previous.risk_after
        {
            point.assignment = previous.assignment.clone();
            point.risk_after = previous.risk_after;
            point.from_neighbour = true;
            let bound = point.bound.min(point.risk_after);
            point.gap = if point.risk_after > 0.0 {
                ((point.risk_after - bound) / point.risk_after).max(0.0)
            } else {
                0.0
            };
            if point.gap <= crate::solve::problem::OPTIMAL_GAP {
                point.status = Status::Optimal;
            }
            fill_totals(prepared, point, crew_hours);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges_include_both_ends() {
        assert_eq!(
            budget_range(0.0, 100.0, 5),
            vec![0.0, 25.0, 50.0, 75.0, 100.0]
        );
        assert_eq!(parse_range("0:60000:20").unwrap(), (0.0, 60000.0, 20));
        assert!(parse_range("5:1:3").is_err());
        assert!(parse_range("0:10").is_err());
    }

    #[test]
    fn round_levels_use_steps_of_one_two_two_and_a_half_or_five() {
        // Steps 1, 2, 2.5, 5 x 10^k (common practice for round table and axis steps).
        assert_eq!(round_step(0.9), 1.0);
        assert_eq!(round_step(1800.0), 2000.0);
        assert_eq!(round_step(2100.0), 2500.0);
        assert_eq!(round_step(2600.0), 5000.0);
        assert_eq!(round_step(6000.0), 10000.0);
        let levels = round_levels(158_201.7, 20);
        assert!(levels.len() <= 20, "{levels:?}");
        assert_eq!(levels[0], 0.0);
        assert_eq!(levels[1], 10_000.0);
        assert_eq!(*levels.last().unwrap(), 160_000.0);
        assert_eq!(round_levels(0.0, 20), vec![0.0]);
    }

    #[test]
    fn kneedle_on_an_analytic_curve() {
        // y = 1 - exp(-x) on [0, 5]. The normalised difference y_n - x_n is largest where the
        // normalised slope is 1: exp(-x) * 5 / (1 - exp(-5)) = 1, i.e. x = ln(5 / (1 - e^-5))
        // = 1.61620... [derived from the Kneedle definition, Satopää et al. 2011].
        let xs: Vec<f64> = (0..=5000).map(|k| k as f64 / 1000.0).collect();
        let ys: Vec<f64> = xs.iter().map(|x| 1.0 - (-x).exp()).collect();
        let k = kneedle(&xs, &ys).unwrap();
        let expected = (5.0 / (1.0 - (-5.0f64).exp())).ln();
        assert!((xs[k] - expected).abs() <= 1e-3, "{} vs {expected}", xs[k]);
        // A straight line has no knee; neither has a flat one.
        assert_eq!(kneedle(&[0.0, 1.0, 2.0], &[0.0, 1.0, 2.0]), None);
        assert_eq!(kneedle(&[0.0, 1.0, 2.0], &[1.0, 1.0, 1.0]), None);
    }

    #[test]
    fn kneedle_on_the_papers_shape() {
        // y = -1/x + 5 on x in [1, 10] (a concave increasing curve of the kind used in
        // Satopää et al. 2011): the knee solves 1/x^2 = (y(10) - y(1)) / 9 = 0.1, x = sqrt 10.
        let xs: Vec<f64> = (0..=9000).map(|k| 1.0 + k as f64 / 1000.0).collect();
        let ys: Vec<f64> = xs.iter().map(|x| -1.0 / x + 5.0).collect();
        let k = kneedle(&xs, &ys).unwrap();
        assert!((xs[k] - 10f64.sqrt()).abs() <= 1e-3, "{}", xs[k]);
    }

    #[test]
    fn thresholds() {
        let r = [0.0, 30.0, 55.0, 80.0, 90.0, 100.0];
        assert_eq!(first_reaching(&r, 0.5), Some(2));
        assert_eq!(first_reaching(&r, 0.8), Some(3));
        assert_eq!(first_reaching(&r, 0.9), Some(4));
        assert_eq!(first_reaching(&[0.0, 0.0], 0.5), None);
    }
}
