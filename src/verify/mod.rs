//! Checking predictions against recorded install results.
//!
//! [`logs`] reads the install log of a failed record and names why it failed, so a failure can
//! be matched against the library the prediction said was missing, or set aside as flaky.

pub mod logs;
