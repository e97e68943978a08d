//! Everything people and machines read: text reports, YAML and JSON documents, the support
//! matrix as Markdown, CSV and a self-contained HTML page, files written atomically.

pub mod csv;
pub mod html;
pub mod layout;
pub mod markdown;
pub mod text;

pub use csv::csv;
pub use html::html;
pub use markdown::markdown;

use anyhow::{Context, Result};
use serde::Serialize;
use std::io::Write;
use std::path::Path;

/// Output formats a command can print.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// A readable table.
    Table,
    Json,
    Yaml,
    Csv,
    Markdown,
    Html,
}

/// Writes `bytes` to `path` through a temporary file in the same folder and a rename, so an
/// interrupted run never leaves half a file behind.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    std::fs::create_dir_all(dir)
        .with_context(|| format!("cannot create folder {}", dir.display()))?;
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let tmp = dir.join(format!(".{name}.tmp-{}", std::process::id()));
    let result = (|| -> Result<()> {
        let mut f = std::fs::File::create(&tmp)
            .with_context(|| format!("cannot write {}", tmp.display()))?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
            .with_context(|| format!("cannot move {} into place", path.display()))?;
        Ok(())
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

/// Pretty JSON with a trailing newline.
pub fn to_json<T: Serialize>(value: &T) -> String {
    let mut s = serde_json::to_string_pretty(value).expect("report values serialize");
    s.push('\n');
    s
}

/// YAML as serde_yaml writes it.
pub fn to_yaml<T: Serialize>(value: &T) -> String {
    serde_yaml::to_string(value).expect("report values serialize")
}
