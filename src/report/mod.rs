//! Everything people and machines read: text reports, YAML and JSON documents, the support
//! matrix as Markdown, CSV and a self-contained HTML page, files written atomically.

pub mod csv;
pub mod html;
pub mod layout;
pub mod markdown;
pub mod text;

pub use csv::csv;
pub use html::html;
pub use layout::visible;
pub use markdown::markdown;

use anyhow::{Context, Result};
use serde::Serialize;
use std::io::Write;
use std::path::{Path, PathBuf};

/// What a report command (check, plan, explain, review, diff, syslibs, imageplan) prints:
/// only the formats each of them honours, so the command line refuses any other.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// A readable table.
    Table,
    Json,
}

/// What `render` prints to stdout: the matrix in one of the formats it writes with `--out`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum MatrixFormat {
    Markdown,
    Html,
    Csv,
    Json,
    Yaml,
}

/// A share (0 to 1) as a percentage with `decimals` places, or `n/a` when it is no number:
/// every share any command prints goes through here. Zero prints as `0.0%`, never `-0.0%`:
/// a sum of no f64 values is negative zero (`Iterator::sum` starts there), and a share that
/// rounds to zero from below is none either.
///
/// A share strictly between 0 and 1 never prints as 0% or 100%: it takes the nearest value
/// the places can show inside (99.9% or 0.1% at one place, 99% or 1% at none). Rounded to
/// 100%, one failing entry among heavy ones reads as an image where everything installs
/// (common practice, no source).
pub fn percent(share: f64, decimals: usize) -> String {
    if !share.is_finite() {
        return "n/a".to_string();
    }
    let mut text = format!("{:.*}", decimals, share * 100.0);
    if share > 0.0 && share < 1.0 {
        let step = 0.1f64.powi(decimals as i32);
        let shown: f64 = text.parse().unwrap_or(share * 100.0);
        if shown >= 100.0 {
            text = format!("{:.*}", decimals, 100.0 - step);
        } else if shown <= 0.0 {
            text = format!("{:.*}", decimals, step);
        }
    }
    unsigned(text)
}

/// A threshold the user gave (`imageplan --target`) as a percentage with the places it needs
/// ([`target_decimals`]). Not a share of anything, so none of [`percent`]'s pull inside:
/// `--target 1` is 100%.
pub fn target_percent(target: f64) -> String {
    if !target.is_finite() {
        return "n/a".to_string();
    }
    unsigned(format!("{:.*}", target_decimals(target), target * 100.0))
}

/// `text` with a `%`, and without the sign of a negative zero.
fn unsigned(text: String) -> String {
    match text.strip_prefix('-') {
        Some(digits) if digits.bytes().all(|b| b == b'0' || b == b'.') => format!("{digits}%"),
        _ => format!("{text}%"),
    }
}

/// A share that may be undefined (`None`: a share of zero total weight, a rate over no
/// cells) as [`percent`] prints it, or `n/a`.
pub fn percent_or_na(share: Option<f64>, decimals: usize) -> String {
    share.map_or_else(|| "n/a".to_string(), |s| percent(s, decimals))
}

/// How many places a target share needs to print as itself (`--target 0.9753` is 97.53%, not
/// 97.5%): at least one, at most nine, where a nearer value is past anything a user types.
pub fn target_decimals(target: f64) -> usize {
    (1..=9)
        .find(|&d| {
            let shown: f64 = format!("{:.*}", d, target * 100.0)
                .parse()
                .unwrap_or(f64::NAN);
            (shown / 100.0 - target).abs() <= 1e-12
        })
        .unwrap_or(9)
}

/// A share printed beside the target it is measured against, with the target's places: one
/// that `misses` the target never prints as the target or above it, so a row cannot read as
/// meeting a target the report says no row meets. It takes more places until it prints below
/// (97.529% beside a target of 97.53%).
pub fn percent_beside(share: f64, target: f64, misses: bool) -> String {
    let places = target_decimals(target);
    let goal = target_percent(target);
    if !share.is_finite() {
        return percent(share, places);
    }
    if !misses {
        // Within the reaching tolerance below the target, it reached it: printing it below
        // (99.9% beside a target of 100%) would contradict the verdict.
        return if share < target {
            goal
        } else {
            percent(share, places)
        };
    }
    let number = |text: &str| {
        text.trim_end_matches('%')
            .parse::<f64>()
            .unwrap_or(f64::NAN)
    };
    // A miss lies more than the reaching tolerance below the target (1e-12 of the share
    // that may fail; at a target of 100%, the clamp of `percent` already prints it below),
    // so a share's seventeen significant places tell them apart.
    (places..=17)
        .map(|d| percent(share, d))
        .find(|shown| number(shown) < number(&goal))
        .unwrap_or_else(|| percent(share, 17))
}

/// Writes `bytes` to `path` through a temporary file in the same folder and a rename, so an
/// interrupted run never leaves half a file behind.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    write_all_atomic(&[(path.to_path_buf(), bytes)])
}

/// Writes several files that belong together (a matrix as YAML and JSON, a rendered set):
/// every one goes to a temporary file first, and only when all are written are they renamed
/// into place, so a failure to write leaves the old set whole rather than half replaced. What
/// would make a rename fail is refused before anything is written: a name a folder holds, or
/// one file named twice. A rename can still fail midway for reasons no check foresees (the
/// disk removed, say), and then the files renamed so far stay new.
pub fn write_all_atomic<B: AsRef<[u8]>>(files: &[(PathBuf, B)]) -> Result<()> {
    let mut names = std::collections::HashSet::new();
    for (path, _) in files {
        if path.is_dir() {
            anyhow::bail!("cannot write {}: a folder has that name", path.display());
        }
        if !names.insert(path) {
            anyhow::bail!("cannot write {} twice in one set of files", path.display());
        }
    }
    let mut staged: Vec<(PathBuf, &Path)> = Vec::with_capacity(files.len());
    let staging = files.iter().try_for_each(|(path, bytes)| -> Result<()> {
        let tmp = stage(path, bytes.as_ref())?;
        staged.push((tmp, path));
        Ok(())
    });
    if let Err(e) = staging {
        for (tmp, _) in &staged {
            let _ = std::fs::remove_file(tmp);
        }
        return Err(e);
    }
    let mut moved = 0;
    let result = staged.iter().try_for_each(|(tmp, path)| -> Result<()> {
        std::fs::rename(tmp, path)
            .with_context(|| format!("cannot move {} into place", path.display()))?;
        moved += 1;
        Ok(())
    });
    for (tmp, _) in &staged[moved..] {
        let _ = std::fs::remove_file(tmp);
    }
    result
}

/// Writes `bytes` to a temporary file beside `path` and returns its name.
fn stage(path: &Path, bytes: &[u8]) -> Result<PathBuf> {
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
    let written = (|| -> Result<()> {
        let mut f = std::fs::File::create(&tmp)
            .with_context(|| format!("cannot write {}", tmp.display()))?;
        f.write_all(bytes)?;
        f.sync_all()?;
        Ok(())
    })();
    if let Err(e) = written {
        let _ = std::fs::remove_file(&tmp);
        return Err(e);
    }
    Ok(tmp)
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_set_naming_one_file_twice_writes_nothing() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("matrix.json");
        std::fs::write(&path, "old").unwrap();
        let set = [
            (path.clone(), b"one".to_vec()),
            (path.clone(), b"two".to_vec()),
        ];
        let err = write_all_atomic(&set).unwrap_err();
        assert!(err.to_string().contains("twice"), "{err}");
        assert_eq!(std::fs::read_to_string(&path).unwrap(), "old");
        assert_eq!(
            std::fs::read_dir(dir.path()).unwrap().count(),
            1,
            "no temporary file left"
        );
    }

    #[test]
    fn zero_and_shares_that_round_to_zero_print_without_a_sign() {
        let empty: f64 = std::iter::empty::<f64>().sum();
        assert!(
            empty.is_sign_negative(),
            "a sum of nothing is negative zero"
        );
        assert_eq!(percent(empty, 1), "0.0%");
        assert_eq!(percent(-0.0, 0), "0%");
        assert_eq!(percent(-1e-9, 1), "0.0%");
        assert_eq!(percent(0.0, 1), "0.0%");
        assert_eq!(percent(0.125, 1), "12.5%");
        assert_eq!(percent(1.0, 0), "100%");
        assert_eq!(percent(f64::NAN, 1), "n/a");
    }

    #[test]
    fn shares_strictly_inside_never_print_as_all_or_nothing() {
        // 2000 of 2001: one failing entry must not vanish into a rounded 100%.
        assert_eq!(percent(2000.0 / 2001.0, 1), "99.9%");
        assert_eq!(percent(2000.0 / 2001.0, 0), "99%");
        assert_eq!(percent(1.0 / 2001.0, 1), "0.1%");
        assert_eq!(percent(1.0 / 2001.0, 0), "1%");
        assert_eq!(percent(0.9999999, 3), "99.999%");
        assert_eq!(percent(1e-300, 2), "0.01%");
        // Ends and shares that round inside stay as they are.
        assert_eq!(percent(1.0, 1), "100.0%");
        assert_eq!(percent(0.0, 0), "0%");
        assert_eq!(percent(0.996, 1), "99.6%");
        assert_eq!(percent(0.004, 1), "0.4%");
    }

    #[test]
    fn a_target_prints_as_itself_and_a_miss_prints_below_it() {
        assert_eq!(target_decimals(0.95), 1);
        assert_eq!(target_decimals(1.0), 1);
        assert_eq!(target_decimals(0.0), 1);
        assert_eq!(target_decimals(0.9753), 2);
        assert_eq!(target_decimals(0.123456), 4);
        assert_eq!(percent(0.9753, target_decimals(0.9753)), "97.53%");
        // Below the target at its places, rounding up to it, and far below.
        assert_eq!(percent_beside(0.975, 0.9753, true), "97.50%");
        assert_eq!(percent_beside(0.97529, 0.9753, true), "97.529%");
        assert_eq!(percent_beside(0.9752999, 0.9753, true), "97.52999%");
        assert_eq!(percent_beside(0.5, 0.9753, true), "50.00%");
        // A share that reaches the target keeps the target's places.
        assert_eq!(percent_beside(0.9753, 0.9753, false), "97.53%");
        assert_eq!(percent_beside(1.0, 0.95, false), "100.0%");
        // Below a target of 100%, the clamp already keeps a miss under it.
        assert_eq!(percent_beside(2000.0 / 2001.0, 1.0, true), "99.9%");
        // A target is no share: nothing pulls it inside, at either end.
        assert_eq!(target_percent(1.0), "100.0%");
        assert_eq!(target_percent(0.9999999999999), "100.0%");
        assert_eq!(target_percent(1e-12), "0.0%");
        assert_eq!(target_percent(0.9753), "97.53%");
        // Reaching by the tolerance of `coverage::reaches`, a share prints as the target,
        // not below it.
        assert_eq!(percent_beside(0.95 - 1e-16, 0.95, false), "95.0%");
        assert_eq!(percent_beside(0.9999, 0.9999999999999, true), "99.9%");
    }
}
