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
pub use markdown::{markdown, markdown_keyed};

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
    /// One JSON document.
    Json,
    /// The JSON document's content as YAML, every string quoted.
    Yaml,
}

/// What `render` prints to stdout: the matrix in one of the formats it writes with `--out`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum MatrixFormat {
    /// A Markdown table with numbered notes.
    Markdown,
    /// One self-contained HTML page.
    Html,
    /// One row per cell.
    Csv,
    /// The matrix document, as `plan --out` writes it.
    Json,
    /// The matrix document as YAML.
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

/// A share of priority weight that resolves as printed beside an image's counts: with
/// undecided cells it is a lower bound (they may yet resolve), marked `>=` as `imageplan` marks
/// its coverage.
///
/// ```
/// use basefit::report::at_least_if_undecided;
/// assert_eq!(at_least_if_undecided(2, "40.0%".into()), ">=40.0%");
/// assert_eq!(at_least_if_undecided(0, "40.0%".into()), "40.0%");
/// assert_eq!(at_least_if_undecided(2, "n/a".into()), "n/a");
/// // Nothing lies above all of it: the undecided cells weigh nothing.
/// assert_eq!(at_least_if_undecided(2, "100.0%".into()), "100.0%");
/// ```
pub fn at_least_if_undecided(undecided: usize, shown: String) -> String {
    match share_is_lower_bound(undecided, &shown) {
        true => format!(">={shown}"),
        false => shown,
    }
}

/// Whether a share printed as `shown` beside `undecided` undecided cells is a lower bound:
/// they may yet resolve, unless nothing is left above it (the HTML page says "at least").
pub(crate) fn share_is_lower_bound(undecided: usize, shown: &str) -> bool {
    undecided > 0 && shown != "n/a" && !shown.starts_with("100")
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
    let made: Vec<(PathBuf, Made<'_>)> = files
        .iter()
        .map(|(path, bytes)| {
            let bytes = bytes.as_ref();
            (
                path.clone(),
                Box::new(move |w: &mut dyn Write| w.write_all(bytes)) as Made<'_>,
            )
        })
        .collect();
    write_made_atomic(made).map(|_| ())
}

/// Writes one file's bytes into the writer it is given, when the file is written: a large
/// file is streamed to disk instead of being held whole in memory first.
pub type Made<'a> = Box<dyn FnOnce(&mut dyn Write) -> std::io::Result<()> + 'a>;

/// A [`Made`] of a text made whole (for outputs that are not large enough to stream).
pub fn made_text<'a>(make: impl FnOnce() -> String + 'a) -> Made<'a> {
    Box::new(move |w: &mut dyn Write| w.write_all(make().as_bytes()))
}

/// [`write_all_atomic`] of files whose bytes are made one at a time as each is written: a
/// large matrix's YAML and JSON are never in memory together, nor, when their [`Made`]
/// streams, whole. Returns each file's size in bytes.
pub fn write_made_atomic(files: Vec<(PathBuf, Made<'_>)>) -> Result<Vec<usize>> {
    let mut names = std::collections::HashSet::new();
    for (path, _) in &files {
        if path.is_dir() {
            anyhow::bail!("cannot write {}: a folder has that name", path.display());
        }
        if !names.insert(path) {
            anyhow::bail!("cannot write {} twice in one set of files", path.display());
        }
    }
    // Temporary files not yet moved into place are removed however this function is left, a
    // panic while making the next file included (a kill cannot be caught: then one stays).
    struct Staged(Vec<(PathBuf, PathBuf)>, usize);
    impl Drop for Staged {
        fn drop(&mut self) {
            for (tmp, _) in &self.0[self.1..] {
                let _ = std::fs::remove_file(tmp);
            }
        }
    }
    let mut staged = Staged(Vec::with_capacity(files.len()), 0);
    let mut sizes = Vec::with_capacity(files.len());
    for (path, make) in files {
        let (tmp, size) = stage(&path, make)?;
        sizes.push(size);
        staged.0.push((tmp, path));
    }
    while let Some((tmp, path)) = staged.0.get(staged.1) {
        std::fs::rename(tmp, path)
            .with_context(|| format!("cannot move {} into place", path.display()))?;
        staged.1 += 1;
    }
    Ok(sizes)
}

/// Writes what `make` writes to a temporary file beside `path`, buffered, and returns its name
/// and size. The temporary file is removed however this is left short of the end, a panic
/// inside `make` included.
fn stage(path: &Path, make: Made<'_>) -> Result<(PathBuf, usize)> {
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
    struct Unfinished<'p>(Option<&'p Path>);
    impl Drop for Unfinished<'_> {
        fn drop(&mut self) {
            if let Some(tmp) = self.0 {
                let _ = std::fs::remove_file(tmp);
            }
        }
    }
    let file =
        std::fs::File::create(&tmp).with_context(|| format!("cannot write {}", tmp.display()))?;
    let mut unfinished = Unfinished(Some(&tmp));
    let mut counted = Counted {
        inner: std::io::BufWriter::with_capacity(1 << 20, file),
        bytes: 0,
    };
    make(&mut counted)
        .and_then(|()| counted.inner.flush())
        .and_then(|()| counted.inner.get_ref().sync_all())
        .with_context(|| format!("cannot write {}", path.display()))?;
    unfinished.0 = None;
    drop(unfinished);
    Ok((tmp, counted.bytes))
}

/// A writer that counts the bytes it passes on.
struct Counted<W> {
    inner: W,
    bytes: usize,
}

impl<W: Write> Write for Counted<W> {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        let n = self.inner.write(buf)?;
        self.bytes += n;
        Ok(n)
    }
    fn flush(&mut self) -> std::io::Result<()> {
        self.inner.flush()
    }
}

/// The pronoun for `n` things named just before: `it` for one, `them` otherwise.
///
/// ```
/// assert_eq!(basefit::report::it_or_them(1), "it");
/// assert_eq!(basefit::report::it_or_them(3), "them");
/// ```
pub fn it_or_them(n: usize) -> &'static str {
    one_or_many(n, "it", "them")
}

/// `one` for one thing, `many` for any other count: "1 cell was", "0 cells were".
///
/// ```
/// use basefit::report::one_or_many;
/// assert_eq!(format!("1 {}", one_or_many(1, "cell was", "cells were")), "1 cell was");
/// assert_eq!(format!("0 {}", one_or_many(0, "cell was", "cells were")), "0 cells were");
/// ```
pub fn one_or_many<'a, N: PartialEq + From<u8>>(n: N, one: &'a str, many: &'a str) -> &'a str {
    if n == N::from(1) { one } else { many }
}

/// `n` as an English ordinal: `1st`, `2nd`, `3rd`, `4th`, `11th`, `12th`, `13th`, `21st`,
/// `112th`. Messages count a file's records with it, so that "the 31st cell" cannot be read
/// as counting from 0, as "cell 31" can (some counts in the same messages do).
///
/// ```
/// use basefit::report::ordinal;
/// let all: Vec<String> = [1, 2, 3, 4, 11, 12, 13, 21, 22, 23, 101, 111, 112, 1003]
///     .map(ordinal)
///     .into();
/// assert_eq!(all, ["1st", "2nd", "3rd", "4th", "11th", "12th", "13th", "21st", "22nd", "23rd",
///     "101st", "111th", "112th", "1003rd"]);
/// ```
pub fn ordinal(n: usize) -> String {
    let suffix = match (n % 10, n % 100) {
        (_, 11..=13) => "th",
        (1, _) => "st",
        (2, _) => "nd",
        (3, _) => "rd",
        _ => "th",
    };
    format!("{n}{suffix}")
}

/// Pretty JSON with a trailing newline.
pub fn to_json<T: Serialize>(value: &T) -> String {
    let mut out = Vec::new();
    write_json(value, &mut out).expect("report values serialize");
    String::from_utf8(out).expect("JSON is UTF-8")
}

/// [`to_json`] streamed into `w`, so a large matrix is never held as one string.
pub fn write_json<T: Serialize>(value: &T, w: &mut dyn Write) -> std::io::Result<()> {
    serde_json::to_writer_pretty(&mut *w, value)?;
    w.write_all(b"\n")
}

/// YAML that YAML 1.1 and YAML 1.2 readers alike read back to the same values: block style
/// as serde_yaml lays it out, but every string double-quoted and every float with a point.
///
/// serde_yaml writes YAML 1.2, where `no`, `on`, `1_000`, `1:20` or `2026-01-01` are plain
/// strings; most readers downstream (PyYAML, Ruby's Psych, Go's yaml.v2) follow YAML 1.1 and
/// read those as booleans, numbers and dates, and refuse `<<` or `=`. A package name, an image
/// id or a summary can be any of them, and a quoted scalar is a string in every version and
/// schema. YAML 1.1 floats also need a point and a signed exponent (`1.0e+300`, not serde_yaml's
/// `1e300`), or PyYAML reads a string.
///
/// ```
/// #[derive(serde::Serialize)]
/// struct Row { name: String, weight: f64, toolchain: bool, tags: Vec<String> }
/// let row = Row { name: "no".into(), weight: 1e-7, toolchain: true, tags: vec![] };
/// assert_eq!(
///     basefit::report::to_yaml(&row),
///     "name: \"no\"\nweight: 1.0e-7\ntoolchain: true\ntags: []\n"
/// );
/// ```
pub fn to_yaml<T: Serialize>(value: &T) -> String {
    let value = serde_yaml::to_value(value).expect("report values serialize");
    let mut out = String::new();
    yaml_node(&mut out, &value, 0, Place::Top);
    out
}

/// [`to_yaml`] of a matrix, byte for byte, without holding the whole document as one tree:
/// each cell becomes a tree of its own, written and dropped, which on a plan of 100,000 cells
/// saves gigabytes.
pub fn matrix_yaml(m: &crate::plan::Matrix) -> String {
    let mut out = Vec::new();
    write_matrix_yaml(m, &mut out).expect("writing to memory does not fail");
    String::from_utf8(out).expect("YAML is UTF-8")
}

/// [`matrix_yaml`] streamed into `w`: only one cell's text is in memory at a time.
pub fn write_matrix_yaml(m: &crate::plan::Matrix, w: &mut dyn Write) -> std::io::Result<()> {
    let head = crate::plan::Matrix {
        notice: m.notice.clone(),
        native_skipped: m.native_skipped,
        images: m.images.clone(),
        packages: m.packages.clone(),
        cells: Vec::new(),
        shard: m.shard,
        planned_from: m.planned_from.clone(),
        registry_fingerprint: m.registry_fingerprint.clone(),
        catalog_fingerprint: m.catalog_fingerprint.clone(),
    };
    yaml_with_items(&head, "cells", &m.cells, w)
}

/// [`to_yaml`] of `head`, a mapping whose entry `key` is an empty sequence standing for
/// `items`, written into `w` one item at a time.
fn yaml_with_items<H: Serialize, I: Serialize>(
    head: &H,
    key: &str,
    items: &[I],
    w: &mut dyn Write,
) -> std::io::Result<()> {
    use serde_yaml::Value;
    let head = serde_yaml::to_value(head).expect("report values serialize");
    let Value::Mapping(map) = &head else {
        unreachable!("a struct serializes as a mapping")
    };
    let mut out = String::new();
    if items.is_empty() {
        yaml_node(&mut out, &head, 0, Place::Top);
        return w.write_all(out.as_bytes());
    }
    for (k, value) in map {
        // Every key of a report struct is a short plain string: an implicit key.
        yaml_key(&mut out, k);
        out.push(':');
        if k.as_str() == Some(key) {
            // As `yaml_node` writes a non-empty sequence under a key at column 0.
            out.push('\n');
            for item in items {
                let item = serde_yaml::to_value(item).expect("report values serialize");
                out.push_str("- ");
                yaml_node(&mut out, &item, 0, Place::Item);
                w.write_all(out.as_bytes())?;
                out.clear();
            }
        } else {
            yaml_node(&mut out, value, 0, Place::MapValue);
        }
    }
    w.write_all(out.as_bytes())
}

/// Where a node starts, which decides how a block collection under it is laid out.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Place {
    /// The document itself, at column 0.
    Top,
    /// After `key:` of an entry at `indent`: a mapping goes on the next lines two deeper, a
    /// sequence at the key's own column, as serde_yaml writes them.
    MapValue,
    /// After `- ` (or `? `, `: ` of an explicit entry) at `indent`: a collection starts on
    /// the same line, its other lines two deeper.
    Item,
}

/// Writes `value` starting at the cursor (placed as `place` says) and ends with a newline.
fn yaml_node(out: &mut String, value: &serde_yaml::Value, indent: usize, place: Place) {
    use serde_yaml::Value;
    match value {
        Value::Sequence(items) if !items.is_empty() => {
            let (at, inline) = match place {
                Place::Top => (0, false),
                Place::MapValue => (indent, false),
                Place::Item => (indent + 2, true),
            };
            if place == Place::MapValue {
                out.push('\n');
            }
            for (i, item) in items.iter().enumerate() {
                if i > 0 || !inline {
                    pad(out, at);
                }
                out.push_str("- ");
                yaml_node(out, item, at, Place::Item);
            }
        }
        Value::Mapping(map) if !map.is_empty() => {
            let (at, inline) = match place {
                Place::Top => (0, false),
                Place::MapValue => (indent + 2, false),
                Place::Item => (indent + 2, true),
            };
            if place == Place::MapValue {
                out.push('\n');
            }
            for (i, (key, item)) in map.iter().enumerate() {
                if i > 0 || !inline {
                    pad(out, at);
                }
                let mut simple = String::new();
                if !matches!(
                    key,
                    Value::Sequence(_) | Value::Mapping(_) | Value::Tagged(_)
                ) {
                    yaml_key(&mut simple, key);
                }
                // An implicit key holds at most 1024 characters (YAML 1.2 §7.4.2; libyaml and
                // PyYAML enforce it) and no collection or tag; anything else goes out as an
                // explicit entry (§8.2.2).
                if simple.is_empty() || simple.chars().count() > 1024 {
                    out.push_str("? ");
                    yaml_node(out, key, at, Place::Item);
                    pad(out, at);
                    out.push_str(": ");
                    yaml_node(out, item, at, Place::Item);
                } else {
                    out.push_str(&simple);
                    out.push(':');
                    yaml_node(out, item, at, Place::MapValue);
                }
            }
        }
        Value::Tagged(tagged) => {
            // serde_yaml's form of an enum variant with data: `!Variant` and then its value.
            if place == Place::MapValue {
                out.push(' ');
            }
            yaml_tag(out, &tagged.tag.to_string());
            // A node holds one tag (YAML 1.2 §6.9), so a variant inside a variant, which
            // serde_yaml refuses to write at all, becomes the one-entry mapping serde's
            // externally tagged form uses: readable, and no panic.
            let nested;
            let inner = match &tagged.value {
                Value::Tagged(t) => {
                    let name = t.tag.to_string();
                    let name = name.strip_prefix('!').unwrap_or(&name).to_string();
                    nested = Value::Mapping(
                        [(Value::String(name), t.value.clone())]
                            .into_iter()
                            .collect(),
                    );
                    &nested
                }
                other => other,
            };
            let collection = match inner {
                Value::Sequence(v) => !v.is_empty(),
                Value::Mapping(m) => !m.is_empty(),
                _ => false,
            };
            if !collection {
                yaml_node(out, inner, indent, Place::MapValue);
            } else {
                // On the lines after the tag, as serde_yaml lays it out: at the top at column
                // 0; after a key, as any value of that key; after a dash, two deeper than it.
                match place {
                    Place::Top => {
                        out.push('\n');
                        yaml_node(out, inner, 0, Place::Top);
                    }
                    Place::MapValue => yaml_node(out, inner, indent, Place::MapValue),
                    Place::Item if matches!(inner, Value::Mapping(_)) => {
                        yaml_node(out, inner, indent, Place::MapValue)
                    }
                    Place::Item => yaml_node(out, inner, indent + 2, Place::MapValue),
                }
            }
        }
        scalar => {
            if place == Place::MapValue {
                out.push(' ');
            }
            yaml_scalar(out, scalar);
            out.push('\n');
        }
    }
}

fn pad(out: &mut String, indent: usize) {
    out.extend(std::iter::repeat_n(' ', indent));
}

/// A scalar that is no collection: strings double-quoted, numbers, booleans and null as
/// serde_yaml writes them (floats made YAML 1.1 floats).
fn yaml_scalar(out: &mut String, value: &serde_yaml::Value) {
    use serde_yaml::Value;
    match value {
        Value::String(s) => yaml_quoted(out, s),
        Value::Number(n) => out.push_str(&yaml_number(n)),
        Value::Bool(b) => out.push_str(if *b { "true" } else { "false" }),
        Value::Null => out.push_str("null"),
        // Only empty collections arrive here: a block collection cannot be empty.
        Value::Sequence(_) => out.push_str("[]"),
        Value::Mapping(_) => out.push_str("{}"),
        // Callers write tagged values themselves; should one arrive, its tag quoted is
        // readable where a panic would lose the whole report.
        Value::Tagged(t) => yaml_quoted(out, &t.tag.to_string()),
    }
}

/// A float as basefit's YAML writes it: shortest round-trip digits, with the `.` and signed
/// exponent YAML 1.1 wants (`1.0e-7`, not `1e-7`); see [`yaml_number`].
pub(crate) fn yaml_float(x: f64) -> String {
    yaml_number(&serde_yaml::Number::from(x))
}

/// A number as serde_yaml writes it, except a float whose form YAML 1.1 would not read as a
/// float: its regular expression (YAML 1.1 type repository, float) wants a `.` in the
/// mantissa and a sign in the exponent, so `1e-7` becomes `1.0e-7` and `1e300` `1.0e+300`.
/// `.inf`, `-.inf` and `.nan` are YAML 1.1 and 1.2 floats as they are.
fn yaml_number(n: &serde_yaml::Number) -> String {
    // `Number`'s Display is serde_yaml's own scalar form (itoa, ryu, `.inf`, `-.inf`, `.nan`),
    // without running an emitter per number.
    let text = n.to_string();
    let text = text.as_str();
    if !n.is_f64() || text.contains(".inf") || text.contains(".nan") {
        return text.to_string();
    }
    let (mantissa, exponent) = match text.find(['e', 'E']) {
        Some(at) => (&text[..at], Some(&text[at + 1..])),
        None => (text, None),
    };
    let mut fixed = mantissa.to_string();
    if !mantissa.contains('.') {
        fixed.push_str(".0");
    }
    if let Some(exponent) = exponent {
        fixed.push('e');
        if !exponent.starts_with(['+', '-']) {
            fixed.push('+');
        }
        fixed.push_str(exponent);
    }
    fixed
}

/// Words that YAML 1.1 reads as booleans or null when plain (YAML 1.1 type repository, bool
/// and null types), in any case to be safe with readers that fold case.
const YAML11_WORDS: [&str; 10] = [
    "y", "yes", "n", "no", "true", "false", "on", "off", "null", "~",
];

/// A mapping key: plain when it is a name no YAML version reads as anything but a string,
/// else quoted like a value. A key that is no string (serde_yaml allows numbers, booleans and
/// null) keeps its own scalar form.
fn yaml_key(out: &mut String, key: &serde_yaml::Value) {
    match key {
        serde_yaml::Value::String(s) if plain_key(s) => out.push_str(s),
        other => yaml_scalar(out, other),
    }
}

fn plain_key(s: &str) -> bool {
    let mut chars = s.chars();
    let first_ok = chars
        .next()
        .is_some_and(|c| c.is_ascii_alphabetic() || c == '_');
    first_ok
        && chars.all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-')
        && !YAML11_WORDS.iter().any(|w| w.eq_ignore_ascii_case(s))
}

/// `s` as a double-quoted scalar. Raw, YAML allows only its printable set (YAML 1.2 §5.1:
/// #x9, #xA, #xD, #x20–#x7E, #x85, #xA0–#xD7FF, #xE000–#xFFFD, #x10000–#x10FFFF); everything
/// else takes a `\u` escape (§5.7), as do U+0085, U+2028 and U+2029, which YAML 1.1 takes for
/// line breaks and would fold, and U+FEFF, a byte order mark to some readers. Tab, line feed
/// and carriage return take their short escapes so the scalar stays on one line.
/// `s` as a YAML double-quoted scalar that YAML 1.1 and 1.2 readers read back as written
/// (see [`yaml_quoted`]), for YAML that basefit writes line by line.
///
/// ```
/// use basefit::report::yaml_string;
/// assert_eq!(yaml_string("no"), "\"no\"");
/// assert_eq!(yaml_string("a\u{2028}b"), "\"a\\u2028b\"");
/// ```
pub fn yaml_string(s: &str) -> String {
    let mut out = String::new();
    yaml_quoted(&mut out, s);
    out
}

fn yaml_quoted(out: &mut String, s: &str) {
    out.reserve(s.len() + 2);
    out.push('"');
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            '\t' => out.push_str("\\t"),
            '\r' => out.push_str("\\r"),
            '\u{85}' | '\u{2028}' | '\u{2029}' | '\u{feff}' => push_u_escape(out, c),
            '\u{20}'..='\u{7e}'
            | '\u{a0}'..='\u{d7ff}'
            | '\u{e000}'..='\u{fffd}'
            | '\u{10000}'..='\u{10ffff}' => out.push(c),
            // Outside the printable set every character is below U+10000 (Rust strings hold
            // no surrogates), so four hex digits always suffice.
            _ => push_u_escape(out, c),
        }
    }
    out.push('"');
}

fn push_u_escape(out: &mut String, c: char) {
    use std::fmt::Write as _;
    let _ = write!(out, "\\u{:04X}", c as u32);
}

/// A tag as `!suffix`: characters a tag shorthand may not hold raw are %-escaped as UTF-8
/// bytes (YAML 1.2 §6.8.1, ns-tag-char and ns-uri-char), which readers decode.
fn yaml_tag(out: &mut String, tag: &str) {
    use std::fmt::Write as _;
    let suffix = tag.strip_prefix('!').unwrap_or(tag);
    out.push('!');
    for b in suffix.bytes() {
        if b.is_ascii_alphanumeric() || matches!(b, b'-' | b'_' | b'.' | b'~') {
            out.push(b as char);
        } else {
            let _ = write!(out, "%{b:02X}");
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Strings that a plain or single-quoted scalar would let some YAML reader take for
    /// something else: YAML 1.1 booleans, null, numbers, sexagesimals, dates, merge and value
    /// keys, indicators, quotes, edge spaces, and characters YAML 1.1 or 1.2 will not hold raw.
    fn hostile() -> Vec<String> {
        let mut v: Vec<String> = [
            "no",
            "yes",
            "on",
            "off",
            "NO",
            "Yes",
            "y",
            "Y",
            "n",
            "N",
            "true",
            "False",
            "null",
            "Null",
            "~",
            "",
            "1_000",
            "1:20",
            "190:20:30",
            "2026-01-01",
            "2001-12-14t21:59:43.10-05:00",
            "<<",
            "=",
            "0o17",
            "0x1F",
            "0b101",
            "017",
            ".5",
            "+1",
            "-0",
            "1e3",
            ".inf",
            "-.Inf",
            ".NaN",
            "- x",
            "#c",
            "a #c",
            "a: b",
            "a:b",
            "? k",
            "'q'",
            "\"q\"",
            "it's",
            "\\",
            "\\n",
            "!tag",
            "&anchor",
            "*alias",
            "%YAML",
            "@at",
            "`tick",
            "|",
            ">",
            "[a]",
            "{a: 1}",
            ",",
            "---",
            "...",
            " lead",
            "trail ",
            " ",
            "\n",
            "a\nb",
            "a\n\nb\n",
            "\t",
            "a\tb",
            "\r",
            "x\r\n",
            "\0",
            "\u{1b}",
            "\u{7f}",
            "\u{85}",
            "\u{9f}",
            "\u{a0}",
            "\u{2028}",
            "\u{2029}",
            "\u{feff}",
            "\u{fffe}",
            "\u{ffff}",
            "\u{d7ff}\u{e000}",
            "naïve",
            "日本語",
            "🦀 emoji 👍🏽",
            "\u{10ffff}",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect();
        v.push("x".repeat(10_000));
        v.push("é\n".repeat(2_000));
        v
    }

    #[derive(Debug, PartialEq, Serialize, serde::Deserialize)]
    struct Hostile {
        name: String,
        names: Vec<String>,
        nested: Vec<Vec<String>>,
        by_name: std::collections::BTreeMap<String, String>,
        rows: Vec<HostileRow>,
        summary: Option<String>,
        none: Option<String>,
        weight: f64,
        count: u64,
        offset: i64,
        flag: bool,
        empty: Vec<String>,
        empty_map: std::collections::BTreeMap<String, String>,
    }

    #[derive(Debug, PartialEq, Serialize, serde::Deserialize)]
    struct HostileRow {
        id: String,
        tags: Vec<String>,
    }

    #[test]
    fn hostile_strings_read_back_as_themselves() {
        let words = hostile();
        let value = Hostile {
            name: "no".into(),
            names: words.clone(),
            nested: vec![words.clone(), vec![], vec!["on".into()]],
            by_name: words.iter().map(|w| (w.clone(), w.clone())).collect(),
            rows: words
                .iter()
                .map(|w| HostileRow {
                    id: w.clone(),
                    tags: vec![w.clone(), "off".into()],
                })
                .collect(),
            summary: Some("2026-01-01".into()),
            none: None,
            weight: 1e-7,
            count: u64::MAX,
            offset: i64::MIN,
            flag: false,
            empty: vec![],
            empty_map: Default::default(),
        };
        let text = to_yaml(&value);
        let back: Hostile = serde_yaml::from_str(&text).unwrap();
        assert_eq!(back, value);
        // A YAML 1.2 reader would read the old plain scalars back too; what YAML 1.1 readers
        // need is that no string goes out plain or single-quoted.
        for word in &words {
            let mut quoted = String::new();
            yaml_quoted(&mut quoted, word);
            assert!(
                text.contains(&format!("\n- {quoted}\n")),
                "{word:?} as {quoted}"
            );
            assert!(text.contains(&format!("- id: {quoted}\n")), "{word:?}");
        }
        assert!(
            text.starts_with("name: \"no\"\nnames:\n- \"no\"\n- \"yes\"\n"),
            "{text}"
        );
        assert!(text.contains("summary: \"2026-01-01\"\n"), "{text}");
        assert!(text.contains("none: null\n"), "{text}");
        assert!(text.ends_with("empty: []\nempty_map: {}\n"), "{text}");
    }

    #[test]
    fn every_string_is_double_quoted_with_yaml_escapes() {
        let words = [
            "no", "on", "1_000", "1:20", "<<", "=", "", " a ", "'q'", "\"q\"",
        ];
        assert_eq!(
            to_yaml(&words),
            "- \"no\"\n- \"on\"\n- \"1_000\"\n- \"1:20\"\n- \"<<\"\n- \"=\"\n- \"\"\n- \" a \"\n\
             - \"'q'\"\n- \"\\\"q\\\"\"\n"
        );
        let controls =
            "\\\n\t\r\0\u{1b}\u{7f}\u{85}\u{9f}\u{a0}\u{2028}\u{2029}\u{feff}\u{fffe}\u{ffff}é🦀";
        assert_eq!(
            to_yaml(&controls),
            "\"\\\\\\n\\t\\r\\u0000\\u001B\\u007F\\u0085\\u009F\u{a0}\\u2028\\u2029\\uFEFF\\uFFFE\\uFFFFé🦀\"\n"
        );
        let back: String = serde_yaml::from_str(&to_yaml(&controls)).unwrap();
        assert_eq!(back, controls);
    }

    #[test]
    fn keys_stay_plain_unless_some_reader_would_misread_them() {
        let map: std::collections::BTreeMap<&str, u8> = [
            ("name", 1),
            ("closure_size", 2),
            ("at-risk", 3),
            ("_x", 4),
            ("yes", 5),
            ("On", 6),
            ("N", 7),
            ("NULL", 8),
            ("<<", 9),
            ("=", 10),
            ("1:20", 11),
            ("", 12),
            ("a b", 13),
            ("-x", 14),
            ("é", 15),
            // YAML 1.1 reads `1_000` as the integer 1000 and `1e3` as a float (its int and
            // float types allow `_`; yaml.org/type/int.html, from memory): a key that starts
            // with a digit is quoted.
            ("1_000", 16),
            ("1e3", 17),
        ]
        .into_iter()
        .collect();
        let text = to_yaml(&map);
        for plain in ["name: 1\n", "closure_size: 2\n", "at-risk: 3\n", "_x: 4\n"] {
            assert!(text.contains(plain), "{plain:?} in {text}");
        }
        for quoted in [
            "\"yes\": 5\n",
            "\"On\": 6\n",
            "\"N\": 7\n",
            "\"NULL\": 8\n",
            "\"<<\": 9\n",
            "\"=\": 10\n",
            "\"1:20\": 11\n",
            "\"\": 12\n",
            "\"a b\": 13\n",
            "\"-x\": 14\n",
            "\"é\": 15\n",
            "\"1_000\": 16\n",
            "\"1e3\": 17\n",
        ] {
            assert!(text.contains(quoted), "{quoted:?} in {text}");
        }
        let back: std::collections::BTreeMap<String, u8> = serde_yaml::from_str(&text).unwrap();
        assert_eq!(back.len(), map.len());
        assert!(map.iter().all(|(k, v)| back.get(*k) == Some(v)));
    }

    #[test]
    fn a_key_past_the_implicit_key_limit_is_written_explicitly() {
        // 1022 characters and two quotes are the 1024 an implicit key may hold (a space makes
        // them quoted).
        let fits = "k ".repeat(511);
        let long = format!("{fits}k");
        let map: std::collections::BTreeMap<&str, &str> =
            [(fits.as_str(), "no"), (long.as_str(), "on")].into();
        let text = to_yaml(&map);
        assert_eq!(
            text,
            format!("\"{fits}\": \"no\"\n? \"{long}\"\n: \"on\"\n")
        );
        let back: std::collections::BTreeMap<String, String> = serde_yaml::from_str(&text).unwrap();
        assert_eq!(back[&fits], "no");
        assert_eq!(back[&long], "on");
    }

    #[test]
    fn keys_that_are_no_strings_keep_their_form() {
        let numbers: std::collections::BTreeMap<i64, bool> = [(-2, false), (1, true)].into();
        let text = to_yaml(&numbers);
        assert_eq!(text, "-2: false\n1: true\n");
        assert_eq!(
            serde_yaml::from_str::<std::collections::BTreeMap<i64, bool>>(&text).unwrap(),
            numbers
        );
        // Collections as keys (serde_yaml allows them) go out as explicit entries.
        let mut odd = serde_yaml::Mapping::new();
        odd.insert(
            serde_yaml::Value::Sequence(vec!["no".into(), 1.into()]),
            "v".into(),
        );
        odd.insert(serde_yaml::Value::Mapping(Default::default()), "w".into());
        let odd = serde_yaml::Value::Mapping(odd);
        let text = to_yaml(&odd);
        assert_eq!(text, "? - \"no\"\n  - 1\n: \"v\"\n? {}\n: \"w\"\n");
        assert_eq!(
            serde_yaml::from_str::<serde_yaml::Value>(&text).unwrap(),
            odd
        );
    }

    #[test]
    fn floats_are_floats_to_yaml_1_1_and_1_2_readers() {
        let floats = [
            1.0,
            0.5,
            -0.0,
            1e300,
            1e-7,
            1.2345678901234568e20,
            2.5e-300,
            123.0,
        ];
        let text = to_yaml(&floats);
        assert_eq!(
            text,
            "- 1.0\n- 0.5\n- -0.0\n- 1.0e+300\n- 1.0e-7\n- 1.2345678901234568e+20\n- 2.5e-300\n- 123.0\n"
        );
        let back: Vec<f64> = serde_yaml::from_str(&text).unwrap();
        assert_eq!(back, floats);
        assert!(back[2].is_sign_negative());
        let odd = [f64::INFINITY, f64::NEG_INFINITY, f64::NAN];
        let text = to_yaml(&odd);
        assert_eq!(text, "- .inf\n- -.inf\n- .nan\n");
        let back: Vec<f64> = serde_yaml::from_str(&text).unwrap();
        assert_eq!(back[..2], odd[..2]);
        assert!(back[2].is_nan());
        assert_eq!(
            to_yaml(&(u64::MAX, i64::MIN, true, ())),
            "- 18446744073709551615\n- -9223372036854775808\n- true\n- null\n"
        );
    }

    #[test]
    fn the_layout_is_serde_yaml_s_where_no_string_is_written() {
        #[derive(Serialize)]
        enum Shape {
            Unit,
            One(u8),
            Pair(u8, u8),
            Named { a: u8, b: Vec<u8> },
            Map(std::collections::BTreeMap<u8, Vec<u8>>),
            List(Vec<Vec<u8>>),
        }
        #[derive(Serialize)]
        struct Doc {
            seqs: Vec<Vec<u8>>,
            rows: Vec<std::collections::BTreeMap<u8, Vec<u8>>>,
            shapes: Vec<Shape>,
            one: Shape,
            pair: Shape,
            named: Shape,
            map: Shape,
            list: Shape,
            empty: Vec<u8>,
            empty_map: std::collections::BTreeMap<u8, u8>,
            nothing: Option<u8>,
            weights: Vec<f64>,
        }
        let map = || Shape::Map([(1, vec![2, 3]), (4, vec![])].into());
        let list = || Shape::List(vec![vec![1], vec![]]);
        let doc = Doc {
            seqs: vec![vec![1, 2], vec![], vec![3]],
            rows: vec![[(1, vec![2]), (3, vec![])].into(), Default::default()],
            shapes: vec![
                Shape::Unit,
                Shape::One(1),
                Shape::Pair(1, 2),
                Shape::Named { a: 1, b: vec![2] },
                map(),
                list(),
            ],
            one: Shape::One(7),
            pair: Shape::Pair(1, 2),
            named: Shape::Named { a: 1, b: vec![] },
            map: map(),
            list: list(),
            empty: vec![],
            empty_map: Default::default(),
            nothing: None,
            weights: vec![0.25, 1.0, f64::INFINITY],
        };
        // `Shape::Unit` is the one string here; serde_yaml writes it plain.
        let ours = to_yaml(&doc).replace("- \"Unit\"\n", "- Unit\n");
        assert_eq!(ours, serde_yaml::to_string(&doc).unwrap());
        for top in [Shape::Named { a: 1, b: vec![2] }, list(), Shape::One(3)] {
            assert_eq!(to_yaml(&top), serde_yaml::to_string(&top).unwrap());
        }
    }

    #[test]
    fn tagged_values_read_back_and_odd_tags_are_escaped() {
        #[derive(Debug, PartialEq, Serialize, serde::Deserialize)]
        enum Verdict {
            #[serde(rename = "at risk: no!")]
            AtRisk(String),
            Fails {
                reason: String,
            },
            Many(Vec<String>),
        }
        let verdicts = vec![
            Verdict::AtRisk("no".into()),
            Verdict::Fails {
                reason: "on".into(),
            },
            Verdict::Many(vec!["yes".into(), "1:20".into()]),
        ];
        let text = to_yaml(&verdicts);
        assert_eq!(
            text,
            "- !at%20risk%3A%20no%21 \"no\"\n- !Fails\n  reason: \"on\"\n- !Many\n  - \"yes\"\n  - \"1:20\"\n"
        );
        assert_eq!(
            serde_yaml::from_str::<Vec<Verdict>>(&text).unwrap(),
            verdicts
        );
        // A variant inside a variant, which serde_yaml itself refuses to write, gives a
        // document rather than a panic.
        #[derive(Serialize)]
        enum Outer {
            Wrap(Verdict),
        }
        assert!(serde_yaml::to_string(&Outer::Wrap(Verdict::Many(vec![]))).is_err());
        let text = to_yaml(&Outer::Wrap(Verdict::Many(vec!["no".into()])));
        assert_eq!(text, "!Wrap\nMany:\n- \"no\"\n");
        assert!(serde_yaml::from_str::<serde_yaml::Value>(&text).is_ok());
    }

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
    fn a_streamed_file_that_fails_midway_leaves_the_old_set_and_no_temporary_file() {
        let dir = tempfile::tempdir().unwrap();
        let (first, second) = (dir.path().join("a.yaml"), dir.path().join("a.json"));
        std::fs::write(&first, "old").unwrap();
        let files: Vec<(PathBuf, Made<'_>)> = vec![
            (first.clone(), made_text(|| "new".to_string())),
            (
                second.clone(),
                Box::new(|w: &mut dyn Write| {
                    w.write_all(&[b'x'; 3 << 20])?;
                    Err(std::io::Error::other("disk full"))
                }),
            ),
        ];
        let err = write_made_atomic(files).unwrap_err();
        assert!(format!("{err:#}").contains("a.json"), "{err:#}");
        assert!(format!("{err:#}").contains("disk full"), "{err:#}");
        assert_eq!(std::fs::read_to_string(&first).unwrap(), "old");
        assert!(!second.exists());
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
    }

    #[test]
    fn streamed_sizes_are_the_sizes_on_disk() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("big.txt");
        let files: Vec<(PathBuf, Made<'_>)> = vec![(
            path.clone(),
            Box::new(|w: &mut dyn Write| {
                for i in 0..200_000 {
                    writeln!(w, "line {i}")?;
                }
                Ok(())
            }),
        )];
        let sizes = write_made_atomic(files).unwrap();
        assert_eq!(
            sizes,
            vec![std::fs::metadata(&path).unwrap().len() as usize]
        );
        assert!(
            std::fs::read_to_string(&path)
                .unwrap()
                .ends_with("line 199999\n")
        );
    }

    #[test]
    fn a_panic_while_making_a_file_leaves_no_temporary_file() {
        let dir = tempfile::tempdir().unwrap();
        let (first, second) = (
            dir.path().join("matrix.yaml"),
            dir.path().join("matrix.json"),
        );
        std::fs::write(&first, "old").unwrap();
        let files: Vec<(PathBuf, Made<'_>)> = vec![
            (first.clone(), made_text(|| "new".to_string())),
            (
                second,
                Box::new(|w: &mut dyn Write| {
                    w.write_all(b"half of it")?;
                    panic!("made badly")
                }),
            ),
        ];
        let caught =
            std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| write_made_atomic(files)));
        assert!(caught.is_err());
        assert_eq!(std::fs::read_to_string(&first).unwrap(), "old");
        let left: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
        assert_eq!(left.len(), 1, "the first file's temporary copy was removed");
    }

    #[test]
    fn json_documents_end_with_one_line_break() {
        // "Pretty JSON with a trailing newline" (`to_json`): a document printed to a terminal
        // or written as a file ends its last line (POSIX calls a text file's lines
        // newline-terminated; common practice, no source beyond that definition).
        let text = to_json(&serde_json::json!({"a": [1, 2]}));
        assert_eq!(text, "{\n  \"a\": [\n    1,\n    2\n  ]\n}\n");
        let mut streamed = Vec::new();
        write_json(&vec!["x"], &mut streamed).unwrap();
        assert_eq!(String::from_utf8(streamed).unwrap(), "[\n  \"x\"\n]\n");
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
        // At a target of 100% a share summed in floats can fall an ulp short of 1 while the
        // entries short of it weigh nothing (`coverage::reaches` then says it reaches): it
        // prints as the target, not as the 99.9% the clamp of `percent` would give.
        assert_eq!(percent_beside(1.0 - f64::EPSILON, 1.0, false), "100.0%");
        assert_eq!(percent_beside(0.9999, 0.9999999999999, true), "99.9%");
    }
}
