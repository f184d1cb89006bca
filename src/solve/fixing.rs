//! Variable fixing from bounds (issue 23): an option of a patch (leave it, or one of its
//! choices) whose proven bound, over every plan that gives the patch that option, lies above
//! the incumbent's risk cannot be in any plan better than the incumbent and is removed
//! ([`fix`]); a patch left with one option is fixed. What is left is a smaller problem, the
//! [`Core`]: its patches are the free ones, the fixed ones folded into never-treated anchor
//! patches: one carrying their constant risk, and one per free patch beside them carrying, by
//! its one link, the linear part of their links (one anchor per patch, not one for all, so the
//! core's components stay those of the free patches and the relaxation's shifts stay local). R of a core plan equals R of its expansion, so the core's optimum and bound are the
//! whole problem's over the plans the fixing kept. (Reduced-cost fixing, common practice in
//! integer programming; here with message passing's separable dual as the bound.)
//!
//! # Units
//! Costs in catalogue currency, hours in crew hours, R in share-squared units.

use crate::model::risk::{Link, RiskModel};
use crate::solve::problem::{Assignment, Problem};

/// Relative margin above the incumbent an option's forced bound must clear before the option
/// is removed (rounding in the bound's sums never removes a tie).
const MARGIN: f64 = 1e-9;

/// The options kept per patch, and the least forced bound among those removed (infinity when
/// none was): every plan using a removed option has R at least that.
#[derive(Debug, Clone)]
pub struct Fixed {
    /// Per patch: the options still allowed (None = leave, Some(o) = choice o).
    pub allowed: Vec<Vec<Option<usize>>>,
    pub removed_bound: f64,
    /// Options removed.
    pub removed: usize,
    /// A proven bound on R over the plans still allowed, from branching on one probed patch:
    /// the least of its options' bounds, the largest such over the patches probed in full
    /// (NEG_INFINITY when none was).
    pub branch_bound: f64,
}

/// Remove every option whose forced bound exceeds `incumbent` (the risk of `plan`, a
/// feasible plan); the plan's own options are always kept.
pub fn fix(
    problem: &Problem,
    forced: &[Vec<(Option<usize>, f64)>],
    plan: &Assignment,
    incumbent: f64,
) -> Fixed {
    let n = problem.len();
    let limit = incumbent * (1.0 + MARGIN) + 1e-300;
    let mut allowed = Vec::with_capacity(n);
    let (mut removed_bound, mut removed) = (f64::INFINITY, 0);
    for i in 0..n {
        let mut keep = Vec::new();
        for &(option, bound) in &forced[i] {
            if option == plan[i] || bound.is_nan() || bound <= limit {
                keep.push(option);
            } else {
                removed += 1;
                removed_bound = removed_bound.min(bound);
            }
        }
        allowed.push(keep);
    }
    Fixed {
        allowed,
        removed_bound,
        removed,
        branch_bound: f64::NEG_INFINITY,
    }
}

/// A smaller problem over the patches the fixing left free.
pub struct Core {
    pub model: RiskModel,
    /// The free patches (core index -> patch); the anchors follow them (not in this list).
    pub free: Vec<usize>,
    /// Anchor patches after the free ones.
    pub anchors: usize,
    /// Core choice index -> the patch's choice index, per free patch.
    pub choice_of: Vec<Vec<usize>>,
    /// The whole plan with the fixed patches set (the free ones untreated).
    pub base: Assignment,
    pub budget: f64,
    pub crew_hours: Option<f64>,
    pub required: Vec<bool>,
    pub excluded: Vec<bool>,
    pub choices: Vec<Vec<crate::input::treatments::Choice>>,
}

impl Core {
    /// Build the core of `problem` under `fixed`: None when no patch is fixed and no option
    /// removed (nothing to gain).
    pub fn build(problem: &Problem, fixed: &Fixed) -> Option<Core> {
        if fixed.removed == 0 {
            return None;
        }
        let n = problem.len();
        let model = problem.model;
        let mut base: Assignment = vec![None; n];
        let mut index = vec![usize::MAX; n];
        let mut free = Vec::new();
        for i in 0..n {
            match fixed.allowed[i].as_slice() {
                [only] => base[i] = *only,
                _ => {
                    index[i] = free.len();
                    free.push(i);
                }
            }
        }
        let r = problem.remaining(&base);
        let m = free.len();
        // The anchor (index m) is never treated: r = 1.
        let mut own: Vec<f64> = free.iter().map(|&i| model.own[i]).collect();
        let mut constant = 0.0;
        let mut linear = vec![0.0; m];
        let mut links: Vec<Link> = Vec::new();
        for i in 0..n {
            if index[i] == usize::MAX {
                constant += model.own[i] * r[i] * r[i];
            }
        }
        for l in &model.links {
            match (index[l.a] != usize::MAX, index[l.b] != usize::MAX) {
                (true, true) => links.push(Link {
                    a: index[l.a],
                    b: index[l.b],
                    ..*l
                }),
                (true, false) => linear[index[l.a]] += l.weight * r[l.b],
                (false, true) => linear[index[l.b]] += l.weight * r[l.a],
                (false, false) => constant += l.weight * r[l.a] * r[l.b],
            }
        }
        // Anchor m holds the constant; anchors m + 1.. one linear term each.
        let mut anchors = 1;
        for (k, &w) in linear.iter().enumerate() {
            if w > 0.0 {
                links.push(Link {
                    a: k,
                    b: m + anchors,
                    kernel: 0.0,
                    weight: w,
                });
                anchors += 1;
            }
        }
        own.push(constant);
        own.extend(std::iter::repeat_n(0.0, anchors - 1));
        let total = m + anchors;
        let mut adjacency = vec![Vec::new(); total];
        for (k, l) in links.iter().enumerate() {
            adjacency[l.a].push((l.b, k));
            adjacency[l.b].push((l.a, k));
        }
        let mut share: Vec<f64> = free.iter().map(|&i| model.share[i]).collect();
        share.resize(total, 0.0);
        let mut pressure: Vec<f64> = free.iter().map(|&i| model.pressure[i]).collect();
        pressure.resize(total, 0.0);
        let mut choice_of = Vec::with_capacity(m);
        let mut choices = Vec::with_capacity(m + 1);
        let mut required = Vec::with_capacity(m + 1);
        let mut excluded = Vec::with_capacity(m + 1);
        for &i in &free {
            let kept: Vec<usize> = fixed.allowed[i].iter().filter_map(|o| *o).collect();
            choices.push(kept.iter().map(|&o| problem.choices[i][o]).collect());
            required.push(!fixed.allowed[i].contains(&None));
            excluded.push(kept.is_empty());
            choice_of.push(kept);
        }
        choices.resize(total, Vec::new());
        required.resize(total, false);
        excluded.resize(total, true);
        let budget = problem.budget - problem.cost(&base);
        let crew_hours = problem.crew_hours.map(|h| h - problem.hours(&base));
        Some(Core {
            model: RiskModel {
                share,
                pressure,
                own,
                links,
                adjacency,
            },
            free,
            anchors,
            choice_of,
            base,
            budget,
            crew_hours,
            required,
            excluded,
            choices,
        })
    }

    pub fn problem(&self) -> Problem<'_> {
        Problem {
            model: &self.model,
            choices: self.choices.clone(),
            budget: self.budget,
            crew_hours: self.crew_hours,
            required: self.required.clone(),
            excluded: self.excluded.clone(),
        }
    }

    /// The core's view of a whole plan (None when the plan uses a removed option).
    pub fn restrict(&self, plan: &Assignment) -> Option<Assignment> {
        let mut is_free = vec![false; self.base.len()];
        let mut out: Assignment = Vec::with_capacity(self.free.len() + 1);
        for (k, &i) in self.free.iter().enumerate() {
            is_free[i] = true;
            out.push(match plan[i] {
                None if self.required[k] => return None,
                None => None,
                Some(o) => Some(self.choice_of[k].iter().position(|&c| c == o)?),
            });
        }
        if (0..self.base.len()).any(|i| !is_free[i] && plan[i] != self.base[i]) {
            return None;
        }
        out.resize(self.free.len() + self.anchors, None);
        Some(out)
    }

    /// The whole plan of a core plan.
    pub fn expand(&self, core_plan: &Assignment) -> Assignment {
        let mut plan = self.base.clone();
        for (k, &i) in self.free.iter().enumerate() {
            plan[i] = core_plan[k].map(|o| self.choice_of[k][o]);
        }
        plan
    }
}

/// Probing (issue 23): for each patch in `patches` (the ones that carry most of the risk,
/// first), and each of its options other than the plan's, bound R over the plans that give
/// the patch that option — the problem restricted to it as a [`Core`], bounded by `bound_of`
/// (a proven lower bound on a problem, given a start: the plan with the patch's option
/// changed; or None when it has no feasible plan) — and remove the
/// option when the bound lies above `incumbent`. Options removed earlier stay removed for the
/// later probes (each restriction is of the plans still allowed). Stops when `done` says.
pub fn probe(
    problem: &Problem,
    mut fixed: Fixed,
    plan: &Assignment,
    incumbent: f64,
    patches: &[usize],
    bound_of: &dyn Fn(&Problem, &Assignment) -> Option<f64>,
    done: &dyn Fn() -> bool,
) -> Fixed {
    let limit = incumbent * (1.0 + MARGIN) + 1e-300;
    for &i in patches {
        if done() {
            break;
        }
        let options = fixed.allowed[i].clone();
        if options.len() < 2 {
            continue;
        }
        // The plan's own option last: it is never removed, but its bound completes the branch.
        let mut order: Vec<Option<usize>> =
            options.iter().copied().filter(|o| *o != plan[i]).collect();
        order.push(plan[i]);
        let (mut least, mut complete) = (f64::INFINITY, true);
        for option in order {
            if done() {
                complete = false;
                break;
            }
            let mut only = fixed.clone();
            only.allowed[i] = vec![option];
            only.removed = only.removed.max(1);
            let Some(core) = Core::build(problem, &only) else {
                continue;
            };
            let mut start = plan.clone();
            start[i] = option;
            let start = core
                .restrict(&start)
                .unwrap_or_else(|| vec![None; core.free.len() + core.anchors]);
            let bound = bound_of(&core.problem(), &start).unwrap_or(f64::INFINITY);
            least = least.min(bound);
            if option != plan[i] && bound > limit {
                fixed.allowed[i].retain(|o| *o != option);
                fixed.removed += 1;
                fixed.removed_bound = fixed.removed_bound.min(bound);
            }
        }
        if complete {
            fixed.branch_bound = fixed.branch_bound.max(least);
        }
    }
    fixed
}
