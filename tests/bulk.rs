//! The bulk CSV reader against the synthetic generator, the YAML reader, and bad input.

use basefit::load::diag::RecordKind;
use basefit::load::registry::{RegistryBuilder, read_yaml};
use basefit::load::{BadInput, Ledger, read_bulk};
use basefit::model::{Registry, Release};
use basefit::synth::{SynthOptions, SynthSummary, write_bulk, write_yaml};
use basefit::{Problem, ProblemKind};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::Instant;

fn generate_bulk(dir: &Path, opts: &SynthOptions) -> (PathBuf, PathBuf, SynthSummary) {
    let versions = dir.join("versions.csv");
    let deps = dir.join("dependencies.csv");
    let summary = write_bulk(
        opts,
        std::fs::File::create(&versions).unwrap(),
        std::fs::File::create(&deps).unwrap(),
    )
    .unwrap();
    (versions, deps, summary)
}

fn count(ledger: &Ledger, kind: ProblemKind) -> usize {
    ledger.problems.iter().filter(|p| p.kind == kind).count()
}

fn tally(ledger: &Ledger, kind: RecordKind) -> (u64, u64, u64) {
    let t = ledger.tallies.get(&kind).cloned().unwrap_or_default();
    (t.read, t.used, t.left_out)
}

/// What the generator says it wrote, checked against what the loader counted.
fn check_against_summary(registry: &Registry, ledger: &Ledger, s: &SynthSummary) {
    assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);
    let kept = s.versions - s.unreadable;
    assert_eq!(
        tally(ledger, RecordKind::Version),
        (s.versions, kept, s.unreadable)
    );
    assert_eq!(registry.release_count() as u64, kept);
    assert_eq!(
        tally(ledger, RecordKind::Dependency),
        (
            s.dependencies,
            s.dependencies - s.unreadable_dependencies,
            s.unreadable_dependencies
        )
    );
    let deps_loaded: usize = registry
        .packages
        .iter()
        .flat_map(|p| &p.releases)
        .map(|r| r.deps.len())
        .sum();
    assert_eq!(
        deps_loaded as u64,
        s.dependencies - s.unreadable_dependencies
    );
    assert_eq!(tally(ledger, RecordKind::Package).0, s.packages);
    assert!(s.normalised > 0 && s.unreadable > 0);
    assert_eq!(
        count(ledger, ProblemKind::NormalisedVersion) as u64,
        s.normalised
    );
    assert_eq!(
        count(ledger, ProblemKind::UnreadableVersion) as u64,
        s.unreadable
    );
    for kind in [
        ProblemKind::OrphanDependency,
        ProblemKind::DuplicateVersion,
        ProblemKind::DuplicatePackage,
        ProblemKind::UnreadableRequirement,
        ProblemKind::UnreadableDate,
        ProblemKind::UnknownDependency,
    ] {
        assert_eq!(count(ledger, kind), 0, "{kind:?}");
    }
    // Most requirements are aimed at an existing version, so few are unsatisfiable.
    let unsat = count(ledger, ProblemKind::UnsatisfiableRequirement) as u64;
    assert!(unsat * 50 < s.dependencies, "{unsat} of {}", s.dependencies);
}

#[test]
fn bulk_load_of_100k_versions_adds_up() {
    let dir = tempfile::tempdir().unwrap();
    let opts = SynthOptions::scaled(42, 100_000);
    let started = Instant::now();
    let (versions, deps, summary) = generate_bulk(dir.path(), &opts);
    let generated = started.elapsed();
    let (registry, ledger) = read_bulk(&versions, &deps).unwrap();
    eprintln!(
        "generated in {generated:?}, loaded in {:?}: {summary:?}",
        started.elapsed() - generated
    );
    assert_eq!(summary.versions, 100_000);
    assert_eq!(summary.dependencies, 400_000);
    check_against_summary(&registry, &ledger, &summary);
    assert!(summary.native > 0 && summary.yanked > 0 && summary.prereleases > 0);
    assert!(
        registry
            .platforms
            .iter()
            .any(|p| p.to_string() == "linux/glibc/x86_64")
    );
    // Heavy tails: a few packages have many versions and many dependents.
    let most_versions = registry.packages.iter().map(|p| p.releases.len()).max();
    assert!(most_versions.unwrap_or(0) > 100, "{most_versions:?}");
    let mut dependents = vec![0u32; registry.packages.len()];
    for r in registry.packages.iter().flat_map(|p| &p.releases) {
        for d in r.deps.iter() {
            dependents[d.package.0 as usize] += 1;
        }
    }
    dependents.sort_unstable();
    let top: u64 = dependents
        .iter()
        .rev()
        .take(dependents.len() / 100)
        .map(|&d| u64::from(d))
        .sum();
    assert!(
        top * 4 > summary.dependencies,
        "top 1% of packages get {top} dependencies"
    );
}

#[test]
fn same_seed_gives_identical_files() {
    let opts = SynthOptions::scaled(9, 20_000);
    let run = |opts: &SynthOptions| {
        let (mut v, mut d, mut y) = (Vec::new(), Vec::new(), Vec::new());
        write_bulk(opts, &mut v, &mut d).unwrap();
        write_yaml(opts, &mut y).unwrap();
        (v, d, y)
    };
    let first = run(&opts);
    assert!(first == run(&opts));
    let other = run(&SynthOptions { seed: 10, ..opts });
    assert!(first.0 != other.0 && first.1 != other.1);
}

/// FNV-1a, so the expected value below does not depend on a hashing crate.
fn fnv(bytes: &[u8]) -> u64 {
    bytes.iter().fold(0xcbf2_9ce4_8422_2325, |h, &b| {
        (h ^ u64::from(b)).wrapping_mul(0x0100_0000_01b3)
    })
}

#[test]
fn generator_output_is_pinned() {
    // A change of this value means the generator's output changed: intended only when the
    // generator is changed on purpose, and then with `GENERATOR_VERSION` bumped (benchmarks on
    // old files stop being comparable).
    let (mut v, mut d) = (Vec::new(), Vec::new());
    write_bulk(&SynthOptions::scaled(3, 300), &mut v, &mut d).unwrap();
    assert_eq!(
        (fnv(&v), fnv(&d)),
        (609550971315511690, 9586482488625407391)
    );
    // A larger registry, where more of the generator's rules fire.
    let (mut v, mut d) = (Vec::new(), Vec::new());
    write_bulk(&SynthOptions::scaled(3, 5_000), &mut v, &mut d).unwrap();
    assert_eq!(
        (fnv(&v), fnv(&d)),
        (15784304541250643598, 15229480383356874096)
    );
}

/// A release in a form that does not depend on interning order or lines.
fn release_view(registry: &Registry, r: &Release) -> String {
    let deps: Vec<String> = r
        .deps
        .iter()
        .map(|d| {
            format!(
                "{} {} {:?}",
                registry.name(d.package),
                registry.requirement(d.req),
                d.kind
            )
        })
        .collect();
    let platforms: Vec<String> = r
        .build
        .prebuilt
        .iter()
        .map(|p| registry.platform(*p).to_string())
        .collect();
    format!(
        "{} {:?} {:?} {:?} {:?} source={} {:?} {:?} yanked={}",
        r.version,
        r.raw_version,
        r.released.map(|d| d.to_string()),
        r.runtime.map(|q| registry.requirement(q).to_string()),
        deps,
        r.build.source,
        platforms,
        r.native,
        r.yanked
    )
}

fn registry_view(registry: &Registry) -> BTreeMap<String, (String, Vec<String>)> {
    registry
        .packages
        .iter()
        .map(|p| {
            let head = format!(
                "{:?} helper={} declared={}",
                p.summary, p.native_helper, p.declared
            );
            let releases = p
                .releases
                .iter()
                .map(|r| release_view(registry, r))
                .collect();
            (p.name.to_string(), (head, releases))
        })
        .collect()
}

fn problem_view(ledger: &Ledger) -> Vec<(ProblemKind, String, String, bool)> {
    let mut out: Vec<_> = ledger
        .problems
        .iter()
        .map(|p| (p.kind, p.subject.clone(), p.detail.clone(), p.left_out))
        .collect();
    out.sort();
    out
}

#[test]
fn yaml_and_bulk_load_the_same_registry() {
    let dir = tempfile::tempdir().unwrap();
    let opts = SynthOptions::scaled(5, 5_000);
    let (versions, deps, bulk_summary) = generate_bulk(dir.path(), &opts);
    let yaml = dir.path().join("registry.yaml");
    let yaml_summary = write_yaml(&opts, std::fs::File::create(&yaml).unwrap()).unwrap();
    assert_eq!(bulk_summary, yaml_summary);

    let (bulk, bulk_ledger) = read_bulk(&versions, &deps).unwrap();
    let mut builder = RegistryBuilder::new();
    read_yaml(&yaml, &mut builder).unwrap();
    let (from_yaml, yaml_ledger) = builder.finish();

    check_against_summary(&from_yaml, &yaml_ledger, &yaml_summary);
    check_against_summary(&bulk, &bulk_ledger, &bulk_summary);
    assert_eq!(bulk_ledger.tallies, yaml_ledger.tallies);
    assert_eq!(problem_view(&bulk_ledger), problem_view(&yaml_ledger));
    assert_eq!(registry_view(&bulk), registry_view(&from_yaml));
}

/// Writes the pair and reads it; the names in messages are `versions.csv` and `deps.csv`.
fn load(versions: &str, deps: &str) -> Result<(Registry, Ledger), BadInput> {
    load_bytes(versions.as_bytes(), deps.as_bytes())
}

fn load_bytes(versions: &[u8], deps: &[u8]) -> Result<(Registry, Ledger), BadInput> {
    load_changing(versions, &[deps]).0
}

/// [`load_bytes`] whose dependencies file reads as `deps[n]` the `n`-th time it is opened
/// (the last one ever after): a file that changes between reads. Also gives the count of
/// opens so far.
fn load_changing(
    versions: &[u8],
    deps: &[&[u8]],
) -> (Result<(Registry, Ledger), BadInput>, Arc<AtomicUsize>) {
    let opened = Arc::new(AtomicUsize::new(0));
    let deps: Vec<Vec<u8>> = deps.iter().map(|d| d.to_vec()).collect();
    let count = Arc::clone(&opened);
    let open = move || -> std::io::Result<Box<dyn std::io::Read + Send>> {
        let n = count.fetch_add(1, Ordering::SeqCst);
        let text = deps[n.min(deps.len() - 1)].clone();
        Ok(Box::new(std::io::Cursor::new(text)))
    };
    let loaded = basefit::load::bulk::read_bulk_from(
        "versions.csv",
        Box::new(std::io::Cursor::new(versions.to_vec())),
        "deps.csv",
        open,
    );
    (loaded, opened)
}

fn find(ledger: &Ledger, kind: ProblemKind) -> Vec<&Problem> {
    ledger.problems.iter().filter(|p| p.kind == kind).collect()
}

const V_HEAD: &str = "package,version,released,runtime,yanked,source_build,prebuilt,native_libraries,native_files,summary,native_helper\n";
const D_HEAD: &str = "package,version,dependency,req,kind\n";

#[test]
fn bad_rows_are_reported_at_their_line() {
    let versions = format!(
        "{V_HEAD}\
         pkg-a,1.0.0,2020-01-02,>=2.1,,,,,,First,\n\
         pkg-a,latest,2020-02-02,,,,,,,,\n\
         pkg-b,v2.0,someday,,true,,,zlib;openssl,ext/a.c,,yes\n\
         pkg-b,2.1.0,,>>2,,,,,,,\n\
         pkg-a,1.1.0,,,,true,linux/glibc/x86_64;linux/musl/x86_64,,,Ignored,\n\
         pkg-c,1.0.0,,,,,,,,,\n\
         pkg-a,1.1.0,,,,,,,,,\n"
    );
    let deps = format!(
        "{D_HEAD}\
         pkg-a,1.0.0,pkg-b,^2,\n\
         pkg-a,1.0.0,pkg-zz,*,development\n\
         pkg-a,latest,pkg-b,^2,\n\
         pkg-b,2.1.0,pkg-a,^1,\n\
         pkg-c,1.0.0,pkg-a,^^1,\n\
         pkg-c,1.0.0,pkg-b,^2,\n\
         pkg-a,9.9.9,pkg-b,^2,\n\
         pkg-q,1.0.0,pkg-b,^2,\n\
         pkg-a,1.1.0,pkg-b,,runtime\n"
    );
    let (registry, ledger) = load(&versions, &deps).unwrap();
    assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);
    let at = |p: &Problem| format!("{}:{} {}", p.origin.file, p.origin.line, p.subject);

    let unreadable: Vec<_> = find(&ledger, ProblemKind::UnreadableVersion)
        .into_iter()
        .map(at)
        .collect();
    assert_eq!(unreadable, ["versions.csv:3 pkg-a@latest"]);
    let normalised: Vec<_> = find(&ledger, ProblemKind::NormalisedVersion)
        .into_iter()
        .map(at)
        .collect();
    assert_eq!(normalised, ["versions.csv:4 pkg-b@v2.0"]);
    let dates: Vec<_> = find(&ledger, ProblemKind::UnreadableDate)
        .into_iter()
        .map(at)
        .collect();
    assert_eq!(dates, ["versions.csv:4 pkg-b@2.0.0"]);
    // The runtime requirement is read with the version row; a dependency's with its row.
    let reqs: Vec<_> = find(&ledger, ProblemKind::UnreadableRequirement)
        .into_iter()
        .map(at)
        .collect();
    assert_eq!(
        reqs,
        ["versions.csv:5 pkg-b@2.1.0", "deps.csv:6 pkg-c@1.0.0"]
    );
    let orphans: Vec<_> = find(&ledger, ProblemKind::OrphanDependency)
        .into_iter()
        .map(at)
        .collect();
    assert_eq!(
        orphans,
        ["deps.csv:8 pkg-a@9.9.9", "deps.csv:9 pkg-q@1.0.0"]
    );
    let dups: Vec<_> = find(&ledger, ProblemKind::DuplicateVersion)
        .into_iter()
        .map(at)
        .collect();
    assert_eq!(dups, ["versions.csv:8 pkg-a@1.1.0"]);
    let unknown: Vec<_> = find(&ledger, ProblemKind::UnknownDependency)
        .into_iter()
        .map(at)
        .collect();
    assert!(
        unknown.is_empty(),
        "development dependencies are not checked: {unknown:?}"
    );

    // 7 version rows: latest, the bad runtime, pkg-c (bad dependency) and the duplicate are
    // left out.
    assert_eq!(tally(&ledger, RecordKind::Version), (7, 3, 4));
    // 9 dependency rows: 3 used (pkg-a@1.0.0 twice, pkg-a@1.1.0), the rest left out.
    assert_eq!(tally(&ledger, RecordKind::Dependency), (9, 3, 6));
    assert_eq!(tally(&ledger, RecordKind::Package), (3, 3, 0));

    let a = registry.package(registry.id("pkg-a").unwrap());
    assert_eq!(a.summary.as_deref(), Some("First"));
    let a11 = &a.releases[1];
    assert_eq!(a11.version.to_string(), "1.1.0");
    assert_eq!(a11.line, 6);
    assert!(a11.build.source);
    assert_eq!(a11.build.prebuilt.len(), 2);
    assert_eq!(registry.requirement(a11.deps[0].req).to_string(), "*");
    let b = registry.package(registry.id("pkg-b").unwrap());
    assert!(b.native_helper);
    let b2 = &b.releases[0];
    assert!(b2.yanked && b2.build.source && b2.build.prebuilt.is_empty());
    let native = b2.native.as_deref().unwrap();
    assert_eq!(native.libraries, ["zlib", "openssl"]);
    assert_eq!(native.files, ["ext/a.c"]);
}

const DEPENDENCY_PROBLEMS_VERSIONS: &str = "package,version\n\
     pkg-a,1.0.0\n\
     pkg-a,v1.1\n\
     pkg-b,2.0.0\n\
     pkg-b,2.1.0\n\
     pkg-c,0.3.0\n";

/// Rows of two versions interleaved with others, blank lines and a quoted line break, so a
/// row's line is neither its version's nor its place among the rows.
const DEPENDENCY_PROBLEMS_DEPS: &str = "package,version,dependency,req,kind\n\
     pkg-b,2.0.0,pkg-c,^0.3,\n\
     pkg-a,v1.1,pkg-b,^2,\n\
     \n\
     pkg-a,1.0.0,pkg-b,^2,\n\
     pkg-a,v1.1,pkg-gone,*,\n\
     pkg-b,2.1.0,\"pkg-c\n\",^0.3,\n\
     pkg-a,v1.1,pkg-c,^0.4,\n\
     pkg-a,v1.1,pkg-zz,*,development\n\
     pkg-a,v1.1,pkg-gone,^1,\n\
     pkg-b,2.1.0,pkg-c,>=1,\n";

/// `file:line subject: detail` of the unknown dependencies, then of the unsatisfiable
/// requirements, each in ledger order.
fn dependency_problems(ledger: &Ledger) -> Vec<String> {
    find(ledger, ProblemKind::UnknownDependency)
        .into_iter()
        .chain(find(ledger, ProblemKind::UnsatisfiableRequirement))
        .map(|p| {
            format!(
                "{}:{} {}: {}",
                p.origin.file, p.origin.line, p.subject, p.detail
            )
        })
        .collect()
}

/// A load reads the dependencies file once and reports the problems only the registry-wide
/// checks find (a dependency on a name the versions file never declares, a requirement no
/// version meets) at their version's row, with the same counts and wording as once placed:
/// a caller that only counts problems (`plan`) pays for no second read.
#[test]
fn dependency_problems_stay_at_the_version_row_until_placed() {
    let (loaded, opened) = load_changing(
        DEPENDENCY_PROBLEMS_VERSIONS.as_bytes(),
        &[DEPENDENCY_PROBLEMS_DEPS.as_bytes()],
    );
    let (_, ledger) = loaded.unwrap();
    assert_eq!(opened.load(Ordering::SeqCst), 1);
    assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);
    assert_eq!(
        dependency_problems(&ledger),
        [
            "versions.csv:3 pkg-a@v1.1: depends on `pkg-gone`, which the registry does not have",
            "versions.csv:3 pkg-a@v1.1: depends on `pkg-gone`, which the registry does not have",
            "versions.csv:3 pkg-a@v1.1: requires pkg-c ^0.4, which no published version satisfies",
            "versions.csv:5 pkg-b@2.1.0: requires pkg-c >=1, which no published version satisfies",
        ]
    );
    assert_eq!(ledger.deferred(), 4);
    assert_eq!(ledger.problems.len(), 5, "{:?}", ledger.problems);
    assert_eq!(tally(&ledger, RecordKind::Dependency), (9, 9, 0));
    // Cloning or merging the ledger keeps what placing needs, and reads nothing.
    let mut merged = Ledger::default();
    merged.merge(ledger.clone());
    assert_eq!(merged.deferred(), 4);
    assert_eq!(opened.load(Ordering::SeqCst), 1);
}

/// Once placed, the same problems name the dependency's own row, as the YAML path names the
/// dependency's own line; counts and wording do not change.
#[test]
fn dependency_problems_name_the_dependency_row() {
    let (loaded, opened) = load_changing(
        DEPENDENCY_PROBLEMS_VERSIONS.as_bytes(),
        &[DEPENDENCY_PROBLEMS_DEPS.as_bytes()],
    );
    let (_, mut ledger) = loaded.unwrap();
    // Problems are found by value: sorting first, as `load_inputs` does, loses none.
    ledger.sort();
    assert_eq!(ledger.place_deferred(), 4);
    assert_eq!(opened.load(Ordering::SeqCst), 2);
    assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);
    assert_eq!(
        dependency_problems(&ledger),
        [
            "deps.csv:6 pkg-a@v1.1: depends on `pkg-gone`, which the registry does not have",
            "deps.csv:11 pkg-a@v1.1: depends on `pkg-gone`, which the registry does not have",
            "deps.csv:9 pkg-a@v1.1: requires pkg-c ^0.4, which no published version satisfies",
            "deps.csv:12 pkg-b@2.1.0: requires pkg-c >=1, which no published version satisfies",
        ]
    );
    // Nothing else: the development dependency on an unknown name is not checked.
    assert_eq!(ledger.problems.len(), 5, "{:?}", ledger.problems);
    assert_eq!(tally(&ledger, RecordKind::Dependency), (9, 9, 0));
    // Placed once: a second call reads nothing.
    assert_eq!(ledger.deferred(), 0);
    assert_eq!(ledger.place_deferred(), 0);
    assert_eq!(opened.load(Ordering::SeqCst), 2);
}

/// A dependencies file that no longer holds the rows read the first time: the problems are
/// still reported, at their version's row, and so is every one whose row is still there.
#[test]
fn dependency_problems_stay_at_the_version_row_when_the_file_changed() {
    let first = DEPENDENCY_PROBLEMS_DEPS.as_bytes();
    let header_only = b"package,version,dependency,req,kind\n".as_slice();
    // The first `pkg-gone` row of `pkg-a` `v1.1` now names another package, and the rows
    // after it are gone.
    let edited = DEPENDENCY_PROBLEMS_DEPS.replacen(",pkg-gone,*,", ",pkg-b,*,", 1);
    let cut = edited.lines().take(9).collect::<Vec<_>>().join("\n") + "\n";
    let unusable = b"package,version\n".as_slice();
    // Each problem left at its version's row is counted once in `unplaced`, with why: a
    // report must not pass that row off as the problem's own.
    let places = |deps: &[&[u8]], why: Option<&str>| {
        let (loaded, _) = load_changing(DEPENDENCY_PROBLEMS_VERSIONS.as_bytes(), deps);
        let (_, mut ledger) = loaded.unwrap();
        ledger.place_deferred();
        assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);
        let mut places: Vec<_> = find(&ledger, ProblemKind::UnknownDependency)
            .into_iter()
            .chain(find(&ledger, ProblemKind::UnsatisfiableRequirement))
            .map(|p| format!("{}:{} {}", p.origin.file, p.origin.line, p.subject))
            .collect();
        places.sort();
        let at_versions = places
            .iter()
            .filter(|p| p.starts_with("versions.csv"))
            .count();
        match why {
            None => assert!(ledger.unplaced.is_empty(), "{:?}", ledger.unplaced),
            Some(why) => {
                assert_eq!(ledger.unplaced.len(), 1, "{:?}", ledger.unplaced);
                let u = &ledger.unplaced[0];
                assert_eq!((u.file.as_str(), u.problems), ("deps.csv", at_versions));
                assert!(u.reason.contains(why), "{}", u.reason);
            }
        }
        places
    };
    let changed = "it changed since it was read";
    assert_eq!(
        places(&[first], None),
        [
            "deps.csv:11 pkg-a@v1.1",
            "deps.csv:12 pkg-b@2.1.0",
            "deps.csv:6 pkg-a@v1.1",
            "deps.csv:9 pkg-a@v1.1",
        ]
    );
    let at_versions = [
        "versions.csv:3 pkg-a@v1.1",
        "versions.csv:3 pkg-a@v1.1",
        "versions.csv:3 pkg-a@v1.1",
        "versions.csv:5 pkg-b@2.1.0",
    ];
    assert_eq!(places(&[first, header_only], Some(changed)), at_versions);
    // The header no longer has the columns: the file cannot be read as one at all.
    assert_eq!(
        places(&[first, unusable], Some("`dependency`")),
        at_versions
    );
    assert_eq!(
        places(&[first, cut.as_bytes()], Some(changed)),
        [
            "deps.csv:9 pkg-a@v1.1",
            "versions.csv:3 pkg-a@v1.1",
            "versions.csv:3 pkg-a@v1.1",
            "versions.csv:5 pkg-b@2.1.0",
        ]
    );
}

/// The same records as YAML give the same problems (kinds and subjects).
#[test]
fn bad_rows_match_the_yaml_path() {
    let yaml = "packages:
  - name: pkg-a
    versions:
      - version: latest
        depends: [{name: pkg-b, req: ^2}]
      - {version: 1.0.0, runtime: '>=2.1'}
  - name: pkg-b
    versions:
      - {version: v2.0, released: someday}
      - {version: 2.1.0, runtime: '>>2', depends: [{name: pkg-a, req: ^1}]}
  - name: pkg-c
    versions:
      - version: 1.0.0
        depends: [{name: pkg-a, req: ^^1}, {name: pkg-b, req: ^2}]
";
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("r.yaml");
    std::fs::write(&path, yaml).unwrap();
    let mut builder = RegistryBuilder::new();
    read_yaml(&path, &mut builder).unwrap();
    let (_, yaml_ledger) = builder.finish();
    let versions = format!(
        "{V_HEAD}pkg-a,latest,,,,,,,,,\npkg-a,1.0.0,,>=2.1,,,,,,,\npkg-b,v2.0,someday,,,,,,,,\n\
         pkg-b,2.1.0,,>>2,,,,,,,\npkg-c,1.0.0,,,,,,,,,\n"
    );
    let deps = format!(
        "{D_HEAD}pkg-a,latest,pkg-b,^2,\npkg-b,2.1.0,pkg-a,^1,\npkg-c,1.0.0,pkg-a,^^1,\npkg-c,1.0.0,pkg-b,^2,\n"
    );
    let (_, bulk_ledger) = load(&versions, &deps).unwrap();
    assert_eq!(problem_view(&bulk_ledger), problem_view(&yaml_ledger));
    assert_eq!(bulk_ledger.tallies, yaml_ledger.tallies);
}

#[test]
fn schema_errors_name_file_and_line() {
    let ok_deps = D_HEAD;
    let cases: Vec<(String, String, &str)> = vec![
        (
            "package,versoin\npkg-a,1.0.0\n".into(),
            ok_deps.into(),
            "versions.csv:1: unknown column `versoin`; did you mean `version`?",
        ),
        (
            "package,released\npkg-a,2020-01-01\n".into(),
            ok_deps.into(),
            "versions.csv:1: missing required column `version`",
        ),
        (
            "package,version\npkg-a,1.0.0\n".into(),
            "package,version,req\n".into(),
            "deps.csv:1: missing required column `dependency`",
        ),
        (
            "package,version,version\npkg-a,1.0.0,1.0.0\n".into(),
            ok_deps.into(),
            "versions.csv:1: column `version` appears twice",
        ),
        (
            "package,version\npkg-a,1.0.0\npkg-a,1.1.0,extra\n".into(),
            ok_deps.into(),
            "versions.csv:3: expected 2 fields as in the header, found 3",
        ),
        (
            "package,version,yanked\npkg-a,1.0.0,maybe\n".into(),
            ok_deps.into(),
            "versions.csv:2: `yanked`: expected true or false, found `maybe`",
        ),
        (
            "package,version\n,1.0.0\n".into(),
            ok_deps.into(),
            "versions.csv:2: `package` is empty",
        ),
        (
            "package,version\npkg-a,1.0.0\n".into(),
            format!("{D_HEAD}pkg-a,1.0.0,pkg-b,^1,optional\n"),
            "deps.csv:2: `kind`: expected runtime or development, found `optional`",
        ),
        (
            "package,version\npkg-a,1.0.0\n".into(),
            format!("{D_HEAD}pkg-a,1.0.0,,^1,\n"),
            "deps.csv:2: `dependency` is empty",
        ),
        (
            String::new(),
            ok_deps.into(),
            "versions.csv:1: the file is empty; expected a header line with columns package,version",
        ),
    ];
    for (versions, deps, want) in cases {
        let err = load(&versions, &deps)
            .err()
            .unwrap_or_else(|| panic!("no error for {want}"));
        assert_eq!(err.to_string(), want);
    }
}

/// A `prebuilt` platform not of the form os/libc/arch leaves out its version record alone,
/// with its dependencies, in both formats with the same kind and wording; the rest of the
/// file is used. It used to make the whole file unusable.
#[test]
fn unreadable_platform_leaves_out_its_version_alone_in_both_formats() {
    let yaml = "packages:
  - name: pkg-a
    versions:
      - {version: 1.0.0, builds: {prebuilt: [linux/glibc/x86_64]}}
      - version: 1.1.0
        depends: [{name: pkg-b, req: ^2}]
        builds:
          source: true
          prebuilt:
            - linux/musl/x86_64
            - linux/x86_64
  - name: pkg-b
    versions:
      - {version: 2.0.0, builds: {prebuilt: [linux/glibc/aarch64]}}
";
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("r.yaml");
    std::fs::write(&path, yaml).unwrap();
    let mut builder = RegistryBuilder::new();
    read_yaml(&path, &mut builder).unwrap();
    let (yaml_registry, yaml_ledger) = builder.finish();
    let versions = format!(
        "{V_HEAD}pkg-a,1.0.0,,,,,linux/glibc/x86_64,,,,\n\
         pkg-a,1.1.0,,,,true,linux/musl/x86_64;linux/x86_64,,,,\n\
         pkg-b,2.0.0,,,,,linux/glibc/aarch64,,,,\n"
    );
    let deps = format!("{D_HEAD}pkg-a,1.1.0,pkg-b,^2,\n");
    let (bulk_registry, bulk_ledger) = load(&versions, &deps).unwrap();

    let want = "prebuilt platform `linux/x86_64`: expected a platform as os/libc/arch, e.g. linux/glibc/x86_64";
    for (ledger, at) in [
        (&yaml_ledger, "r.yaml:11"),
        (&bulk_ledger, "versions.csv:3"),
    ] {
        let found: Vec<_> = ledger
            .problems
            .iter()
            .map(|p| (p.kind, p.subject.as_str(), p.detail.as_str(), p.left_out))
            .collect();
        assert_eq!(
            found,
            [(ProblemKind::BadValue, "pkg-a@1.1.0", want, true)],
            "{at}"
        );
        let origin = &ledger.problems[0].origin;
        assert!(
            format!("{}:{}", origin.file, origin.line).ends_with(at),
            "{origin} is not {at}"
        );
        assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);
        assert_eq!(tally(ledger, RecordKind::Version), (3, 2, 1));
        assert_eq!(tally(ledger, RecordKind::Dependency), (1, 0, 1));
    }
    assert_eq!(problem_view(&bulk_ledger), problem_view(&yaml_ledger));
    for registry in [&yaml_registry, &bulk_registry] {
        let kept: Vec<String> = registry
            .packages
            .iter()
            .flat_map(|p| {
                p.releases
                    .iter()
                    .map(move |r| format!("{}@{}", p.name, r.version))
            })
            .collect();
        assert_eq!(kept, ["pkg-a@1.0.0", "pkg-b@2.0.0"]);
        // The readable platform beside the bad one is not taken in either.
        let platforms: Vec<String> = registry.platforms.iter().map(|p| p.to_string()).collect();
        assert_eq!(platforms, ["linux/glibc/x86_64", "linux/glibc/aarch64"]);
    }
}

#[test]
fn several_schema_errors_come_back_together() {
    let versions = "package,version,yanked\npkg-a,1.0.0,maybe\npkg-a,1.1.0,\npkg-b,1.0.0,often\n";
    let err = load(versions, D_HEAD).unwrap_err();
    assert_eq!(err.line, Some(2));
    assert_eq!(err.more.len(), 1);
    assert_eq!(err.more[0].line, Some(4));
}

/// Errors in the versions file once hid the dependencies file's until the next run, and a
/// bad header in one hid the other's; a combination of combinations lost all but the first
/// error of each.
#[test]
fn schema_errors_of_both_files_come_back_together() {
    let versions = "package,version,yanked\npkg-a,1.0.0,maybe\npkg-a,1.1.0,\npkg-b,1.0.0,often\n";
    let deps = "package,version,dependency\npkg-a,1.0.0,\n,1.1.0,pkg-b\npkg-a,1.1.0,pkg-b\n";
    let err = load(versions, deps).unwrap_err();
    assert_eq!(
        err.to_string(),
        "versions.csv:2: `yanked`: expected true or false, found `maybe`\n\
         versions.csv:4: `yanked`: expected true or false, found `often`\n\
         deps.csv:2: `dependency` is empty\n\
         deps.csv:3: `package` is empty"
    );
    let err = load("pkg,version\n", "package,dep\n").unwrap_err();
    let lines: Vec<String> = err.to_string().lines().map(String::from).collect();
    assert_eq!(lines.len(), 2, "{err}");
    assert!(
        lines[0].starts_with("versions.csv:1: unknown column `pkg`"),
        "{err}"
    );
    assert!(
        lines[1].starts_with("deps.csv:1: unknown column `dep`"),
        "{err}"
    );
    // A row with the wrong number of fields once stopped the reading: the rows after it, in
    // line order with the other errors, and the other file's, are now reported too.
    let misshapen_versions =
        "package,version,yanked\npkg-a,1.0.0,true,x\npkg-a,1.1.0,maybe\npkg-b\n";
    let misshapen_deps = "package,version,dependency\npkg-a,1.0.0\npkg-a,1.0.0,\n";
    let err = load(misshapen_versions, misshapen_deps).unwrap_err();
    assert_eq!(
        err.to_string(),
        "versions.csv:2: expected 3 fields as in the header, found 4\n\
         versions.csv:3: `yanked`: expected true or false, found `maybe`\n\
         versions.csv:4: expected 3 fields as in the header, found 1\n\
         deps.csv:2: expected 3 fields as in the header, found 2\n\
         deps.csv:3: `dependency` is empty"
    );
    // A good versions file with a bad dependencies file: as before, the latter's errors.
    let err = load("package,version\npkg-a,1.0.0\n", deps).unwrap_err();
    assert_eq!(
        err.to_string(),
        "deps.csv:2: `dependency` is empty\ndeps.csv:3: `package` is empty"
    );
}

/// Past the cap the reader stops, and the last line says so: the list is not every error.
#[test]
fn schema_errors_past_the_cap_are_announced() {
    let mut versions = String::from("package,version,yanked\n");
    for i in 0..25 {
        versions.push_str(&format!("pkg-{i},1.0.0,maybe\n"));
    }
    let err = load(&versions, D_HEAD).unwrap_err();
    assert_eq!(err.more.len(), 20, "{err}");
    let last = err.more.last().unwrap();
    assert_eq!(last.line, None);
    assert!(
        last.message
            .contains("there are more errors than these first 20"),
        "{err}"
    );
    // Up to the cap, nothing is added: exactly 20 errors are every error there is.
    let err = load("package,version,yanked\npkg-a,1.0.0,maybe\n", D_HEAD).unwrap_err();
    assert!(err.more.is_empty(), "{err}");
    let mut versions = String::from("package,version,yanked\n");
    for i in 0..20 {
        versions.push_str(&format!("pkg-{i},1.0.0,maybe\n"));
    }
    let err = load(&versions, D_HEAD).unwrap_err();
    assert_eq!(err.more.len(), 19, "{err}");
    assert_eq!(err.more.last().unwrap().line, Some(21), "{err}");
}

#[test]
fn binary_garbage_is_bad_input() {
    let mut bytes = b"package,version\npkg-a,1.0.0\n".to_vec();
    bytes.extend([0xff, 0xfe, 0x00, b',', 0x80, b'\n']);
    let err = load_bytes(&bytes, D_HEAD.as_bytes()).unwrap_err();
    assert_eq!(
        err.to_string(),
        "versions.csv:3: not UTF-8 text (binary data?)"
    );
    let err = load_bytes(b"\x89PNG\r\n\x1a\n\0\0\0\rIHDR", D_HEAD.as_bytes()).unwrap_err();
    assert_eq!(err.file, "versions.csv");
}

/// Random bytes and random damage to a valid dump: an error or a balanced ledger, never a
/// panic.
#[test]
fn damaged_input_never_panics() {
    let opts = SynthOptions::scaled(11, 60);
    let (mut v, mut d) = (Vec::new(), Vec::new());
    write_bulk(&opts, &mut v, &mut d).unwrap();
    let mut state = 0x1234_5678_9abc_def0u64;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state
    };
    for round in 0..300 {
        let (mut v2, mut d2) = (v.clone(), d.clone());
        let target = if round % 2 == 0 { &mut v2 } else { &mut d2 };
        if round % 10 == 0 {
            *target = (0..(next() % 200)).map(|_| next() as u8).collect();
        } else {
            for _ in 0..1 + next() % 4 {
                let at = (next() as usize) % target.len();
                let bytes = b",;\"\n/ ^|x\xff0";
                target[at] = bytes[(next() as usize) % bytes.len()];
            }
        }
        if let Ok((_, ledger)) = load_bytes(&v2, &d2) {
            assert!(ledger.unbalanced().is_empty(), "round {round}");
        }
    }
}

/// The example in `docs/bulk-format.md` loads as the text there says.
#[test]
fn documented_example_loads() {
    let doc = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/docs/bulk-format.md"))
        .unwrap();
    let blocks: Vec<&str> = doc
        .split("```csv\n")
        .skip(1)
        .map(|b| b.split("```").next().unwrap_or(""))
        .collect();
    assert_eq!(blocks.len(), 2);
    let (registry, ledger) = load(blocks[0], blocks[1]).unwrap();
    assert!(ledger.unbalanced().is_empty());
    assert_eq!(tally(&ledger, RecordKind::Version), (4, 4, 0));
    assert_eq!(tally(&ledger, RecordKind::Dependency), (3, 3, 0));
    let kinds: Vec<ProblemKind> = ledger.problems.iter().map(|p| p.kind).collect();
    assert_eq!(kinds, [ProblemKind::NormalisedVersion]);
    let tarn = registry.package(registry.id("pkg-tarn").unwrap());
    let newest = tarn.releases.last().unwrap();
    assert_eq!(newest.version.to_string(), "1.2.0");
    assert!(newest.yanked);
    assert_eq!(newest.deps.len(), 1);
    assert!(
        registry
            .package(registry.id("pkg-gluekit").unwrap())
            .native_helper
    );
}

#[test]
fn byte_order_mark_crlf_and_quoted_line_breaks_are_read() {
    let versions =
        "\u{feff}package,version,summary\r\npkg-a,1.0.0,\"two\r\nlines\"\r\npkg-a,bad!,\r\n";
    let deps = "package,version,dependency\r\npkg-a,1.0.0,pkg-a\r\n";
    let (registry, ledger) = load(versions, deps).unwrap();
    assert_eq!(registry.release_count(), 1);
    let bad = find(&ledger, ProblemKind::UnreadableVersion);
    // The quoted line break makes the third row start on line 4.
    assert_eq!(bad[0].origin.line, 4);
}

#[test]
fn crlf_rows_keep_their_lines_and_blank_lines_are_skipped() {
    let versions = "package,version\r\npkg-a,1.0.0\r\n\r\npkg-a,bad!\r\n";
    let (_, ledger) = load(versions, D_HEAD).unwrap();
    assert_eq!(
        find(&ledger, ProblemKind::UnreadableVersion)[0].origin.line,
        4
    );
    let err = load("package,version\r\npkg-a,1.0.0,x\r\n", D_HEAD).unwrap_err();
    assert_eq!(
        err.to_string(),
        "versions.csv:2: expected 2 fields as in the header, found 3"
    );
}

/// Rewrites a CSV file with its data rows in a new order; `order` gets the rows (header
/// left out) and returns them rearranged.
fn reorder_rows(
    from: &Path,
    to: &Path,
    order: impl FnOnce(Vec<csv::StringRecord>) -> Vec<csv::StringRecord>,
) {
    let mut reader = csv::Reader::from_path(from).unwrap();
    let header = reader.headers().unwrap().clone();
    let rows: Vec<csv::StringRecord> = reader.records().map(Result::unwrap).collect();
    let rows = order(rows);
    let mut writer = csv::Writer::from_path(to).unwrap();
    writer.write_record(&header).unwrap();
    for row in rows {
        writer.write_record(&row).unwrap();
    }
    writer.flush().unwrap();
}

/// Rows of equal `key` in runs, in the order their first row appears.
fn runs_by(
    rows: Vec<csv::StringRecord>,
    key: impl Fn(&csv::StringRecord) -> String,
) -> Vec<Vec<csv::StringRecord>> {
    let mut runs: Vec<Vec<csv::StringRecord>> = Vec::new();
    let mut at: BTreeMap<String, usize> = BTreeMap::new();
    for row in rows {
        let k = key(&row);
        let i = *at.entry(k).or_insert_with(|| {
            runs.push(Vec::new());
            runs.len() - 1
        });
        runs[i].push(row);
    }
    runs
}

/// The format promises nothing about row order beyond "the first record of a version wins"
/// (docs/bulk-format.md): a dump whose packages' rows are interleaved and whose dependency
/// rows come in the reverse order of their versions loads the same registry.
#[test]
fn row_order_does_not_change_the_registry() {
    let dir = tempfile::tempdir().unwrap();
    let (generated_versions, generated_deps, _) =
        generate_bulk(dir.path(), &SynthOptions::scaled(11, 20_000));
    let path = |name: &str| dir.path().join(name);
    let (versions, deps) = (path("v1.csv"), path("d1.csv"));
    let (shuffled_versions, shuffled_deps) = (path("v2.csv"), path("d2.csv"));
    // Problems the generator does not make at this size: a version listed twice (the first
    // record counts) and an unreadable requirement (its version is left out).
    reorder_rows(&generated_versions, &versions, |rows| {
        let mut out = Vec::new();
        for (i, row) in rows.into_iter().enumerate() {
            if i % 53 == 0 {
                out.push(row.clone());
            }
            out.push(row);
        }
        out
    });
    reorder_rows(&generated_deps, &deps, |rows| {
        rows.into_iter()
            .enumerate()
            .map(|(i, row)| {
                if i % 61 != 0 {
                    return row;
                }
                let mut cells: Vec<String> = row.iter().map(str::to_string).collect();
                cells[3] = ">=>1".into();
                csv::StringRecord::from(cells)
            })
            .collect()
    });
    // The k-th row of every package, then the (k+1)-th: each package's rows keep their order
    // but none are adjacent.
    reorder_rows(&versions, &shuffled_versions, |rows| {
        let mut runs = runs_by(rows, |r| r[0].trim().to_string());
        let longest = runs.iter().map(Vec::len).max().unwrap_or(0);
        runs.iter_mut().for_each(|r| r.reverse());
        let mut out = Vec::new();
        for _ in 0..longest {
            out.extend(runs.iter_mut().filter_map(Vec::pop));
        }
        out
    });
    // Each version's dependencies keep their order; the versions come last first.
    reorder_rows(&deps, &shuffled_deps, |rows| {
        let runs = runs_by(rows, |r| format!("{}\u{0}{}", r[0].trim(), r[1].trim()));
        runs.into_iter().rev().flatten().collect()
    });
    let (registry, ledger) = read_bulk(&versions, &deps).unwrap();
    let (shuffled, shuffled_ledger) = read_bulk(&shuffled_versions, &shuffled_deps).unwrap();
    assert!(count(&ledger, ProblemKind::UnreadableRequirement) > 10);
    assert!(count(&ledger, ProblemKind::DuplicateVersion) > 10);
    assert_eq!(registry_view(&shuffled), registry_view(&registry));
    assert_eq!(shuffled_ledger.tallies, ledger.tallies);
    // Details may name lines, which moved.
    let without_lines = |l: &Ledger| {
        let mut v: Vec<_> = l
            .problems
            .iter()
            .map(|p| (p.kind, p.subject.clone(), p.left_out))
            .collect();
        v.sort();
        v
    };
    assert_eq!(without_lines(&shuffled_ledger), without_lines(&ledger));
}

/// A dependencies file that is a pipe can be read once: `check` and the error of `--strict`
/// say that its dependency problems are shown at their version's row, and why, instead of
/// passing that row off as theirs (and the second open does not wait for a writer).
#[cfg(unix)]
#[test]
fn dependency_problems_from_a_pipe_say_they_are_not_placed() {
    use basefit::commands::{CheckOptions, check, load};
    use basefit::load::InputPaths;
    use basefit::report::Format;
    let dir = tempfile::tempdir().unwrap();
    let versions = dir.path().join("versions.csv");
    let deps = dir.path().join("deps.fifo");
    std::fs::write(&versions, DEPENDENCY_PROBLEMS_VERSIONS).unwrap();
    let made = std::process::Command::new("mkfifo").arg(&deps).status();
    if !made.is_ok_and(|s| s.success()) {
        eprintln!("skipped: mkfifo is not available");
        return;
    }
    // One writer per load: the pipe gives its rows to the first open only.
    let feed = || {
        let deps = deps.clone();
        std::thread::spawn(move || std::fs::write(deps, DEPENDENCY_PROBLEMS_DEPS).unwrap())
    };
    let paths = InputPaths {
        bulk: Some((versions.clone(), deps.clone())),
        ..Default::default()
    };
    let sentence = format!(
        "4 problems are shown at their version's row, not their dependency's, because {} could not be read again: it is not a regular file",
        deps.display()
    );
    let run = |format| {
        let writer = feed();
        let out = check(&CheckOptions {
            inputs: paths.clone(),
            strict: false,
            format,
        })
        .unwrap();
        writer.join().unwrap();
        out.stdout
    };
    let text = run(Format::Table);
    assert_eq!(text.matches(&sentence).count(), 1, "{text}");
    assert!(text.contains("versions.csv:3  pkg-a@v1.1"), "{text}");
    let json: serde_json::Value = serde_json::from_str(&run(Format::Json)).unwrap();
    let unplaced = &json["unplaced"];
    assert_eq!(unplaced.as_array().map(Vec::len), Some(1), "{json}");
    assert_eq!(unplaced[0]["problems"], 4);
    assert_eq!(unplaced[0]["file"], deps.display().to_string());
    assert!(
        unplaced[0]["reason"]
            .as_str()
            .is_some_and(|r| r.contains("not a regular file")),
        "{json}"
    );
    // --strict names one problem: the sentence comes with it only when that problem is one
    // left at its version's row. Here the first is the note on `v1.1` at the same row.
    let writer = feed();
    let Err(err) = load(&paths, true) else {
        panic!("--strict accepted the problems");
    };
    writer.join().unwrap();
    let err = err.to_string();
    assert!(err.contains("v1.1"), "{err}");
    assert!(!err.contains("could not be read again"), "{err}");
    // Written strictly, the version has no note, and the first problem is a dependency's.
    std::fs::write(
        &versions,
        DEPENDENCY_PROBLEMS_VERSIONS.replace("v1.1", "1.1.0"),
    )
    .unwrap();
    let writer = std::thread::spawn({
        let deps = deps.clone();
        move || std::fs::write(deps, DEPENDENCY_PROBLEMS_DEPS.replace("v1.1", "1.1.0")).unwrap()
    });
    let Err(err) = load(&paths, true) else {
        panic!("--strict accepted the problems");
    };
    writer.join().unwrap();
    let err = err.to_string();
    assert!(err.contains("pkg-a@1.1.0"), "{err}");
    assert!(err.contains(&sentence), "{err}");
}

/// The generator lowers sizes its shape cannot hold rather than refuse them; it says so on
/// stderr, so a benchmark is not read as run at the size asked for.
#[test]
fn the_generator_says_when_it_writes_less_than_asked() {
    let dir = tempfile::tempdir().unwrap();
    let run = |args: &[&str]| {
        let out = std::process::Command::new(env!("CARGO_BIN_EXE_basefit-synth"))
            .args(args)
            .arg("--out")
            .arg(dir.path())
            .output()
            .unwrap();
        assert!(out.status.success());
        String::from_utf8_lossy(&out.stderr).into_owned()
    };
    let stderr = run(&["--packages", "10", "--versions", "5", "--edges", "100000"]);
    assert!(
        stderr.contains("note: 5 packages written of 10 asked for")
            && stderr.contains("dependencies written of 100000 asked for"),
        "{stderr}"
    );
    assert_eq!(
        run(&["--packages", "10", "--versions", "50", "--edges", "20"]),
        ""
    );
}

/// A version row given twice, whose dependency rows (which attach to the first) leave it out:
/// the twin must not stand in for it with no dependencies at all.
#[test]
fn twin_of_a_version_left_out_for_a_dependency_is_a_duplicate() {
    let versions = "package,version\npkg-a,1.0.0\npkg-a,1.0.0\npkg-b,1.0.0\n";
    let deps = "package,version,dependency,req\npkg-a,1.0.0,pkg-b,>>>1\n";
    let (registry, ledger) = load(versions, deps).unwrap();
    let a = registry.id("pkg-a").unwrap();
    assert!(registry.package(a).releases.is_empty(), "the twin was kept");
    let dups = find(&ledger, ProblemKind::DuplicateVersion);
    assert_eq!(dups.len(), 1, "{:?}", ledger.problems);
    assert_eq!(dups[0].origin.line, 3);
    assert!(dups[0].detail.contains("line 2"), "{}", dups[0].detail);
    assert_eq!(find(&ledger, ProblemKind::UnreadableRequirement).len(), 1);
    assert_eq!(tally(&ledger, RecordKind::Version), (3, 1, 2));
    assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);

    // With a readable requirement the twin is the duplicate and the first keeps its row.
    let deps = "package,version,dependency,req\npkg-a,1.0.0,pkg-b,>=1\n";
    let (registry, ledger) = load(versions, deps).unwrap();
    let releases = &registry.package(registry.id("pkg-a").unwrap()).releases;
    assert_eq!(releases.len(), 1);
    assert_eq!((releases[0].line, releases[0].deps.len()), (2, 1));
    assert_eq!(
        find(&ledger, ProblemKind::DuplicateVersion)[0].origin.line,
        3
    );
}

/// An empty item in a `;` list (`zlib;`, `a;;b`) is refused as the YAML reader refuses an
/// empty list item: the version is left out as `bad-value`, not read with the gap closed.
#[test]
fn an_empty_list_item_leaves_its_version_out_as_in_yaml() {
    let versions = "package,version,native_libraries,native_files,prebuilt,source_build\n\
                    pkg-lark,1.0.0,zlib;,,,\n\
                    pkg-lark,1.1.0,,,linux/glibc/x86_64;,false\n\
                    pkg-lark,1.2.0,zlib;;libpng,,,\n\
                    pkg-lark,1.3.0,,src/a.c; ;src/b.c,,\n\
                    pkg-lark,1.4.0,zlib;libpng,src/a.c,linux/glibc/x86_64;linux/musl/x86_64,\n";
    let (registry, ledger) = load(versions, "package,version,dependency,req\n").unwrap();
    let bad: Vec<(usize, &str)> = ledger
        .problems
        .iter()
        .filter(|p| p.kind == ProblemKind::BadValue)
        .map(|p| (p.origin.line, p.subject.as_str()))
        .collect();
    assert_eq!(
        bad,
        [
            (2, "pkg-lark@1.0.0"),
            (3, "pkg-lark@1.1.0"),
            (4, "pkg-lark@1.2.0"),
            (5, "pkg-lark@1.3.0")
        ],
        "{:?}",
        ledger.problems
    );
    assert_eq!(registry.release_count(), 1);
    assert!(ledger.unbalanced().is_empty());
}

/// The generated graph is mostly acyclic with a few small cycles, as registries are: the most
/// depended-on packages sit in none, since a cycle through one would take most of the
/// registry into it and every closure through it (strongly connected components of the
/// runtime dependency graph, by petgraph's Tarjan).
#[test]
fn generated_dependency_cycles_are_few_and_small() {
    let dir = tempfile::tempdir().unwrap();
    let (versions, deps, summary) = generate_bulk(dir.path(), &SynthOptions::scaled(7, 40_000));
    let (registry, _) = read_bulk(&versions, &deps).unwrap();
    let n = registry.packages.len();
    let mut graph = petgraph::graph::DiGraph::<(), ()>::with_capacity(n, 0);
    let nodes: Vec<_> = (0..n).map(|_| graph.add_node(())).collect();
    let mut dependents = vec![0u32; n];
    for (i, p) in registry.packages.iter().enumerate() {
        let mut targets: Vec<usize> = p
            .releases
            .iter()
            .flat_map(|r| r.runtime_deps())
            .map(|d| d.package.0 as usize)
            .collect();
        targets.sort_unstable();
        targets.dedup();
        for t in targets {
            graph.add_edge(nodes[i], nodes[t], ());
            dependents[t] += 1;
        }
    }
    let cyclic: Vec<Vec<usize>> = petgraph::algo::tarjan_scc(&graph)
        .into_iter()
        .filter(|c| c.len() > 1)
        .map(|c| c.iter().map(|n| n.index()).collect())
        .collect();
    let in_cycles: usize = cyclic.iter().map(Vec::len).sum();
    let largest = cyclic.iter().map(Vec::len).max().unwrap_or(0);
    assert!(in_cycles > 0, "a few cycles are part of the shape");
    assert!(in_cycles * 50 < n, "{in_cycles} of {n} packages in cycles");
    assert!(largest * 100 < n, "a cycle of {largest} of {n} packages");
    let mut by_dependents: Vec<usize> = (0..n).collect();
    by_dependents.sort_by_key(|&i| std::cmp::Reverse(dependents[i]));
    for hub in &by_dependents[..10] {
        assert!(
            !cyclic.iter().any(|c| c.contains(hub)),
            "{} ({} dependents) is in a cycle; {summary:?}",
            registry.name(basefit::model::PackageId(*hub as u32)),
            dependents[*hub]
        );
    }
}

/// docs/bulk-format.md, "Builds": when `prebuilt` is given and `source_build` is empty,
/// `source_build` defaults to `false`; only both empty means "source only". Defaulting it to
/// `true` would let a version with only a glibc prebuilt build from source on every other platform.
#[test]
fn prebuilt_alone_means_no_source_build() {
    let versions = "package,version,source_build,prebuilt\n\
                    pkg-kestrel,1.0.0,,linux/glibc/x86_64\n\
                    pkg-kestrel,1.1.0,,\n\
                    pkg-kestrel,1.2.0,true,linux/glibc/x86_64\n";
    let (registry, ledger) = load(versions, "package,version,dependency,req\n").unwrap();
    assert!(ledger.problems.is_empty(), "{:?}", ledger.problems);
    let releases = &registry
        .package(registry.id("pkg-kestrel").unwrap())
        .releases;
    let builds: Vec<(String, bool, usize)> = releases
        .iter()
        .map(|r| {
            (
                r.version.to_string(),
                r.build.source,
                r.build.prebuilt.len(),
            )
        })
        .collect();
    assert_eq!(
        builds,
        [
            ("1.0.0".to_string(), false, 1),
            ("1.1.0".to_string(), true, 0),
            ("1.2.0".to_string(), true, 1),
        ]
    );
}

/// docs/bulk-format.md: a dependency row "attaches to the first [version row] that is not
/// left out". When the first row of a version is left out (bad runtime) and a later one is
/// usable, the dependency goes with the usable one: it is used, checked (its package is
/// unknown) and kept on the release, not dropped with the left-out row so that the release
/// installs without it.
#[test]
fn a_usable_twin_of_a_left_out_version_takes_its_dependency_rows() {
    let versions = "package,version,runtime\n\
                    pkg-kestrel,1.0.0,>=banana\n\
                    pkg-kestrel,1.0.0,>=3.0\n";
    let deps = "package,version,dependency,req\npkg-kestrel,1.0.0,pkg-ghost,^1\n";
    let (registry, ledger) = load(versions, deps).unwrap();
    assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);
    let releases = &registry
        .package(registry.id("pkg-kestrel").unwrap())
        .releases;
    assert_eq!(releases.len(), 1);
    assert_eq!(releases[0].line, 3);
    let deps: Vec<String> = releases[0]
        .deps
        .iter()
        .map(|d| {
            format!(
                "{} {}",
                registry.name(d.package),
                registry.requirement(d.req)
            )
        })
        .collect();
    assert_eq!(deps, ["pkg-ghost ^1"]);
    assert_eq!(tally(&ledger, RecordKind::Version), (2, 1, 1));
    assert_eq!(tally(&ledger, RecordKind::Dependency), (1, 1, 0));
    let unknown: Vec<String> = find(&ledger, ProblemKind::UnknownDependency)
        .into_iter()
        .map(|p| format!("{}:{} {}", p.origin.file, p.origin.line, p.subject))
        .collect();
    assert_eq!(unknown, ["versions.csv:3 pkg-kestrel@1.0.0"]);
}

/// The dependency rows of a package refused for its name are left out with their package
/// (one `bad-value` problem, at the version row), not reported a second time as
/// `orphan-dependency` rows whose package the versions file "has no record of": it has.
#[test]
fn dependency_rows_of_a_badly_named_package_are_not_orphans() {
    let versions = "package,version\npkg-kestrel,1.0.0\nbad name!,1.0.0\n";
    let deps = "package,version,dependency\nbad name!,1.0.0,pkg-kestrel\n";
    let (_, ledger) = load(versions, deps).unwrap();
    assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);
    let problems: Vec<String> = ledger
        .problems
        .iter()
        .map(|p| format!("{:?} {}:{}", p.kind, p.origin.file, p.origin.line))
        .collect();
    assert_eq!(problems, ["BadValue versions.csv:3"]);
    assert_eq!(tally(&ledger, RecordKind::Dependency), (1, 0, 1));
}

/// As in YAML, reading a version's dependencies stops at its first unreadable requirement:
/// the problem names that row and requirement, not a later bad one of the same version.
#[test]
fn the_first_unreadable_requirement_of_a_version_is_the_one_reported() {
    let versions = "package,version\npkg-kestrel,1.0.0\npkg-plover,1.0.0\n";
    let deps = "package,version,dependency,req\n\
                pkg-kestrel,1.0.0,pkg-plover,>=banana\n\
                pkg-kestrel,1.0.0,pkg-plover,~~2\n";
    let (registry, ledger) = load(versions, deps).unwrap();
    assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);
    let reqs = find(&ledger, ProblemKind::UnreadableRequirement);
    assert_eq!(reqs.len(), 1, "{:?}", ledger.problems);
    assert_eq!(
        (reqs[0].origin.file.as_str(), reqs[0].origin.line),
        ("deps.csv", 2)
    );
    assert!(reqs[0].detail.contains(">=banana"), "{}", reqs[0].detail);
    assert!(!reqs[0].detail.contains("~~2"), "{}", reqs[0].detail);
    assert!(
        registry
            .package(registry.id("pkg-kestrel").unwrap())
            .releases
            .is_empty()
    );
}

/// The two wordings of `orphan-dependency`: a row naming a version the versions file lacks
/// of a package it has, and a row naming a package it lacks altogether.
#[test]
fn orphan_dependency_rows_say_whether_the_package_or_the_version_is_missing() {
    let versions = "package,version\npkg-kestrel,1.0.0\n";
    let deps = "package,version,dependency\n\
                pkg-kestrel,2.0.0,pkg-plover\n\
                pkg-nopkg,1.0.0,pkg-kestrel\n";
    let (_, ledger) = load(versions, deps).unwrap();
    let orphans: Vec<String> = find(&ledger, ProblemKind::OrphanDependency)
        .into_iter()
        .map(|p| {
            format!(
                "{}:{} {}: {}",
                p.origin.file, p.origin.line, p.subject, p.detail
            )
        })
        .collect();
    assert_eq!(
        orphans,
        [
            "deps.csv:2 pkg-kestrel@2.0.0: the versions file has no record of `pkg-kestrel` version `2.0.0`",
            "deps.csv:3 pkg-nopkg@1.0.0: the versions file has no record of package `pkg-nopkg`",
        ]
    );
}

/// A row read again that now gives another `kind` (runtime became development) no longer
/// says what the dependency was read from: its problem stays at the version row and the
/// ledger says the file changed, rather than being placed on a row that now says something
/// else.
#[test]
fn a_dependency_row_whose_kind_changed_is_not_where_its_problem_is_placed() {
    let edited =
        DEPENDENCY_PROBLEMS_DEPS.replacen(",pkg-gone,*,\n", ",pkg-gone,*,development\n", 1);
    assert_ne!(edited, DEPENDENCY_PROBLEMS_DEPS);
    let (loaded, _) = load_changing(
        DEPENDENCY_PROBLEMS_VERSIONS.as_bytes(),
        &[DEPENDENCY_PROBLEMS_DEPS.as_bytes(), edited.as_bytes()],
    );
    let (_, mut ledger) = loaded.unwrap();
    ledger.place_deferred();
    assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);
    assert_eq!(ledger.unplaced.len(), 1, "{:?}", ledger.unplaced);
    assert!(
        ledger.unplaced[0]
            .reason
            .contains("it changed since it was read"),
        "{}",
        ledger.unplaced[0].reason
    );
    let places: Vec<String> = find(&ledger, ProblemKind::UnknownDependency)
        .into_iter()
        .map(|p| format!("{}:{} {}", p.origin.file, p.origin.line, p.subject))
        .collect();
    assert_eq!(
        places,
        ["versions.csv:3 pkg-a@v1.1", "deps.csv:11 pkg-a@v1.1"]
    );
}

/// docs/bulk-format.md, "Lists": items of `native_libraries` and `native_files` are trimmed,
/// so `libxml2; zlib` names `zlib`, which the catalog maps, not ` zlib`, which it does not.
#[test]
fn native_list_items_are_trimmed() {
    let versions = "package,version,native_libraries,native_files\n\
                    pkg-kestrel,1.0.0,libxml2; zlib ,src/a.c;  src/b.h\n";
    let (registry, ledger) = load(versions, "package,version,dependency,req\n").unwrap();
    assert!(ledger.problems.is_empty(), "{:?}", ledger.problems);
    let release = &registry
        .package(registry.id("pkg-kestrel").unwrap())
        .releases[0];
    let native = release.native.as_deref().unwrap();
    assert_eq!(native.libraries, ["libxml2", "zlib"]);
    assert_eq!(native.files, ["src/a.c", "src/b.h"]);
}

/// The batched reader trims a cell with white space on one side only, as the row-by-row
/// reader does (`str::trim`): a bulk dump with ` pkg-a` must name `pkg-a`. From a mutation
/// review, where only cells padded on both sides were tested.
#[test]
fn batched_cells_are_trimmed_on_either_side_alone() {
    use std::ops::ControlFlow;
    let text = "name,flag\n pkg-a,yes\npkg-b ,no\n\tpkg-c,1\n";
    let table = basefit::load::table::Table::from_reader(
        "t.csv",
        Box::new(text.as_bytes()),
        &["name", "flag"],
        &["name"],
    )
    .unwrap();
    let name = table.column("name");
    let mut names = Vec::new();
    table
        .for_each_batch(|batch| {
            for row in batch.rows() {
                names.push(row.unwrap().text(name).unwrap().to_string());
            }
            ControlFlow::Continue(())
        })
        .unwrap();
    assert_eq!(names, ["pkg-a", "pkg-b", "pkg-c"]);
}

/// `t` and `f` read as true and false, as SQL exports (PostgreSQL's `COPY ... CSV`, from memory) write
/// booleans, in the batched reader's flag cells too. From a mutation review: `f` was tested
/// nowhere, and a dump of `f` flags would have been refused row by row.
#[test]
fn sql_style_flags_read_both_ways() {
    use basefit::load::table::parse_flag;
    assert_eq!(parse_flag("t"), Some(true));
    assert_eq!(parse_flag("f"), Some(false));
    assert_eq!(parse_flag("1"), Some(true));
    assert_eq!(parse_flag("0"), Some(false));
    let d = tempfile::tempdir().unwrap();
    let versions = d.path().join("versions.csv");
    let deps = d.path().join("deps.csv");
    std::fs::write(
        &versions,
        "package,version,yanked\npkg-a,1.0.0,f\npkg-a,1.1.0,t\n",
    )
    .unwrap();
    std::fs::write(&deps, "package,version,dependency,req\n").unwrap();
    let (registry, ledger) = basefit::load::read_bulk(&versions, &deps).unwrap();
    assert!(ledger.unbalanced().is_empty());
    let id = registry.id("pkg-a").unwrap();
    let yanked: Vec<(String, bool)> = registry
        .package(id)
        .releases
        .iter()
        .map(|r| (r.version.to_string(), r.yanked))
        .collect();
    assert_eq!(
        yanked,
        [("1.0.0".to_string(), false), ("1.1.0".to_string(), true)]
    );
}

/// An error reading cannot go on past (here bytes that are not UTF-8) ends the batched
/// reading only after the rows before it, misshapen ones included, were handed over, so a
/// file's earlier problems are still reported beside it. From a mutation review, where
/// dropping the batch that held the error passed every test.
#[test]
fn rows_before_a_fatal_error_are_handed_over() {
    use std::ops::ControlFlow;
    let text: &'static [u8] = b"name,kind\na,x\nb\nc,\xff\nd,y\n";
    let table = basefit::load::table::Table::from_reader(
        "t.csv",
        Box::new(text),
        &["name", "kind"],
        &["name"],
    )
    .unwrap();
    let mut seen = Vec::new();
    let end = table.for_each_batch(|batch| {
        seen.extend(
            batch
                .rows()
                .map(|r| r.map(|r| r.line).map_err(|e| e.to_string())),
        );
        ControlFlow::Continue(())
    });
    assert_eq!(
        seen,
        [
            Ok(2),
            Err("t.csv:3: expected 2 fields as in the header, found 1".to_string())
        ]
    );
    let e = end.unwrap_err();
    assert_eq!(
        (e.line, e.message.as_str()),
        (Some(4), "not UTF-8 text (binary data?)")
    );
}

/// A problem about a release names its version as the record writes it: of `dup,1.0.0` and
/// `dup,1.0` (read as 1.0.0 too), the second is left out for its unreadable dependency, and
/// the problem named `dup@1.0.0`, the record that is kept (from an end-to-end review).
#[test]
fn a_release_problem_names_the_version_as_written() {
    let versions = format!("{V_HEAD}dup,1.0.0,,,,,,,,,\ndup,1.0,,,,,,,,,\n");
    let deps = format!("{D_HEAD}dup,1.0,dup-dep,not a req,\n");
    let (_, ledger) = load(&versions, &deps).unwrap();
    let subjects: Vec<(ProblemKind, &str)> = ledger
        .problems
        .iter()
        .map(|p| (p.kind, p.subject.as_str()))
        .collect();
    assert!(
        subjects.contains(&(ProblemKind::UnreadableRequirement, "dup@1.0")),
        "{:?}",
        ledger.problems
    );
    assert!(
        !subjects.iter().any(|(_, s)| *s == "dup@1.0.0"),
        "{:?}",
        ledger.problems
    );
}

/// `native_helper`, like `summary`, is package-level: the first non-empty value in file order
/// is used and later ones are ignored (docs/bulk-format.md, "Package-level columns"), whichever
/// way they disagree, and on rows of the package that are not adjacent.
#[test]
fn the_first_native_helper_cell_given_wins() {
    let versions = format!(
        "{V_HEAD}\
         pkg-on,1.0.0,,,,,,,,,\n\
         pkg-off,1.0.0,,,,,,,,,false\n\
         pkg-on,1.1.0,,,,,,,,,true\n\
         pkg-off,1.1.0,,,,,,,,,true\n\
         pkg-on,1.2.0,,,,,,,,,no\n"
    );
    let (registry, ledger) = load(&versions, D_HEAD).unwrap();
    assert!(ledger.problems.is_empty(), "{:?}", ledger.problems);
    let helper = |name: &str| registry.package(registry.id(name).unwrap()).native_helper;
    assert!(
        helper("pkg-on"),
        "the first value given, `true`, wins over a later `no`"
    );
    assert!(
        !helper("pkg-off"),
        "the first value given, `false`, wins over a later `true`"
    );
}
