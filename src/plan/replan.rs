//! Incremental re-plans and shards.
//!
//! A cached cell stays valid while its image, its priority entry, the run's options and
//! catalog are unchanged and the registry would answer every question its solve asked in the
//! same way. pubgrub is deterministic: given the same answers it asks the same questions and
//! reaches the same result. So each cell keeps what its solve observed ([`Observed`]): for
//! every consulted package, which releases were admissible or refused where that decided a
//! choice, and which releases' dependencies were read. A re-plan rechecks exactly those. A
//! yank, a new runtime requirement or a changed dependency list of a release the solve never
//! weighed leaves the cell valid. What the cell's output reads of a package besides (its
//! versions, summary and flags, the native hints of picked releases) is fingerprinted, and a
//! failure's explanation, which reads refusal reasons and the requirements of releases never
//! picked, keeps the packages it names valid only while they are unchanged as a whole.
//!
//! Anything that could enter a closure was consulted, because a package can only enter
//! through a dependency of a release the solve read. Exact, and cheap to check.
//!
//! Shards split the cells of a plan by index (`index % count`), so every shard gets a mix of
//! rows; [`merge_shards`] puts them back in order, giving exactly the matrix one run gives.

use super::matrix::{Cell, Matrix, PlanOptions, image_columns, package_rows, plan_cell};
use crate::load::Inputs;
use crate::model::{Image, PackageId, Priority, Registry, Release};
use crate::solve::{Admission, ImageView, Observed, SetCache};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use std::collections::HashMap;
use std::fmt::{self, Write as _};
use std::sync::OnceLock;

/// Bumped whenever what a cell depends on, or how it is computed, changes.
pub const CACHE_FORMAT: u32 = 2;

/// 64-bit FNV-1a: stable across runs, platforms and Rust versions, unlike std's hashers.
#[derive(Clone, Copy)]
struct Fnv(u64);

impl Fnv {
    fn new() -> Fnv {
        Fnv(0xcbf2_9ce4_8422_2325)
    }
    fn feed(&mut self, b: &[u8]) {
        for &x in b {
            self.0 ^= x as u64;
            self.0 = self.0.wrapping_mul(0x0000_0100_0000_01b3);
        }
    }
    /// A separator so that ("ab", "c") and ("a", "bc") differ.
    fn end(&mut self) -> &mut Fnv {
        self.feed(&[0xff]);
        self
    }
    fn str(&mut self, s: &str) -> &mut Fnv {
        self.feed(s.as_bytes());
        self.end()
    }
    /// Hashes what `x` displays as, without building the string.
    fn shown(&mut self, x: impl fmt::Display) -> &mut Fnv {
        let _ = write!(self, "{x}");
        self.end()
    }
    fn flag(&mut self, b: bool) -> &mut Fnv {
        self.feed(&[b as u8]);
        self
    }
}

impl fmt::Write for Fnv {
    fn write_str(&mut self, s: &str) -> fmt::Result {
        self.feed(s.as_bytes());
        Ok(())
    }
}

/// What can change about a package between two registries, at three depths.
struct Prints {
    /// Everything that can change a solve, its explanation or its native assessment.
    whole: u64,
    /// What release indices mean and what a cell reads of the package itself: its name,
    /// summary, flags and list of versions.
    listing: u64,
    /// Per release, what reading its dependencies and assessing it natively sees. Neither
    /// the version (in `listing`) nor the yank flag: a yank only changes admission, which
    /// is observed on its own.
    releases: Box<[u64]>,
}

impl Prints {
    fn of(registry: &Registry, id: PackageId) -> Prints {
        let p = registry.package(id);
        let mut listing = Fnv::new();
        listing
            .str(&p.name)
            .flag(p.declared)
            .str(p.summary.as_deref().unwrap_or(""))
            .flag(p.summary.is_some())
            .flag(p.native_helper);
        for r in &p.releases {
            listing.shown(&r.version);
        }
        let releases: Box<[u64]> = p
            .releases
            .iter()
            .map(|r| release_print(registry, r))
            .collect();
        let mut whole = Fnv::new();
        whole.feed(&listing.0.to_le_bytes());
        for (r, print) in p.releases.iter().zip(&releases) {
            whole.feed(&print.to_le_bytes());
            whole.flag(r.yanked);
        }
        Prints {
            whole: whole.0,
            listing: listing.0,
            releases,
        }
    }
}

/// Fingerprints of the current registry's packages, computed on first use.
struct PrintTable<'r> {
    registry: &'r Registry,
    prints: Vec<OnceLock<Prints>>,
}

impl<'r> PrintTable<'r> {
    fn new(registry: &'r Registry) -> Self {
        PrintTable {
            registry,
            prints: (0..registry.packages.len())
                .map(|_| OnceLock::new())
                .collect(),
        }
    }

    fn of(&self, id: PackageId) -> &Prints {
        self.prints[id.0 as usize].get_or_init(|| Prints::of(self.registry, id))
    }
}

fn release_print(registry: &Registry, r: &Release) -> u64 {
    let mut h = Fnv::new();
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
        h.shown(registry.platform(*p));
    }
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
    let mut h = Fnv::new();
    h.str(&image.id)
        .shown(&image.runtime)
        .str(image.family.as_str())
        .shown(&image.platform)
        .flag(image.toolchain);
    for p in &image.system_packages {
        h.str(p);
    }
    h.0
}

fn entry_fingerprint(entry: &Priority) -> u64 {
    let mut h = Fnv::new();
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

fn global_fingerprint(inputs: &Inputs, options: &PlanOptions) -> u64 {
    let mut h = Fnv::new();
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
    pub listing: u64,
    pub releases: Vec<u64>,
}

/// What a resolved cell observed of one package (indices into [`PlanCache::packages`] and
/// into the package's release list).
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Answers {
    pub package: u32,
    /// Releases that were admissible and must still be.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub admissible: Vec<u32>,
    /// Releases that were refused on the image and must still be.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub refused: Vec<u32>,
    /// Releases whose dependencies were read and must be unchanged.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub fetched: Vec<u32>,
}

/// One cached cell and what it depends on.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CachedCell {
    pub entry: u64,
    pub image: u64,
    /// What the solve observed of each consulted package.
    pub answers: Vec<Answers>,
    /// Packages (indices into [`PlanCache::packages`]) that must be unchanged as a whole.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub unchanged: Vec<u32>,
    pub cell: Cell,
}

/// What a plan leaves behind for the next one.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanCache {
    pub format: u32,
    pub global: u64,
    /// Every package a cached cell consulted, in name order.
    pub packages: Vec<CachedPackage>,
    pub cells: Vec<CachedCell>,
}

/// How much of a re-plan was reused.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize)]
pub struct ReplanStats {
    pub reused: usize,
    pub solved: usize,
}

/// Where a package of the previous cache stands in the current registry.
enum Standing {
    Unchanged(PackageId),
    /// Same versions and own fields; some release or yank flag differs.
    SameListing(PackageId),
    Changed,
}

/// Whether the current registry would answer the cached cell's solve, and read its
/// explanation, exactly as before. Returns the cell's observations in terms of the current
/// registry when so. A cell that observed nothing was asked for a name the registry lacked,
/// and holds while the name is still absent. A damaged cache makes cells invalid, never a
/// panic.
fn recheck(
    cached: &CachedCell,
    old: &[CachedPackage],
    standing: &[Standing],
    view: &ImageView<'_>,
    prints: &PrintTable<'_>,
) -> Option<Observed> {
    let mut observed = Observed::default();
    if cached.answers.is_empty() {
        return view
            .registry
            .id(&cached.cell.package)
            .is_none()
            .then_some(observed);
    }
    for &k in &cached.unchanged {
        match standing.get(k as usize)? {
            Standing::Unchanged(id) => observed.explained.push(*id),
            _ => return None,
        }
    }
    for a in &cached.answers {
        let k = a.package as usize;
        let (id, unchanged) = match standing.get(k)? {
            Standing::Unchanged(id) => (*id, true),
            Standing::SameListing(id) => (*id, false),
            Standing::Changed => return None,
        };
        let count = view.registry.package(id).releases.len();
        let all = || a.admissible.iter().chain(&a.refused).chain(&a.fetched);
        if all().any(|&i| i as usize >= count) {
            return None;
        }
        if !unchanged {
            let admissions = view.admissions(id);
            let is_admissible = |i: u32| admissions[i as usize] == Admission::Admissible;
            let now = &prints.of(id).releases;
            let before = &old[k].releases;
            if !a.admissible.iter().all(|&i| is_admissible(i))
                || a.refused.iter().any(|&i| is_admissible(i))
                || !a
                    .fetched
                    .iter()
                    .all(|&i| before.get(i as usize) == Some(&now[i as usize]))
            {
                return None;
            }
        }
        observed.packages.push(id);
        observed
            .admissions
            .extend(a.admissible.iter().map(|&i| (id, i, true)));
        observed
            .admissions
            .extend(a.refused.iter().map(|&i| (id, i, false)));
        observed.fetched.extend(a.fetched.iter().map(|&i| (id, i)));
    }
    observed.packages.sort_unstable();
    observed.admissions.sort_unstable();
    observed.fetched.sort_unstable();
    observed.explained.sort_unstable();
    Some(observed)
}

/// A cell's observations as cache entries, in terms of the package table `slot`.
fn answers_of(observed: &Observed, slot: &dyn Fn(PackageId) -> u32) -> Vec<Answers> {
    let (mut adm, mut fet) = (0, 0);
    observed
        .packages
        .iter()
        .map(|&id| {
            let mut a = Answers {
                package: slot(id),
                admissible: Vec::new(),
                refused: Vec::new(),
                fetched: Vec::new(),
            };
            // Both lists are sorted by package, like `packages`.
            while let Some(&(p, i, ok)) = observed.admissions.get(adm).filter(|x| x.0 <= id) {
                if p == id {
                    if ok {
                        a.admissible.push(i)
                    } else {
                        a.refused.push(i)
                    }
                }
                adm += 1;
            }
            while let Some(&(p, i)) = observed.fetched.get(fet).filter(|x| x.0 <= id) {
                if p == id {
                    a.fetched.push(i);
                }
                fet += 1;
            }
            a
        })
        .collect()
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

/// Plans the cells of `shard` (all when `None`), reusing every still-valid cell of `previous`.
/// The matrix is identical to a cold plan of the same cells.
pub fn replan(
    inputs: &Inputs,
    options: &PlanOptions,
    previous: Option<&PlanCache>,
    shard: Option<Shard>,
) -> (Matrix, PlanCache, ReplanStats) {
    let registry = &inputs.registry;
    let global = global_fingerprint(inputs, options);
    let previous = previous.filter(|p| p.format == CACHE_FORMAT && p.global == global);
    let old: HashMap<(&str, &str), &CachedCell> = previous
        .map(|p| {
            p.cells
                .iter()
                .map(|c| ((c.cell.package.as_str(), c.cell.image.as_str()), c))
                .collect()
        })
        .unwrap_or_default();
    let prints = PrintTable::new(registry);
    let old_packages: &[CachedPackage] = previous.map(|p| p.packages.as_slice()).unwrap_or(&[]);
    let standing: Vec<Standing> = old_packages
        .par_iter()
        .map(|p| match registry.id(&p.name) {
            None => Standing::Changed,
            Some(id) => {
                let now = prints.of(id);
                if now.whole == p.whole {
                    Standing::Unchanged(id)
                } else if now.listing == p.listing {
                    Standing::SameListing(id)
                } else {
                    Standing::Changed
                }
            }
        })
        .collect();
    let sets = SetCache::default();
    let views: Vec<ImageView<'_>> = inputs
        .images
        .images
        .iter()
        .map(|i| ImageView::new(registry, i, &sets))
        .collect();
    let image_keys: Vec<u64> = inputs.images.images.iter().map(image_fingerprint).collect();
    let n_images = views.len();
    let total = inputs.priorities.entries.len() * n_images;
    if let Some(pb) = &options.progress {
        pb.set_length(match shard {
            Some(s) => (0..total).filter(|i| s.contains(*i)).count() as u64,
            None => total as u64,
        });
    }
    let results: Vec<(Cell, u64, u64, bool)> = (0..total)
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
            if let Some(c) = old.get(&(entry.name.as_str(), image.id.as_str()))
                && c.entry == entry_key
                && c.image == image_key
                && let Some(observed) = recheck(c, old_packages, &standing, &views[col], &prints)
            {
                let mut cell = c.cell.clone();
                cell.observed = observed;
                return (cell, entry_key, image_key, true);
            }
            let cell = plan_cell(inputs, &views[col], entry, options);
            (cell, entry_key, image_key, false)
        })
        .collect();
    if let Some(pb) = &options.progress {
        pb.finish_and_clear();
    }
    let stats = ReplanStats {
        reused: results.iter().filter(|r| r.3).count(),
        solved: results.iter().filter(|r| !r.3).count(),
    };
    let cache = build_cache(&prints, global, &results);
    let matrix = Matrix {
        notice: super::matrix::NOTICE.to_string(),
        images: image_columns(inputs),
        packages: package_rows(inputs),
        cells: results.into_iter().map(|r| r.0).collect(),
        shard,
    };
    (matrix, cache, stats)
}

/// The cache of a finished plan: one table of every consulted package, in name order, and
/// each cell's basis in terms of it.
fn build_cache(
    prints: &PrintTable<'_>,
    global: u64,
    results: &[(Cell, u64, u64, bool)],
) -> PlanCache {
    let registry = prints.registry;
    let mut ids: Vec<PackageId> = results
        .iter()
        .flat_map(|r| {
            let o = &r.0.observed;
            o.packages.iter().chain(&o.explained).copied()
        })
        .collect();
    ids.par_sort_unstable();
    ids.dedup();
    ids.par_sort_by(|a, b| registry.name(*a).cmp(registry.name(*b)));
    let mut slots = vec![u32::MAX; registry.packages.len()];
    for (k, id) in ids.iter().enumerate() {
        slots[id.0 as usize] = k as u32;
    }
    let slot = |id: PackageId| slots[id.0 as usize];
    let packages = ids
        .par_iter()
        .map(|&id| {
            let p = prints.of(id);
            CachedPackage {
                name: registry.name(id).to_string(),
                whole: p.whole,
                listing: p.listing,
                releases: p.releases.to_vec(),
            }
        })
        .collect();
    let cells = results
        .par_iter()
        .map(|(cell, entry, image, _)| CachedCell {
            entry: *entry,
            image: *image,
            answers: answers_of(&cell.observed, &slot),
            unchanged: cell.observed.explained.iter().map(|id| slot(*id)).collect(),
            cell: cell.clone(),
        })
        .collect();
    PlanCache {
        format: CACHE_FORMAT,
        global,
        packages,
        cells,
    }
}

/// Puts shard matrices back together into exactly the matrix a single run gives.
pub fn merge_shards(parts: Vec<Matrix>) -> Result<Matrix, String> {
    let Some(first) = parts.first() else {
        return Err("no shard matrices given".into());
    };
    let count = first
        .shard
        .map(|s| s.count)
        .ok_or("the first matrix is not a shard (no `shard` field)")?;
    let mut seen = vec![false; count];
    for p in &parts {
        let s = p
            .shard
            .ok_or("a matrix without a `shard` field cannot be merged")?;
        if s.count != count {
            return Err(format!(
                "shard {}/{} does not belong to a split into {count}",
                s.index, s.count
            ));
        }
        if p.images != first.images || p.packages != first.packages {
            return Err(format!(
                "shard {}/{} was planned from other images or priorities",
                s.index, s.count
            ));
        }
        if std::mem::replace(&mut seen[s.index - 1], true) {
            return Err(format!("shard {}/{count} is given twice", s.index));
        }
    }
    if let Some(missing) = seen.iter().position(|s| !s) {
        return Err(format!("shard {}/{count} is missing", missing + 1));
    }
    let n = first.images.len();
    let total = first.packages.len() * n;
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
    let mut cells: Vec<Option<Cell>> = vec![None; total];
    for p in &parts {
        for c in &p.cells {
            let (Some(&r), Some(&k)) = (rows.get(c.package.as_str()), cols.get(c.image.as_str()))
            else {
                return Err(format!(
                    "cell {} on {} is not in the matrix",
                    c.package, c.image
                ));
            };
            let slot = &mut cells[r * n + k];
            if slot.is_some() {
                return Err(format!(
                    "cell {} on {} appears in two shards",
                    c.package, c.image
                ));
            }
            *slot = Some(c.clone());
        }
    }
    let cells: Vec<Cell> = cells
        .into_iter()
        .enumerate()
        .map(|(i, c)| c.ok_or_else(|| format!("cell {} of {total} is in no shard", i + 1)))
        .collect::<Result<_, _>>()?;
    Ok(Matrix {
        notice: first.notice.clone(),
        images: first.images.clone(),
        packages: first.packages.clone(),
        cells,
        shard: None,
    })
}
