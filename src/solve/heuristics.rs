//! Heuristics on a [`Problem`]: the adaptive benefit/cost greedy ([`fill`], [`greedy`]) that
//! warm-starts every search, the rounding of a relaxed solution ([`round`]), the drop-and-refill
//! local search ([`improve`]), and the brute force ([`brute_force`]) that tests the exact paths.
//!
//! # Units
//! Costs in catalogue currency, hours in crew hours, R in share-squared units.

use crate::input::treatments::Choice;
use crate::solve::problem::{Assignment, Problem};

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

/// Restarts of [`search`] in a row that find nothing better before it gives up.
pub const STALL_RESTARTS: usize = 64;

/// Local search that keeps trying while `done` allows (issue 23): [`improve`] to a local
/// optimum, then a larger neighbourhood — drop k treated patches drawn from a seeded stream
/// (k doubling, up to half the plan, after each restart that finds nothing better; back to 2
/// after one that does), refill greedily, improve again — keeping the best plan. Stops when
/// `done` says so (checked between tries) or after [`STALL_RESTARTS`] fruitless restarts in a
/// row. Deterministic for a given seed when `done` does not stop it. Returns the best plan,
/// its risk and true when it stopped for lack of improvement rather than by `done`.
pub fn search(
    problem: &Problem,
    plan: Assignment,
    risk: f64,
    seed: u64,
    done: impl Fn(f64) -> bool,
) -> (Assignment, f64, bool) {
    let (mut best, mut best_risk, exhausted) = improve(problem, plan, risk, &done);
    if !exhausted {
        return (best, best_risk, false);
    }
    let mut rng = crate::core::rng::SplitMix::new(seed ^ 0x1e57_5ea4);
    let (mut k, mut stall) = (2usize, 0usize);
    while stall < STALL_RESTARTS {
        if done(best_risk) {
            return (best, best_risk, false);
        }
        let treated: Vec<usize> = (0..problem.len())
            .filter(|&i| best[i].is_some() && !problem.required[i])
            .collect();
        if treated.is_empty() {
            break;
        }
        let mut trial = best.clone();
        let drop = k.min(treated.len().div_ceil(2)).max(1);
        for _ in 0..drop {
            let i = treated[((rng.unit() * treated.len() as f64) as usize).min(treated.len() - 1)];
            trial[i] = None;
        }
        let trial = fill(problem, trial);
        let r = problem.risk(&trial);
        if !problem.feasible(&trial) {
            stall += 1;
            continue;
        }
        let (trial, r, _) = improve(problem, trial, r, &done);
        if r < best_risk * (1.0 - 1e-12) && problem.feasible(&trial) {
            best = trial;
            best_risk = r;
            k = 2;
            stall = 0;
        } else {
            k = (k * 2).min(treated.len().max(2));
            if k >= treated.len().div_ceil(2).max(2) {
                k = 2;
            }
            stall += 1;
        }
    }
    (best, best_risk, true)
}

/// Drop treatments that buy exactly nothing (a patch with no effective host, e.g. suitability
/// 0, and no link weight): the solver is indifferent to them, a land manager is not.
pub(crate) fn prune_worthless(problem: &Problem, assignment: &mut Assignment) {
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
