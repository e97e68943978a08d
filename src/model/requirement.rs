//! Version requirements: the `semver` crate's syntax plus `||` for a union of alternatives.

use semver::{Version, VersionReq};
use serde::{Serialize, Serializer};
use std::fmt;

/// An interned requirement string in a [`super::Registry`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct ReqId(pub u32);

/// A requirement: one or more `semver` requirements joined by `||`.
///
/// ```
/// use basefit::model::Requirement;
/// use semver::Version;
/// let req = Requirement::parse("^1.2 || >=3.0.0-rc.1, <3.1").unwrap();
/// assert!(req.matches(&Version::parse("1.9.0").unwrap()));
/// assert!(req.matches(&Version::parse("3.0.0-rc.2").unwrap()));
/// assert!(!req.matches(&Version::parse("2.0.0").unwrap()));
/// ```
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Requirement {
    pub text: String,
    pub alternatives: Vec<VersionReq>,
}

impl Requirement {
    /// Parses a requirement; an empty string (or only white space) means any version.
    pub fn parse(text: &str) -> Result<Requirement, String> {
        let trimmed = text.trim();
        if trimmed.is_empty() {
            return Ok(Requirement::any());
        }
        let mut alternatives = Vec::new();
        for part in trimmed.split("||") {
            let part = part.trim();
            if part.is_empty() {
                return Err(format!("empty alternative in `{trimmed}`"));
            }
            let req = VersionReq::parse(part).map_err(|e| format!("`{part}`: {e}"))?;
            alternatives.push(req);
        }
        Ok(Requirement {
            text: trimmed.to_string(),
            alternatives,
        })
    }

    /// The requirement every non-pre-release version meets.
    pub fn any() -> Requirement {
        Requirement {
            text: "*".into(),
            alternatives: vec![VersionReq::STAR],
        }
    }

    /// Whether `version` meets any alternative, by `semver::VersionReq::matches` (so a
    /// pre-release is admitted only by an alternative that names a pre-release of the same
    /// major.minor.patch).
    pub fn matches(&self, version: &Version) -> bool {
        self.alternatives.iter().any(|r| r.matches(version))
    }
}

impl fmt::Display for Requirement {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.text)
    }
}

impl Serialize for Requirement {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(&self.text)
    }
}
