//! Checking predictions against recorded install results.
//!
//! [`logs`] reads the install log of a failed record and names why it failed;
//! [`compare`](mod@compare) sets each recorded cell against its prediction; [`diff`] compares
//! two matrices.

pub mod compare;
pub mod diff;
pub mod logs;

pub use compare::{
    Review, Verdict, annotate, compare, compare_inputs, compare_inputs_within, compare_within,
};
