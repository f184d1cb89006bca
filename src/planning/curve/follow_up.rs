//! The follow-up seasons a one-season plan commits to: survivors and root suckers of every
//! treated patch are visited again in the next [`FOLLOW_UP_SEASONS`] seasons, with the share of
//! stems and the method the catalogue gives (`follow_up_share`, `follow_up_method`).
//!
//! # Units
//! Money in catalogue currency, priced to the cent per patch and visit as the plan's own costs.

use crate::planning::prepare::Prepared;
use crate::solve::problem::Assignment;

/// Follow-up seasons after the first (the standing FOLLOWUP caution: "two or three more
/// seasons"; the lower end, common practice for a budget request).
pub const FOLLOW_UP_SEASONS: usize = 2;

/// The cost of the follow-up visits of `assignment` over [`FOLLOW_UP_SEASONS`] seasons: the
/// k-th visit treats `follow_up_share x stems x r_f^(k-1)` stems with the follow-up method
/// (r_f its remaining share), as `hostcut program` prices them, without host growth.
pub fn follow_up_cost(prepared: &Prepared, assignment: &Assignment) -> f64 {
    let catalogue = &prepared.catalogue;
    let mut total = 0.0;
    for (i, a) in assignment.iter().enumerate() {
        let Some(c) = a else { continue };
        let Some(choice) = prepared.choices[i].get(*c) else {
            continue;
        };
        let patch = &prepared.patches.items[i];
        let method = &catalogue.methods[choice.method.0 as usize];
        let follow = method
            .follow_up_method
            .as_ref()
            .and_then(|id| catalogue.methods.iter().position(|x| &x.id == id))
            .filter(|&f| catalogue.methods[f].allowed_on(&patch.site))
            .map(|f| &catalogue.methods[f])
            .unwrap_or(method);
        let mut stems = method.follow_up_share() * patch.stems;
        for _ in 0..FOLLOW_UP_SEASONS {
            if stems <= 0.0 {
                break;
            }
            total += ((follow.cost_per_patch + follow.cost_per_stem * stems)
                * patch.site.cost_factor
                * 100.0)
                .round()
                / 100.0;
            stems *= follow.remaining();
        }
    }
    total
}
