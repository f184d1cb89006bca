//! What the optimiser is asked and what it answers: [`Problem`] (the model, each patch's eligible
//! choices, budget, hours, required and excluded patches), [`Assignment`], [`Limits`], [`Status`]
//! and [`Solved`]. Every solver path (heuristics, the MIP, decomposition, relaxations) imports
//! these from here, never from the orchestrator in `optimise`.
//!
//! # Units
//! Costs in catalogue currency, hours in crew hours, R in share-squared units.

use crate::core::deadline::Deadline;
use crate::core::scenario::Formulation;
use crate::input::treatments::Choice;
use crate::model::risk::RiskModel;

/// What the optimiser is asked: the model, each patch's eligible choices and the limits.
#[derive(Debug, Clone)]
pub struct Problem<'a> {
    pub model: &'a RiskModel,
    pub choices: Vec<Vec<Choice>>,
    pub budget: f64,
    pub crew_hours: Option<f64>,
    pub required: Vec<bool>,
    pub excluded: Vec<bool>,
}

/// For each patch, the index into its `choices` it gets, or None.
pub type Assignment = Vec<Option<usize>>;

/// How the solve ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Status {
    /// Proven optimal: the bound equals the plan's risk to within [`OPTIMAL_GAP`] (the
    /// solver's numerical tolerance).
    Optimal,
    /// Stopped when the proven gap reached `--gap`.
    GapLimit,
    /// Stopped at the command's deadline (`--time-limit-s`); the gap says how far from optimal
    /// it may be.
    TimeLimit,
    /// The local search of a large model found no improving move left before the gap or the
    /// deadline was reached; the gap says how far from optimal it may be.
    NoImprovingMove,
    /// No plan satisfies the required patches within the budget and hours.
    Infeasible,
}

impl Status {
    pub fn as_str(self) -> &'static str {
        match self {
            Status::Optimal => "optimal",
            Status::GapLimit => "gap_limit",
            Status::TimeLimit => "time_limit",
            Status::NoImprovingMove => "no_improving_move",
            Status::Infeasible => "infeasible",
        }
    }
}

/// The optimiser's answer.
#[derive(Debug, Clone)]
pub struct Solved {
    pub assignment: Assignment,
    pub risk_after: f64,
    /// A proven lower bound on the least achievable R.
    pub bound: f64,
    /// (risk_after - bound) / risk_after.
    pub gap: f64,
    pub status: Status,
    pub seconds: f64,
    /// The better of adaptive benefit/cost greedy and the best single item.
    pub greedy: Option<(Assignment, f64)>,
    /// How the plan was searched for (see docs/model.md).
    pub path: SolverPath,
    /// Which proof gave `bound`.
    pub bound_from: BoundSource,
}

/// How a plan was searched for; [`SolverPath::as_str`] is the text in `summary.json` and the
/// console (see docs/model.md).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SolverPath {
    /// No patch can be treated, or there is no risk.
    NothingToChoose,
    /// Treating everything with its most effective method fits.
    EverythingFits,
    /// The greedy or rounded start was already within the gap of the bound.
    GreedyAndRounding,
    /// The model was too large for HiGHS: relaxation bound and local search alone.
    RelaxationAndLocalSearch,
    /// The model was too large for HiGHS: local search, then variable fixing from the
    /// relaxation's bounds and the core that is left searched again (`solve::fixing`).
    FixedCore,
    /// Components small enough to enumerate, merged exactly under the one budget.
    ComponentMerge,
    TransportMip,
    CompactMip,
    DirectMip,
    /// The exact search had too little time left to start: the plan is the best start
    /// (greedy, relaxation rounding or a neighbour's plan) and the bound is the one known
    /// without it.
    NotStarted,
    /// No plan satisfies the required patches within the budget and hours.
    Infeasible,
    /// The ensemble's min-max MIP.
    MinMaxMip,
    /// The ensemble's best start was within the gap of the known floor.
    StartWithinGap,
}

impl SolverPath {
    pub fn as_str(self) -> &'static str {
        match self {
            SolverPath::NothingToChoose => "nothing to choose",
            SolverPath::EverythingFits => "everything fits",
            SolverPath::GreedyAndRounding => "greedy and relaxation rounding",
            SolverPath::RelaxationAndLocalSearch => "relaxation and local search",
            SolverPath::FixedCore => "local search, variable fixing and the core searched",
            SolverPath::ComponentMerge => "component merge MIP",
            SolverPath::TransportMip => "transport MIP",
            SolverPath::CompactMip => "compact MIP",
            SolverPath::DirectMip => "direct MIP",
            SolverPath::NotStarted => "best start; too little time left to start the MIP",
            SolverPath::Infeasible => "infeasible",
            SolverPath::MinMaxMip => "min-max MIP",
            SolverPath::StartWithinGap => "start within the gap of the floor",
        }
    }
}

impl std::fmt::Display for SolverPath {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.as_str())
    }
}

/// Which proof gave a solve's bound; [`BoundSource::as_str`] is the text in `summary.json` and
/// the console.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BoundSource {
    /// Nothing to choose, or everything fits: the plan is the optimum.
    Exact,
    /// The risk of treating everything (a bound at any budget).
    Floor,
    /// The relaxation bound (`solve::relax`).
    Relaxation,
    /// HiGHS's dual bound on the MIP.
    HighsDual,
    /// Variable fixing and probing: the bound on the core left by the fixing (its own
    /// relaxation or HiGHS's dual) or from branching on a probed patch, with the fixing's
    /// bound on the plans it removed.
    FixedCore,
    /// An ensemble's min-max plan bounded by the scenarios' own proven bounds.
    ScenarioBounds,
    /// No bound: the problem is infeasible.
    None,
}

impl BoundSource {
    pub fn as_str(self) -> &'static str {
        match self {
            BoundSource::Exact => "exact",
            BoundSource::Floor => "floor",
            BoundSource::Relaxation => "relaxation",
            BoundSource::HighsDual => "HiGHS dual bound",
            BoundSource::FixedCore => "variable fixing and probing",
            BoundSource::ScenarioBounds => "the scenarios' own bounds",
            BoundSource::None => "none",
        }
    }
}

impl std::fmt::Display for BoundSource {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.as_str())
    }
}

const FEASIBILITY: f64 = 1e-9;

/// A gap this small is numerical noise of the LP tolerances: the plan is optimal.
pub const OPTIMAL_GAP: f64 = 1e-7;

impl Problem<'_> {
    pub fn len(&self) -> usize {
        self.choices.len()
    }

    pub fn is_empty(&self) -> bool {
        self.choices.is_empty()
    }

    /// r_i for every patch under `assignment`.
    pub fn remaining(&self, assignment: &Assignment) -> Vec<f64> {
        assignment
            .iter()
            .enumerate()
            .map(|(i, a)| a.map(|o| self.choices[i][o].remaining).unwrap_or(1.0))
            .collect()
    }

    pub fn risk(&self, assignment: &Assignment) -> f64 {
        self.model.risk(&self.remaining(assignment))
    }

    pub fn cost(&self, assignment: &Assignment) -> f64 {
        assignment
            .iter()
            .enumerate()
            .filter_map(|(i, a)| a.map(|o| self.choices[i][o].cost))
            .sum()
    }

    pub fn hours(&self, assignment: &Assignment) -> f64 {
        assignment
            .iter()
            .enumerate()
            .filter_map(|(i, a)| a.map(|o| self.choices[i][o].hours))
            .sum()
    }

    /// `used` fits `limit`, to the optimiser's feasibility tolerance.
    pub(crate) fn within(limit: f64, used: f64) -> bool {
        used <= limit + FEASIBILITY * limit.abs().max(1.0)
    }

    /// Budget, hours, required and excluded all respected.
    pub fn feasible(&self, assignment: &Assignment) -> bool {
        let rules = assignment.iter().enumerate().all(|(i, a)| match a {
            Some(o) => !self.excluded[i] && *o < self.choices[i].len(),
            None => !self.required[i],
        });
        rules
            && Self::within(self.budget, self.cost(assignment))
            && self
                .crew_hours
                .is_none_or(|h| Self::within(h, self.hours(assignment)))
    }

    /// R(current) - R(current with patch i switched to choice o), where `remaining[i]` is the
    /// patch's current r (1 when untreated).
    pub fn gain(&self, remaining: &[f64], i: usize, o: usize) -> f64 {
        let (now, r) = (remaining[i], self.choices[i][o].remaining);
        let mut gain = self.model.own[i] * (now * now - r * r);
        for &(j, l) in &self.model.adjacency[i] {
            gain += self.model.links[l].weight * remaining[j] * (now - r);
        }
        gain
    }

    /// The assignment that treats every eligible patch with its most effective choice, and
    /// its risk: a lower bound on R at any budget (R only grows with each r_i).
    pub fn everything(&self) -> (Assignment, f64) {
        let assignment: Assignment = (0..self.len())
            .map(|i| {
                if self.excluded[i] {
                    None
                } else {
                    self.most_effective(i)
                }
            })
            .collect();
        let risk = self.risk(&assignment);
        (assignment, risk)
    }

    /// The index of patch i's most effective choice (ties: the cheaper, then the earlier).
    pub fn most_effective(&self, i: usize) -> Option<usize> {
        (0..self.choices[i].len()).min_by(|&a, &b| {
            let (ca, cb) = (&self.choices[i][a], &self.choices[i][b]);
            ca.remaining
                .total_cmp(&cb.remaining)
                .then(ca.cost.total_cmp(&cb.cost))
        })
    }
}

/// Solver limits.
#[derive(Debug, Clone, Copy)]
pub struct Limits {
    /// When the search must stop: the command's deadline, or a share of it.
    pub deadline: Deadline,
    /// Relative gap on the remaining risk at which to stop.
    pub gap: f64,
    /// HiGHS threads (None: 2, whatever the machine, for reproducible plans).
    pub threads: Option<u32>,
    /// Which exact MIP to build (`--formulation`, or the benchmark's choice).
    pub formulation: Formulation,
    /// Refuse to build a model estimated to need more than this many GB.
    pub max_memory_gb: f64,
    /// Use the relaxation bound, its rounded plan and local search beside HiGHS (off only for
    /// the benchmark's plain-HiGHS baseline).
    pub assist: bool,
}

impl Limits {
    /// Limits for one search of at most `time_limit_s` seconds from now (library callers and
    /// the benchmark; commands use [`Limits::until`] with their own deadline).
    pub fn new(time_limit_s: f64, gap: f64) -> Limits {
        Limits::until(Deadline::after(time_limit_s), gap)
    }

    /// Limits ending at `deadline`, with the default (transportation) formulation.
    pub fn until(deadline: Deadline, gap: f64) -> Limits {
        Limits {
            deadline,
            gap,
            threads: None,
            formulation: Formulation::Transport,
            max_memory_gb: f64::INFINITY,
            assist: true,
        }
    }
}

/// Several risk models over the same patches (an ensemble of dispersal scenarios) and what to
/// minimise over them: the largest of scale_s (R_s - offset_s). Offsets 0 and scales 1: the
/// worst-case R; offsets = each scenario's least achievable R and scales = 1 / that R: the
/// largest regret as a share of each scenario's least achievable R (scenarios of different
/// kernels have R of different sizes, so an absolute regret would weigh them unequally).
#[derive(Debug, Clone)]
pub struct MinMax<'a> {
    pub models: Vec<&'a RiskModel>,
    pub offsets: Vec<f64>,
    pub scales: Vec<f64>,
}

impl MinMax<'_> {
    /// max_s scale_s (R_s(a) - offset_s).
    pub fn value(&self, problem: &Problem, a: &Assignment) -> f64 {
        let r = problem.remaining(a);
        self.models
            .iter()
            .zip(&self.offsets)
            .zip(&self.scales)
            .map(|((m, o), k)| k * (m.risk(&r) - o))
            .fold(f64::NEG_INFINITY, f64::max)
    }

    /// max_s scale_s R_s(a): what the gap is measured on (the worst-case R when every scale
    /// is 1).
    pub fn scaled_worst(&self, problem: &Problem, a: &Assignment) -> f64 {
        let r = problem.remaining(a);
        self.models
            .iter()
            .zip(&self.scales)
            .map(|(m, k)| k * m.risk(&r))
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
