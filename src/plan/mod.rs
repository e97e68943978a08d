//! Plans built from solves: the predicted matrix, shared blockers, one-cell explanations.

pub mod blockers;
pub mod explain;
pub mod matrix;

pub use matrix::{Cell, Matrix, Outcome, PlanOptions, plan, summarise};
