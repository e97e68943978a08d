//! Recorded install results, in YAML, CSV or JSON lines.

use super::diag::{
    At, BadInput, Ledger, Origin, ProblemKind, RecordKind, Reference, SchemaErrors,
    bad_name_detail, file_kind, name_problem, read_text, shown_name,
};
use super::lenient::{VersionRead, read_version};
use super::priorities::has_extension;
use super::table::Table;
use super::yaml::{self, Ctx};
use crate::model::{ImageSet, RecordedOutcome, RecordedResult, Registry};
use crate::verify::logs::{SCAN_TAIL_BYTES, first_whole_segment};
use std::collections::HashMap;
use std::io::{Read, Seek, SeekFrom};
use std::path::{Component, Path, PathBuf};

const FIELDS: &[&str] = &["package", "image", "outcome", "version", "log", "log_file"];
const REQUIRED: &[&str] = &["package", "image", "outcome"];

/// A result record as written. The values checked after reading keep their lines (a CSV row's
/// or a JSON line's for each of its values), so a problem with one names it.
struct RawResult {
    line: usize,
    package: At<String>,
    image: At<String>,
    outcome: At<String>,
    version: Option<At<String>>,
    log: Option<String>,
    log_file: Option<At<String>>,
}

/// What results are checked against: records naming anything else are reported. An input
/// that was not given (`None`) checks nothing: every name would be reported unknown, and the
/// report would blame the results for an input left off the command line. The ledger records
/// the check as skipped instead.
pub struct Known<'a> {
    pub registry: Option<&'a Registry>,
    pub images: Option<&'a ImageSet>,
}

/// Reads recorded results by extension: `.csv`, `.jsonl`/`.ndjson` (JSON lines), otherwise YAML.
/// Log file paths are relative to the results file.
pub fn read_results(
    path: &Path,
    known: &Known<'_>,
    ledger: &mut Ledger,
) -> Result<Vec<RecordedResult>, BadInput> {
    read_results_showing(path, known, ledger, None)
}

/// [`read_results`], counting the file's records into `progress` (its length grows by their
/// number, its position by each record checked, log included).
pub fn read_results_showing(
    path: &Path,
    known: &Known<'_>,
    ledger: &mut Ledger,
    progress: Option<&indicatif::ProgressBar>,
) -> Result<Vec<RecordedResult>, BadInput> {
    let file = path.display().to_string();
    let raw = if has_extension(path, "csv") {
        read_csv(path)?
    } else if has_extension(path, "jsonl") || has_extension(path, "ndjson") {
        read_json_lines(&file, &read_text(path)?)?
    } else {
        read_yaml(&file, &read_text(path)?)?
    };
    if known.registry.is_none() {
        ledger.skip_check(RecordKind::Result, Reference::Registry);
    }
    if known.images.is_none() {
        ledger.skip_check(RecordKind::Result, Reference::Images);
    }
    let base = path.parent().map(Path::to_path_buf).unwrap_or_default();
    if let Some(bar) = progress {
        // Set rather than grown: a bar without a length yet ignores growth.
        bar.set_length(bar.length().unwrap_or(0) + raw.len() as u64);
    }
    Ok(assemble(&file, &base, raw, known, ledger, progress))
}

fn read_yaml(file: &str, text: &str) -> Result<Vec<RawResult>, BadInput> {
    let doc = yaml::parse(file, text)?;
    let ctx = Ctx { file };
    let top = ctx.map(&doc, "results file", &["results"])?;
    let items = top.seq("results")?;
    // A results file is given to have results compared: one with none is a mistake (the
    // wrong file, or an export that failed), and refused as JSON lines and CSV ones are.
    if items.is_empty() {
        return Err(ctx.err(
            &doc,
            "results file: `results` is missing or empty; expected a list of recorded install \
             results",
        ));
    }
    yaml::collect_errors(items, |node| {
        let m = ctx.map(node, "result", FIELDS)?;
        let owned = |text: At<&str>| At::new(text.value.to_owned(), text.line);
        Ok(RawResult {
            line: m.line(),
            package: owned(m.required_str_at("package")?),
            image: owned(m.required_str_at("image")?),
            outcome: owned(m.required_str_at("outcome")?),
            version: m.opt_str_at("version")?.map(owned),
            log: m.opt_str("log")?.map(str::to_owned),
            log_file: m.opt_str_at("log_file")?.map(owned),
        })
    })
}

fn read_csv(path: &Path) -> Result<Vec<RawResult>, BadInput> {
    let mut table = Table::open(path, FIELDS, REQUIRED)?;
    let cols: Vec<Option<usize>> = FIELDS.iter().map(|f| table.column(f)).collect();
    let mut out = Vec::new();
    let mut errors = SchemaErrors::new();
    while let Some(row) = table.next_row_collecting(&mut errors) {
        let get = |i: usize| row.get(cols[i]).map(str::to_owned);
        let at = |i: usize| get(i).map(|text| At::new(text, row.line));
        let missing: Vec<&str> = (0..3)
            .filter(|&i| get(i).is_none())
            .map(|i| FIELDS[i])
            .collect();
        if !missing.is_empty() {
            errors.push(BadInput::at(
                &table.file,
                row.line,
                format!("result: empty required column(s) {}", missing.join(", ")),
            ));
            continue;
        }
        out.push(RawResult {
            line: row.line,
            package: at(0).unwrap_or_default(),
            image: at(1).unwrap_or_default(),
            outcome: at(2).unwrap_or_default(),
            version: at(3),
            log: get(4),
            log_file: at(5),
        });
    }
    errors.finish()?;
    if out.is_empty() {
        return Err(BadInput::at(
            &table.file,
            table.header_line,
            "no recorded install results after the header",
        ));
    }
    Ok(out)
}

fn read_json_lines(file: &str, text: &str) -> Result<Vec<RawResult>, BadInput> {
    let mut out = Vec::new();
    let mut errors = SchemaErrors::new();
    // A byte-order mark, as CSV and YAML inputs may start with, is not JSON.
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    for (index, line_text) in text.lines().enumerate() {
        let line = index + 1;
        if line_text.trim().is_empty() {
            continue;
        }
        out.extend(errors.keep(json_record(file, line, line_text)));
    }
    errors.finish()?;
    if out.is_empty() {
        return Err(BadInput::file(
            file,
            "the file is empty; expected one JSON object per line",
        ));
    }
    Ok(out)
}

/// The members of a JSON object in the order written, repeats included: `serde_json::Value`
/// keeps only the last of two equal keys, which would let a record's second `package` win
/// without a word.
struct Members(Vec<(String, serde_json::Value)>);

impl<'de> serde::Deserialize<'de> for Members {
    fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        struct Visit;
        impl<'de> serde::de::Visitor<'de> for Visit {
            type Value = Members;
            fn expecting(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
                f.write_str("a JSON object")
            }
            fn visit_map<A: serde::de::MapAccess<'de>>(
                self,
                mut map: A,
            ) -> Result<Members, A::Error> {
                let mut members = Vec::new();
                while let Some(member) = map.next_entry()? {
                    members.push(member);
                }
                Ok(Members(members))
            }
        }
        deserializer.deserialize_map(Visit)
    }
}

fn json_record(file: &str, line: usize, text: &str) -> Result<RawResult, BadInput> {
    let Members(members) = serde_json::from_str(text).map_err(|e| {
        // Members take any value, so the one type that can be wrong is the line's own.
        let message = if e.is_data() {
            "expected a JSON object".to_string()
        } else {
            format!("not valid JSON: {e}")
        };
        BadInput::at(file, line, message)
    })?;
    let mut obj = serde_json::Map::new();
    for (key, value) in members {
        if !FIELDS.contains(&key.as_str()) {
            let hint = super::diag::closest(&key, FIELDS)
                .map(|c| format!("; did you mean `{c}`?"))
                .unwrap_or_else(|| format!("; known fields: {}", FIELDS.join(", ")));
            return Err(BadInput::at(
                file,
                line,
                format!("result: unknown field `{key}`{hint}"),
            ));
        }
        if obj.contains_key(&key) {
            return Err(BadInput::at(
                file,
                line,
                format!("result: field `{key}` given twice"),
            ));
        }
        obj.insert(key, value);
    }
    let field = |key: &str| -> Result<Option<String>, BadInput> {
        match obj.get(key) {
            None | Some(serde_json::Value::Null) => Ok(None),
            Some(serde_json::Value::String(s)) => Ok(Some(s.clone())),
            Some(other) => Err(BadInput::at(
                file,
                line,
                format!("result `{key}`: expected a string, found {other}"),
            )),
        }
    };
    let required = |key: &str| -> Result<String, BadInput> {
        field(key)?.ok_or_else(|| {
            BadInput::at(
                file,
                line,
                format!("result: missing required field `{key}`"),
            )
        })
    };
    let at = |text: String| At::new(text, line);
    Ok(RawResult {
        line,
        package: at(required("package")?),
        image: at(required("image")?),
        outcome: at(required("outcome")?),
        version: field("version")?.map(at),
        log: field("log")?,
        log_file: field("log_file")?.map(at),
    })
}

fn assemble(
    file: &str,
    base: &Path,
    raw: Vec<RawResult>,
    known: &Known<'_>,
    ledger: &mut Ledger,
    progress: Option<&indicatif::ProgressBar>,
) -> Vec<RecordedResult> {
    let mut out = Vec::new();
    // Gathered once: looking each result's image up in the growing problem list would take
    // time in the square of the results on images that are not there.
    let left_out_images: HashMap<String, String> = ledger
        .left_out_images()
        .into_iter()
        .map(|(id, p)| (id.to_string(), format!("{}: {}", p.origin, p.detail)))
        .collect();
    for r in raw {
        if let Some(bar) = progress {
            bar.inc(1);
        }
        ledger.read(RecordKind::Result);
        let origin = Origin {
            file: file.to_string(),
            line: r.line,
        };
        let at = |line| Origin {
            file: file.to_string(),
            line,
        };
        let (package, image) = (r.package, r.image);
        let bad_name = [("package name", &package), ("image id", &image)]
            .into_iter()
            .find_map(|(what, name)| name_problem(&name.value).map(|why| (what, name, why)));
        if let Some((what, name, why)) = bad_name {
            ledger.leave_out(
                RecordKind::Result,
                ProblemKind::BadValue,
                at(name.line),
                format!(
                    "{} on {}",
                    shown_name(&package.value),
                    shown_name(&image.value)
                ),
                bad_name_detail(what, &name.value, why),
            );
            continue;
        }
        let subject = format!("{} on {}", package.value, image.value);
        let Some(outcome) = RecordedOutcome::parse(&r.outcome.value) else {
            ledger.leave_out(
                RecordKind::Result,
                ProblemKind::BadValue,
                at(r.outcome.line),
                subject,
                format!(
                    "outcome `{}`: expected installed or failed",
                    r.outcome.value
                ),
            );
            continue;
        };
        if known
            .images
            .is_some_and(|images| images.get(&image.value).is_none())
        {
            // A declared image that was left out is not unknown: point at why it was.
            let detail = match left_out_images.get(&image.value) {
                Some(why) => format!("image `{}` was left out ({why})", image.value),
                None => format!("image `{}` is not declared", image.value),
            };
            ledger.leave_out(
                RecordKind::Result,
                ProblemKind::UnknownImage,
                at(image.line),
                subject,
                detail,
            );
            continue;
        }
        if known.registry.is_some_and(|registry| {
            registry
                .id(&package.value)
                .is_none_or(|id| !registry.package(id).declared)
        }) {
            // Kept: its cell is predicted missing-from-registry, and a recorded install there
            // says the snapshot is older than the registry the install used.
            ledger.note(
                ProblemKind::UnknownPackage,
                at(package.line),
                subject.clone(),
                format!("package `{}` is not in the registry", package.value),
            );
        }
        let version = match &r.version {
            None => None,
            Some(written) => match read_version(&written.value) {
                VersionRead::Strict(v) => Some(v),
                VersionRead::Normalised(v, how) => {
                    // As for registry versions: the report says what the cell compares.
                    ledger.note(
                        ProblemKind::NormalisedVersion,
                        at(written.line),
                        subject.clone(),
                        format!("installed version `{}` read as {v} ({how})", written.value),
                    );
                    Some(v)
                }
                VersionRead::Refused(why) => {
                    ledger.leave_out(
                        RecordKind::Result,
                        ProblemKind::UnreadableVersion,
                        at(written.line),
                        subject,
                        format!("installed version `{}`: {why}", written.value),
                    );
                    continue;
                }
            },
        };
        let mut log = r.log;
        let mut log_unread = None;
        let mut log_skipped = 0;
        let mut log_inline_lines = 0;
        let mut log_file = None;
        if let Some(At { value: path, line }) = &r.log_file {
            let full: PathBuf = base.join(path);
            match read_log_file(base, path, &full, SCAN_TAIL_BYTES as u64) {
                // The record's own text is joined whole before the file's part, which is
                // already cut to the classifier's window: the classifier reads all it is
                // given, so neither part cuts the other.
                Ok(tail) => {
                    log_skipped = tail.skipped;
                    log_file = Some(path.clone());
                    log = Some(match log {
                        Some(inline) => {
                            log_inline_lines = inline.matches('\n').count() + 1;
                            format!("{inline}\n{}", tail.text)
                        }
                        None => tail.text,
                    });
                }
                Err(why) => {
                    // The record's own text is still read, and its lines are its own.
                    if let Some(inline) = &log {
                        log_inline_lines = inline.matches('\n').count() + 1;
                    }
                    // An empty path would name the folder itself (or nothing), and the
                    // file system's answer about that would not say what is wrong.
                    let detail = if path.trim().is_empty() {
                        why
                    } else {
                        format!("log file {}: {why}", full.display())
                    };
                    ledger.note(
                        ProblemKind::MissingLog,
                        at(*line),
                        subject.clone(),
                        detail.clone(),
                    );
                    log_unread = Some(format!("{}: {detail}", at(*line)));
                }
            }
        }
        ledger.used(RecordKind::Result);
        out.push(RecordedResult {
            package: package.value,
            image: image.value,
            outcome,
            version,
            log,
            log_unread,
            log_skipped,
            log_inline_lines,
            log_file,
            origin,
        });
    }
    out
}

/// The part of a log file that was read.
struct LogTail {
    text: String,
    /// Bytes before `text` that were not read.
    skipped: u64,
}

/// Reads the log file `written` (as the record gives it; `full` is it joined to `base`, the
/// results file's folder), or says why not. Results files may come from CI jobs that ran
/// untrusted package code, so the path must stay under that folder, symbolic links followed
/// (otherwise a record could have the review print lines of any file the reviewer can read),
/// and only regular files are opened (a FIFO would block the run, a device never end). Only the
/// last `window` bytes are read ([`SCAN_TAIL_BYTES`] outside tests), from their first whole
/// line, or when they hold no line end from their first whole segment
/// ([`first_whole_segment`]).
fn read_log_file(base: &Path, written: &str, full: &Path, window: u64) -> Result<LogTail, String> {
    const UNDER: &str = "the log must lie under the results file's folder";
    if written.trim().is_empty() {
        return Err(
            "`log_file` is empty; expected the path of a log file under the results file's \
             folder"
                .to_string(),
        );
    }
    let path = Path::new(written);
    // Checked on the text before the file system is asked anything about such a path.
    let mut depth = 0usize;
    for part in path.components() {
        match part {
            Component::Prefix(_) | Component::RootDir => {
                return Err(format!("an absolute path is not read; {UNDER}"));
            }
            Component::ParentDir if depth == 0 => {
                return Err(format!(
                    "goes up through `..` above the results file's folder; {UNDER}"
                ));
            }
            Component::ParentDir => depth -= 1,
            Component::Normal(_) => depth += 1,
            Component::CurDir => {}
        }
    }
    let folder = if base.as_os_str().is_empty() {
        Path::new(".")
    } else {
        base
    };
    let folder = std::fs::canonicalize(folder)
        .map_err(|e| format!("the results file's folder cannot be resolved: {e}"))?;
    let real = std::fs::canonicalize(full).map_err(|e| e.to_string())?;
    if !real.starts_with(&folder) {
        return Err(format!(
            "a symbolic link leads out of the results file's folder; {UNDER}"
        ));
    }
    let kind = std::fs::metadata(&real)
        .map_err(|e| e.to_string())?
        .file_type();
    if !kind.is_file() {
        return Err(format!(
            "{}, not a regular file; only regular files are read",
            file_kind(kind)
        ));
    }
    let (mut file, len) = open_regular(&real)?;
    let mut skipped = len.saturating_sub(window);
    // One byte before the window too: when it ends a line, the window starts a whole one.
    let before = skipped.min(1);
    file.seek(SeekFrom::Start(skipped - before))
        .map_err(|e| e.to_string())?;
    let mut bytes = Vec::new();
    // Bounded: a file that grows while it is read must not be read without end.
    file.take(window + before)
        .read_to_end(&mut bytes)
        .map_err(|e| e.to_string())?;
    if before == 1 {
        let line_ends_before = bytes.first() == Some(&b'\n');
        bytes.remove(0);
        if !line_ends_before {
            let start = first_whole_segment(&bytes);
            bytes.drain(..start);
            skipped += start as u64;
        }
    }
    Ok(LogTail {
        text: String::from_utf8_lossy(&bytes).into_owned(),
        skipped,
    })
}

/// Opens `path` only if what it names, once open, is a regular file; returns it and its length.
/// The check before the open gives the plain message; this one closes the gap between check
/// and open, where a file swapped for a FIFO would otherwise block the open until a writer
/// came. Opening without blocking changes nothing for a regular file's reads.
fn open_regular(path: &Path) -> Result<(std::fs::File, u64), String> {
    let mut options = std::fs::OpenOptions::new();
    options.read(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        options.custom_flags(libc::O_NONBLOCK);
    }
    let file = options.open(path).map_err(|e| e.to_string())?;
    let meta = file.metadata().map_err(|e| e.to_string())?;
    if !meta.file_type().is_file() {
        return Err(format!(
            "{}, not a regular file; only regular files are read",
            file_kind(meta.file_type())
        ));
    }
    Ok((file, meta.len()))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The open itself must refuse a FIFO without waiting for a writer, since the path may
    /// have been swapped for one after the type check in `read_log_file`.
    #[cfg(unix)]
    #[test]
    fn opening_a_fifo_neither_blocks_nor_reads_it() {
        let dir = tempfile::tempdir().unwrap();
        let fifo = dir.path().join("swapped.log");
        let made = std::process::Command::new("mkfifo").arg(&fifo).status();
        if !made.is_ok_and(|s| s.success()) {
            eprintln!("skipped: mkfifo failed");
            return;
        }
        let (tx, rx) = std::sync::mpsc::channel();
        std::thread::spawn(move || {
            let _ = tx.send(open_regular(&fifo).map(|(_, len)| len));
        });
        // A blocked open never answers; the thread is left behind when the test ends.
        let answer = rx
            .recv_timeout(std::time::Duration::from_secs(10))
            .expect("opening the FIFO blocked");
        let why = answer.expect_err("a FIFO was opened as a log");
        assert!(why.starts_with("a FIFO, not a regular file"), "{why}");
    }

    /// A recorded version that is not strict semver is compared as its normalised form, and
    /// the report says so, as it does for registry versions.
    #[test]
    fn a_normalised_installed_version_is_noted() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("results.yaml");
        std::fs::write(
            &path,
            "results:\n  - {package: a, image: i, outcome: installed, version: \"1.2\"}\n",
        )
        .unwrap();
        let mut ledger = Ledger::default();
        let known = Known {
            registry: None,
            images: None,
        };
        let results = read_results(&path, &known, &mut ledger).unwrap();
        assert_eq!(results[0].version, Some(semver::Version::new(1, 2, 0)));
        let notes: Vec<_> = ledger
            .problems
            .iter()
            .filter(|p| p.kind == ProblemKind::NormalisedVersion)
            .collect();
        assert_eq!(notes.len(), 1, "{:?}", ledger.problems);
        assert_eq!(notes[0].origin.line, 2);
        assert!(
            notes[0].detail.contains("read as 1.2.0"),
            "{}",
            notes[0].detail
        );
    }

    /// The part of a log file holding `text` that [`read_log_file`] reads with `window`, and
    /// the bytes it skips.
    fn tail_of(text: &[u8], window: u64) -> (String, u64) {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join("x.log"), text).unwrap();
        let tail = read_log_file(dir.path(), "x.log", &dir.path().join("x.log"), window).unwrap();
        (tail.text, tail.skipped)
    }

    #[test]
    fn the_window_starts_at_a_whole_line_or_segment() {
        let log = b"Killed\nfiller line\nmore filler\nConnection refused\n";
        // A window that starts mid-line skips to the next line start.
        assert_eq!(tail_of(log, 25), ("Connection refused\n".into(), 31));
        // A window that starts exactly at a line start keeps that line.
        let at = "Connection refused\n".len() as u64;
        assert_eq!(tail_of(log, at), ("Connection refused\n".into(), 31));
        assert_eq!(tail_of(log, 1000), (String::from_utf8_lossy(log).into(), 0));
        // A window inside the last, unterminated line still reads it: from its first whole
        // `\r` segment, else from where the cut fell.
        let log = b"Killed\nDownloading 10%\rDownloading 20%\rConnection timed out";
        let window = "0%\rDownloading 20%\rConnection timed out".len() as u64;
        let (text, skipped) = tail_of(log, window);
        assert_eq!(text, "Downloading 20%\rConnection timed out");
        assert_eq!(skipped as usize, log.len() - text.len());
        assert_eq!(
            tail_of(b"Killed\nConnection timed out", 9),
            ("timed out".into(), 18)
        );
        // A cut inside a character skips the rest of it.
        assert_eq!(
            tail_of("Killed\né timed out".as_bytes(), 11),
            (" timed out".into(), 9)
        );
    }

    /// A record's own `log` text is classified whole beside a log file whose part read fills
    /// the window: it once went through the window again with that part and was cut off.
    #[test]
    fn a_record_s_own_log_text_is_read_beside_a_full_window() {
        let dir = tempfile::tempdir().unwrap();
        let filler = "compiling module 12345 of 99999: ok\n";
        let mut log = String::with_capacity(SCAN_TAIL_BYTES + 200);
        while log.len() < SCAN_TAIL_BYTES {
            log.push_str(filler);
        }
        // source: GNU gcc wording, as in tests/log_classification.rs
        let failure = "x.c:1:10: fatal error: zlib.h: No such file or directory\n";
        log.push_str(failure);
        std::fs::write(dir.path().join("huge.log"), &log).unwrap();
        let path = dir.path().join("results.yaml");
        // source: the runtime-refused form of the classifier's module docs
        std::fs::write(
            &path,
            "results:\n  - package: a\n    image: i\n    outcome: failed\n    log: \"error: runtime refused: requires >=3.3, found 3.2.0\\nsecond line\"\n    log_file: huge.log\n",
        )
        .unwrap();
        let known = Known {
            registry: None,
            images: None,
        };
        let results = read_results(&path, &known, &mut Ledger::default()).unwrap();
        let r = &results[0];
        assert_eq!(r.log_inline_lines, 2);
        assert!(r.log_skipped > 0);
        let findings = crate::verify::logs::classify(r.log.as_deref().unwrap());
        let lines: Vec<(&str, usize)> =
            findings.iter().map(|f| (f.cause.label(), f.line)).collect();
        // Filler lines in the part read, before the failure's.
        let read_lines = (log.len() - r.log_skipped as usize - failure.len()) / filler.len();
        assert_eq!(
            lines,
            [
                ("runtime-refused", 1),
                ("missing-header", 2 + read_lines + 1)
            ]
        );
        assert_eq!(
            crate::verify::compare::log_line_place(
                r.log_inline_lines,
                r.log_skipped,
                r.log_file.as_deref(),
                1
            ),
            "line 1 of the record's `log` text"
        );
        assert_eq!(
            crate::verify::compare::log_line_place(
                r.log_inline_lines,
                r.log_skipped,
                r.log_file.as_deref(),
                findings[1].line
            ),
            format!(
                "line {} of the part of huge.log read, which skips its first {} bytes",
                read_lines + 1,
                r.log_skipped
            )
        );
    }

    #[test]
    fn opening_a_regular_file_gives_its_length() {
        let dir = tempfile::tempdir().unwrap();
        let log = dir.path().join("install.log");
        std::fs::write(&log, "line one\nline two\n").unwrap();
        let (_, len) = open_regular(&log).unwrap();
        assert_eq!(len, 18);
    }
}
