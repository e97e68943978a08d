//! The demo scenario data (demo-data/, matrices/demo-images.yaml) loads without BadInput, and
//! the ledger reports exactly the data-quality problems the stories plant (demo-data/STORIES.md).

use basefit::ProblemKind;
use basefit::load::results::Known;
use basefit::load::{Ledger, read_images, read_priorities, read_registry, read_results};
use basefit::model::{ImageSet, Registry};
use std::path::{Path, PathBuf};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn load_registry() -> (Registry, Ledger) {
    let path = root().join("demo-data/registry.yaml");
    read_registry(&[path.as_path()]).unwrap_or_else(|e| panic!("{e}"))
}

fn load_images() -> (ImageSet, Ledger) {
    let mut ledger = Ledger::default();
    let images = read_images(&root().join("matrices/demo-images.yaml"), &mut ledger)
        .unwrap_or_else(|e| panic!("{e}"));
    (images, ledger)
}

fn subjects(ledger: &Ledger, kind: ProblemKind) -> Vec<String> {
    let mut s: Vec<String> = ledger
        .problems
        .iter()
        .filter(|p| p.kind == kind)
        .map(|p| p.subject.clone())
        .collect();
    s.sort();
    s
}

#[test]
fn registry_loads_with_the_planted_problems_only() {
    let (registry, ledger) = load_registry();
    assert!(ledger.unbalanced().is_empty(), "{:?}", ledger.tallies);
    let declared = registry.packages.iter().filter(|p| p.declared).count();
    assert_eq!(declared, 40);
    // (i): the only name depended on at run time that the registry lacks.
    let undeclared: Vec<&str> = registry
        .packages
        .iter()
        .filter(|p| !p.declared)
        .map(|p| &*p.name)
        .collect();
    assert_eq!(undeclared, ["cloudpeg-sdk", "cloudpeg-testkit"]);
    assert_eq!(
        subjects(&ledger, ProblemKind::UnknownDependency),
        ["dunecart-deploy@0.7.0", "dunecart-deploy@0.8.1"],
        "development dependencies (pardalote-fmt -> cloudpeg-testkit) are not reported"
    );
    // (j): five messy versions normalised, one left out.
    assert_eq!(
        subjects(&ledger, ProblemKind::NormalisedVersion),
        [
            "rivergum-time@0.3.0.beta.2",
            "rivergum-time@1.0.0.3",
            "rivergum-time@2.0.0rc1",
            "rivergum-time@2.1",
            "rivergum-time@v1.4",
        ]
    );
    assert_eq!(
        subjects(&ledger, ProblemKind::UnreadableVersion),
        ["rivergum-time@latest-snapshot"]
    );
    let rivergum = registry.package(registry.id("rivergum-time").unwrap());
    let versions: Vec<String> = rivergum
        .releases
        .iter()
        .map(|r| r.version.to_string())
        .collect();
    assert_eq!(
        versions,
        ["0.3.0-beta.2", "1.0.0+3", "1.4.0", "2.0.0-rc1", "2.1.0"]
    );
    // (l)
    assert_eq!(
        subjects(&ledger, ProblemKind::NoInstallableVersion),
        ["snowgum-legacy"]
    );
    let other: Vec<_> = ledger
        .problems
        .iter()
        .filter(|p| {
            !matches!(
                p.kind,
                ProblemKind::UnknownDependency
                    | ProblemKind::NormalisedVersion
                    | ProblemKind::UnreadableVersion
                    | ProblemKind::NoInstallableVersion
            )
        })
        .collect();
    assert!(other.is_empty(), "unexpected problems: {other:#?}");
}

#[test]
fn images_load_cleanly() {
    let (images, ledger) = load_images();
    assert!(ledger.is_clean(), "{:#?}", ledger.problems);
    let ids: Vec<&str> = images.images.iter().map(|i| i.id.as_str()).collect();
    assert_eq!(
        ids,
        [
            "deb-2.4",
            "deb-2.8",
            "deb-3.1",
            "deb-3.2",
            "deb-3.2-slim",
            "deb-3.2-arm64",
            "alpine-2.6",
            "alpine-3.2",
            "el9-3.0",
            "el9-3.2",
        ]
    );
    let mut runtimes: Vec<String> = images
        .images
        .iter()
        .map(|i| i.runtime.to_string())
        .collect();
    runtimes.sort();
    runtimes.dedup();
    assert_eq!(
        runtimes,
        ["2.4.9", "2.6.3", "2.8.1", "3.0.5", "3.1.2", "3.2.0"]
    );
    let slim = images.get("deb-3.2-slim").unwrap();
    assert!(!slim.toolchain);
    assert!(slim.system_packages.iter().all(|p| !p.ends_with("-dev")));
    assert!(slim.system_packages.contains("libpng16-16"));
    let arm = images.get("deb-3.2-arm64").unwrap();
    assert_eq!(arm.platform.to_string(), "linux/glibc/aarch64");
    assert_eq!(
        arm.system_packages,
        images.get("deb-3.2").unwrap().system_packages
    );
    assert!(
        images
            .get("el9-3.2")
            .unwrap()
            .system_packages
            .contains("libpq-devel")
    );
    assert!(
        !images
            .get("el9-3.0")
            .unwrap()
            .system_packages
            .contains("libpq-devel")
    );
}

#[test]
fn priority_lists_load_and_agree() {
    let read = |name: &str| {
        let mut ledger = Ledger::default();
        let list = read_priorities(&root().join("demo-data").join(name), &mut ledger)
            .unwrap_or_else(|e| panic!("{e}"));
        assert!(ledger.is_clean(), "{name}: {:#?}", ledger.problems);
        list
    };
    let yaml = read("priorities.yaml");
    let csv = read("priorities.csv");
    assert_eq!(yaml.entries.len(), 33);
    let key = |l: &basefit::model::PriorityList| {
        l.entries
            .iter()
            .map(|e| {
                (
                    e.rank,
                    e.name.clone(),
                    e.weight,
                    e.req.as_ref().map(|r| r.text.clone()),
                    e.prerelease,
                )
            })
            .collect::<Vec<_>>()
    };
    assert_eq!(key(&yaml), key(&csv));
    let pre: Vec<&str> = yaml
        .entries
        .iter()
        .filter(|e| e.prerelease)
        .map(|e| e.name.as_str())
        .collect();
    assert_eq!(pre, ["glowmoth"]);
}

#[test]
fn results_load_with_their_logs() {
    let (registry, _) = load_registry();
    let (images, _) = load_images();
    let mut ledger = Ledger::default();
    let path: &Path = &root().join("demo-data/results.yaml");
    // Read through a (hidden) progress bar, which must count every record once.
    let bar = indicatif::ProgressBar::hidden();
    let results = basefit::load::results::read_results_showing(
        path,
        &Known {
            registry: Some(&registry),
            images: Some(&images),
        },
        &mut ledger,
        Some(&bar),
    )
    .unwrap_or_else(|e| panic!("{e}"));
    assert!(ledger.is_clean(), "{:#?}", ledger.problems);
    assert_eq!(results.len(), 12);
    assert_eq!((bar.position(), bar.length()), (12, Some(12)));
    let log = |package: &str, image: &str| {
        results
            .iter()
            .find(|r| r.package == package && r.image == image)
            .and_then(|r| r.log.clone())
            .unwrap_or_default()
    };
    assert!(
        log("thornbill-xml", "alpine-2.6").contains(
            "src/ext/parse.c:3:10: fatal error: libxml/parser.h: No such file or directory"
        )
    );
    assert!(log("burrow-lite", "el9-3.0").contains("/usr/bin/ld: cannot find -lpq"));
}

#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct Expected {
    cells: Vec<ExpectedCell>,
}

#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct ExpectedCell {
    package: String,
    image: String,
    outcome: String,
    cause: Option<String>,
    root_version: Option<String>,
    story: String,
}

/// expected.yaml is consistent with the inputs: every cell names a priority entry and a
/// declared image, causes come only with failures, root versions are published versions, and
/// every recorded result has an expectation. (Whether the predictions match is for the solver's
/// tests to assert.)
#[test]
fn expected_cells_are_well_formed() {
    let text = std::fs::read_to_string(root().join("demo-data/expected.yaml")).unwrap();
    let expected: Expected = serde_yaml::from_str(&text).unwrap();
    let (registry, _) = load_registry();
    let (images, _) = load_images();
    let mut ledger = Ledger::default();
    let priorities =
        read_priorities(&root().join("demo-data/priorities.yaml"), &mut ledger).unwrap();
    const CAUSES: &[&str] = &[
        "runtime-too-old",
        "runtime-too-new",
        "dependency-conflict",
        "missing-from-registry",
        "no-build-for-platform",
        "only-yanked-or-prerelease",
        "missing-system-library",
        "missing-toolchain",
    ];
    assert!((40..=80).contains(&expected.cells.len()));
    let mut seen = std::collections::BTreeSet::new();
    for c in &expected.cells {
        let at = format!("{} on {}", c.package, c.image);
        assert!(seen.insert((&c.package, &c.image)), "{at}: listed twice");
        assert!(
            priorities.entries.iter().any(|e| e.name == c.package),
            "{at}: not a priority entry"
        );
        assert!(images.get(&c.image).is_some(), "{at}: unknown image");
        assert!(
            c.story.starts_with('(') || c.story.starts_with("pure"),
            "{at}: story"
        );
        match c.outcome.as_str() {
            "fails" => {
                let cause = c
                    .cause
                    .as_deref()
                    .unwrap_or_else(|| panic!("{at}: no cause"));
                assert!(CAUSES.contains(&cause), "{at}: cause {cause}");
                assert!(
                    c.root_version.is_none(),
                    "{at}: failure with a root version"
                );
            }
            "installs" | "at-risk" => {
                assert!(c.cause.is_none(), "{at}: cause without a failure");
                let v = semver::Version::parse(c.root_version.as_deref().unwrap()).unwrap();
                let id = registry.id(&c.package).unwrap();
                assert!(
                    registry.find_release(id, &v).is_some(),
                    "{at}: {v} not published"
                );
            }
            other => panic!("{at}: outcome {other}"),
        }
    }
    let mut ledger = Ledger::default();
    let results = read_results(
        &root().join("demo-data/results.yaml"),
        &Known {
            registry: Some(&registry),
            images: Some(&images),
        },
        &mut ledger,
    )
    .unwrap();
    for r in &results {
        assert!(
            seen.contains(&(&r.package, &r.image)),
            "recorded {} on {} has no expected cell",
            r.package,
            r.image
        );
    }
}

/// Reading a registry moves its progress bar from the start to exactly its end, in both
/// formats, so a bar never stops short or runs past its length. The bar is hidden (no
/// terminal), but counts all the same.
#[test]
fn registry_reading_fills_its_progress_bar() {
    use basefit::load::RegistryBuilder;
    use basefit::load::bulk::read_bulk_showing;
    use basefit::load::registry::read_yaml_showing;
    let size = |p: &Path| std::fs::metadata(p).unwrap().len();

    let yaml = root().join("demo-data/registry.yaml");
    let bar = indicatif::ProgressBar::hidden();
    // Parsing, then checking the packages, each counted as the file's size.
    bar.set_length(2 * size(&yaml));
    read_yaml_showing(&yaml, &mut RegistryBuilder::new(), Some(&bar)).unwrap();
    assert_eq!(bar.position(), 2 * size(&yaml));

    let dir = tempfile::tempdir().unwrap();
    let (versions, deps) = (dir.path().join("v.csv"), dir.path().join("d.csv"));
    std::fs::write(
        &versions,
        "package,version\nfernwood,1.0.0\nfernwood,1.1.0\n",
    )
    .unwrap();
    std::fs::write(
        &deps,
        "package,version,dependency\nfernwood,1.1.0,fernwood-core\n",
    )
    .unwrap();
    let bar = indicatif::ProgressBar::hidden();
    read_bulk_showing(&versions, &deps, Some(&bar)).unwrap();
    let want = size(&versions) + size(&deps);
    assert_eq!((bar.position(), bar.length()), (want, Some(want)));
}

#[test]
fn priority_csv_flags_read_as_the_bulk_csv_flags_do() {
    // Both CSV inputs take one set of spellings for true and false (`load::table::parse_flag`).
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("p.csv");
    std::fs::write(
        &path,
        "rank,name,prerelease\n1,alpha,yes\n2,beta,0\n3,gamma,TRUE\n4,delta,\n",
    )
    .unwrap();
    let mut ledger = Ledger::default();
    let list = read_priorities(&path, &mut ledger).unwrap();
    let flags: Vec<bool> = list.entries.iter().map(|e| e.prerelease).collect();
    assert_eq!(flags, [true, false, true, false]);
    std::fs::write(&path, "rank,name,prerelease\n1,alpha,true\n2,beta,maybe\n").unwrap();
    let err = read_priorities(&path, &mut Ledger::default()).unwrap_err();
    let text = err.to_string();
    assert!(
        text.contains("p.csv:3") && text.contains("`maybe`"),
        "{text}"
    );
}

/// All four demo inputs loaded together (as `check` and every planning command load them):
/// the registry's nine planted problems, and gidgee-auth, the priority entry the registry
/// lacks (demo-data/STORIES.md, "Ledger expected when loading"); nothing else.
#[test]
fn all_demo_inputs_together_give_the_ten_problems_stories_lists() {
    let d = root().join("demo-data");
    let inputs = basefit::load::load_inputs(&basefit::load::InputPaths {
        registry: vec![d.join("registry.yaml")],
        images: Some(root().join("matrices/demo-images.yaml")),
        priorities: Some(d.join("priorities.yaml")),
        results: vec![d.join("results.yaml")],
        ..Default::default()
    })
    .unwrap();
    let ledger = &inputs.ledger;
    assert_eq!(ledger.problems.len(), 10, "{:?}", ledger.problems);
    assert_eq!(
        subjects(ledger, ProblemKind::UnknownPackage),
        ["gidgee-auth"]
    );
}
