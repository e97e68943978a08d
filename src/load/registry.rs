//! The registry snapshot in YAML, and the assembly step shared with the bulk CSV reader.

use super::diag::{
    At, BadInput, Ledger, Origin, ProblemKind, RecordKind, bad_name_detail, name_problem,
    read_text, shown_name,
};
use super::lenient::{VersionRead, read_version};
use super::yaml::{self, Ctx, Node};
use crate::model::{
    Build, Dep, DepKind, NativeHints, PackageId, Platform, Registry, Release, ReleaseDate, ReqId,
};
use crate::solve::image::admits_some_runtime;
use rayon::prelude::*;
use rustc_hash::FxHashMap;
use std::path::Path;

/// Builds a [`Registry`] from records read in any format, counting every record in the
/// ledger. The YAML and bulk CSV readers both feed it, so both report problems alike.
///
/// A version record goes through two steps: [`RegistryBuilder::stage_release`] checks its
/// own fields, [`RegistryBuilder::commit_release`] adds it with its dependencies. The YAML
/// reader has both at hand and calls [`RegistryBuilder::add_release`], which does the two
/// at once; the bulk reader stages every version before it reads the dependency file.
///
/// ```
/// use basefit::load::RegistryBuilder;
/// use basefit::load::diag::At;
/// use basefit::load::registry::{RawDep, RawRelease};
/// use basefit::model::DepKind;
/// let mut b = RegistryBuilder::new();
/// let id = b.declare_package("r.yaml", 1, "pkg-a", None, false);
/// b.add_release(id, "r.yaml", 2, RawRelease {
///     version: At::new("v1.2", 2),
///     deps: vec![RawDep {
///         name: At::new("pkg-b", 3),
///         req: At::new("^1", 4),
///         kind: DepKind::Runtime,
///     }],
///     ..RawRelease::default()
/// });
/// let (registry, ledger) = b.finish();
/// assert_eq!(registry.release_count(), 1);
/// assert!(ledger.unbalanced().is_empty());
/// ```
pub struct RegistryBuilder {
    pub registry: Registry,
    pub ledger: Ledger,
    /// Where the name and requirement of each dependency of a version record are written,
    /// for the registry-wide checks to name. Kept beside the registry rather than in each
    /// [`Dep`]: the solver walks millions of those, and only a reported problem needs a line.
    /// Versions read from the bulk format have none: [`RegistryBuilder::finish_unplaced`]
    /// lists their problems for the bulk reader to place on request.
    dep_lines: FxHashMap<ReleaseKey, Box<[DepLines]>>,
    /// Per requirement id, whether some runtime version meets it, once asked: a bulk dump
    /// repeats a few runtime requirements over millions of versions.
    admits_runtime: Vec<Option<bool>>,
}

/// A problem about a dependency that the registry-wide checks could only report at its
/// version's record, because the builder was never told the dependency's own line (the bulk
/// reader keeps none: a line for each of millions of dependencies would cost more than the
/// few problems are worth). The reader that can find the dependency's record keeps what it
/// takes to move it there when asked ([`Ledger::place_deferred`]).
#[derive(Debug, Clone, Copy)]
pub(crate) struct Unplaced {
    /// Index into the ledger's problems.
    pub problem: usize,
    pub package: PackageId,
    /// Index into the package's releases, once sorted.
    pub release: usize,
    /// Index into the release's dependencies, of every kind.
    pub dep: usize,
}

/// A release as the registry-wide checks find it after sorting: its package, file, line and
/// version. Two records on one line (flow style) differ in package or version, and of two
/// with the same version on one line only the first is kept, as in [`RegistryBuilder::finish`].
type ReleaseKey = (PackageId, u16, u32, semver::Version);

/// The lines of one dependency's name and requirement (its name's line when it gives none).
#[derive(Clone, Copy)]
struct DepLines {
    name: usize,
    req: usize,
}

/// The fields of one version record as written, before interning.
#[derive(Default)]
pub struct RawRelease<'a> {
    pub version: At<&'a str>,
    pub released: Option<At<&'a str>>,
    pub runtime: Option<At<&'a str>>,
    pub deps: Vec<RawDep<'a>>,
    pub source_build: bool,
    /// Platforms with a prebuilt build, as written: one that cannot be read leaves the
    /// version out (see [`VersionFields::bad_value`]).
    pub prebuilt: Vec<At<&'a str>>,
    pub native: Option<NativeHints>,
    pub yanked: bool,
}

/// One dependency of a version record as written.
pub struct RawDep<'a> {
    pub name: At<&'a str>,
    /// `*` at the name's line when the record gives none.
    pub req: At<&'a str>,
    pub kind: DepKind,
}

/// The fields of a version record other than its dependencies, with platforms interned.
///
/// Each field keeps its own line: a problem with a value names the value's line, which in a
/// record of many lines is not the record's.
pub struct VersionFields<'a> {
    /// The version as written; read leniently.
    pub version: At<&'a str>,
    /// Release date as written (`YYYY-MM-DD`).
    pub released: Option<At<&'a str>>,
    /// Requirement on the runtime version, as written.
    pub runtime: Option<At<&'a str>>,
    pub build: Build,
    /// The first value that cannot be used (a `prebuilt` platform that cannot be read, an
    /// empty native library name), as the problem's detail at its line; `build` then lists no
    /// platform. It leaves the version out as a `bad-value`, as an unreadable runtime
    /// requirement leaves it out: the rest of the file is still usable.
    pub bad_value: Option<At<String>>,
    pub native: Option<NativeHints>,
    pub yanked: bool,
}

/// Reads the platforms of a `prebuilt` list, or says why the first unreadable one cannot be
/// read, at its line. All are read before any is interned, so a version left out for one
/// adds no platform to the registry, in whichever format it was written.
pub fn read_platforms<'t>(
    written: impl IntoIterator<Item = At<&'t str>>,
) -> Result<Vec<Platform>, At<String>> {
    written
        .into_iter()
        .map(|p| Platform::parse(p.value).map_err(|why| At::new(why, p.line)))
        .collect()
}

/// The problem's detail for a `prebuilt` platform that cannot be read, from
/// [`read_platforms`]'s why, for [`VersionFields::bad_value`].
pub fn unreadable_platform(why: At<String>) -> At<String> {
    At::new(format!("prebuilt platform {}", why.value), why.line)
}

/// A version record whose own fields passed their checks, waiting for its dependencies.
pub struct StagedRelease {
    /// The package the version belongs to.
    pub package: PackageId,
    release: Release,
}

impl StagedRelease {
    /// The release without its dependencies yet, for a reader that places it itself and
    /// fills in [`Release::deps`] later.
    pub fn into_release(self) -> Release {
        self.release
    }
}

/// The first dependency of a staged version that cannot be used (its requirement cannot be
/// read, or its name is no name); it leaves the whole version out, as in every format.
pub struct BadDependency<'a> {
    /// Where the dependency's value at fault is.
    pub file: &'a str,
    pub line: usize,
    /// `unreadable-requirement` or `bad-value`.
    pub kind: ProblemKind,
    /// The problem's detail.
    pub detail: String,
}

impl<'a> BadDependency<'a> {
    /// A dependency on `name` whose requirement cannot be read, for `why`.
    pub fn requirement(file: &'a str, line: usize, name: &str, why: &str) -> Self {
        BadDependency {
            file,
            line,
            kind: ProblemKind::UnreadableRequirement,
            detail: format!("requirement on {name}: {why}"),
        }
    }

    /// A dependency whose name [`name_problem`] refuses, for `why`.
    pub fn name(file: &'a str, line: usize, name: &str, why: &str) -> Self {
        BadDependency {
            file,
            line,
            kind: ProblemKind::BadValue,
            detail: bad_name_detail("dependency name", name, why),
        }
    }
}

impl Default for RegistryBuilder {
    fn default() -> Self {
        Self::new()
    }
}

impl RegistryBuilder {
    pub fn new() -> Self {
        RegistryBuilder {
            registry: Registry::new(),
            ledger: Ledger::default(),
            dep_lines: FxHashMap::default(),
            admits_runtime: Vec::new(),
        }
    }

    /// Declares a package record; a second record of the same name merges into the first.
    pub fn declare_package(
        &mut self,
        file: &str,
        line: usize,
        name: &str,
        summary: Option<&str>,
        native_helper: bool,
    ) -> PackageId {
        self.ledger.read(RecordKind::Package);
        self.ledger.used(RecordKind::Package);
        let file_index = self.registry.add_file(file);
        let id = self.registry.intern_package(name);
        let pkg = self.registry.package(id);
        if pkg.declared {
            let first = format!("{}:{}", self.registry.files[pkg.file as usize], pkg.line);
            self.ledger.note(
                ProblemKind::DuplicatePackage,
                Origin {
                    file: file.to_string(),
                    line,
                },
                name,
                format!("package already declared at {first}; versions merged"),
            );
            let pkg = self.registry.package_mut(id);
            pkg.native_helper |= native_helper;
            if pkg.summary.is_none() {
                pkg.summary = summary.map(Into::into);
            }
        } else {
            let pkg = self.registry.package_mut(id);
            pkg.declared = true;
            pkg.file = file_index;
            pkg.line = line as u32;
            pkg.summary = summary.map(Into::into);
            pkg.native_helper = native_helper;
        }
        id
    }

    /// Adds one version record of `package` with its dependencies, or reports why it is
    /// left out. Its dependencies are counted as dependency records.
    pub fn add_release(
        &mut self,
        package: PackageId,
        file: &str,
        line: usize,
        raw: RawRelease<'_>,
    ) {
        self.add_release_unless(package, file, line, raw, None);
    }

    /// [`RegistryBuilder::add_release`] for a record in which the reader found a value it
    /// cannot use: `bad_value`, when given, is the problem's detail at that value's line, and
    /// leaves the version out (see [`VersionFields::bad_value`]) after its other checks.
    pub fn add_release_unless(
        &mut self,
        package: PackageId,
        file: &str,
        line: usize,
        raw: RawRelease<'_>,
        bad_value: Option<At<String>>,
    ) {
        let dep_count = raw.deps.len() as u64;
        self.ledger.read_many(RecordKind::Dependency, dep_count);
        let (prebuilt, bad_platform) = match read_platforms(raw.prebuilt) {
            Ok(platforms) => (
                platforms
                    .into_iter()
                    .map(|p| self.registry.intern_platform(p))
                    .collect(),
                None,
            ),
            Err(why) => (Box::default(), Some(unreadable_platform(why))),
        };
        let fields = VersionFields {
            version: raw.version,
            released: raw.released,
            runtime: raw.runtime,
            build: Build {
                source: raw.source_build,
                prebuilt,
            },
            bad_value: bad_platform.or(bad_value),
            native: raw.native,
            yanked: raw.yanked,
        };
        let Some(staged) = self.stage_release(package, file, line, fields) else {
            self.ledger
                .left_out_with_owner(RecordKind::Dependency, dep_count);
            return;
        };
        let mut deps = Vec::with_capacity(raw.deps.len());
        let mut bad = None;
        for d in &raw.deps {
            // Checked before interning, so a name no report should print never enters the
            // registry.
            if let Some(why) = name_problem(d.name.value) {
                bad = Some(BadDependency::name(file, d.name.line, d.name.value, why));
                break;
            }
            if d.req.value.trim().is_empty() {
                let version = &staged.release.version;
                self.ledger.note(
                    ProblemKind::EmptyRequirement,
                    Origin {
                        file: file.to_string(),
                        line: d.req.line,
                    },
                    format!("{}@{version}", self.registry.name(package)),
                    format!(
                        "requirement on {} is empty: read as any version",
                        d.name.value
                    ),
                );
            }
            match self.registry.intern_requirement(d.req.value) {
                Ok(req) => deps.push(Dep {
                    package: self.registry.intern_package(d.name.value),
                    req,
                    kind: d.kind,
                }),
                Err(why) => {
                    bad = Some(BadDependency::requirement(
                        file,
                        d.req.line,
                        d.name.value,
                        &why,
                    ));
                    break;
                }
            }
        }
        if bad.is_none() && !deps.is_empty() {
            let r = &staged.release;
            let key = (package, r.file, r.line, r.version.clone());
            self.dep_lines.entry(key).or_insert_with(|| {
                raw.deps
                    .iter()
                    .map(|d| DepLines {
                        name: d.name.line,
                        req: d.req.line,
                    })
                    .collect()
            });
        }
        self.commit_release(staged, deps.into_boxed_slice(), dep_count, bad);
    }

    /// Checks the fields of a version record other than its dependencies. Counts the record
    /// as read; returns `None` when it is left out (the problem is in the ledger).
    ///
    /// Notes that do not leave the record out (a normalised version, an unreadable date) are
    /// made here, so a record left out later for a bad dependency still carries them.
    pub fn stage_release(
        &mut self,
        package: PackageId,
        file: &str,
        line: usize,
        fields: VersionFields<'_>,
    ) -> Option<StagedRelease> {
        self.ledger.read(RecordKind::Version);
        let origin = |line| Origin {
            file: file.to_string(),
            line,
        };
        let written = fields.version;
        let (version, raw_version) = match read_version(written.value) {
            VersionRead::Strict(v) => (v, None),
            VersionRead::Normalised(v, how) => {
                self.ledger.note(
                    ProblemKind::NormalisedVersion,
                    origin(written.line),
                    format!("{}@{}", self.registry.name(package), written.value),
                    format!("read as {v} ({how})"),
                );
                (v, Some(written.value.into()))
            }
            VersionRead::Refused(why) => {
                let subject = format!("{}@{}", self.registry.name(package), written.value);
                self.leave_out_release(
                    package,
                    ProblemKind::UnreadableVersion,
                    origin(written.line),
                    subject,
                    why,
                );
                return None;
            }
        };
        let file_index = self.registry.add_file(file);
        let subject = |registry: &Registry| format!("{}@{version}", registry.name(package));
        let released = match fields.released {
            None => None,
            Some(At { value: text, line }) => {
                let date = ReleaseDate::parse(text);
                if date.is_none() {
                    self.ledger.note(
                        ProblemKind::UnreadableDate,
                        origin(line),
                        subject(&self.registry),
                        format!("`{text}` is not a date (expected YYYY-MM-DD); ignored"),
                    );
                }
                date
            }
        };
        if let Some(At { value: text, line }) = fields.runtime
            && text.trim().is_empty()
        {
            self.ledger.note(
                ProblemKind::EmptyRequirement,
                origin(line),
                subject(&self.registry),
                "runtime requirement is empty: read as any runtime",
            );
        }
        let runtime = match fields.runtime {
            None => None,
            Some(At { value: text, line }) => match self.registry.intern_requirement(text) {
                Ok(id) => {
                    // Kept: it is what the registry says. But every cell would blame the
                    // image's runtime for it, which no image can change.
                    let slot = id.0 as usize;
                    if self.admits_runtime.len() <= slot {
                        self.admits_runtime.resize(slot + 1, None);
                    }
                    let req = self.registry.requirement(id);
                    let admits =
                        *self.admits_runtime[slot].get_or_insert_with(|| admits_some_runtime(req));
                    if !admits {
                        let detail = format!(
                            "runtime requirement `{req}` admits no runtime version, so no image \
                             can install this release"
                        );
                        self.ledger.note(
                            ProblemKind::UnsatisfiableRuntime,
                            origin(line),
                            subject(&self.registry),
                            detail,
                        );
                    }
                    Some(id)
                }
                Err(why) => {
                    let subject = subject(&self.registry);
                    self.leave_out_release(
                        package,
                        ProblemKind::UnreadableRequirement,
                        origin(line),
                        subject,
                        format!("runtime requirement {why}"),
                    );
                    return None;
                }
            },
        };
        // A native library or file name is printed in evidence lines: a line break in it
        // would forge report lines, and no library or file is named so. A blank one would
        // make cells at risk for a library nobody can name.
        let unusable_name = fields.native.as_ref().and_then(|n| {
            // Worded as the YAML reader words an empty library name.
            let named = |what: &'static str, expected: &str, values: &'_ [String]| {
                values.iter().find_map(|v| {
                    let why = if v.trim().is_empty() {
                        format!("`{v}` is empty")
                    } else if v.chars().any(char::is_control) {
                        format!("{v:?} holds a control character")
                    } else {
                        return None;
                    };
                    Some(format!("native {what} name {why}; expected {expected}"))
                })
            };
            named("library", "a catalog id or a library name", &n.libraries)
                .or_else(|| named("file", "a path as the release ships it", &n.files))
        });
        let bad_value = fields
            .bad_value
            .or_else(|| unusable_name.map(|why| At::new(why, line)));
        if let Some(At { value: why, line }) = bad_value {
            let subject = subject(&self.registry);
            self.leave_out_release(package, ProblemKind::BadValue, origin(line), subject, why);
            return None;
        }
        // Kept, as a runtime no version meets is: it is what the registry says. But each of
        // its cells would blame the image's platform, and an export that lost its builds
        // column reads exactly so.
        if !fields.build.source && fields.build.prebuilt.is_empty() {
            self.ledger.note(
                ProblemKind::NoBuildAnywhere,
                origin(line),
                subject(&self.registry),
                "neither a source build nor a prebuilt build for any platform, so no image can \
                 install this release",
            );
        }
        Some(StagedRelease {
            package,
            release: Release {
                version,
                raw_version,
                released,
                runtime,
                deps: Box::default(),
                build: fields.build,
                native: fields.native.map(Box::new),
                yanked: fields.yanked,
                file: file_index,
                line: line as u32,
            },
        })
    }

    /// Adds a staged version with its dependencies, or leaves it out when `bad` names a
    /// dependency whose requirement cannot be read. `dep_count` is the number of dependency
    /// records that belong to the version (read already), so they are left out with it.
    pub fn commit_release(
        &mut self,
        staged: StagedRelease,
        deps: Box<[Dep]>,
        dep_count: u64,
        bad: Option<BadDependency<'_>>,
    ) {
        let StagedRelease {
            package,
            mut release,
        } = staged;
        if let Some(bad) = bad {
            self.leave_out_for_dependency(package, &release.written_version(), dep_count, bad);
            return;
        }
        release.deps = deps;
        self.registry.package_mut(package).releases.push(release);
    }

    /// Records `package`@`version` as left out for its first unusable dependency, with its
    /// `dep_count` dependency records. The caller drops the release itself.
    pub fn leave_out_for_dependency(
        &mut self,
        package: PackageId,
        written_version: &str,
        dep_count: u64,
        bad: BadDependency<'_>,
    ) {
        let subject = format!("{}@{written_version}", self.registry.name(package));
        let origin = Origin {
            file: bad.file.to_string(),
            line: bad.line,
        };
        self.leave_out_release(package, bad.kind, origin, subject, bad.detail);
        self.ledger
            .left_out_with_owner(RecordKind::Dependency, dep_count);
    }

    /// Leaves out the release at `place` of `package` as a duplicate of the one at
    /// `first_place`, which is itself left out for one of its dependencies (bulk rows attach
    /// dependencies to the first row with a version's text, never to its twin).
    pub(crate) fn leave_out_twin_of_dropped(
        &mut self,
        package: PackageId,
        place: u32,
        first_place: u32,
    ) {
        let pkg = self.registry.package(package);
        let (Some(twin), Some(first)) = (
            pkg.releases.get(place as usize),
            pkg.releases.get(first_place as usize),
        ) else {
            return;
        };
        let origin = origin_of(&self.registry.files, twin.file, twin.line);
        let subject = format!("{}@{}", pkg.name, twin.written_version());
        let detail = format!(
            "same version as the record at line {}, which is left out for a dependency",
            first.line
        );
        self.leave_out_release(
            package,
            ProblemKind::DuplicateVersion,
            origin,
            subject,
            detail,
        );
    }

    /// Leaves a version record of `package` out for `kind`, and counts it on the package.
    fn leave_out_release(
        &mut self,
        package: PackageId,
        kind: ProblemKind,
        origin: Origin,
        subject: String,
        detail: impl Into<String>,
    ) {
        self.ledger
            .leave_out(RecordKind::Version, kind, origin, subject, detail);
        let pkg = self.registry.package_mut(package);
        pkg.left_out_releases = pkg.left_out_releases.saturating_add(1);
    }

    /// Leaves out a package record whose name [`name_problem`] refuses (for `why`), with its
    /// version and dependency records: the name matches nothing a priority list or result
    /// names, and would go into every report that names the package.
    fn leave_out_package(
        &mut self,
        file: &str,
        name: At<&str>,
        why: &str,
        releases: &[(usize, RawRelease<'_>, Option<At<String>>)],
    ) {
        self.ledger.read(RecordKind::Package);
        self.ledger.leave_out(
            RecordKind::Package,
            ProblemKind::BadValue,
            Origin {
                file: file.to_string(),
                line: name.line,
            },
            shown_name(name.value),
            bad_name_detail("package name", name.value, why),
        );
        let deps: usize = releases.iter().map(|(_, r, _)| r.deps.len()).sum();
        for (kind, count) in [
            (RecordKind::Version, releases.len()),
            (RecordKind::Dependency, deps),
        ] {
            self.ledger.read_many(kind, count as u64);
            self.ledger.left_out_with_owner(kind, count as u64);
        }
    }

    /// Sorts releases, drops duplicate versions, counts what is used and runs the
    /// registry-wide checks.
    pub fn finish(self) -> (Registry, Ledger) {
        let (registry, ledger, _) = self.finish_unplaced();
        (registry, ledger)
    }

    /// [`RegistryBuilder::finish`], also listing the problems about dependencies whose lines
    /// it was not given; each is in the ledger at its version's record.
    pub(crate) fn finish_unplaced(mut self) -> (Registry, Ledger, Vec<Unplaced>) {
        let registry = &mut self.registry;
        let ledger = &mut self.ledger;
        let (mut versions_used, mut deps_used, mut deps_dropped) = (0u64, 0u64, 0u64);
        for pkg in &mut registry.packages {
            // Stable sort: among equal versions the earlier record comes first and is kept.
            pkg.releases.sort_by(|a, b| a.version.cmp(&b.version));
            let has_duplicates = pkg
                .releases
                .windows(2)
                .any(|w| w[0].version == w[1].version);
            if has_duplicates {
                let files = &registry.files;
                let file_of = |r: &Release| origin_of(files, r.file, r.line).file;
                let mut kept: Vec<Release> = Vec::with_capacity(pkg.releases.len());
                for r in std::mem::take(&mut pkg.releases) {
                    match kept.last() {
                        Some(prev) if prev.version == r.version => {
                            deps_dropped += r.deps.len() as u64;
                            pkg.left_out_releases = pkg.left_out_releases.saturating_add(1);
                            ledger.leave_out(
                                RecordKind::Version,
                                ProblemKind::DuplicateVersion,
                                origin_of(files, r.file, r.line),
                                format!("{}@{}", pkg.name, r.written_version()),
                                if prev.file == r.file {
                                    format!("same version as the record at line {}", prev.line)
                                } else {
                                    format!(
                                        "same version as the record at {}:{}",
                                        file_of(prev),
                                        prev.line
                                    )
                                },
                            );
                        }
                        _ => kept.push(r),
                    }
                }
                pkg.releases = kept;
            }
            // Kept apart from duplicates: both are used, but which one is "newest" is decided
            // by the build text, which Semantic Versioning 2.0.0 (section 10) says carries no
            // precedence; a registry holding both should know.
            for w in pkg.releases.windows(2) {
                if w[0].version.cmp_precedence(&w[1].version) == std::cmp::Ordering::Equal {
                    ledger.note(
                        ProblemKind::SamePrecedence,
                        origin_of(&registry.files, w[1].file, w[1].line),
                        format!("{}@{}", pkg.name, w[1].written_version()),
                        format!(
                            "differs from {} only in build metadata, which gives no precedence; \
                             basefit takes {} as the newer, by the text after `+`",
                            w[0].version, w[1].version
                        ),
                    );
                }
            }
            versions_used += pkg.releases.len() as u64;
            deps_used += pkg
                .releases
                .iter()
                .map(|r| r.deps.len() as u64)
                .sum::<u64>();
        }
        ledger.used_many(RecordKind::Version, versions_used);
        ledger.used_many(RecordKind::Dependency, deps_used);
        ledger.left_out_with_owner(RecordKind::Dependency, deps_dropped);
        let unplaced = registry_checks(registry, ledger, &self.dep_lines);
        (self.registry, self.ledger, unplaced)
    }
}

/// Where a record is: a file index and a line, as packages and releases each keep them.
fn origin_of(files: &[String], file: u16, line: u32) -> Origin {
    Origin {
        file: files.get(file as usize).cloned().unwrap_or_default(),
        line: line as usize,
    }
}

/// Registry-wide data-quality checks: unknown dependency names, requirements nothing
/// satisfies, packages with nothing installable. Returns the problems about dependencies of
/// releases without an entry in `dep_lines`.
fn registry_checks(
    registry: &Registry,
    ledger: &mut Ledger,
    dep_lines: &FxHashMap<ReleaseKey, Box<[DepLines]>>,
) -> Vec<Unplaced> {
    // Each distinct (target, requirement) pair is matched against the target's versions once,
    // in parallel: at registry scale this is millions of pairs.
    let mut pairs: FxHashMap<(PackageId, ReqId), bool> = FxHashMap::default();
    for pkg in &registry.packages {
        for r in &pkg.releases {
            for d in r.runtime_deps() {
                pairs.entry((d.package, d.req)).or_insert(false);
            }
        }
    }
    let mut keys: Vec<_> = pairs.into_keys().collect();
    keys.sort_unstable();
    let satisfiable: FxHashMap<_, bool> = keys
        .par_iter()
        .map(|&(target, req)| {
            let req_v = registry.requirement(req);
            // Newest first: requirements mostly admit recent versions, so the scan stops early.
            let ok = registry
                .package(target)
                .releases
                .iter()
                .rev()
                .any(|r| req_v.matches(&r.version));
            ((target, req), ok)
        })
        .collect();
    let mut unplaced = Vec::new();
    for (index, pkg) in registry.packages.iter().enumerate() {
        if !pkg.declared {
            continue;
        }
        let id = PackageId(index as u32);
        for (release, r) in pkg.releases.iter().enumerate() {
            let runtime_deps = r.deps.iter().enumerate();
            for (at, d) in runtime_deps.filter(|(_, d)| d.kind == DepKind::Runtime) {
                let target = registry.package(d.package);
                // The subject and detail are formatted only for a problem: this loop sees
                // every dependency.
                let (kind, detail, line): (_, _, fn(&DepLines) -> usize) = if !target.declared {
                    (
                        ProblemKind::UnknownDependency,
                        format!(
                            "depends on `{}`, which the registry does not have",
                            target.name
                        ),
                        |l| l.name,
                    )
                } else if satisfiable.get(&(d.package, d.req)) == Some(&false) {
                    // The versions were published; none could be read, which is another fix.
                    let why = match (target.releases.is_empty(), target.left_out_releases) {
                        (true, n) if n > 0 => format!(
                            "but every version record of {} was left out ({n}; see its problems)",
                            target.name
                        ),
                        _ => "which no published version satisfies".to_string(),
                    };
                    (
                        ProblemKind::UnsatisfiableRequirement,
                        format!(
                            "requires {} {}, {why}",
                            target.name,
                            registry.requirement(d.req)
                        ),
                        |l| l.req,
                    )
                } else {
                    continue;
                };
                let mut origin = origin_of(&registry.files, r.file, r.line);
                // Looked up only for a problem: the key clones the version.
                match dep_lines.get(&(id, r.file, r.line, r.version.clone())) {
                    Some(lines) => origin.line = lines.get(at).map_or(origin.line, line),
                    None => unplaced.push(Unplaced {
                        problem: ledger.problems.len(),
                        package: id,
                        release,
                        dep: at,
                    }),
                }
                ledger.note(
                    kind,
                    origin,
                    format!("{}@{}", pkg.name, r.written_version()),
                    detail,
                );
            }
        }
        if pkg.releases.is_empty() {
            ledger.note(
                ProblemKind::NoVersions,
                origin_of(&registry.files, pkg.file, pkg.line),
                &*pkg.name,
                "no usable version record",
            );
        } else if pkg.releases.iter().all(|r| r.yanked) {
            ledger.note(
                ProblemKind::NoInstallableVersion,
                origin_of(&registry.files, pkg.file, pkg.line),
                &*pkg.name,
                match pkg.releases.len() {
                    1 => "its only version is yanked".to_string(),
                    n => format!("all {n} versions are yanked"),
                },
            );
        }
    }
    unplaced
}

const TOP_FIELDS: &[&str] = &["packages"];
const PACKAGE_FIELDS: &[&str] = &["name", "summary", "native_helper", "versions"];
const VERSION_FIELDS: &[&str] = &[
    "version", "released", "runtime", "yanked", "depends", "builds", "native",
];
const DEP_FIELDS: &[&str] = &["name", "req", "kind"];
const BUILD_FIELDS: &[&str] = &["source", "prebuilt"];
const NATIVE_FIELDS: &[&str] = &["libraries", "files"];

/// Reads a registry snapshot in YAML into `builder`.
pub fn read_yaml(path: &Path, builder: &mut RegistryBuilder) -> Result<(), BadInput> {
    read_yaml_showing(path, builder, None)
}

/// [`read_yaml`], advancing `progress` by twice the file's size: the first half while the
/// text is parsed, the second while its packages are checked.
pub fn read_yaml_showing(
    path: &Path,
    builder: &mut RegistryBuilder,
    progress: Option<&indicatif::ProgressBar>,
) -> Result<(), BadInput> {
    let file = path.display().to_string();
    let text = read_text(path)?;
    read_yaml_text(&file, &text, builder, progress)
}

/// Reads registry YAML from a string; `file` names it in messages.
pub fn read_yaml_str(
    file: &str,
    text: &str,
    builder: &mut RegistryBuilder,
) -> Result<(), BadInput> {
    read_yaml_text(file, text, builder, None)
}

fn read_yaml_text(
    file: &str,
    text: &str,
    builder: &mut RegistryBuilder,
    bar: Option<&indicatif::ProgressBar>,
) -> Result<(), BadInput> {
    let start = bar.map_or(0, |b| b.position());
    let size = text.len() as u64;
    let progress = bar.map(|bar| yaml::Progress { bar, start });
    let doc = yaml::parse_showing(file, text, progress.as_ref())?;
    let ctx = Ctx { file };
    let top = ctx.map(&doc, "registry", TOP_FIELDS)?;
    let packages = top.seq("packages")?;
    if top.get("packages").is_none() {
        return Err(ctx.err(&doc, "registry: missing required field `packages`"));
    }
    // Schema errors are collected over the whole file before anything is added, so a
    // malformed file adds nothing and reports many errors at once.
    let count = packages.len().max(1) as u64;
    let mut done = 0;
    let parsed = yaml::collect_errors(packages, |node| {
        if let Some(bar) = bar {
            bar.set_position(start + size + size * done / count);
        }
        done += 1;
        parse_package(ctx, node)
    })?;
    for pkg in parsed {
        if let Some(why) = name_problem(pkg.name.value) {
            builder.leave_out_package(file, pkg.name, why, &pkg.releases);
            continue;
        }
        let id = builder.declare_package(
            file,
            pkg.line,
            pkg.name.value,
            pkg.summary,
            pkg.native_helper,
        );
        for (line, raw, bad_value) in pkg.releases {
            builder.add_release_unless(id, file, line, raw, bad_value);
        }
    }
    // Freeing a registry-sized tree takes a noticeable while; the bar fills after it.
    drop(doc);
    if let Some(bar) = bar {
        bar.set_position(start + 2 * size);
    }
    Ok(())
}

struct ParsedPackage<'a> {
    line: usize,
    name: At<&'a str>,
    summary: Option<&'a str>,
    native_helper: bool,
    releases: Vec<(usize, RawRelease<'a>, Option<At<String>>)>,
}

fn parse_package<'a>(ctx: Ctx<'_>, node: &'a Node) -> Result<ParsedPackage<'a>, BadInput> {
    let m = ctx.map(node, "package", PACKAGE_FIELDS)?;
    let name = m.required_str_at("name")?;
    if name.value.trim().is_empty() {
        return Err(BadInput::at(
            ctx.file,
            name.line,
            "package: `name` is empty",
        ));
    }
    let releases = m
        .seq("versions")?
        .iter()
        .map(|v| {
            let (raw, bad_value) = parse_release(ctx, v)?;
            Ok((v.line, raw, bad_value))
        })
        .collect::<Result<Vec<_>, BadInput>>()?;
    Ok(ParsedPackage {
        line: m.line(),
        name,
        summary: m.opt_str("summary")?,
        native_helper: m.opt_bool("native_helper")?.unwrap_or(false),
        releases,
    })
}

/// A version record as written, with the first value in it that cannot be used (see
/// [`RegistryBuilder::add_release_unless`]).
fn parse_release<'a>(
    ctx: Ctx<'_>,
    node: &'a Node,
) -> Result<(RawRelease<'a>, Option<At<String>>), BadInput> {
    let m = ctx.map(node, "version record", VERSION_FIELDS)?;
    let version = m.required_str_at("version")?;
    let mut deps = Vec::new();
    for d in m.seq("depends")? {
        let dm = ctx.map(d, "dependency", DEP_FIELDS)?;
        let name = dm.required_str_at("name")?;
        let req = dm.opt_text_at("req")?.unwrap_or(At::new("*", name.line));
        let kind = match dm.get("kind") {
            None => DepKind::Runtime,
            Some(k) => match ctx.str(k, "dependency `kind`")? {
                "runtime" => DepKind::Runtime,
                "development" => DepKind::Development,
                other => {
                    return Err(ctx.err(
                        k,
                        format!(
                            "dependency `kind`: expected runtime or development, found `{other}`"
                        ),
                    ));
                }
            },
        };
        deps.push(RawDep { name, req, kind });
    }
    let (source_build, prebuilt) = match m.get("builds") {
        // No builds given: the common case of a package published as source only.
        None => (true, Vec::new()),
        Some(b) => {
            let bm = ctx.map(b, "builds", BUILD_FIELDS)?;
            let source = bm.opt_bool("source")?.unwrap_or(false);
            let mut platforms = Vec::new();
            for p in bm.seq("prebuilt")? {
                platforms.push(At::new(ctx.str(p, "builds `prebuilt`")?, p.line));
            }
            (source, platforms)
        }
    };
    let mut bad_value = None;
    let native = match m.get("native") {
        None => None,
        Some(n) => {
            let nm = ctx.map(n, "native", NATIVE_FIELDS)?;
            let libraries = nm.str_list_at("libraries")?;
            // A blank name would make cells at risk for a library nobody can name: a list
            // item left empty is a mistake in the record. Refused here at its own line; the
            // builder refuses it again, at the version's line, for the bulk format.
            bad_value = libraries
                .iter()
                .find(|l| l.value.trim().is_empty())
                .map(|l| {
                    At::new(
                        format!(
                            "native library name `{}` is empty; expected a catalog id or a library name",
                            l.value
                        ),
                        l.line,
                    )
                });
            Some(NativeHints {
                libraries: libraries.into_iter().map(|l| l.value).collect(),
                files: nm.str_list("files")?,
            })
        }
    };
    let release = RawRelease {
        version,
        released: m.opt_str_at("released")?,
        runtime: m.opt_text_at("runtime")?,
        deps,
        source_build,
        prebuilt,
        native,
        yanked: m.opt_bool("yanked")?.unwrap_or(false),
    };
    Ok((release, bad_value))
}
