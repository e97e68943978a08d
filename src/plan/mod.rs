//! Planning: turning loaded inputs into decisions a user acts on.
//!
//! [`fusion`] builds one priority list from several ranked or scored source lists, so the
//! importance of a package does not rest on a single measure. [`cover`] chooses which system
//! packages to add to an image so the most priority weight installs per package added.

pub mod cover;
pub mod fusion;
