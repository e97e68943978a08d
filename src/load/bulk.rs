//! The bulk registry format: a registry dump as two CSV files, one row per version and one
//! row per dependency, read as streams (see `docs/bulk-format.md`).
//!
//! Rows feed the same [`RegistryBuilder`] as the YAML reader, so a data problem is reported
//! with the same kind and wording in both formats; only the place (the CSV row) differs.
//! Each version is checked and put in its package's release list while the versions file is
//! read, dependencies are attached by (package, version text) while the dependency file is
//! read, and each version then gets its own, or is dropped for an unreadable requirement.
//!
//! A dependency's row is not kept: a line for each of millions of dependencies would cost
//! memory in every load. The registry-wide checks that run once everything is read (a
//! dependency on a name no version row declares, a requirement no version satisfies) report
//! their problems at the version's row, and the ledger keeps what it takes to move each to
//! its dependency's row (`DeferredRows`). Only [`Ledger::place_deferred`] reads the
//! dependencies file a second time to do it, so a load whose problems are only counted reads
//! it once.

use super::diag;
use super::diag::{
    At, BadInput, Ledger, Origin, Problem, ProblemKind, RecordKind, SchemaErrors, bad_name_detail,
    name_problem, shown_name,
};
use super::registry::{
    BadDependency, RegistryBuilder, Unplaced, VersionFields, read_platforms, unreadable_platform,
};
use super::table::{RowRef, Table};
use crate::model::{
    Build, Dep, DepKind, NativeHints, PackageId, PlatformId, Registry, ReqId, Requirement,
};
use hashbrown::HashTable;
use rustc_hash::{FxHashMap, FxHashSet, FxHasher};
use std::hash::Hasher;
use std::io::Read;
use std::ops::ControlFlow;
use std::path::Path;
use std::sync::Arc;

/// Columns of the versions file, in the order a writer should use.
pub const VERSION_COLUMNS: &[&str] = &[
    "package",
    "version",
    "released",
    "runtime",
    "yanked",
    "source_build",
    "prebuilt",
    "native_libraries",
    "native_files",
    "summary",
    "native_helper",
];
const VERSION_REQUIRED: &[&str] = &["package", "version"];

/// Columns of the dependencies file, in the order a writer should use.
pub const DEPENDENCY_COLUMNS: &[&str] = &["package", "version", "dependency", "req", "kind"];
const DEPENDENCY_REQUIRED: &[&str] = &["package", "version", "dependency"];

/// Dependency names remembered per package while reading its versions' dependencies.
const SEEN_LIMIT: usize = 48;

/// Separates the items of a list cell (`prebuilt`, `native_libraries`, `native_files`).
pub const LIST_SEPARATOR: char = ';';

/// Reads a registry dump in the bulk format: the versions file, then the dependencies file.
///
/// Schema errors (an unknown or missing column, a row with the wrong number of fields, a
/// cell that is not UTF-8, an unreadable true/false cell, an empty package or dependency
/// name, an unknown dependency kind) make the input unusable and come back as
/// [`BadInput`] naming file and line, up to 20 of them. Data problems go to the ledger.
///
/// Two kinds of problem are found only once both files are read: a dependency on a name no
/// version row declares (`unknown-dependency`) and a requirement no version satisfies
/// (`unsatisfiable-requirement`). The load reports them at their version's row in the
/// versions file, with the same counts, kinds and wording; finding each one's row in the
/// dependencies file takes a second read of that file, which [`Ledger::place_deferred`] does
/// on request. Call it before showing where problems are; a caller that only counts them
/// pays nothing.
///
/// ```
/// # fn main() -> Result<(), Box<dyn std::error::Error>> {
/// let dir = tempfile::tempdir()?;
/// let (versions, deps) = (dir.path().join("versions.csv"), dir.path().join("deps.csv"));
/// std::fs::write(&versions, "package,version,runtime\npkg-a,1.0.0,>=3.1\npkg-b,v2.1,\n")?;
/// std::fs::write(
///     &deps,
///     "package,version,dependency,req\npkg-a,1.0.0,pkg-b,^2\npkg-a,1.0.0,pkg-c,^1\n",
/// )?;
/// let (registry, mut ledger) = basefit::load::read_bulk(&versions, &deps)?;
/// assert_eq!(registry.release_count(), 2);
/// assert!(ledger.unbalanced().is_empty());
/// // `pkg-c` has no version row: reported at `pkg-a` 1.0.0's row until placed.
/// use basefit::ProblemKind;
/// let at = |ledger: &basefit::Ledger| {
///     let unknown = ledger.problems.iter().find(|p| p.kind == ProblemKind::UnknownDependency);
///     unknown.unwrap().origin.to_string()
/// };
/// assert!(at(&ledger).ends_with("versions.csv:2"));
/// ledger.place_deferred();
/// assert!(at(&ledger).ends_with("deps.csv:3"));
/// # Ok(()) }
/// ```
pub fn read_bulk(versions: &Path, deps: &Path) -> Result<(Registry, Ledger), BadInput> {
    read_bulk_showing(versions, deps, None)
}

/// [`read_bulk`], showing how many bytes of the two files have been read on `progress`,
/// whose length becomes their total size; the caller clears the bar.
///
/// ```
/// # fn main() -> Result<(), Box<dyn std::error::Error>> {
/// let dir = tempfile::tempdir()?;
/// let (versions, deps) = (dir.path().join("versions.csv"), dir.path().join("deps.csv"));
/// std::fs::write(&versions, "package,version\npkg-a,1.0.0\n")?;
/// std::fs::write(&deps, "package,version,dependency\n")?;
/// let bar = indicatif::ProgressBar::hidden();
/// basefit::load::bulk::read_bulk_showing(&versions, &deps, Some(&bar))?;
/// assert_eq!((bar.position(), bar.length()), (55, Some(55)));
/// # Ok(()) }
/// ```
pub fn read_bulk_showing(
    versions: &Path,
    deps: &Path,
    progress: Option<&indicatif::ProgressBar>,
) -> Result<(Registry, Ledger), BadInput> {
    if let Some(bar) = progress {
        super::start_bar(
            bar,
            super::file_size(versions) + super::file_size(deps),
            "registry {bytes}/{total_bytes} read, eta {eta} {wide_bar}",
        );
    }
    // Both headers are checked before the (long) versions pass, so a wrong column in either
    // is reported at once, together.
    let (versions_table, deps_table) = both(
        Table::open_showing(versions, VERSION_COLUMNS, VERSION_REQUIRED, progress),
        Table::open_showing(deps, DEPENDENCY_COLUMNS, DEPENDENCY_REQUIRED, progress),
    )?;
    let path = deps.to_path_buf();
    // A pipe read once is empty the second time, and a named one blocks the second open until
    // someone writes to it again: only a regular file is opened again.
    let regular = std::fs::metadata(deps).is_ok_and(|m| m.is_file());
    let reopen: Arc<Reopen> = Arc::new(move |progress: Option<&indicatif::ProgressBar>| {
        if !regular {
            return Err(BadInput::file(
                path.display().to_string(),
                "it is not a regular file (a pipe, say), so it cannot be opened again",
            ));
        }
        if let Some(bar) = progress {
            super::start_bar(
                bar,
                super::file_size(&path),
                "placing problems: dependencies {bytes}/{total_bytes} read, eta {eta} {wide_bar}",
            );
        }
        Table::open_showing(&path, DEPENDENCY_COLUMNS, DEPENDENCY_REQUIRED, progress)
    });
    read_tables(versions_table, deps_table, reopen, progress)
}

/// [`read_bulk`] over readers; `versions_name` and `deps_name` name them in messages.
///
/// `deps` opens the dependencies from the start each time it is called: once for the load,
/// and once more if [`Ledger::place_deferred`] is asked to place problems found after
/// reading them (see [`read_bulk`]). The ledger keeps it until then.
///
/// ```
/// # fn main() -> Result<(), Box<dyn std::error::Error>> {
/// use std::io::{Cursor, Read};
/// let versions = "package,version\npkg-a,1.0.0\n";
/// let deps = "package,version,dependency\npkg-a,1.0.0,pkg-gone\n";
/// let open_deps = || -> std::io::Result<Box<dyn Read + Send>> {
///     Ok(Box::new(Cursor::new(deps.as_bytes().to_vec())))
/// };
/// let (_, mut ledger) = basefit::load::bulk::read_bulk_from(
///     "versions.csv",
///     Box::new(Cursor::new(versions.as_bytes().to_vec())),
///     "deps.csv",
///     open_deps,
/// )?;
/// // The unknown dependency is at its version's row until it is placed.
/// assert_eq!(ledger.problems[0].origin.to_string(), "versions.csv:2");
/// assert_eq!(ledger.place_deferred(), 1);
/// assert_eq!(ledger.problems[0].origin.to_string(), "deps.csv:2");
/// # Ok(()) }
/// ```
pub fn read_bulk_from(
    versions_name: &str,
    versions: Box<dyn Read + Send>,
    deps_name: &str,
    deps: impl Fn() -> std::io::Result<Box<dyn Read + Send>> + Send + Sync + 'static,
) -> Result<(Registry, Ledger), BadInput> {
    let name = deps_name.to_string();
    let open: Arc<Reopen> = Arc::new(move |_: Option<&indicatif::ProgressBar>| {
        let input = deps().map_err(|e| BadInput::file(&name, format!("cannot read: {e}")))?;
        Table::from_reader(&name, input, DEPENDENCY_COLUMNS, DEPENDENCY_REQUIRED)
    });
    let (versions, deps) = both(
        Table::from_reader(versions_name, versions, VERSION_COLUMNS, VERSION_REQUIRED),
        open(None),
    )?;
    read_tables(versions, deps, open, None)
}

/// Both values, or the errors of either or both as one: a user fixing a dump sees the
/// problems of both files in one run.
fn both<A, B>(a: Result<A, BadInput>, b: Result<B, BadInput>) -> Result<(A, B), BadInput> {
    match (a, b) {
        (Ok(a), Ok(b)) => Ok((a, b)),
        (a, b) => Err(
            BadInput::combine(a.err().into_iter().chain(b.err()).collect())
                .expect("one of them failed"),
        ),
    }
}

fn read_tables(
    versions: Table,
    deps: Table,
    reopen_deps: Arc<Reopen>,
    progress: Option<&indicatif::ProgressBar>,
) -> Result<(Registry, Ledger), BadInput> {
    let mut load = Load::default();
    if let Err(versions_errors) = load.read_versions(versions) {
        // The dependencies cannot be attached to a registry that did not load, but their own
        // schema errors can still be shown beside the versions file's.
        return Err(both(
            Err::<(), _>(versions_errors),
            each_dependency(deps, |_, _| {}),
        )
        .expect_err("the versions file failed"));
    }
    let deps_file = deps.file.clone();
    let attached = load.read_dependencies(deps)?;
    Ok(super::while_indexing(progress, || {
        let (registry, mut ledger, unplaced) = load.commit(attached).finish_unplaced();
        // Most dumps have no such problem, and a load that has some keeps only what it takes
        // to place them: the second read is for those who show the places.
        if !unplaced.is_empty() {
            let deferred = DeferredRows::new(&registry, &ledger, &unplaced, deps_file, reopen_deps);
            ledger.defer(deferred);
        }
        (registry, ledger)
    }))
}

/// Hands each row of a dependencies file to `use_row` until a schema error is met, and
/// collects the schema errors of the rest (an input with one is unusable already).
fn each_dependency(
    table: Table,
    mut use_row: impl FnMut(usize, DepCells<'_>),
) -> Result<(), BadInput> {
    let cols = DepCols::of(&table);
    let file = table.file.clone();
    each_row(table, |row, clean| {
        let cells = dep_cells(&file, &cols, row)?;
        if clean {
            use_row(row.line, cells);
        }
        Ok(())
    })
}

/// Hands each well-formed row of `table` to `use_row`, with whether no schema error was met
/// before it, and collects the schema errors it returns and those of misshapen rows, up to
/// [`SchemaErrors::CAP`] (past it the reading stops).
fn each_row(
    table: Table,
    mut use_row: impl FnMut(RowRef<'_>, bool) -> Result<(), BadInput>,
) -> Result<(), BadInput> {
    let mut errors = SchemaErrors::new();
    let read = table.for_each_batch(|batch| {
        for row in batch.rows() {
            let clean = errors.is_empty();
            if let Err(e) = row
                .map_err(BadInput::clone)
                .and_then(|row| use_row(row, clean))
            {
                errors.push(e);
                if errors.full() {
                    return ControlFlow::Break(());
                }
            }
        }
        ControlFlow::Continue(())
    });
    if let Err(e) = read {
        errors.push(e);
    }
    errors.finish()
}

/// Where the dependencies of a (package, version text) go.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Slot {
    /// Index into the staged versions.
    Staged(u32),
    /// The version record was left out; its dependencies go with it.
    LeftOut,
}

impl Slot {
    /// Packed into a `u32` so a [`Key`] stays small: the index holds one per version.
    fn pack(self) -> u32 {
        match self {
            Slot::Staged(i) => i,
            Slot::LeftOut => u32::MAX,
        }
    }

    fn unpack(v: u32) -> Slot {
        match v {
            u32::MAX => Slot::LeftOut,
            i => Slot::Staged(i),
        }
    }
}

/// One key of [`VersionIndex`]: the version text lives in the index's arena.
struct Key {
    start: usize,
    len: u32,
    package: PackageId,
    slot: u32,
}

/// (package, version text) → slot, without a string allocation per version: the texts are
/// kept end to end in one buffer.
#[derive(Default)]
struct VersionIndex {
    table: HashTable<Key>,
    arena: Vec<u8>,
}

fn key_hash(package: PackageId, text: &[u8]) -> u64 {
    let mut h = FxHasher::default();
    h.write_u32(package.0);
    h.write(text);
    h.finish()
}

impl VersionIndex {
    fn get(&self, package: PackageId, text: &str) -> Option<Slot> {
        let text = text.as_bytes();
        self.table
            .find(key_hash(package, text), |k| {
                k.package == package && self.text(k.start, k.len) == text
            })
            .map(|k| Slot::unpack(k.slot))
    }

    /// Records `slot` for the key unless a usable slot is there already: dependencies attach
    /// to the first usable version record with that text (a later one is a duplicate).
    /// Returns where the text is kept and whether the key now maps to `slot`.
    fn offer(&mut self, package: PackageId, text: &str, slot: Slot) -> (usize, u32, bool) {
        let bytes = text.as_bytes();
        // A cell cannot be 4 GiB long in practice; a longer one would just never match.
        let len = u32::try_from(bytes.len()).unwrap_or(u32::MAX);
        let hash = key_hash(package, bytes);
        let arena = &self.arena;
        // One probe: the entry is found or its free slot is, in the same pass.
        let entry = self.table.entry(
            hash,
            |k| k.package == package && text_at(arena, k.start, k.len) == bytes,
            |k| key_hash(k.package, text_at(arena, k.start, k.len)),
        );
        match entry {
            hashbrown::hash_table::Entry::Occupied(mut e) => {
                let k = e.get_mut();
                let replaced = k.slot == Slot::LeftOut.pack();
                if replaced {
                    k.slot = slot.pack();
                }
                (k.start, k.len, replaced)
            }
            hashbrown::hash_table::Entry::Vacant(e) => {
                let start = self.arena.len();
                e.insert(Key {
                    start,
                    len,
                    package,
                    slot: slot.pack(),
                });
                self.arena.extend_from_slice(bytes);
                (start, len, true)
            }
        }
    }

    fn text(&self, start: usize, len: u32) -> &[u8] {
        text_at(&self.arena, start, len)
    }
}

fn text_at(arena: &[u8], start: usize, len: u32) -> &[u8] {
    arena
        .get(start..start.saturating_add(len as usize))
        .unwrap_or_default()
}

/// Where a staged version's text is kept in the index, and whether the index maps that text
/// to this version (it does not for a duplicate). Lets the dependency pass check the staged
/// version after the last one before it hashes anything.
struct StagedKey {
    start: usize,
    len: u32,
    canonical: bool,
}

/// The dependencies of the previous version read, by position: consecutive versions of a
/// package mostly repeat them, so their ids are taken from here instead of being looked up.
#[derive(Default)]
struct DepMemo {
    entries: Vec<(String, String, PackageId, ReqId)>,
    len: usize,
}

impl DepMemo {
    /// The ids at position `at` for whichever of `name` and `req` match what was there.
    fn get(&self, at: usize, name: &str, req: &str) -> (Option<PackageId>, Option<ReqId>) {
        match self.entries[..self.len].get(at) {
            None => (None, None),
            Some(e) => ((e.0 == name).then_some(e.2), (e.1 == req).then_some(e.3)),
        }
    }

    /// Appends an entry, reusing the strings of an earlier one.
    fn push(&mut self, name: &str, req: &str, package: PackageId, req_id: ReqId) {
        if let Some(e) = self.entries.get_mut(self.len) {
            e.0.clear();
            e.0.push_str(name);
            e.1.clear();
            e.1.push_str(req);
            e.2 = package;
            e.3 = req_id;
        } else {
            self.entries
                .push((name.to_string(), req.to_string(), package, req_id));
        }
        self.len += 1;
    }
}

/// Column positions of the versions file.
struct VersionCols {
    package: Option<usize>,
    version: Option<usize>,
    released: Option<usize>,
    runtime: Option<usize>,
    yanked: Option<usize>,
    source_build: Option<usize>,
    prebuilt: Option<usize>,
    native_libraries: Option<usize>,
    native_files: Option<usize>,
    summary: Option<usize>,
    native_helper: Option<usize>,
}

/// Column positions of the dependencies file.
struct DepCols {
    package: Option<usize>,
    version: Option<usize>,
    dependency: Option<usize>,
    req: Option<usize>,
    kind: Option<usize>,
}

impl DepCols {
    fn of(table: &Table) -> DepCols {
        DepCols {
            package: table.column("package"),
            version: table.column("version"),
            dependency: table.column("dependency"),
            req: table.column("req"),
            kind: table.column("kind"),
        }
    }
}

/// The cells of one dependency row, checked.
struct DepCells<'a> {
    package: &'a str,
    version: &'a str,
    dependency: &'a str,
    req: &'a str,
    kind: DepKind,
}

fn dep_cells<'r>(file: &str, cols: &DepCols, row: RowRef<'r>) -> Result<DepCells<'r>, BadInput> {
    let line = row.line;
    let package = row
        .text(cols.package)
        .ok_or_else(|| BadInput::at(file, line, "`package` is empty"))?;
    let dependency = row
        .text(cols.dependency)
        .ok_or_else(|| BadInput::at(file, line, "`dependency` is empty"))?;
    let kind = match row.text(cols.kind) {
        None | Some("runtime") => DepKind::Runtime,
        Some("development") => DepKind::Development,
        Some(other) => {
            return Err(BadInput::at(
                file,
                line,
                format!("`kind`: expected runtime or development, found `{other}`"),
            ));
        }
    };
    Ok(DepCells {
        package,
        version: row.text(cols.version).unwrap_or(""),
        dependency,
        req: row.text(cols.req).unwrap_or("*"),
        kind,
    })
}

/// The state of the dependency pass.
struct DepPass {
    attached: Attached,
    /// Dependency rows read, and those left out with their version.
    rows: u64,
    with_owner: u64,
    /// Dumps list the dependencies of one version together: the last key saves the lookup.
    last_key: (String, String, Option<Slot>),
    /// Dumps usually list dependencies in the order of the versions: the staged version after
    /// the last one is checked before the index is.
    next_staged: usize,
    memo: DepMemo,
    previous: DepMemo,
    /// Dependency names met in the current package's earlier versions: a version that
    /// adds or drops a dependency shifts positions, but its names were mostly seen before.
    seen: Vec<(String, PackageId)>,
    /// The package whose versions `seen` is about.
    seen_for: Option<PackageId>,
    /// The staged version whose dependencies `memo` is collecting.
    group: Option<u32>,
}

/// Dependencies read for the staged versions, before they are grouped per version.
struct Attached {
    /// Dependencies in file order, and the staged index each belongs to. Apart, so that a
    /// file listing them in the order of the versions is grouped already and needs no copy.
    deps: Vec<Dep>,
    owners: Vec<u32>,
    /// Dependency rows per staged version, readable or not.
    counts: Vec<u32>,
    /// The first unusable dependency (unreadable requirement, or a name that is no name)
    /// per staged version: its line, the problem's kind and detail.
    bad: FxHashMap<u32, (usize, ProblemKind, String)>,
    file: String,
}

#[derive(Default)]
struct Load {
    builder: RegistryBuilder,
    /// Per staged version: its package, and its place in the package's release list (where
    /// it is put as soon as it is read, its dependencies filled in at the commit).
    staged: Vec<(PackageId, u32)>,
    /// The releases of the package whose rows are being read, moved into its list when its
    /// rows end: rows of a package are usually adjacent, so each list is sized once rather
    /// than grown by doubling, and no second copy of every release is held until the end.
    run: Vec<crate::model::Release>,
    run_package: Option<PackageId>,
    staged_keys: Vec<StagedKey>,
    index: VersionIndex,
    /// Per package id: whether a row has given `native_helper` yet (the first one counts).
    helper_given: Vec<bool>,
    /// Parsed `prebuilt` cells: dumps repeat the same few lists millions of times.
    platform_lists: FxHashMap<Box<str>, Box<[PlatformId]>>,
    /// Package names [`name_problem`] refused: their rows are left out, and reported once.
    bad_packages: FxHashSet<Box<str>>,
}

impl Load {
    fn read_versions(&mut self, table: Table) -> Result<(), BadInput> {
        let cols = VersionCols {
            package: table.column("package"),
            version: table.column("version"),
            released: table.column("released"),
            runtime: table.column("runtime"),
            yanked: table.column("yanked"),
            source_build: table.column("source_build"),
            prebuilt: table.column("prebuilt"),
            native_libraries: table.column("native_libraries"),
            native_files: table.column("native_files"),
            summary: table.column("summary"),
            native_helper: table.column("native_helper"),
        };
        let file = table.file.clone();
        // Sized once from the file size: growing by doubling would copy these large buffers
        // several times. Capacity beyond the rows actually read is never touched, so it costs
        // address space, not memory; a failed reservation only means growing as usual.
        let rows = estimated_rows(table.byte_len, 32);
        let _ = self.staged.try_reserve(rows);
        let _ = self.staged_keys.try_reserve(rows);
        let arena = &self.index.arena;
        let _ = self.index.table.try_reserve(rows, |k| {
            key_hash(k.package, text_at(arena, k.start, k.len))
        });
        let _ = self.index.arena.try_reserve(rows.saturating_mul(8));
        // Rows of one package are usually adjacent: the last name saves a lookup per row.
        let mut last: Option<(String, Option<PackageId>)> = None;
        let read = each_row(table, |row, _| {
            self.version_row(&file, &cols, row, &mut last)
        });
        self.end_run();
        read
    }

    /// Moves the releases of the current run into their package's list.
    fn end_run(&mut self) {
        if let Some(package) = self.run_package.take() {
            let releases = &mut self.builder.registry.package_mut(package).releases;
            if releases.is_empty() {
                releases.reserve_exact(self.run.len());
            }
            releases.append(&mut self.run);
        }
    }

    fn version_row(
        &mut self,
        file: &str,
        cols: &VersionCols,
        row: RowRef<'_>,
        last: &mut Option<(String, Option<PackageId>)>,
    ) -> Result<(), BadInput> {
        let line = row.line;
        let name = row
            .text(cols.package)
            .ok_or_else(|| BadInput::at(file, line, "`package` is empty"))?;
        // Every cell is checked before anything is added, so a schema error adds nothing.
        let version = row.text(cols.version).unwrap_or("");
        let released = row.text(cols.released);
        let runtime = row.text(cols.runtime);
        let yanked = row.flag(file, cols.yanked, "yanked")?.unwrap_or(false);
        let source_build = row.flag(file, cols.source_build, "source_build")?;
        let prebuilt_text = row.text(cols.prebuilt);
        let libraries = row.text(cols.native_libraries);
        let files = row.text(cols.native_files);
        let summary = row.text(cols.summary);
        let native_helper = row.flag(file, cols.native_helper, "native_helper")?;
        let (prebuilt, bad_value) = match prebuilt_text {
            None => (Box::default(), None),
            Some(text) => match self.platforms(text, line) {
                Ok(ids) => (ids, None),
                Err(why) => (Box::default(), Some(unreadable_platform(why))),
            },
        };
        // No build columns filled means nothing is said about builds: source only, as a YAML
        // record without `builds`.
        let source = match (source_build, prebuilt_text) {
            (None, None) => true,
            (given, _) => given.unwrap_or(false),
        };
        let native = (libraries.is_some() || files.is_some()).then(|| NativeHints {
            libraries: split_list(libraries),
            files: split_list(files),
        });

        let package = match last {
            Some((n, id)) if n == name => *id,
            _ => {
                let id = self.package(file, line, name, summary, native_helper);
                *last = Some((name.to_string(), id));
                id
            }
        };
        let Some(package) = package else {
            // Its package was left out for its name (reported once, at its first row).
            let ledger = &mut self.builder.ledger;
            ledger.read(RecordKind::Version);
            ledger.left_out_with_owner(RecordKind::Version, 1);
            return Ok(());
        };
        self.package_fields(package, summary, native_helper);
        // Problems in the bulk format name the row (its first line) for each of its values.
        let fields = VersionFields {
            version: At::new(version, line),
            released: released.map(|t| At::new(t, line)),
            runtime: runtime.map(|t| At::new(t, line)),
            build: Build { source, prebuilt },
            bad_value,
            native,
            yanked,
        };
        if self.staged.len() >= Slot::LeftOut.pack() as usize {
            return Err(BadInput::at(
                file,
                line,
                "more version rows than one load can index; split the dump",
            ));
        }
        match self.builder.stage_release(package, file, line, fields) {
            Some(staged) => {
                let slot = Slot::Staged(self.staged.len() as u32);
                if self.run_package != Some(package) {
                    self.end_run();
                    self.run_package = Some(package);
                }
                let listed = self.builder.registry.package(package).releases.len();
                // Below `Slot::LeftOut` like the staged count checked above.
                self.staged
                    .push((package, (listed + self.run.len()) as u32));
                self.run.push(staged.into_release());
                let (start, len, canonical) = self.index.offer(package, version, slot);
                self.staged_keys.push(StagedKey {
                    start,
                    len,
                    canonical,
                });
            }
            None => {
                self.index.offer(package, version, Slot::LeftOut);
            }
        }
        Ok(())
    }

    /// The package a row belongs to, declared at its first row; `None` when its name is no
    /// name ([`name_problem`]): the package is then left out, reported at its first row.
    fn package(
        &mut self,
        file: &str,
        line: usize,
        name: &str,
        summary: Option<&str>,
        native_helper: Option<bool>,
    ) -> Option<PackageId> {
        if let Some(id) = self.builder.registry.id(name)
            && self.builder.registry.package(id).declared
        {
            return Some(id);
        }
        if self.bad_packages.contains(name) {
            return None;
        }
        if let Some(why) = name_problem(name) {
            self.bad_packages.insert(name.into());
            let ledger = &mut self.builder.ledger;
            ledger.read(RecordKind::Package);
            ledger.leave_out(
                RecordKind::Package,
                ProblemKind::BadValue,
                Origin {
                    file: file.to_string(),
                    line,
                },
                shown_name(name),
                bad_name_detail("package name", name, why),
            );
            return None;
        }
        let id =
            self.builder
                .declare_package(file, line, name, summary, native_helper.unwrap_or(false));
        let index = id.0 as usize;
        if self.helper_given.len() <= index {
            self.helper_given.resize(index + 1, false);
        }
        self.helper_given[index] = native_helper.is_some();
        Some(id)
    }

    /// Package-level cells repeat on every row of a package: the first non-empty value of
    /// each wins and later ones are ignored.
    fn package_fields(&mut self, id: PackageId, summary: Option<&str>, helper: Option<bool>) {
        let index = id.0 as usize;
        if self.helper_given.len() <= index {
            self.helper_given.resize(index + 1, false);
        }
        if let Some(flag) = helper
            && !self.helper_given[index]
        {
            self.helper_given[index] = true;
            self.builder.registry.package_mut(id).native_helper = flag;
        }
        if let Some(text) = summary {
            let pkg = self.builder.registry.package_mut(id);
            if pkg.summary.is_none() {
                pkg.summary = Some(text.into());
            }
        }
    }

    /// The platforms of a `prebuilt` cell on `line`, or why the first unreadable one cannot be
    /// read (the version is then left out, as in YAML).
    fn platforms(&mut self, text: &str, line: usize) -> Result<Box<[PlatformId]>, At<String>> {
        if let Some(ids) = self.platform_lists.get(text) {
            return Ok(ids.clone());
        }
        // An empty item (`a;;b`, a trailing `;`) is read, and refused, as the YAML reader
        // refuses an empty list item: a record written with a gap is a mistake in it.
        let written = text
            .split(LIST_SEPARATOR)
            .map(str::trim)
            .map(|i| At::new(i, line));
        let mut ids = Vec::new();
        for platform in read_platforms(written)? {
            let id = self.builder.registry.intern_platform(platform);
            if !ids.contains(&id) {
                ids.push(id);
            }
        }
        let ids: Box<[PlatformId]> = ids.into();
        self.platform_lists.insert(text.into(), ids.clone());
        Ok(ids)
    }

    fn read_dependencies(&mut self, table: Table) -> Result<Attached, BadInput> {
        let file = table.file.clone();
        let mut pass = DepPass {
            attached: Attached {
                deps: Vec::new(),
                owners: Vec::new(),
                counts: vec![0; self.staged.len()],
                bad: FxHashMap::default(),
                file: file.clone(),
            },
            rows: 0,
            with_owner: 0,
            last_key: (String::new(), String::new(), None),
            next_staged: 0,
            memo: DepMemo::default(),
            previous: DepMemo::default(),
            seen: Vec::new(),
            seen_for: None,
            group: None,
        };
        let rows = estimated_rows(table.byte_len, 16);
        let _ = pass.attached.deps.try_reserve(rows);
        let _ = pass.attached.owners.try_reserve(rows);
        each_dependency(table, |line, cells| self.dep_row(&mut pass, line, cells))?;
        let ledger = &mut self.builder.ledger;
        ledger.read_many(RecordKind::Dependency, pass.rows);
        ledger.left_out_with_owner(RecordKind::Dependency, pass.with_owner);
        Ok(pass.attached)
    }

    fn dep_row(&mut self, pass: &mut DepPass, line: usize, cells: DepCells<'_>) {
        let DepCells {
            package,
            version,
            dependency,
            req,
            kind,
        } = cells;
        pass.rows += 1;
        let slot = if pass.last_key.0 == package && pass.last_key.1 == version {
            pass.last_key.2
        } else {
            let slot = self
                .predict(pass.next_staged, package, version)
                .or_else(|| {
                    self.builder
                        .registry
                        .id(package)
                        .and_then(|id| self.index.get(id, version))
                });
            pass.last_key.0.clear();
            pass.last_key.0.push_str(package);
            pass.last_key.1.clear();
            pass.last_key.1.push_str(version);
            pass.last_key.2 = slot;
            slot
        };
        let s = match slot {
            // The version's rows were left out with their package, for its name.
            None if self.bad_packages.contains(package) => {
                pass.with_owner += 1;
                return;
            }
            None => return self.orphan(&pass.attached.file, line, package, version),
            Some(Slot::LeftOut) => {
                pass.with_owner += 1;
                return;
            }
            Some(Slot::Staged(s)) => s,
        };
        pass.next_staged = s as usize + 1;
        if pass.group != Some(s) {
            pass.group = Some(s);
            std::mem::swap(&mut pass.memo, &mut pass.previous);
            pass.memo.len = 0;
        }
        let count = &mut pass.attached.counts[s as usize];
        *count = count.saturating_add(1);
        if pass.attached.bad.contains_key(&s) {
            // As in YAML, reading a version's dependencies stops at the first unreadable
            // requirement.
            return;
        }
        let (known_package, known_req) = pass.previous.get(pass.memo.len, dependency, req);
        let registry = &mut self.builder.registry;
        let req_id = match known_req {
            Some(r) => r,
            None => match registry.intern_requirement(req) {
                Ok(r) => r,
                Err(why) => {
                    let bad = BadDependency::requirement("", line, dependency, &why);
                    pass.attached.bad.insert(s, (line, bad.kind, bad.detail));
                    return;
                }
            },
        };
        let owner = self.staged[s as usize].0;
        if pass.seen_for != Some(owner) {
            pass.seen_for = Some(owner);
            pass.seen.clear();
        }
        let package = match known_package {
            Some(p) => p,
            None => match pass.seen.iter().find(|(n, _)| n == dependency) {
                Some((_, p)) => *p,
                None => {
                    let interned = registry.intern_package_checked(dependency, |name| {
                        name_problem(name).map_or(Ok(()), Err)
                    });
                    let p = match interned {
                        Ok(p) => p,
                        Err(why) => {
                            let bad = BadDependency::name("", line, dependency, why);
                            pass.attached.bad.insert(s, (line, bad.kind, bad.detail));
                            return;
                        }
                    };
                    // Bounded, so a package with hundreds of dependencies does not make
                    // every miss a long scan.
                    if pass.seen.len() < SEEN_LIMIT {
                        pass.seen.push((dependency.to_string(), p));
                    }
                    p
                }
            },
        };
        pass.memo.push(dependency, req, package, req_id);
        pass.attached.deps.push(Dep {
            package,
            req: req_id,
            kind,
        });
        pass.attached.owners.push(s);
    }

    /// The staged version at `at` when it is the one `package`@`version` names.
    fn predict(&self, at: usize, package: &str, version: &str) -> Option<Slot> {
        let key = self.staged_keys.get(at)?;
        let (owner, _) = self.staged[at];
        (key.canonical
            && self.index.text(key.start, key.len) == version.as_bytes()
            && self.builder.registry.name(owner) == package)
            .then_some(Slot::Staged(at as u32))
    }

    fn orphan(&mut self, file: &str, line: usize, package: &str, version: &str) {
        let detail = if self.builder.registry.id(package).is_some() {
            format!("the versions file has no record of `{package}` version `{version}`")
        } else {
            format!("the versions file has no record of package `{package}`")
        };
        self.builder.ledger.leave_out(
            RecordKind::Dependency,
            ProblemKind::OrphanDependency,
            Origin {
                file: file.to_string(),
                line,
            },
            format!("{package}@{version}"),
            detail,
        );
    }

    /// Groups the dependencies per staged version (a counting sort, keeping file order),
    /// gives each version its own, and drops the versions with an unreadable requirement.
    fn commit(self, attached: Attached) -> RegistryBuilder {
        let Load {
            mut builder,
            staged,
            staged_keys,
            index,
            ..
        } = self;
        let Attached {
            deps,
            owners,
            counts,
            bad,
            file,
        } = attached;
        let mut starts = vec![0usize; staged.len() + 1];
        for &s in &owners {
            starts[s as usize + 1] += 1;
        }
        for i in 1..starts.len() {
            starts[i] += starts[i - 1];
        }
        let grouped = if owners.is_sorted() {
            deps
        } else {
            let mut grouped = deps.clone();
            let mut next = starts.clone();
            for (&s, dep) in owners.iter().zip(deps) {
                grouped[next[s as usize]] = dep;
                next[s as usize] += 1;
            }
            grouped
        };
        drop(owners);
        // Left-out versions are removed afterwards, so the places recorded for the others
        // stay right until then.
        let mut dropped: Vec<(PackageId, u32)> = Vec::new();
        for (i, &(package, place)) in staged.iter().enumerate() {
            // A later row with the same text got none of the dependency rows (they attach to
            // the first), so keeping it when the first is left out for one of them would keep
            // the version with its dependencies silently gone.
            let twin_of = match staged_keys.get(i) {
                Some(key) if !key.canonical => {
                    match std::str::from_utf8(index.text(key.start, key.len))
                        .ok()
                        .and_then(|text| index.get(package, text))
                    {
                        Some(Slot::Staged(first)) if bad.contains_key(&first) => {
                            Some(staged[first as usize])
                        }
                        _ => None,
                    }
                }
                _ => None,
            };
            if let Some((_, first_place)) = twin_of {
                builder.leave_out_twin_of_dropped(package, place, first_place);
                dropped.push((package, place));
                continue;
            }
            match bad.get(&(i as u32)) {
                None => {
                    let release =
                        &mut builder.registry.package_mut(package).releases[place as usize];
                    release.deps = grouped[starts[i]..starts[i + 1]].into();
                }
                Some((line, kind, detail)) => {
                    // Cloned: the builder is borrowed mutably to record the problem.
                    let version = builder.registry.package(package).releases[place as usize]
                        .written_version()
                        .into_owned();
                    let bad_dep = BadDependency {
                        file: &file,
                        line: *line,
                        kind: *kind,
                        detail: detail.clone(),
                    };
                    builder.leave_out_for_dependency(
                        package,
                        &version,
                        u64::from(counts[i]),
                        bad_dep,
                    );
                    dropped.push((package, place));
                }
            }
        }
        dropped.sort_unstable();
        for group in dropped.chunk_by(|a, b| a.0 == b.0) {
            let mut places = group.iter().map(|d| d.1 as usize).peekable();
            let mut place = 0;
            builder
                .registry
                .package_mut(group[0].0)
                .releases
                .retain(|_| {
                    let keep = places.next_if_eq(&place).is_none();
                    place += 1;
                    keep
                });
        }
        builder
    }
}

/// Opens the dependencies file again from its start, advancing `progress` (if any) by the
/// bytes read.
type Reopen = dyn Fn(Option<&indicatif::ProgressBar>) -> Result<Table, BadInput> + Send + Sync;

/// The dependency problems of one bulk load that are still at their version's row, and what
/// it takes to move each to its dependency's row later: a way to read the dependencies file
/// again, and for each problem the dependency it is about. Kept by the [`Ledger`] until
/// [`Ledger::place_deferred`]; a few strings per problem, nothing per dependency.
#[derive(Clone)]
pub(crate) struct DeferredRows {
    /// The dependencies file, as messages name it.
    file: String,
    reopen: Arc<Reopen>,
    problems: Vec<DeferredProblem>,
}

impl std::fmt::Debug for DeferredRows {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("DeferredRows")
            .field("problems", &self.problems)
            .finish_non_exhaustive()
    }
}

/// One problem waiting for its dependency's row.
#[derive(Debug, Clone)]
struct DeferredProblem {
    /// The problem as the load reported it, at its version's row: the one to move. Found in
    /// the ledger by value, so sorting or merging the ledger meanwhile does not lose it.
    problem: Problem,
    /// The version's package name and version text as written: the key its rows were
    /// attached by in the first read.
    package: Box<str>,
    version: String,
    /// Index among the release's dependencies, of every kind.
    dep: usize,
    /// What the row must still say: dependency name, requirement text as read, and kind.
    dependency: Box<str>,
    req: String,
    kind: DepKind,
}

impl DeferredRows {
    /// What it takes to place `unplaced` (problems in `ledger`, about dependencies of
    /// `registry`) once the load is over.
    fn new(
        registry: &Registry,
        ledger: &Ledger,
        unplaced: &[Unplaced],
        file: String,
        reopen: Arc<Reopen>,
    ) -> DeferredRows {
        let problems = unplaced
            .iter()
            .filter_map(|u| {
                let package = registry.package(u.package);
                let release = package.releases.get(u.release)?;
                let dep = release.deps.get(u.dep)?;
                // A version read strictly prints as it was written, so only a normalised one
                // keeps its text.
                let version = match &release.raw_version {
                    Some(raw) => raw.to_string(),
                    None => release.version.to_string(),
                };
                Some(DeferredProblem {
                    problem: ledger.problems.get(u.problem)?.clone(),
                    package: package.name.clone(),
                    version,
                    dep: u.dep,
                    dependency: registry.package(dep.package).name.clone(),
                    req: registry.requirement(dep.req).text.clone(),
                    kind: dep.kind,
                })
            })
            .collect();
        DeferredRows {
            file,
            reopen,
            problems,
        }
    }

    /// How many problems wait here.
    pub(crate) fn len(&self) -> usize {
        self.problems.len()
    }

    /// Moves each of these problems still in `problems` from its version's row to its
    /// dependency's row, found by reading the dependencies file again; returns how many
    /// moved. See [`Ledger::place_deferred`].
    ///
    /// The `k`-th dependency of a release is the `k`-th row written with its package and
    /// version text: the rows of a version attach to the first usable version row with that
    /// text, in file order, and a release that kept dependencies is that row (its package's
    /// other records with the text are duplicates, left out or without rows). A row is used
    /// only when it still names the same dependency, requirement and kind; if the file
    /// changed since the first read, or cannot be read again, the problems not placed stay
    /// at the version's row, and the second value counts them and says why.
    pub(crate) fn place(
        &self,
        problems: &mut [Problem],
        progress: Option<&indicatif::ProgressBar>,
    ) -> (usize, Option<diag::Unplaced>) {
        // Each deferred problem is the next one of equal value: equal problems (two rows of
        // one version naming the same unknown package) are interchangeable until placed.
        let mut equal: FxHashMap<&Problem, Vec<usize>> = FxHashMap::default();
        for (i, p) in problems.iter().enumerate().rev() {
            equal.entry(p).or_default().push(i);
        }
        let targets: Vec<Option<usize>> = self
            .problems
            .iter()
            .map(|d| equal.get_mut(&d.problem).and_then(Vec::pop))
            .collect();
        let mut left = targets.iter().flatten().count();
        if left == 0 {
            return (0, None);
        }
        let to_place = left;
        let unplaced = |problems: &[Problem], placed: &FxHashSet<usize>, reason: String| {
            let left: Vec<Problem> = targets
                .iter()
                .flatten()
                .filter(|i| !placed.contains(i))
                .filter_map(|&i| problems.get(i))
                .cloned()
                .collect();
            diag::Unplaced {
                file: self.file.clone(),
                problems: left.len(),
                reason,
                left,
            }
        };
        let table = match (self.reopen)(progress) {
            Ok(table) => table,
            Err(e) => {
                return (
                    0,
                    Some(unplaced(problems, &FxHashSet::default(), e.message)),
                );
            }
        };
        let cols = DepCols::of(&table);
        let file = table.file.clone();
        let mut wanted: Vec<Wanted> = Vec::new();
        // Package name, then version text as written: the key the first read attached rows by.
        let mut by_key: FxHashMap<&str, FxHashMap<&str, usize>> = FxHashMap::default();
        for (d, target) in self.problems.iter().zip(&targets) {
            let Some(problem) = *target else {
                continue;
            };
            let at = *by_key
                .entry(&d.package)
                .or_default()
                .entry(&d.version)
                .or_insert_with(|| {
                    wanted.push(Wanted::default());
                    wanted.len() - 1
                });
            wanted[at].problems.push((d.dep, d, problem));
        }
        for w in &mut wanted {
            w.problems.sort_unstable_by_key(|p| p.0);
        }
        let mut placed = FxHashSet::default();
        let mut malformed = None;
        let read = table.for_each_batch(|batch| {
            for row in batch.rows() {
                let (line, cells) = match row
                    .map_err(BadInput::clone)
                    .and_then(|row| dep_cells(&file, &cols, row).map(|cells| (row.line, cells)))
                {
                    Ok(cells) => cells,
                    Err(e) => {
                        malformed = Some(e);
                        return ControlFlow::Break(());
                    }
                };
                let Some(&at) = by_key
                    .get(cells.package)
                    .and_then(|versions| versions.get(cells.version))
                else {
                    continue;
                };
                let w = &mut wanted[at];
                let k = w.rows;
                w.rows += 1;
                let Ok(i) = w.problems.binary_search_by_key(&k, |p| p.0) else {
                    continue;
                };
                let (_, d, problem) = w.problems[i];
                // Found once: a row is the k-th of its version only once.
                left -= 1;
                if let Some(p) = problems.get_mut(problem)
                    && d.said_by(&cells)
                {
                    p.origin = Origin {
                        file: file.clone(),
                        line,
                    };
                    placed.insert(problem);
                }
                if left == 0 {
                    return ControlFlow::Break(());
                }
            }
            ControlFlow::Continue(())
        });
        let moved = placed.len();
        if moved == to_place {
            return (moved, None);
        }
        // Rows the first read found are missing, say something else, or no longer parse.
        let reason = match read.err().or(malformed) {
            Some(BadInput {
                line: Some(line),
                message,
                ..
            }) => format!("it changed since it was read (line {line}: {message})"),
            Some(e) => format!("it changed since it was read ({})", e.message),
            None => "it changed since it was read (rows it had are gone or say something else)"
                .to_string(),
        };
        (moved, Some(unplaced(problems, &placed, reason)))
    }
}

impl DeferredProblem {
    /// Whether a row read again still says what the dependency was read from.
    fn said_by(&self, cells: &DepCells<'_>) -> bool {
        self.kind == cells.kind
            && *self.dependency == *cells.dependency
            && Requirement::parse(cells.req).is_ok_and(|req| req.text == self.req)
    }
}

/// The rows of one release's dependencies in a second read of the dependencies file, and the
/// problems to place among them.
#[derive(Default)]
struct Wanted<'a> {
    /// Rows of the release met so far.
    rows: usize,
    /// (index among the release's dependencies, the problem, its index in the ledger), by
    /// dependency.
    problems: Vec<(usize, &'a DeferredProblem, usize)>,
}

/// An upper estimate of the rows of a file of `bytes` bytes whose rows are at least
/// `min_row` bytes long, capped so a huge file does not ask for absurd buffers up front.
fn estimated_rows(bytes: Option<u64>, min_row: u64) -> usize {
    let rows = bytes.unwrap_or(0) / min_row;
    rows.min(1 << 26) as usize
}

fn split_list(cell: Option<&str>) -> Vec<String> {
    // Empty items are kept: the registry builder refuses them, as in the YAML path.
    cell.map(|text| {
        text.split(LIST_SEPARATOR)
            .map(str::trim)
            .map(str::to_owned)
            .collect()
    })
    .unwrap_or_default()
}
