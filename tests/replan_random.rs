//! Incremental re-plans on seeded synthetic registries under random edits of every kind a
//! registry snapshot can see: the warm matrix and the cache it leaves must be exactly those of
//! a cold plan (the reference is basefit's own cold plan, which the solver tests check against
//! exhaustive search and the PubGrub documentation's examples).
//!
//! `BASEFIT_REPLAN_SEEDS=N` runs more seeds (default 4).

mod common;

use basefit::load::Inputs;
use basefit::load::images::read_images_str;
use basefit::load::registry::{RegistryBuilder, read_yaml_str};
use basefit::model::{Dep, PackageId, Priority, PriorityList, Registry, Release};
use basefit::native::catalog::Catalog;
use basefit::plan::PlanOptions;
use basefit::plan::replan::{PlanCache, replan};
use basefit::report::to_json;
use basefit::synth::{SplitMix64, SynthOptions, write_yaml};

/// The generator's own seeded stream, drawing indices below `n`.
struct Rng(SplitMix64);

impl Rng {
    fn new(seed: u64) -> Rng {
        Rng(SplitMix64::new(seed, 0x7265_706c_616e, 0))
    }
    fn below(&mut self, n: usize) -> usize {
        self.0.below(n as u64) as usize
    }
}

const IMAGES: &str = "images:
- {id: old-deb, runtime: 2.3.0, family: debian, platform: linux/glibc/x86_64, toolchain: true, packages: [zlib1g-dev]}
- {id: mid-alpine, runtime: 2.7.0, family: alpine, platform: linux/musl/x86_64, toolchain: true}
- {id: new-rhel, runtime: 3.1.0, family: rhel, platform: linux/glibc/x86_64, toolchain: false}
- {id: new-arm, runtime: 3.2.0, family: debian, platform: linux/glibc/aarch64, toolchain: true, packages: [libssl-dev]}
";

fn inputs(seed: u64) -> Inputs {
    let mut text = Vec::new();
    write_yaml(&SynthOptions::scaled(seed, 6_000), &mut text).unwrap();
    let mut builder = RegistryBuilder::new();
    read_yaml_str(
        "synth.yaml",
        std::str::from_utf8(&text).unwrap(),
        &mut builder,
    )
    .unwrap();
    let (registry, mut ledger) = builder.finish();
    let images = read_images_str("images.yaml", IMAGES, &mut ledger).unwrap();
    // The most depended-on packages (long closures), a few others, and two absent names.
    let ids: Vec<PackageId> = registry
        .most_depended_on()
        .into_iter()
        .map(|p| p.0)
        .collect();
    let mut names: Vec<String> = ids[..40]
        .iter()
        .chain(ids.iter().step_by(37).take(20))
        .map(|id| registry.name(*id).to_string())
        .collect();
    names.push("not-yet-published".into());
    names.push("never-published".into());
    let entries = names
        .into_iter()
        .enumerate()
        .map(|(i, name)| {
            let origin = basefit::load::diag::Origin {
                file: "test".into(),
                line: i + 1,
            };
            Priority::named(i + 1, &name, origin)
        })
        .collect();
    Inputs {
        registry,
        images,
        priorities: PriorityList { entries },
        catalog: Catalog::builtin(),
        ledger,
        ..Default::default()
    }
}

/// One random edit to one package, of the kinds a daily snapshot brings. Returns what it did.
fn edit(registry: &mut Registry, id: PackageId, rng: &mut Rng) -> &'static str {
    let reqs = [">=2.0", ">=2.6", ">=3.0", "<3.0", "^2.4", "*"];
    let req = registry
        .intern_requirement(reqs[rng.below(reqs.len())])
        .unwrap();
    let dep_req = registry
        .intern_requirement(["*", "^1", "<1", ">=2"][rng.below(4)])
        .unwrap();
    let other = PackageId(rng.below(registry.packages.len()) as u32);
    if rng.below(12) == 0 {
        // Every record of a package became unreadable, or one more did of a package that
        // has none left: its explanation counts the records left out.
        let emptied = registry
            .packages
            .iter()
            .position(|q| q.declared && q.releases.is_empty() && q.left_out_releases > 0);
        if let Some(q) = emptied.filter(|_| rng.below(2) == 0) {
            registry.packages[q].left_out_releases += 1;
            return "one more version record left out";
        }
        let p = registry.package_mut(id);
        p.left_out_releases += p.releases.len() as u32;
        p.releases.clear();
        return "every version record left out";
    }
    let p = registry.package_mut(id);
    let n = p.releases.len();
    if n == 0 {
        // What an explanation of a package without releases says of it: its summary, and
        // how many of its version records were left out.
        if rng.below(2) == 0 {
            p.left_out_releases += 1;
            return "version records left out";
        }
        p.summary = Some("now with a summary".into());
        return "summary";
    }
    let i = if rng.below(2) == 0 {
        n - 1
    } else {
        rng.below(n)
    };
    let r = &mut p.releases[i];
    match rng.below(11) {
        0 => {
            r.yanked = !r.yanked;
            "yank toggled"
        }
        1 => {
            r.runtime = Some(req);
            "runtime requirement"
        }
        2 => {
            let mut deps = r.deps.to_vec();
            if deps.is_empty() {
                deps.push(Dep {
                    package: other,
                    req: dep_req,
                    kind: basefit::model::DepKind::Runtime,
                });
            } else {
                deps.remove(rng.below(deps.len()));
            }
            r.deps = deps.into();
            "dependency added or removed"
        }
        3 => {
            let mut deps = r.deps.to_vec();
            if let Some(d) = deps.first_mut() {
                d.req = dep_req;
            }
            r.deps = deps.into();
            "dependency requirement"
        }
        4 => {
            r.build.source = !r.build.source;
            "source build toggled"
        }
        5 if rng.below(2) == 0 => {
            r.native
                .get_or_insert_with(Default::default)
                .libraries
                .push("libxml2".into());
            "native library declared"
        }
        5 => {
            // Empty hints differ from none for telling look-alike releases apart.
            r.native = match r.native {
                Some(_) => None,
                None => Some(Default::default()),
            };
            "native hints emptied or dropped"
        }
        6 => {
            p.summary = Some("bindings to zlib and sqlite".into());
            "summary"
        }
        7 => {
            p.native_helper = !p.native_helper;
            "native helper toggled"
        }
        8 => {
            // A fix published for an older line: a release between existing ones.
            let mut fix: Release = p.releases[i].clone();
            fix.version =
                semver::Version::new(fix.version.major, fix.version.minor, fix.version.patch + 1);
            let at = p.releases.partition_point(|r| r.version < fix.version);
            if p.releases.get(at).is_some_and(|r| r.version == fix.version) {
                return "nothing";
            }
            p.releases.insert(at, fix);
            "release inserted between others"
        }
        _ => {
            // A new newest release, like the previous newest but a patch higher.
            let mut next: Release = p.releases[n - 1].clone();
            next.version = semver::Version::new(
                next.version.major,
                next.version.minor,
                next.version.patch + 1,
            );
            next.version.pre = semver::Prerelease::EMPTY;
            // Half of them declare what the previous newest does (a look-alike), half a
            // runtime requirement of their own.
            let look_alike = rng.below(2) == 0;
            if !look_alike {
                next.runtime = Some(req);
            }
            if next.version > p.releases[n - 1].version {
                p.releases.push(next);
                if look_alike {
                    "new look-alike release"
                } else {
                    "new release"
                }
            } else {
                "nothing"
            }
        }
    }
}

/// Makes a release some cell saw admissible refused everywhere, one it saw refused admissible
/// everywhere, one it saw refused for a yank also unsuitable for its runtime, or the newest
/// release that suits an image unsuitable: the edits a re-plan must notice through what it
/// observed of single releases.
fn flip_observed(inputs: &mut Inputs, cache: &PlanCache, rng: &mut Rng) -> &'static str {
    // Each package's run: counted admissible, refused, fetched, covered, unsuitable, ceiling
    // and split lists.
    let mut seen: Vec<(&str, u32, usize)> = Vec::new();
    for basis in &cache.bases {
        let o = &basis.observed;
        let mut at = 0;
        for &package in &basis.packages {
            let name = cache.packages[package as usize].name.as_str();
            for list in 0..7 {
                let n = o[at] as usize;
                let listed = o[at + 1..at + 1 + n].iter();
                match list {
                    0 | 1 | 4 => seen.extend(listed.map(|&i| (name, i, list))),
                    // The newest suiting release sits just below the ceiling.
                    5 => seen.extend(listed.filter(|&&c| c > 0).map(|&c| (name, c - 1, list))),
                    _ => {}
                }
                at += 1 + n;
            }
        }
    }
    // An earlier edit of the same round may have removed the release (or all of them).
    let registry = &inputs.registry;
    seen.retain(|&(name, index, _)| {
        registry
            .id(name)
            .is_some_and(|id| (index as usize) < registry.package(id).releases.len())
    });
    if seen.is_empty() {
        return "nothing observed";
    }
    let (name, index, list) = seen[rng.below(seen.len())];
    let registry = &mut inputs.registry;
    let any = registry.intern_requirement("*").unwrap();
    let never = registry.intern_requirement(">=99").unwrap();
    let id = registry.id(name).unwrap();
    let r = &mut registry.package_mut(id).releases[index as usize];
    if list == 0 {
        r.yanked = true;
        "an admissible release yanked"
    } else if list == 5 {
        r.runtime = Some(never);
        "the newest suiting release made unsuitable"
    } else if list == 1 && rng.below(2) == 0 {
        // Refused for its yank flag, and from now on also for its runtime requirement.
        r.runtime = Some(never);
        "a refused release made unsuitable too"
    } else {
        r.yanked = false;
        r.runtime = Some(any);
        r.build.source = true;
        "a refused or unsuitable release made admissible"
    }
}

/// Publishes a look-alike just after the newest release of a package that some installing
/// cell picked at that release, so that a reused cell must name the new release where it
/// named the old one.
fn publish_over_picked(inputs: &mut Inputs, cache: &PlanCache, rng: &mut Rng) -> &'static str {
    let registry = &inputs.registry;
    let mut picked: Vec<PackageId> = Vec::new();
    for cell in &cache.matrix.cells {
        for pinned in &cell.closure {
            if let Some(id) = registry.id(&pinned.name)
                && registry
                    .package(id)
                    .releases
                    .last()
                    .is_some_and(|r| r.version.to_string() == pinned.version)
                && !picked.contains(&id)
            {
                picked.push(id);
            }
        }
    }
    if picked.is_empty() {
        return "nothing";
    }
    let id = picked[rng.below(picked.len())];
    let releases = &mut inputs.registry.package_mut(id).releases;
    let mut next: Release = releases[releases.len() - 1].clone();
    next.version.patch += 1;
    next.version.pre = semver::Prerelease::EMPTY;
    next.version.build = semver::BuildMetadata::EMPTY;
    next.raw_version = None;
    if next.version <= releases[releases.len() - 1].version {
        return "nothing";
    }
    releases.push(next);
    "look-alike of a picked newest release"
}

/// Rounds of edits per seed, each to about 1% of the packages: few enough that most cells
/// survive a round, so a re-plan that kept a cell it should have solved again shows.
const ROUNDS: usize = 6;

fn cache_json(cache: &PlanCache) -> String {
    serde_json::to_string(cache).unwrap()
}

#[test]
fn warm_replans_equal_cold_plans_under_random_edits() {
    let seeds: u64 = common::env_count("BASEFIT_REPLAN_SEEDS", 4);
    let options = PlanOptions::default();
    let (mut reused, mut solved) = (0, 0);
    for seed in 1..=seeds {
        let mut inputs = inputs(seed);
        let mut rng = Rng::new(seed);
        let (mut cache, _) = replan(&inputs, &options, None, None);

        for round in 0..ROUNDS {
            let count = inputs.registry.packages.len();
            let mut done = Vec::new();
            // Half the edits hit packages some cell consulted, the rest anywhere.
            let consulted: Vec<PackageId> = cache
                .packages
                .iter()
                .filter_map(|p| inputs.registry.id(&p.name))
                .collect();
            for k in 0..(count / 100).max(1) {
                let id = if k % 2 == 0 && !consulted.is_empty() {
                    consulted[rng.below(consulted.len())]
                } else {
                    PackageId(rng.below(count) as u32)
                };
                done.push(edit(&mut inputs.registry, id, &mut rng));
            }
            // And one release whose admission decided a choice changes sides.
            done.push(flip_observed(&mut inputs, &cache, &mut rng));
            // And one picked newest release gains a look-alike.
            done.push(publish_over_picked(&mut inputs, &cache, &mut rng));
            if round == ROUNDS - 1 {
                // A name the priorities asked for appears in the registry.
                let mut builder = RegistryBuilder::new();
                read_yaml_str(
                    "late.yaml",
                    "packages:\n- name: not-yet-published\n  versions:\n  - {version: 1.0.0}\n",
                    &mut builder,
                )
                .unwrap();
                let (late, _) = builder.finish();
                let mut merged = inputs.registry.clone();
                let id = merged.intern_package("not-yet-published");
                let p = merged.package_mut(id);
                p.declared = true;
                p.releases = late.packages[0].releases.clone();
                inputs.registry = merged;
            }
            let (warm_cache, stats) = replan(&inputs, &options, Some(cache), None);
            let (cold_cache, _) = replan(&inputs, &options, None, None);
            assert!(
                to_json(&warm_cache.matrix) == to_json(&cold_cache.matrix),
                "seed {seed} round {round}: warm matrix differs from cold after {done:?}"
            );
            assert!(
                cache_json(&warm_cache) == cache_json(&cold_cache),
                "seed {seed} round {round}: warm cache differs from cold"
            );
            reused += stats.reused;
            solved += stats.solved;
            cache = warm_cache;
        }
    }
    // The edits must both leave cells valid and invalidate some: otherwise this test could
    // not tell a re-plan that reuses nothing, or everything, from a correct one.
    assert!(reused > 0 && solved > 0, "reused {reused}, solved {solved}");
}
