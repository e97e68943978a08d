//! The loaded inputs, interned for solving at registry scale.
//!
//! Package names and requirement strings are interned to integers once at load: registries
//! repeat the same few thousand requirement strings millions of times, and the solver compares
//! package ids, not strings.

mod lazy;
mod registry;
mod requirement;

pub use lazy::PerPackage;

pub use registry::{
    Build, Dep, DepKind, NativeHints, Package, PackageId, Platform, PlatformId, Registry, Release,
    ReleaseDate, canonical_arch,
};
pub use requirement::{ReqId, Requirement};

use semver::Version;
use serde::Serialize;
use std::collections::BTreeSet;
use std::fmt;

use crate::load::diag::Origin;

/// Whether `c` is a bidirectional text control: printed raw it reorders the text after it, so
/// a name can read backwards.
pub fn is_bidi_control(c: char) -> bool {
    matches!(c, '\u{061c}' | '\u{200e}' | '\u{200f}' | '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}')
}

/// Whether `c` is an invisible formatting character (Unicode general category Cf: the soft
/// hyphen, zero-width space and joiners, the word joiner, the byte-order mark, tag
/// characters, bidirectional controls among them): it shows nothing, so two names that
/// differ only by one look alike. The list is Unicode 15's, which `tests/names.rs` checks
/// against Python's `unicodedata` on this machine.
///
/// ```
/// use basefit::model::is_invisible_format;
/// assert!(is_invisible_format('\u{200b}')); // zero-width space
/// assert!(is_invisible_format('\u{feff}')); // byte-order mark
/// assert!(!is_invisible_format('a') && !is_invisible_format('\t'));
/// ```
pub fn is_invisible_format(c: char) -> bool {
    matches!(c,
        '\u{ad}' | '\u{600}'..='\u{605}' | '\u{61c}' | '\u{6dd}' | '\u{70f}'
        | '\u{890}'..='\u{891}' | '\u{8e2}' | '\u{180e}' | '\u{200b}'..='\u{200f}'
        | '\u{202a}'..='\u{202e}' | '\u{2060}'..='\u{2064}' | '\u{2066}'..='\u{206f}'
        | '\u{feff}' | '\u{fff9}'..='\u{fffb}' | '\u{110bd}' | '\u{110cd}'
        | '\u{13430}'..='\u{1343f}' | '\u{1bca0}'..='\u{1bca3}' | '\u{1d173}'..='\u{1d17a}'
        | '\u{e0001}' | '\u{e0020}'..='\u{e007f}')
}

/// Whether `name` can be a system package name on every family basefit writes commands for.
/// The names go into shell commands as they are, so anything beyond these characters (a
/// space, `;`, a leading `-` read as an option) is refused rather than quoted. Upper case and
/// `_` are allowed for RPM and Alpine names (common practice, no source); the catalog holds
/// Debian names to Debian's stricter rule.
///
/// ```
/// use basefit::model::is_system_package_name;
/// assert!(is_system_package_name("gcc-c++"));
/// assert!(!is_system_package_name("build-essential, zlib1g-dev"));
/// assert!(!is_system_package_name("-y"));
/// ```
pub fn is_system_package_name(name: &str) -> bool {
    name.starts_with(|c: char| c.is_ascii_alphanumeric())
        && name
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || "+.-_".contains(c))
}

/// The OS families basefit knows system-package names for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum OsFamily {
    Debian,
    Alpine,
    Rhel,
}

impl OsFamily {
    pub const ALL: [OsFamily; 3] = [OsFamily::Debian, OsFamily::Alpine, OsFamily::Rhel];

    pub fn parse(s: &str) -> Option<OsFamily> {
        match s {
            "debian" => Some(OsFamily::Debian),
            "alpine" => Some(OsFamily::Alpine),
            "rhel" => Some(OsFamily::Rhel),
            _ => None,
        }
    }

    /// The accepted families as a message lists them: "debian, alpine or rhel".
    pub fn expected() -> String {
        let names: Vec<&str> = OsFamily::ALL.iter().map(|f| f.as_str()).collect();
        let (last, rest) = names.split_last().unwrap_or((&"", &[]));
        match rest {
            [] => last.to_string(),
            _ => format!("{} or {last}", rest.join(", ")),
        }
    }

    pub fn as_str(self) -> &'static str {
        match self {
            OsFamily::Debian => "debian",
            OsFamily::Alpine => "alpine",
            OsFamily::Rhel => "rhel",
        }
    }
}

impl fmt::Display for OsFamily {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// A runtime image with its base images already applied.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Image {
    pub id: String,
    pub runtime: Version,
    pub family: OsFamily,
    pub platform: Platform,
    /// It can compile C: `toolchain: true` (written or inherited), or it carries its family's
    /// C compiler packages.
    pub toolchain: bool,
    /// It can compile C++ too: `toolchain: true`, or it carries the C++ compiler package
    /// beside the C ones. An image with `toolchain` and without `cxx` builds C sources only.
    pub cxx: bool,
    /// Installed system packages (names as the OS family spells them).
    pub system_packages: BTreeSet<String>,
    pub extends: Option<String>,
    pub origin: Origin,
}

/// The declared set of images, in declared order.
#[derive(Debug, Clone, Default, Serialize)]
pub struct ImageSet {
    pub images: Vec<Image>,
}

impl ImageSet {
    pub fn get(&self, id: &str) -> Option<&Image> {
        self.images.iter().find(|i| i.id == id)
    }

    pub fn position(&self, id: &str) -> Option<usize> {
        self.images.iter().position(|i| i.id == id)
    }
}

/// One entry of a priority list.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Priority {
    /// 1-based position in the list.
    pub rank: usize,
    pub name: String,
    /// Relative importance; 1.0 when the list gives none.
    pub weight: f64,
    /// Restricts the root version; `None` admits any non-pre-release version.
    pub req: Option<Requirement>,
    /// Admits pre-release versions of the root even when `req` names none.
    pub prerelease: bool,
    pub origin: Origin,
}

impl Priority {
    /// An entry for `name` at `rank` with weight 1, no requirement and no pre-releases, as a
    /// list that only names packages gives them.
    ///
    /// ```
    /// use basefit::model::Priority;
    /// use basefit::load::diag::Origin;
    /// let e = Priority::named(3, "gumleaf", Origin { file: "p.csv".into(), line: 4 });
    /// assert_eq!((e.rank, e.weight, e.req.is_none()), (3, 1.0, true));
    /// ```
    pub fn named(rank: usize, name: &str, origin: Origin) -> Priority {
        Priority {
            rank,
            name: name.to_string(),
            weight: 1.0,
            req: None,
            prerelease: false,
            origin,
        }
    }
}

/// A ranked list of packages, most important first.
#[derive(Debug, Clone, Default, Serialize)]
pub struct PriorityList {
    pub entries: Vec<Priority>,
}

impl PriorityList {
    pub fn total_weight(&self) -> f64 {
        self.entries.iter().map(|e| e.weight).sum()
    }
}

/// What a recorded install reported.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum RecordedOutcome {
    Installed,
    Failed,
}

impl RecordedOutcome {
    pub fn parse(s: &str) -> Option<Self> {
        match s {
            "installed" => Some(RecordedOutcome::Installed),
            "failed" => Some(RecordedOutcome::Failed),
            _ => None,
        }
    }
}

/// One recorded install of a package on an image.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RecordedResult {
    pub package: String,
    pub image: String,
    pub outcome: RecordedOutcome,
    pub version: Option<Version>,
    /// The install log, read from the record or from its log file.
    pub log: Option<String>,
    /// Why the record's log file was not read, when it was not (the problem is in the ledger
    /// too): the review must not present a log it never saw as one without a known cause.
    pub log_unread: Option<String>,
    /// Bytes at the start of the log file that were not read: only its tail is, so line
    /// numbers in `log` count from the first line read.
    pub log_skipped: u64,
    /// Lines of the record's own `log` text that come before the log file's in `log` (0 when
    /// no log file was read): line numbers past them are the file's.
    pub log_inline_lines: usize,
    /// The log file as the record names it, when it was read: findings past the record's own
    /// text name it.
    pub log_file: Option<String>,
    pub origin: Origin,
}
