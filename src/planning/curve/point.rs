//! One level of a budget curve: the plan found at that budget and what it costs.

use crate::solve::problem::{Assignment, Status};

/// One budget level.
#[derive(Debug, Clone)]
pub struct Point {
    pub budget: f64,
    pub assignment: Assignment,
    pub risk_after: f64,
    pub bound: f64,
    pub gap: f64,
    pub status: Status,
    /// True when the solver's own plan was worse than a smaller budget's, which was used instead.
    pub from_neighbour: bool,
    pub spent: f64,
    pub crew_hours: f64,
    pub n_treated: usize,
    pub stems_treated: f64,
    pub area_ha_treated: f64,
    /// The follow-up visits this plan commits to in the next seasons ([`super::follow_up`]).
    pub follow_up_cost: f64,
    pub greedy_risk_after: f64,
    /// (baseline name, risk after) for biggest_first, nearest_first, corridor_first.
    pub baselines: Vec<(&'static str, f64)>,
    pub seconds: f64,
}
