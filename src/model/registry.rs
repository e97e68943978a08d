//! The interned registry: packages, their releases sorted by version, dependencies.

use super::requirement::{ReqId, Requirement};
use rustc_hash::FxHashMap;
use semver::Version;
use serde::Serialize;
use std::fmt;

/// A package name interned in a [`Registry`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
pub struct PackageId(pub u32);

/// A platform interned in a [`Registry`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct PlatformId(pub u16);

/// The platform a prebuilt build targets, or an image runs: `os/libc/arch`, in lower case
/// whatever the case written, and with the other names of one architecture or C library read
/// as one ([`canonical_arch`], `gnu` for `glibc`), since the words name the same systems
/// (common practice, no source): an export that upper-cased the column, or wrote Debian's
/// `amd64` where the images say `x86_64`, would otherwise turn every prebuilt-only release
/// into a platform failure without a word.
///
/// ```
/// use basefit::model::Platform;
/// let p = Platform::parse("linux/glibc/x86_64").unwrap();
/// assert_eq!(p.libc, "glibc");
/// assert_eq!(p.to_string(), "linux/glibc/x86_64");
/// assert_eq!(Platform::parse("Linux/GLIBC/X86_64"), Ok(p.clone()));
/// assert_eq!(Platform::parse("linux/gnu/amd64"), Ok(p));
/// assert_eq!(Platform::parse("linux/musl/arm64").unwrap().to_string(), "linux/musl/aarch64");
/// assert!(Platform::parse("linux/x86_64").is_err());
/// assert!(Platform::parse("linux/amd64/glibc").is_err());
/// assert!(Platform::parse("linux/musl/musl").is_err());
/// ```
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
pub struct Platform {
    pub os: String,
    pub libc: String,
    pub arch: String,
}

impl Platform {
    pub fn parse(s: &str) -> Result<Platform, String> {
        let parts: Vec<&str> = s.trim().split('/').collect();
        match parts.as_slice() {
            [os, libc, arch] if !os.is_empty() && !libc.is_empty() && !arch.is_empty() => {
                let libc = libc.to_ascii_lowercase();
                let arch = arch.to_ascii_lowercase();
                // Docker and Go write `os/arch`, so `linux/amd64/glibc` is an easy slip; read
                // as written it names a platform nothing is built for, and an image declared
                // on it would fail every prebuilt-only release and lose its `:amd64` packages
                // without a word.
                let misplaced = if canonical_arch(&libc).is_some() {
                    Some(format!(
                        "`{}`, in the C library's place, is an architecture",
                        parts[1]
                    ))
                } else if is_libc_word(&arch) {
                    Some(format!(
                        "`{}`, in the architecture's place, is a C library",
                        parts[2]
                    ))
                } else {
                    None
                };
                if let Some(misplaced) = misplaced {
                    return Err(format!(
                        "`{s}`: {misplaced}: expected a platform as os/libc/arch, e.g. \
                         linux/glibc/x86_64"
                    ));
                }
                Ok(Platform {
                    os: os.to_ascii_lowercase(),
                    libc: match libc.as_str() {
                        "gnu" => "glibc".to_string(),
                        _ => libc,
                    },
                    arch: canonical_arch(&arch).map_or(arch, str::to_string),
                })
            }
            _ => Err(format!(
                "`{s}`: expected a platform as os/libc/arch, e.g. linux/glibc/x86_64"
            )),
        }
    }
}

/// Whether `word` (lower case) names a C library rather than an architecture, so that an
/// `os/arch/libc` platform, the words swapped, is told apart from an unknown architecture.
fn is_libc_word(word: &str) -> bool {
    matches!(word, "glibc" | "gnu" | "musl")
}

/// The one name basefit reads an architecture by, for the names other systems give it
/// (Debian's and Go's `amd64` and `arm64`, Windows' `x64`, Debian's `i386`, `armhf` and
/// `ppc64el`; common practice, from memory); `None` for a name this list does not know, which
/// is kept as written.
///
/// ```
/// use basefit::model::canonical_arch;
/// assert_eq!(canonical_arch("amd64"), Some("x86_64"));
/// assert_eq!(canonical_arch("aarch64"), Some("aarch64"));
/// assert_eq!(canonical_arch("sparc64"), None);
/// ```
pub fn canonical_arch(arch: &str) -> Option<&'static str> {
    Some(match arch {
        "x86_64" | "amd64" | "x64" | "x86-64" => "x86_64",
        "aarch64" | "arm64" => "aarch64",
        "i686" | "i386" | "386" => "i686",
        "armv7" | "armhf" | "armv7l" => "armv7",
        "ppc64le" | "ppc64el" => "ppc64le",
        "s390x" => "s390x",
        "riscv64" => "riscv64",
        _ => return None,
    })
}

impl fmt::Display for Platform {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}/{}/{}", self.os, self.libc, self.arch)
    }
}

/// A release date, kept as `yyyymmdd` so it is small and orders correctly.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct ReleaseDate(pub u32);

impl ReleaseDate {
    /// Reads `YYYY-MM-DD`, optionally followed by a time (`T...` or a space).
    ///
    /// ```
    /// use basefit::model::ReleaseDate;
    /// assert_eq!(ReleaseDate::parse("2024-02-29").unwrap().to_string(), "2024-02-29");
    /// assert!(ReleaseDate::parse("2023-02-29").is_none());
    /// assert!(ReleaseDate::parse("yesterday").is_none());
    /// ```
    pub fn parse(s: &str) -> Option<ReleaseDate> {
        let s = s.trim();
        let day_part = match s.find(['T', ' ']) {
            Some(i) => &s[..i],
            None => s,
        };
        let mut it = day_part.split('-');
        let (y, m, d) = (it.next()?, it.next()?, it.next()?);
        if it.next().is_some() || y.len() != 4 || m.len() != 2 || d.len() != 2 {
            return None;
        }
        let (y, m, d): (u32, u32, u32) = (y.parse().ok()?, m.parse().ok()?, d.parse().ok()?);
        let leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
        let days = [
            31,
            if leap { 29 } else { 28 },
            31,
            30,
            31,
            30,
            31,
            31,
            30,
            31,
            30,
            31,
        ];
        if !(1..=12).contains(&m) || d == 0 || d > days[(m - 1) as usize] {
            return None;
        }
        Some(ReleaseDate(y * 10_000 + m * 100 + d))
    }
}

impl fmt::Display for ReleaseDate {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let v = self.0;
        write!(f, "{:04}-{:02}-{:02}", v / 10_000, (v / 100) % 100, v % 100)
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum DepKind {
    /// Needed to install and run; the only kind that counts for installation.
    Runtime,
    /// Needed only to develop or test the package; ignored by the solver.
    Development,
}

/// A dependency of one release.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Dep {
    pub package: PackageId,
    pub req: ReqId,
    pub kind: DepKind,
}

/// How a release can be installed.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Build {
    /// A source build exists (installable anywhere, compiling what it must).
    pub source: bool,
    /// Platforms with a prebuilt build.
    pub prebuilt: Box<[PlatformId]>,
}

/// What a release declares or ships that hints at native system libraries.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct NativeHints {
    /// System libraries declared in the metadata (catalog ids or free names).
    pub libraries: Vec<String>,
    /// Files the release ships (paths inside its archive).
    pub files: Vec<String>,
}

/// One published version of a package.
#[derive(Debug, Clone, PartialEq)]
pub struct Release {
    pub version: Version,
    /// The string as written, when it was normalised.
    pub raw_version: Option<Box<str>>,
    pub released: Option<ReleaseDate>,
    /// Runtime requirement; `None` admits every runtime.
    pub runtime: Option<ReqId>,
    pub deps: Box<[Dep]>,
    pub build: Build,
    pub native: Option<Box<NativeHints>>,
    pub yanked: bool,
    /// Index into [`Registry::files`] of the record's file: a package declared in several
    /// files has releases in each.
    pub file: u16,
    /// Line of the record in that file.
    pub line: u32,
}

impl Release {
    /// The version as its record writes it (`1.0` for a release read as 1.0.0), so a problem
    /// about the record names the record a reader finds at its line.
    pub fn written_version(&self) -> std::borrow::Cow<'_, str> {
        match &self.raw_version {
            Some(raw) => std::borrow::Cow::Borrowed(raw),
            None => std::borrow::Cow::Owned(self.version.to_string()),
        }
    }

    pub fn runtime_deps(&self) -> impl Iterator<Item = &Dep> {
        self.deps.iter().filter(|d| d.kind == DepKind::Runtime)
    }

    /// Whether `other` declares exactly what this release declares: the same runtime
    /// requirement, dependencies, builds and native hints. Version, date, yank flag and
    /// source line may differ. A patch that only fixes code usually looks like this; the
    /// solver counts the run of look-alikes that ends at a package's newest release suiting
    /// the image (yanked or not) as one candidate.
    ///
    /// ```
    /// use basefit::model::{Build, Release};
    /// let a = Release {
    ///     version: semver::Version::new(1, 0, 0),
    ///     raw_version: None,
    ///     released: None,
    ///     runtime: None,
    ///     deps: Box::new([]),
    ///     build: Build { source: true, prebuilt: Box::new([]) },
    ///     native: None,
    ///     yanked: false,
    ///     file: 0,
    ///     line: 1,
    /// };
    /// let mut b = Release { version: semver::Version::new(1, 0, 1), yanked: true, line: 2, ..a.clone() };
    /// assert!(a.same_shape(&b));
    /// b.build.source = false;
    /// assert!(!a.same_shape(&b));
    /// ```
    pub fn same_shape(&self, other: &Release) -> bool {
        self.runtime == other.runtime
            && self.deps == other.deps
            && self.build == other.build
            && self.native == other.native
    }
}

/// A package: its releases in ascending version order (the `semver` crate's total order,
/// which follows Semantic Versioning precedence and breaks its ties by build metadata).
#[derive(Debug, Clone, PartialEq)]
pub struct Package {
    pub name: Box<str>,
    pub summary: Option<Box<str>>,
    /// Marked as a helper for building native extensions; depending on it hints at a native
    /// build.
    pub native_helper: bool,
    pub releases: Vec<Release>,
    /// False for names that only appear as dependencies.
    pub declared: bool,
    /// Version records of this package the loader left out (unreadable, unusable or
    /// repeated). A package without releases whose snapshot did publish some is explained
    /// as having none usable, not none published.
    pub left_out_releases: u32,
    /// Index into [`Registry::files`] and line of the package record.
    pub file: u16,
    pub line: u32,
}

/// The whole registry snapshot.
#[derive(Debug, Clone, Default)]
pub struct Registry {
    pub packages: Vec<Package>,
    pub requirements: Vec<Requirement>,
    pub platforms: Vec<Platform>,
    /// Input files, referenced by index from packages and releases.
    pub files: Vec<String>,
    names: FxHashMap<Box<str>, PackageId>,
    req_index: FxHashMap<Box<str>, ReqId>,
    platform_index: FxHashMap<Platform, PlatformId>,
}

impl Registry {
    pub fn new() -> Registry {
        Registry::default()
    }

    pub fn id(&self, name: &str) -> Option<PackageId> {
        self.names.get(name).copied()
    }

    pub fn package(&self, id: PackageId) -> &Package {
        &self.packages[id.0 as usize]
    }

    pub fn package_mut(&mut self, id: PackageId) -> &mut Package {
        &mut self.packages[id.0 as usize]
    }

    pub fn name(&self, id: PackageId) -> &str {
        &self.packages[id.0 as usize].name
    }

    pub fn requirement(&self, id: ReqId) -> &Requirement {
        &self.requirements[id.0 as usize]
    }

    pub fn platform(&self, id: PlatformId) -> &Platform {
        &self.platforms[id.0 as usize]
    }

    pub fn ids(&self) -> impl Iterator<Item = PackageId> + use<> {
        (0..self.packages.len() as u32).map(PackageId)
    }

    pub fn release_count(&self) -> usize {
        self.packages.iter().map(|p| p.releases.len()).sum()
    }

    /// Declared packages, most depended-on first (counting runtime dependencies of every
    /// release), ties by id: the packages whose predictions matter to most users, as the
    /// benchmark and tests choose them from synthetic registries.
    pub fn most_depended_on(&self) -> Vec<(PackageId, u64)> {
        let mut dependents = vec![0u64; self.packages.len()];
        for p in &self.packages {
            for r in &p.releases {
                for d in r.runtime_deps() {
                    dependents[d.package.0 as usize] += 1;
                }
            }
        }
        let mut ids: Vec<(PackageId, u64)> = self
            .ids()
            .filter(|id| self.package(*id).declared)
            .map(|id| (id, dependents[id.0 as usize]))
            .collect();
        ids.sort_by(|a, b| b.1.cmp(&a.1).then(a.0.cmp(&b.0)));
        ids
    }

    pub fn add_file(&mut self, file: &str) -> u16 {
        if let Some(i) = self.files.iter().position(|f| f == file) {
            return i as u16;
        }
        self.files.push(file.to_string());
        (self.files.len() - 1) as u16
    }

    /// The id for `name`, creating an undeclared package when it is new.
    pub fn intern_package(&mut self, name: &str) -> PackageId {
        if let Some(id) = self.names.get(name) {
            return *id;
        }
        let id = PackageId(self.packages.len() as u32);
        self.packages.push(Package {
            name: name.into(),
            summary: None,
            native_helper: false,
            releases: Vec::new(),
            declared: false,
            left_out_releases: 0,
            file: 0,
            line: 0,
        });
        self.names.insert(name.into(), id);
        id
    }

    /// [`Registry::intern_package`] for a name that may be unusable: `check` runs once, on a
    /// name the registry does not hold yet, and a name it refuses is not added (its error is
    /// returned). Readers of millions of rows check each distinct name once this way, with
    /// no lookup beyond the one interning takes.
    pub fn intern_package_checked<E>(
        &mut self,
        name: &str,
        check: impl FnOnce(&str) -> Result<(), E>,
    ) -> Result<PackageId, E> {
        if let Some(id) = self.names.get(name) {
            return Ok(*id);
        }
        check(name)?;
        Ok(self.intern_package(name))
    }

    /// The id of requirement `text`, parsing it on first sight. Texts that parse to the same
    /// normalised text (`^1` and ` ^1 `, `` and `*`) share one id, so comparing ids agrees
    /// with comparing the texts a requirement prints as (which re-plan fingerprints hash).
    pub fn intern_requirement(&mut self, text: &str) -> Result<ReqId, String> {
        if let Some(id) = self.req_index.get(text) {
            return Ok(*id);
        }
        let req = Requirement::parse(text)?;
        let id = match self.req_index.get(req.text.as_str()) {
            Some(id) => *id,
            None => {
                let id = ReqId(self.requirements.len() as u32);
                self.req_index.insert(req.text.as_str().into(), id);
                self.requirements.push(req);
                id
            }
        };
        self.req_index.insert(text.into(), id);
        Ok(id)
    }

    pub fn intern_platform(&mut self, platform: Platform) -> PlatformId {
        if let Some(id) = self.platform_index.get(&platform) {
            return *id;
        }
        let id = PlatformId(self.platforms.len() as u16);
        self.platforms.push(platform.clone());
        self.platform_index.insert(platform, id);
        id
    }

    /// The index of `version` among the package's releases.
    pub fn find_release(&self, id: PackageId, version: &Version) -> Option<usize> {
        self.package(id)
            .releases
            .binary_search_by(|r| r.version.cmp(version))
            .ok()
    }

    /// [`Registry::find_release`], or else the first release of the same precedence: build
    /// metadata does not count in precedence (Semantic Versioning 2.0.0, section 10), so an
    /// install recording `1.4.2+b` took the release the snapshot lists as `1.4.2`, built
    /// otherwise. Releases are sorted by version, so those of one precedence stand together.
    pub fn find_release_by_precedence(&self, id: PackageId, version: &Version) -> Option<usize> {
        self.find_release(id, version).or_else(|| {
            let releases = &self.package(id).releases;
            let at = releases.partition_point(|r| r.version.cmp_precedence(version).is_lt());
            releases
                .get(at)
                .filter(|r| r.version.cmp_precedence(version).is_eq())
                .map(|_| at)
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::load::{RegistryBuilder, registry::read_yaml_str};

    fn registry(yaml: &str) -> Registry {
        let mut b = RegistryBuilder::new();
        read_yaml_str("r.yaml", yaml, &mut b).unwrap();
        b.finish().0
    }

    #[test]
    fn a_release_is_found_by_precedence_only_when_one_of_that_precedence_is_listed() {
        let r = registry(
            "packages:\n- name: kelp\n  versions:\n  - {version: 1.4.1}\n  - {version: 1.4.2+b}\n  - {version: 1.4.3}\n",
        );
        let kelp = r.id("kelp").unwrap();
        let v = |s: &str| Version::parse(s).unwrap();
        // Build metadata does not count in precedence (Semantic Versioning 2.0.0, section 10),
        // but it does in the exact lookup.
        assert_eq!(r.find_release(kelp, &v("1.4.2")), None);
        assert_eq!(r.find_release(kelp, &v("1.4.2+b")), Some(1));
        assert_eq!(r.find_release_by_precedence(kelp, &v("1.4.2")), Some(1));
        assert_eq!(
            r.find_release_by_precedence(kelp, &v("1.4.2+other")),
            Some(1)
        );
        // A precedence the snapshot does not list is not read as its neighbour.
        assert_eq!(r.find_release_by_precedence(kelp, &v("1.4.0")), None);
        assert_eq!(r.find_release_by_precedence(kelp, &v("1.4.2-rc.1")), None);
        assert_eq!(r.find_release_by_precedence(kelp, &v("1.5.0")), None);
    }

    #[test]
    fn century_years_are_leap_years_only_when_divisible_by_400() {
        // Gregorian calendar rule (common practice, no source).
        assert!(ReleaseDate::parse("1900-02-29").is_none());
        assert!(ReleaseDate::parse("2100-02-29").is_none());
        assert_eq!(
            ReleaseDate::parse("2000-02-29"),
            Some(ReleaseDate(20000229))
        );
    }

    #[test]
    fn most_depended_on_counts_runtime_dependencies_and_breaks_ties_by_id() {
        let r = registry(
            "packages:\n\
             - name: app\n  versions:\n  - {version: 1.0.0, depends: [{name: lib, req: '^1'}, {name: tool, req: '^1', kind: development}]}\n  - {version: 1.1.0, depends: [{name: tool, req: '^1', kind: development}]}\n\
             - name: lib\n  versions:\n  - {version: 1.0.0}\n\
             - name: tool\n  versions:\n  - {version: 1.0.0}\n\
             - name: zed\n  versions:\n  - {version: 1.0.0}\n",
        );
        let ranked: Vec<(&str, u64)> = r
            .most_depended_on()
            .into_iter()
            .map(|(id, n)| (r.name(id), n))
            .collect();
        // Development dependencies never count; the three with none follow in id order.
        let mut tied = vec!["app", "tool", "zed"];
        tied.sort_by_key(|n| r.id(n).unwrap());
        assert_eq!(ranked[0], ("lib", 1));
        assert_eq!(ranked[1..].iter().map(|x| x.0).collect::<Vec<_>>(), tied);
        assert!(ranked[1..].iter().all(|x| x.1 == 0));
    }
}
