//! The transportation (RLT) formulation, the default exact model (see [`build_transport`]),
//! optionally with a min-max epigraph over several risk models; and its memory estimate.

use good_lp::solvers::highs::highs;
use good_lp::{Expression, ProblemVariables, SolverModel, Variable, variable};

use crate::core::error::{Error, Result};
use crate::input::treatments::Choice;
use crate::model::risk::RiskModel;
use crate::solve::mip::highs::Built;
use crate::solve::problem::{Assignment, MinMax, Problem};

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

/// The transportation (RLT) formulation: per patch one binary per option, "untreated"
/// included (v_i0 + sum_o x_io = 1); per link one continuous z_kl per pair of options with
/// sum_l z_kl = v_ik and sum_k z_kl = v_jl. At integer points z is the product v_ik v_jl, so
/// R = sum_i own_i sum_k r_k^2 v_ik + sum_links w_ij sum_kl r_k r_l z_kl exactly, and its LP
/// relaxation is the local-consistency bound, much tighter than the compact one.
///
/// With `minmax`, the objective is an epigraph variable t with
/// t >= scale_s (R_s - offset_s) for every model (exact: each R_s is linear in (v, z)); the z variables
/// cover the union of every model's links.
pub(crate) fn build_transport(
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
            let mm = minmax.expect("epigraph only with minmax");
            // t >= k_s (R_s - offset_s), written k_s R_s - t <= k_s offset_s.
            for ((risk, offset), k) in risks.into_iter().zip(&mm.offsets).zip(&mm.scales) {
                lp = lp.with((scale * (*k * risk - t)).leq(scale * k * offset));
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
