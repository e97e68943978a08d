//! Reading inputs: registry snapshots, runtime images, priority lists and recorded results.
//!
//! Every reader follows one rule: each input record is either used or reported. Schema
//! violations (bad syntax, wrong type, unknown or missing field) make the file unusable and
//! come back as [`BadInput`]; data-quality problems (an unreadable version string, a dependency
//! on an unknown name) are written to the [`Ledger`] and the rest of the file is used.

pub mod bulk;
pub mod diag;
pub mod images;
pub mod lenient;
pub mod priorities;
pub mod registry;
pub mod results;
pub mod table;
pub mod yaml;

pub use bulk::read_bulk;
pub use diag::{BadInput, Ledger};
pub use images::read_images;
pub use priorities::read_priorities;
pub use registry::RegistryBuilder;
pub use results::read_results;

use crate::model::Registry;
use std::path::Path;

/// Reads one or more registry files (YAML) into one registry.
pub fn read_registry(paths: &[&Path]) -> Result<(Registry, Ledger), BadInput> {
    let mut builder = RegistryBuilder::new();
    for path in paths {
        registry::read_yaml(path, &mut builder)?;
    }
    Ok(builder.finish())
}
