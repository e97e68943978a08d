//! Reading version strings that are not strict semver, where the intent is clear.

use semver::Version;

/// How a version string was read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum VersionRead {
    /// Already strict Semantic Versioning 2.0.0.
    Strict(Version),
    /// Not strict, but normalised; the string says what was changed.
    Normalised(Version, String),
    /// Cannot be read; the string says why.
    Refused(String),
}

impl VersionRead {
    pub fn version(&self) -> Option<&Version> {
        match self {
            VersionRead::Strict(v) | VersionRead::Normalised(v, _) => Some(v),
            VersionRead::Refused(_) => None,
        }
    }
}

/// Reads a runtime version given on the command line, as leniently as an image's `runtime`
/// (`3.1` is 3.1.0), so a value the images file accepts is not refused when typed.
///
/// ```
/// use basefit::load::lenient::runtime_arg;
/// assert_eq!(runtime_arg("3.1"), Ok(semver::Version::new(3, 1, 0)));
/// assert!(runtime_arg("newest").is_err());
/// ```
pub fn runtime_arg(raw: &str) -> Result<Version, String> {
    match read_version(raw) {
        VersionRead::Strict(v) | VersionRead::Normalised(v, _) => Ok(v),
        VersionRead::Refused(why) => {
            Err(format!("{why}; expected a runtime version such as 3.1.2"))
        }
    }
}

/// Reads a version string leniently.
///
/// Accepted beyond strict semver: a leading `v`, surrounding white space, missing minor or
/// patch components (`1.2` reads as `1.2.0`), leading zeros in numeric components, a fourth
/// numeric component (kept as build metadata so `1.2.3.4` and `1.2.3.5` stay distinct and
/// ordered), and pre-release tags written without the hyphen (`2.0.0rc1`, `2.0.0.beta.2`).
///
/// ```
/// use basefit::load::lenient::{read_version, VersionRead};
/// assert!(matches!(read_version("1.4.0"), VersionRead::Strict(_)));
/// let VersionRead::Normalised(v, _) = read_version("v2.0rc1") else { panic!() };
/// assert_eq!(v.to_string(), "2.0.0-rc1");
/// assert!(matches!(read_version("latest"), VersionRead::Refused(_)));
/// ```
pub fn read_version(raw: &str) -> VersionRead {
    if let Ok(v) = Version::parse(raw) {
        return VersionRead::Strict(v);
    }
    let mut notes: Vec<&str> = Vec::new();
    let trimmed = raw.trim();
    if trimmed.is_empty() {
        return VersionRead::Refused("empty version string".into());
    }
    if trimmed.len() != raw.len() {
        notes.push("white space removed");
    }
    let mut s = trimmed;
    if let Some(rest) = s.strip_prefix(['v', 'V'])
        && rest.starts_with(|c: char| c.is_ascii_digit())
    {
        s = rest;
        notes.push("leading `v` removed");
    }
    if !s.starts_with(|c: char| c.is_ascii_digit()) {
        let why = if s.starts_with(['^', '~', '=', '<', '>', '*']) {
            "looks like a requirement, not a version"
        } else {
            "does not start with a number"
        };
        return VersionRead::Refused(why.into());
    }
    // Build metadata is carried over unchanged.
    let (body, build) = match s.split_once('+') {
        Some((b, m)) => (b, Some(m)),
        None => (s, None),
    };
    // Numeric release components: digits separated by dots, until the first thing that is
    // not `.` followed by digits.
    let bytes = body.as_bytes();
    let mut numbers: Vec<&str> = Vec::new();
    let mut i = 0;
    loop {
        let start = i;
        while i < bytes.len() && bytes[i].is_ascii_digit() {
            i += 1;
        }
        if start == i {
            return VersionRead::Refused(format!("empty numeric component in `{trimmed}`"));
        }
        numbers.push(&body[start..i]);
        if i + 1 < bytes.len() && bytes[i] == b'.' && bytes[i + 1].is_ascii_digit() {
            i += 1;
            continue;
        }
        break;
    }
    let rest = &body[i..];
    // `3.x`, `3.1.*`: a wildcard component means "any", which a requirement says and no one
    // version can; read as a pre-release tag it would silently become `3.0.0-x`.
    if let Some(wild) = rest.strip_prefix('.')
        && let Some(after) = wild.strip_prefix(['x', 'X', '*'])
        && (after.is_empty() || after.starts_with(['.', '-']))
    {
        return VersionRead::Refused(format!(
            "`{trimmed}` looks like a requirement (a wildcard component), not a version"
        ));
    }
    if numbers.len() > 4 {
        return VersionRead::Refused(format!(
            "{} numeric components; at most four are read",
            numbers.len()
        ));
    }
    let mut parsed = Vec::with_capacity(4);
    for n in &numbers {
        if n.len() > 1 && n.starts_with('0') {
            notes.push("leading zeros removed");
        }
        match n.parse::<u64>() {
            Ok(v) => parsed.push(v),
            Err(_) => return VersionRead::Refused(format!("component `{n}` is too large")),
        }
    }
    if numbers.len() < 3 {
        notes.push("missing components filled with 0");
    }
    // The pre-release part: `-tag`, `.tag` or `tag` directly after the numbers.
    let pre = if rest.is_empty() {
        None
    } else if let Some(tag) = rest.strip_prefix('-') {
        Some(tag)
    } else if rest.starts_with('.') && rest[1..].starts_with(|c: char| c.is_ascii_alphabetic()) {
        notes.push("pre-release separator `.` read as `-`");
        Some(&rest[1..])
    } else if rest.starts_with(|c: char| c.is_ascii_alphabetic()) {
        notes.push("pre-release tag without `-`");
        Some(rest)
    } else if rest == "." {
        return VersionRead::Refused("trailing `.`".into());
    } else {
        return VersionRead::Refused(format!("cannot read `{rest}` after the version numbers"));
    };
    if pre.is_some_and(str::is_empty) {
        return VersionRead::Refused("empty pre-release tag".into());
    }
    let mut build_parts: Vec<String> = Vec::new();
    if numbers.len() == 4 {
        notes.push("fourth component kept as build metadata");
        build_parts.push(parsed[3].to_string());
    }
    if let Some(b) = build {
        build_parts.push(b.to_string());
    }
    while parsed.len() < 3 {
        parsed.push(0);
    }
    let mut text = format!("{}.{}.{}", parsed[0], parsed[1], parsed[2]);
    if let Some(tag) = pre {
        text.push('-');
        text.push_str(tag);
    }
    if !build_parts.is_empty() {
        text.push('+');
        text.push_str(&build_parts.join("."));
    }
    match Version::parse(&text) {
        Ok(v) if notes.is_empty() => VersionRead::Strict(v),
        Ok(v) => {
            notes.dedup();
            VersionRead::Normalised(v, notes.join(", "))
        }
        Err(e) => VersionRead::Refused(format!("not a version even after normalising: {e}")),
    }
}
