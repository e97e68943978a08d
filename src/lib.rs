//! basefit: predicts which packages of a language runtime install on which runtime images,
//! names the system libraries each image lacks, checks the prediction against recorded installs
//! and renders the support matrix.
//!
//! The modules follow the data: [`load`] reads and checks inputs, [`model`] holds the interned
//! registry and images, [`solve`] runs version solving per (package, image), [`native`] adds
//! system-library needs, [`plan`] builds matrices and image plans, [`verify`] compares with
//! recorded results and [`report`] renders everything for people and machines.
//!
//! Predictions come from declared metadata only. They must be confirmed by real installs, and
//! installing untrusted packages runs their code, so recorded installs belong in sandboxed CI.

pub mod commands;
pub mod load;
pub mod model;
pub mod native;
pub mod plan;
pub mod report;
pub mod solve;
pub mod synth;
pub mod verify;

pub use load::diag::{BadInput, Ledger, Problem, ProblemKind};
