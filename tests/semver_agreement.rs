//! basefit's requirement -> version-set conversion against the `semver` crate, and version
//! order against Semantic Versioning 2.0.0.
//!
//! The reference for what a requirement admits is `semver::VersionReq::matches` (pre-release
//! rule included). basefit's requirement syntax is the semver crate's plus `||`, meaning any
//! alternative (model/requirement.rs), so the reference for `A || B` is
//! `[A, B].iter().any(|r| r.matches(v))`, each alternative parsed by `semver::VersionReq`.
//!
//! Pairs: `BASEFIT_SEMVER_PAIRS` (default 6,000) sets how many (requirement, version) pairs
//! are compared at least; e.g. `BASEFIT_SEMVER_PAIRS=200000 cargo test --test
//! semver_agreement -- --nocapture` for a long run. The count compared and the number of
//! disagreements (always zero: any disagreement fails the test with a shrunk example) are
//! printed.

mod common;

use basefit::load::RegistryBuilder;
use basefit::load::diag::At;
use basefit::load::registry::RawRelease;
use basefit::model::{PackageId, Registry, Requirement};
use basefit::solve::SetCache;
use basefit::solve::image::{Admission, runtime_verdict};
use basefit::solve::sets::{indices, requirement_set, set_from_predicate};
use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestCaseError, TestRng, TestRunner};
use semver::{Version, VersionReq};
use std::cmp::Ordering;
use std::collections::BTreeSet;
use std::sync::atomic::{AtomicU64, Ordering::Relaxed};

const PRE: &[&str] = &[
    "alpha",
    "alpha.1",
    "alpha.beta",
    "beta",
    "beta.2",
    "beta.11",
    "rc.1",
    "rc.2",
    "0",
    "1",
    "x.7.z.92",
];
const BUILD: &[&str] = &["build.1", "001", "exp.sha.5114f85", "20130313144700"];

fn version() -> impl Strategy<Value = Version> {
    (
        0u64..4,
        0u64..4,
        0u64..4,
        prop::option::weighted(0.35, prop::sample::select(PRE)),
        prop::option::weighted(0.2, prop::sample::select(BUILD)),
    )
        .prop_map(|(ma, mi, pa, pre, build)| {
            let mut s = format!("{ma}.{mi}.{pa}");
            if let Some(p) = pre {
                s.push('-');
                s.push_str(p);
            }
            if let Some(b) = build {
                s.push('+');
                s.push_str(b);
            }
            Version::parse(&s).unwrap()
        })
}

/// One comparator: an operator (or none) before a partial version, a wildcard, or a full
/// version with a pre-release tag; now and then a malformed one, which both parsers must
/// refuse.
fn comparator() -> impl Strategy<Value = String> {
    prop_oneof![
        19 => well_formed_comparator(),
        1 => malformed_comparator(),
    ]
}

fn malformed_comparator() -> impl Strategy<Value = String> {
    prop_oneof![
        // A pre-release tag on a partial version.
        (0u64..4, 0u64..4, prop::sample::select(PRE)).prop_map(|(m, n, p)| format!("{m}.{n}-{p}")),
        // A number after a wildcard.
        (0u64..4, 0u64..4).prop_map(|(m, p)| format!("{m}.*.{p}")),
        // A leading zero.
        (1u64..4, 0u64..4).prop_map(|(m, n)| format!("0{m}.{n}.0")),
        // A lone `*` among other comparators.
        Just("*".to_string()),
    ]
}

fn well_formed_comparator() -> impl Strategy<Value = String> {
    let op = prop::sample::select(&["", "=", ">", ">=", "<", "<=", "~", "^"][..]);
    let body = prop_oneof![
        (0u64..4).prop_map(|m| format!("{m}")),
        (0u64..4, 0u64..4).prop_map(|(m, n)| format!("{m}.{n}")),
        (0u64..4, 0u64..4, 0u64..4).prop_map(|(m, n, p)| format!("{m}.{n}.{p}")),
        (0u64..4, 0u64..4, 0u64..4, prop::sample::select(PRE))
            .prop_map(|(m, n, p, pre)| format!("{m}.{n}.{p}-{pre}")),
        (0u64..4, prop::sample::select(&["*", "x", "X"][..])).prop_map(|(m, w)| format!("{m}.{w}")),
        (0u64..4, 0u64..4, prop::sample::select(&["*", "x", "X"][..]))
            .prop_map(|(m, n, w)| format!("{m}.{n}.{w}")),
    ];
    (op, body).prop_map(|(op, body)| format!("{op}{body}"))
}

/// A requirement: one to three alternatives joined by `||`, each one to three comparators
/// joined by commas (or a lone `*`).
fn requirement() -> impl Strategy<Value = String> {
    let alternative = prop_oneof![
        9 => prop::collection::vec(comparator(), 1..=3),
        1 => Just(vec!["*".to_string()]),
    ]
    .prop_map(|cs| cs.join(", "));
    (
        prop::collection::vec(alternative, 1..=3),
        prop::sample::select(&[" || ", "||", " ||  "][..]),
    )
        .prop_map(|(alts, sep)| alts.join(sep))
}

/// The reference: every alternative parsed by `semver::VersionReq`, or none if any fails.
fn reference(text: &str) -> Option<Vec<VersionReq>> {
    text.split("||")
        .map(|a| VersionReq::parse(a.trim()).ok())
        .collect()
}

/// A registry with one package `pkg` whose releases are `versions`, fed in the given order.
fn registry_with(versions: &[Version]) -> (Registry, PackageId) {
    let mut b = RegistryBuilder::new();
    let id = b.declare_package("semver.yaml", 1, "pkg", None, false);
    for (line, v) in versions.iter().enumerate() {
        let text = v.to_string();
        b.add_release(
            id,
            "semver.yaml",
            line + 2,
            RawRelease {
                version: At::new(&text, line + 2),
                released: None,
                runtime: None,
                deps: Vec::new(),
                source_build: true,
                prebuilt: Vec::new(),
                native: None,
                yanked: false,
            },
        );
    }
    (b.finish().0, id)
}

fn members(set: &basefit::solve::IndexSet, count: usize) -> BTreeSet<u32> {
    indices(set, count).collect()
}

#[test]
fn requirement_sets_agree_with_semver_matches() {
    let target: u64 = common::env_count("BASEFIT_SEMVER_PAIRS", 6_000);
    let pairs = AtomicU64::new(0);
    let parsed = AtomicU64::new(0);
    let refused = AtomicU64::new(0);
    let strategy = (
        prop::collection::btree_set(version(), 5..25),
        prop::collection::vec(requirement(), 8),
        any::<u64>(),
    );
    let config = Config {
        cases: 64,
        failure_persistence: None,
        ..Config::default()
    };
    // A fixed seed: the run is reproducible; shrinking reports a minimal disagreement. A
    // runner runs its cases once, so each round of 64 cases gets a fresh runner whose
    // generator is forked from the seeded one.
    let mut seeds = TestRunner::new_with_rng(
        config.clone(),
        TestRng::deterministic_rng(RngAlgorithm::ChaCha),
    );
    while pairs.load(Relaxed) < target {
        let mut runner = TestRunner::new_with_rng(config.clone(), seeds.new_rng());
        let result = runner.run(&strategy, |(versions, reqs, shuffle)| {
            // Feed the versions shuffled; the registry must order them as semver does.
            let sorted: Vec<Version> = versions.into_iter().collect();
            let mut fed = sorted.clone();
            let mut s = shuffle;
            for i in (1..fed.len()).rev() {
                s = s
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                fed.swap(i, (s >> 33) as usize % (i + 1));
            }
            let (mut registry, id) = registry_with(&fed);
            let loaded: Vec<&Version> = registry
                .package(id)
                .releases
                .iter()
                .map(|r| &r.version)
                .collect();
            prop_assert_eq!(loaded, sorted.iter().collect::<Vec<_>>());
            let n = sorted.len();
            let cache = SetCache::default();
            for text in &reqs {
                let ours = Requirement::parse(text);
                let theirs = reference(text);
                // Both accept or both refuse the text.
                prop_assert_eq!(
                    ours.is_ok(),
                    theirs.is_some(),
                    "parse of `{}`: {:?}",
                    text,
                    ours
                );
                let (Ok(req), Some(alts)) = (ours, theirs) else {
                    refused.fetch_add(1, Relaxed);
                    continue;
                };
                parsed.fetch_add(1, Relaxed);
                let by_set = members(&requirement_set(&registry, id, &req), n);
                // The path the solver takes: the interned requirement through the set cache.
                let rid = registry.intern_requirement(text).unwrap();
                let by_cache = members(&cache.get(&registry, id, rid), n);
                let by_predicate = members(
                    &set_from_predicate(n, |i| alts.iter().any(|r| r.matches(&sorted[i]))),
                    n,
                );
                for (i, v) in sorted.iter().enumerate() {
                    let expected = alts.iter().any(|r| r.matches(v));
                    let i = i as u32;
                    prop_assert_eq!(by_set.contains(&i), expected, "`{}` vs {}", text, v);
                    prop_assert_eq!(
                        by_cache.contains(&i),
                        expected,
                        "`{}` vs {} (cache)",
                        text,
                        v
                    );
                    prop_assert_eq!(
                        by_predicate.contains(&i),
                        expected,
                        "`{}` vs {} (predicate)",
                        text,
                        v
                    );
                    pairs.fetch_add(1, Relaxed);
                }
            }
            Ok::<(), TestCaseError>(())
        });
        if let Err(e) = result {
            panic!("disagreement with semver::VersionReq::matches: {e}");
        }
    }
    let (pairs, parsed, refused) = (
        pairs.load(Relaxed),
        parsed.load(Relaxed),
        refused.load(Relaxed),
    );
    println!(
        "compared {pairs} (requirement, version) pairs over {parsed} requirements \
         ({refused} requirement texts refused by both parsers): 0 disagreements"
    );
    assert!(pairs >= target);
    // Refusals are agreement too, but most generated texts must be real requirements.
    assert!(parsed > refused * 2, "{parsed} parsed, {refused} refused");
}

/// Semantic Versioning 2.0.0, section 11: "Example: 1.0.0-alpha < 1.0.0-alpha.1 <
/// 1.0.0-alpha.beta < 1.0.0-beta < 1.0.0-beta.2 < 1.0.0-beta.11 < 1.0.0-rc.1 < 1.0.0."
#[test]
fn semver_spec_section_11_precedence_example() {
    let spec_order = [
        "1.0.0-alpha",
        "1.0.0-alpha.1",
        "1.0.0-alpha.beta",
        "1.0.0-beta",
        "1.0.0-beta.2",
        "1.0.0-beta.11",
        "1.0.0-rc.1",
        "1.0.0",
    ];
    // Several shuffles, including the reverse order.
    let shuffles: [[usize; 8]; 4] = [
        [7, 6, 5, 4, 3, 2, 1, 0],
        [3, 7, 0, 5, 1, 6, 2, 4],
        [5, 2, 7, 1, 4, 0, 6, 3],
        [1, 0, 3, 2, 5, 4, 7, 6],
    ];
    for shuffle in shuffles {
        let fed: Vec<Version> = shuffle
            .iter()
            .map(|&i| Version::parse(spec_order[i]).unwrap())
            .collect();
        let (registry, id) = registry_with(&fed);
        let loaded: Vec<String> = registry
            .package(id)
            .releases
            .iter()
            .map(|r| r.version.to_string())
            .collect();
        assert_eq!(loaded, spec_order, "fed as {shuffle:?}");
        // Each release has strictly higher precedence than the one before it (section 11).
        let releases = &registry.package(id).releases;
        for w in releases.windows(2) {
            assert_eq!(w[0].version.cmp_precedence(&w[1].version), Ordering::Less);
        }
    }
}

/// Semantic Versioning 2.0.0, section 10: "Build metadata MUST be ignored when determining
/// version precedence. Thus two versions that differ only in the build metadata, have the
/// same precedence." (Section 11 likewise: "Build metadata does not figure into
/// precedence".) The semver crate's `Ord` breaks such ties by build metadata so that it is a
/// total order; precedence is `Version::cmp_precedence`.
#[test]
fn build_metadata_does_not_affect_precedence() {
    let fed: Vec<Version> = [
        "1.0.0+exp.sha.5114f85",
        "1.0.0-rc.1+build.2",
        "1.0.0",
        "1.0.0+20130313144700",
        "1.0.0-rc.1+build.1",
        "1.0.1-alpha+001",
        "0.9.0+build.1",
    ]
    .iter()
    .map(|s| Version::parse(s).unwrap())
    .collect();
    let (registry, id) = registry_with(&fed);
    let releases = &registry.package(id).releases;
    // Versions differing only in build metadata are distinct releases, all kept.
    assert_eq!(releases.len(), fed.len());
    let by_precedence = |a: &str| {
        let a = Version::parse(a).unwrap();
        releases
            .iter()
            .filter(|r| r.version.cmp_precedence(&a) == Ordering::Equal)
            .count()
    };
    assert_eq!(by_precedence("1.0.0"), 3);
    assert_eq!(by_precedence("1.0.0-rc.1"), 2);
    // The registry's order never contradicts precedence (section 11), and equal-precedence
    // releases are adjacent.
    for w in releases.windows(2) {
        assert_ne!(
            w[0].version.cmp_precedence(&w[1].version),
            Ordering::Greater
        );
    }
    let names: Vec<String> = releases.iter().map(|r| r.version.to_string()).collect();
    let group = |pred: &dyn Fn(&Version) -> bool| {
        let idx: Vec<usize> = releases
            .iter()
            .enumerate()
            .filter(|(_, r)| pred(&r.version))
            .map(|(i, _)| i)
            .collect();
        idx.windows(2).all(|w| w[1] == w[0] + 1)
    };
    assert!(
        group(&|v| v.cmp_precedence(&Version::new(1, 0, 0)) == Ordering::Equal),
        "{names:?}"
    );
    // What a requirement admits ignores build metadata too (semver::VersionReq::matches):
    // `=1.0.0` admits all three 1.0.0 builds and nothing else.
    let req = Requirement::parse("=1.0.0").unwrap();
    let set = members(&requirement_set(&registry, id, &req), releases.len());
    let expected: BTreeSet<u32> = releases
        .iter()
        .enumerate()
        .filter(|(_, r)| r.version.cmp_precedence(&Version::new(1, 0, 0)) == Ordering::Equal)
        .map(|(i, _)| i as u32)
        .collect();
    assert_eq!(set.len(), 3);
    assert_eq!(set, expected, "{names:?}");
}

/// With `prerelease: true`, the root set admits a pre-release exactly when each comparator of
/// the requirement holds for it by precedence. For the five ordering operators with a full
/// version that is the spec's order (Semantic Versioning 2.0.0, section 11:
/// `Version::cmp_precedence`); wherever the semver crate's same-major.minor.patch rule does not
/// apply (a release, or a pre-release a comparator names at its own major.minor.patch) it
/// must also agree with the semver crate's VersionReq::matches.
#[test]
fn prerelease_flag_admits_by_precedence() {
    use basefit::solve::sets::root_set;
    let versions: Vec<Version> = [
        "1.0.0",
        "1.1.0-alpha",
        "1.1.0-rc.1",
        "1.1.0",
        "1.1.1-0",
        "1.2.0-beta.2",
        "1.2.0",
        "2.0.0-rc.1",
        "2.0.0",
    ]
    .iter()
    .map(|s| Version::parse(s).unwrap())
    .collect();
    let (registry, id) = registry_with(&versions);
    let releases = &registry.package(id).releases;
    let bounds = [
        "1.0.0",
        "1.1.0-rc.1",
        "1.1.0",
        "1.2.0-beta.2",
        "1.2.0",
        "2.0.0",
    ];
    type Holds = fn(Ordering) -> bool;
    let ops: [(&str, Holds); 5] = [
        (">=", |o| o != Ordering::Less),
        (">", |o| o == Ordering::Greater),
        ("<", |o| o == Ordering::Less),
        ("<=", |o| o != Ordering::Greater),
        ("=", |o| o == Ordering::Equal),
    ];
    let mut checked = 0;
    for (op, holds) in ops {
        for bound in bounds {
            let b = Version::parse(bound).unwrap();
            let text = format!("{op}{bound}");
            let req = Requirement::parse(&text).unwrap();
            let set = members(&root_set(&registry, id, &req, true), releases.len());
            let semver_req = VersionReq::parse(&text).unwrap();
            for (i, r) in releases.iter().enumerate() {
                let v = &r.version;
                let admitted = set.contains(&(i as u32));
                // Semantic Versioning 2.0.0, section 11, except that a full upper bound
                // `<M.m.p` admits no pre-release of M.m.p, as `^`, `~` and `<M` do not
                // (common practice, no source; checked against the crate below).
                let own_prerelease_of_bound = op == "<"
                    && b.pre.is_empty()
                    && !v.pre.is_empty()
                    && (b.major, b.minor, b.patch) == (v.major, v.minor, v.patch);
                assert_eq!(
                    admitted,
                    holds(v.cmp_precedence(&b)) && !own_prerelease_of_bound,
                    "{text} on {v}"
                );
                let named_here =
                    !b.pre.is_empty() && (b.major, b.minor, b.patch) == (v.major, v.minor, v.patch);
                let rule_applies = !v.pre.is_empty() && !named_here;
                if !rule_applies {
                    // The semver crate's VersionReq::matches.
                    assert_eq!(admitted, semver_req.matches(v), "{text} on {v}");
                }
                checked += 1;
            }
        }
    }
    assert_eq!(checked, 5 * 6 * 9);
    // Spellings of one bound agree with the flag set, as they do without it in the semver
    // crate's VersionReq::matches: `^1`, `<2` and `<2.0.0` on 2.0.0-rc.1, `~1.1` and
    // `<1.2.0` on 1.2.0-beta.2.
    for (spellings, version) in [
        (&["^1", "<2", "<2.0.0", ">=1, <2.0.0"][..], "2.0.0-rc.1"),
        (
            &["~1.1", ">=1.1.0, <1.2", ">=1.1.0, <1.2.0"][..],
            "1.2.0-beta.2",
        ),
    ] {
        let i = releases
            .iter()
            .position(|r| r.version.to_string() == version)
            .unwrap() as u32;
        let verdicts: Vec<bool> = spellings
            .iter()
            .map(|text| {
                let req = Requirement::parse(text).unwrap();
                members(&root_set(&registry, id, &req, true), releases.len()).contains(&i)
            })
            .collect();
        assert!(
            verdicts.iter().all(|v| !v),
            "{spellings:?} on {version}: {verdicts:?}"
        );
    }
    // Without the flag, the semver crate's rule stands: `>=1.0.0` admits no pre-release.
    let plain = root_set(
        &registry,
        id,
        &Requirement::parse(">=1.0.0").unwrap(),
        false,
    );
    assert!(
        members(&plain, releases.len())
            .iter()
            .all(|&i| releases[i as usize].version.pre.is_empty())
    );
}

// ------------------------------------------------------------------------ runtime verdicts
//
// `solve::image::runtime_verdict` says whether an image's runtime meets a release's runtime
// requirement and, when it does not, whether the image needs a newer or an older runtime (the
// `runtime-too-old` and `runtime-too-new` causes). The reference is the semver crate's
// `VersionReq::matches` over a grid of release versions that reaches one past every number the
// requirements use, so the crate's own reading of partial versions decides each answer
// (documented on `semver::Op`: `>I.J` is `>=I.(J+1).0`, `>I` is `>=(I+1).0.0`, `<=I.J` is
// `<I.(J+1).0`, `~I.J` is `=I.J`, `^I` is `=I`, `I.J.*` is `=I.J`, ...):
//
// - admissible exactly when the crate matches the runtime;
// - otherwise "needs a newer runtime" exactly when the crate matches some version above it,
//   and "needs an older runtime" when every version it matches lies below it (a requirement
//   it matches nowhere has no direction; it must still not be admissible).

/// Every `I.J.K` with parts below `n`, ascending.
fn release_grid(n: u64) -> Vec<Version> {
    let mut out = Vec::new();
    for i in 0..n {
        for j in 0..n {
            for k in 0..n {
                out.push(Version::new(i, j, k));
            }
        }
    }
    out
}

/// Every comparator the syntax allows without a pre-release tag, numbers 0 to 3: each operator
/// (or none, which is `^`) before `I`, `I.J` and `I.J.K`, and the wildcards.
fn partial_comparators() -> Vec<String> {
    let mut bodies = Vec::new();
    for i in 0..4 {
        bodies.push(format!("{i}"));
        bodies.push(format!("{i}.*"));
        for j in 0..4 {
            bodies.push(format!("{i}.{j}"));
            bodies.push(format!("{i}.{j}.*"));
            for k in 0..4 {
                bodies.push(format!("{i}.{j}.{k}"));
            }
        }
    }
    let mut out = vec!["*".to_string()];
    for op in ["", "=", ">", ">=", "<", "<=", "~", "^"] {
        for b in &bodies {
            if op.is_empty() || !b.contains('*') {
                out.push(format!("{op}{b}"));
            }
        }
    }
    out
}

/// splitmix64, for a fixed sample of combinations.
struct Mix(u64);

impl Mix {
    fn below(&mut self, n: usize) -> usize {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        ((z ^ (z >> 31)) % n as u64) as usize
    }
}

/// Every single comparator, then a fixed sample of two-comparator alternatives and of unions
/// of two alternatives.
fn runtime_requirements() -> Vec<String> {
    let mut out = partial_comparators();
    // A lone `*` must stand alone in an alternative.
    let singles: Vec<String> = out.iter().filter(|c| *c != "*").cloned().collect();
    let mut mix = Mix(18);
    for _ in 0..3000 {
        let (a, b) = (mix.below(singles.len()), mix.below(singles.len()));
        out.push(format!("{}, {}", singles[a], singles[b]));
    }
    for _ in 0..1500 {
        let pick = |mix: &mut Mix| singles[mix.below(singles.len())].clone();
        let left = pick(&mut mix);
        let right = if mix.below(2) == 0 {
            pick(&mut mix)
        } else {
            format!("{}, {}", pick(&mut mix), pick(&mut mix))
        };
        out.push(format!("{left} || {right}"));
    }
    out
}

fn reference_verdict(
    alts: &[VersionReq],
    runtime: &Version,
    grid: &[Version],
) -> Option<Admission> {
    if alts.iter().any(|a| a.matches(runtime)) {
        return Some(Admission::Admissible);
    }
    let admitted: Vec<&Version> = grid
        .iter()
        .filter(|v| alts.iter().any(|a| a.matches(v)))
        .collect();
    if admitted.is_empty() {
        None
    } else if admitted.iter().any(|v| *v > runtime) {
        Some(Admission::NeedsNewerRuntime)
    } else {
        Some(Admission::NeedsOlderRuntime)
    }
}

/// Release runtimes, every operator with partial and full versions: the verdict agrees with
/// `semver::VersionReq::matches` as described above. The reviewer's case first: `>3.1` on
/// 3.1.5 needs a newer runtime (the crate reads it as `>=3.2.0`).
#[test]
fn runtime_verdicts_agree_with_semver_matches_on_partial_requirements() {
    let v315 = Version::new(3, 1, 5);
    for (req, want) in [
        (">3.1", Admission::NeedsNewerRuntime),
        (">3", Admission::NeedsNewerRuntime),
        (">3.1.5", Admission::NeedsNewerRuntime),
        (">3.1.4", Admission::Admissible),
        ("<=3.1", Admission::Admissible),
        ("<=3.0", Admission::NeedsOlderRuntime),
        ("<3.1", Admission::NeedsOlderRuntime),
        ("=3.1", Admission::Admissible),
        ("~3.0", Admission::NeedsOlderRuntime),
        ("^2.4", Admission::NeedsOlderRuntime),
        ("3.*", Admission::Admissible),
        ("<2.4 || >=3.2", Admission::NeedsNewerRuntime),
    ] {
        let r = Requirement::parse(req).unwrap();
        assert_eq!(runtime_verdict(&r, &v315), want, "{req} on 3.1.5");
    }

    let grid = release_grid(6);
    let runtimes = release_grid(5);
    let mut compared = 0u64;
    let mut directions = [0u64; 3];
    for text in runtime_requirements() {
        let req = Requirement::parse(&text).unwrap();
        let alts = reference(&text).expect("the semver crate parses it too");
        for r in &runtimes {
            let got = runtime_verdict(&req, r);
            compared += 1;
            match reference_verdict(&alts, r, &grid) {
                Some(want) => {
                    assert_eq!(got, want, "`{text}` on runtime {r}");
                    directions[match want {
                        Admission::Admissible => 0,
                        Admission::NeedsNewerRuntime => 1,
                        _ => 2,
                    }] += 1;
                }
                None => assert_ne!(got, Admission::Admissible, "`{text}` on runtime {r}"),
            }
            // Build metadata plays no part (Semantic Versioning 2.0.0, section 10).
            let built = Version {
                build: semver::BuildMetadata::new("build.7").unwrap(),
                ..r.clone()
            };
            assert_eq!(runtime_verdict(&req, &built), got, "`{text}` on {built}");
        }
    }
    println!(
        "runtime verdicts: {compared} (requirement, runtime) pairs agree with semver::VersionReq::matches"
    );
    assert!(directions.iter().all(|&n| n > 10_000), "{directions:?}");
}

/// A pre-release runtime stands for the release it previews: against requirements that name
/// no pre-release of it, `3.2.0-rc.1` gets exactly the verdicts of `3.2.0` (so `>=3.0`, `<4`
/// and `>=3.2` admit it and `<3.2` does not). The reviewer's image: 3.2.0-rc.1 with `>=3.0`
/// and `<4`.
#[test]
fn prerelease_runtime_counts_as_its_release() {
    let rc = Version::parse("3.2.0-rc.1").unwrap();
    for (req, want) in [
        (">=3.0", Admission::Admissible),
        ("<4", Admission::Admissible),
        (">=3.2", Admission::Admissible),
        ("^3.2", Admission::Admissible),
        ("=3.2.0", Admission::Admissible),
        ("<3.2", Admission::NeedsOlderRuntime),
        ("<3.2.0", Admission::NeedsOlderRuntime),
        (">=3.3", Admission::NeedsNewerRuntime),
        (">3.2.0", Admission::NeedsNewerRuntime),
    ] {
        let r = Requirement::parse(req).unwrap();
        assert_eq!(runtime_verdict(&r, &rc), want, "{req} on {rc}");
    }
    let runtimes = release_grid(5);
    for text in runtime_requirements().iter().step_by(7) {
        let req = Requirement::parse(text).unwrap();
        for r in &runtimes {
            let release = runtime_verdict(&req, r);
            for pre in ["alpha", "rc.1", "0"] {
                let v = Version {
                    pre: semver::Prerelease::new(pre).unwrap(),
                    ..r.clone()
                };
                assert_eq!(runtime_verdict(&req, &v), release, "`{text}` on {v}");
            }
        }
    }
}

/// Where an alternative names a pre-release of the runtime's own release, that alternative
/// compares the runtime whole, by precedence (Semantic Versioning 2.0.0, section 11: 1.2.3-alpha
/// < 1.2.3-beta < 1.2.3-rc.1 < 1.2.3), through the semver crate's matching. The reference is
/// `VersionReq::matches` over the releases below 4.0.0 and every pre-release of 1.2.3 in
/// `PRE`; the other alternatives see the release 1.2.3. Only full versions are paired with a
/// pre-release comparator: the crate matches a pre-release against partial ones (`>=1`,
/// `<=1.2`, `=1.2`) in a way that departs from their documented meaning, so they have no single
/// reference here.
#[test]
fn prerelease_runtime_against_requirements_naming_its_release() {
    let pres: Vec<Version> = PRE
        .iter()
        .map(|p| Version::parse(&format!("1.2.3-{p}")).unwrap())
        .collect();
    let mut grid = release_grid(4);
    grid.extend(pres.iter().cloned());
    grid.sort();
    let ops = ["=", ">", ">=", "<", "<=", "~", "^"];
    let partners = [
        "",
        ", <1.2.3",
        ", <1.2.4",
        ", >1.2.2",
        ", >=1.0.0",
        ", <2.0.0",
        " || >=2.0.0",
        " || <1.0.0",
        " || >=1.2.3",
    ];
    let release = Version::new(1, 2, 3);
    let mut compared = 0u64;
    for op in ops {
        for named in PRE {
            for partner in partners {
                let text = format!("{op}1.2.3-{named}{partner}");
                let req = Requirement::parse(&text).unwrap();
                let alts = reference(&text).unwrap();
                let names = |a: &VersionReq| a.comparators.iter().any(|c| !c.pre.is_empty());
                for runtime in &pres {
                    let seen = |a: &VersionReq| if names(a) { runtime } else { &release };
                    let want = if alts.iter().any(|a| a.matches(seen(a))) {
                        Some(Admission::Admissible)
                    } else if alts.iter().any(|a| {
                        let s = seen(a);
                        grid.iter().any(|v| v > s && a.matches(v))
                    }) {
                        Some(Admission::NeedsNewerRuntime)
                    } else if grid.iter().any(|v| alts.iter().any(|a| a.matches(v))) {
                        Some(Admission::NeedsOlderRuntime)
                    } else {
                        None
                    };
                    let got = runtime_verdict(&req, runtime);
                    compared += 1;
                    match want {
                        Some(w) => assert_eq!(got, w, "`{text}` on runtime {runtime}"),
                        None => assert_ne!(got, Admission::Admissible, "`{text}` on {runtime}"),
                    }
                }
            }
        }
    }
    println!("pre-release runtimes: {compared} pairs agree");
    // The cases a release candidate image meets first.
    let rc1 = Version::parse("3.2.0-rc.1").unwrap();
    for (req, want) in [
        (">=3.2.0-rc.2", Admission::NeedsNewerRuntime),
        (">=3.2.0-rc.1", Admission::Admissible),
        (">=3.2.0-beta.1, <3.2.0", Admission::Admissible),
        ("<3.2.0-rc.1", Admission::NeedsOlderRuntime),
        ("=3.2.0-rc.2 || <3.1", Admission::NeedsNewerRuntime),
    ] {
        let r = Requirement::parse(req).unwrap();
        assert_eq!(runtime_verdict(&r, &rc1), want, "{req} on {rc1}");
    }
}

/// A pre-release comparator of another patch release does not make an alternative compare a
/// pre-release runtime whole: README ("Runtime images": only an alternative that names a
/// pre-release of that same version compares the runtime as the pre-release) and the semver
/// crate's own condition for a pre-release to match at all (`VersionReq::matches` takes
/// 3.2.1-rc.1 only from a comparator on 3.2.1 with a pre-release). So 3.2.1-rc.1 counts as
/// 3.2.1, which `>=3.2.0-rc.1` admits.
#[test]
fn a_prerelease_comparator_of_another_patch_sees_the_runtime_as_its_release() {
    let rc = Version::parse("3.2.1-rc.1").unwrap();
    let text = ">=3.2.0-rc.1";
    assert!(!VersionReq::parse(text).unwrap().matches(&rc));
    assert!(
        VersionReq::parse(text)
            .unwrap()
            .matches(&Version::new(3, 2, 1))
    );
    let req = Requirement::parse(text).unwrap();
    assert_eq!(runtime_verdict(&req, &rc), Admission::Admissible);
}

/// A runtime equal to the lower bound of a requirement no version meets is refused for the
/// bound it misses, the upper one: semver's `VersionReq::matches` takes 3.0.0 for `>=3.0` and
/// not for `<2.0`, so the requirement's own bounds put every version it could hold below the
/// runtime: too new, as README ("Runtime images") gives `<0.0.0` too new and `>=5, <4` too old.
#[test]
fn a_runtime_at_the_lower_bound_of_an_empty_requirement_is_too_new() {
    let runtime = Version::new(3, 0, 0);
    assert!(VersionReq::parse(">=3.0").unwrap().matches(&runtime));
    assert!(!VersionReq::parse("<2.0").unwrap().matches(&runtime));
    for text in [">=3.0, <2.0", ">=3.0.0, <2"] {
        let req = Requirement::parse(text).unwrap();
        assert_eq!(
            runtime_verdict(&req, &runtime),
            Admission::NeedsOlderRuntime,
            "{text}"
        );
    }
}

/// A requirement is read trimmed (its text is what reports print, so ` ^1 ` and `^1` print
/// alike), and an alternative left empty around `||` is refused rather than dropped: `^1 ||`
/// is a mistake in the record, not `^1`. The `semver` crate refuses an empty requirement
/// text (`VersionReq::parse("")`), checked here.
#[test]
fn requirement_text_is_trimmed_and_empty_alternatives_are_refused() {
    assert!(VersionReq::parse("").is_err());
    let req = Requirement::parse("  ^1.2 || >=3  ").unwrap();
    assert_eq!(req.to_string(), "^1.2 || >=3");
    assert_eq!(req.alternatives.len(), 2);
    for text in ["^1 ||", "|| ^1", "^1 || || >=3", "^1 ||   "] {
        let why = Requirement::parse(text).unwrap_err();
        assert!(why.contains("empty alternative"), "{text}: {why}");
    }
}
