//! Diagnostics shared by every reader: unusable input ([`BadInput`]) and the ledger of
//! records read, used and reported ([`Ledger`]).

use super::bulk::DeferredRows;
use crate::model::{is_bidi_control, is_invisible_format};
use serde::Serialize;
use std::collections::{BTreeMap, BTreeSet};
use std::fmt;
use std::path::{Path, PathBuf};

/// An input that cannot be used at all. The command exits with code 2.
///
/// ```
/// use basefit::BadInput;
/// let err = BadInput::at("registry.yaml", 12, "expected a mapping for a version record");
/// assert_eq!(err.to_string(), "registry.yaml:12: expected a mapping for a version record");
/// ```
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct BadInput {
    pub file: String,
    pub line: Option<usize>,
    pub message: String,
    /// Further errors of the same file, so one run shows all of them (capped by the reader).
    pub more: Vec<BadInput>,
}

impl BadInput {
    pub fn at(file: impl Into<String>, line: usize, message: impl Into<String>) -> Self {
        BadInput {
            file: file.into(),
            line: Some(line),
            message: message.into(),
            more: Vec::new(),
        }
    }

    pub fn file(file: impl Into<String>, message: impl Into<String>) -> Self {
        BadInput {
            file: file.into(),
            line: None,
            message: message.into(),
            more: Vec::new(),
        }
    }

    /// A parser's error at `line` and `column` (1-based; a line of 0 means none). Parsers
    /// end their messages with "at line L column C", which the `file:line:` prefix already
    /// says: that part goes, and a context position elsewhere in the message stays.
    ///
    /// ```
    /// use basefit::load::diag::BadInput;
    /// let e = BadInput::parsed("m.json", 6, 9, "not a matrix: expected `,` at line 6 column 9");
    /// assert_eq!(e.to_string(), "m.json:6: not a matrix: expected `,`");
    /// // What the file says is kept, even where it reads like a position.
    /// let e = BadInput::parsed("m.json", 1, 9, r#"bad "a at line 1 column 9" at line 1 column 9"#);
    /// assert_eq!(e.to_string(), r#"m.json:1: bad "a at line 1 column 9""#);
    /// ```
    pub fn parsed(file: impl Into<String>, line: usize, column: usize, message: &str) -> Self {
        if line == 0 {
            return BadInput::file(file, message);
        }
        // The last match: quoted input earlier in the message may hold the same words.
        let position = format!(" at line {line} column {column}");
        let mut message = message.to_string();
        if let Some(at) = message.rfind(&position) {
            message.replace_range(at..at + position.len(), "");
        }
        BadInput::at(file, line, message)
    }

    /// Combines several errors into one value; `None` when there are none.
    pub fn combine(mut errors: Vec<BadInput>) -> Option<BadInput> {
        if errors.is_empty() {
            return None;
        }
        let mut first = errors.remove(0);
        // Flat: an error that is itself a combination brings each of its own along.
        for mut e in errors {
            let more = std::mem::take(&mut e.more);
            first.more.push(e);
            first.more.extend(more);
        }
        Some(first)
    }

    fn fmt_one(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let file = on_one_line(&self.file);
        match self.line {
            Some(line) => write!(f, "{file}:{line}: {}", self.message),
            None => write!(f, "{file}: {}", self.message),
        }
    }
}

impl fmt::Display for BadInput {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        self.fmt_one(f)?;
        for other in &self.more {
            writeln!(f)?;
            other.fmt_one(f)?;
        }
        Ok(())
    }
}

impl std::error::Error for BadInput {}

/// Refuses a file given more than once to a repeatable flag: read twice, its records would
/// count twice (for results, every one a retry of itself) with nothing to show for it.
/// Files are compared as the file system knows them, so `./r.yaml`, `r.yaml`, a symbolic link
/// to it and (on Unix) a hard link are one file; a path that does not open is left to its
/// reader to report.
///
/// ```
/// use basefit::load::diag::refuse_repeated;
/// use std::path::PathBuf;
/// let dir = std::env::temp_dir();
/// let a = dir.join("basefit-doc-repeated.csv");
/// std::fs::write(&a, "x").unwrap();
/// let same = dir.join(".").join("basefit-doc-repeated.csv");
/// let e = refuse_repeated(&[a.clone(), same.clone()], "--source", "read twice").unwrap_err();
/// assert_eq!(e.file, same.display().to_string());
/// assert!(refuse_repeated(&[a], "--source", "read twice").is_ok());
/// ```
pub fn refuse_repeated(paths: &[PathBuf], flag: &str, why: &str) -> Result<(), BadInput> {
    let mut seen: Vec<(FileIdentity, &PathBuf)> = Vec::new();
    for path in paths {
        let Some(resolved) = FileIdentity::of(path) else {
            continue;
        };
        if let Some((_, first)) = seen.iter().find(|(r, _)| *r == resolved) {
            let also = if *first == path {
                String::new()
            } else {
                format!(" (first as {})", first.display())
            };
            return Err(BadInput::file(
                path.display().to_string(),
                format!("given twice as {flag}{also}: {why}; give each file once"),
            ));
        }
        seen.push((resolved, path));
    }
    Ok(())
}

/// Whether two paths name one file as the file system knows them (see [`refuse_repeated`]);
/// a path that does not exist yet names the entry its folder would hold, so an output file
/// about to be written can be told apart from an input before anything is written.
///
/// ```
/// use basefit::load::diag::same_file;
/// let dir = std::env::temp_dir();
/// let a = dir.join("basefit-doc-not-written-yet.json");
/// assert!(same_file(&a, &dir.join(".").join("basefit-doc-not-written-yet.json")));
/// assert!(!same_file(&a, &dir.join("basefit-doc-other.json")));
/// // A folder not made yet, spelled from here two ways.
/// use std::path::Path;
/// let later = Path::new("basefit-doc-no-such-folder/m.json");
/// assert!(same_file(later, Path::new("./basefit-doc-no-such-folder/m.json")));
/// assert!(!same_file(later, Path::new("basefit-doc-no-such-folder/n.json")));
/// ```
pub fn same_file(a: &Path, b: &Path) -> bool {
    if let (Some(x), Some(y)) = (FileIdentity::of(a), FileIdentity::of(b)) {
        return x == y;
    }
    let place = |p: &Path| {
        let folder = match p.parent() {
            Some(d) if !d.as_os_str().is_empty() => d,
            _ => Path::new("."),
        };
        Some((FileIdentity::of(folder)?, p.file_name()?.to_owned()))
    };
    match (place(a), place(b)) {
        (Some(x), Some(y)) => x == y,
        // A folder not made yet: the spellings, made absolute (`./out` is `out`).
        _ => match (std::path::absolute(a), std::path::absolute(b)) {
            (Ok(x), Ok(y)) => x == y,
            _ => a == b,
        },
    }
}

/// What makes two paths one file: a device and inode where the platform has them (hard
/// links share them and have no path in common), else the resolved path.
#[derive(PartialEq, Eq)]
enum FileIdentity {
    #[cfg(unix)]
    Inode(u64, u64),
    #[cfg(not(unix))]
    Path(PathBuf),
}

impl FileIdentity {
    fn of(path: &Path) -> Option<FileIdentity> {
        #[cfg(unix)]
        {
            use std::os::unix::fs::MetadataExt;
            let meta = std::fs::metadata(path).ok()?;
            Some(FileIdentity::Inode(meta.dev(), meta.ino()))
        }
        #[cfg(not(unix))]
        {
            std::fs::canonicalize(path).ok().map(FileIdentity::Path)
        }
    }
}

/// What a file that is not a regular file is, for the message refusing it.
pub fn file_kind(kind: std::fs::FileType) -> &'static str {
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if kind.is_fifo() {
            return "a FIFO";
        }
        if kind.is_char_device() || kind.is_block_device() {
            return "a device";
        }
        if kind.is_socket() {
            return "a socket";
        }
    }
    if kind.is_dir() {
        "a directory"
    } else {
        "a special file"
    }
}

/// Whether an input of this kind can be read to an end. A device such as `/dev/zero` never
/// ends (the run would read until memory runs out) and a socket is no file; a FIFO is read,
/// since `--priorities <(query)` hands the command a pipe.
fn readable_kind(kind: std::fs::FileType) -> bool {
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if kind.is_fifo() {
            return true;
        }
    }
    kind.is_file()
}

fn refuse_kind(path: &Path, kind: std::fs::FileType) -> Result<(), BadInput> {
    if readable_kind(kind) {
        return Ok(());
    }
    Err(BadInput::file(
        path.display().to_string(),
        format!(
            "{}, not a regular file; expected a file (or a pipe)",
            file_kind(kind)
        ),
    ))
}

/// Opens an input file, refusing up front what cannot be read to an end (see
/// [`readable_kind`]). The kind is checked before the open, since opening some devices acts
/// on them, and again on the open file, which may not be the one checked.
///
/// ```
/// # #[cfg(unix)] {
/// let e = basefit::load::diag::open_input(std::path::Path::new("/dev/zero")).unwrap_err();
/// assert_eq!(e.to_string(), "/dev/zero: a device, not a regular file; expected a file (or a pipe)");
/// # }
/// ```
pub fn open_input(path: &Path) -> Result<std::fs::File, BadInput> {
    let cannot =
        |e: std::io::Error| BadInput::file(path.display().to_string(), format!("cannot read: {e}"));
    refuse_kind(path, std::fs::metadata(path).map_err(cannot)?.file_type())?;
    let file = std::fs::File::open(path).map_err(cannot)?;
    refuse_kind(path, file.metadata().map_err(cannot)?.file_type())?;
    Ok(file)
}

/// Reads a whole input file as UTF-8 text, naming the file in the error.
pub fn read_text(path: &Path) -> Result<String, BadInput> {
    use std::io::Read;
    let mut bytes = Vec::new();
    open_input(path)?
        .read_to_end(&mut bytes)
        .map_err(|e| BadInput::file(path.display().to_string(), format!("cannot read: {e}")))?;
    String::from_utf8(bytes).map_err(|e| {
        let upto = &e.as_bytes()[..e.utf8_error().valid_up_to()];
        let line = upto.iter().filter(|&&b| b == b'\n').count() + 1;
        BadInput::at(
            path.display().to_string(),
            line,
            "not UTF-8 text (binary data?)",
        )
    })
}

/// Why `name` cannot name a package or an image, or `None` when it can.
///
/// Names are matched as written, and every report prints them: a name with white space at
/// either end never matches the trimmed name a priority list gives, and a tab, a line break,
/// another control character (ESC starts terminal escape sequences) or an invisible
/// formatting character ([`is_invisible_format`]: bidirectional controls, which reorder the
/// text shown around them, zero-width spaces, the soft hyphen) would let a name pass for
/// another one in a report, or rewrite the terminal it is printed on. No package index
/// allows any of these in a name. Every reader of package names and image ids asks here, so
/// all formats accept the same names; the record holding such a name is left out and
/// reported at its line (show the name with [`shown_name`]).
///
/// ```
/// use basefit::load::diag::name_problem;
/// assert_eq!(name_problem("quill-xml"), None);
/// assert_eq!(name_problem("b "), Some("begins or ends with white space"));
/// assert_eq!(name_problem("good\tpkg"), Some("holds white space other than at its ends"));
/// assert_eq!(name_problem("red\u{1b}[31m"), Some("holds a control character"));
/// assert_eq!(name_problem("abc\u{202e}fed"), Some("holds a bidirectional text control"));
/// assert_eq!(name_problem("zw\u{200b}sp"), Some("holds an invisible formatting character"));
/// assert_eq!(name_problem(""), Some("is empty"));
/// ```
pub fn name_problem(name: &str) -> Option<&'static str> {
    if name.is_empty() {
        return Some("is empty");
    }
    // Most names are plain ASCII: one pass over the bytes settles them.
    if name.bytes().all(|b| b.is_ascii_graphic()) {
        return None;
    }
    if name.starts_with(char::is_whitespace) || name.ends_with(char::is_whitespace) {
        return Some("begins or ends with white space");
    }
    for c in name.chars() {
        if is_bidi_control(c) {
            return Some("holds a bidirectional text control");
        }
        if is_invisible_format(c) {
            return Some("holds an invisible formatting character");
        }
        if c.is_whitespace() {
            return Some("holds white space other than at its ends");
        }
        if c.is_control() {
            return Some("holds a control character");
        }
    }
    None
}

/// `name` as a report may print it whatever it holds: quoted, with every character
/// [`name_problem`] objects to written as an escape (`\t`, `\u{1b}`), so the problem that
/// reports a bad name neither hides nor performs what is wrong with it.
///
/// ```
/// use basefit::load::diag::shown_name;
/// assert_eq!(shown_name("good\tpkg"), r#""good\tpkg""#);
/// assert_eq!(shown_name("x\u{1b}[2J"), r#""x\u{1b}[2J""#);
/// assert_eq!(shown_name("b "), r#""b ""#);
/// ```
pub fn shown_name(name: &str) -> String {
    let mut out = String::with_capacity(name.len() + 2);
    out.push('"');
    for c in name.chars() {
        match c {
            '\t' => out.push_str("\\t"),
            '\n' => out.push_str("\\n"),
            '\r' => out.push_str("\\r"),
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            ' ' => out.push(' '),
            c if c.is_control() || c.is_whitespace() || is_invisible_format(c) => {
                out.push_str(&format!("\\u{{{:x}}}", c as u32));
            }
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

/// The problem's detail for a name [`name_problem`] refuses: `what` says whose name it is
/// ("package name", "dependency name", "image id").
pub fn bad_name_detail(what: &str, name: &str, why: &str) -> String {
    format!(
        "{what} {} {why}; expected a name without white space or control characters",
        shown_name(name)
    )
}

/// Where a record came from: file and 1-based line.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
pub struct Origin {
    pub file: String,
    pub line: usize,
}

impl fmt::Display for Origin {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}:{}", on_one_line(&self.file), self.line)
    }
}

/// `s` on one line of a message: a line break in a value quoted from the inputs (a file's
/// name, a `log_file` path) would start a line that reads as one of the report's own, so it
/// prints as `\n`. Other control characters are escaped where messages are printed
/// ([`crate::report::visible`]); JSON keeps the value as is.
pub(crate) fn on_one_line(s: &str) -> std::borrow::Cow<'_, str> {
    if s.contains('\n') {
        std::borrow::Cow::Owned(s.replace('\n', "\\n"))
    } else {
        std::borrow::Cow::Borrowed(s)
    }
}

/// A field's value with the line it is written on. Values are checked after parsing, away
/// from the YAML node they came from; a problem with one must still name its own line, which
/// in a record of many lines is not the record's first.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct At<T> {
    pub value: T,
    pub line: usize,
}

impl<T> At<T> {
    pub fn new(value: T, line: usize) -> Self {
        At { value, line }
    }
}

/// What kind of input a record belongs to; the ledger counts each separately.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum RecordKind {
    Package,
    Version,
    Dependency,
    Image,
    Priority,
    Result,
    SourceEntry,
    /// A library entry of a catalog file given with `--catalog`.
    CatalogLibrary,
}

impl RecordKind {
    pub fn label(self) -> &'static str {
        match self {
            RecordKind::Package => "package records",
            RecordKind::Version => "version records",
            RecordKind::Dependency => "dependency records",
            RecordKind::Image => "image records",
            RecordKind::Priority => "priority entries",
            RecordKind::Result => "recorded results",
            RecordKind::SourceEntry => "source-list entries",
            RecordKind::CatalogLibrary => "catalog-file libraries",
        }
    }
}

/// An input other records are checked against: the registry for the packages that priority
/// entries and recorded results name, the images for the images results name.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Reference {
    Registry,
    Images,
}

impl Reference {
    /// The flags that give it, spelled as in every other message.
    pub fn flags(self) -> &'static str {
        match self {
            Reference::Registry => super::REGISTRY_FLAGS,
            Reference::Images => "--images FILE",
        }
    }

    /// What a record is checked for against it.
    pub fn names(self) -> &'static str {
        match self {
            Reference::Registry => "the packages named by",
            Reference::Images => "the images named by",
        }
    }
}

/// A category of data-quality problem. Each has a fixed severity: whether the record it is
/// attached to is left out of solving.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum ProblemKind {
    /// A version string that is not strict semver but whose intent is clear; used as normalised.
    NormalisedVersion,
    /// A version string that cannot be read; the version is left out.
    UnreadableVersion,
    /// A requirement string that cannot be read; the version or priority entry carrying it is
    /// left out.
    UnreadableRequirement,
    /// A requirement given explicitly as empty text (`runtime: ""`, `req: ""`): read as any
    /// version, as an absent one is, but noted, since an export that lost the value reads the
    /// same and would let the release onto every image.
    EmptyRequirement,
    /// A release date that cannot be read; the version is used without a date.
    UnreadableDate,
    /// A dependency on a name the registry does not have; used (it cannot be satisfied).
    UnknownDependency,
    /// A declared native library that the catalog does not know by id, alias, pkg-config
    /// module or link name; used, but no system package can be named for it.
    UnknownLibrary,
    /// A second record for the same package and version; the later one is left out.
    DuplicateVersion,
    /// A second record for the same package name; its versions are merged into the first.
    DuplicatePackage,
    /// A version that differs from another of its package only in build metadata: Semantic
    /// Versioning 2.0.0 gives the two the same precedence, so which is newer is basefit's
    /// choice (the `semver` crate's order), not the registry's; both are used.
    SamePrecedence,
    /// A dependency requirement that no published version of the target satisfies.
    UnsatisfiableRequirement,
    /// A release whose runtime requirement no runtime version meets (`<0.0.0`, `>=5, <4`); kept,
    /// as the registry publishes it, though no image can install it.
    UnsatisfiableRuntime,
    /// A release with neither a source build nor a prebuilt build for any platform; kept, as
    /// the registry publishes it, though no image can install it.
    NoBuildAnywhere,
    /// A package all of whose versions are yanked.
    NoInstallableVersion,
    /// A package with no version records at all.
    NoVersions,
    /// An image that cannot be built (an unknown base, a cycle of bases, a field missing after
    /// inheritance, an unreadable runtime or platform, an unknown family, a removal of a
    /// package it lacks); left out, with the images built on it.
    BadImage,
    /// An image that says `toolchain: false` yet carries its family's toolchain packages; used
    /// as having a toolchain.
    ToolchainContradiction,
    /// A second record with the same id or name (image, priority entry); the later one is left out.
    DuplicateEntry,
    /// A priority entry or recorded result naming a package the registry does not have
    /// (checked only when a registry is given: see [`Ledger::skipped`]).
    UnknownPackage,
    /// A recorded result naming an image that is not declared (checked only when images are
    /// given).
    UnknownImage,
    /// A recorded result whose log file cannot be read; used without its log.
    MissingLog,
    /// A record with a value out of range or of the wrong form; left out.
    BadValue,
    /// A dated source-list row outside the requested time window; left out, so a 30-day
    /// download count is not inflated by older rows in the same file.
    OutsideWindow,
    /// A dependency record (bulk format) naming a package version that has no version
    /// record; left out.
    OrphanDependency,
    /// A priority list whose every weight is zero: shares of weight are undefined; used.
    AllWeightsZero,
    /// A priority CSV row with an empty rank among ranked rows: its place is unknown; used,
    /// after every ranked row.
    UnrankedEntry,
}

impl ProblemKind {
    pub fn label(self) -> &'static str {
        match self {
            ProblemKind::NormalisedVersion => "versions normalised to semver",
            ProblemKind::UnreadableVersion => "unreadable versions (left out)",
            ProblemKind::UnreadableRequirement => {
                "unreadable requirements (the version or priority entry carrying one left out)"
            }
            ProblemKind::UnreadableDate => "unreadable release dates (date ignored)",
            ProblemKind::EmptyRequirement => {
                "requirements given as empty text (read as any version)"
            }
            ProblemKind::UnknownDependency => "dependencies on names not in the registry",
            ProblemKind::UnknownLibrary => {
                "declared native libraries the catalog does not know (no system package can be named)"
            }
            ProblemKind::DuplicateVersion => "duplicate versions (later record left out)",
            ProblemKind::DuplicatePackage => "duplicate package records (versions merged)",
            ProblemKind::SamePrecedence => {
                "versions differing only in build metadata (both used; newer by build text)"
            }
            ProblemKind::UnsatisfiableRequirement => {
                "dependency requirements no published version satisfies"
            }
            ProblemKind::UnsatisfiableRuntime => {
                "runtime requirements no runtime version meets (release kept; no image can install it)"
            }
            ProblemKind::NoBuildAnywhere => {
                "releases with no build for any platform (release kept; no image can install it)"
            }
            ProblemKind::NoInstallableVersion => {
                "packages with no installable version (all yanked)"
            }
            ProblemKind::NoVersions => "packages without any usable version record",
            ProblemKind::BadImage => "images that cannot be built (left out)",
            ProblemKind::ToolchainContradiction => {
                "images whose toolchain flag, written or inherited, their packages contradict (the packages win)"
            }
            ProblemKind::DuplicateEntry => "duplicate ids or names (later record left out)",
            ProblemKind::UnknownPackage => "entries naming packages not in the registry",
            ProblemKind::UnknownImage => "results naming images not declared or left out",
            ProblemKind::MissingLog => "log files that cannot be read (result kept without log)",
            ProblemKind::BadValue => "records with an unusable value (left out)",
            ProblemKind::OutsideWindow => "source-list rows outside the time window (left out)",
            ProblemKind::OrphanDependency => {
                "dependency records naming a version without a version record (left out)"
            }
            ProblemKind::AllWeightsZero => {
                "priority lists whose weights are all zero (shares of weight not computed)"
            }
            ProblemKind::UnrankedEntry => {
                "priority rows with no rank among ranked rows (placed after every ranked row)"
            }
        }
    }
}

/// One reported problem.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
pub struct Problem {
    pub kind: ProblemKind,
    pub origin: Origin,
    /// What the problem is about: a package name, `name@version`, an image id.
    pub subject: String,
    pub detail: String,
    /// Whether the record was left out of solving.
    pub left_out: bool,
}

/// A problem's text with its line breaks written as `\n`: a problem is one line of a report,
/// and a value quoted from the input (an unreadable requirement) could otherwise add lines
/// that read as other problems. Other control characters are escaped where reports are
/// printed ([`crate::report::visible`]).
fn one_line(text: String) -> String {
    if text.contains('\n') {
        text.replace('\n', "\\n")
    } else {
        text
    }
}

/// Counts per record kind.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize)]
pub struct Tally {
    pub read: u64,
    pub used: u64,
    pub left_out: u64,
    /// Of `left_out`, those left out with the record they belong to: no problem names them.
    #[serde(skip_serializing_if = "is_zero")]
    pub left_out_with_owner: u64,
}

fn is_zero(n: &u64) -> bool {
    *n == 0
}

/// Every record read is counted here as used or left out, and every problem is listed.
///
/// The invariant `read == used + left_out` holds per record kind once loading ends; readers
/// call [`Ledger::read`] for each record and exactly one of [`Ledger::used`] or a problem with
/// `left_out` set.
///
/// A few problems may be reported at a stand-in place until [`Ledger::place_deferred`] finds
/// their own (see there); counts, kinds and wording never change.
#[derive(Debug, Clone, Default, Serialize)]
pub struct Ledger {
    pub tallies: BTreeMap<RecordKind, Tally>,
    pub problems: Vec<Problem>,
    /// Problems whose own place takes another read of an input, with what that read needs.
    #[serde(skip)]
    deferred: Vec<DeferredRows>,
    /// Cross-checks not made because the input they check against was not given: the kinds
    /// of record each absent input would have checked. Without it a report with no
    /// unknown-package problem would pass for one whose names were verified.
    pub skipped: BTreeMap<Reference, BTreeSet<RecordKind>>,
    /// Problems [`Ledger::place_deferred`] had to leave at their stand-in place. Without it a
    /// report would pass them off as being at their own place.
    pub unplaced: Vec<Unplaced>,
}

/// Problems left at a stand-in place (a bulk dependency problem at its version's row) because
/// the file that holds their own place could not be read again.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Unplaced {
    /// The file that could not be read again.
    pub file: String,
    pub problems: usize,
    /// Why: it cannot be reopened, or it changed since it was read.
    pub reason: String,
    /// The problems themselves, as they stand in the ledger, so that a report naming one
    /// problem adds the sentence only when that problem is one of them.
    #[serde(skip)]
    pub left: Vec<Problem>,
}

impl Unplaced {
    /// The sentence reports show, once per file.
    pub fn sentence(&self) -> String {
        format!(
            "{} problems are shown at their version's row, not their dependency's, because {} could not be read again: {}",
            self.problems, self.file, self.reason
        )
    }

    /// Whether `problem` is one of those left at its stand-in place.
    pub fn holds(&self, problem: &Problem) -> bool {
        self.left.contains(problem)
    }
}

impl Ledger {
    /// The counts for one kind of record; all zero when none was read.
    pub fn tally(&self, kind: RecordKind) -> Tally {
        self.tallies.get(&kind).cloned().unwrap_or_default()
    }

    pub fn read(&mut self, kind: RecordKind) {
        self.tallies.entry(kind).or_default().read += 1;
    }

    pub fn used(&mut self, kind: RecordKind) {
        self.tallies.entry(kind).or_default().used += 1;
    }

    /// Takes back one record counted as used, for a reader that learns later that a record it
    /// kept is superseded (and then leaves it out with its problem).
    pub fn unuse(&mut self, kind: RecordKind) {
        let tally = self.tallies.entry(kind).or_default();
        tally.used = tally.used.saturating_sub(1);
    }

    /// Counts `count` records read at once; bulk readers count millions of dependency rows,
    /// and one call per batch keeps the ledger off the hot path.
    pub fn read_many(&mut self, kind: RecordKind, count: u64) {
        self.tallies.entry(kind).or_default().read += count;
    }

    /// Counts `count` records used at once.
    pub fn used_many(&mut self, kind: RecordKind, count: u64) {
        self.tallies.entry(kind).or_default().used += count;
    }

    /// Counts `count` records left out together with the record they belong to (the
    /// dependencies of a version that is left out). They get no problem of their own: the
    /// owner's problem explains them, and listing each would bury it.
    ///
    /// ```
    /// use basefit::Ledger;
    /// use basefit::load::diag::RecordKind;
    /// let mut ledger = Ledger::default();
    /// ledger.read_many(RecordKind::Dependency, 3);
    /// ledger.used_many(RecordKind::Dependency, 1);
    /// ledger.left_out_with_owner(RecordKind::Dependency, 2);
    /// assert!(ledger.unbalanced().is_empty());
    /// assert!(ledger.problems.is_empty());
    /// ```
    pub fn left_out_with_owner(&mut self, kind: RecordKind, count: u64) {
        let tally = self.tallies.entry(kind).or_default();
        tally.left_out += count;
        tally.left_out_with_owner += count;
    }

    /// Records that `kind` records were not checked against `reference`, which was not given.
    pub fn skip_check(&mut self, kind: RecordKind, reference: Reference) {
        self.skipped.entry(reference).or_default().insert(kind);
    }

    /// Records a problem that does not leave the record out.
    pub fn note(
        &mut self,
        kind: ProblemKind,
        origin: Origin,
        subject: impl Into<String>,
        detail: impl Into<String>,
    ) {
        self.problems.push(Problem {
            kind,
            origin,
            subject: one_line(subject.into()),
            detail: one_line(detail.into()),
            left_out: false,
        });
    }

    /// Records a problem that leaves a record of `record` kind out.
    pub fn leave_out(
        &mut self,
        record: RecordKind,
        kind: ProblemKind,
        origin: Origin,
        subject: impl Into<String>,
        detail: impl Into<String>,
    ) {
        self.tallies.entry(record).or_default().left_out += 1;
        self.problems.push(Problem {
            kind,
            origin,
            subject: one_line(subject.into()),
            detail: one_line(detail.into()),
            left_out: true,
        });
    }

    pub fn merge(&mut self, other: Ledger) {
        // Taken apart whole, so a field added to either struct later cannot be dropped here
        // without a compile error (one once was: `left_out_with_owner`).
        let Ledger {
            tallies,
            problems,
            deferred,
            skipped,
            unplaced,
        } = other;
        for (kind, t) in tallies {
            let Tally {
                read,
                used,
                left_out,
                left_out_with_owner,
            } = t;
            let mine = self.tallies.entry(kind).or_default();
            mine.read += read;
            mine.used += used;
            mine.left_out += left_out;
            mine.left_out_with_owner += left_out_with_owner;
        }
        self.problems.extend(problems);
        self.deferred.extend(deferred);
        self.unplaced.extend(unplaced);
        for (reference, kinds) in skipped {
            self.skipped.entry(reference).or_default().extend(kinds);
        }
    }

    /// Keeps `rows` for [`Ledger::place_deferred`].
    pub(crate) fn defer(&mut self, rows: DeferredRows) {
        self.deferred.push(rows);
    }

    /// How many problems wait for [`Ledger::place_deferred`] to find their own place.
    pub fn deferred(&self) -> usize {
        self.deferred.iter().map(DeferredRows::len).sum()
    }

    /// Moves the problems a load reported at a stand-in place to their own, reading an input
    /// again to find them; returns how many moved. Call it before showing where problems
    /// are: a caller that only counts them need not, and then pays nothing.
    ///
    /// Today these are the bulk format's dependency problems found once both files are read
    /// (`unknown-dependency`, `unsatisfiable-requirement`): loaded, they name their
    /// version's row in the versions file; placed, their dependency's row in the
    /// dependencies file, which this reads a second time ([`crate::load::read_bulk`]). A
    /// problem whose row cannot be found (the file changed since the load, or cannot be read
    /// now, as a pipe cannot) keeps its version's row, and [`Ledger::unplaced`] says how many
    /// did and why. Problems keep their order in the list (sort again if
    /// the order by place matters: [`Ledger::sort`], or [`crate::load::Inputs::place_deferred`],
    /// which does both), and are found by value, so the ledger may be sorted or merged first.
    /// Only the first call reads anything.
    ///
    /// ```
    /// # fn main() -> Result<(), Box<dyn std::error::Error>> {
    /// let dir = tempfile::tempdir()?;
    /// let (versions, deps) = (dir.path().join("versions.csv"), dir.path().join("deps.csv"));
    /// std::fs::write(&versions, "package,version\npkg-a,1.0.0\npkg-b,2.0.0\n")?;
    /// std::fs::write(
    ///     &deps,
    ///     "package,version,dependency,req\npkg-a,1.0.0,pkg-b,^2\npkg-a,1.0.0,pkg-b,^3\n",
    /// )?;
    /// let (_, mut ledger) = basefit::load::read_bulk(&versions, &deps)?;
    /// let place = |ledger: &basefit::Ledger| {
    ///     let origin = &ledger.problems[0].origin;
    ///     let file = std::path::Path::new(&origin.file).file_name().unwrap().to_owned();
    ///     format!("{}:{}", file.to_string_lossy(), origin.line)
    /// };
    /// assert_eq!(ledger.deferred(), 1);
    /// assert_eq!(place(&ledger), "versions.csv:2");
    /// assert_eq!(ledger.place_deferred(), 1);
    /// assert_eq!(place(&ledger), "deps.csv:3");
    /// assert_eq!(ledger.deferred(), 0);
    /// assert_eq!(ledger.problems[0].detail, "requires pkg-b ^3, which no published version satisfies");
    /// # Ok(()) }
    /// ```
    pub fn place_deferred(&mut self) -> usize {
        self.place_deferred_showing(None)
    }

    /// [`Ledger::place_deferred`], showing the read on `progress`; the caller clears the bar.
    pub(crate) fn place_deferred_showing(
        &mut self,
        progress: Option<&indicatif::ProgressBar>,
    ) -> usize {
        let deferred = std::mem::take(&mut self.deferred);
        let mut moved = 0;
        for rows in &deferred {
            let (placed, unplaced) = rows.place(&mut self.problems, progress);
            moved += placed;
            self.unplaced.extend(unplaced);
        }
        moved
    }

    /// Problems grouped by kind, in a fixed order, each group in input order.
    pub fn by_kind(&self) -> BTreeMap<ProblemKind, Vec<&Problem>> {
        let mut groups: BTreeMap<ProblemKind, Vec<&Problem>> = BTreeMap::new();
        for p in &self.problems {
            groups.entry(p.kind).or_default().push(p);
        }
        groups
    }

    /// Why the image `id` was left out, when an images file declared it and it could not be
    /// built: the problem names the image by id and says where and why. Duplicate ids are not
    /// asked about: the first of them is kept.
    pub fn left_out_image(&self, id: &str) -> Option<&Problem> {
        self.left_out_images().remove(id)
    }

    /// [`Ledger::left_out_image`] for every image at once, for callers that ask about many.
    pub fn left_out_images(&self) -> BTreeMap<&str, &Problem> {
        let mut out = BTreeMap::new();
        for p in self
            .problems
            .iter()
            .filter(|p| p.kind == ProblemKind::BadImage)
        {
            out.entry(p.subject.as_str()).or_insert(p);
        }
        out
    }

    /// Record kinds whose counts do not add up; empty when nothing was lost.
    pub fn unbalanced(&self) -> Vec<RecordKind> {
        self.tallies
            .iter()
            .filter(|(_, t)| t.read != t.used + t.left_out)
            .map(|(k, _)| *k)
            .collect()
    }

    pub fn is_clean(&self) -> bool {
        self.problems.is_empty()
    }

    /// Orders problems by file, line and kind so reports do not depend on reading order.
    pub fn sort(&mut self) {
        self.problems
            .sort_by(|a, b| (&a.origin, a.kind, &a.subject).cmp(&(&b.origin, b.kind, &b.subject)));
    }
}

/// The closest of `known` to `word` by edit distance, when it is close enough to be a likely
/// typo (at most a third of the word's length, and at least one edit allowed).
///
/// ```
/// use basefit::load::diag::closest;
/// assert_eq!(closest("dependz", &["depends", "builds"]), Some("depends"));
/// assert_eq!(closest("nmae", &["name", "versions"]), Some("name"));
/// assert_eq!(closest("zzz", &["depends", "builds"]), None);
/// ```
pub fn closest<'a>(word: &str, known: &[&'a str]) -> Option<&'a str> {
    let limit = (word.chars().count() / 3).max(1);
    known
        .iter()
        .map(|k| (edit_distance(word, k), *k))
        .filter(|(d, _)| *d <= limit)
        .min()
        .map(|(_, k)| k)
}

/// Edit distance counting a swap of two neighbouring characters as one edit, since that is
/// the commonest typo in a field name (`nmae`).
fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let w = b.len() + 1;
    let mut d = vec![0usize; (a.len() + 1) * w];
    for i in 0..=a.len() {
        d[i * w] = i;
    }
    for (j, cell) in d.iter_mut().enumerate().take(w) {
        *cell = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut v = (d[(i - 1) * w + j] + 1)
                .min(d[i * w + j - 1] + 1)
                .min(d[(i - 1) * w + j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                v = v.min(d[(i - 2) * w + j - 2] + 1);
            }
            d[i * w + j] = v;
        }
    }
    d[a.len() * w + b.len()]
}

/// The schema errors of one file, up to [`SchemaErrors::CAP`], so one run shows many of them
/// instead of stopping at the first. Every reader collects through this.
#[derive(Debug, Default)]
pub struct SchemaErrors {
    errors: Vec<BadInput>,
    /// An error past the cap was seen (and not kept).
    more: bool,
}

impl SchemaErrors {
    pub const CAP: usize = 20;

    pub fn new() -> Self {
        SchemaErrors::default()
    }

    /// The value, or `None` after recording the error.
    pub fn keep<T>(&mut self, result: Result<T, BadInput>) -> Option<T> {
        match result {
            Ok(v) => Some(v),
            Err(e) => {
                self.push(e);
                None
            }
        }
    }

    /// Records `e`, and each error it combines ([`BadInput::combine`]) as one of its own: a
    /// reader that collects the problems of one record before giving them here (a catalog's
    /// library entry) must not carry the file past the cap.
    pub fn push(&mut self, mut e: BadInput) {
        let combined = std::mem::take(&mut e.more);
        for one in std::iter::once(e).chain(combined) {
            if self.errors.len() < Self::CAP {
                self.errors.push(one);
            } else {
                self.more = true;
            }
        }
    }

    /// Whether an error past the cap was seen, so a reader can stop early: the note that
    /// there are more is then true, which stopping at the cap itself could not know.
    pub fn full(&self) -> bool {
        self.more
    }

    pub fn is_empty(&self) -> bool {
        self.errors.is_empty()
    }

    /// `Ok` when nothing was recorded, else all recorded errors as one.
    pub fn finish(mut self) -> Result<(), BadInput> {
        // Say so past the cap, or the list reads as every error there is.
        if let Some(last) = self.errors.last().filter(|_| self.more) {
            let file = last.file.clone();
            self.errors.push(BadInput::file(
                file,
                format!(
                    "there are more errors than these first {}: fix these and run again",
                    Self::CAP
                ),
            ));
        }
        match BadInput::combine(self.errors) {
            Some(e) => Err(e),
            None => Ok(()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Records read but neither used nor left out are lost, and say so as surely as records
    /// counted twice: the check is equality, not one side of it. From a mutation review, where
    /// a one-sided check passed every test.
    #[test]
    fn lost_records_unbalance_the_ledger_as_extra_ones_do() {
        let mut ledger = Ledger::default();
        ledger.read_many(RecordKind::Version, 3);
        ledger.used_many(RecordKind::Version, 2);
        assert_eq!(ledger.unbalanced(), [RecordKind::Version]);
        ledger.left_out_with_owner(RecordKind::Version, 1);
        assert!(ledger.unbalanced().is_empty());
        ledger.used(RecordKind::Version);
        assert_eq!(ledger.unbalanced(), [RecordKind::Version]);
    }

    /// Of two problems leaving out images with one id, the first is the one told (as
    /// documented on [`Ledger::left_out_image`]). From a mutation review.
    #[test]
    fn the_first_problem_of_a_left_out_image_id_is_told() {
        let mut ledger = Ledger::default();
        for (line, detail) in [(3, "first reason"), (7, "second reason")] {
            ledger.leave_out(
                RecordKind::Image,
                ProblemKind::BadImage,
                Origin {
                    file: "i.yaml".into(),
                    line,
                },
                "deb",
                detail,
            );
        }
        let told = ledger.left_out_image("deb").unwrap();
        assert_eq!(
            (told.origin.line, told.detail.as_str()),
            (3, "first reason")
        );
        assert_eq!(ledger.left_out_images()["deb"].origin.line, 3);
    }

    /// A parser that knows no line (0) gives an error about the whole file, not `file:0:`.
    /// From a mutation review.
    #[test]
    fn a_parsed_error_at_line_zero_names_the_file_only() {
        let e = BadInput::parsed("m.json", 0, 0, "EOF while parsing");
        assert_eq!(
            (e.line, e.to_string()),
            (None, "m.json: EOF while parsing".into())
        );
    }

    /// A quote inside a shown name is escaped, or the quoted name would seem to end early.
    #[test]
    fn shown_name_escapes_a_quote() {
        assert_eq!(shown_name("a\"b\t"), r#""a\"b\t""#);
    }

    fn origin(file: &str, line: usize) -> Origin {
        Origin {
            file: file.into(),
            line,
        }
    }

    /// Merging brings every part of the other ledger: counts (those left out with their
    /// owner too, which `check` explains), skipped checks and unplaced problems. From a
    /// mutation review, where dropping any of these passed every test.
    #[test]
    fn merge_keeps_every_part_of_the_other_ledger() {
        let mut other = Ledger::default();
        other.read_many(RecordKind::Dependency, 3);
        other.used_many(RecordKind::Dependency, 1);
        other.left_out_with_owner(RecordKind::Dependency, 2);
        other.skip_check(RecordKind::Priority, Reference::Registry);
        other.unplaced.push(Unplaced {
            file: "d.csv".into(),
            problems: 1,
            reason: "it changed".into(),
            left: Vec::new(),
        });
        let mut ledger = Ledger::default();
        ledger.merge(other.clone());
        assert_eq!(
            ledger.tally(RecordKind::Dependency),
            other.tally(RecordKind::Dependency)
        );
        assert_eq!(ledger.skipped, other.skipped);
        assert_eq!(ledger.unplaced, other.unplaced);
        assert!(ledger.unbalanced().is_empty());
    }

    /// Problems sort by file, then line, then kind, then subject, so two problems of one
    /// line do not follow the reading order. From a mutation review.
    #[test]
    fn sort_orders_by_file_line_kind_and_subject() {
        let mut ledger = Ledger::default();
        ledger.note(ProblemKind::UnknownLibrary, origin("b.yaml", 1), "z", "");
        ledger.note(ProblemKind::UnknownLibrary, origin("a.yaml", 9), "y", "");
        ledger.note(ProblemKind::UnknownLibrary, origin("a.yaml", 2), "y", "");
        ledger.note(ProblemKind::NormalisedVersion, origin("a.yaml", 2), "y", "");
        ledger.note(ProblemKind::NormalisedVersion, origin("a.yaml", 2), "x", "");
        ledger.sort();
        let got: Vec<_> = ledger
            .problems
            .iter()
            .map(|p| (p.origin.to_string(), p.kind, p.subject.as_str()))
            .collect();
        assert_eq!(
            got,
            [
                ("a.yaml:2".to_string(), ProblemKind::NormalisedVersion, "x"),
                ("a.yaml:2".to_string(), ProblemKind::NormalisedVersion, "y"),
                ("a.yaml:2".to_string(), ProblemKind::UnknownLibrary, "y"),
                ("a.yaml:9".to_string(), ProblemKind::UnknownLibrary, "y"),
                ("b.yaml:1".to_string(), ProblemKind::UnknownLibrary, "z"),
            ]
        );
    }

    /// A typo suggestion allows a third of the word's length in edits, no more: a six-letter
    /// word three edits from a field name is no typo of it. From a mutation review.
    #[test]
    fn closest_allows_a_third_of_the_word_in_edits() {
        assert_eq!(closest("abcxyz", &["abcdef"]), None);
        assert_eq!(closest("abcdxy", &["abcdef"]), Some("abcdef"));
    }

    /// Each error a combined error brings counts toward the cap, so one record's many
    /// problems cannot carry a file past it. From a mutation review.
    #[test]
    fn combined_errors_count_toward_the_cap() {
        let many: Vec<BadInput> = (1..=SchemaErrors::CAP + 1)
            .map(|line| BadInput::at("c.yaml", line, "bad"))
            .collect();
        let mut errors = SchemaErrors::new();
        errors.push(BadInput::combine(many).unwrap());
        assert!(errors.full());
        let e = errors.finish().unwrap_err();
        assert_eq!(e.more.len(), SchemaErrors::CAP);
        assert!(
            e.more
                .last()
                .unwrap()
                .message
                .starts_with("there are more errors")
        );
    }
}
