//! The support matrix as CSV: one record per (package, image) cell, for spreadsheets and
//! scripts.
//!
//! Values are written as they are in the matrix (the `csv` crate quotes what needs quoting),
//! so the file reads back to the same strings, with one exception: a text field that a
//! spreadsheet would run as a formula (it starts with `=`, `+`, `-`, `@`, a tab or a carriage
//! return) gets a leading `'`, which spreadsheets show as plain text; so does one that already
//! starts with `'`, so that removing one leading `'` from a field that has one gives the value back. Every record carries the notice in
//! its last column: a header comment would break strict CSV readers, and a filtered or
//! pasted selection of rows keeps the warning with it. For the same reason every record says
//! whether native needs were checked (`native_checked`), and a matrix planned with
//! `--no-native` adds that warning to the notice.

use super::layout::grid;
use crate::plan::matrix::Matrix;
use std::borrow::Cow;

/// The header record, in column order.
pub const COLUMNS: [&str; 19] = [
    "package",
    "rank",
    "weight",
    "image",
    "runtime",
    "family",
    "outcome",
    "cause",
    "root_version",
    "closure_size",
    "missing_system_packages",
    "recorded",
    "verdict",
    "mark",
    "recorded_version",
    "recorded_detail",
    "explanation",
    "native_checked",
    "notice",
];

/// Renders one record per cell, rows in priority order and images in declared order.
/// Pairs the matrix holds no cell for are left out rather than invented.
pub fn csv(m: &Matrix) -> String {
    let mut w = ::csv::WriterBuilder::new()
        .terminator(::csv::Terminator::Any(b'\n'))
        .from_writer(Vec::new());
    // Writing into a Vec cannot fail on I/O, and every record has the header's length, so an
    // error here would be a bug; it still must not abort the caller, hence the fallbacks.
    let _ = w.write_record(COLUMNS);
    let native_checked = if m.native_skipped { "false" } else { "true" };
    let notice = crate::plan::matrix::notice(m.native_skipped);
    for (row, slots) in m.packages.iter().zip(grid(m)) {
        for (img, slot) in m.images.iter().zip(slots) {
            let Some((_, cell)) = slot else { continue };
            let (recorded, verdict, version, detail) =
                cell.recorded.as_ref().map_or(("", "", "", ""), |r| {
                    (
                        r.recorded.as_str(),
                        r.verdict.as_str(),
                        r.version.as_deref().unwrap_or(""),
                        r.detail.as_str(),
                    )
                });
            let record: [Cow<'_, str>; COLUMNS.len()] = [
                defuse(&row.name),
                Cow::Owned(row.rank.to_string()),
                Cow::Owned(row.weight.to_string()),
                defuse(&img.id),
                defuse(&img.runtime),
                defuse(&img.family),
                Cow::Borrowed(cell.outcome.as_str()),
                Cow::Borrowed(cell.cause.map_or("", |c| c.as_str())),
                defuse(cell.root_version.as_deref().unwrap_or("")),
                Cow::Owned(cell.closure_size.to_string()),
                owned(defuse(&cell.missing_system_packages.join(" "))),
                defuse(recorded),
                defuse(verdict),
                Cow::Borrowed(super::layout::mark_of(cell).map_or("", |m| m.as_str())),
                // What a drift installed, and why: without them a drifted row says nothing
                // of which version went in.
                defuse(version),
                defuse(detail),
                owned(defuse(&cell.explanation.join(" / "))),
                Cow::Borrowed(native_checked),
                Cow::Borrowed(notice.as_ref()),
            ];
            let _ = w.write_record(record.iter().map(|f| f.as_bytes()));
        }
    }
    let bytes = w.into_inner().unwrap_or_default();
    // Every field came from a `&str`, so the bytes are UTF-8; the lossy path is never taken.
    String::from_utf8(bytes).unwrap_or_else(|e| String::from_utf8_lossy(e.as_bytes()).into_owned())
}

/// Makes a text field from the input inert in spreadsheets, which run a cell starting with
/// one of these characters as a formula (CSV injection). A field that already starts with
/// `'` gets one too, so the prefix can always be undone: `-x` and `'-x` stay apart as `'-x`
/// and `''-x`.
///
/// ```
/// use basefit::report::csv::defuse;
/// assert_eq!(defuse("=SUM(A1)"), "'=SUM(A1)");
/// assert_eq!(defuse("'-x"), "''-x");
/// assert_eq!(defuse("plain"), "plain");
/// // A leading tab or carriage return: spreadsheets skip it and read the formula after it.
/// assert_eq!(defuse("\t=1+1"), "'\t=1+1");
/// assert_eq!(defuse("\r=1+1"), "'\r=1+1");
/// ```
pub fn defuse(field: &str) -> Cow<'_, str> {
    if field.starts_with(['=', '+', '-', '@', '\t', '\r', '\'']) {
        Cow::Owned(format!("'{field}"))
    } else {
        Cow::Borrowed(field)
    }
}

fn owned(c: Cow<'_, str>) -> Cow<'static, str> {
    Cow::Owned(c.into_owned())
}
