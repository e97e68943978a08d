//! Registry-scale benchmark: prints its figures, asserts nothing about time.
//!
//! `cargo bench --bench scale` generates (once, cached under target/bench-data) a synthetic
//! registry of 200,000 packages, 1.5 million versions and 6 million dependency edges, then:
//! 1. loads it from the bulk CSV pair (wall time, peak memory) and compares with just reading
//!    and splitting the same files (the physical floor);
//! 2. plans the 1,000 most depended-on packages on 12 images (wall, median and 99th-percentile
//!    per-cell time);
//! 3. runs the same plan through a straightforward baseline: one pubgrub
//!    `OfflineDependencyProvider` per image, filled from the image-filtered registry, then one
//!    resolve per cell (fill time included);
//! 4. re-plans after changes to 1% of the packages (yanks and publications, on every 100th
//!    package and on random draws), warm (with the plan cache) and cold, checks the results
//!    are identical, and prints the bound any exact re-plan is held to;
//! 5. sweeps the newest version of every package on 4 images with a progress bar and a rate.
//!
//! Environment: `BASEFIT_BENCH_VERSIONS` (default 1500000) scales the registry;
//! `BASEFIT_BENCH_SWEEP=0` skips the sweep; `BASEFIT_BENCH_BASELINE=0` skips the baseline.

use basefit::load::Inputs;
use basefit::load::bulk::read_bulk;
use basefit::model::{
    Image, ImageSet, OsFamily, PackageId, Platform, Priority, PriorityList, Registry, Requirement,
};
use basefit::plan::matrix::plan_cell;
use basefit::plan::replan::replan;
use basefit::plan::{Matrix, PlanOptions};
use basefit::solve::{Admission, ImageView, SetCache};
use basefit::synth::{SynthOptions, write_bulk};
use pubgrub::{OfflineDependencyProvider, Ranges};
use rayon::prelude::*;
use semver::Version;
use std::collections::HashMap;
use std::io::BufWriter;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

fn env_usize(name: &str, default: usize) -> usize {
    std::env::var(name)
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(default)
}

/// Peak resident memory of this process since the last reset, in bytes.
fn peak_rss() -> u64 {
    let status = std::fs::read_to_string("/proc/self/status").unwrap_or_default();
    status
        .lines()
        .find(|l| l.starts_with("VmHWM:"))
        .and_then(|l| l.split_whitespace().nth(1))
        .and_then(|kb| kb.parse::<u64>().ok())
        .map(|kb| kb * 1024)
        .unwrap_or(0)
}

/// Resets the peak so the next reading covers only what follows (Linux: clear_refs 5).
fn reset_peak() {
    let _ = std::fs::write("/proc/self/clear_refs", "5");
}

fn gib(bytes: u64) -> f64 {
    bytes as f64 / (1u64 << 30) as f64
}

fn data(versions: usize) -> (PathBuf, PathBuf) {
    // The generator's version is in the name: data an earlier generator wrote is not reused.
    let dir = PathBuf::from(format!(
        "target/bench-data/v{versions}-g{}",
        basefit::synth::GENERATOR_VERSION
    ));
    let (v, d) = (dir.join("versions.csv"), dir.join("dependencies.csv"));
    let stamp = dir.join("complete");
    if !stamp.exists() {
        std::fs::create_dir_all(&dir).unwrap();
        let t = Instant::now();
        let opts = SynthOptions::scaled(7, versions);
        let summary = write_bulk(
            &opts,
            BufWriter::new(std::fs::File::create(&v).unwrap()),
            BufWriter::new(std::fs::File::create(&d).unwrap()),
        )
        .unwrap();
        std::fs::write(&stamp, format!("{summary:?}\n")).unwrap();
        println!(
            "generated {summary:?} in {:.1} s",
            t.elapsed().as_secs_f64()
        );
    }
    (v, d)
}

/// Reading and splitting the files, nothing else: the floor any loader pays.
fn floor(paths: &[&Path]) -> (Duration, u64) {
    let t = Instant::now();
    let mut fields = 0u64;
    for p in paths {
        let mut reader = csv::ReaderBuilder::new().from_reader(std::io::BufReader::with_capacity(
            1 << 20,
            std::fs::File::open(p).unwrap(),
        ));
        let mut rec = csv::ByteRecord::new();
        while reader.read_byte_record(&mut rec).unwrap() {
            fields += rec.len() as u64;
        }
    }
    (t.elapsed(), fields)
}

fn images() -> ImageSet {
    let runtimes = [
        "2.0.0", "2.2.0", "2.4.0", "2.5.0", "2.6.0", "2.7.0", "2.8.0", "2.9.0", "3.0.0", "3.1.0",
        "3.2.0", "3.2.0",
    ];
    let kinds = [
        (OsFamily::Debian, "glibc", "x86_64", true),
        (OsFamily::Alpine, "musl", "x86_64", true),
        (OsFamily::Rhel, "glibc", "x86_64", false),
        (OsFamily::Debian, "glibc", "aarch64", true),
    ];
    let images = runtimes
        .iter()
        .enumerate()
        .map(|(i, rt)| {
            let (family, libc, arch, toolchain) = kinds[i % kinds.len()];
            Image {
                id: format!("bench-{i:02}-{rt}-{}-{arch}", family.as_str()),
                runtime: Version::parse(rt).unwrap(),
                family,
                platform: Platform {
                    os: "linux".into(),
                    libc: libc.into(),
                    arch: arch.into(),
                },
                toolchain,
                cxx: toolchain,
                system_packages: ["zlib1g-dev", "libssl-dev", "zlib-dev", "openssl-dev"]
                    .iter()
                    .map(|s| s.to_string())
                    .collect(),
                extends: None,
                origin: basefit::load::diag::Origin {
                    file: "bench".into(),
                    line: i + 1,
                },
            }
        })
        .collect();
    ImageSet { images }
}

/// The `n` most depended-on declared packages, as a priority list (weight = dependents).
fn top_packages(registry: &Registry, n: usize) -> PriorityList {
    PriorityList {
        entries: registry
            .most_depended_on()
            .into_iter()
            .take(n)
            .enumerate()
            .map(|(i, (id, dependents))| {
                let origin = basefit::load::diag::Origin {
                    file: "bench".into(),
                    line: i + 1,
                };
                Priority {
                    weight: dependents as f64 + 1.0,
                    ..Priority::named(i + 1, registry.name(id), origin)
                }
            })
            .collect(),
    }
}

/// Prints how many cells predict differently between `before` and `after` (both of
/// `inputs`' cells), and the share of the cold solve time they take: any exact re-plan must
/// compute at least those cells again, so that share bounds the speed-up any exact reuse can
/// reach, whatever it records. Then the same for the cells the re-plan did solve again
/// (`solved`): the speed-up its reuse rules allow with no cost besides solving, which tells a
/// shortfall in what is reused from one in the re-plan's own overhead.
fn exact_bound(
    inputs: &Inputs,
    options: &PlanOptions,
    before: &Matrix,
    published: &[(String, String, String)],
    after: &Matrix,
    solved: &[usize],
) {
    let (_, _, per_cell) = timed_plan(inputs, options);
    // A re-plan keeps a cell whose answer only shows a release published just after the
    // newest one in its place (a look-alike standing in): compare with the old answer so
    // rewritten, and the bound holds for any re-plan that either keeps (and so rewrites) a
    // cell or solves it again.
    let published: HashMap<&str, (&str, &str)> = published
        .iter()
        .map(|(name, old, new)| (name.as_str(), (old.as_str(), new.as_str())))
        .collect();
    let rewritten = |cell: &basefit::plan::Cell| {
        let mut cell = cell.clone();
        let swap = |name: &str, version: &mut String| {
            if let Some((old, new)) = published.get(name)
                && version == old
            {
                *version = new.to_string();
            }
        };
        if let Some(root) = cell.root_version.as_mut() {
            swap(&cell.package, root);
        }
        for pinned in &mut cell.closure {
            swap(&pinned.name, &mut pinned.version);
        }
        cell
    };
    let differs: Vec<usize> = (0..after.cells.len())
        .filter(|&i| {
            serde_json::to_string(&rewritten(&before.cells[i])).ok()
                != serde_json::to_string(&after.cells[i]).ok()
        })
        .collect();
    let all: Duration = per_cell.iter().map(|c| c.0).sum();
    let needed: Duration = differs.iter().map(|&i| per_cell[i].0).sum();
    if differs.is_empty() {
        // Nothing has to be solved again, so solving sets no bound: a ratio to zero would
        // print as a meaningless huge number.
        println!(
            "  no cell predicts differently after the change (other than by a new release in place of the one before it): solving sets no bound here, only a re-plan's own costs do"
        );
    } else {
        println!(
            "  {} cells predict differently after the change (other than by a new release in place of the one before it); solving only those takes {:.0}% of the cold solve time, so no exact re-plan that keeps or solves whole cells can be more than {:.1}x faster here",
            differs.len(),
            100.0 * needed.as_secs_f64() / all.as_secs_f64(),
            all.as_secs_f64() / needed.as_secs_f64().max(1e-9)
        );
    }
    let resolved: Duration = solved
        .iter()
        .filter_map(|&i| per_cell.get(i))
        .map(|c| c.0)
        .sum();
    println!(
        "  the {} cells this re-plan solved again take {:.0}% of the cold solve time: its reuse allows at most {:.1}x",
        solved.len(),
        100.0 * resolved.as_secs_f64() / all.as_secs_f64(),
        all.as_secs_f64() / resolved.as_secs_f64().max(1e-9)
    );
}

/// Every 100th declared package from `offset` on: 1% of them. Packages are declared oldest
/// first, and the oldest are the most depended on, so offset 0 takes the hub of the whole
/// registry.
fn every_hundredth(registry: &Registry, offset: usize) -> Vec<PackageId> {
    let declared = registry.ids().filter(|id| registry.package(*id).declared);
    declared.skip(offset).step_by(100).collect()
}

/// 1% of the declared packages drawn at random (seeded), in id order.
fn random_hundredth(registry: &Registry, seed: u64) -> Vec<PackageId> {
    let declared: Vec<PackageId> = registry
        .ids()
        .filter(|id| registry.package(*id).declared)
        .collect();
    let mut rng = basefit::synth::SplitMix64::new(seed, 0x0062_656e_6368, 0);
    let mut taken = vec![false; declared.len()];
    let mut picked = Vec::with_capacity(declared.len() / 100);
    while picked.len() < declared.len() / 100 {
        let k = rng.below(declared.len() as u64) as usize;
        if !std::mem::replace(&mut taken[k], true) {
            picked.push(declared[k]);
        }
    }
    picked.sort_unstable();
    picked
}

/// What a change to the registry did: how many packages it changed, and for each release it
/// published just after a package's newest one, the package's name and the two versions
/// (`old`, `new`) as a cell shows them.
#[derive(Default)]
struct Change {
    packages: usize,
    published: Vec<(String, String, String)>,
}

/// Flips the yank flag of the newest release of each of `ids`.
fn flip_newest_yank(registry: &mut Registry, ids: &[PackageId]) -> Change {
    let mut change = Change::default();
    for &id in ids {
        if let Some(r) = registry.package_mut(id).releases.last_mut() {
            r.yanked = !r.yanked;
            change.packages += 1;
        }
    }
    change
}

/// Publishes, for each of `ids`, a release a patch above its newest unyanked one (same
/// metadata) when that is newer than everything published.
fn publish_patch(registry: &mut Registry, ids: &[PackageId]) -> Change {
    let mut change = Change::default();
    for &id in ids {
        let name = registry.name(id).to_string();
        let releases = &mut registry.package_mut(id).releases;
        let Some(newest) = releases.iter().rev().find(|r| !r.yanked) else {
            continue;
        };
        let mut next = newest.clone();
        next.version = Version::new(
            newest.version.major,
            newest.version.minor,
            newest.version.patch + 1,
        );
        next.raw_version = None;
        if releases
            .last()
            .is_some_and(|last| next.version > last.version)
        {
            let old = releases.last().map(|r| r.version.to_string());
            change
                .published
                .push((name, old.unwrap_or_default(), next.version.to_string()));
            releases.push(next);
            change.packages += 1;
        }
    }
    change
}

/// Re-plans after `change`, warm and cold, and prints both with the exact bound. A single
/// run of either swings by a third on this machine from one run to the next, so each is run
/// `RUNS` times (the warm one from a copy of the same cache) and the medians are compared.
fn replan_after(
    what: &str,
    inputs: &mut Inputs,
    options: &PlanOptions,
    change: impl FnOnce(&mut Registry) -> Change,
) {
    const RUNS: usize = 5;
    let (cache, _) = replan(inputs, options, None, None);
    let before = cache.matrix.clone();
    let change = change(&mut inputs.registry);
    let changed = change.packages;
    let (warm_times, (warm, stats)) = timed_runs(RUNS, || {
        let previous = cache.clone();
        let t = Instant::now();
        let run = replan(inputs, options, Some(previous), None);
        (t.elapsed(), run)
    });
    let (cold_times, (cold, _)) = timed_runs(RUNS, || {
        let t = Instant::now();
        let run = replan(inputs, options, None, None);
        (t.elapsed(), run)
    });
    let (warm_time, cold_time) = (warm_times[RUNS / 2], cold_times[RUNS / 2]);
    println!(
        "re-plan after {what} ({changed} packages): warm {:.3} s ({} reused, {} solved), cold {:.2} s, speed-up {:.1}x (medians of {RUNS}; warm {:.3}-{:.3} s), identical: {}",
        warm_time.as_secs_f64(),
        stats.reused,
        stats.solved,
        cold_time.as_secs_f64(),
        cold_time.as_secs_f64() / warm_time.as_secs_f64(),
        warm_times[0].as_secs_f64(),
        warm_times[RUNS - 1].as_secs_f64(),
        basefit::report::to_json(&warm.matrix) == basefit::report::to_json(&cold.matrix)
    );
    exact_bound(
        inputs,
        options,
        &before,
        &change.published,
        &cold.matrix,
        &stats.solved_cells,
    );
}

/// Runs `run` `runs` times (at least once); returns the times it reports, sorted, and the
/// last result. Each run times itself, so what it sets up or drops outside its clock is not
/// counted, and the previous result is dropped only after the next run has been timed.
fn timed_runs<T>(runs: usize, mut run: impl FnMut() -> (Duration, T)) -> (Vec<Duration>, T) {
    let (first, mut last) = run();
    let mut times = vec![first];
    for _ in 1..runs {
        let (time, result) = run();
        times.push(time);
        last = result;
    }
    times.sort();
    (times, last)
}

fn percentile(sorted: &[Duration], q: f64) -> Duration {
    if sorted.is_empty() {
        return Duration::ZERO;
    }
    sorted[((sorted.len() - 1) as f64 * q).round() as usize]
}

/// Plans every cell, timing each; returns wall time, the per-cell times (sorted) and the
/// outcomes and times in cell order.
fn timed_plan(
    inputs: &Inputs,
    options: &PlanOptions,
) -> (
    Duration,
    Vec<Duration>,
    Vec<(Duration, basefit::plan::Outcome)>,
) {
    let t = Instant::now();
    let sets = SetCache::default();
    let views: Vec<ImageView<'_>> = inputs
        .images
        .images
        .iter()
        .map(|i| ImageView::new(&inputs.registry, i, &sets))
        .collect();
    let n = views.len();
    let total = inputs.priorities.entries.len() * n;
    let out: Vec<(Duration, basefit::plan::Outcome)> = (0..total)
        .into_par_iter()
        .map(|i| {
            let s = Instant::now();
            let cell = plan_cell(
                inputs,
                &views[i % n],
                &inputs.priorities.entries[i / n],
                options,
            );
            (s.elapsed(), cell.outcome)
        })
        .collect();
    let wall = t.elapsed();
    let mut times: Vec<Duration> = out.iter().map(|o| o.0).collect();
    times.sort();
    (wall, times, out)
}

type BaseVs = Ranges<Version>;

/// The set of exactly these versions (ascending), built in one pass.
fn singletons<'a>(versions: impl Iterator<Item = &'a Version>) -> BaseVs {
    versions
        .map(|v| {
            (
                std::ops::Bound::Included(v.clone()),
                std::ops::Bound::Included(v.clone()),
            )
        })
        .collect()
}

/// The straightforward baseline: per image, an `OfflineDependencyProvider` holding every
/// admissible release of every package, each dependency as the union of the target's
/// admissible matching versions; then one resolve per cell through a root package.
fn baseline(inputs: &Inputs) -> (Duration, Duration, usize) {
    let registry = &inputs.registry;
    let t = Instant::now();
    let mut fill = Duration::ZERO;
    let mut installs = 0usize;
    for image in &inputs.images.images {
        let f = Instant::now();
        let sets = SetCache::default();
        let view = ImageView::new(registry, image, &sets);
        let mut dp: OfflineDependencyProvider<String, BaseVs> = OfflineDependencyProvider::new();
        let mut req_cache: HashMap<(u32, u32), BaseVs> = HashMap::new();
        for id in registry.ids() {
            let pkg = registry.package(id);
            let admissions = view.admissions(id).to_vec();
            for (i, r) in pkg.releases.iter().enumerate() {
                if admissions[i] != Admission::Admissible {
                    continue;
                }
                let deps: Vec<(String, BaseVs)> = r
                    .runtime_deps()
                    .map(|d| {
                        let set = req_cache
                            .entry((d.package.0, d.req.0))
                            .or_insert_with(|| {
                                let target = registry.package(d.package);
                                let adm = view.admissions(d.package);
                                let req = registry.requirement(d.req);
                                singletons(
                                    target
                                        .releases
                                        .iter()
                                        .enumerate()
                                        .filter(|(j, t)| {
                                            adm[*j] == Admission::Admissible
                                                && req.matches(&t.version)
                                        })
                                        .map(|(_, t)| &t.version),
                                )
                            })
                            .clone();
                        (registry.name(d.package).to_string(), set)
                    })
                    .collect();
                dp.add_dependencies(pkg.name.to_string(), r.version.clone(), deps);
            }
        }
        fill += f.elapsed();
        let any = Requirement::any();
        for entry in &inputs.priorities.entries {
            let Some(id) = registry.id(&entry.name) else {
                continue;
            };
            let root_set = singletons(
                registry
                    .package(id)
                    .releases
                    .iter()
                    .filter(|r| any.matches(&r.version))
                    .map(|r| &r.version),
            );
            // One root package per entry, added to the image's provider.
            let root = format!("(root) {}", entry.name);
            dp.add_dependencies(
                root.clone(),
                Version::new(0, 0, 0),
                [(entry.name.clone(), root_set)],
            );
            if pubgrub::resolve(&dp, root, Version::new(0, 0, 0)).is_ok() {
                installs += 1;
            }
        }
    }
    (t.elapsed(), fill, installs)
}

fn main() {
    let versions = env_usize("BASEFIT_BENCH_VERSIONS", 1_500_000);
    println!(
        "basefit scale benchmark: {versions} versions, {} threads",
        rayon::current_num_threads()
    );
    let (vpath, dpath) = data(versions);

    let (floor_time, fields) = floor(&[&vpath, &dpath]);
    reset_peak();
    let t = Instant::now();
    let (registry, ledger) = read_bulk(&vpath, &dpath).unwrap();
    let load = t.elapsed();
    let load_peak = peak_rss();
    println!(
        "load: {:.2} s, peak {:.2} GiB; floor (read and split {fields} fields): {:.2} s; ratio {:.1}x; {} packages, {} versions, {} problems",
        load.as_secs_f64(),
        gib(load_peak),
        floor_time.as_secs_f64(),
        load.as_secs_f64() / floor_time.as_secs_f64(),
        registry.packages.len(),
        registry.release_count(),
        ledger.problems.len()
    );

    let mut inputs = Inputs {
        priorities: top_packages(&registry, 1000),
        images: images(),
        registry,
        ledger,
        ..Default::default()
    };
    let options = PlanOptions::default();
    let (wall, times, outcomes) = timed_plan(&inputs, &options);
    let resolving = outcomes.iter().filter(|o| o.1.resolves()).count();
    println!(
        "plan {} x {} = {} cells: {:.2} s wall; per cell median {:.3} ms, p99 {:.3} ms, max {:.1} ms; {resolving} resolve",
        inputs.priorities.entries.len(),
        inputs.images.images.len(),
        times.len(),
        wall.as_secs_f64(),
        percentile(&times, 0.5).as_secs_f64() * 1e3,
        percentile(&times, 0.99).as_secs_f64() * 1e3,
        times.last().copied().unwrap_or_default().as_secs_f64() * 1e3,
    );

    if env_usize("BASEFIT_BENCH_BASELINE", 1) != 0 {
        let native_off = PlanOptions {
            native: false,
            ..PlanOptions::default()
        };
        let (ours, _, ours_out) = timed_plan(&inputs, &native_off);
        let (base, fill, base_installs) = baseline(&inputs);
        let ours_installs = ours_out.iter().filter(|o| o.1.resolves()).count();
        println!(
            "baseline (OfflineDependencyProvider per image, sequential fill + resolve): {:.2} s ({:.2} s fill); basefit without native step: {:.2} s; speed-up {:.1}x; installs agree: {} (baseline {base_installs}, basefit {ours_installs})",
            base.as_secs_f64(),
            fill.as_secs_f64(),
            ours.as_secs_f64(),
            base.as_secs_f64() / ours.as_secs_f64(),
            base_installs == ours_installs
        );
    }

    let (cache, _) = replan(&inputs, &options, None, None);
    let t = Instant::now();
    // The new cache is dropped after timing, as the warm and cold runs below keep theirs.
    let (_kept, unchanged) = replan(&inputs, &options, Some(cache), None);
    println!(
        "re-plan with nothing changed: {:.3} s ({} reused, {} solved)",
        t.elapsed().as_secs_f64(),
        unchanged.reused,
        unchanged.solved
    );
    // Two kinds of change to 1% of the packages: the yank flag of the newest release flipped
    // (mostly yanks, a few un-yanks), and a new patch release. First on every 100th declared
    // package, which takes the registry's hub for the yanks; then on random draws of 1%.
    // Changes accumulate: each re-plan starts from the registry the previous one left.
    replan_after(
        "flipping the yank flag of the newest release of every 100th package",
        &mut inputs,
        &options,
        |registry| flip_newest_yank(registry, &every_hundredth(registry, 0)),
    );
    replan_after(
        "publishing a new patch release of every 100th package",
        &mut inputs,
        &options,
        |registry| publish_patch(registry, &every_hundredth(registry, 50)),
    );
    for seed in 1..=3 {
        replan_after(
            &format!("publishing a new patch release of a random 1% (draw {seed})"),
            &mut inputs,
            &options,
            |registry| publish_patch(registry, &random_hundredth(registry, seed)),
        );
        replan_after(
            &format!("flipping the yank flag of the newest release of a random 1% (draw {seed})"),
            &mut inputs,
            &options,
            |registry| flip_newest_yank(registry, &random_hundredth(registry, 100 + seed)),
        );
    }

    if env_usize("BASEFIT_BENCH_SWEEP", 1) != 0 {
        let registry = &inputs.registry;
        let entries: Vec<Priority> = registry
            .ids()
            .filter(|id| registry.package(*id).declared)
            .filter_map(|id| {
                let newest = registry
                    .package(id)
                    .releases
                    .iter()
                    .rev()
                    .find(|r| !r.yanked)?;
                let origin = basefit::load::diag::Origin {
                    file: "sweep".into(),
                    line: 0,
                };
                Some(Priority {
                    req: Requirement::parse(&format!("={}", newest.version)).ok(),
                    prerelease: true,
                    ..Priority::named(0, registry.name(id), origin)
                })
            })
            .collect();
        let sweep_images = ImageSet {
            images: inputs
                .images
                .images
                .iter()
                .step_by(3)
                .take(4)
                .cloned()
                .collect(),
        };
        let sweep = Inputs {
            priorities: PriorityList { entries },
            images: sweep_images,
            registry: std::mem::take(&mut inputs.registry),
            ..Default::default()
        };
        // The plan styles the bar (cells, rate, time left); it draws only on a terminal.
        let sweep_options = PlanOptions {
            progress: Some(indicatif::ProgressBar::new(0)),
            closures: false,
            ..PlanOptions::default()
        };
        let t = Instant::now();
        let m = replan(&sweep, &sweep_options, None, None).0.matrix;
        let took = t.elapsed();
        println!(
            "sweep: newest version of {} packages x {} images = {} cells in {:.1} s ({:.0} cells/s), {} resolve",
            sweep.priorities.entries.len(),
            sweep.images.images.len(),
            m.cells.len(),
            took.as_secs_f64(),
            m.cells.len() as f64 / took.as_secs_f64(),
            m.cells.iter().filter(|c| c.outcome.resolves()).count()
        );
    }
}
