//! Incremental re-plans and shards.
//!
//! A solve only ever sees the packages whose versions or dependencies it consulted (the
//! provider records them). A cached cell stays valid while its image, its priority entry, the
//! run's options and catalog, and the fingerprint of every package it consulted are unchanged;
//! anything that could enter the closure was consulted, because a package can only enter
//! through a dependency of a consulted release. Exact, and cheap to check.
//!
//! Shards split the cells of a plan by index (`index % count`), so every shard gets a mix of
//! rows; [`merge_shards`] puts them back in order, giving exactly the matrix one run gives.

use super::matrix::{Cell, Matrix, PlanOptions, image_columns, package_rows, plan_cell};
use crate::load::Inputs;
use crate::model::{Image, PackageId, Priority, Registry};
use crate::solve::{ImageView, SetCache};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use std::collections::HashMap;
use std::sync::OnceLock;

/// Bumped whenever what a cell depends on, or how it is computed, changes.
const CACHE_FORMAT: u32 = 1;

/// 64-bit FNV-1a: stable across runs, platforms and Rust versions, unlike std's hashers.
#[derive(Clone, Copy)]
struct Fnv(u64);

impl Fnv {
    fn new() -> Fnv {
        Fnv(0xcbf2_9ce4_8422_2325)
    }
    fn bytes(&mut self, b: &[u8]) -> &mut Fnv {
        for &x in b {
            self.0 ^= x as u64;
            self.0 = self.0.wrapping_mul(0x0000_0100_0000_01b3);
        }
        // A separator so that ("ab", "c") and ("a", "bc") differ.
        self.0 ^= 0xff;
        self.0 = self.0.wrapping_mul(0x0000_0100_0000_01b3);
        self
    }
    fn str(&mut self, s: &str) -> &mut Fnv {
        self.bytes(s.as_bytes())
    }
}

/// Everything about a package that can change a solve or its native assessment.
pub fn package_fingerprint(registry: &Registry, id: PackageId) -> u64 {
    let p = registry.package(id);
    let mut h = Fnv::new();
    h.str(&p.name).str(if p.declared { "d" } else { "u" });
    h.str(p.summary.as_deref().unwrap_or(""))
        .str(if p.native_helper { "h" } else { "-" });
    for r in &p.releases {
        h.str(&r.version.to_string())
            .str(if r.yanked { "y" } else { "n" });
        h.str(
            r.runtime
                .map(|q| registry.requirement(q).text.as_str())
                .unwrap_or("(any)"),
        );
        for d in r.deps.iter() {
            h.str(registry.name(d.package))
                .str(&registry.requirement(d.req).text)
                .str(if d.kind == crate::model::DepKind::Runtime {
                    "r"
                } else {
                    "v"
                });
        }
        h.str(if r.build.source { "s" } else { "-" });
        for p in r.build.prebuilt.iter() {
            h.str(&registry.platform(*p).to_string());
        }
        if let Some(n) = &r.native {
            for l in &n.libraries {
                h.str("L").str(l);
            }
            for f in &n.files {
                h.str("F").str(f);
            }
        }
        h.str("|");
    }
    h.0
}

fn image_fingerprint(image: &Image) -> u64 {
    let mut h = Fnv::new();
    h.str(&image.id)
        .str(&image.runtime.to_string())
        .str(image.family.as_str())
        .str(&image.platform.to_string())
        .str(if image.toolchain { "t" } else { "-" });
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
        .str(if entry.prerelease { "p" } else { "-" });
    h.0
}

fn global_fingerprint(inputs: &Inputs, options: &PlanOptions) -> u64 {
    let mut h = Fnv::new();
    h.str(env!("CARGO_PKG_VERSION"))
        .str(&CACHE_FORMAT.to_string())
        .str(&options.budget.to_string())
        .str(if options.native { "n" } else { "-" })
        .str(if options.closures { "c" } else { "-" })
        .str(&serde_json::to_string(&inputs.catalog).unwrap_or_default());
    h.0
}

/// One cached cell and what it depends on.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CachedCell {
    pub entry: u64,
    pub image: u64,
    /// Consulted packages by name with their fingerprints.
    pub touched: Vec<(String, u64)>,
    pub cell: Cell,
}

/// What a plan leaves behind for the next one.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanCache {
    pub format: u32,
    pub global: u64,
    pub cells: Vec<CachedCell>,
}

/// How much of a re-plan was reused.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize)]
pub struct ReplanStats {
    pub reused: usize,
    pub solved: usize,
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
    let fingerprints: Vec<OnceLock<u64>> = (0..registry.packages.len())
        .map(|_| OnceLock::new())
        .collect();
    let fingerprint_of = |name: &str| -> u64 {
        match registry.id(name) {
            Some(id) => {
                *fingerprints[id.0 as usize].get_or_init(|| package_fingerprint(registry, id))
            }
            None => 0,
        }
    };
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
    let results: Vec<(CachedCell, bool)> = (0..total)
        .into_par_iter()
        .filter(|i| shard.is_none_or(|s| s.contains(*i)))
        .map(|i| {
            if let Some(pb) = &options.progress {
                pb.inc(1);
            }
            let entry = &inputs.priorities.entries[i / n_images];
            let col = i % n_images;
            let entry_key = entry_fingerprint(entry);
            let image = &inputs.images.images[col];
            if let Some(c) = old.get(&(entry.name.as_str(), image.id.as_str())) {
                let valid = c.entry == entry_key
                    && c.image == image_keys[col]
                    && c.touched
                        .iter()
                        .all(|(name, fp)| fingerprint_of(name) == *fp);
                if valid {
                    return ((*c).clone(), true);
                }
            }
            let cell = plan_cell(inputs, &views[col], entry, options);
            let touched = cell
                .touched
                .iter()
                .map(|id| {
                    (
                        registry.name(*id).to_string(),
                        fingerprint_of(registry.name(*id)),
                    )
                })
                .collect();
            (
                CachedCell {
                    entry: entry_key,
                    image: image_keys[col],
                    touched,
                    cell,
                },
                false,
            )
        })
        .collect();
    if let Some(pb) = &options.progress {
        pb.finish_and_clear();
    }
    let stats = ReplanStats {
        reused: results.iter().filter(|r| r.1).count(),
        solved: results.iter().filter(|r| !r.1).count(),
    };
    let cached: Vec<CachedCell> = results.into_iter().map(|r| r.0).collect();
    let matrix = Matrix {
        notice: super::matrix::NOTICE.to_string(),
        images: image_columns(inputs),
        packages: package_rows(inputs),
        cells: cached.iter().map(|c| c.cell.clone()).collect(),
        shard,
    };
    (
        matrix,
        PlanCache {
            format: CACHE_FORMAT,
            global,
            cells: cached,
        },
        stats,
    )
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
