//! The direct formulation: the textbook baseline the benchmark compares against (see
//! [`build_direct`]).

use good_lp::solvers::highs::highs;
use good_lp::{Expression, ProblemVariables, SolverModel, Variable, variable};

use crate::core::error::Result;
use crate::input::treatments::Choice;
use crate::solve::mip::highs::Built;
use crate::solve::problem::Problem;

/// The direct formulation: x_im binary, sum_m x_im <= 1, t_i = sum_m e_m x_im, and
/// r_i r_j = 1 - t_i - t_j + sum_mn e_m e_n y_ijmn with y_ijmn >= x_im + x_jn - 1, y >= 0
/// (Fortet 1960; exact at integer points because the y coefficients are positive and minimised).
/// Own terms are linear: r_i^2 = 1 - sum_m (1 - r_m^2) x_im. No warm start: it is the baseline.
pub(crate) fn build_direct(problem: &Problem, scale: f64) -> Result<Built> {
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
