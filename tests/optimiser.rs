//! The MIP against brute-force enumeration (the oracle: every assignment of at most one method
//! per patch, checked for budget, hours, required and excluded, with R evaluated by its
//! definition) on random small instances; and the greedy heuristic's plan against both.

mod common;

use common::{random_instance, small_spec};
use hostcut::core::scenario::Formulation;
use hostcut::solve::heuristics::{brute_force, greedy};
use hostcut::solve::optimise::solve;
use hostcut::solve::problem::{Limits, Problem, Status};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

#[test]
fn mip_equals_brute_force_on_random_instances() {
    check_against_brute_force(Formulation::Transport);
}

#[test]
fn compact_mip_equals_brute_force_on_random_instances() {
    check_against_brute_force(Formulation::Compact);
}

#[test]
fn direct_baseline_formulation_equals_brute_force_too() {
    check_against_brute_force(Formulation::Direct);
}

fn check_against_brute_force(formulation: Formulation) {
    let mut compared = 0;
    let mut infeasible = 0;
    let mut linked = 0;
    for seed in 0..40 {
        let inst = random_instance(&small_spec(seed, 5 + (seed % 4) as usize));
        let problem = inst.problem();
        let exact = brute_force(&problem);
        let limits = Limits {
            formulation,
            ..Limits::new(60.0, 0.0)
        };
        let solved = solve(&problem, limits).unwrap();
        match exact {
            None => {
                assert_eq!(
                    solved.status,
                    Status::Infeasible,
                    "seed {seed}: brute force finds no feasible plan"
                );
                infeasible += 1;
            }
            Some((_, best)) => {
                assert_eq!(
                    solved.status,
                    Status::Optimal,
                    "seed {seed}: gap {} bound {} risk {}",
                    solved.gap,
                    solved.bound,
                    solved.risk_after
                );
                assert!(
                    problem.feasible(&solved.assignment),
                    "seed {seed}: MIP plan breaks a constraint"
                );
                let r = problem.risk(&solved.assignment);
                assert!(
                    (r - best).abs() <= 1e-9 * best.max(1e-12),
                    "seed {seed}: MIP risk {r} vs brute force {best}"
                );
                assert!(
                    (solved.risk_after - r).abs() <= 1e-12,
                    "seed {seed}: reported risk differs from evaluated risk"
                );
                assert!(
                    solved.bound <= best * (1.0 + 1e-9),
                    "seed {seed}: bound {} above the optimum {best}",
                    solved.bound
                );
                if let Some((g, gr)) = greedy(&problem) {
                    assert!(problem.feasible(&g), "seed {seed}: greedy plan infeasible");
                    assert!(
                        gr >= best * (1.0 - 1e-12),
                        "seed {seed}: greedy beat the optimum"
                    );
                }
                compared += 1;
                if !inst.land.model.links.is_empty() {
                    linked += 1;
                }
            }
        }
    }
    assert!(
        compared >= 20,
        "only {compared} feasible instances compared"
    );
    assert!(linked >= 15, "only {linked} instances had links");
    eprintln!(
        "compared {compared} instances ({linked} with links), {infeasible} infeasible agreed"
    );
}

#[test]
fn zero_budget_gives_the_empty_plan() {
    let inst = random_instance(&small_spec(3, 8));
    let problem = Problem {
        model: &inst.land.model,
        choices: inst.choices.clone(),
        budget: 0.0,
        crew_hours: None,
        required: vec![false; inst.land.model.len()],
        excluded: vec![false; inst.land.model.len()],
    };
    let solved = solve(&problem, Limits::new(10.0, 0.0)).unwrap();
    assert!(solved.assignment.iter().all(Option::is_none));
    assert!((solved.risk_after - inst.land.model.risk_before()).abs() < 1e-15);
}

/// The Frank–Wolfe bound of the convex reformulation (src/solve/relax/convex.rs) is a lower bound on the
/// optimum found by brute force, and it is sharper than the treat-everything floor on most
/// instances (the floor ignores the budget).
#[test]
fn relaxation_bound_never_exceeds_the_brute_force_optimum() {
    use hostcut::solve::relax::{Stop, bound};
    let (mut compared, mut sharper) = (0, 0);
    let mut closed = 0.0;
    for seed in 0..40 {
        let inst = random_instance(&small_spec(seed, 5 + (seed % 4) as usize));
        let problem = inst.problem();
        let Some((best_plan, best)) = brute_force(&problem) else {
            continue;
        };
        let stop = Stop {
            gap: 0.0,
            max_iterations: 5000,
            time_limit_s: 10.0,
        };
        let b = bound(&problem, &best_plan, best, stop).expect("feasible");
        assert!(
            b.value <= best * (1.0 + 1e-9) + 1e-15,
            "seed {seed}: relaxation bound {} above the optimum {best}",
            b.value
        );
        let (_, floor) = problem.everything();
        if b.value > floor * (1.0 + 1e-6) {
            sharper += 1;
        }
        if best > floor {
            closed += ((b.value - floor) / (best - floor)).clamp(0.0, 1.0);
        }
        compared += 1;
    }
    assert!(compared >= 20, "only {compared} instances compared");
    assert!(
        sharper * 2 >= compared,
        "the bound beat the floor on only {sharper} of {compared}"
    );
    eprintln!(
        "relaxation: {compared} instances, sharper than the floor on {sharper}, closes {:.0}% of the floor's gap on average",
        100.0 * closed / compared as f64
    );
}

/// The smallest eigenvalue by Lanczos (src/solve/relax/lanczos.rs) against nalgebra's symmetric eigensolver
/// (a general-purpose reference library), on random sparse symmetric matrices including ones
/// with repeated eigenvalues (disconnected identical blocks).
#[test]
fn lanczos_smallest_eigenvalue_matches_nalgebra() {
    let mut rng = ChaCha8Rng::seed_from_u64(7);
    for case in 0..60 {
        let n = rng.gen_range(1..=70);
        let diag: Vec<f64> = (0..n).map(|_| rng.gen_range(0.2..2.0)).collect();
        let mut off = Vec::new();
        let density = rng.gen_range(0.02..0.6);
        for i in 0..n {
            for j in (i + 1)..n {
                if rng.gen_bool(density) {
                    off.push((i, j, rng.gen_range(0.0..1.0)));
                }
            }
        }
        if case % 10 == 9 {
            // Two identical blocks: every eigenvalue doubled.
            let half = n / 2;
            off.retain(|&(i, j, _)| i < half && j < half);
            let copy: Vec<(usize, usize, f64)> = off
                .iter()
                .map(|&(i, j, v)| (i + half, j + half, v))
                .collect();
            off.extend(copy);
            let mut d = diag.clone();
            d[half..2 * half].copy_from_slice(&diag[..half]);
            check_eigen(&d[..2 * half], &off, case);
            continue;
        }
        check_eigen(&diag, &off, case);
    }
}

fn check_eigen(diag: &[f64], off: &[(usize, usize, f64)], case: usize) {
    let n = diag.len();
    if n == 0 {
        return;
    }
    let mut m = nalgebra::DMatrix::<f64>::zeros(n, n);
    for i in 0..n {
        m[(i, i)] = diag[i];
    }
    for &(i, j, v) in off {
        m[(i, j)] += v;
        m[(j, i)] += v;
    }
    let reference = m
        .symmetric_eigen()
        .eigenvalues
        .iter()
        .cloned()
        .fold(f64::INFINITY, f64::min);
    let (theta, residual) = hostcut::solve::relax::lanczos::smallest_eigenvalue(diag, off);
    assert!(
        (theta - reference).abs() <= 1e-8 * (1.0 + reference.abs()),
        "case {case} (n {n}): Lanczos {theta} vs nalgebra {reference}"
    );
    assert!(residual <= 1e-6, "case {case}: residual {residual}");
}

/// The message-passing bound (src/solve/relax/message_passing.rs) against the local-polytope LP itself, written
/// out here and solved by HiGHS through good_lp (a general-purpose LP solver from the
/// registry): one weight x_io per patch option (untreated included unless required), one
/// y_l,o,o' per link and option pair with y's marginals equal to x (Sherali & Adams 1990's
/// first level; the pairwise local polytope of Wainwright & Jordan 2008, both from memory),
/// the budget and crew hours as rows. Weak duality: the bound never exceeds the LP's optimum,
/// which never exceeds the brute-force optimum; and it comes within 1 % of the LP on
/// average (message passing's fixed points need not be LP optimal, so only on average).
#[test]
fn message_passing_bound_is_below_the_local_polytope_lp_and_close_to_it() {
    use good_lp::{Expression, ProblemVariables, Solution, SolverModel, constraint, variable};
    use hostcut::solve::relax::{Stop, local_polytope_bound};
    let (mut compared, mut ratio_sum) = (0, 0.0);
    for seed in 100..140 {
        let inst = random_instance(&small_spec(seed, 5 + (seed % 4) as usize));
        let problem = inst.problem();
        let Some((_, best)) = brute_force(&problem) else {
            continue;
        };
        let n = problem.len();
        // Options per patch: (cost, hours, e).
        let options: Vec<Vec<(f64, f64, f64)>> = (0..n)
            .map(|i| {
                let mut o = Vec::new();
                if !problem.required[i] {
                    o.push((0.0, 0.0, 1.0));
                }
                if !problem.excluded[i] {
                    o.extend(
                        problem.choices[i]
                            .iter()
                            .map(|c| (c.cost, c.hours, c.remaining)),
                    );
                }
                o
            })
            .collect();
        let mut vars = ProblemVariables::new();
        let x: Vec<Vec<_>> = options
            .iter()
            .map(|o| o.iter().map(|_| vars.add(variable().min(0.0))).collect())
            .collect();
        let mut objective = Expression::from(0.0);
        for i in 0..n {
            for (k, o) in options[i].iter().enumerate() {
                objective += inst.land.model.own[i] * o.2 * o.2 * x[i][k];
            }
        }
        let mut rows = Vec::new();
        for l in &inst.land.model.links {
            let (a, b) = (l.a, l.b);
            let y: Vec<Vec<_>> = options[a]
                .iter()
                .map(|_| {
                    options[b]
                        .iter()
                        .map(|_| vars.add(variable().min(0.0)))
                        .collect()
                })
                .collect();
            for (p, oa) in options[a].iter().enumerate() {
                for (q, ob) in options[b].iter().enumerate() {
                    objective += l.weight * oa.2 * ob.2 * y[p][q];
                }
            }
            for p in 0..options[a].len() {
                let sum: Expression = y[p].iter().copied().sum();
                rows.push(constraint!(sum == x[a][p]));
            }
            for q in 0..options[b].len() {
                let sum: Expression = y.iter().map(|row| row[q]).sum();
                rows.push(constraint!(sum == x[b][q]));
            }
        }
        let mut cost = Expression::from(0.0);
        let mut hours = Expression::from(0.0);
        for i in 0..n {
            let one: Expression = x[i].iter().copied().sum();
            rows.push(constraint!(one == 1.0));
            for (k, o) in options[i].iter().enumerate() {
                cost += o.0 * x[i][k];
                hours += o.1 * x[i][k];
            }
        }
        rows.push(constraint!(cost <= problem.budget));
        if let Some(h) = problem.crew_hours {
            rows.push(constraint!(hours <= h));
        }
        let mut model = vars
            .minimise(objective.clone())
            .using(good_lp::solvers::highs::highs);
        for r in rows {
            model = model.with(r);
        }
        let solution = model.solve().expect("the LP is feasible when a plan is");
        let lp = solution.eval(&objective);
        let stop = Stop {
            gap: 0.0,
            max_iterations: usize::MAX,
            time_limit_s: 10.0,
        };
        let mp = local_polytope_bound(&problem, best, stop).expect("finite budget");
        let tol = 1e-7 * best.abs().max(1e-300);
        assert!(
            mp <= lp + tol,
            "seed {seed}: message passing {mp} above the LP {lp}"
        );
        assert!(
            lp <= best + tol,
            "seed {seed}: LP {lp} above the optimum {best}"
        );
        if lp > 0.0 {
            ratio_sum += mp / lp;
            compared += 1;
        }
    }
    assert!(compared >= 20, "only {compared} instances compared");
    let mean = ratio_sum / compared as f64;
    assert!(
        mean >= 0.99,
        "message passing reaches {mean:.4} of the LP on average"
    );
    eprintln!(
        "message passing: {compared} instances, {:.2}% of the local-polytope LP on average",
        100.0 * mean
    );
}

/// The objective's horizon term (`--horizon-years`, docs/model.md) replaces each option's
/// remaining host r by its mean over T years of regrowth, mean of min(1, r (1+g)^(t-1)): a
/// per-option constant, so the MIP must still equal brute force with the term on (issue 22:
/// "keep it exact"). Values of the term from its definition, summed by hand.
#[test]
fn the_horizon_term_keeps_the_optimiser_exact() {
    use hostcut::model::risk::horizon_remaining;
    // r = 0.5, g = 0.1, T = 10: 0.5, 0.55, 0.605, 0.6655, 0.73205, 0.805255, 0.8857805,
    // 0.97435855, then 1, 1: mean 0.771794405.
    assert!((horizon_remaining(0.5, 10, 0.1) - 0.771794405).abs() < 1e-12);
    assert_eq!(horizon_remaining(0.3, 1, 0.1), 0.3);
    assert!((horizon_remaining(0.0, 10, 0.1)).abs() < 1e-15);
    let mut compared = 0;
    let mut changed = 0;
    for seed in 0..30 {
        let inst = random_instance(&small_spec(seed, 5 + (seed % 4) as usize));
        let one_season = inst.problem();
        let mut problem = inst.problem();
        for c in problem.choices.iter_mut().flatten() {
            c.remaining = horizon_remaining(c.remaining, 10, 0.1);
        }
        let Some((plan, best)) = brute_force(&problem) else {
            continue;
        };
        let solved = solve(&problem, Limits::new(60.0, 0.0)).unwrap();
        assert_eq!(solved.status, Status::Optimal, "seed {seed}");
        let r = problem.risk(&solved.assignment);
        assert!(
            (r - best).abs() <= 1e-9 * best.max(1e-12),
            "seed {seed}: MIP with the horizon term {r} vs brute force {best}"
        );
        compared += 1;
        if let Some((p1, _)) = brute_force(&one_season) {
            if p1 != plan {
                changed += 1;
            }
        }
    }
    assert!(
        compared >= 15,
        "only {compared} feasible instances compared"
    );
    eprintln!("horizon term: {compared} instances exact, {changed} with a different optimum");
}
