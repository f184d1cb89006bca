//! The exact mixed-integer programs, built for HiGHS through good_lp: the three formulations
//! of the link products, the HiGHS runner, the min-max (ensemble) solve and the MPS writer.
//!
//! # Formulations (docs/model.md has the derivations)
//! Default, [`Formulation::Transport`](crate::core::scenario::Formulation): one binary per option
//! of each patch ("untreated" included) and, per link, one z per pair of options tied to both ends
//! by transportation marginals, so z is the product at integer points and R is linear in (v, z)
//! exactly (`transport`). `Compact`: binary x_io, t_i = sum_o e_o x_io, and per link and choice of
//! one end u >= t_j - T_j (1 - x_io), u >= 0 (Glover-Woolsey), plus McCormick's envelope row
//! (`compact`). `Direct`: the textbook baseline with Fortet's inequality (`direct`). In all, a
//! fixed column carries the constant so HiGHS's objective is R itself and its dual bound is a
//! lower bound on R.
//!
//! # Units
//! Costs in catalogue currency, hours in crew hours, R in share-squared units.

pub mod compact;
pub mod direct;
pub mod highs;
pub mod minmax;
pub mod mps;
pub mod transport;
