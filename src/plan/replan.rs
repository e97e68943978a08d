//! Incremental re-plans and shards.
//!
//! A cached cell stays valid while its image, its priority entry, the run's options and
//! catalog are unchanged and the registry would answer every question its solve asked in the
//! same way. pubgrub is deterministic: given the same answers it asks the same questions and
//! reaches the same result. So each cell keeps what its solve observed ([`Observed`]): for
//! every consulted package, which releases were admissible or refused where that decided a
//! choice, which were passed over for not suiting the image, which releases' dependencies
//! were read, where the ranges it picked from lay, and the package's candidate ceiling (the
//! releases up to the newest one that suits the image count as candidates for priorities).
//! A re-plan rechecks exactly those. A yank, a new runtime requirement or a changed
//! dependency list of a release the solve never weighed leaves the cell valid. What the
//! cell's output reads of a package besides (its versions, summary and flags, the number of
//! version records left out of a package left without releases, the native
//! hints of picked releases) is fingerprinted, and a failure's explanation, which reads
//! refusal reasons and the requirements of releases never picked, keeps the packages it
//! names, and those its choice of cause walks (the dependencies of root releases the image
//! refuses), valid only while they are unchanged as a whole.
//!
//! Candidate counts may rise where the solver never picked from a range: pubgrub decides the
//! package of highest priority, so lowering the priority of one it did not decide at a step
//! changes no decision. So a ceiling may rise while no range picked from holds a release
//! between the old and new ceiling, and a package that only gained releases newer than all
//! it had leaves a cell valid while each new release is either admitted by no requirement
//! the solve used on it, or admitted by exactly the same of those requirements as some older
//! release and either lies outside every range picked from or past the ceiling (see
//! `recheck` for why that is exact).
//!
//! A cell is also kept when a package its solve picked from at the newest release has gained
//! one release since, published just after it and declaring exactly what it declares (a
//! look-alike, [`Release::same_shape`]): a cold solve would decide the new release where the
//! old one was decided, step for step, as long as no range it asked about split the old
//! newest release from the stretch after it (see `stands_in`). Its answer is then the old one
//! with the new release wherever that named the old: a failure's explanation never does
//! (those packages must be unchanged), nor does a solve that gave up, and a solution does as
//! its root or in its closure, which the reused cell is rewritten to show
//! (`stand_in_output`). The basis then reads the new release where it read the old one.
//!
//! Anything that could enter a closure was consulted, because a package can only enter
//! through a dependency of a release the solve read. Exact, and cheap to check.
//!
//! Shards split the cells of a plan by index (`index % count`), so every shard gets a mix of
//! rows; [`merge_shards`] puts them back in order, giving exactly the matrix one run gives.

use super::matrix::{
    Cell, LazyView, Matrix, Outcome, PlanOptions, image_columns, package_rows, plan_cell,
};
use crate::load::Inputs;
use crate::model::{Image, PackageId, PerPackage, Priority, Registry, Release, Requirement};
use crate::solve::sets::{IndexSet, root_set};
use crate::solve::{Admission, ImageView, Observed, SetCache};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use std::collections::{HashMap, HashSet};
use std::fmt::{self, Write as _};
use std::sync::OnceLock;
use std::sync::atomic::{AtomicBool, Ordering};

/// Bumped whenever what a cell depends on, or how it is computed, changes.
pub const CACHE_FORMAT: u32 = 35;

/// What precedes the seal at the end of a cache file ([`PlanCache::to_sealed_json`]).
const SEAL_KEY: &str = ",\"seal\":\"";

/// A 64-bit fingerprint hasher, stable across runs, platforms and Rust versions (unlike
/// std's hashers), so that a cache file written by one run is read by the next. It takes
/// eight bytes per step: the seal covers the whole cache text on every read and write (33 MB
/// for 1,000 entries on 12 images of the bench registry, which byte-at-a-time FNV-1a, used
/// before, sealed in 31 ms and this in 6 ms), and every package the cache holds is printed
/// on every re-plan.
///
/// Each step is a bijection of the state for a given input word (xor, a multiply by an odd
/// constant, an xor-shift, with the splitmix64 finaliser's constants), so two inputs that
/// differ in one word never collide. A slice's last word carries its length, so texts fed one
/// after another keep their boundaries: ("ab", "c") and ("a", "bc") differ.
#[derive(Clone, Copy)]
struct Fingerprinter(u64);

impl Fingerprinter {
    fn new() -> Fingerprinter {
        Fingerprinter(0xcbf2_9ce4_8422_2325)
    }
    fn word(&mut self, w: u64) {
        let x = (self.0 ^ w).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        self.0 = x ^ (x >> 31);
    }
    fn feed(&mut self, b: &[u8]) {
        let mut words = b.chunks_exact(8);
        for w in &mut words {
            self.word(u64::from_le_bytes(w.try_into().unwrap_or_default()));
        }
        let tail = words.remainder();
        let mut last = [0u8; 8];
        last[..tail.len()].copy_from_slice(tail);
        // The length (mod 256) fills the top byte, which a tail of at most seven bytes
        // leaves free.
        last[7] = b.len() as u8;
        self.word(u64::from_le_bytes(last));
    }
    /// A text: its last word carries its length, so ("ab", "c") and ("a", "bc") differ.
    fn str(&mut self, s: &str) -> &mut Fingerprinter {
        self.feed(s.as_bytes());
        self
    }
    /// Hashes what `x` displays as, without building the string; a mark after it ends the
    /// text, which `fmt` may hand over in several pieces.
    fn shown(&mut self, x: impl fmt::Display) -> &mut Fingerprinter {
        let _ = write!(self, "{x}");
        self.word(0xff);
        self
    }
    fn number(&mut self, n: u64) -> &mut Fingerprinter {
        self.word(n);
        self
    }
    fn flag(&mut self, b: bool) -> &mut Fingerprinter {
        self.word(b as u64);
        self
    }
}

impl fmt::Write for Fingerprinter {
    fn write_str(&mut self, s: &str) -> fmt::Result {
        self.feed(s.as_bytes());
        Ok(())
    }
}

/// What can change about a package between two registries, at three depths.
struct Prints {
    /// Everything that can change a solve, its explanation or its native assessment.
    whole: u64,
    /// What a cell reads of the package itself: its name, summary and flags, and, for a
    /// package left without releases, how many of its version records were left out.
    own: u64,
    /// Its list of versions, which gives release indices their meaning.
    versions: u64,
    /// Per release, what reading its dependencies and assessing it natively sees. Neither
    /// the version (in `versions`) nor the yank flag: a yank only changes admission, which
    /// is observed on its own.
    releases: Box<[u64]>,
}

impl Prints {
    fn of(registry: &Registry, id: PackageId) -> Prints {
        let p = registry.package(id);
        let mut own = Fingerprinter::new();
        own.str(&p.name)
            .flag(p.declared)
            .str(p.summary.as_deref().unwrap_or(""))
            .flag(p.summary.is_some())
            .flag(p.native_helper)
            // Only a package without releases has the count in a failure's explanation; a
            // record newly left out beside usable releases must not send cells to the solver.
            .number(if p.releases.is_empty() {
                u64::from(p.left_out_releases)
            } else {
                0
            });
        let releases: Box<[u64]> = p
            .releases
            .iter()
            .map(|r| release_print(registry, r))
            .collect();
        let versions = versions_print(&p.releases);
        let mut whole = Fingerprinter::new();
        whole.feed(&own.0.to_le_bytes());
        whole.feed(&versions.to_le_bytes());
        for (r, print) in p.releases.iter().zip(&releases) {
            whole.feed(&print.to_le_bytes());
            whole.flag(r.yanked);
        }
        Prints {
            whole: whole.0,
            own: own.0,
            versions,
            releases,
        }
    }
}

fn versions_print(releases: &[Release]) -> u64 {
    let mut h = Fingerprinter::new();
    // The fields rather than the displayed text, which is the same information at a tenth of
    // the cost: every package a cache holds is printed on every re-plan.
    for r in releases {
        let v = &r.version;
        h.number(v.major)
            .number(v.minor)
            .number(v.patch)
            .str(v.pre.as_str())
            .str(v.build.as_str());
    }
    h.0
}

/// Fingerprints of the current registry's packages, computed on first use.
struct PrintTable<'r> {
    registry: &'r Registry,
    prints: PerPackage<Prints>,
}

impl<'r> PrintTable<'r> {
    fn new(registry: &'r Registry) -> Self {
        PrintTable {
            registry,
            prints: PerPackage::new(registry.packages.len()),
        }
    }

    fn of(&self, id: PackageId) -> &Prints {
        self.prints
            .get_or_init(id, || Prints::of(self.registry, id))
    }
}

fn release_print(registry: &Registry, r: &Release) -> u64 {
    let mut h = Fingerprinter::new();
    h.str(
        r.runtime
            .map(|q| registry.requirement(q).text.as_str())
            .unwrap_or("(any)"),
    );
    for d in r.deps.iter() {
        h.str(registry.name(d.package))
            .str(&registry.requirement(d.req).text)
            .flag(d.kind == crate::model::DepKind::Runtime);
    }
    h.str("|").flag(r.build.source);
    for p in r.build.prebuilt.iter() {
        let platform = registry.platform(*p);
        h.str(&platform.os).str(&platform.libc).str(&platform.arch);
    }
    // Present but empty hints are told apart from none, as `Release::same_shape` does.
    h.flag(r.native.is_some());
    if let Some(n) = &r.native {
        for l in &n.libraries {
            h.str("L").str(l);
        }
        for f in &n.files {
            h.str("F").str(f);
        }
    }
    h.0
}

fn image_fingerprint(image: &Image) -> u64 {
    let mut h = Fingerprinter::new();
    h.str(&image.id)
        .shown(&image.runtime)
        .str(image.family.as_str())
        .shown(&image.platform)
        .flag(image.toolchain)
        .flag(image.cxx);
    for p in &image.system_packages {
        h.str(p);
    }
    h.0
}

fn entry_fingerprint(entry: &Priority) -> u64 {
    let mut h = Fingerprinter::new();
    h.str(&entry.name)
        .str(
            entry
                .req
                .as_ref()
                .map(|r| r.text.as_str())
                .unwrap_or("(any)"),
        )
        .flag(entry.prerelease);
    h.0
}

/// What a shard records of the plan it belongs to: every input and option its cells are
/// computed from. Package prints are summed, so the order the registry was read in does not
/// matter; each is scrambled first so that sums of similar prints do not collide.
fn planned_from(inputs: &Inputs, options: &PlanOptions) -> String {
    let mut h = Fingerprinter::new();
    h.number(global_fingerprint(inputs, options))
        .number(packages_print(&inputs.registry));
    for image in &inputs.images.images {
        h.number(image_fingerprint(image));
    }
    for entry in &inputs.priorities.entries {
        h.number(entry_fingerprint(entry));
    }
    format!("{:016x}", h.0)
}

/// Every package's print, summed: the registry's content, whatever order it was read in.
fn packages_print(registry: &crate::model::Registry) -> u64 {
    let ids: Vec<PackageId> = registry.ids().collect();
    ids.par_iter()
        .map(|&id| scramble(Prints::of(registry, id).whole))
        .reduce(|| 0, u64::wrapping_add)
}

/// The fingerprint of a registry snapshot that a matrix records
/// ([`crate::plan::Matrix::registry_fingerprint`]): equal for snapshots that hold the same
/// packages and releases, whatever their files' order. It starts with
/// [`REGISTRY_FINGERPRINT_FORMAT`], so that a fingerprint made another way (by an earlier
/// basefit) is told from one of another registry.
pub fn registry_fingerprint(registry: &crate::model::Registry) -> String {
    format!(
        "{REGISTRY_FINGERPRINT_FORMAT}{:016x}",
        packages_print(registry)
    )
}

/// The fingerprint of the system-library catalog a matrix was planned with
/// ([`crate::plan::Matrix::catalog_fingerprint`]): equal for catalogs that read the same,
/// whichever files they came from. It starts with [`CATALOG_FINGERPRINT_FORMAT`], for the
/// same reason as [`registry_fingerprint`].
pub fn catalog_fingerprint(catalog: &crate::native::Catalog) -> String {
    let mut h = Fingerprinter::new();
    h.str(&serde_json::to_string(catalog).unwrap_or_default());
    format!("{CATALOG_FINGERPRINT_FORMAT}{:016x}", h.0)
}

/// How a [`catalog_fingerprint`] of this basefit begins: changed whenever what it prints, or
/// how, changes.
pub const CATALOG_FINGERPRINT_FORMAT: &str = "c1-";

/// How a [`registry_fingerprint`] of this basefit begins: changed whenever what it prints, or
/// how, changes (the hasher, or how a registry file reads into releases). `r3-`: platform
/// words read under their other names (`linux/glibc/amd64` is `linux/glibc/x86_64`), so a
/// registry that writes them prints otherwise than it did under `r2-`.
pub const REGISTRY_FINGERPRINT_FORMAT: &str = "r3-";

/// The splitmix64 finaliser: spreads every input bit over the whole word.
fn scramble(mut x: u64) -> u64 {
    x = (x ^ (x >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    x = (x ^ (x >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    x ^ (x >> 31)
}

fn global_fingerprint(inputs: &Inputs, options: &PlanOptions) -> u64 {
    let mut h = Fingerprinter::new();
    h.str(env!("CARGO_PKG_VERSION"))
        .shown(CACHE_FORMAT)
        .shown(options.budget)
        .flag(options.native)
        .flag(options.closures)
        .str(&serde_json::to_string(&inputs.catalog).unwrap_or_default());
    h.0
}

/// A package some cached cell consulted, with its fingerprints when the cache was written.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct CachedPackage {
    pub name: String,
    pub whole: u64,
    pub own: u64,
    pub versions: u64,
    pub releases: Vec<u64>,
}

/// How many counted lists each package's run of [`CellBasis::observed`] holds.
const LISTS: usize = 7;

/// What one cell of the cached matrix depends on.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct CellBasis {
    pub entry: u64,
    pub image: u64,
    /// The packages the solve consulted, as indices in [`PlanCache::packages`], ascending:
    /// kept apart from their runs, so that a re-plan finds the changed ones (usually none)
    /// and renumbers the table without walking every run.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub packages: Vec<u32>,
    /// How many values of `observed` each package's run takes, in the same order.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub lengths: Vec<u32>,
    /// What the solve observed, one run per package of `packages`, each of seven counted
    /// lists of release indices: those that were admissible and must still be, those refused
    /// that must still be, those whose dependencies were read and must be unchanged,
    /// `from, to` pairs of the releases whose stretch lay in a range picked from
    /// ([`Observed::covered`]), those passed over for not suiting the image that still must
    /// not, the package's candidate ceiling when it was prioritized (none or one value,
    /// [`Observed::ceilings`]), and the releases a range split from their stretch
    /// ([`Observed::splits`]). Flat, because a registry-sized plan has millions of these and
    /// a re-plan copies them all.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub observed: Vec<u32>,
    /// Packages (table indices) that must be unchanged as a whole.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub unchanged: Vec<u32>,
    /// Packages (table indices) the solver asked about with a range reaching past their last
    /// release: a newly published release would be seen.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub open_ended: Vec<u32>,
}

impl CellBasis {
    fn of_solve(entry: u64, image: u64, o: &Observed, slot: &dyn Fn(PackageId) -> u32) -> Self {
        let in_table_order = |ids: &[PackageId]| {
            let mut list: Vec<u32> = ids.iter().map(|id| slot(*id)).collect();
            list.sort_unstable();
            list
        };
        let (packages, lengths, observed) = encode(o, slot);
        CellBasis {
            entry,
            image,
            packages,
            lengths,
            observed,
            unchanged: in_table_order(&o.explained),
            open_ended: in_table_order(&o.open_ended),
        }
    }

    /// [`CellBasis::renumbered`] without renumbering, in place, when `updates` only move
    /// ceilings (most do: a release published where the solver never picked); false, and
    /// nothing changed, otherwise.
    fn move_ceilings(&mut self, updates: &Updates) -> bool {
        if updates
            .iter()
            .any(|u| !u.unfit.is_empty() || u.stand_in.is_some())
        {
            return false;
        }
        let mut at = 0;
        for (package, &length) in self.packages.iter().zip(&self.lengths) {
            if let Some(update) = updates.iter().find(|u| u.package == *package) {
                // Past the first five lists to the ceiling's; the run was read by `recheck`.
                let mut list = at;
                for _ in 0..5 {
                    list += 1 + self.observed.get(list).copied().unwrap_or(0) as usize;
                }
                if self.observed.get(list) == Some(&1)
                    && let Some(ceiling) = self.observed.get_mut(list + 1)
                {
                    *ceiling = update.ceiling;
                }
            }
            at += length as usize;
        }
        true
    }

    /// [`CellBasis::renumbered`] with nothing to add, in place.
    fn renumber(&mut self, renumber: &[u32]) {
        let lists = self.packages.iter_mut();
        for p in lists.chain(&mut self.unchanged).chain(&mut self.open_ended) {
            *p = renumber[*p as usize];
        }
    }

    /// The same basis over a new package table, with `updates` applied; `renumber` maps old
    /// table indices to new ones (order-preserving, both tables being in name order). Only for
    /// bases that passed [`recheck`], which read the run of every package with an update.
    fn renumbered(&self, renumber: &[u32], updates: &Updates) -> Self {
        let added: usize = updates
            .iter()
            .map(|u| 2 * u.unfit.len() + usize::from(u.stand_in.is_some()))
            .sum();
        let mut observed = Vec::with_capacity(self.observed.len() + added);
        let mut lengths = Vec::with_capacity(self.lengths.len());
        for found in runs(self).map_while(|found| found) {
            let run_at = observed.len();
            let update = updates.iter().find(|u| u.package == found.package);
            let Some((update, run)) = update.zip(found.read()) else {
                observed.extend_from_slice(found.lists);
                lengths.push(found.lists.len() as u32);
                continue;
            };
            let lists: [&[u32]; LISTS] = [
                run.admissible,
                run.refused,
                run.fetched,
                run.covered,
                run.unfit,
                run.ceiling,
                run.splits,
            ];
            for (list, listed) in lists.into_iter().enumerate() {
                let n = listed.len();
                let count_at = observed.len();
                observed.push(n as u32);
                observed.extend_from_slice(listed);
                // A look-alike published just after the newest release takes its place in
                // every walk, fetch and stretch (see `recheck`); every list is sorted, so the
                // newest release is last where it is listed.
                if let Some(newest) = update.stand_in {
                    let listed = &mut observed[count_at + 1..];
                    match list {
                        0 | 2 => {
                            if let Some(last) = listed.last_mut().filter(|l| **l == newest) {
                                *last = newest + 1;
                            }
                        }
                        1 if listed.last() == Some(&newest) => observed.push(newest + 1),
                        3 => {
                            if let Some(to) = listed.last_mut().filter(|t| **t == newest + 1) {
                                *to = newest + 2;
                            }
                        }
                        _ => {}
                    }
                }
                match list {
                    // Added releases were published after all the old ones, so they go last,
                    // and a stretch run reaching the old end continues through them.
                    3 => {
                        for &new in &update.unfit {
                            if observed.len() > count_at + 1 && observed.last() == Some(&new) {
                                *observed.last_mut().unwrap_or(&mut 0) += 1;
                            } else {
                                observed.extend([new, new + 1]);
                            }
                        }
                    }
                    4 => observed.extend_from_slice(&update.unfit),
                    5 if n == 1 => observed[count_at + 1] = update.ceiling,
                    _ => {}
                }
                observed[count_at] = (observed.len() - count_at - 1) as u32;
            }
            lengths.push((observed.len() - run_at) as u32);
        }
        let renumbered = |list: &[u32]| list.iter().map(|&p| renumber[p as usize]).collect();
        CellBasis {
            entry: self.entry,
            image: self.image,
            packages: renumbered(&self.packages),
            lengths,
            observed,
            unchanged: renumbered(&self.unchanged),
            open_ended: renumbered(&self.open_ended),
        }
    }
}

/// What a plan leaves behind for the next one: the matrix, and for each of its cells what
/// the cell depends on.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanCache {
    pub format: u32,
    pub global: u64,
    /// Every package a cell consulted, in name order.
    pub packages: Vec<CachedPackage>,
    /// One per cell of `matrix`, in the same order.
    pub bases: Vec<CellBasis>,
    pub matrix: Matrix,
}

impl PlanCache {
    /// The cache as `plan --cache` writes it: JSON with a last field `seal`, a fingerprint of
    /// all that comes before it. Cached predictions are reused unread, so an edit that leaves
    /// the structure sound (a cell's outcome changed by hand, a flipped bit) would otherwise
    /// pass straight into the next matrix; the seal makes it show ([`PlanCache::seal_holds`]).
    ///
    /// ```
    /// use basefit::plan::replan::{replan, PlanCache};
    /// let inputs = basefit::load::Inputs::default();
    /// let (cache, _) = replan(&inputs, &Default::default(), None, None);
    /// let text = cache.to_sealed_json();
    /// assert!(PlanCache::seal_holds(&text));
    /// assert!(!PlanCache::seal_holds(&text.replacen("\"format\":", "\"format\": ", 1)));
    /// ```
    pub fn to_sealed_json(&self) -> String {
        let mut text = serde_json::to_string(self).expect("a plan cache serializes");
        // A struct serializes as one object, so the text ends with its closing brace.
        text.pop();
        let seal = Fingerprinter::new().str(&text).0;
        text.push_str(&format!("{SEAL_KEY}{seal:016x}\"}}"));
        text
    }

    /// Whether `text` is exactly what [`PlanCache::to_sealed_json`] wrote.
    pub fn seal_holds(text: &str) -> bool {
        let Some(at) = text.rfind(SEAL_KEY) else {
            return false;
        };
        let (body, rest) = text.split_at(at);
        let Some(hex) = rest[SEAL_KEY.len()..].strip_suffix("\"}") else {
            return false;
        };
        hex.len() == 16
            && u64::from_str_radix(hex, 16)
                .is_ok_and(|seal| seal == Fingerprinter::new().str(body).0)
    }

    /// Checks that the cache is well formed: a basis per cell, the package table in strict name
    /// order, and every basis naming packages of the table in ascending order with runs that
    /// read exactly and fit their packages' releases. The error names the first damaged cell
    /// (1-based, in matrix order).
    ///
    /// ```
    /// use basefit::plan::replan::{replan, CellBasis};
    /// let inputs = basefit::load::Inputs::default();
    /// let (mut cache, _) = replan(&inputs, &Default::default(), None, None);
    /// assert!(cache.check().is_ok());
    /// cache.bases.push(CellBasis::default());
    /// assert!(cache.check().is_err());
    /// ```
    pub fn check(&self) -> Result<(), String> {
        if self.bases.len() != self.matrix.cells.len() {
            return Err(format!(
                "{} cell bases for {} cells",
                self.bases.len(),
                self.matrix.cells.len()
            ));
        }
        if let Some(w) = self.packages.windows(2).find(|w| w[0].name >= w[1].name) {
            return Err(format!(
                "package table out of name order at `{}`",
                w[1].name
            ));
        }
        for (k, (basis, cell)) in self.bases.iter().zip(&self.matrix.cells).enumerate() {
            basis_damage(basis, &self.packages).map_err(|what| {
                format!(
                    "the {} cell ({} on {}): {what}",
                    crate::report::ordinal(k + 1),
                    cell.package,
                    cell.image
                )
            })?;
        }
        Ok(())
    }
}

/// Whether `list` rises strictly, so holds no index twice.
fn ascending(list: &[u32]) -> bool {
    list.windows(2).all(|w| w[0] < w[1])
}

/// What is wrong with one basis over the package table `table`, if anything.
fn basis_damage(basis: &CellBasis, table: &[CachedPackage]) -> Result<(), &'static str> {
    let in_table =
        |list: &[u32]| ascending(list) && list.iter().all(|&p| (p as usize) < table.len());
    if !in_table(&basis.packages) || !in_table(&basis.unchanged) || !in_table(&basis.open_ended) {
        return Err("package indices out of order or past the package table");
    }
    for run in runs(basis) {
        let run = run.ok_or("run lengths that do not add up to the observed list")?;
        let run = run.read().ok_or("a run whose lists do not fill it")?;
        if !run.within(table[run.package as usize].releases.len()) {
            return Err("a run reaching past its package's releases");
        }
    }
    Ok(())
}

/// How much of a re-plan was reused.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize)]
pub struct ReplanStats {
    pub reused: usize,
    pub solved: usize,
    /// The cells solved, by index (entry times image count plus image), ascending: lets a
    /// benchmark tell the time spent solving from the time spent on everything else.
    pub solved_cells: Vec<usize>,
    /// Whether a previous cache was given but set aside whole: written by another version of
    /// basefit, or with other options or another catalog, so none of its cells can be judged.
    pub previous_set_aside: bool,
}

/// Where a package of the previous cache stands in the current registry.
enum Standing {
    Unchanged(PackageId),
    /// Same versions and own fields; some release or yank flag differs.
    SameListing(PackageId),
    /// Same own fields, the old versions first and newer ones published after them.
    Extended(PackageId),
    Changed,
}

impl Standing {
    fn id(&self) -> Option<PackageId> {
        match self {
            Standing::Unchanged(id) | Standing::SameListing(id) | Standing::Extended(id) => {
                Some(*id)
            }
            Standing::Changed => None,
        }
    }

    fn of(registry: &Registry, prints: &PrintTable<'_>, old: &CachedPackage) -> Standing {
        let Some(id) = registry.id(&old.name) else {
            return Standing::Changed;
        };
        let now = prints.of(id);
        let releases = &registry.package(id).releases;
        // The count is compared as well as the fingerprints, so a damaged cache cannot point
        // past a release list.
        let same_count = releases.len() == old.releases.len();
        if now.whole == old.whole && same_count {
            Standing::Unchanged(id)
        } else if now.own != old.own {
            Standing::Changed
        } else if now.versions == old.versions && same_count {
            Standing::SameListing(id)
        } else if releases.len() > old.releases.len()
            && versions_print(&releases[..old.releases.len()]) == old.versions
        {
            Standing::Extended(id)
        } else {
            Standing::Changed
        }
    }
}

/// One package's run of [`CellBasis::observed`].
#[derive(Clone, Copy)]
struct Run<'a> {
    package: u32,
    admissible: &'a [u32],
    refused: &'a [u32],
    fetched: &'a [u32],
    /// Pairs `from, to`: see [`Observed::covered`].
    covered: &'a [u32],
    unfit: &'a [u32],
    /// The candidate ceiling, when the package was prioritized: none or one value.
    ceiling: &'a [u32],
    /// See [`Observed::splits`].
    splits: &'a [u32],
}

impl Run<'_> {
    /// Whether the run fits a package of `count` releases: release indices below it (stretch
    /// ends and the ceiling up to it), stretches in pairs, at most one ceiling.
    fn within(&self, count: usize) -> bool {
        let lists = [self.admissible, self.refused, self.fetched, self.unfit];
        !(lists.iter().any(|l| l.iter().any(|&i| i as usize >= count))
            || !self.covered.len().is_multiple_of(2)
            || self.covered.iter().any(|&i| i as usize > count)
            || self.ceiling.len() > 1
            || self.ceiling.iter().any(|&c| c as usize > count)
            || self.splits.iter().any(|&i| i as usize >= count))
    }

    /// Whether release `index`'s stretch lay in a range picked from.
    fn covers(&self, index: u32) -> bool {
        self.covered
            .chunks_exact(2)
            .any(|pair| pair[0] <= index && index < pair[1])
    }
}

/// One package's run of [`CellBasis::observed`], found but not yet split into its lists:
/// most runs of a reused basis belong to packages unchanged since the solve, and are skipped.
#[derive(Clone, Copy)]
struct Found<'a> {
    package: u32,
    /// The run's [`LISTS`] counted lists.
    lists: &'a [u32],
}

impl<'a> Found<'a> {
    /// The run's lists; `None` when they do not fill the run exactly (a damaged cache).
    fn read(mut self) -> Option<Run<'a>> {
        fn take<'a>(rest: &mut &'a [u32]) -> Option<&'a [u32]> {
            let (&n, tail) = rest.split_first()?;
            let list = tail.get(..n as usize)?;
            *rest = &tail[n as usize..];
            Some(list)
        }
        let rest = &mut self.lists;
        let run = Run {
            package: self.package,
            admissible: take(rest)?,
            refused: take(rest)?,
            fetched: take(rest)?,
            covered: take(rest)?,
            unfit: take(rest)?,
            ceiling: take(rest)?,
            splits: take(rest)?,
        };
        rest.is_empty().then_some(run)
    }
}

/// The runs of a basis, in order; a damaged basis (lengths that do not add up to its
/// observed list, or one per package) gives a single `None`.
fn runs(basis: &CellBasis) -> impl Iterator<Item = Option<Found<'_>>> {
    let total: u64 = basis.lengths.iter().map(|&n| u64::from(n)).sum();
    let sound = basis.lengths.len() == basis.packages.len() && total == basis.observed.len() as u64;
    let damaged = (!sound).then_some(None);
    let mut at = 0usize;
    let found = basis.packages.iter().zip(&basis.lengths);
    let found = found.take_while(move |_| sound).map(move |(&package, &n)| {
        // In bounds: the lengths add up to the list's.
        let lists = &basis.observed[at..at + n as usize];
        at += n as usize;
        Some(Found { package, lists })
    });
    damaged.into_iter().chain(found)
}

/// What a reused basis gains for one package (by old table index) so that it reads exactly as
/// a cold solve's would: releases published since that a pick would pass over for not suiting
/// the image, and the package's candidate ceiling now.
struct Update {
    package: u32,
    unfit: Vec<u32>,
    ceiling: u32,
    /// The package's newest release, when a look-alike published just after it stands in
    /// for it.
    stand_in: Option<u32>,
}

type Updates = Vec<Update>;

/// Whether the current registry would answer the cached cell's solve, and read its
/// explanation, exactly as before; if so, what its basis gains. A cell that observed nothing
/// was asked for a name the registry lacked, and holds while the name is still absent. A
/// damaged cache makes cells invalid, never a panic.
///
/// Candidate counts may rise where the solver never picked: pubgrub 0.4 decides the package of
/// highest priority, ties broken by a fixed order of packages, so lowering the priority of a
/// package it did not decide at some step leaves that step's decision as it was (a package's
/// priority is computed afresh whenever its range changes, so the priority it is decided at is
/// that of the range it is decided in). In ranges it picked from, counts must stay as they
/// were.
fn recheck(
    basis: &CellBasis,
    entry: &Priority,
    old: &[CachedPackage],
    standing: &[Standing],
    view: &LazyView<'_>,
    prints: &PrintTable<'_>,
) -> Option<Updates> {
    let registry = view.registry;
    let unchanged = |k: u32| matches!(standing.get(k as usize), Some(Standing::Unchanged(_)));
    let known = |k: &u32| standing.get(*k as usize).and_then(Standing::id).is_some();
    if !basis.unchanged.iter().all(|&k| unchanged(k)) || !basis.open_ended.iter().all(known) {
        return None;
    }
    if !ascending(&basis.packages) {
        return None;
    }
    if basis.packages.is_empty() && basis.lengths.is_empty() && basis.observed.is_empty() {
        let still_absent = registry.id(&entry.name).is_none()
            && basis.unchanged.is_empty()
            && basis.open_ended.is_empty();
        return still_absent.then(Vec::new);
    }
    let mut updates = Vec::new();
    // Packages with releases published since, how many releases they had, and their runs.
    let mut extended: Vec<(PackageId, usize, Run<'_>)> = Vec::new();
    for run in runs(basis) {
        let run = run?;
        // Nothing of an unchanged package is read, so its lists need no checking.
        if unchanged(run.package) {
            continue;
        }
        let run = run.read()?;
        let k = run.package as usize;
        let id = standing.get(k).and_then(Standing::id)?;
        let count = old[k].releases.len();
        if !run.within(count) {
            return None;
        }
        let view = view.get();
        let admissions = view.admissions(id);
        let is_admissible = |i: &u32| admissions[*i as usize] == Admission::Admissible;
        let fits = |i: &u32| view.fits(id, *i);
        let now = &prints.of(id).releases;
        let before = &old[k].releases;
        let answered_alike = run.admissible.iter().all(is_admissible)
            && !run.refused.iter().any(is_admissible)
            && run.refused.iter().all(fits)
            && !run.unfit.iter().any(fits)
            && run
                .fetched
                .iter()
                .all(|&i| before.get(i as usize) == Some(&now[i as usize]));
        if !answered_alike {
            return None;
        }
        // Candidate counts take the run of look-alike releases at the ceiling once (release
        // prints hold what `Release::same_shape` compares), so which releases below the old
        // ceiling look alike must be as it was: checked for all of them, which is simpler and
        // errs on the side of solving again. A lower ceiling lowers counts. A higher one
        // raises them, which matters only in a range picked from: every release of such a
        // range above the old ceiling was passed over, so it is among `unfit`. And the old run
        // at the ceiling must stay merged, or a range holding two of its releases gains
        // candidates without gaining a release: so either it was one release long, or every
        // release from the old newest suiting one up to the new one looks alike.
        let ceiling = view.ceiling(id);
        if let Some(&was) = run.ceiling.first() {
            let alike = |prints: &[u64], i: usize| prints[i] == prints[i + 1];
            let (was, now_ceiling) = (was as usize, ceiling as usize);
            if (0..was.saturating_sub(1)).any(|i| alike(before, i) != alike(now, i))
                || now_ceiling < was
                || run.unfit.iter().any(|&i| was <= i as usize && i < ceiling)
            {
                return None;
            }
            if now_ceiling != was {
                let run_was_single = was < 2 || !alike(before, was - 2);
                let run_goes_on = was >= 1 && (was - 1..now_ceiling - 1).all(|i| alike(now, i));
                if !(run_was_single || run_goes_on) {
                    return None;
                }
                update_of(&mut updates, run.package, ceiling);
            }
        }
        if matches!(standing[k], Standing::Extended(_)) {
            if basis.open_ended.contains(&run.package) {
                return None;
            }
            extended.push((id, count, run));
        }
    }
    if extended.is_empty() {
        return Some(updates);
    }
    // Every range the solver saw of a package lies within the requirement sets it was given
    // on it: the entry's, or those of the dependencies of releases whose dependencies it
    // read. pubgrub treats a set of indices as a set of points on a line, so each release
    // `j` stands for the stretch from `j` to `j + 1`: deciding `j` removes the point and
    // leaves the stretch after it. A newly published release outside all the sets joins the
    // stretch past the last release, which no set admits either. One inside some of them
    // needs an old release that lies in exactly the same sets: then it only joins a group of
    // points that was already there, and every set the solver builds is empty, contained in
    // another or disjoint from it exactly as before. It lies in a range the solver picks from
    // exactly where the old release's stretch did. Where it never does, it can only raise
    // candidate counts of ranges never picked from, which changes no decision. Where it
    // does, it must not suit the image and must lie past the candidate ceiling, so that the
    // newest admissible release and the count are unchanged; a cold solve then records it as
    // passed over, and so does the reused basis.
    let mut given: Vec<Vec<IndexSet>> = vec![Vec::new(); extended.len()];
    let mut note = |id: PackageId, set: IndexSet| {
        if let Some(k) = extended.iter().position(|e| e.0 == id)
            && !given[k].contains(&set)
        {
            given[k].push(set);
        }
    };
    if let Some(id) = registry.id(&entry.name)
        && extended.iter().any(|e| e.0 == id)
    {
        let any = Requirement::any();
        let req = entry.req.as_ref().unwrap_or(&any);
        note(id, root_set(registry, id, req, entry.prerelease));
    }
    for run in runs(basis) {
        let run = run?.read()?;
        let dependent = standing.get(run.package as usize)?.id()?;
        let releases = registry.package(dependent).releases.len();
        for &i in run.fetched {
            if i as usize >= releases {
                return None;
            }
            let on_extended = |id: PackageId| extended.iter().any(|e| e.0 == id);
            for (id, set) in view.get().dependency_sets_on(dependent, i, on_extended) {
                note(id, set);
            }
        }
    }
    for (&(id, count, run), sets) in extended.iter().zip(&given) {
        let view = view.get();
        let ceiling = view.ceiling(id);
        let mut unfit = Vec::new();
        let mut stand_in = None;
        for new in count as u32..view.admissions(id).len() as u32 {
            let within: Vec<bool> = sets.iter().map(|s| s.contains(&new)).collect();
            if !within.contains(&true) {
                continue;
            }
            let mate = (0..count as u32)
                .rev()
                .find(|j| sets.iter().zip(&within).all(|(s, w)| s.contains(j) == *w))?;
            // A release below the ceiling counts as a candidate; one that suits the image
            // is always below it.
            if run.covers(mate) {
                if new >= ceiling {
                    unfit.push(new);
                } else if stands_in(view, id, count, mate, new, &run) {
                    stand_in = Some(mate);
                } else {
                    return None;
                }
            }
        }
        if stand_in.is_some() {
            update_of(&mut updates, run.package, ceiling).stand_in = stand_in;
        }
        if !unfit.is_empty() {
            update_of(&mut updates, run.package, ceiling).unfit = unfit;
        }
    }
    Some(updates)
}

/// The update for `package` (old table index), made with the current `ceiling` if there is
/// none yet.
fn update_of(updates: &mut Updates, package: u32, ceiling: u32) -> &mut Update {
    let at = match updates.iter().position(|u| u.package == package) {
        Some(at) => at,
        None => {
            updates.push(Update {
                package,
                unfit: Vec::new(),
                ceiling,
                stand_in: None,
            });
            updates.len() - 1
        }
    };
    &mut updates[at]
}

/// Whether `new`, the one release `package` gained since a solve, stands in for `mate`, the
/// newest release it had then, in a solve on the current registry. It must be published just
/// after it, look alike ([`Release::same_shape`]), be admitted the same way and suit the image
/// (so a walk that met `mate` first now meets `new` first and stops or goes on alike), and no
/// range the solve asked about may have split `mate` from its stretch ([`Observed::splits`]).
///
/// Then a solve on the current registry is the old one with `new` wherever `mate` was decided,
/// fetched or walked, step for step. Every set pubgrub builds maps onto the new numbering by
/// one rule: the point `mate` goes to `new`, and the stretch after `mate` to `mate`, its
/// stretch, and the stretch after `new`. The rule keeps unions, intersections and complements,
/// takes requirement sets to themselves (both releases lie in the same ones: that is how `mate`
/// was found) and the singleton of `mate` to that of `new`. No split means every range asked
/// about holds `mate` and its stretch together or neither, so it maps to one that holds `mate`
/// and `new` together or neither: the same newest pick, with `new` for `mate`, and the same
/// candidate count, since the run of look-alikes at the ceiling counts once and `new` only
/// lengthens it. The dependencies read for `new` are those read for `mate`. The output is then
/// the same with `new` wherever it named `mate` (`stand_in_output` rewrites a reused cell so).
/// A release that depends on its own package is left out: the refusal that follows names the
/// release in text.
fn stands_in(
    view: &ImageView<'_>,
    package: PackageId,
    count: usize,
    mate: u32,
    new: u32,
    run: &Run<'_>,
) -> bool {
    let releases = &view.registry.package(package).releases;
    let admissions = view.admissions(package);
    releases.len() == count + 1
        && mate + 1 == new
        && releases[mate as usize].same_shape(&releases[new as usize])
        && admissions[mate as usize] == admissions[new as usize]
        && view.fits(package, mate)
        && !run.splits.contains(&mate)
        && releases[mate as usize]
            .deps
            .iter()
            .all(|d| d.package != package)
}

/// A reused cell's output as a cold solve on the current registry gives it: where a look-alike
/// stands in for the newest release of a package ([`Update::stand_in`]), a solution names the
/// new release wherever it named the old one, as its root and in its closure (see
/// `stands_in`). Nothing else a cell shows reads a release's version: native evidence and
/// build kinds come from what the two releases share, and a failure's explanation names only
/// packages that must be unchanged.
fn stand_in_output(cell: &mut Cell, updates: &Updates, old: &[CachedPackage], registry: &Registry) {
    for update in updates {
        let Some(mate) = update.stand_in else {
            continue;
        };
        let name = &old[update.package as usize].name;
        let Some(id) = registry.id(name) else {
            continue;
        };
        let releases = &registry.package(id).releases;
        let (Some(was), Some(now)) = (releases.get(mate as usize), releases.get(mate as usize + 1))
        else {
            continue;
        };
        let (was, now) = (was.version.to_string(), now.version.to_string());
        if cell.package == **name && cell.root_version.as_deref() == Some(was.as_str()) {
            cell.root_version = Some(now.clone());
        }
        for pinned in &mut cell.closure {
            if pinned.name == **name && pinned.version == was {
                pinned.version = now.clone();
            }
        }
    }
}

/// A solve's observations as [`CellBasis::packages`], [`CellBasis::lengths`] and
/// [`CellBasis::observed`], runs in table order.
fn encode(observed: &Observed, slot: &dyn Fn(PackageId) -> u32) -> (Vec<u32>, Vec<u32>, Vec<u32>) {
    let mut order = observed.packages.clone();
    order.sort_unstable_by_key(|id| slot(*id));
    let packages: Vec<u32> = order.iter().map(|id| slot(*id)).collect();
    let mut lengths = Vec::with_capacity(order.len());
    let mut out = Vec::new();
    for id in order {
        let run_at = out.len();
        // Every list of `Observed` is sorted by package first.
        push_by_flag(&mut out, entries_of(&observed.admissions, id, |a| a.0));
        let fetched = entries_of(&observed.fetched, id, |f| f.0);
        out.push(fetched.len() as u32);
        out.extend(fetched.iter().map(|f| f.1));
        let covered = entries_of(&observed.covered, id, |c| c.0);
        out.push(2 * covered.len() as u32);
        out.extend(covered.iter().flat_map(|c| [c.1, c.2]));
        let unfit = entries_of(&observed.unfit, id, |u| u.0);
        out.push(unfit.len() as u32);
        out.extend(unfit.iter().map(|u| u.1));
        let ceiling = entries_of(&observed.ceilings, id, |c| c.0);
        out.push(ceiling.len() as u32);
        out.extend(ceiling.iter().map(|c| c.1));
        let splits = entries_of(&observed.splits, id, |s| s.0);
        out.push(splits.len() as u32);
        out.extend(splits.iter().map(|s| s.1));
        lengths.push((out.len() - run_at) as u32);
    }
    (packages, lengths, out)
}

/// The entries of `list`, sorted by package first, that belong to `id`.
fn entries_of<T>(list: &[T], id: PackageId, package: impl Fn(&T) -> PackageId) -> &[T] {
    &list[list.partition_point(|e| package(e) < id)..list.partition_point(|e| package(e) <= id)]
}

/// Two counted lists: the releases of `entries` whose flag is set, then the others.
fn push_by_flag(out: &mut Vec<u32>, entries: &[(PackageId, u32, bool)]) {
    for flag in [true, false] {
        let of_kind = || entries.iter().filter(move |e| e.2 == flag);
        out.push(of_kind().count() as u32);
        out.extend(of_kind().map(|e| e.1));
    }
}

/// A shard: `index` of `count`, 1-based as written on the command line (`--shard 2/8`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Shard {
    pub index: usize,
    pub count: usize,
}

impl Shard {
    /// Reads `K/N` with 1 <= K <= N.
    ///
    /// ```
    /// use basefit::plan::replan::Shard;
    /// assert_eq!(Shard::parse("2/8"), Ok(Shard { index: 2, count: 8 }));
    /// assert!(Shard::parse("0/8").is_err());
    /// assert!(Shard::parse("9/8").is_err());
    /// ```
    pub fn parse(s: &str) -> Result<Shard, String> {
        let (k, n) = s
            .split_once('/')
            .ok_or_else(|| format!("`{s}`: expected K/N, e.g. 2/8"))?;
        let index: usize = k
            .trim()
            .parse()
            .map_err(|_| format!("`{s}`: K is not a number"))?;
        let count: usize = n
            .trim()
            .parse()
            .map_err(|_| format!("`{s}`: N is not a number"))?;
        if count == 0 || index == 0 || index > count {
            return Err(format!("`{s}`: expected 1 <= K <= N"));
        }
        Ok(Shard { index, count })
    }

    pub fn contains(&self, cell_index: usize) -> bool {
        cell_index % self.count == self.index - 1
    }
}

/// Where a cell of a re-plan comes from.
enum Source {
    /// Cell `k` of the previous plan, still valid, and what its basis gains.
    Reused(usize, Updates),
    Solved(Box<Cell>),
}

/// Plans the cells of `shard` (all when `None`), reusing every still-valid cell of `previous`.
/// The matrix is identical to a cold plan of the same cells, and so is the cache.
///
/// A cell's runs for packages that have not changed are carried over unread, so a cache from
/// anywhere but a previous `replan` should pass [`PlanCache::check`] first (the command line
/// does this); a damaged run is otherwise only noticed, and the cell solved again, once its
/// package changes.
///
/// Takes the previous cache by value: its still-valid cells move into the new one.
pub fn replan(
    inputs: &Inputs,
    options: &PlanOptions,
    previous: Option<PlanCache>,
    shard: Option<Shard>,
) -> (PlanCache, ReplanStats) {
    replan_keeping(inputs, options, previous, shard, true)
}

/// A cold plan of the cells of `shard` (all when `None`) for a run that keeps no cache: each
/// cell's record of its solve is dropped as soon as it is solved, which on a plan of hundreds
/// of thousands of cells is most of the memory. The returned cache holds the matrix only (no
/// package table, no bases): it is not for writing out (a re-plan given it would solve every
/// cell again, and `basefit plan --cache` would refuse the file as damaged).
pub fn plan_uncached(
    inputs: &Inputs,
    options: &PlanOptions,
    shard: Option<Shard>,
) -> (PlanCache, ReplanStats) {
    replan_keeping(inputs, options, None, shard, false)
}

/// [`replan`]; without `keep_basis` the returned cache holds no package table and no bases.
fn replan_keeping(
    inputs: &Inputs,
    options: &PlanOptions,
    previous: Option<PlanCache>,
    shard: Option<Shard>,
    keep_basis: bool,
) -> (PlanCache, ReplanStats) {
    let registry = &inputs.registry;
    let global = global_fingerprint(inputs, options);
    let given = previous.is_some();
    let previous = previous.filter(|p| {
        p.format == CACHE_FORMAT
            && p.global == global
            && p.bases.len() == p.matrix.cells.len()
            && p.packages.windows(2).all(|w| w[0].name < w[1].name)
    });
    let previous_set_aside = given && previous.is_none();
    let (old_packages, old_bases, old_cells) = match previous {
        Some(p) => (p.packages, p.bases, p.matrix.cells),
        None => Default::default(),
    };
    // A cell usually sits where it sat in the previous plan; it is looked up by name only
    // when the priorities or images have moved, or the previous plan was a shard.
    let by_name: OnceLock<HashMap<(&str, &str), usize>> = OnceLock::new();
    let old_cell = |i: usize, package: &str, image: &str| {
        if old_cells
            .get(i)
            .is_some_and(|c| c.package == package && c.image == image)
        {
            return Some(i);
        }
        let by_name = by_name.get_or_init(|| {
            old_cells
                .iter()
                .enumerate()
                .map(|(k, c)| ((c.package.as_str(), c.image.as_str()), k))
                .collect()
        });
        by_name.get(&(package, image)).copied()
    };
    let prints = PrintTable::new(registry);
    // Printing a package takes a couple of microseconds: a plan of a thousand entries
    // consults a few thousand packages, which one thread prints faster than two (the second
    // one's allocations cost more than its share of the work); a registry-wide plan's
    // hundreds of thousands are shared out.
    let standing: Vec<Standing> = old_packages
        .par_iter()
        .with_min_len(1 << 13)
        .map(|p| Standing::of(registry, &prints, p))
        .collect();
    let sets = SetCache::default();
    let views = LazyView::per_image(registry, &inputs.images.images, &sets);
    let image_keys: Vec<u64> = inputs.images.images.iter().map(image_fingerprint).collect();
    let n_images = views.len();
    let total = inputs.priorities.entries.len() * n_images;
    if let Some(pb) = &options.progress {
        let cells = match shard {
            Some(s) => (0..total).filter(|i| s.contains(*i)).count() as u64,
            None => total as u64,
        };
        crate::load::start_bar(pb, cells, "{pos}/{len} cells, {rate}, eta {eta} {wide_bar}");
    }
    // The new package table holds every package a cell of this plan consulted, marked as the
    // cells are rechecked or solved; a reused basis marks old table indices, mapped to the
    // registry's afterwards.
    let consulted: Vec<AtomicBool> = (0..registry.packages.len())
        .map(|_| AtomicBool::new(false))
        .collect();
    let mark = |id: PackageId| raise(&consulted[id.0 as usize]);
    let consulted_before: Vec<AtomicBool> = (0..old_packages.len())
        .map(|_| AtomicBool::new(false))
        .collect();
    let results: Vec<(Source, u64, u64)> = (0..total)
        .into_par_iter()
        .filter(|i| shard.is_none_or(|s| s.contains(*i)))
        .map(|i| {
            if let Some(pb) = &options.progress {
                pb.inc(1);
            }
            let entry = &inputs.priorities.entries[i / n_images];
            let col = i % n_images;
            let entry_key = entry_fingerprint(entry);
            let image_key = image_keys[col];
            let image = &inputs.images.images[col];
            if let Some(k) = old_cell(i, &entry.name, &image.id)
                && old_bases[k].entry == entry_key
                && old_bases[k].image == image_key
                && let Some(updates) = recheck(
                    &old_bases[k],
                    entry,
                    &old_packages,
                    &standing,
                    &views[col],
                    &prints,
                )
            {
                let basis = &old_bases[k];
                for &p in basis
                    .packages
                    .iter()
                    .chain(&basis.unchanged)
                    .chain(&basis.open_ended)
                {
                    if let Some(m) = consulted_before.get(p as usize) {
                        raise(m);
                    }
                }
                return (Source::Reused(k, updates), entry_key, image_key);
            }
            let mut cell = plan_cell(inputs, views[col].get(), entry, options);
            if keep_basis {
                let o = &cell.observed;
                o.packages
                    .iter()
                    .chain(&o.explained)
                    .chain(&o.open_ended)
                    .for_each(|id| mark(*id));
            } else {
                cell.observed = Default::default();
            }
            (Source::Solved(Box::new(cell)), entry_key, image_key)
        })
        .collect();
    if let Some(pb) = &options.progress {
        pb.finish_and_clear();
    }
    let solved_cells: Vec<usize> = (0..total)
        .filter(|i| shard.is_none_or(|s| s.contains(*i)))
        .zip(&results)
        .filter_map(|(i, r)| matches!(r.0, Source::Solved(_)).then_some(i))
        .collect();
    let stats = ReplanStats {
        reused: results.len() - solved_cells.len(),
        solved: solved_cells.len(),
        solved_cells,
        previous_set_aside,
    };
    for (k, marked) in consulted_before.iter().enumerate() {
        if marked.load(Ordering::Relaxed)
            && let Some(id) = standing[k].id()
        {
            mark(id);
        }
    }
    drop(consulted_before);
    let mut ids: Vec<PackageId> = registry
        .ids()
        .filter(|id| consulted[id.0 as usize].load(Ordering::Relaxed))
        .collect();
    drop(consulted);
    ids.par_sort_by(|a, b| registry.name(*a).cmp(registry.name(*b)));
    let mut slots = vec![u32::MAX; registry.packages.len()];
    for (k, id) in ids.iter().enumerate() {
        slots[id.0 as usize] = k as u32;
    }
    let slot = |id: PackageId| slots[id.0 as usize];
    // Old table index to new: order is kept, since both tables are in name order.
    let renumber: Vec<u32> = standing
        .iter()
        .map(|s| s.id().map_or(u32::MAX, slot))
        .collect();
    let same_table =
        renumber.len() == ids.len() && renumber.iter().enumerate().all(|(k, &r)| r == k as u32);
    let packages: Vec<CachedPackage> = ids
        .par_iter()
        .filter(|_| keep_basis)
        .map(|&id| {
            let p = prints.of(id);
            CachedPackage {
                name: registry.name(id).to_string(),
                whole: p.whole,
                own: p.own,
                versions: p.versions,
                releases: p.releases.to_vec(),
            }
        })
        .collect();
    // Still-valid cells and their bases move into the new cache; a priority list may name a
    // package twice, and then all but the last use of an old cell copy it.
    let mut remaining = vec![0usize; old_cells.len()];
    for (source, _, _) in &results {
        if let Source::Reused(k, _) = source {
            remaining[*k] += 1;
        }
    }
    let moves: Vec<bool> = results
        .iter()
        .map(|(source, _, _)| match source {
            Source::Reused(k, _) => {
                remaining[*k] -= 1;
                remaining[*k] == 0
            }
            Source::Solved(_) => false,
        })
        .collect();
    let take = |old: &mut [CellBasis], k: usize, last: bool| {
        if last {
            std::mem::take(&mut old[k])
        } else {
            old[k].clone()
        }
    };
    let mut old_bases = old_bases;
    let mut bases: Vec<CellBasis> = results
        .iter()
        .zip(&moves)
        .filter(|_| keep_basis)
        .map(|((source, _, _), &last)| match source {
            Source::Reused(k, _) => take(&mut old_bases, *k, last),
            Source::Solved(_) => CellBasis::default(),
        })
        .collect();
    drop(old_bases);
    bases
        .par_iter_mut()
        .zip(results.par_iter())
        .for_each(|(basis, (source, entry, image))| match source {
            Source::Solved(cell) => {
                *basis = CellBasis::of_solve(*entry, *image, &cell.observed, &slot)
            }
            // Usually the table is the same and at most ceilings moved: changed in place.
            Source::Reused(_, updates) if basis.move_ceilings(updates) => {
                if !same_table {
                    basis.renumber(&renumber)
                }
            }
            Source::Reused(_, updates) => *basis = basis.renumbered(&renumber, updates),
        });
    let mut old_cells = old_cells;
    let cells: Vec<Cell> = results
        .into_iter()
        .zip(moves)
        .map(|((source, _, _), last)| match source {
            // The basis holds what the solve observed now; the matrix outlives it without it.
            Source::Solved(cell) => Cell {
                observed: Default::default(),
                ..*cell
            },
            Source::Reused(k, updates) => {
                let mut cell = if last {
                    std::mem::replace(&mut old_cells[k], Cell::new("", "", Outcome::Undecided))
                } else {
                    old_cells[k].clone()
                };
                stand_in_output(&mut cell, &updates, &old_packages, registry);
                cell
            }
        })
        .collect();
    let matrix = Matrix {
        notice: super::matrix::notice(!options.native),
        native_skipped: !options.native,
        images: image_columns(inputs),
        packages: package_rows(inputs),
        cells,
        shard,
        planned_from: shard.map(|_| planned_from(inputs, options)),
        // Left to the command that writes the matrix: a re-plan's fixed cost would double.
        registry_fingerprint: None,
        catalog_fingerprint: None,
    };
    (
        PlanCache {
            format: CACHE_FORMAT,
            global,
            packages,
            bases,
            matrix,
        },
        stats,
    )
}

/// Sets `flag`, writing only when it is not yet set: the flags of the registry's hub packages
/// are raised by nearly every cell, and a write from each thread would bounce their cache
/// line between the cores on every cell.
fn raise(flag: &AtomicBool) {
    if !flag.load(Ordering::Relaxed) {
        flag.store(true, Ordering::Relaxed);
    }
}

/// Why shards do not merge, and which of the given parts (0-based) is at fault, when one is.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct MergeError {
    pub part: Option<usize>,
    /// The part `part` disagrees with, which the message names as "part N" (1-based): of two
    /// parts that disagree either may be the damaged one, so a message must name both.
    pub other: Option<usize>,
    pub message: String,
}

impl fmt::Display for MergeError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

/// Puts shard matrices back together into exactly the matrix a single run gives. Refuses
/// parts that are not the shards of one split of one plan: planned from other inputs or
/// options (their `planned_from` keys differ), given twice or missing, or holding a cell
/// that is not theirs, twice, or not at all.
pub fn merge_shards(parts: Vec<Matrix>) -> Result<Matrix, MergeError> {
    let fail = |part: Option<usize>, message: String| MergeError {
        part,
        other: None,
        message,
    };
    let versus = |part: usize, other: usize, message: String| MergeError {
        part: Some(part),
        other: Some(other),
        message,
    };
    let Some(first) = parts.first() else {
        return Err(fail(None, "no shard matrices given".into()));
    };
    let Some(Shard { count, .. }) = first.shard else {
        return Err(fail(
            Some(0),
            "not a shard (no `shard` field): only the outputs of `plan --shard` merge".into(),
        ));
    };
    // Each part holds a distinct shard, so a count above the number of parts means some are
    // missing; checking that first keeps a damaged count from sizing anything.
    let mut seen: HashMap<usize, usize> = HashMap::new();
    for (k, p) in parts.iter().enumerate() {
        let Some(s) = p.shard else {
            return Err(fail(
                Some(k),
                "not a shard (no `shard` field): only the outputs of `plan --shard` merge".into(),
            ));
        };
        if s.count != count {
            return Err(versus(
                k,
                0,
                format!(
                    "shard {}/{} does not belong to the split into {count} that part 1 is from",
                    s.index, s.count
                ),
            ));
        }
        if s.index == 0 || s.index > count {
            return Err(fail(
                Some(k),
                format!("shard {}/{} is not a valid shard", s.index, s.count),
            ));
        }
        if p.planned_from.is_none() {
            return Err(fail(
                Some(k),
                format!(
                    "shard {}/{count} does not record what it was planned from (`planned_from`): it was written by another basefit version",
                    s.index
                ),
            ));
        }
        if p.planned_from != first.planned_from {
            return Err(versus(
                k,
                0,
                format!(
                    "shard {}/{count} was planned from other inputs or options than part 1 (registry, images, priorities, catalog, budget, native checks or closures left out differ), or by another basefit version",
                    s.index
                ),
            ));
        }
        if p.images != first.images || p.packages != first.packages {
            return Err(versus(
                k,
                0,
                format!(
                    "shard {}/{count} lists other images or priorities than part 1",
                    s.index
                ),
            ));
        }
        if let Some(earlier) = seen.insert(s.index, k) {
            return Err(versus(
                k,
                earlier,
                format!(
                    "shard {}/{count} is given twice, as parts {} and {}",
                    s.index,
                    earlier + 1,
                    k + 1
                ),
            ));
        }
    }
    if let Some(missing) = (1..=count.min(parts.len() + 1)).find(|i| !seen.contains_key(i)) {
        return Err(fail(None, format!("shard {missing}/{count} is missing")));
    }
    // Cells are placed by name; every part lists the same rows and columns, so the first
    // speaks for all. Its weights are checked too: the merged matrix must read back.
    first.check_rows().map_err(|e| fail(Some(0), e))?;
    let n = first.images.len();
    let total = first.packages.len().saturating_mul(n);
    let rows: HashMap<&str, usize> = first
        .packages
        .iter()
        .enumerate()
        .map(|(i, p)| (p.name.as_str(), i))
        .collect();
    let cols: HashMap<&str, usize> = first
        .images
        .iter()
        .enumerate()
        .map(|(i, c)| (c.id.as_str(), i))
        .collect();
    // Each cell is held to the shard its position puts it in, so a cell that is wrong, twice
    // or missing is blamed on the one part that should hold it, and the error can name a file.
    // Held by position and sorted afterwards rather than in a slot per cell of the whole
    // matrix: rows and columns edited in by hand could ask for more slots than memory holds,
    // while the cells the shards do hold are bounded by their files.
    let held: usize = parts.iter().map(|p| p.cells.len()).sum();
    let mut placed: Vec<(usize, &Cell)> = Vec::with_capacity(held);
    let mut taken: HashSet<usize> = HashSet::with_capacity(held);
    for (part, p) in parts.iter().enumerate() {
        let shard = p.shard.expect("every part was checked to be a shard");
        for (j, c) in p.cells.iter().enumerate() {
            let (Some(&r), Some(&k)) = (rows.get(c.package.as_str()), cols.get(c.image.as_str()))
            else {
                return Err(fail(
                    Some(part),
                    format!(
                        "the shard's {} cell ({} on {}) names a package or image the matrix does not list",
                        crate::report::ordinal(j + 1),
                        c.package,
                        c.image
                    ),
                ));
            };
            let i = r * n + k;
            if !shard.contains(i) {
                return Err(fail(
                    Some(part),
                    format!(
                        "the shard's {} cell ({} on {}) belongs to shard {}/{count}, not {}/{count}",
                        crate::report::ordinal(j + 1),
                        c.package,
                        c.image,
                        i % count + 1,
                        shard.index
                    ),
                ));
            }
            if !taken.insert(i) {
                return Err(fail(
                    Some(part),
                    format!(
                        "the shard's {} cell ({} on {}) is listed twice",
                        crate::report::ordinal(j + 1),
                        c.package,
                        c.image
                    ),
                ));
            }
            placed.push((i, c));
        }
    }
    placed.sort_unstable_by_key(|&(i, _)| i);
    // Positions are distinct and below `total`: the first one out of step with the order is
    // the first cell missing.
    let gap = (0..placed.len())
        .find(|&k| placed[k].0 != k)
        .or((placed.len() < total).then_some(placed.len()));
    if let Some(i) = gap {
        let index = i % count + 1;
        return Err(fail(
            seen.get(&index).copied(),
            format!(
                "shard {index}/{count} lacks its cell for {} on {} (cell {i} of the whole matrix's {total}, counting from 0)",
                first.packages[i / n].name,
                first.images[i % n].id,
            ),
        ));
    }
    let cells: Vec<Cell> = placed.into_iter().map(|(_, c)| c.clone()).collect();
    Ok(Matrix {
        notice: super::matrix::notice(parts.iter().any(|p| p.native_skipped)),
        native_skipped: parts.iter().any(|p| p.native_skipped),
        images: first.images.clone(),
        packages: first.packages.clone(),
        cells,
        shard: None,
        planned_from: None,
        // Equal on every part: their `planned_from`, which covers the registry and the
        // catalog, agree.
        registry_fingerprint: first.registry_fingerprint.clone(),
        catalog_fingerprint: first.catalog_fingerprint.clone(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fingerprints_keep_the_boundaries_between_texts() {
        let of = |texts: &[&str]| {
            let mut h = Fingerprinter::new();
            for t in texts {
                h.str(t);
            }
            h.0
        };
        // Texts fed one after another, split at each point of one string, of lengths that
        // end inside a word, on a word's end and past it: each split prints differently.
        let whole = "abcdefghijklmnopq";
        let mut seen = std::collections::HashSet::new();
        for at in 0..=whole.len() {
            assert!(
                seen.insert(of(&[&whole[..at], &whole[at..]])),
                "split at {at}"
            );
        }
        assert!(seen.insert(of(&[whole])));
        assert_ne!(of(&[""]), of(&[]));
        assert_ne!(of(&["a"]), of(&["a\0"]));
        assert_ne!(of(&["abcdefgh"]), of(&["abcdefgh\0"]));
        // A number and a flag are words of their own, in order.
        let mut a = Fingerprinter::new();
        a.number(1).flag(false);
        let mut b = Fingerprinter::new();
        b.number(0).flag(true);
        assert_ne!(a.0, b.0);
    }

    fn basis(packages: Vec<u32>, lengths: Vec<u32>, observed: Vec<u32>) -> CellBasis {
        CellBasis {
            packages,
            lengths,
            observed,
            ..CellBasis::default()
        }
    }

    #[test]
    fn a_run_reads_only_when_its_lists_fill_it_exactly() {
        // Package 3: admissible [1], refused [], fetched [0, 1], covered [0, 2], and empty
        // unsuitable, ceiling and split lists; package 5: all lists empty.
        let run3 = vec![1, 1, 0, 2, 0, 1, 2, 0, 2, 0, 0, 0];
        let mut observed = run3.clone();
        observed.extend([0; 7]);
        let sound = basis(vec![3, 5], vec![12, 7], observed.clone());
        let found: Vec<_> = runs(&sound).map(|f| f.unwrap()).collect();
        assert_eq!(found.len(), 2);
        let run = found[0].read().unwrap();
        assert_eq!(
            (run.package, run.admissible, run.fetched),
            (3, &[1][..], &[0, 1][..])
        );
        assert!(run.covers(1) && !run.covers(2));
        assert!(found[1].read().is_some_and(|r| r.package == 5));
        // The same values cut into runs one value apart: lists that stop short of their run,
        // or run past it.
        let shifted = basis(vec![3, 5], vec![13, 6], observed.clone());
        let found: Vec<_> = runs(&shifted).map(|f| f.unwrap()).collect();
        assert!(found[0].read().is_none() && found[1].read().is_none());
        // Lengths that do not add up to the list, or do not match the packages.
        assert!(
            runs(&basis(vec![3, 5], vec![12, 8], observed.clone()))
                .map(|f| f.is_none())
                .eq([true])
        );
        assert!(
            runs(&basis(vec![3], vec![12, 7], observed))
                .map(|f| f.is_none())
                .eq([true])
        );
    }
}
