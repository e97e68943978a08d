//! Plans built from solves: the predicted matrix, shared blockers, one-cell explanations, and
//! the image-planning computations (rank fusion, system-package advice by set cover).

pub mod blockers;
pub mod cover;
pub mod coverage;
pub mod explain;
pub mod fusion;
pub mod matrix;
pub mod preinstall;
pub mod replan;
pub mod system;

pub use matrix::{Cell, Matrix, Outcome, PlanOptions, plan, summarise};
