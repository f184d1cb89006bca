//! The compact formulation: one u per link and choice of one end, plus McCormick's envelope
//! row (see [`build_compact`] and docs/model.md).

use good_lp::solvers::highs::highs;
use good_lp::{Expression, ProblemVariables, SolverModel, Variable, variable};

use crate::core::error::{Error, Result};
use crate::solve::mip::highs::Built;
use crate::solve::problem::{Assignment, Problem};

/// The compact formulation: one u per link and choice of one end (see the module docs).
pub(crate) fn build_compact(
    problem: &Problem,
    scale: f64,
    warm: Option<&Assignment>,
) -> Result<Built> {
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
