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
    ReleaseDate,
};
pub use requirement::{ReqId, Requirement};

use semver::Version;
use serde::Serialize;
use std::collections::BTreeSet;
use std::fmt;

use crate::load::diag::Origin;

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
    pub toolchain: bool,
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
    pub origin: Origin,
}
