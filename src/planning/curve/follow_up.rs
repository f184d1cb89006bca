//! The follow-up seasons a one-season plan commits to: survivors and root suckers of every
//! treated patch are visited again in the next [`FOLLOW_UP_SEASONS`] seasons, with the share of
//! stems and the method the catalogue gives (`follow_up_share` and `follow_up_method` of the
//! method applied to each treated size class).
//!
//! # Units
//! Money in catalogue currency, priced to the cent per patch and visit as the plan's own costs.

use crate::input::treatments::{follow_ups, next_follow_up, price_follow_up};
use crate::planning::prepare::Prepared;
use crate::solve::problem::Assignment;

/// Follow-up seasons after the first (the standing FOLLOWUP caution: "two or three more
/// seasons"; the lower end, common practice for a budget request).
pub const FOLLOW_UP_SEASONS: usize = 2;

/// The cost of the follow-up visits of `assignment` over [`FOLLOW_UP_SEASONS`] seasons: the
/// k-th visit treats `sum over treated classes of follow_up_share x stems x r_f^(k-1)` stems
/// (a left class is not followed up) with each class's follow-up method (r_f its remaining
/// share), as
/// `hostcut program` prices them, without host growth.
pub fn follow_up_cost(prepared: &Prepared, assignment: &Assignment) -> f64 {
    let catalogue = &prepared.catalogue;
    let mut total = 0.0;
    for (i, a) in assignment.iter().enumerate() {
        let Some(c) = a else { continue };
        let Some(choice) = prepared.choices[i].get(*c) else {
            continue;
        };
        let patch = &prepared.patches.items[i];
        // Survivors and suckers of every treated class, visited with the follow-up method of
        // the method applied to that class, as `planning::program::courses` does.
        let mut visit = follow_ups(catalogue, patch, choice, 1.0);
        for _ in 0..FOLLOW_UP_SEASONS {
            if visit.iter().map(|g| g.stems).sum::<f64>() <= 0.0 {
                break;
            }
            total += price_follow_up(catalogue, patch, &visit).0;
            visit = next_follow_up(catalogue, &visit);
        }
    }
    total
}
