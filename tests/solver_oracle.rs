//! basefit's solver against a brute-force oracle on seeded random small registries.
//!
//! The oracle never looks at basefit's registry or solver: it works on the generated
//! description of each registry and decides, by exhaustive search over every combination of
//! versions of the packages reachable from the root, whether a solution exists. What a
//! solution is comes from the PubGrub documentation (dart-lang/pub `doc/solver.md`,
//! "Overview"): "each version's dependencies are satisfied; only one version of each package
//! is selected; and no extra packages are selected–that is, all selected packages are
//! transitively reachable from the root package". What a requirement admits comes from the
//! `semver` crate: `semver::VersionReq::matches`, pre-release rule included, with `||`
//! joining alternatives (basefit's requirement syntax). A release is usable on an image when
//! it is not yanked, its runtime requirement admits the image's runtime (solver.md "Decision
//! Making": a version "incompatible with the current version of the underlying programming
//! language" is never selected) and it has a source build or a prebuilt build for the image's
//! platform. Development dependencies are ignored.
//!
//! Cases: `BASEFIT_ORACLE_CASES` (default 5,000) sets how many random registries are solved;
//! e.g. `BASEFIT_ORACLE_CASES=100000 cargo test --release --test solver_oracle` for a long
//! run. `BASEFIT_ORACLE_SEED` changes the base seed.

mod common;

use basefit::load::RegistryBuilder;
use basefit::load::diag::At;
use basefit::load::images::read_images_str;
use basefit::load::registry::{RawDep, RawRelease};
use basefit::model::{DepKind, Registry, Requirement};
use basefit::solve::{
    BuildKind, DEFAULT_BUDGET, ImageView, RootSpec, SetCache, Solved, solve_cell,
};
use basefit::synth::SplitMix64;
use semver::{Version, VersionReq};
use std::collections::{BTreeMap, BTreeSet};
use std::panic::{AssertUnwindSafe, catch_unwind};

/// The project's seeded generator, so every case is reproducible from its seed.
struct Rng(SplitMix64);

impl Rng {
    fn below(&mut self, n: usize) -> usize {
        self.0.below(n as u64) as usize
    }
    fn chance(&mut self, percent: u64) -> bool {
        self.0.below(100) < percent
    }
    fn pick<T: Copy>(&mut self, items: &[T]) -> T {
        items[self.below(items.len())]
    }
}

const VERSION_POOL: &[&str] = &[
    "0.9.0",
    "1.0.0-rc.1",
    "1.0.0",
    "1.1.0",
    "1.2.3",
    "2.0.0-beta.1",
    "2.0.0",
    "2.1.0",
    "3.0.0",
    "3.1.0-alpha",
];

/// Requirement forms drawn for dependencies and the root (the `semver` crate's syntax, `||`
/// for a union): carets, ranges, exact versions, any, unions, tildes, pre-release bounds.
const REQ_POOL: &[&str] = &[
    "^1",
    ">=1.1, <2",
    "=2.0.0",
    "*",
    "^1 || ^3",
    "~1.1",
    ">=2.0.0-beta.1, <2.1",
    "=1.0.0-rc.1",
    "<2",
    ">1.0.0",
    "^2",
    ">=3",
    "^0.9",
    "1.0.0-rc.1 || ^2",
    ">=1.0.0, <3.1.0-alpha",
];

const RUNTIME_POOL: &[&str] = &[">=3.0", "<3", "^2", ">=2.5, <4", "^3.1", ">=3.0.0-rc.1"];
const IMAGE_RUNTIMES: &[&str] = &["2.9.0", "3.0.5", "3.2.0"];
const PLATFORMS: &[&str] = &[
    "linux/glibc/x86_64",
    "linux/musl/x86_64",
    "linux/glibc/aarch64",
];
const GHOSTS: &[&str] = &["ghost", "phantom"];

#[derive(Debug, Clone)]
struct SpecDep {
    target: usize,
    text: &'static str,
    alternatives: Vec<VersionReq>,
    development: bool,
}

#[derive(Debug, Clone)]
struct SpecRelease {
    version: Version,
    runtime: Option<(&'static str, Vec<VersionReq>)>,
    deps: Vec<SpecDep>,
    /// `None`: no `builds` given (a source release). `Some((source, prebuilt platforms))`.
    builds: Option<(bool, Vec<&'static str>)>,
    yanked: bool,
}

#[derive(Debug, Clone)]
struct Spec {
    seed: u64,
    /// Declared packages first, then names only ever depended on (never declared).
    names: Vec<String>,
    declared: usize,
    /// Releases of each declared package, in the order they are fed to the registry.
    releases: Vec<Vec<SpecRelease>>,
    root_req: Option<(&'static str, Vec<VersionReq>)>,
    image_runtime: Version,
    image_platform: &'static str,
}

/// Parses a requirement the way its definition says: alternatives joined by `||`, each a
/// `semver::VersionReq`.
fn alternatives(text: &str) -> Vec<VersionReq> {
    text.split("||")
        .map(|a| VersionReq::parse(a.trim()).expect("pool requirement parses"))
        .collect()
}

fn admits(alts: &[VersionReq], v: &Version) -> bool {
    alts.iter().any(|r| r.matches(v))
}

fn generate(seed: u64) -> Spec {
    let mut rng = Rng(SplitMix64::new(seed, 0x6f72_6163_6c65, 0));
    let declared = 3 + rng.below(4);
    let mut names: Vec<String> = (0..declared).map(|i| format!("p{i}")).collect();
    names.extend(GHOSTS.iter().map(|g| g.to_string()));
    let mut releases = Vec::new();
    for _ in 0..declared {
        let count = 1 + rng.below(4);
        let mut pool: Vec<&str> = VERSION_POOL.to_vec();
        let mut chosen = Vec::new();
        for _ in 0..count {
            let i = rng.below(pool.len());
            chosen.push(pool.remove(i));
        }
        let mut rels = Vec::new();
        for v in chosen {
            let mut deps = Vec::new();
            for _ in 0..rng.below(4) {
                // Mostly declared packages (the release's own package included, which makes
                // self-dependencies and cycles), sometimes a name nobody declares.
                let target = if rng.chance(8) {
                    declared + rng.below(GHOSTS.len())
                } else {
                    rng.below(declared)
                };
                let text = rng.pick(REQ_POOL);
                deps.push(SpecDep {
                    target,
                    text,
                    alternatives: alternatives(text),
                    development: rng.chance(15),
                });
            }
            let runtime = rng.chance(30).then(|| {
                let t = rng.pick(RUNTIME_POOL);
                (t, alternatives(t))
            });
            let builds = rng.chance(30).then(|| {
                let source = rng.chance(30);
                let prebuilt = PLATFORMS
                    .iter()
                    .copied()
                    .filter(|_| rng.chance(40))
                    .collect();
                (source, prebuilt)
            });
            rels.push(SpecRelease {
                version: Version::parse(v).unwrap(),
                runtime,
                deps,
                builds,
                yanked: rng.chance(10),
            });
        }
        releases.push(rels);
    }
    let root_req = rng.chance(25).then(|| {
        let t = rng.pick(REQ_POOL);
        (t, alternatives(t))
    });
    let runtime_text = rng.pick(IMAGE_RUNTIMES);
    let image_runtime = Version::parse(runtime_text).unwrap();
    let image_platform = if rng.chance(70) {
        PLATFORMS[0]
    } else {
        rng.pick(PLATFORMS)
    };
    Spec {
        seed,
        names,
        declared,
        releases,
        root_req,
        image_runtime,
        image_platform,
    }
}

impl Spec {
    /// A compact, readable form of the registry for failure messages.
    fn dump(&self) -> String {
        let mut out = format!(
            "seed {} image runtime {} platform {} root req {:?}\n",
            self.seed,
            self.image_runtime,
            self.image_platform,
            self.root_req.as_ref().map(|(t, _)| *t)
        );
        for p in 0..self.declared {
            for r in &self.releases[p] {
                out.push_str(&format!("  {} {}", self.names[p], r.version));
                if r.yanked {
                    out.push_str(" yanked");
                }
                if let Some((t, _)) = &r.runtime {
                    out.push_str(&format!(" runtime `{t}`"));
                }
                if let Some((source, pb)) = &r.builds {
                    out.push_str(&format!(" builds source={source} prebuilt={pb:?}"));
                }
                for d in &r.deps {
                    let kind = if d.development { " (dev)" } else { "" };
                    out.push_str(&format!(
                        "\n    -> {} `{}`{kind}",
                        self.names[d.target], d.text
                    ));
                }
                out.push('\n');
            }
        }
        out
    }

    fn release(&self, p: usize, i: usize) -> &SpecRelease {
        &self.releases[p][i]
    }

    /// Usable on the image: not yanked, runtime admitted, a build for the image.
    fn admissible(&self, r: &SpecRelease) -> bool {
        !r.yanked
            && r.runtime
                .as_ref()
                .is_none_or(|(_, alts)| admits(alts, &self.image_runtime))
            && match &r.builds {
                None => true,
                Some((source, prebuilt)) => *source || prebuilt.contains(&self.image_platform),
            }
    }

    fn root_admits(&self, v: &Version) -> bool {
        match &self.root_req {
            Some((_, alts)) => admits(alts, v),
            // No requirement: any version, which by semver's rule excludes pre-releases.
            None => VersionReq::STAR.matches(v),
        }
    }

    fn runtime_deps<'a>(&self, r: &'a SpecRelease) -> impl Iterator<Item = &'a SpecDep> {
        r.deps.iter().filter(|d| !d.development)
    }

    fn build_registry(&self) -> Registry {
        let mut b = RegistryBuilder::new();
        for p in 0..self.declared {
            let id = b.declare_package("oracle.yaml", p + 1, &self.names[p], None, false);
            for (line, r) in self.releases[p].iter().enumerate() {
                let version = r.version.to_string();
                let deps = r
                    .deps
                    .iter()
                    .map(|d| {
                        let kind = if d.development {
                            DepKind::Development
                        } else {
                            DepKind::Runtime
                        };
                        RawDep {
                            name: At::new(self.names[d.target].as_str(), line + 1),
                            req: At::new(d.text, line + 1),
                            kind,
                        }
                    })
                    .collect();
                let (source_build, prebuilt) = match &r.builds {
                    None => (true, Vec::new()),
                    Some((s, pb)) => (*s, pb.iter().map(|t| At::new(*t, line + 1)).collect()),
                };
                b.add_release(
                    id,
                    "oracle.yaml",
                    line + 1,
                    RawRelease {
                        version: At::new(&version, line + 1),
                        released: None,
                        runtime: r.runtime.as_ref().map(|(t, _)| At::new(*t, line + 1)),
                        deps,
                        source_build,
                        prebuilt,
                        native: None,
                        yanked: r.yanked,
                    },
                );
            }
        }
        b.finish().0
    }
}

/// Exhaustive search: does some choice of at most one release per reachable package contain
/// the root and satisfy every runtime dependency of every chosen release? (Packages that are
/// not reachable from the root can be left out of any solution, so leaving them out loses
/// nothing.) Returns one solution as (package, release) pairs.
fn oracle(spec: &Spec) -> Option<Vec<(usize, usize)>> {
    // Reachable from the root through any release's runtime dependencies.
    let mut reachable = vec![0usize];
    let mut i = 0;
    while i < reachable.len() {
        let p = reachable[i];
        if p < spec.declared {
            for r in &spec.releases[p] {
                for d in spec.runtime_deps(r) {
                    if !reachable.contains(&d.target) {
                        reachable.push(d.target);
                    }
                }
            }
        }
        i += 1;
    }
    // The choices per reachable package: absent (except the root), or an admissible release.
    let options: Vec<Vec<Option<usize>>> = reachable
        .iter()
        .map(|&p| {
            let mut o: Vec<Option<usize>> = if p == 0 { vec![] } else { vec![None] };
            if p < spec.declared {
                for (i, r) in spec.releases[p].iter().enumerate() {
                    if spec.admissible(r) && (p != 0 || spec.root_admits(&r.version)) {
                        o.push(Some(i));
                    }
                }
            }
            o
        })
        .collect();
    let mut chosen: Vec<Option<usize>> = vec![None; reachable.len()];
    fn consistent(spec: &Spec, reachable: &[usize], chosen: &[Option<usize>], upto: usize) -> bool {
        for a in 0..=upto {
            let Some(ra) = chosen[a] else { continue };
            for d in spec.runtime_deps(spec.release(reachable[a], ra)) {
                let b = reachable.iter().position(|&p| p == d.target).unwrap();
                if b > upto {
                    continue;
                }
                match chosen[b] {
                    None => return false,
                    Some(rb) => {
                        if !admits(&d.alternatives, &spec.release(d.target, rb).version) {
                            return false;
                        }
                    }
                }
            }
        }
        true
    }
    fn search(
        spec: &Spec,
        reachable: &[usize],
        options: &[Vec<Option<usize>>],
        chosen: &mut Vec<Option<usize>>,
        k: usize,
    ) -> bool {
        if k == reachable.len() {
            return true;
        }
        for &o in &options[k] {
            chosen[k] = o;
            if consistent(spec, reachable, chosen, k)
                && search(spec, reachable, options, chosen, k + 1)
            {
                return true;
            }
        }
        chosen[k] = None;
        false
    }
    search(spec, &reachable, &options, &mut chosen, 0).then(|| {
        reachable
            .iter()
            .zip(&chosen)
            .filter_map(|(&p, c)| c.map(|i| (p, i)))
            .collect()
    })
}

/// Checks a solution basefit returned against the spec, without the solver: one release per
/// package, the root in it, every chosen release usable here and installed by a build it has,
/// every runtime dependency met by the chosen version of its target, nothing unreachable.
fn check_solution(
    spec: &Spec,
    registry: &Registry,
    root_index: u32,
    closure: &[basefit::solve::Pin],
) -> Result<(), String> {
    let mut chosen: BTreeMap<usize, usize> = BTreeMap::new();
    for pin in closure {
        let name = registry.name(pin.package);
        let p = spec.names[..spec.declared]
            .iter()
            .position(|n| n == name)
            .ok_or(format!("{name} is chosen but not declared"))?;
        let version = &registry.package(pin.package).releases[pin.index as usize].version;
        let i = spec.releases[p]
            .iter()
            .position(|r| r.version == *version)
            .ok_or(format!("{name} {version} is chosen but not published"))?;
        // solver.md "Overview": "only one version of each package is selected".
        if chosen.insert(p, i).is_some() {
            return Err(format!("{name} is chosen twice"));
        }
        let r = spec.release(p, i);
        if !spec.admissible(r) {
            return Err(format!("{name} {version} is not usable on the image"));
        }
        let builds_ok = match (&r.builds, pin.build) {
            (None, BuildKind::Source) => true,
            (None, BuildKind::Prebuilt) => false,
            (Some((source, _)), BuildKind::Source) => *source,
            (Some((_, pb)), BuildKind::Prebuilt) => pb.contains(&spec.image_platform),
        };
        if !builds_ok {
            return Err(format!(
                "{name} {version} installed by a {:?} build it lacks",
                pin.build
            ));
        }
    }
    let Some(&root) = chosen.get(&0) else {
        return Err("the root is not in the closure".into());
    };
    let root_version = &spec.release(0, root).version;
    if !spec.root_admits(root_version) {
        return Err(format!(
            "root version {root_version} is outside the root requirement"
        ));
    }
    if registry.package(registry.id("p0").unwrap()).releases[root_index as usize].version
        != *root_version
    {
        return Err("root_index does not point at the chosen root release".into());
    }
    // solver.md "Overview": "each version's dependencies are satisfied", checked with
    // semver::VersionReq::matches (through the `||` alternatives) and through basefit's
    // Requirement::matches, which must agree.
    for (&p, &i) in &chosen {
        for d in spec.runtime_deps(spec.release(p, i)) {
            let Some(&t) = chosen.get(&d.target) else {
                return Err(format!(
                    "{} needs {} {}, which is not chosen",
                    spec.names[p], spec.names[d.target], d.text
                ));
            };
            let tv = &spec.release(d.target, t).version;
            let by_semver = admits(&d.alternatives, tv);
            let by_basefit = Requirement::parse(d.text).unwrap().matches(tv);
            if by_semver != by_basefit {
                return Err(format!(
                    "Requirement::matches disagrees with semver on {} vs {tv}",
                    d.text
                ));
            }
            if !by_semver {
                return Err(format!(
                    "{} needs {} {}, but {tv} is chosen",
                    spec.names[p], spec.names[d.target], d.text
                ));
            }
        }
    }
    // solver.md "Overview": "no extra packages are selected–that is, all selected packages
    // are transitively reachable from the root package".
    let mut seen = BTreeSet::from([0usize]);
    let mut todo = vec![0usize];
    while let Some(p) = todo.pop() {
        for d in spec.runtime_deps(spec.release(p, chosen[&p])) {
            if seen.insert(d.target) {
                todo.push(d.target);
            }
        }
    }
    let extra: Vec<&String> = chosen
        .keys()
        .filter(|p| !seen.contains(p))
        .map(|&p| &spec.names[p])
        .collect();
    if !extra.is_empty() {
        return Err(format!("unreachable packages chosen: {extra:?}"));
    }
    Ok(())
}

/// Whether the package graph has a cycle through two or more packages.
fn has_cycle(n: usize, edges: &[(usize, usize)]) -> bool {
    let mut reach = vec![vec![false; n]; n];
    for &(a, b) in edges {
        reach[a][b] = true;
    }
    for k in 0..n {
        for i in 0..n {
            for j in 0..n {
                if reach[i][k] && reach[k][j] {
                    reach[i][j] = true;
                }
            }
        }
    }
    (0..n).any(|a| (0..n).any(|b| a != b && reach[a][b] && reach[b][a]))
}

#[derive(Default, Debug)]
struct Tally {
    cases: usize,
    installs: usize,
    fails: usize,
    with_prerelease: usize,
    with_yanked: usize,
    with_self_dependency: usize,
    with_cycle: usize,
    with_ghost: usize,
    with_development: usize,
}

fn run_case(seed: u64, tally: &mut Tally) {
    let spec = generate(seed);
    let registry = spec.build_registry();
    let image_yaml = format!(
        "images:\n- {{id: img, runtime: {}, family: debian, platform: {}}}\n",
        spec.image_runtime, spec.image_platform
    );
    let mut ledger = Default::default();
    let images = read_images_str("images.yaml", &image_yaml, &mut ledger).unwrap();
    let root_req = spec
        .root_req
        .as_ref()
        .map(|(t, _)| Requirement::parse(t).unwrap());
    let sets = SetCache::default();
    let view = ImageView::new(&registry, &images.images[0], &sets);
    let root = RootSpec {
        package: "p0",
        req: root_req.as_ref(),
        prerelease: false,
    };
    let out = catch_unwind(AssertUnwindSafe(|| {
        solve_cell(&view, &root, DEFAULT_BUDGET)
    }))
    .unwrap_or_else(|_| panic!("solve panicked on seed {seed}: {}", spec.dump()));
    let expected = oracle(&spec);
    tally.cases += 1;
    let all = spec.releases.iter().flatten();
    if all.clone().any(|r| !r.version.pre.is_empty()) {
        tally.with_prerelease += 1;
    }
    if all.clone().any(|r| r.yanked) {
        tally.with_yanked += 1;
    }
    if all
        .clone()
        .flat_map(|r| &r.deps)
        .any(|d| d.target >= spec.declared && !d.development)
    {
        tally.with_ghost += 1;
    }
    let runtime_edges: Vec<(usize, usize)> = (0..spec.declared)
        .flat_map(|p| {
            spec.releases[p]
                .iter()
                .flat_map(move |r| r.deps.iter().filter(|d| !d.development))
                .map(move |d| (p, d.target))
        })
        .collect();
    if runtime_edges.iter().any(|(p, t)| p == t) {
        tally.with_self_dependency += 1;
    }
    if has_cycle(spec.names.len(), &runtime_edges) {
        tally.with_cycle += 1;
    }
    if all.clone().flat_map(|r| &r.deps).any(|d| d.development) {
        tally.with_development += 1;
    }
    match (&out.solved, &expected) {
        (
            Solved::Installs {
                root_index,
                closure,
            },
            Some(_),
        ) => {
            tally.installs += 1;
            if let Err(why) = check_solution(&spec, &registry, *root_index, closure) {
                panic!(
                    "seed {seed}: basefit's solution is wrong: {why}\nclosure {closure:?}\n{}",
                    spec.dump()
                );
            }
        }
        (Solved::Fails(f), None) => {
            tally.fails += 1;
            assert!(
                !f.lines.is_empty(),
                "seed {seed}: a failure without explanation"
            );
        }
        (Solved::Installs { closure, .. }, None) => {
            // Report the independent check too: it says what is wrong with the solution.
            let why = check_solution(&spec, &registry, 0, closure).err();
            panic!(
                "seed {seed}: basefit installs, the oracle finds no solution ({why:?})\n{closure:?}\n{}",
                spec.dump()
            );
        }
        (Solved::Fails(f), Some(sol)) => panic!(
            "seed {seed}: basefit fails ({:?}: {:#?}), the oracle finds {sol:?}\n{}",
            f.cause,
            f.lines,
            spec.dump()
        ),
        (Solved::Undecided { steps }, _) => {
            panic!(
                "seed {seed}: undecided after {steps} steps on a tiny registry\n{}",
                spec.dump()
            )
        }
    }
}

#[test]
fn agrees_with_brute_force_oracle() {
    let cases: u64 = common::env_count("BASEFIT_ORACLE_CASES", 5_000);
    let base: u64 = common::env_count("BASEFIT_ORACLE_SEED", 0x0BA5_EF17);
    let mut tally = Tally::default();
    for k in 0..cases {
        run_case(base.wrapping_add(k), &mut tally);
    }
    println!("{tally:?}");
    // The generator must exercise both answers and every feature, or agreement means little.
    assert_eq!(tally.cases as u64, cases);
    if cases >= 1_000 {
        for (what, n) in [
            ("installs", tally.installs),
            ("fails", tally.fails),
            ("pre-releases", tally.with_prerelease),
            ("yanked releases", tally.with_yanked),
            ("self-dependencies", tally.with_self_dependency),
            ("cycles between packages", tally.with_cycle),
            ("dependencies on undeclared names", tally.with_ghost),
            ("development dependencies", tally.with_development),
        ] {
            assert!(
                n * 10 >= tally.cases,
                "only {n} of {} cases with {what}",
                tally.cases
            );
        }
    }
}

/// A few hand-made registries with a known answer, so the oracle itself is checked.
#[test]
fn oracle_sanity() {
    let mk = |deps: Vec<SpecDep>, yanked: bool| SpecRelease {
        version: Version::parse("1.0.0").unwrap(),
        runtime: None,
        deps,
        builds: None,
        yanked,
    };
    let dep = |target, text: &'static str, development| SpecDep {
        target,
        text,
        alternatives: alternatives(text),
        development,
    };
    let base = Spec {
        seed: 0,
        names: vec!["p0".into(), "p1".into(), "ghost".into()],
        declared: 2,
        releases: vec![
            vec![mk(vec![dep(1, "^1", false)], false)],
            vec![mk(vec![], false)],
        ],
        root_req: None,
        image_runtime: Version::parse("3.0.0").unwrap(),
        image_platform: PLATFORMS[0],
    };
    assert_eq!(oracle(&base), Some(vec![(0, 0), (1, 0)]));
    // p1 yanked: no solution.
    let mut s = base.clone();
    s.releases[1][0].yanked = true;
    assert_eq!(oracle(&s), None);
    // A runtime dependency on an undeclared name: no solution; as a development one: fine.
    let mut s = base.clone();
    s.releases[1][0].deps = vec![dep(2, "*", false)];
    assert_eq!(oracle(&s), None);
    s.releases[1][0].deps = vec![dep(2, "*", true)];
    assert_eq!(oracle(&s), Some(vec![(0, 0), (1, 0)]));
    // `^1` does not admit a pre-release (semver's rule): p1 1.0.0-rc.1 alone cannot be used.
    let mut s = base.clone();
    s.releases[1][0].version = Version::parse("1.0.0-rc.1").unwrap();
    assert_eq!(oracle(&s), None);
    // Only a prebuilt build for another platform: no solution.
    let mut s = base.clone();
    s.releases[1][0].builds = Some((false, vec![PLATFORMS[1]]));
    assert_eq!(oracle(&s), None);
    // A runtime requirement the image misses: no solution.
    let mut s = base;
    s.releases[1][0].runtime = Some((">=3.1", alternatives(">=3.1")));
    assert_eq!(oracle(&s), None);
}

/// solver.md "Decision Making": "Pub chooses the latest matching version of the package";
/// basefit prefers the newest usable release the same way.
#[test]
fn newest_usable_version_preferred() {
    use basefit::load::registry::read_yaml_str;
    let yaml = "packages:
- name: app
  versions:
  - {version: '1.0.0', depends: [{name: lib, req: '*'}, {name: util, req: '^1'}]}
  - {version: '1.2.0', depends: [{name: lib, req: '*'}, {name: util, req: '^1'}]}
  - {version: '1.3.0-rc.1', depends: [{name: lib, req: '*'}]}
- name: lib
  versions:
  - {version: '1.0.0'}
  - {version: '1.5.0'}
  - {version: '2.0.0'}
  - {version: '2.1.0', yanked: true}
  - {version: '3.0.0-rc.1'}
- name: util
  versions:
  - {version: '1.0.0'}
  - {version: '1.4.0'}
  - {version: '2.0.0'}
";
    let mut b = RegistryBuilder::new();
    read_yaml_str("r.yaml", yaml, &mut b).unwrap();
    let (registry, _) = b.finish();
    let mut ledger = Default::default();
    let images = read_images_str(
        "i.yaml",
        "images:\n- {id: img, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n",
        &mut ledger,
    )
    .unwrap();
    let sets = SetCache::default();
    let view = ImageView::new(&registry, &images.images[0], &sets);
    let solve = |req: Option<&Requirement>| {
        let out = solve_cell(
            &view,
            &RootSpec {
                package: "app",
                req,
                prerelease: false,
            },
            DEFAULT_BUDGET,
        );
        let Solved::Installs { closure, .. } = out.solved else {
            panic!("{:?}", out.solved)
        };
        closure
            .iter()
            .map(|p| {
                let pkg = registry.package(p.package);
                format!("{} {}", pkg.name, pkg.releases[p.index as usize].version)
            })
            .collect::<Vec<_>>()
    };
    // Newest of each: app 1.2.0 (1.3.0-rc.1 is a pre-release `*` does not admit), lib 2.0.0
    // (2.1.0 yanked, 3.0.0-rc.1 a pre-release), util 1.4.0 (newest matching `^1`).
    assert_eq!(solve(None), ["app 1.2.0", "lib 2.0.0", "util 1.4.0"]);
    // With the root held to `<1.2`: app 1.0.0, and still the newest of its dependencies.
    let req = Requirement::parse("<1.2").unwrap();
    assert_eq!(solve(Some(&req)), ["app 1.0.0", "lib 2.0.0", "util 1.4.0"]);
}

/// Found by the oracle (seed 195424104, reduced): a release whose dependency on its own
/// package excludes its own version can never be chosen (one version per package), and
/// must not make the solver drop the root. pubgrub 0.4.0 given such a self-dependency, after
/// backtracking out of a sibling release, returned a "solution" without the root package.
#[test]
fn self_dependency_excluding_itself() {
    use basefit::load::registry::read_yaml_str;
    let solve = |yaml: &str| {
        let mut b = RegistryBuilder::new();
        read_yaml_str("r.yaml", yaml, &mut b).unwrap();
        let (registry, _) = b.finish();
        let mut ledger = Default::default();
        let images = read_images_str(
            "i.yaml",
            "images:\n- {id: img, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n",
            &mut ledger,
        )
        .unwrap();
        let sets = SetCache::default();
        let view = ImageView::new(&registry, &images.images[0], &sets);
        let root = RootSpec {
            package: "p0",
            req: None,
            prerelease: false,
        };
        match solve_cell(&view, &root, DEFAULT_BUDGET).solved {
            Solved::Installs { closure, .. } => Ok(closure
                .iter()
                .map(|p| {
                    let pkg = registry.package(p.package);
                    format!("{} {}", pkg.name, pkg.releases[p.index as usize].version)
                })
                .collect::<Vec<_>>()),
            Solved::Fails(f) => Err(f.lines),
            other => panic!("{other:?}"),
        }
    };
    // p0 1.0.0 needs p1 `^0.9` and p1 `>=1.1, <2`, which no p1 version meets together
    // (semver: p1 2.0.0 meets neither); p0 0.9.0 needs p0 `^1`, which 0.9.0 does not meet.
    // No version of p0 can be chosen: no solution.
    let base = "packages:
- name: p0
  versions:
  - {version: '1.0.0', depends: [{name: p1, req: '^0.9'}, {name: p1, req: '>=1.1, <2'}]}
  - {version: '0.9.0', depends: [{name: p0, req: '^1'}]}
- name: p1
  versions:
  - {version: '2.0.0'}
";
    let lines = solve(base).expect_err("no version of p0 is usable");
    assert!(
        lines
            .iter()
            .any(|l| l.contains("p0 0.9.0 depends on p0 ^1")),
        "{lines:#?}"
    );
    // With a release whose self-dependency it meets itself (0.8.0 meets `<1`), that release
    // is the solution, alone.
    let with_good = base.replace(
        "  - {version: '0.9.0',",
        "  - {version: '0.8.0', depends: [{name: p0, req: '<1'}]}\n  - {version: '0.9.0',",
    );
    assert!(with_good.contains("0.8.0"));
    assert_eq!(solve(&with_good), Ok(vec!["p0 0.8.0".to_string()]));
}
