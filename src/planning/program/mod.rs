//! Multi-season programmes: every patch gets at most one *course* — a new treatment in some
//! season with some method, then zero or more consecutive follow-up visits — and one MIP chooses
//! the courses of all patches together under each season's budget and crew hours, minimising
//! sum_t d^(t-1) R_t.
//!
//! # Host dynamics (h = host relative to this season's, per patch)
//! - Untreated: U_t = (1 + g)^(t-1).
//! - New treatment with method m in season s: h_s = U_s r_m; it costs the method's price on
//!   stems x U_s.
//! - The k-th follow-up (season s + k) visits, per treated class c with method m_c,
//!   phi_(m_c) x stems_c x U_s x r_f^(k-1) stems with f = m_c's `follow_up_method` (phi its
//!   `follow_up_share`, r_f f's remaining share; priced as the smallest class f covers, since
//!   suckers and survivors are seedling- and sapling-sized), and leaves h = h_prev x r̄, r̄ the
//!   visit's stem-weighted mean of its methods' r_f.
//! - After the last visit the host regrows toward its untreated course:
//!   h_t = h_(t-1) + rho (U_t - h_(t-1)).
//!
//! # Exactness
//! Each course fixes a patch's whole host profile h_t, so R_t is quadratic in the course
//! indicators only through products of two patches' indicators. The transportation formulation
//! of the single-season MIP (see `solve/mip/transport.rs`) linearises these exactly: one binary per course
//! ("untreated" included) and one z per pair of courses of each linked pair, with marginals; the
//! objective coefficient of z_kl is sum_t d^(t-1) w_ij h_it(k) h_jt(l). No approximation is made
//! beyond the dynamics above; courses dominated by another course of the same patch (no more
//! cost or hours in any season, no more host in any season) are dropped without changing the
//! optimum.

mod run;

pub use run::{ProgramRun, plan_program};

use good_lp::solvers::highs::highs;
use good_lp::{Expression, ProblemVariables, SolverModel, Variable, variable};

use crate::core::error::{Error, Result};
use crate::input::patches::Patch;
use crate::input::treatments::{
    Catalogue, Choice, FollowUp, follow_up_remaining, follow_ups, next_follow_up, price_follow_up,
};
use crate::model::risk::RiskModel;
use crate::solve::mip::highs::{Built, run_highs};
use crate::solve::problem::{Assignment, Limits, OPTIMAL_GAP, Status};

/// What a course does in one season.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Action {
    New,
    FollowUp,
}

/// One visit of a course.
#[derive(Debug, Clone, PartialEq)]
pub struct Visit {
    pub season: usize,
    pub action: Action,
    /// Catalogue index of the method used (of a follow-up with several, the one treating the
    /// most stems).
    pub method: usize,
    /// Every method used, in catalogue order (a prescription's, or a follow-up's per class).
    pub methods: Vec<usize>,
    pub stems: f64,
    pub cost: f64,
    pub hours: f64,
}

/// One patch's course over the horizon.
#[derive(Debug, Clone, PartialEq)]
pub struct Course {
    pub start: usize,
    /// Catalogue index of the new treatment's (primary) method.
    pub method: usize,
    /// Index of the patch's choice (prescription) the course starts with: what identifies a
    /// course with `start` and `follow_ups`, since prescriptions may share a primary method.
    pub choice: usize,
    pub follow_ups: usize,
    /// h_t for every season.
    pub host: Vec<f64>,
    pub cost: Vec<f64>,
    pub hours: Vec<f64>,
    pub visits: Vec<Visit>,
}

/// Horizon settings.
#[derive(Debug, Clone)]
pub struct Horizon {
    pub seasons: usize,
    /// g: yearly growth of untreated host.
    pub growth: f64,
    /// rho: yearly regrowth toward the untreated course once visits stop.
    pub regrowth: f64,
    /// d: weight of season t is d^(t-1).
    pub discount: f64,
}

impl Horizon {
    pub fn untreated(&self) -> Vec<f64> {
        (0..self.seasons)
            .map(|t| (1.0 + self.growth).powi(t as i32))
            .collect()
    }

    pub fn weights(&self) -> Vec<f64> {
        (0..self.seasons)
            .map(|t| self.discount.powi(t as i32))
            .collect()
    }
}

/// Every course a patch may take (its eligible methods `choices`, each start season, each
/// number of consecutive follow-ups).
pub fn courses(
    catalogue: &Catalogue,
    patch: &Patch,
    choices: &[Choice],
    horizon: &Horizon,
) -> Vec<Course> {
    let u = horizon.untreated();
    let s_count = horizon.seasons;
    let mut out = Vec::new();
    for (choice_index, choice) in choices.iter().enumerate() {
        let m = choice.method.0 as usize;
        for start in 0..s_count {
            for follow_ups_n in 0..s_count - start {
                let mut host = u.clone();
                let mut cost = vec![0.0; s_count];
                let mut hours = vec![0.0; s_count];
                let mut visits = Vec::new();
                let stems = patch.stems * u[start];
                // The new treatment is the whole prescription on the grown stand.
                let (c, h, _) =
                    crate::input::treatments::price_scaled(catalogue, patch, choice, u[start]);
                cost[start] = c;
                hours[start] = h;
                host[start] = u[start] * choice.remaining;
                visits.push(Visit {
                    season: start,
                    action: Action::New,
                    method: m,
                    methods: choice.methods().iter().map(|k| k.0 as usize).collect(),
                    stems,
                    cost: c,
                    hours: h,
                });
                // Survivors and suckers of every treated class: seedling- and sapling-sized,
                // visited with the follow-up method of the method applied to that class
                // (methods notes section 8).
                let mut visit = follow_ups(catalogue, patch, choice, u[start]);
                for t in start + 1..s_count {
                    if t <= start + follow_ups_n {
                        let (c, h) = price_follow_up(catalogue, patch, &visit);
                        cost[t] = c;
                        hours[t] = h;
                        host[t] = host[t - 1] * follow_up_remaining(catalogue, &visit);
                        // The method treating the most stems names the visit (the first on a
                        // tie); `methods` lists them all.
                        let lead = visit
                            .iter()
                            .fold(None::<&FollowUp>, |best, g| match best {
                                Some(b) if b.stems >= g.stems => best,
                                _ => Some(g),
                            })
                            .map(|g| g.method.0 as usize)
                            .unwrap_or(m);
                        visits.push(Visit {
                            season: t,
                            action: Action::FollowUp,
                            method: lead,
                            methods: visit.iter().map(|g| g.method.0 as usize).collect(),
                            stems: visit.iter().map(|g| g.stems).sum(),
                            cost: c,
                            hours: h,
                        });
                        visit = next_follow_up(catalogue, &visit);
                    } else {
                        host[t] = host[t - 1] + horizon.regrowth * (u[t] - host[t - 1]);
                    }
                }
                out.push(Course {
                    start,
                    method: m,
                    choice: choice_index,
                    follow_ups: follow_ups_n,
                    host,
                    cost,
                    hours,
                    visits,
                });
            }
        }
    }
    out
}

/// The programme's optimisation problem.
#[derive(Debug, Clone)]
pub struct ProgramProblem<'a> {
    pub model: &'a RiskModel,
    pub courses: Vec<Vec<Course>>,
    pub untreated: Vec<f64>,
    /// Weight of each season in the objective.
    pub weights: Vec<f64>,
    pub budgets: Vec<f64>,
    pub hours: Option<Vec<f64>>,
    pub required: Vec<bool>,
}

impl ProgramProblem<'_> {
    pub fn len(&self) -> usize {
        self.courses.len()
    }

    pub fn is_empty(&self) -> bool {
        self.courses.is_empty()
    }

    /// h_t of every patch under `a` (index into its courses, None = untreated).
    pub fn host(&self, a: &Assignment, t: usize) -> Vec<f64> {
        (0..self.len())
            .map(|i| match a[i] {
                Some(k) => self.courses[i][k].host[t],
                None => self.untreated[t],
            })
            .collect()
    }

    /// R_t for every season.
    pub fn risks(&self, a: &Assignment) -> Vec<f64> {
        (0..self.weights.len())
            .map(|t| self.model.risk(&self.host(a, t)))
            .collect()
    }

    pub fn objective(&self, a: &Assignment) -> f64 {
        self.risks(a)
            .iter()
            .zip(&self.weights)
            .map(|(r, w)| r * w)
            .sum()
    }

    pub fn spent(&self, a: &Assignment) -> Vec<f64> {
        (0..self.weights.len())
            .map(|t| {
                (0..self.len())
                    .filter_map(|i| a[i].map(|k| self.courses[i][k].cost[t]))
                    .sum()
            })
            .collect()
    }

    fn hours_used(&self, a: &Assignment) -> Vec<f64> {
        (0..self.weights.len())
            .map(|t| {
                (0..self.len())
                    .filter_map(|i| a[i].map(|k| self.courses[i][k].hours[t]))
                    .sum()
            })
            .collect()
    }

    pub fn feasible(&self, a: &Assignment) -> bool {
        let tol = |l: f64| 1e-9 * l.abs().max(1.0);
        (0..self.len()).all(|i| !self.required[i] || a[i].is_some())
            && self
                .spent(a)
                .iter()
                .zip(&self.budgets)
                .all(|(s, b)| *s <= b + tol(*b))
            && self.hours.as_ref().is_none_or(|h| {
                self.hours_used(a)
                    .iter()
                    .zip(h)
                    .all(|(u, l)| *u <= l + tol(*l))
            })
    }

    /// Course k of patch i is dominated by another of its courses (or by staying untreated).
    fn dominated(&self, i: usize, k: usize) -> bool {
        let a = &self.courses[i][k];
        let hours_matter = self.hours.is_some();
        let better = |b_cost: &[f64], b_hours: &[f64], b_host: &[f64]| {
            let no_worse = (0..a.host.len()).all(|t| {
                b_cost[t] <= a.cost[t]
                    && (!hours_matter || b_hours[t] <= a.hours[t])
                    && b_host[t] <= a.host[t]
            });
            let strictly = (0..a.host.len()).any(|t| {
                b_cost[t] < a.cost[t]
                    || (hours_matter && b_hours[t] < a.hours[t])
                    || b_host[t] < a.host[t]
            });
            no_worse && strictly
        };
        let zeros = vec![0.0; a.host.len()];
        if !self.required[i] && better(&zeros, &zeros, &self.untreated) {
            return true;
        }
        self.courses[i]
            .iter()
            .enumerate()
            .any(|(j, b)| j != k && better(&b.cost, &b.hours, &b.host))
    }
}

/// A solved programme.
#[derive(Debug, Clone)]
pub struct ProgramSolved {
    pub assignment: Assignment,
    pub objective: f64,
    pub bound: f64,
    /// (objective - bound) / objective.
    pub gap: f64,
    pub status: Status,
    pub seconds: f64,
}

/// A proven lower bound on the programme's objective from one single-season problem per
/// season: by season t a patch's host can be no lower than its courses allow, for no less than
/// their cost up to t, and the seasons' budgets (and hours) up to t can be pooled. So
/// R_t >= U_t^2 x min{ R(ratios) : sum of cumulative course costs <= B_1 + ... + B_t }, whose
/// proven bound the single-season MIP gives (R is homogeneous of degree 2 in the host, and every
/// untreated patch stands at U_t).
pub fn season_floor(p: &ProgramProblem, limits: Limits) -> Result<f64> {
    use crate::input::treatments::{Choice, MethodId};
    use crate::solve::problem::Problem;
    let n = p.len();
    let mut floor = 0.0;
    for t in 0..p.weights.len() {
        if p.weights[t] == 0.0 {
            continue;
        }
        let u = p.untreated[t];
        let choices: Vec<Vec<Choice>> = (0..n)
            .map(|i| {
                p.courses[i]
                    .iter()
                    .map(|c| {
                        Choice::single(
                            MethodId(c.method as u16),
                            c.cost[..=t].iter().sum(),
                            c.hours[..=t].iter().sum(),
                            c.host[t] / u,
                        )
                    })
                    .collect()
            })
            .collect();
        let pooled = |v: &[f64]| v[..=t].iter().sum::<f64>();
        let relaxed = Problem {
            model: p.model,
            choices,
            budget: pooled(&p.budgets),
            crew_hours: p.hours.as_ref().map(|h| pooled(h)),
            required: vec![false; n],
            excluded: vec![false; n],
        };
        let share = Limits {
            deadline: limits.deadline.share(p.weights.len() - t),
            ..limits
        };
        let solved = crate::solve::optimise::solve(&relaxed, share)?;
        if !solved.bound.is_finite() {
            return Ok(0.0);
        }
        floor += p.weights[t] * u * u * solved.bound;
    }
    Ok(floor)
}

/// Columns of the exact MIP [`solve`] builds: one binary per patch option (untreated, unless
/// required, and each undominated course), one z per pair of options at each link whose ends
/// both have options, and the constant's column.
pub fn columns(p: &ProgramProblem) -> usize {
    let options: Vec<usize> = (0..p.len())
        .map(|i| {
            if p.courses[i].is_empty() {
                0
            } else {
                usize::from(!p.required[i])
                    + (0..p.courses[i].len())
                        .filter(|&k| !p.dominated(i, k))
                        .count()
            }
        })
        .collect();
    let z: usize = p
        .model
        .links
        .iter()
        .map(|l| options[l.a] * options[l.b])
        .sum();
    options.iter().sum::<usize>() + z + 1
}

/// The exact MIP, warm-started from `start` when feasible; `floor` is a lower bound known
/// beforehand (e.g. [`season_floor`]); the reported bound is the larger of it and HiGHS's, and
/// a start already within the requested gap of it is returned without search.
pub fn solve(
    p: &ProgramProblem,
    limits: Limits,
    start: Option<&Assignment>,
    floor: f64,
) -> Result<ProgramSolved> {
    let clock = std::time::Instant::now();
    let n = p.len();
    let seasons = p.weights.len();
    let none: Assignment = vec![None; n];
    let warm = start.filter(|a| a.len() == n && p.feasible(a)).cloned();
    let before = p.objective(&none);
    let any = (0..n).any(|i| !p.courses[i].is_empty());
    if !any || before <= 0.0 {
        if (0..n).any(|i| p.required[i]) {
            return Ok(ProgramSolved {
                assignment: none,
                objective: f64::NAN,
                bound: f64::NAN,
                gap: f64::NAN,
                status: Status::Infeasible,
                seconds: clock.elapsed().as_secs_f64(),
            });
        }
        return Ok(ProgramSolved {
            objective: before,
            bound: before,
            assignment: none,
            gap: 0.0,
            status: Status::Optimal,
            seconds: clock.elapsed().as_secs_f64(),
        });
    }
    if let Some(w) = &warm {
        let v = p.objective(w);
        if v > 0.0 && (v - floor) / v <= limits.gap {
            let gap = ((v - floor) / v).max(0.0);
            return Ok(ProgramSolved {
                assignment: w.clone(),
                objective: v,
                bound: floor.min(v),
                gap,
                status: if gap > OPTIMAL_GAP {
                    Status::GapLimit
                } else {
                    Status::Optimal
                },
                seconds: clock.elapsed().as_secs_f64(),
            });
        }
    }
    // A model HiGHS could not start on before the deadline is not built: the start stands, with
    // the floor as its bound.
    if let Some(w) = &warm
        && crate::solve::mip::highs::highs_cannot_finish(columns(p), &limits)
    {
        let v = p.objective(w);
        let bound = floor.min(v).max(0.0);
        return Ok(ProgramSolved {
            assignment: w.clone(),
            objective: v,
            bound,
            gap: if v > 0.0 {
                ((v - bound) / v).max(0.0)
            } else {
                0.0
            },
            status: Status::TimeLimit,
            seconds: clock.elapsed().as_secs_f64(),
        });
    }
    let scale = 1e3 / before;
    let mut vars = ProblemVariables::new();
    let mut columns = 0usize;
    // options[i]: (variable, column, course index or None for untreated).
    let mut options: Vec<Vec<(Variable, usize, Option<usize>)>> = vec![Vec::new(); n];
    let mut x_columns: Vec<Vec<(usize, usize)>> = vec![Vec::new(); n];
    for i in 0..n {
        if p.courses[i].is_empty() {
            continue;
        }
        if !p.required[i] {
            options[i].push((vars.add(variable().binary()), columns, None));
            columns += 1;
        }
        for k in 0..p.courses[i].len() {
            if p.dominated(i, k) {
                continue;
            }
            options[i].push((vars.add(variable().binary()), columns, Some(k)));
            x_columns[i].push((k, columns));
            columns += 1;
        }
    }
    let profile = |i: usize, o: Option<usize>| -> &[f64] {
        match o {
            Some(k) => &p.courses[i][k].host,
            None => &p.untreated,
        }
    };
    let dot =
        |a: &[f64], b: &[f64]| -> f64 { (0..seasons).map(|t| p.weights[t] * a[t] * b[t]).sum() };
    let mut constant = 0.0;
    let mut objective = Expression::from(0.0);
    for i in 0..n {
        let own = p.model.own[i];
        if options[i].is_empty() {
            constant += own * dot(&p.untreated, &p.untreated);
        } else {
            for &(v, _, o) in &options[i] {
                objective += own * dot(profile(i, o), profile(i, o)) * v;
            }
        }
    }
    struct Pair {
        a: usize,
        b: usize,
        z: Vec<Vec<(Variable, usize)>>,
    }
    let mut pairs = Vec::new();
    for link in &p.model.links {
        let (a, b, w) = (link.a, link.b, link.weight);
        match (options[a].is_empty(), options[b].is_empty()) {
            (true, true) => constant += w * dot(&p.untreated, &p.untreated),
            (false, true) => {
                for &(v, _, o) in &options[a] {
                    objective += w * dot(profile(a, o), &p.untreated) * v;
                }
            }
            (true, false) => {
                for &(v, _, o) in &options[b] {
                    objective += w * dot(profile(b, o), &p.untreated) * v;
                }
            }
            (false, false) => {
                let mut z = Vec::new();
                for &(_, _, oa) in &options[a] {
                    let mut row = Vec::new();
                    for &(_, _, ob) in &options[b] {
                        let var = vars.add(variable().min(0.0).max(1.0));
                        objective += w * dot(profile(a, oa), profile(b, ob)) * var;
                        row.push((var, columns));
                        columns += 1;
                    }
                    z.push(row);
                }
                pairs.push(Pair { a, b, z });
            }
        }
    }
    let one = vars.add(variable().min(1.0).max(1.0));
    let one_column = columns;
    columns += 1;
    objective += constant * one;
    let mut lp = vars.minimise(scale * objective).using(highs);
    for opts in options.iter().filter(|o| !o.is_empty()) {
        let sum: Expression = opts.iter().map(|&(v, _, _)| v).sum();
        lp = lp.with(sum.eq(1.0));
    }
    for t in 0..seasons {
        let used = |f: &dyn Fn(&Course) -> f64| -> Expression {
            (0..n)
                .flat_map(|i| {
                    options[i]
                        .iter()
                        .filter_map(|&(v, _, o)| o.map(|k| f(&p.courses[i][k]) * v))
                        .collect::<Vec<_>>()
                })
                .sum()
        };
        if p.budgets[t].is_finite() {
            lp = lp.with(used(&|c| c.cost[t]).leq(p.budgets[t]));
        }
        if let Some(h) = p.hours.as_ref().filter(|h| h[t].is_finite()) {
            lp = lp.with(used(&|c| c.hours[t]).leq(h[t]));
        }
    }
    for pair in &pairs {
        for (k, row) in pair.z.iter().enumerate() {
            let sum: Expression = row.iter().map(|&(v, _)| v).sum();
            lp = lp.with((sum - options[pair.a][k].0).eq(0.0));
        }
        for l in 0..options[pair.b].len() {
            let sum: Expression = pair.z.iter().map(|row| row[l].0).sum();
            lp = lp.with((sum - options[pair.b][l].0).eq(0.0));
        }
    }
    let mut model = lp.into_inner();
    // Warm start (skipped when it uses a dominated course).
    let position = |i: usize, a: &Assignment| options[i].iter().position(|&(_, _, o)| o == a[i]);
    if let Some(a) = warm
        .as_ref()
        .filter(|a| (0..n).all(|i| options[i].is_empty() || position(i, a).is_some()))
    {
        let mut values = vec![0.0; columns];
        values[one_column] = 1.0;
        for i in 0..n {
            if let Some(k) = position(i, a) {
                values[options[i][k].1] = 1.0;
            }
        }
        for pair in &pairs {
            let (ka, kb) = (
                position(pair.a, a).expect("checked"),
                position(pair.b, a).expect("checked"),
            );
            values[pair.z[ka][kb].1] = 1.0;
        }
        model
            .try_set_solution(Some(&values), None, None, None)
            .map_err(|e| Error::Internal(format!("HiGHS refused the warm start: {e:?}")))?;
    }
    let Some(run) = run_highs(Built { model, x_columns }, limits, n, warm.is_some())? else {
        return Ok(ProgramSolved {
            assignment: vec![None; n],
            objective: f64::NAN,
            bound: f64::NAN,
            gap: f64::NAN,
            status: Status::Infeasible,
            seconds: clock.elapsed().as_secs_f64(),
        });
    };
    let mut assignment = run.assignment;
    if !run.has_solution || !p.feasible(&assignment) {
        match &warm {
            Some(w) => assignment = w.clone(),
            None => {
                return Err(Error::Internal(
                    "HiGHS found no feasible programme and there is no warm start".into(),
                ));
            }
        }
    }
    if let Some(w) = warm.as_ref()
        && p.objective(w) < p.objective(&assignment)
    {
        assignment = w.clone();
    }
    let objective = p.objective(&assignment);
    let bound = (run.objective_bound / scale)
        .max(floor)
        .min(objective)
        .max(0.0);
    let gap = if objective > 0.0 {
        ((objective - bound) / objective).max(0.0)
    } else {
        0.0
    };
    let status = if run.status == Status::Optimal && gap > OPTIMAL_GAP {
        Status::GapLimit
    } else {
        run.status
    };
    Ok(ProgramSolved {
        assignment,
        objective,
        bound,
        gap,
        status,
        seconds: clock.elapsed().as_secs_f64(),
    })
}

/// Season by season, each season's R_t only, under that season's budget and hours: new
/// treatments for untouched patches and follow-ups for courses still running. The result is
/// one of the programme's feasible plans, so the programme is never worse over the horizon.
pub fn myopic(p: &ProgramProblem, limits: Limits) -> Result<Assignment> {
    let n = p.len();
    let seasons = p.weights.len();
    // State: the course chosen so far (start, choice, visits so far) per patch.
    let mut chosen: Vec<Option<(usize, usize, usize)>> = vec![None; n];
    let mut stopped = vec![false; n];
    for t in 0..seasons {
        // Allowed courses this season: keep the past, decide season t, assume no later visits.
        let mut allowed: Vec<Vec<Course>> = vec![Vec::new(); n];
        for i in 0..n {
            for c in &p.courses[i] {
                let ok = match chosen[i] {
                    None => c.start == t && c.follow_ups == 0,
                    Some((s, m, f)) if !stopped[i] => {
                        c.start == s
                            && c.choice == m
                            && (c.follow_ups == f || c.follow_ups == f + 1)
                            && s + c.follow_ups <= t
                    }
                    Some((s, m, f)) => c.start == s && c.choice == m && c.follow_ups == f,
                };
                if ok {
                    allowed[i].push(c.clone());
                }
            }
        }
        let mut weights = vec![0.0; seasons];
        weights[t] = 1.0;
        let mut budgets = vec![f64::INFINITY; seasons];
        budgets[t] = p.budgets[t];
        let hours = p.hours.as_ref().map(|h| {
            let mut v = vec![f64::INFINITY; seasons];
            v[t] = h[t];
            v
        });
        // A running course must keep its past: it cannot fall back to "untreated".
        let required: Vec<bool> = (0..n)
            .map(|i| {
                chosen[i].is_some() || (p.required[i] && t + 1 == seasons && chosen[i].is_none())
            })
            .collect();
        let season = ProgramProblem {
            model: p.model,
            courses: allowed,
            untreated: p.untreated.clone(),
            weights,
            budgets,
            hours,
            required,
        };
        // Starting point: keep every running course as it is, nothing new.
        let keep: Assignment = (0..n)
            .map(|i| {
                chosen[i].and_then(|(s, m, f)| {
                    season.courses[i]
                        .iter()
                        .position(|c| c.start == s && c.choice == m && c.follow_ups == f)
                })
            })
            .collect();
        let share = Limits {
            deadline: limits.deadline.share(seasons - t),
            ..limits
        };
        let solved = solve(&season, share, Some(&keep), 0.0)?;
        if solved.status == Status::Infeasible {
            return Err(Error::input(
                "the myopic season-by-season plan cannot fund the required patches",
            ));
        }
        for i in 0..n {
            let Some(k) = solved.assignment[i] else {
                continue;
            };
            let c = &season.courses[i][k];
            match chosen[i] {
                None => chosen[i] = Some((c.start, c.choice, 0)),
                Some((s, m, f)) => {
                    if c.follow_ups == f + 1 {
                        chosen[i] = Some((s, m, f + 1));
                    } else if !stopped[i] && t > s {
                        stopped[i] = true;
                    }
                }
            }
        }
    }
    Ok((0..n)
        .map(|i| {
            chosen[i].and_then(|(s, m, f)| {
                p.courses[i]
                    .iter()
                    .position(|c| c.start == s && c.choice == m && c.follow_ups == f)
            })
        })
        .collect())
}
