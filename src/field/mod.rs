//! Stage 5, from a plan to the field: reading a plan folder back, contracts, work orders, routes
//! and the calendar.

pub mod calendar;
pub mod contract;
pub mod orders;
pub mod plan_folder;
pub mod routing;
