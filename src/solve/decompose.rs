//! Exact decomposition of the plan MIP by connected components of the patch graph.
//!
//! Patches in different components share no link, so R is the sum of each component's own R
//! and the components interact only through the budget and crew hours. Each small component's
//! plans are enumerated (in parallel) and reduced to their Pareto frontier in (cost, hours,
//! risk); the one budget is then shared exactly by a multiple-choice knapsack over the
//! frontiers — one binary per frontier point, one point per component — solved by HiGHS
//! (the multiple-choice knapsack: Sinha & Zoltners 1979, from memory). A dominated plan is
//! never needed, so the merge's optimum is the problem's.
//!
//! # Units
//! As the optimiser: costs in catalogue currency, hours in crew hours, R in share-squared units.

use good_lp::solvers::highs::highs;
use good_lp::{Expression, ProblemVariables, SolverModel, Variable, variable};

use crate::core::error::Result;
use crate::solve::components::component_members;
use crate::solve::mip::highs::Built;
use crate::solve::problem::{Assignment, Problem};

/// Components with more plans than this are not enumerated (the problem is then solved whole).
pub const PLANS_PER_COMPONENT: usize = 4096;

/// Frontier points over all components above this: solved whole instead.
pub const TOTAL_POINTS: usize = 400_000;

/// One Pareto-efficient plan of a component.
#[derive(Debug, Clone)]
pub struct Point {
    pub cost: f64,
    pub hours: f64,
    pub risk: f64,
    /// The choice of each member (in `Piece::members` order).
    pub plan: Vec<Option<usize>>,
}

/// A component and its frontier.
#[derive(Debug, Clone)]
pub struct Piece {
    pub members: Vec<usize>,
    pub points: Vec<Point>,
}

/// Every component's frontier, or None when some component has more than
/// [`PLANS_PER_COMPONENT`] plans, the frontiers together exceed [`TOTAL_POINTS`] or there is
/// only one component. Components are enumerated on two threads.
pub fn pieces(problem: &Problem) -> Option<Vec<Piece>> {
    let members = component_members(problem);
    if members.len() < 2 {
        return None;
    }
    let count = members.len();
    let pieces = small_pieces(problem, members);
    if pieces.len() < count || pieces.iter().map(|p| p.points.len()).sum::<usize>() > TOTAL_POINTS {
        return None;
    }
    Some(pieces)
}

/// The frontiers of those `components` with at most [`PLANS_PER_COMPONENT`] plans, in the
/// order given (the others are left out), enumerated on two threads.
pub fn small_pieces(problem: &Problem, components: Vec<Vec<usize>>) -> Vec<Piece> {
    let options = |i: usize| {
        usize::from(!problem.required[i])
            + if problem.excluded[i] {
                0
            } else {
                problem.choices[i].len()
            }
    };
    let members: Vec<Vec<usize>> = components
        .into_iter()
        .filter(|m| {
            let mut plans = 1usize;
            for &i in m {
                plans = plans.saturating_mul(options(i).max(1));
            }
            plans <= PLANS_PER_COMPONENT
        })
        .collect();
    let workers = 2;
    let members = &members;
    let parts: Vec<Vec<(usize, Vec<Point>)>> = std::thread::scope(|scope| {
        let handles: Vec<_> = (0..workers)
            .map(|w| {
                scope.spawn(move || {
                    (w..members.len())
                        .step_by(workers)
                        .map(|c| (c, frontier(problem, &members[c])))
                        .collect::<Vec<_>>()
                })
            })
            .collect();
        handles
            .into_iter()
            .map(|h| h.join().expect("enumeration thread"))
            .collect()
    });
    let mut frontiers: Vec<Vec<Point>> = vec![Vec::new(); members.len()];
    for part in parts {
        for (c, points) in part {
            frontiers[c] = points;
        }
    }
    members
        .iter()
        .cloned()
        .zip(frontiers)
        .map(|(members, points)| Piece { members, points })
        .collect()
}

/// The Pareto frontier of one component's plans within the budget and hours (empty when none
/// fits, e.g. a required patch too dear).
pub fn frontier(problem: &Problem, members: &[usize]) -> Vec<Point> {
    let model = problem.model;
    let mut local = std::collections::HashMap::new();
    for (k, &i) in members.iter().enumerate() {
        local.insert(i, k);
    }
    // Links inside the component, by local index. A link of weight 0 does not join
    // components, so its other end may lie outside; it adds nothing to R and is skipped.
    let links: Vec<(usize, usize, f64)> = members
        .iter()
        .flat_map(|&i| {
            let local = &local;
            model.adjacency[i]
                .iter()
                .filter(move |&&(j, _)| j > i)
                .filter_map(move |&(j, l)| {
                    Some((local[&i], *local.get(&j)?, model.links[l].weight))
                })
        })
        .collect();
    let hours_limit = problem.crew_hours.unwrap_or(f64::INFINITY);
    let mut all: Vec<Point> = Vec::new();
    let mut plan: Vec<Option<usize>> = vec![None; members.len()];
    #[allow(clippy::too_many_arguments)]
    fn walk(
        problem: &Problem,
        members: &[usize],
        links: &[(usize, usize, f64)],
        hours_limit: f64,
        k: usize,
        cost: f64,
        hours: f64,
        plan: &mut Vec<Option<usize>>,
        all: &mut Vec<Point>,
    ) {
        if k == members.len() {
            let r: Vec<f64> = plan
                .iter()
                .zip(members)
                .map(|(o, &i)| o.map(|o| problem.choices[i][o].remaining).unwrap_or(1.0))
                .collect();
            let mut risk: f64 = members
                .iter()
                .zip(&r)
                .map(|(&i, r)| problem.model.own[i] * r * r)
                .sum();
            for &(a, b, w) in links {
                risk += w * r[a] * r[b];
            }
            all.push(Point {
                cost,
                hours,
                risk,
                plan: plan.clone(),
            });
            return;
        }
        let i = members[k];
        if !problem.required[i] {
            plan[k] = None;
            walk(
                problem,
                members,
                links,
                hours_limit,
                k + 1,
                cost,
                hours,
                plan,
                all,
            );
        }
        if !problem.excluded[i] {
            for (o, c) in problem.choices[i].iter().enumerate() {
                let (nc, nh) = (cost + c.cost, hours + c.hours);
                let fits = Problem::within(problem.budget, nc)
                    && (problem.crew_hours.is_none() || Problem::within(hours_limit, nh));
                if fits {
                    plan[k] = Some(o);
                    walk(
                        problem,
                        members,
                        links,
                        hours_limit,
                        k + 1,
                        nc,
                        nh,
                        plan,
                        all,
                    );
                }
            }
        }
        plan[k] = None;
    }
    walk(
        problem,
        members,
        &links,
        hours_limit,
        0,
        0.0,
        0.0,
        &mut plan,
        &mut all,
    );
    pareto(all, problem.crew_hours.is_some())
}

/// Keep the points no other point beats in cost, hours (when they matter) and risk. Ties keep
/// the first in (cost, hours, risk) order.
fn pareto(mut all: Vec<Point>, hours_matter: bool) -> Vec<Point> {
    all.sort_by(|a, b| {
        a.cost
            .total_cmp(&b.cost)
            .then(a.hours.total_cmp(&b.hours))
            .then(a.risk.total_cmp(&b.risk))
    });
    let mut kept: Vec<Point> = Vec::new();
    if !hours_matter {
        for p in all {
            if kept.last().is_none_or(|q| p.risk < q.risk) {
                kept.push(p);
            }
        }
        return kept;
    }
    for p in all {
        let dominated = kept.iter().any(|q| q.hours <= p.hours && q.risk <= p.risk);
        if !dominated {
            kept.push(p);
        }
    }
    kept
}

/// The merge MIP: y binary per frontier point, one point per component, the budget and hours
/// rows, objective R (scaled). `x_columns` maps each patch's choice to the columns of the
/// points that give it, so [`crate::solve::mip::highs::run_highs`] reads the plan back as usual.
pub(crate) fn build_merge(
    problem: &Problem,
    pieces: &[Piece],
    scale: f64,
    warm: Option<&Assignment>,
) -> Result<Built> {
    let n = problem.len();
    let mut vars = ProblemVariables::new();
    let mut y: Vec<Vec<(Variable, usize)>> = Vec::with_capacity(pieces.len());
    let mut x_columns: Vec<Vec<(usize, usize)>> = vec![Vec::new(); n];
    let mut columns = 0usize;
    let mut objective = Expression::from(0.0);
    for piece in pieces {
        let mut row = Vec::with_capacity(piece.points.len());
        for p in &piece.points {
            let v = vars.add(variable().binary());
            objective += scale * p.risk * v;
            for (k, &i) in piece.members.iter().enumerate() {
                if let Some(o) = p.plan[k] {
                    x_columns[i].push((o, columns));
                }
            }
            row.push((v, columns));
            columns += 1;
        }
        y.push(row);
    }
    let mut lp = vars.minimise(objective).using(highs);
    let mut cost = Expression::from(0.0);
    let mut hours = Expression::from(0.0);
    for (piece, row) in pieces.iter().zip(&y) {
        let sum: Expression = row.iter().map(|&(v, _)| v).sum();
        lp = lp.with(sum.eq(1.0));
        for (p, &(v, _)) in piece.points.iter().zip(row) {
            cost += p.cost * v;
            hours += p.hours * v;
        }
    }
    lp = lp.with(cost.leq(problem.budget));
    if let Some(h) = problem.crew_hours {
        lp = lp.with(hours.leq(h));
    }
    let mut model = lp.into_inner();
    if let Some(plan) = warm {
        // Each component takes a frontier point at least as good as the warm plan's part.
        let mut values = vec![0.0; columns];
        let mut complete = true;
        for (piece, row) in pieces.iter().zip(&y) {
            let (mut c, mut h) = (0.0, 0.0);
            for &i in &piece.members {
                if let Some(o) = plan[i] {
                    c += problem.choices[i][o].cost;
                    h += problem.choices[i][o].hours;
                }
            }
            // The least-risk point costing no more: at least as good as the part itself,
            // which is on the frontier or dominated by a point of it.
            let tol = 1e-9;
            let best = piece
                .points
                .iter()
                .enumerate()
                .filter(|(_, p)| {
                    p.cost <= c + tol * c.abs().max(1.0)
                        && (problem.crew_hours.is_none() || p.hours <= h + tol * h.abs().max(1.0))
                })
                .min_by(|a, b| a.1.risk.total_cmp(&b.1.risk))
                .map(|(k, _)| k);
            match best {
                Some(k) => values[row[k].1] = 1.0,
                None => complete = false,
            }
        }
        if complete {
            let _ = model.try_set_solution(Some(&values), None, None, None);
        }
    }
    Ok(Built { model, x_columns })
}
