//! Stage 5, from a plan to the field: reading a plan folder back, contracts, work orders, routes
//! on the road network and the calendar.

pub mod calendar;
pub mod context;
pub mod contract;
pub mod network;
pub mod orders;
pub mod parts;
pub mod plan_folder;
pub mod routing;
pub mod travel;
