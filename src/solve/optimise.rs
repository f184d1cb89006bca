//! The optimiser: choose at most one method per patch to minimise the connected-host risk R
//! under the budget and crew hours, exactly, as a mixed-integer program solved by HiGHS through
//! good_lp; plus the greedy heuristic that warm-starts it and the brute force that tests it.
//!
//! # Formulations (docs/model.md has the derivations)
//! Default, [`Formulation::Transport`]: one binary per option of each patch ("untreated"
//! included) and, per link, one z per pair of options tied to both ends by transportation
//! marginals, so z is the product at integer points and R is linear in (v, z) exactly.
//! [`Formulation::Compact`]: binary x_io, t_i = sum_o e_o x_io, and per link and choice of one end
//! u >= t_j - T_j (1 - x_io), u >= 0 (Glover-Woolsey), plus McCormick's envelope row. In both, a
//! fixed column carries the constant so HiGHS's objective is R itself and its dual bound is a
//! lower bound on R.
//!
//! # Units
//! Costs in catalogue currency, hours in crew hours, R in share-squared units.

use std::time::Instant;

use good_lp::solvers::highs::highs;
use good_lp::{Expression, ProblemVariables, SolverModel, Variable, variable};

use crate::core::error::{Error, Result};
use crate::input::treatments::Choice;
use crate::model::risk::RiskModel;
use crate::solve::highs::{Built, run_highs};
use crate::solve::problem::{
    Assignment, Formulation, Limits, OPTIMAL_GAP, Problem, Solved, Status,
};
use crate::{solve::decompose, solve::relax};

/// Adaptive greedy by risk reduction per unit cost from the feasible plan `start`: treat an
/// untreated patch or upgrade a treated one while anything fits and lowers R.
pub fn fill(problem: &Problem, start: Assignment) -> Assignment {
    let n = problem.len();
    let fits = |spent: f64, hours: f64, c: &Choice| {
        Problem::within(problem.budget, spent + c.cost)
            && problem
                .crew_hours
                .is_none_or(|h| Problem::within(h, hours + c.hours))
    };
    // Evaluated lazily (Minoux's accelerated greedy): a move's gain only
    // falls as other patches are treated (every w_ij >= 0) and the budget left only shrinks, so
    // a queued ratio is an upper bound; only the top entry is re-evaluated. The patch that
    // moves has its own options re-queued. Ties go to the lowest (patch, choice), as in a plain
    // scan.
    let mut current = start;
    let mut remaining = problem.remaining(&current);
    let (mut spent, mut hours) = (problem.cost(&current), problem.hours(&current));
    let mut version = vec![0u32; n];
    let mut queue = std::collections::BinaryHeap::new();
    let evaluate = |current: &Assignment,
                    remaining: &[f64],
                    spent: f64,
                    hours: f64,
                    i: usize,
                    o: usize|
     -> Option<f64> {
        let c = &problem.choices[i][o];
        if c.remaining >= remaining[i] {
            return None;
        }
        let (now_cost, now_hours) = current[i]
            .map(|k| (problem.choices[i][k].cost, problem.choices[i][k].hours))
            .unwrap_or((0.0, 0.0));
        let step = Choice {
            cost: c.cost - now_cost,
            hours: c.hours - now_hours,
            ..*c
        };
        if !fits(spent, hours, &step) {
            return None;
        }
        let gain = problem.gain(remaining, i, o);
        if gain <= 0.0 {
            return None;
        }
        Some(if step.cost > 0.0 {
            gain / step.cost
        } else {
            f64::INFINITY
        })
    };
    let push_patch = |queue: &mut std::collections::BinaryHeap<Entry>,
                      current: &Assignment,
                      remaining: &[f64],
                      spent: f64,
                      hours: f64,
                      version: &[u32],
                      i: usize| {
        for o in 0..problem.choices[i].len() {
            if let Some(ratio) = evaluate(current, remaining, spent, hours, i, o) {
                queue.push(Entry {
                    ratio,
                    i,
                    o,
                    version: version[i],
                });
            }
        }
    };
    for i in 0..n {
        if !problem.excluded[i] {
            push_patch(&mut queue, &current, &remaining, spent, hours, &version, i);
        }
    }
    while let Some(top) = queue.pop() {
        if top.version != version[top.i] {
            continue;
        }
        let Some(ratio) = evaluate(&current, &remaining, spent, hours, top.i, top.o) else {
            continue;
        };
        let fresh = Entry { ratio, ..top };
        if queue.peek().is_some_and(|next| *next > fresh) {
            queue.push(fresh);
            continue;
        }
        let (i, o) = (top.i, top.o);
        let (spent_before, hours_before) = (spent, hours);
        if let Some(k) = current[i] {
            spent -= problem.choices[i][k].cost;
            hours -= problem.choices[i][k].hours;
        }
        current[i] = Some(o);
        remaining[i] = problem.choices[i][o].remaining;
        spent += problem.choices[i][o].cost;
        hours += problem.choices[i][o].hours;
        version[i] += 1;
        if spent < spent_before || hours < hours_before {
            // A cheaper upgrade freed budget: moves dropped for not fitting may fit again.
            queue.clear();
            for j in 0..n {
                if !problem.excluded[j] {
                    version[j] += 1;
                    push_patch(&mut queue, &current, &remaining, spent, hours, &version, j);
                }
            }
        } else {
            push_patch(&mut queue, &current, &remaining, spent, hours, &version, i);
        }
    }
    current
}

/// The better of (a) adaptive greedy by risk reduction per unit cost and (b) the best single
/// choice, both after the required patches get their cheapest choice. A greedy move treats an
/// untreated patch or upgrades a treated one to a more effective method, paying the cost
/// difference. None if the required patches do not fit.
pub fn greedy(problem: &Problem) -> Option<(Assignment, f64)> {
    let n = problem.len();
    let mut base: Assignment = vec![None; n];
    for i in 0..n {
        if problem.required[i] {
            let cheapest = (0..problem.choices[i].len()).min_by(|&a, &b| {
                let (ca, cb) = (&problem.choices[i][a], &problem.choices[i][b]);
                ca.cost
                    .total_cmp(&cb.cost)
                    .then(ca.hours.total_cmp(&cb.hours))
            })?;
            base[i] = Some(cheapest);
        }
    }
    if !problem.feasible(&base) {
        return None;
    }
    // (a) adaptive greedy.
    let current = fill(problem, base.clone());
    let greedy_risk = problem.risk(&current);
    // (b) best single choice on top of the required ones.
    let base_remaining = problem.remaining(&base);
    let (base_spent, base_hours) = (problem.cost(&base), problem.hours(&base));
    let fits = |c: &Choice| {
        Problem::within(problem.budget, base_spent + c.cost)
            && problem
                .crew_hours
                .is_none_or(|h| Problem::within(h, base_hours + c.hours))
    };
    let mut single: Option<(f64, usize, usize)> = None;
    for i in 0..n {
        if base[i].is_some() || problem.excluded[i] {
            continue;
        }
        for (o, c) in problem.choices[i].iter().enumerate() {
            if fits(c) {
                let gain = problem.gain(&base_remaining, i, o);
                if single.is_none_or(|(g, _, _)| gain > g) {
                    single = Some((gain, i, o));
                }
            }
        }
    }
    if let Some((_, i, o)) = single {
        let mut one = base;
        one[i] = Some(o);
        let risk = problem.risk(&one);
        if risk < greedy_risk {
            return Some((one, risk));
        }
    }
    Some((current, greedy_risk))
}

/// A queued greedy move: ordered by ratio, then the lower patch and choice first.
#[derive(Debug, Clone, Copy)]
struct Entry {
    ratio: f64,
    i: usize,
    o: usize,
    version: u32,
}

impl PartialEq for Entry {
    fn eq(&self, other: &Self) -> bool {
        self.cmp(other) == std::cmp::Ordering::Equal
    }
}

impl Eq for Entry {}

impl PartialOrd for Entry {
    fn partial_cmp(&self, other: &Self) -> Option<std::cmp::Ordering> {
        Some(self.cmp(other))
    }
}

impl Ord for Entry {
    fn cmp(&self, other: &Self) -> std::cmp::Ordering {
        self.ratio
            .total_cmp(&other.ratio)
            .then(other.i.cmp(&self.i))
            .then(other.o.cmp(&self.o))
    }
}

/// Exact optimum by enumerating every assignment (for tests; small problems only).
pub fn brute_force(problem: &Problem) -> Option<(Assignment, f64)> {
    fn walk(
        problem: &Problem,
        i: usize,
        current: &mut Assignment,
        spent: f64,
        hours: f64,
        best: &mut Option<(Assignment, f64)>,
    ) {
        if i == problem.len() {
            let risk = problem.risk(current);
            if best.as_ref().is_none_or(|(_, b)| risk < *b) {
                *best = Some((current.clone(), risk));
            }
            return;
        }
        if !problem.required[i] {
            current[i] = None;
            walk(problem, i + 1, current, spent, hours, best);
        }
        if !problem.excluded[i] {
            for (o, c) in problem.choices[i].iter().enumerate() {
                if Problem::within(problem.budget, spent + c.cost)
                    && problem
                        .crew_hours
                        .is_none_or(|h| Problem::within(h, hours + c.hours))
                {
                    current[i] = Some(o);
                    walk(
                        problem,
                        i + 1,
                        current,
                        spent + c.cost,
                        hours + c.hours,
                        best,
                    );
                }
            }
        }
        current[i] = None;
    }
    let mut best = None;
    walk(
        problem,
        0,
        &mut vec![None; problem.len()],
        0.0,
        0.0,
        &mut best,
    );
    best
}

/// Models estimated above this size skip HiGHS: relaxation and local search alone.
pub const LARGE_MODEL_GB: f64 = 0.2;

/// Frank–Wolfe iterations spent on problems small enough for the MIP.
const SMALL_RELAX_ITERATIONS: usize = 300;

/// The plan read off a relaxed solution: each patch's heaviest choice when it carries at least
/// half the weight (required patches: their heaviest choice), patches dropped in order of
/// their weight until the plan fits, then filled greedily.
pub fn round(problem: &Problem, weights: &[Vec<f64>]) -> Assignment {
    let n = problem.len();
    let mut plan: Assignment = vec![None; n];
    let mut kept: Vec<(f64, usize)> = Vec::new();
    for i in 0..n {
        if problem.excluded[i] {
            continue;
        }
        let heaviest = (0..problem.choices[i].len())
            .max_by(|&a, &b| weights[i][a].total_cmp(&weights[i][b]).then(b.cmp(&a)));
        if let Some(o) = heaviest
            && (problem.required[i] || weights[i][o] >= 0.5)
        {
            plan[i] = Some(o);
            if !problem.required[i] {
                kept.push((weights[i][o], i));
            }
        }
    }
    kept.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
    let mut k = 0;
    while !problem.feasible(&plan) && k < kept.len() {
        plan[kept[k].1] = None;
        k += 1;
    }
    if !problem.feasible(&plan) {
        return plan;
    }
    fill(problem, plan)
}

/// Local search: drop one treated patch (least risk lost per unit cost first) and refill
/// greedily; keep the change when R falls. Repeats until a pass finds nothing or `done` says
/// stop (checked after every try). Returns the plan, its risk, and true when the search ran out
/// of improving moves (false when `done` stopped it).
pub fn improve(
    problem: &Problem,
    mut plan: Assignment,
    mut risk: f64,
    done: impl Fn(f64) -> bool,
) -> (Assignment, f64, bool) {
    loop {
        let remaining = problem.remaining(&plan);
        let mut order: Vec<(f64, usize)> = (0..problem.len())
            .filter(|&i| plan[i].is_some() && !problem.required[i])
            .map(|i| {
                let o = plan[i].unwrap();
                let c = &problem.choices[i][o];
                // The risk lost by dropping i, per unit of its cost.
                let mut loss = problem.model.own[i] * (1.0 - c.remaining * c.remaining);
                for &(j, l) in &problem.model.adjacency[i] {
                    loss += problem.model.links[l].weight * remaining[j] * (1.0 - c.remaining);
                }
                (loss / c.cost.max(1e-12), i)
            })
            .collect();
        order.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
        let mut improved = false;
        for &(_, i) in &order {
            if done(risk) {
                return (plan, risk, false);
            }
            let mut trial = plan.clone();
            trial[i] = None;
            let trial = fill(problem, trial);
            let r = problem.risk(&trial);
            if r < risk * (1.0 - 1e-12) && problem.feasible(&trial) {
                plan = trial;
                risk = r;
                improved = true;
                break;
            }
        }
        if !improved {
            return (plan, risk, true);
        }
        if done(risk) {
            return (plan, risk, false);
        }
    }
}

/// Solve the MIP exactly (or to `limits`), warm-started from the greedy plan.
pub fn solve(problem: &Problem, limits: Limits) -> Result<Solved> {
    solve_from(problem, limits, None)
}

/// As [`solve`], warm-started from the better of the greedy plan and `start` (e.g. the
/// neighbouring point of a budget curve) when `start` is feasible here.
pub fn solve_from(problem: &Problem, limits: Limits, start: Option<&Assignment>) -> Result<Solved> {
    let start_time = Instant::now();
    let n = problem.len();
    let greedy = greedy(problem);
    let warm: Option<(Assignment, f64)> = match (
        start.filter(|a| a.len() == n && problem.feasible(a)),
        &greedy,
    ) {
        (Some(a), Some((_, g))) if problem.risk(a) < *g => Some((a.clone(), problem.risk(a))),
        (Some(a), None) => Some((a.clone(), problem.risk(a))),
        _ => greedy.clone(),
    };
    let risk_before = problem.model.risk_before();
    let any_choice = (0..n).any(|i| !problem.excluded[i] && !problem.choices[i].is_empty());
    let required_without_choice = (0..n)
        .any(|i| problem.required[i] && (problem.excluded[i] || problem.choices[i].is_empty()));
    if required_without_choice {
        return Ok(infeasible(n, risk_before, greedy, start_time));
    }
    if !any_choice || risk_before <= 0.0 {
        let assignment = vec![None; n];
        let risk = problem.risk(&assignment);
        return Ok(Solved {
            assignment,
            risk_after: risk,
            bound: risk,
            gap: 0.0,
            status: Status::Optimal,
            seconds: start_time.elapsed().as_secs_f64(),
            greedy,
            path: "nothing to choose",
            bound_from: "exact",
        });
    }
    // Treating everything with its most effective method is optimal when it fits, and its risk
    // bounds R from below at any budget.
    let (mut everything, floor) = problem.everything();
    if problem.feasible(&everything) {
        prune_worthless(problem, &mut everything);
        return Ok(Solved {
            assignment: everything,
            risk_after: floor,
            bound: floor,
            gap: 0.0,
            status: Status::Optimal,
            seconds: start_time.elapsed().as_secs_f64(),
            greedy,
            path: "everything fits",
            bound_from: "exact",
        });
    }
    let need_gb = estimated_gb(problem);
    if !limits.assist && need_gb > limits.max_memory_gb {
        return Err(Error::input_with_hint(
            format!(
                "the exact model for {} patches and {} links needs about {need_gb:.2} GB, more than `--max-memory-gb {}`",
                n,
                problem.model.links.len(),
                limits.max_memory_gb
            ),
            "raise `--epsilon` or lower `--alpha-m` to keep fewer links, split the area, or raise `--max-memory-gb` if the machine has the memory",
        ));
    }
    // A convex relaxation bound (src/solve/relax.rs) and its rounded plan, cheap next to the MIP.
    // Large problems, whose exact model HiGHS cannot take in (or would not get through its
    // root LP) within the limits, are solved by relaxation and local search alone.
    let large = limits.assist && need_gb > limits.max_memory_gb.min(LARGE_MODEL_GB);
    let mut warm = warm;
    let mut relaxed_bound = f64::NEG_INFINITY;
    if let Some((plan, risk)) = warm.clone().filter(|_| limits.assist) {
        let stop = relax::Stop {
            gap: limits.gap,
            max_iterations: if large {
                usize::MAX
            } else {
                SMALL_RELAX_ITERATIONS
            },
            time_limit_s: if large {
                0.5 * limits.deadline.remaining_s()
            } else {
                (0.1 * limits.deadline.remaining_s()).min(2.0)
            },
        };
        if let Some(relaxation) = relax::bound(problem, &plan, risk, stop) {
            relaxed_bound = relaxation.value;
            let rounded = round(problem, &relaxation.weights);
            let r = problem.risk(&rounded);
            if r < risk && problem.feasible(&rounded) {
                warm = Some((rounded, r));
            }
        }
    }
    let bound_of = |risk: f64, dual: f64| dual.max(floor).max(relaxed_bound).min(risk).max(0.0);
    // The proof behind `bound_of` (ties go to the cheaper proof).
    let bound_from = |dual: f64| {
        if floor >= relaxed_bound && floor >= dual {
            "floor"
        } else if relaxed_bound >= dual {
            "relaxation"
        } else {
            "HiGHS dual bound"
        }
    };
    let gap_of = |risk: f64, bound: f64| {
        if risk > 0.0 {
            ((risk - bound) / risk).max(0.0)
        } else {
            0.0
        }
    };
    // Components that cannot interact, each small enough to enumerate, are merged exactly
    // under the one budget (src/solve/decompose.rs) instead of the monolithic formulation.
    let early = limits.assist
        && warm
            .as_ref()
            .is_some_and(|(_, r)| gap_of(*r, bound_of(*r, f64::NEG_INFINITY)) <= limits.gap);
    let pieces = if limits.assist && !early {
        decompose::pieces(problem)
    } else {
        None
    };
    if let Some((plan, risk)) = warm.clone().filter(|_| limits.assist)
        && (early || (large && pieces.is_none()))
    {
        let (mut assignment, mut risk_after, exhausted) = if early {
            (plan, risk, false)
        } else {
            improve(problem, plan, risk, |r| {
                gap_of(r, bound_of(r, f64::NEG_INFINITY)) <= limits.gap || limits.deadline.passed()
            })
        };
        prune_worthless(problem, &mut assignment);
        risk_after = risk_after.min(problem.risk(&assignment));
        let bound = bound_of(risk_after, f64::NEG_INFINITY);
        let gap = gap_of(risk_after, bound);
        // Name what stopped the search: the gap, no move left, or the deadline (only when the
        // search was still finding moves as it passed).
        let status = if gap <= OPTIMAL_GAP {
            Status::Optimal
        } else if gap <= limits.gap {
            Status::GapLimit
        } else if exhausted {
            Status::NoImprovingMove
        } else {
            Status::TimeLimit
        };
        return Ok(Solved {
            assignment,
            risk_after,
            bound,
            gap,
            status,
            seconds: start_time.elapsed().as_secs_f64(),
            greedy,
            path: if early {
                "greedy and relaxation rounding"
            } else {
                "relaxation and local search"
            },
            bound_from: bound_from(f64::NEG_INFINITY),
        });
    }
    // HiGHS sees R scaled so that R before treatment = 1000: coefficients stay in a range it
    // handles well, and the objective at any sensible plan stays above 1 for its relative gap.
    let scale = 1e3 / risk_before;

    let path = match limits.formulation {
        _ if pieces.is_some() => "component merge MIP",
        Formulation::Compact => "compact MIP",
        Formulation::Direct => "direct MIP",
        Formulation::Transport => "transport MIP",
    };
    let built = match limits.formulation {
        _ if pieces.is_some() => decompose::build_merge(
            problem,
            pieces.as_deref().unwrap_or_default(),
            scale,
            warm.as_ref().map(|w| &w.0),
        )?,
        Formulation::Compact => build_compact(problem, scale, warm.as_ref().map(|w| &w.0))?,
        Formulation::Direct => build_direct(problem, scale)?,
        Formulation::Transport => {
            build_transport(problem, scale, warm.as_ref().map(|w| &w.0), None)?
        }
    };
    let Some(run) = run_highs(built, limits, n, warm.is_some())? else {
        return Ok(infeasible(n, risk_before, greedy, start_time));
    };
    let (mut status, mut assignment, has_solution) = (run.status, run.assignment, run.has_solution);
    let path = if run.started { path } else { NOT_STARTED };
    let dual = run.objective_bound / scale;
    let mut risk_after = problem.risk(&assignment);
    if !has_solution || !problem.feasible(&assignment) {
        match &warm {
            Some((g, r)) => {
                assignment = g.clone();
                risk_after = *r;
            }
            None => return Ok(infeasible(n, risk_before, greedy, start_time)),
        }
    }
    if let Some((g, r)) = warm.as_ref().filter(|(_, r)| *r < risk_after) {
        assignment = g.clone();
        risk_after = *r;
    }
    prune_worthless(problem, &mut assignment);
    let bound = bound_of(risk_after, dual);
    let gap = gap_of(risk_after, bound);
    if status == Status::Optimal && gap > OPTIMAL_GAP {
        status = Status::GapLimit;
    }
    Ok(Solved {
        assignment,
        risk_after,
        bound,
        gap,
        status,
        seconds: start_time.elapsed().as_secs_f64(),
        greedy,
        path,
        bound_from: bound_from(dual),
    })
}

/// Write the exact MIP in the given formulation (no warm start) to an MPS file through HiGHS's own writer. The objective is R x 1000 / R before, with the constant
/// carried by a column fixed at 1, so its optimum times R before / 1000 is the least achievable R.
pub fn write_mps(
    problem: &Problem,
    path: &std::path::Path,
    formulation: Formulation,
) -> Result<()> {
    let risk_before = problem.model.risk_before();
    if risk_before <= 0.0 {
        return Err(Error::input("there is no risk to model: nothing to write"));
    }
    let ext_ok = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("mps"));
    if !ext_ok {
        return Err(Error::input_with_hint(
            format!(
                "`--write-mps {}`: the file must end in .mps",
                path.display()
            ),
            "e.g. `--write-mps plan.mps`",
        ));
    }
    let scale = 1e3 / risk_before;
    let Built { mut model, .. } = match formulation {
        Formulation::Transport => build_transport(problem, scale, None, None)?,
        Formulation::Compact => build_compact(problem, scale, None)?,
        Formulation::Direct => build_direct(problem, scale)?,
    };
    let file = path.to_string_lossy().into_owned();
    model.set_option("output_flag", false);
    model.set_option("write_model_to_file", true);
    model.set_option("write_model_file", file.as_str());
    // Writing happens when the run starts; stop straight after.
    model.set_option("time_limit", 0.0);
    let _ = model.try_solve();
    if !path.is_file() {
        return Err(Error::Internal(format!(
            "HiGHS did not write `{}`",
            path.display()
        )));
    }
    Ok(())
}

/// The answer to a min-max solve.
#[derive(Debug, Clone)]
pub struct MinMaxSolved {
    pub assignment: Assignment,
    /// max_s (R_s - offset_s) of the assignment.
    pub value: f64,
    /// A proven lower bound on the least achievable value.
    pub bound: f64,
    /// (value - bound) / (the assignment's worst-scenario R): the gap on the risk that remains.
    pub gap: f64,
    pub status: Status,
    pub seconds: f64,
    /// How the plan was found: `min-max MIP`, `everything fits`, `start within the gap of the
    /// floor`, or [`NOT_STARTED`].
    pub path: &'static str,
}

/// The path of a search whose MIP had too little time left to start: the plan is the best
/// start (greedy, relaxation rounding or a neighbour's plan) and the bound is the one known
/// without it.
pub const NOT_STARTED: &str = "best start; too little time left to start the MIP";

/// Minimise max_s (R_s - offset_s) over feasible plans, exactly (transportation formulation with
/// an epigraph variable), warm-started from the best of `starts`. `floor` is a lower bound known
/// beforehand (e.g. max_s of each scenario's own proven bound minus its offset: no plan does
/// better in scenario s than its optimum); the reported bound is the larger of it and HiGHS's.
pub fn solve_minmax(
    problem: &Problem,
    mm: &MinMax,
    limits: Limits,
    starts: &[Assignment],
    floor: f64,
) -> Result<MinMaxSolved> {
    let start_time = Instant::now();
    let n = problem.len();
    let warm = starts
        .iter()
        .filter(|a| a.len() == n && problem.feasible(a))
        .min_by(|a, b| mm.value(problem, a).total_cmp(&mm.value(problem, b)))
        .cloned();
    let done = |assignment: Assignment, bound: f64, status: Status, path: &'static str| {
        let value = mm.value(problem, &assignment);
        let bound = if bound.is_finite() {
            bound.max(floor)
        } else {
            floor
        };
        let worst = mm.worst_risk(problem, &assignment);
        let bound = bound.min(value);
        let gap = if worst > 0.0 {
            ((value - bound) / worst).max(0.0)
        } else {
            0.0
        };
        let status = if status == Status::Optimal && gap > OPTIMAL_GAP {
            Status::GapLimit
        } else {
            status
        };
        MinMaxSolved {
            assignment,
            value,
            bound,
            gap,
            status,
            seconds: start_time.elapsed().as_secs_f64(),
            path,
        }
    };
    // Every R_s only grows with each r_i, so treating everything, when it fits, is optimal.
    let (everything, _) = problem.everything();
    if problem.feasible(&everything) {
        let v = mm.value(problem, &everything);
        return Ok(done(everything, v, Status::Optimal, "everything fits"));
    }
    // A start already within the requested gap of the known floor needs no search.
    if let Some(w) = &warm {
        let worst = mm.worst_risk(problem, w);
        if worst > 0.0 && (mm.value(problem, w) - floor) / worst <= limits.gap {
            return Ok(done(
                w.clone(),
                floor,
                Status::Optimal,
                "start within the gap of the floor",
            ));
        }
    }
    let worst_before = mm.worst_risk(problem, &vec![None; n]);
    if worst_before <= 0.0 {
        return Ok(done(
            vec![None; n],
            f64::NEG_INFINITY,
            Status::Optimal,
            "nothing to choose",
        ));
    }
    let scale = 1e3 / worst_before;
    let built = build_transport(problem, scale, warm.as_ref(), Some(mm))?;
    let infeasible = || MinMaxSolved {
        assignment: vec![None; n],
        value: f64::NAN,
        bound: f64::NAN,
        gap: f64::NAN,
        status: Status::Infeasible,
        seconds: start_time.elapsed().as_secs_f64(),
        path: "min-max MIP",
    };
    let Some(run) = run_highs(built, limits, n, warm.is_some())? else {
        return Ok(infeasible());
    };
    let mut assignment = run.assignment;
    if !run.has_solution || !problem.feasible(&assignment) {
        match &warm {
            Some(w) => assignment = w.clone(),
            None => return Ok(infeasible()),
        }
    }
    if let Some(w) = warm.as_ref()
        && mm.value(problem, w) < mm.value(problem, &assignment)
    {
        assignment = w.clone();
    }
    let bound = (run.objective_bound / scale).max(floor);
    let path = if run.started {
        "min-max MIP"
    } else {
        NOT_STARTED
    };
    Ok(done(assignment, bound, run.status, path))
}

/// Memory the transportation model is estimated to need, in GB: about 1 kB per pair-of-options
/// column (HiGHS's matrix and good_lp's expressions, measured on the demo) plus 50 MB.
pub fn estimated_gb(problem: &Problem) -> f64 {
    let options = |i: usize| {
        if problem.excluded[i] {
            0
        } else {
            problem.choices[i].len()
        }
    };
    let z: f64 = problem
        .model
        .links
        .iter()
        .map(|l| ((options(l.a) + 1) * (options(l.b) + 1)) as f64)
        .sum();
    (z * 1000.0 + 50e6) / 1e9
}

/// Drop treatments that buy exactly nothing (a patch with no effective host, e.g. suitability
/// 0, and no link weight): the solver is indifferent to them, a land manager is not.
fn prune_worthless(problem: &Problem, assignment: &mut Assignment) {
    for i in 0..problem.len() {
        if problem.required[i] || assignment[i].is_none() {
            continue;
        }
        let worthless = problem.model.own[i] == 0.0
            && problem.model.adjacency[i]
                .iter()
                .all(|&(_, l)| problem.model.links[l].weight == 0.0);
        if worthless {
            assignment[i] = None;
        }
    }
}

/// Choice `o` of patch `i` is dominated when another choice costs no more, takes no more crew
/// hours (when hours are limited) and leaves no more host, and is strictly better in one of
/// them (ties: the earlier choice is kept). Dropping dominated choices never changes the
/// optimum, since R only grows with r_i.
fn dominated(problem: &Problem, i: usize, o: usize) -> bool {
    let c = &problem.choices[i][o];
    let hours_matter = problem.crew_hours.is_some();
    problem.choices[i].iter().enumerate().any(|(k, d)| {
        if k == o {
            return false;
        }
        let no_worse =
            d.cost <= c.cost && d.remaining <= c.remaining && (!hours_matter || d.hours <= c.hours);
        let better =
            d.cost < c.cost || d.remaining < c.remaining || (hours_matter && d.hours < c.hours);
        no_worse && (better || k < o)
    })
}

/// The compact formulation: one u per link and choice of one end (see the module docs).
/// The direct formulation: x_im binary, sum_m x_im <= 1, t_i = sum_m e_m x_im, and
/// r_i r_j = 1 - t_i - t_j + sum_mn e_m e_n y_ijmn with y_ijmn >= x_im + x_jn - 1, y >= 0
/// (Fortet 1960; exact at integer points because the y coefficients are positive and minimised).
/// Own terms are linear: r_i^2 = 1 - sum_m (1 - r_m^2) x_im. No warm start: it is the baseline.
fn build_direct(problem: &Problem, scale: f64) -> Result<Built> {
    let n = problem.len();
    let mut vars = ProblemVariables::new();
    let mut columns = 0usize;
    let mut x: Vec<Vec<(Variable, usize)>> = vec![Vec::new(); n];
    let mut x_columns: Vec<Vec<(usize, usize)>> = vec![Vec::new(); n];
    for i in 0..n {
        if problem.excluded[i] {
            continue;
        }
        for o in 0..problem.choices[i].len() {
            x[i].push((vars.add(variable().binary()), columns));
            x_columns[i].push((o, columns));
            columns += 1;
        }
    }
    let e = |i: usize, o: usize| 1.0 - problem.choices[i][o].remaining;
    let mut objective = Expression::from(0.0);
    let mut constant = 0.0;
    for i in 0..n {
        constant += problem.model.own[i];
        for (o, &(v, _)) in x[i].iter().enumerate() {
            let r = problem.choices[i][o].remaining;
            objective -= problem.model.own[i] * (1.0 - r * r) * v;
        }
    }
    let mut fortet = Vec::new();
    for link in &problem.model.links {
        let (a, b, w) = (link.a, link.b, link.weight);
        constant += w;
        for (o, &(v, _)) in x[a].iter().enumerate() {
            objective -= w * e(a, o) * v;
        }
        for (o, &(v, _)) in x[b].iter().enumerate() {
            objective -= w * e(b, o) * v;
        }
        for (oa, &(va, _)) in x[a].iter().enumerate() {
            for (ob, &(vb, _)) in x[b].iter().enumerate() {
                let y = vars.add(variable().min(0.0));
                columns += 1;
                objective += w * e(a, oa) * e(b, ob) * y;
                fortet.push((y, va, vb));
            }
        }
    }
    let one = vars.add(variable().min(1.0).max(1.0));
    objective += constant * one;
    let mut lp = vars.minimise(scale * objective).using(highs);
    for i in 0..n {
        if x[i].is_empty() {
            continue;
        }
        let sum: Expression = x[i].iter().map(|&(v, _)| v).sum();
        lp = if problem.required[i] {
            lp.with(sum.eq(1.0))
        } else {
            lp.with(sum.leq(1.0))
        };
    }
    let chosen = |f: &dyn Fn(&Choice) -> f64| -> Expression {
        (0..n)
            .flat_map(|i| {
                x[i].iter()
                    .enumerate()
                    .map(|(o, &(v, _))| f(&problem.choices[i][o]) * v)
                    .collect::<Vec<_>>()
            })
            .sum()
    };
    lp = lp.with(chosen(&|c| c.cost).leq(problem.budget));
    if let Some(h) = problem.crew_hours {
        lp = lp.with(chosen(&|c| c.hours).leq(h));
    }
    for (y, va, vb) in fortet {
        lp = lp.with((y - va - vb).geq(-1.0));
    }
    let _ = columns;
    Ok(Built {
        model: lp.into_inner(),
        x_columns,
    })
}

fn build_compact(problem: &Problem, scale: f64, warm: Option<&Assignment>) -> Result<Built> {
    let n = problem.len();
    // Columns, in the order HiGHS will see them.
    let mut vars = ProblemVariables::new();
    let mut columns = 0usize;
    let mut x: Vec<Vec<(Variable, usize)>> = vec![Vec::new(); n];
    for i in 0..n {
        if problem.excluded[i] {
            continue;
        }
        for _ in &problem.choices[i] {
            x[i].push((vars.add(variable().binary()), columns));
            columns += 1;
        }
    }
    let t = |i: usize| -> Expression {
        x[i].iter()
            .zip(&problem.choices[i])
            .map(|(&(v, _), c)| (1.0 - c.remaining) * v)
            .sum()
    };
    let t_max = |i: usize| {
        problem.choices[i]
            .iter()
            .map(|c| 1.0 - c.remaining)
            .fold(0.0, f64::max)
    };
    // u columns: for each link with choices on both ends, one per choice of the side with fewer.
    struct Product {
        side: usize,
        other: usize,
        vars: Vec<(Variable, usize)>,
    }
    let mut products: Vec<(usize, Product)> = Vec::new();
    for (l, link) in problem.model.links.iter().enumerate() {
        let (a, b) = (link.a, link.b);
        if x[a].is_empty() || x[b].is_empty() {
            continue;
        }
        let (side, other) = if x[a].len() <= x[b].len() {
            (a, b)
        } else {
            (b, a)
        };
        let mut us = Vec::new();
        for _ in &x[side] {
            us.push((vars.add(variable().min(0.0).max(1.0)), columns));
            columns += 1;
        }
        products.push((
            l,
            Product {
                side,
                other,
                vars: us,
            },
        ));
    }
    let one = vars.add(variable().min(1.0).max(1.0));
    let one_column = columns;
    columns += 1;

    let constant: f64 = problem.model.own.iter().sum::<f64>()
        + problem.model.links.iter().map(|l| l.weight).sum::<f64>();
    let mut objective: Expression = constant * one;
    for i in 0..n {
        for (&(v, _), c) in x[i].iter().zip(&problem.choices[i]) {
            objective -= problem.model.own[i] * (1.0 - c.remaining * c.remaining) * v;
        }
    }
    for link in &problem.model.links {
        objective -= link.weight * (t(link.a) + t(link.b));
    }
    for (l, p) in &products {
        let w = problem.model.links[*l].weight;
        for (&(u, _), c) in p.vars.iter().zip(&problem.choices[p.side]) {
            objective += w * (1.0 - c.remaining) * u;
        }
    }
    let mut lp = vars.minimise(scale * objective).using(highs);
    for i in 0..n {
        if x[i].is_empty() {
            continue;
        }
        let chosen: Expression = x[i].iter().map(|&(v, _)| v).sum();
        if problem.required[i] {
            lp = lp.with(chosen.eq(1.0));
        } else {
            lp = lp.with(chosen.leq(1.0));
        }
    }
    let cost: Expression = (0..n)
        .flat_map(|i| {
            x[i].iter()
                .zip(&problem.choices[i])
                .map(|(&(v, _), c)| c.cost * v)
                .collect::<Vec<_>>()
        })
        .sum();
    lp = lp.with(cost.leq(problem.budget));
    if let Some(h) = problem.crew_hours {
        let hours: Expression = (0..n)
            .flat_map(|i| {
                x[i].iter()
                    .zip(&problem.choices[i])
                    .map(|(&(v, _), c)| c.hours * v)
                    .collect::<Vec<_>>()
            })
            .sum();
        lp = lp.with(hours.leq(h));
    }
    for (_, p) in &products {
        let tm = t_max(p.other);
        for (&(u, _), &(xv, _)) in p.vars.iter().zip(&x[p.side]) {
            // u >= t_other - T (1 - x)  <=>  u - t_other - T x >= -T
            lp = lp.with((Expression::from(u) - t(p.other) - tm * xv).geq(-tm));
        }
        // McCormick's lower envelope of t_side t_other on [0, T_side] x [0, T_other]:
        // P >= T_other t_side + T_side t_other - T_side T_other, with P = sum_o e_o u_o. Valid
        // for every integer plan ((T_s - t_s)(T_o - t_o) >= 0) and it keeps the relaxation from
        // treating a link as more than removed when both ends are split across methods.
        let ts = t_max(p.side);
        let product: Expression = p
            .vars
            .iter()
            .zip(&problem.choices[p.side])
            .map(|(&(u, _), c)| (1.0 - c.remaining) * u)
            .sum();
        lp = lp.with((product - tm * t(p.side) - ts * t(p.other)).geq(-ts * tm));
    }

    let mut model = lp.into_inner();
    if let Some(assignment) = warm {
        let mut start_values = vec![0.0; columns];
        start_values[one_column] = 1.0;
        let remaining = problem.remaining(assignment);
        for i in 0..n {
            if let Some(&(_, col)) = assignment[i].and_then(|o| x[i].get(o)) {
                start_values[col] = 1.0;
            }
        }
        for (_, p) in &products {
            let t_other = 1.0 - remaining[p.other];
            for (k, &(_, col)) in p.vars.iter().enumerate() {
                if assignment[p.side] == Some(k) {
                    start_values[col] = t_other;
                }
            }
        }
        model
            .try_set_solution(Some(&start_values), None, None, None)
            .map_err(|e| Error::Internal(format!("HiGHS refused the warm start: {e:?}")))?;
    }
    let x_columns = x
        .iter()
        .map(|v| v.iter().enumerate().map(|(o, &(_, c))| (o, c)).collect())
        .collect();
    Ok(Built { model, x_columns })
}

/// The transportation (RLT) formulation: per patch one binary per option, "untreated"
/// included (v_i0 + sum_o x_io = 1); per link one continuous z_kl per pair of options with
/// sum_l z_kl = v_ik and sum_k z_kl = v_jl. At integer points z is the product v_ik v_jl, so
/// R = sum_i own_i sum_k r_k^2 v_ik + sum_links w_ij sum_kl r_k r_l z_kl exactly, and its LP
/// relaxation is the local-consistency bound, much tighter than the compact one.
/// Several risk models over the same patches (an ensemble of dispersal scenarios) and what to
/// minimise over them: the largest of R_s - offset_s (offsets 0: the worst-case R; offsets =
/// each scenario's least achievable R: the largest regret).
#[derive(Debug, Clone)]
pub struct MinMax<'a> {
    pub models: Vec<&'a RiskModel>,
    pub offsets: Vec<f64>,
}

impl MinMax<'_> {
    /// max_s (R_s(a) - offset_s).
    pub fn value(&self, problem: &Problem, a: &Assignment) -> f64 {
        let r = problem.remaining(a);
        self.models
            .iter()
            .zip(&self.offsets)
            .map(|(m, o)| m.risk(&r) - o)
            .fold(f64::NEG_INFINITY, f64::max)
    }

    /// max_s R_s(a): the risk that remains in the worst scenario.
    pub fn worst_risk(&self, problem: &Problem, a: &Assignment) -> f64 {
        let r = problem.remaining(a);
        self.models
            .iter()
            .map(|m| m.risk(&r))
            .fold(f64::NEG_INFINITY, f64::max)
    }
}

/// The transportation formulation. With `minmax`, the objective is an epigraph variable t with
/// t >= R_s - offset_s for every model (exact: each R_s is linear in (v, z)); the z variables
/// cover the union of every model's links.
fn build_transport(
    problem: &Problem,
    scale: f64,
    warm: Option<&Assignment>,
    minmax: Option<&MinMax>,
) -> Result<Built> {
    let n = problem.len();
    let models: Vec<&RiskModel> = match minmax {
        Some(m) => m.models.clone(),
        None => vec![problem.model],
    };
    let mut vars = ProblemVariables::new();
    let mut columns = 0usize;
    // options[i]: (variable, column, r) with the untreated option first; empty when fixed.
    // kept[i]: the choice index behind each later option (dominated choices get none).
    let mut options: Vec<Vec<(Variable, usize, f64)>> = vec![Vec::new(); n];
    let mut kept: Vec<Vec<usize>> = vec![Vec::new(); n];
    let mut x_columns: Vec<Vec<(usize, usize)>> = vec![Vec::new(); n];
    for i in 0..n {
        if problem.excluded[i] || problem.choices[i].is_empty() {
            continue;
        }
        let untreated = if problem.required[i] {
            variable().binary().max(0.0)
        } else {
            variable().binary()
        };
        options[i].push((vars.add(untreated), columns, 1.0));
        columns += 1;
        for (o, c) in problem.choices[i].iter().enumerate() {
            if dominated(problem, i, o) {
                continue;
            }
            options[i].push((vars.add(variable().binary()), columns, c.remaining));
            x_columns[i].push((o, columns));
            kept[i].push(o);
            columns += 1;
        }
    }
    struct Pair {
        a: usize,
        b: usize,
        z: Vec<Vec<(Variable, usize)>>,
    }
    // One set of z per linked pair of treatable patches, over every model's links.
    let mut pairs: Vec<Pair> = Vec::new();
    let mut pair_of: std::collections::HashMap<(usize, usize), usize> =
        std::collections::HashMap::new();
    for model in &models {
        for link in &model.links {
            let (a, b) = (link.a.min(link.b), link.a.max(link.b));
            if options[a].is_empty() || options[b].is_empty() || pair_of.contains_key(&(a, b)) {
                continue;
            }
            let mut z = Vec::with_capacity(options[a].len());
            for _ in 0..options[a].len() {
                let mut row = Vec::with_capacity(options[b].len());
                for _ in 0..options[b].len() {
                    row.push((vars.add(variable().min(0.0).max(1.0)), columns));
                    columns += 1;
                }
                z.push(row);
            }
            pair_of.insert((a, b), pairs.len());
            pairs.push(Pair { a, b, z });
        }
    }
    let one = vars.add(variable().min(1.0).max(1.0));
    let one_column = columns;
    columns += 1;
    // R of each model as a linear expression in (v, z) and the fixed column.
    let risk_of = |model: &RiskModel| -> Expression {
        let mut constant = 0.0;
        let mut objective = Expression::from(0.0);
        for i in 0..n {
            if options[i].is_empty() {
                constant += model.own[i];
            } else {
                for &(v, _, r) in &options[i] {
                    objective += model.own[i] * r * r * v;
                }
            }
        }
        for link in &model.links {
            let (a, b, w) = (link.a.min(link.b), link.a.max(link.b), link.weight);
            match (options[a].is_empty(), options[b].is_empty()) {
                (true, true) => constant += w,
                (false, true) => {
                    for &(v, _, r) in &options[a] {
                        objective += w * r * v;
                    }
                }
                (true, false) => {
                    for &(v, _, r) in &options[b] {
                        objective += w * r * v;
                    }
                }
                (false, false) => {
                    let p = &pairs[pair_of[&(a, b)]];
                    for (k, &(_, _, ra)) in options[a].iter().enumerate() {
                        for (l, &(_, _, rb)) in options[b].iter().enumerate() {
                            objective += w * ra * rb * p.z[k][l].0;
                        }
                    }
                }
            }
        }
        objective + constant * one
    };
    let risks: Vec<Expression> = models.iter().map(|m| risk_of(m)).collect();
    let epigraph = minmax.map(|_| {
        let t = vars.add(variable());
        let column = columns;
        columns += 1;
        (t, column)
    });
    let mut lp = match epigraph {
        None => vars
            .minimise(scale * risks.into_iter().next().expect("one model"))
            .using(highs),
        Some((t, _)) => {
            let mut lp = vars.minimise(scale * t).using(highs);
            let offsets = &minmax.expect("epigraph only with minmax").offsets;
            for (risk, offset) in risks.into_iter().zip(offsets) {
                lp = lp.with((scale * (risk - t)).leq(scale * offset));
            }
            lp
        }
    };
    for i in 0..n {
        if options[i].is_empty() {
            continue;
        }
        let sum: Expression = options[i].iter().map(|&(v, _, _)| v).sum();
        lp = lp.with(sum.eq(1.0));
    }
    let chosen = |f: &dyn Fn(&Choice) -> f64| -> Expression {
        (0..n)
            .flat_map(|i| {
                options[i]
                    .iter()
                    .skip(1)
                    .zip(&kept[i])
                    .map(|(&(v, _, _), &o)| f(&problem.choices[i][o]) * v)
                    .collect::<Vec<_>>()
            })
            .sum()
    };
    lp = lp.with(chosen(&|c| c.cost).leq(problem.budget));
    if let Some(h) = problem.crew_hours {
        lp = lp.with(chosen(&|c| c.hours).leq(h));
    }
    for p in &pairs {
        for (k, row) in p.z.iter().enumerate() {
            let sum: Expression = row.iter().map(|&(v, _)| v).sum();
            lp = lp.with((sum - options[p.a][k].0).eq(0.0));
        }
        for l in 0..options[p.b].len() {
            let sum: Expression = p.z.iter().map(|row| row[l].0).sum();
            lp = lp.with((sum - options[p.b][l].0).eq(0.0));
        }
    }
    let mut model = lp.into_inner();
    // A warm start that uses a dominated choice is skipped (HiGHS finds its own incumbent).
    let usable = warm.filter(|a| (0..n).all(|i| a[i].is_none_or(|o| kept[i].contains(&o))));
    if let Some(assignment) = usable {
        let mut values = vec![0.0; columns];
        values[one_column] = 1.0;
        let option_of = |i: usize| {
            assignment[i]
                .and_then(|o| kept[i].iter().position(|&k| k == o))
                .map(|p| p + 1)
                .unwrap_or(0)
        };
        for i in 0..n {
            if let Some(&(_, col, _)) = options[i].get(option_of(i)) {
                values[col] = 1.0;
            }
        }
        for p in &pairs {
            values[p.z[option_of(p.a)][option_of(p.b)].1] = 1.0;
        }
        if let (Some((_, column)), Some(mm)) = (epigraph, minmax) {
            values[column] = mm.value(problem, assignment);
        }
        model
            .try_set_solution(Some(&values), None, None, None)
            .map_err(|e| Error::Internal(format!("HiGHS refused the warm start: {e:?}")))?;
    }
    Ok(Built { model, x_columns })
}

fn infeasible(
    n: usize,
    risk_before: f64,
    greedy: Option<(Assignment, f64)>,
    start: Instant,
) -> Solved {
    Solved {
        assignment: vec![None; n],
        risk_after: risk_before,
        bound: f64::NAN,
        gap: f64::NAN,
        status: Status::Infeasible,
        seconds: start.elapsed().as_secs_f64(),
        greedy,
        path: "infeasible",
        bound_from: "none",
    }
}
