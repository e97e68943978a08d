//! Nothing is lost on a deliberately messy registry: every record is used or reported.

use basefit::load::diag::{Ledger, ProblemKind, RecordKind};
use basefit::load::read_registry;
use std::path::Path;

#[test]
fn every_record_is_used_or_reported() {
    let (registry, ledger) = read_registry(&[Path::new("tests/data/messy-registry.yaml")]).unwrap();
    assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);
    let v = &ledger.tallies[&RecordKind::Version];
    // 13 records: 7 of marsh-a, 2 + 2 of marsh-b, 2 of marsh-c. Left out: the duplicate 1.1.0,
    // `nightly`, 1.2.0 (runtime requirement), 1.4.0 (dependency requirement), the second
    // 1.0.0.7.
    assert_eq!((v.read, v.used, v.left_out), (13, 8, 5), "{v:?}");
    let count = |k: ProblemKind| ledger.problems.iter().filter(|p| p.kind == k).count();
    assert_eq!(count(ProblemKind::NormalisedVersion), 5); // v1.0, 1.1, 1.0.0.7 twice, 2.0rc1
    assert_eq!(count(ProblemKind::UnreadableVersion), 1);
    assert_eq!(count(ProblemKind::UnreadableRequirement), 2);
    assert_eq!(count(ProblemKind::UnreadableDate), 1);
    assert_eq!(count(ProblemKind::DuplicateVersion), 2);
    assert_eq!(count(ProblemKind::DuplicatePackage), 1);
    assert_eq!(count(ProblemKind::UnsatisfiableRequirement), 1);
    assert_eq!(count(ProblemKind::UnknownDependency), 1);
    assert_eq!(count(ProblemKind::NoInstallableVersion), 1);
    assert_eq!(count(ProblemKind::NoVersions), 1);
    // Every left-out record names its line.
    for p in ledger.problems.iter().filter(|p| p.left_out) {
        assert!(
            p.origin.line > 0 && p.origin.file.ends_with("messy-registry.yaml"),
            "{p:?}"
        );
    }
    let b = registry.id("marsh-b").unwrap();
    let versions: Vec<String> = registry
        .package(b)
        .releases
        .iter()
        .map(|r| r.version.to_string())
        .collect();
    assert_eq!(versions, ["1.0.0+7", "2.0.0-rc1", "3.0.0"]);
}

/// A package declared in two files has releases in both; each problem with a release must name
/// the file that release was read from, at the line it has there.
#[test]
fn release_problems_name_the_file_of_the_release() {
    use basefit::load::RegistryBuilder;
    use basefit::load::registry::read_yaml_str;
    let mut b = RegistryBuilder::new();
    read_yaml_str(
        "first.yaml",
        "packages:\n  - name: wren\n    versions:\n      - {version: \"1.0.0\"}\n",
        &mut b,
    )
    .unwrap();
    read_yaml_str(
        "second.yaml",
        concat!(
            "# padding so the lines differ from the first file's\n",
            "packages:\n",
            "  - name: wren\n",
            "    versions:\n",
            "      - {version: \"1.0.0\"}\n",
            "      - {version: \"1.1.0\", depends: [{name: phantom}]}\n",
        ),
        &mut b,
    )
    .unwrap();
    let (_, ledger) = b.finish();
    let at = |k: ProblemKind| {
        let p = ledger.problems.iter().find(|p| p.kind == k).unwrap();
        (p.origin.file.as_str(), p.origin.line, p.detail.as_str())
    };
    assert_eq!(
        at(ProblemKind::UnknownDependency),
        (
            "second.yaml",
            6,
            "depends on `phantom`, which the registry does not have"
        )
    );
    assert_eq!(
        at(ProblemKind::DuplicateVersion),
        (
            "second.yaml",
            5,
            "same version as the record at first.yaml:4"
        )
    );
    assert_eq!(at(ProblemKind::DuplicatePackage).0, "second.yaml");
}

#[test]
fn versions_differing_only_in_build_metadata_are_reported_and_both_used() {
    // Semantic Versioning 2.0.0, section 10: build metadata MUST be ignored when determining
    // precedence, so 1.0.0+aaa and 1.0.0+zzz have the same precedence and the registry gives
    // no newest between them. They are distinct versions all the same (section 10's examples
    // are distinct strings), so both stay in use.
    use basefit::load::RegistryBuilder;
    use basefit::load::registry::read_yaml_str;
    let mut b = RegistryBuilder::new();
    read_yaml_str(
        "meta.yaml",
        concat!(
            "packages:\n",
            "  - name: finch\n",
            "    versions:\n",
            "      - {version: \"1.0.0+zzz\"}\n",
            "      - {version: \"1.0.0+aaa\"}\n",
            "      - {version: \"1.0.1\"}\n",
        ),
        &mut b,
    )
    .unwrap();
    let (registry, ledger) = b.finish();
    let same: Vec<_> = ledger
        .problems
        .iter()
        .filter(|p| p.kind == ProblemKind::SamePrecedence)
        .collect();
    assert_eq!(same.len(), 1, "{:?}", ledger.problems);
    // The semver crate orders the build text: +zzz comes after +aaa, at line 4.
    assert_eq!(
        (
            same[0].origin.file.as_str(),
            same[0].origin.line,
            same[0].subject.as_str()
        ),
        ("meta.yaml", 4, "finch@1.0.0+zzz")
    );
    assert!(!same[0].left_out);
    assert_eq!(registry.packages[0].releases.len(), 3);
    let versions = ledger.tally(RecordKind::Version);
    assert_eq!((versions.read, versions.used, versions.left_out), (3, 3, 0));
}

/// A problem with one dependency names the line of the value at fault: the name for a name the
/// registry lacks, the requirement for one that cannot be read or that nothing satisfies. The
/// version record's own line, or the line where the dependency entry starts, would point the
/// reader at the wrong line of a long record.
#[test]
fn dependency_problems_name_the_line_of_the_value() {
    use basefit::load::RegistryBuilder;
    use basefit::load::registry::read_yaml_str;
    let text = concat!(
        "packages:\n",
        "  - name: quillon\n",
        "    versions:\n",
        "      - version: 1.0.0\n",
        "        depends:\n",
        "          - kind: runtime\n",
        "            name: quillon-ghost\n",
        "          - name: quillon-base\n",
        "            kind: runtime\n",
        "            req: \"^9\"\n",
        "          - name: quillon-base\n",
        "      - version: 2.0.0\n",
        "        depends:\n",
        "          - name: quillon-base\n",
        "            req: \"~~1\"\n",
        "  - name: quillon-base\n",
        "    versions:\n",
        "      - {version: 1.0.0}\n",
    );
    let mut b = RegistryBuilder::new();
    read_yaml_str("deps.yaml", text, &mut b).unwrap();
    let (_, ledger) = b.finish();
    let found: Vec<(ProblemKind, String, String)> = ledger
        .problems
        .iter()
        .map(|p| (p.kind, p.origin.to_string(), p.detail.clone()))
        .collect();
    let want = |kind, at: &str, detail: &str| (kind, at.to_string(), detail.to_string());
    for w in [
        want(
            ProblemKind::UnknownDependency,
            "deps.yaml:7",
            "depends on `quillon-ghost`, which the registry does not have",
        ),
        want(
            ProblemKind::UnsatisfiableRequirement,
            "deps.yaml:10",
            "requires quillon-base ^9, which no published version satisfies",
        ),
    ] {
        assert!(found.contains(&w), "wanted {w:?} in {found:?}");
    }
    let unreadable = ledger
        .problems
        .iter()
        .find(|p| p.kind == ProblemKind::UnreadableRequirement)
        .unwrap();
    assert_eq!(
        (unreadable.origin.to_string(), unreadable.subject.as_str()),
        ("deps.yaml:15".to_string(), "quillon@2.0.0")
    );
    // The dependency without a requirement is satisfiable and reported nowhere.
    assert_eq!(ledger.problems.len(), 3, "{found:?}");
}

/// An empty native library name would make cells at risk for a library nobody can name: the
/// version is left out as a bad value at the line of the name, the rest of the package used.
#[test]
fn an_empty_native_library_name_leaves_out_its_version() {
    use basefit::load::RegistryBuilder;
    use basefit::load::registry::read_yaml_str;
    let mut b = RegistryBuilder::new();
    read_yaml_str(
        "r.yaml",
        concat!(
            "packages:\n",
            "  - name: wren\n",
            "    versions:\n",
            "      - {version: \"1.0.0\", native: {libraries: [zlib]}}\n",
            "      - version: \"1.1.0\"\n",
            "        native:\n",
            "          libraries:\n",
            "            - zlib\n",
            "            - \"\"\n",
            "      - {version: \"1.2.0\", native: {libraries: [\" \"]}}\n",
        ),
        &mut b,
    )
    .unwrap();
    let (registry, ledger) = b.finish();
    assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);
    let bad: Vec<(usize, &str, &str)> = ledger
        .problems
        .iter()
        .filter(|p| p.kind == ProblemKind::BadValue)
        .map(|p| (p.origin.line, p.subject.as_str(), p.detail.as_str()))
        .collect();
    assert_eq!(
        bad,
        [
            (
                9,
                "wren@1.1.0",
                "native library name `` is empty; expected a catalog id or a library name"
            ),
            (
                10,
                "wren@1.2.0",
                "native library name ` ` is empty; expected a catalog id or a library name"
            ),
        ]
    );
    let wren = registry.id("wren").unwrap();
    let versions: Vec<String> = registry
        .package(wren)
        .releases
        .iter()
        .map(|r| r.version.to_string())
        .collect();
    assert_eq!(versions, ["1.0.0"]);
}

/// A runtime requirement no runtime version meets (`<0.0.0`, `>=5, <4`) used to be taken
/// without a word, and every cell of the release then blamed the image's runtime ("needs a
/// newer runtime"), which no image can fix. It is noted at the requirement's line
/// (`unsatisfiable-runtime`) and the release kept, as the registry publishes it; the YAML and
/// the bulk CSV loaders report it alike. A requirement with one alternative some runtime
/// meets is not reported.
#[test]
fn runtime_requirements_no_runtime_meets_are_noted_and_kept() {
    use basefit::load::RegistryBuilder;
    use basefit::load::bulk::read_bulk;
    use basefit::load::registry::read_yaml_str;
    let noted = |ledger: &Ledger| noted_as(ledger, ProblemKind::UnsatisfiableRuntime);
    let mut b = RegistryBuilder::new();
    read_yaml_str(
        "rt.yaml",
        concat!(
            "packages:\n",
            "  - name: heron\n",
            "    versions:\n",
            "      - version: 1.0.0\n",
            "        runtime: \"<0.0.0\"\n",
            "      - version: 2.0.0\n",
            "        runtime: \">=5, <4\"\n",
            "      - {version: 3.0.0, runtime: \">=5, <4 || >=1\"}\n",
            "      - {version: 4.0.0, runtime: \">3.1\"}\n",
        ),
        &mut b,
    )
    .unwrap();
    let (registry, ledger) = b.finish();
    let want = |file: &str, lines: [usize; 2]| {
        vec![
            (file.to_string(), lines[0], "heron@1.0.0".to_string(), false),
            (file.to_string(), lines[1], "heron@2.0.0".to_string(), false),
        ]
    };
    assert_eq!(
        noted(&ledger),
        want("rt.yaml", [5, 7]),
        "{:?}",
        ledger.problems
    );
    assert!(
        ledger.problems[0]
            .detail
            .contains("`<0.0.0` admits no runtime version"),
        "{:?}",
        ledger.problems
    );
    assert_eq!(registry.packages[0].releases.len(), 4);
    let versions = ledger.tally(RecordKind::Version);
    assert_eq!((versions.read, versions.used, versions.left_out), (4, 4, 0));

    let dir = tempfile::tempdir().unwrap();
    let (v, d) = (dir.path().join("v.csv"), dir.path().join("d.csv"));
    std::fs::write(
        &v,
        concat!(
            "package,version,runtime\n",
            "heron,1.0.0,<0.0.0\n",
            "heron,2.0.0,\">=5, <4\"\n",
            "heron,3.0.0,\">=5, <4 || >=1\"\n",
            "heron,4.0.0,>3.1\n",
        ),
    )
    .unwrap();
    std::fs::write(&d, "package,version,dependency\n").unwrap();
    let (registry, ledger) = read_bulk(&v, &d).unwrap();
    assert_eq!(
        noted(&ledger),
        want("v.csv", [2, 3]),
        "{:?}",
        ledger.problems
    );
    assert_eq!(registry.packages[0].releases.len(), 4);
}

/// A duplicate version record is left out with its dependencies, and those count as left out
/// too: the dependency tally balances (read = used + left out).
#[test]
fn the_dependencies_of_a_duplicate_version_are_counted_as_left_out() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("r.yaml");
    std::fs::write(
        &path,
        "packages:\n  - name: base\n    versions:\n      - {version: \"1.0.0\"}\n  - name: dup\n    versions:\n      - version: \"1.0.0\"\n        depends:\n          - {name: base, req: \"^1\"}\n      - version: \"1.0.0\"\n        depends:\n          - {name: base, req: \"^1\"}\n          - {name: base, req: \">=1\"}\n",
    )
    .unwrap();
    let (_, ledger) = read_registry(&[path.as_path()]).unwrap();
    assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);
    let d = &ledger.tallies[&RecordKind::Dependency];
    assert_eq!((d.read, d.used, d.left_out), (3, 1, 2), "{d:?}");
}

/// A release with neither a source build nor a prebuilt build for any platform (an export
/// that lost its builds column reads so) used to pass `check` without a word, and each of its
/// cells then blamed the image's platform. It is noted at its record's line
/// (`no-build-anywhere`) and kept, as the registry publishes it, in the YAML and the bulk
/// format alike; a release with a prebuilt build for some platform only is not noted.
#[test]
fn releases_with_no_build_for_any_platform_are_noted_and_kept() {
    use basefit::load::RegistryBuilder;
    use basefit::load::bulk::read_bulk;
    use basefit::load::registry::read_yaml_str;
    let noted = |ledger: &Ledger| noted_as(ledger, ProblemKind::NoBuildAnywhere);
    let mut b = RegistryBuilder::new();
    read_yaml_str(
        "b.yaml",
        concat!(
            "packages:\n",
            "  - name: plover\n",
            "    versions:\n",
            "      - version: 1.0.0\n",
            "        builds: {source: false}\n",
            "      - {version: 1.1.0, builds: {prebuilt: [linux/musl/x86_64]}}\n",
            "      - {version: 1.2.0}\n",
            "      - {version: 1.3.0, builds: {}}\n",
        ),
        &mut b,
    )
    .unwrap();
    let (registry, ledger) = b.finish();
    let kept = |line: usize, subject: &str| (String::new(), line, subject.to_string(), false);
    let without_file = |mut v: Vec<(String, usize, String, bool)>, file: &str| {
        for n in &mut v {
            assert_eq!(n.0, file);
            n.0.clear();
        }
        v
    };
    assert_eq!(
        without_file(noted(&ledger), "b.yaml"),
        [kept(4, "plover@1.0.0"), kept(8, "plover@1.3.0")],
        "{:?}",
        ledger.problems
    );
    assert!(ledger.problems.iter().any(|p| {
        p.detail
            .contains("neither a source build nor a prebuilt build for any platform")
    }));
    assert_eq!(registry.packages[0].releases.len(), 4);

    let dir = tempfile::tempdir().unwrap();
    let (v, d) = (dir.path().join("v.csv"), dir.path().join("d.csv"));
    std::fs::write(
        &v,
        concat!(
            "package,version,source_build,prebuilt\n",
            "plover,1.0.0,false,\n",
            "plover,1.1.0,false,linux/musl/x86_64\n",
            "plover,1.2.0,true,\n",
        ),
    )
    .unwrap();
    std::fs::write(&d, "package,version,dependency\n").unwrap();
    let (registry, ledger) = read_bulk(&v, &d).unwrap();
    assert_eq!(
        without_file(noted(&ledger), "v.csv"),
        [kept(2, "plover@1.0.0")],
        "{:?}",
        ledger.problems
    );
    assert_eq!(registry.packages[0].releases.len(), 3);
}

/// The problems of `kind` in `ledger`, as (file name, line, subject, left out).
fn noted_as(ledger: &Ledger, kind: ProblemKind) -> Vec<(String, usize, String, bool)> {
    ledger
        .problems
        .iter()
        .filter(|p| p.kind == kind)
        .map(|p| {
            let file = Path::new(&p.origin.file).file_name().unwrap();
            (
                file.to_string_lossy().into_owned(),
                p.origin.line,
                p.subject.clone(),
                p.left_out,
            )
        })
        .collect()
}

/// A package declared twice merges into its first record (`declare_package`'s doc): the
/// first summary stands, a later one fills only a missing summary, and a native-helper mark
/// on either record marks the package, since a later record without the field says nothing
/// against it.
#[test]
fn a_package_declared_twice_keeps_its_first_summary_and_any_helper_mark() {
    use basefit::load::RegistryBuilder;
    use basefit::load::registry::read_yaml_str;
    let mut b = RegistryBuilder::new();
    read_yaml_str(
        "twice.yaml",
        concat!(
            "packages:\n",
            "  - {name: kestrel-build, summary: first words, native_helper: true, versions: [{version: 1.0.0}]}\n",
            "  - {name: kestrel-build, summary: second words, versions: [{version: 1.1.0}]}\n",
            "  - {name: kestrel-plain, versions: [{version: 1.0.0}]}\n",
            "  - {name: kestrel-plain, summary: late words, native_helper: true, versions: [{version: 1.1.0}]}\n",
        ),
        &mut b,
    )
    .unwrap();
    let (registry, ledger) = b.finish();
    let pkg = |name: &str| registry.package(registry.id(name).unwrap());
    let build = pkg("kestrel-build");
    assert_eq!(build.summary.as_deref(), Some("first words"));
    assert!(build.native_helper);
    assert_eq!(build.releases.len(), 2);
    let plain = pkg("kestrel-plain");
    assert_eq!(plain.summary.as_deref(), Some("late words"));
    assert!(plain.native_helper);
    let dup = noted_as(&ledger, ProblemKind::DuplicatePackage);
    assert_eq!(dup.len(), 2, "{:?}", ledger.problems);
}

/// A dependency requirement of white space only is as empty as none at all: read as any
/// version, and noted (`empty-requirement`) at the requirement's line, as an empty runtime
/// requirement is.
#[test]
fn a_blank_dependency_requirement_is_noted_as_empty() {
    use basefit::load::RegistryBuilder;
    use basefit::load::registry::read_yaml_str;
    let mut b = RegistryBuilder::new();
    read_yaml_str(
        "blank.yaml",
        concat!(
            "packages:\n",
            "  - name: tern-base\n",
            "    versions: [{version: 1.0.0}]\n",
            "  - name: tern\n",
            "    versions:\n",
            "      - version: 1.0.0\n",
            "        depends:\n",
            "          - name: tern-base\n",
            "            req: \"  \"\n",
            "          - {name: tern-base, req: \"\"}\n",
        ),
        &mut b,
    )
    .unwrap();
    let (registry, ledger) = b.finish();
    let empty: Vec<_> = noted_as(&ledger, ProblemKind::EmptyRequirement)
        .into_iter()
        .map(|(_, line, subject, left_out)| (line, subject, left_out))
        .collect();
    assert_eq!(
        empty,
        [
            (9, "tern@1.0.0".to_string(), false),
            (10, "tern@1.0.0".to_string(), false)
        ],
        "{:?}",
        ledger.problems
    );
    let tern = registry.package(registry.id("tern").unwrap());
    assert_eq!(tern.releases[0].deps.len(), 2);
}

/// Every release whose runtime requirement admits no runtime is noted, not only the first:
/// the builder remembers the verdict per requirement (a bulk dump repeats a few requirements
/// over millions of versions), and a remembered verdict must be the same verdict.
#[test]
fn each_release_with_the_same_unsatisfiable_runtime_is_noted() {
    use basefit::load::RegistryBuilder;
    use basefit::load::registry::read_yaml_str;
    let mut b = RegistryBuilder::new();
    read_yaml_str(
        "rt2.yaml",
        concat!(
            "packages:\n",
            "  - name: egret\n",
            "    versions:\n",
            "      - {version: 1.0.0, runtime: \"<0.0.0\"}\n",
            "      - {version: 1.1.0, runtime: \">=2\"}\n",
            "      - {version: 1.2.0, runtime: \"<0.0.0\"}\n",
            "      - {version: 1.3.0, runtime: \">=2\"}\n",
        ),
        &mut b,
    )
    .unwrap();
    let (_, ledger) = b.finish();
    let noted: Vec<_> = noted_as(&ledger, ProblemKind::UnsatisfiableRuntime)
        .into_iter()
        .map(|(_, line, subject, _)| (line, subject))
        .collect();
    assert_eq!(
        noted,
        [
            (4, "egret@1.0.0".to_string()),
            (6, "egret@1.2.0".to_string())
        ],
        "{:?}",
        ledger.problems
    );
}

/// A requirement nothing satisfies on a package that has usable versions is blamed on the
/// published versions, even when some other version records of it were left out: "every
/// version record was left out" is said only when none is left.
#[test]
fn an_unsatisfiable_requirement_blames_every_record_left_out_only_when_none_is_usable() {
    use basefit::load::RegistryBuilder;
    use basefit::load::registry::read_yaml_str;
    let mut b = RegistryBuilder::new();
    read_yaml_str(
        "left.yaml",
        concat!(
            "packages:\n",
            "  - name: plume-some\n",
            "    versions: [{version: 1.0.0}, {version: nightly}]\n",
            "  - name: plume-none\n",
            "    versions: [{version: nightly}]\n",
            "  - name: plume\n",
            "    versions:\n",
            "      - version: 1.0.0\n",
            "        depends:\n",
            "          - {name: plume-some, req: \"^9\"}\n",
            "          - {name: plume-none, req: \"^9\"}\n",
        ),
        &mut b,
    )
    .unwrap();
    let (_, ledger) = b.finish();
    let details: Vec<&str> = ledger
        .problems
        .iter()
        .filter(|p| p.kind == ProblemKind::UnsatisfiableRequirement)
        .map(|p| p.detail.as_str())
        .collect();
    assert_eq!(
        details,
        [
            "requires plume-some ^9, which no published version satisfies",
            "requires plume-none ^9, but every version record of plume-none was left out (1; see its problems)",
        ]
    );
}

/// A package with one release, yanked, reads "its only version is yanked": "all 1 versions"
/// reads as if the count had been filled into a sentence written for many.
#[test]
fn a_lone_yanked_version_is_named_in_the_singular() {
    use basefit::load::RegistryBuilder;
    use basefit::load::registry::read_yaml_str;
    let mut b = RegistryBuilder::new();
    read_yaml_str(
        "yanks.yaml",
        concat!(
            "packages:\n",
            "  - name: lone\n",
            "    versions:\n",
            "      - {version: \"1.0.0\", yanked: true}\n",
            "  - name: pair\n",
            "    versions:\n",
            "      - {version: \"1.0.0\", yanked: true}\n",
            "      - {version: \"2.0.0\", yanked: true}\n",
        ),
        &mut b,
    )
    .unwrap();
    let (_, ledger) = b.finish();
    let details: Vec<(&str, &str)> = ledger
        .problems
        .iter()
        .filter(|p| p.kind == ProblemKind::NoInstallableVersion)
        .map(|p| (p.subject.as_str(), p.detail.as_str()))
        .collect();
    assert_eq!(
        details,
        [
            ("lone", "its only version is yanked"),
            ("pair", "all 2 versions are yanked")
        ]
    );
}
