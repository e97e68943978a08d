//! Image planning: runtime coverage, the pre-install set and the coverage chart.
//!
//! Every registry here is hand-built for the test (no outside source); weights are chosen so
//! the expected shares are exact binary fractions of ten.

mod common;

use basefit::load::images::read_images_str;
use basefit::load::priorities::read_priorities_str;
use basefit::load::registry::read_yaml_str;
use basefit::load::{Inputs, RegistryBuilder};
use basefit::model::DepKind;
use basefit::native::Confidence;
use basefit::plan::PlanOptions;
use basefit::plan::coverage::{Coverage, CoveragePoint, coverage, coverage_svg};
use basefit::plan::preinstall::preinstall;
use basefit::solve::SetCache;
use semver::Version;

fn inputs(registry: &str, images: &str, priorities: &str) -> Inputs {
    let mut b = RegistryBuilder::new();
    read_yaml_str("r.yaml", registry, &mut b).unwrap();
    let (registry, mut ledger) = b.finish();
    let images = read_images_str("i.yaml", images, &mut ledger).unwrap();
    let priorities = read_priorities_str("p.yaml", priorities, &mut ledger).unwrap();
    Inputs {
        registry,
        images,
        priorities,
        ledger,
        ..Default::default()
    }
}

fn v(s: &str) -> Version {
    Version::parse(s).unwrap()
}

const COVERAGE_REGISTRY: &str = "packages:
- name: anchor
  versions:
  - {version: 1.0.0}
- name: brine
  versions:
  - {version: 1.0.0, runtime: '>=3.1'}
- name: coral
  versions:
  - {version: 1.0.0, runtime: '>=3.2'}
- name: dune
  versions:
  - {version: 1.0.0, runtime: '<3.2'}
";

const COVERAGE_PRIORITIES: &str = "priorities:
- {name: anchor, weight: 5}
- {name: brine, weight: 2}
- {name: coral, weight: 2}
- {name: dune, weight: 1}
";

const ONE_IMAGE: &str =
    "images:\n- {id: deb, runtime: 3.1.0, family: debian, platform: linux/glibc/x86_64}\n";

fn coverage_of(target: f64) -> Coverage {
    let inp = inputs(COVERAGE_REGISTRY, ONE_IMAGE, COVERAGE_PRIORITIES);
    let sets = SetCache::default();
    // Unsorted and repeated on purpose: coverage sorts and de-duplicates.
    let runtimes = [v("3.2.0"), v("3.0.0"), v("3.1.0"), v("3.0.0")];
    coverage(
        &inp,
        &inp.images.images[0],
        &runtimes,
        target,
        &PlanOptions::default(),
        &sets,
    )
}

#[test]
fn coverage_shares_are_priority_weighted() {
    let c = coverage_of(0.85);
    let got: Vec<(&str, Option<f64>)> = c
        .points
        .iter()
        .map(|p| (p.runtime.as_str(), p.share))
        .collect();
    // 3.0: anchor+dune = 6/10; 3.1: anchor+brine+dune = 8/10; 3.2: anchor+brine+coral = 9/10.
    assert_eq!(
        got,
        vec![
            ("3.0.0", Some(0.6)),
            ("3.1.0", Some(0.8)),
            ("3.2.0", Some(0.9))
        ]
    );
    assert_eq!(c.points[1].resolves, vec!["anchor", "brine", "dune"]);
}

#[test]
fn oldest_runtime_reaching_target() {
    assert_eq!(
        coverage_of(0.85).oldest_reaching_target.as_deref(),
        Some("3.2.0")
    );
    // Exactly reaching the target counts.
    assert_eq!(
        coverage_of(0.8).oldest_reaching_target.as_deref(),
        Some("3.1.0")
    );
    assert_eq!(
        coverage_of(0.5).oldest_reaching_target.as_deref(),
        Some("3.0.0")
    );
    assert_eq!(coverage_of(0.95).oldest_reaching_target, None);
}

#[test]
fn drop_outs_and_come_ins_between_neighbours() {
    let c = coverage_of(0.95);
    assert_eq!(c.steps.len(), 2);
    assert_eq!(
        (c.steps[0].older.as_str(), c.steps[0].newer.as_str()),
        ("3.0.0", "3.1.0")
    );
    assert_eq!(c.steps[0].drop_out, vec!["brine"]);
    assert!(c.steps[0].come_in.is_empty());
    assert_eq!(c.steps[1].drop_out, vec!["coral"]);
    assert_eq!(c.steps[1].come_in, vec!["dune"]);
}

#[test]
fn coverage_is_deterministic_across_thread_counts() {
    let one = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap()
        .install(|| coverage_of(0.9));
    let two = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .unwrap()
        .install(|| coverage_of(0.9));
    assert_eq!(one, two);
}

/// `web` 2.0.0 needs a newer runtime than the image, so web 1.0.0 (lib ^1) is chosen; lib
/// 1.1.0 is yanked and 1.2.0 has only a musl prebuilt, so lib 1.0.0 is the only choice;
/// `legacy` needs lib ^2 and so conflicts with web; `tool` needs a prebuilt-only helper.
const PRE_REGISTRY: &str = "packages:
- name: web
  versions:
  - {version: 1.0.0, runtime: '>=3.0', depends: [{name: lib, req: '^1'}, {name: lint, req: '*', kind: development}]}
  - {version: 2.0.0, runtime: '>=3.2', depends: [{name: lib, req: '^2'}]}
- name: lib
  versions:
  - {version: 1.0.0}
  - {version: 1.1.0, yanked: true}
  - {version: 1.2.0, builds: {prebuilt: [linux/musl/x86_64]}}
  - {version: 2.0.0}
- name: util
  versions:
  - {version: 0.3.0}
- name: legacy
  versions:
  - {version: 1.0.0, depends: [{name: lib, req: '^2'}]}
- name: tool
  versions:
  - {version: 1.0.0, runtime: '^3', depends: [{name: helper, req: '>=1'}]}
- name: helper
  versions:
  - {version: 1.0.0, builds: {prebuilt: [linux/glibc/x86_64]}}
  - {version: 1.5.0, builds: {prebuilt: [linux/musl/x86_64]}}
- name: lint
  versions:
  - {version: 1.0.0, runtime: '>=9'}
";

const PRE_PRIORITIES: &str = "priorities:
- web
- util
- legacy
- tool
";

#[test]
fn preinstall_manifest_passes_an_independent_check() {
    let inp = inputs(PRE_REGISTRY, ONE_IMAGE, PRE_PRIORITIES);
    let image = &inp.images.images[0];
    let p = preinstall(&inp, image, &PlanOptions::default(), &SetCache::default());
    let kept: Vec<&str> = p.kept.iter().map(|k| k.name.as_str()).collect();
    assert_eq!(kept, vec!["web", "util", "tool"]);

    // The check below reads the registry directly and never calls the solver.
    let reg = &inp.registry;
    let chosen = |name: &str| p.manifest.iter().find(|m| m.name == name);
    let mut names: Vec<&str> = p.manifest.iter().map(|m| m.name.as_str()).collect();
    names.sort();
    names.dedup();
    assert_eq!(names.len(), p.manifest.len(), "one version per package");
    for k in &p.kept {
        assert_eq!(chosen(&k.name).map(|m| &m.version), Some(&k.version));
    }
    for m in &p.manifest {
        let id = reg.id(&m.name).expect("manifest names registry packages");
        let release = reg
            .package(id)
            .releases
            .iter()
            .find(|r| r.version == v(&m.version))
            .expect("manifest versions are published");
        assert!(!release.yanked, "{} {} is yanked", m.name, m.version);
        if let Some(req) = release.runtime {
            assert!(
                reg.requirement(req).matches(&image.runtime),
                "{} {} does not admit runtime {}",
                m.name,
                m.version,
                image.runtime
            );
        }
        let prebuilt_here = release
            .build
            .prebuilt
            .iter()
            .any(|pid| *reg.platform(*pid) == image.platform);
        assert!(
            release.build.source || prebuilt_here,
            "{} {} has no build for {}",
            m.name,
            m.version,
            image.platform
        );
        for d in release.deps.iter().filter(|d| d.kind == DepKind::Runtime) {
            let target = reg.name(d.package);
            let got = chosen(target).unwrap_or_else(|| {
                panic!("{} needs {target}, which is not in the manifest", m.name)
            });
            assert!(
                reg.requirement(d.req).matches(&v(&got.version)),
                "{} needs {target} {}, manifest has {}",
                m.name,
                reg.requirement(d.req),
                got.version
            );
        }
    }
    // The specific choices the registry forces.
    assert_eq!(chosen("web").unwrap().version, "1.0.0");
    assert_eq!(chosen("lib").unwrap().version, "1.0.0");
    assert_eq!(chosen("helper").unwrap().version, "1.0.0");
    assert!(
        chosen("lint").is_none(),
        "development dependencies are not installed"
    );
}

#[test]
fn conflicting_lower_priority_package_names_its_conflict() {
    let inp = inputs(PRE_REGISTRY, ONE_IMAGE, PRE_PRIORITIES);
    let p = preinstall(
        &inp,
        &inp.images.images[0],
        &PlanOptions::default(),
        &SetCache::default(),
    );
    assert_eq!(p.left_out.len(), 1);
    let l = &p.left_out[0];
    assert_eq!(l.name, "legacy");
    assert_eq!(l.conflicts_with, vec!["web"]);
    assert!(l.reason.contains("web"), "{}", l.reason);
    assert!(
        l.reason
            .ends_with("; the other kept entries leave room for it"),
        "{}",
        l.reason
    );
}

/// The conflict named is a smallest set, not the only one: when another kept entry conflicts
/// too, the reason says so, since leaving out the one named would not let the entry in.
#[test]
fn a_conflict_shared_by_several_kept_entries_says_so() {
    let registry = "packages:
- name: core
  versions: [{version: 1.0.0}, {version: 2.0.0}]
- name: web
  versions: [{version: 1.0.0, depends: [{name: core, req: ^2}]}]
- name: api
  versions: [{version: 1.0.0, depends: [{name: core, req: ^2}]}]
- name: legacy
  versions: [{version: 1.0.0, depends: [{name: core, req: ^1}]}]
";
    let inp = inputs(registry, ONE_IMAGE, "priorities: [web, api, legacy]\n");
    let p = preinstall(
        &inp,
        &inp.images.images[0],
        &PlanOptions::default(),
        &SetCache::default(),
    );
    let l = &p.left_out[0];
    assert_eq!((l.name.as_str(), l.conflicts_with.len()), ("legacy", 1));
    assert!(
        l.reason
            .ends_with("; other kept entries conflict with it too"),
        "{}",
        l.reason
    );
}

#[test]
fn package_that_fails_alone_is_left_out_without_naming_others() {
    let inp = inputs(
        COVERAGE_REGISTRY,
        "images:\n- {id: old, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n",
        COVERAGE_PRIORITIES,
    );
    let p = preinstall(
        &inp,
        &inp.images.images[0],
        &PlanOptions::default(),
        &SetCache::default(),
    );
    let out: Vec<&str> = p.left_out.iter().map(|l| l.name.as_str()).collect();
    assert_eq!(out, vec!["brine", "coral"]);
    assert!(p.left_out.iter().all(|l| l.conflicts_with.is_empty()));
    assert!(p.left_out[0].reason.contains("does not install alone"));
}

/// An entry left out that the kept entries' dependencies install all the same (a pre-release
/// one pins exactly, which the entry without `prerelease: true` does not take) says so: the
/// manifest row of the same name beside "left out" read as a contradiction (from an
/// end-to-end review).
#[test]
fn an_entry_left_out_that_the_manifest_installs_all_the_same_says_so() {
    let inp = inputs(
        "packages:
- name: nimbrel
  versions:
  - {version: 0.1.0-rc.2}
- name: earlybird
  versions:
  - {version: 1.0.0, depends: [{name: nimbrel, req: '=0.1.0-rc.2'}]}
- name: plain
  versions:
  - {version: 1.0.0, runtime: '>=9'}
",
        "images:\n- {id: deb, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n",
        "priorities: [earlybird, nimbrel, plain]\n",
    );
    let p = preinstall(
        &inp,
        &inp.images.images[0],
        &PlanOptions::default(),
        &SetCache::default(),
    );
    let out: Vec<(&str, Option<&str>)> = p
        .left_out
        .iter()
        .map(|l| (l.name.as_str(), l.in_manifest.as_deref()))
        .collect();
    assert_eq!(out, [("nimbrel", Some("0.1.0-rc.2")), ("plain", None)]);
    let text = basefit::plan::preinstall::preinstall_text(&p);
    assert!(
        text.contains(
            "; the manifest installs nimbrel 0.1.0-rc.2 all the same, which the kept entries' dependencies take\n"
        ),
        "{text}"
    );
    assert!(!text.contains("plain 1.0.0"), "{text}");
}

/// Tag names in document order, checked for balance; panics on a mismatch.
fn check_balanced(svg: &str) -> usize {
    let mut stack: Vec<String> = Vec::new();
    let mut rest = svg;
    let mut elements = 0;
    while let Some(start) = rest.find('<') {
        let end = rest[start..].find('>').expect("unterminated tag") + start;
        let tag = &rest[start + 1..end];
        assert!(!tag.contains('<'), "`<` inside a tag: {tag}");
        if let Some(name) = tag.strip_prefix('/') {
            assert_eq!(
                stack.pop().as_deref(),
                Some(name.trim()),
                "mismatched </{name}>"
            );
        } else {
            elements += 1;
            let name: String = tag
                .chars()
                .take_while(|c| !c.is_whitespace() && *c != '/')
                .collect();
            if !tag.ends_with('/') {
                stack.push(name);
            }
        }
        rest = &rest[end + 1..];
    }
    assert!(stack.is_empty(), "unclosed: {stack:?}");
    elements
}

#[test]
fn svg_is_balanced_with_one_point_per_runtime() {
    let c = coverage_of(0.9);
    let svg = coverage_svg(&c);
    assert!(svg.starts_with("<svg "));
    assert!(check_balanced(&svg) > 3);
    assert_eq!(svg.matches("<circle class=\"point\"").count(), 3);
    assert_eq!(svg.matches("class=\"target\"").count(), 1);
    assert!(svg.contains("stroke-dasharray"));
    assert!(svg.contains(">runtime version<"));
    assert!(
        !svg.contains("http://") || svg.matches("http://").count() == 1,
        "only the xmlns"
    );
}

#[test]
fn svg_escapes_its_text() {
    let c = Coverage {
        base_image: "img<&\"'>".to_string(),
        family: "debian".to_string(),
        platform: "linux/<x>/y".to_string(),
        target: 0.5,
        points: vec![CoveragePoint {
            runtime: "3.0.0</text><script>".to_string(),
            share: Some(0.25),
            short_share: Some(0.75),
            failing_share: Some(0.75),
            resolves: Vec::new(),
            undecided: 0,
            undecided_entries: Vec::new(),
            reaches_target: Some(false),
        }],
        oldest_reaching_target: None,
        target_unknown_at: Vec::new(),
        steps: Vec::new(),
        native_skipped: false,
    };
    let svg = coverage_svg(&c);
    check_balanced(&svg);
    assert!(!svg.contains("<script>"));
    assert!(!svg.contains("<x>"));
    assert!(svg.contains("img&lt;&amp;&quot;&#39;&gt;"));
    assert!(svg.contains("3.0.0&lt;/text&gt;&lt;script&gt;"));
    assert_eq!(svg.matches("<circle class=\"point\"").count(), 1);
}

/// The `imageplan` command with the command line's defaults (every image at its own runtime,
/// target 0.95, table output) on `registry`, `ONE_IMAGE` and `priorities` written into `dir`,
/// writing its files into `dir/out`.
fn imageplan_command(
    dir: &std::path::Path,
    registry: &str,
    priorities: &str,
) -> basefit::commands::ImageplanCommand {
    let path = |n: &str| dir.join(n);
    std::fs::write(path("r.yaml"), registry).unwrap();
    std::fs::write(path("i.yaml"), ONE_IMAGE).unwrap();
    std::fs::write(path("p.yaml"), priorities).unwrap();
    basefit::commands::ImageplanCommand {
        inputs: basefit::load::InputPaths {
            registry: vec![path("r.yaml")],
            images: Some(path("i.yaml")),
            priorities: Some(path("p.yaml")),
            ..Default::default()
        },
        strict: false,
        plan: PlanOptions::default(),
        images: Vec::new(),
        runtimes: Vec::new(),
        target: 0.95,
        out: Some(path("out")),
        format: basefit::report::Format::Table,
    }
}

#[test]
fn command_writes_yaml_and_svg() {
    let dir = tempfile::tempdir().unwrap();
    let path = |n: &str| dir.path().join(n);
    let o = basefit::commands::ImageplanCommand {
        images: vec!["deb".to_string()],
        runtimes: vec![v("3.0.5"), v("3.1.2")],
        ..imageplan_command(dir.path(), PRE_REGISTRY, PRE_PRIORITIES)
    };
    let out = basefit::commands::imageplan(&o).unwrap();
    let yaml = std::fs::read_to_string(path("out/imageplan.yaml")).unwrap();
    let svg = std::fs::read_to_string(path("out/coverage.svg")).unwrap();
    assert!(yaml.contains("preinstall:") && yaml.contains("coverage:"));
    assert_eq!(svg.matches("<circle class=\"point\"").count(), 2);
    assert!(out.stdout.contains("left out legacy"), "{}", out.stdout);
    // The manifest lists dependencies too (lib, helper): the count says so.
    assert!(
        out.stdout
            .contains(": 3 of 4 priority entries kept, 1 left out; 5 packages to install"),
        "{}",
        out.stdout
    );
    let again = basefit::commands::imageplan(&o).unwrap();
    assert_eq!(out.stdout, again.stdout, "deterministic output");

    let json = basefit::commands::ImageplanCommand {
        format: basefit::report::Format::Json,
        out: None,
        ..o
    };
    let parsed: serde_json::Value =
        serde_json::from_str(&basefit::commands::imageplan(&json).unwrap().stdout).unwrap();
    assert_eq!(parsed["preinstall"][0]["image"], "deb");
    let bad = basefit::commands::ImageplanCommand {
        images: vec!["nope".to_string()],
        ..json
    };
    assert!(basefit::commands::imageplan(&bad).is_err());
}

#[test]
fn manifest_reports_native_needs_of_the_joint_closure() {
    // Alone, `xylem` takes brace 3.0.0 (pure). Jointly with `yarrow` (brace <3) the set takes
    // brace 2.0.0, which ships a copy of a libxml2 header: a likely need of libxml2-dev that
    // neither package alone showed on this image.
    let registry = "packages:
- name: brace
  versions:
  - {version: 2.0.0, native: {files: [include/libxml/parser.h]}}
  - {version: 3.0.0}
- name: xylem
  versions:
  - {version: 1.0.0, depends: [{name: brace, req: '*'}]}
- name: yarrow
  versions:
  - {version: 1.0.0, depends: [{name: brace, req: '<3'}]}
";
    let images = "images:\n- {id: deb, runtime: 3.1.0, family: debian, platform: linux/glibc/x86_64, toolchain: true}\n";
    let p = native_preinstall(registry, images, "priorities:\n- xylem\n- yarrow\n");
    let kept: Vec<&str> = p.kept.iter().map(|k| k.name.as_str()).collect();
    assert_eq!(kept, ["xylem", "yarrow"]);
    let brace = p.manifest.iter().find(|m| m.name == "brace").unwrap();
    assert_eq!(brace.version, "2.0.0");
    assert_eq!(p.missing_system_packages, ["libxml2-dev"]);
    // A likely need does not fail the set; the closing line says who needs what, how surely.
    assert_eq!(p.system_needs.len(), 1);
    assert_eq!(p.system_needs[0].confidence, Confidence::Likely);
    let by: Vec<(&str, &str)> = p.system_needs[0]
        .needed_by
        .iter()
        .map(|m| (m.name.as_str(), m.version.as_str()))
        .collect();
    assert_eq!(by, [("brace", "2.0.0")]);
    let text = basefit::plan::preinstall::preinstall_text(&p);
    assert!(
        text.contains(
            "the manifest needs system packages the image lacks: libxml2-dev (likely, for brace 2.0.0)\n"
        ),
        "{text}"
    );
    // The row itself says so, and only that row: a manifest copied into an image build
    // must not read as packages that all install (found by an end-to-end review).
    assert!(
        text.contains("1 of them needs what the image lacks (last column): add that first, or it may fail to install\n"),
        "{text}"
    );
    let row = |name: &str| manifest_row(&text, name);
    assert!(
        row("brace").starts_with("brace    2.0.0    source  ")
            && row("brace").ends_with("libxml2-dev (likely)"),
        "{text}"
    );
    assert!(row("xylem").ends_with("source"), "{text}");
    assert_eq!(p.at_risk.len(), 1);
    assert_eq!(
        (p.at_risk[0].name.as_str(), p.at_risk[0].version.as_str()),
        ("brace", "2.0.0")
    );
    let json = serde_json::to_value(&p).unwrap();
    assert_eq!(
        json["at_risk"][0]["system_packages"][0],
        serde_json::json!({"name": "libxml2-dev", "confidence": "likely"}),
        "{json}"
    );
}

/// The line above the manifest says what to do about its rows at risk: add the packages
/// named, and check the image by hand for libraries no package is known for. It said "add that
/// first" where the only need was such a library, with nothing to add (an end-to-end review).
#[test]
fn the_manifest_header_asks_to_add_only_what_can_be_added() {
    let images = "images:\n- {id: deb, runtime: 3.1.0, family: debian, platform: linux/glibc/x86_64, toolchain: true}\n";
    let header = |registry: &str, priorities: &str| {
        let p = native_preinstall(registry, images, priorities);
        let text = basefit::plan::preinstall::preinstall_text(&p);
        text.lines()
            .find(|l| l.contains(" of them need"))
            .unwrap_or_else(|| panic!("{text}"))
            .to_string()
    };
    let registry = "packages:
- name: murk
  versions:
  - {version: 1.0.0, native: {libraries: [quillotine-vq]}}
- name: fenbolt
  versions:
  - {version: 1.0.0, native: {files: [include/libxml/parser.h]}}
";
    assert_eq!(
        header(registry, "priorities:\n- murk\n"),
        "1 of them needs a library no system package is known for (last column): check the image has it by hand, or it may fail to install"
    );
    assert_eq!(
        header(registry, "priorities:\n- fenbolt\n"),
        "1 of them needs what the image lacks (last column): add that first, or it may fail to install"
    );
    assert_eq!(
        header(registry, "priorities:\n- murk\n- fenbolt\n"),
        "2 of them need what the image lacks (last column): add the packages named first, and check the image by hand for the library no package is known for, or they may fail to install"
    );
}

/// The manifest table's row of `name` in a pre-install text, trailing blanks trimmed.
fn manifest_row(text: &str, name: &str) -> String {
    text.lines()
        .find(|l| l.starts_with(&format!("{name} ")))
        .unwrap_or_else(|| panic!("{name}: {text}"))
        .trim_end()
        .to_string()
}

/// On an image without a compiler, each source build that ships C files says on its row that
/// it likely needs the toolchain, with its own confidence: one whose only evidence is a
/// possible one (its summary names a library) says possible, though another row's need of the
/// same package is likely.
#[test]
fn manifest_rows_say_what_each_needs_with_its_own_confidence() {
    let registry = "packages:
- name: cobble
  versions:
  - {version: 0.1.0, native: {files: [src/ext/fast.c]}}
- name: pondly
  summary: bindings for libpq
  versions:
  - {version: 0.2.0}
- name: plain
  versions:
  - {version: 1.0.0}
";
    let images = "images:\n- {id: slim, runtime: 3.1.0, family: debian, platform: linux/glibc/x86_64, toolchain: false}\n";
    let p = native_preinstall(
        registry,
        images,
        "priorities:\n- cobble\n- pondly\n- plain\n",
    );
    let kept: Vec<&str> = p.kept.iter().map(|k| k.name.as_str()).collect();
    assert_eq!(kept, ["cobble", "pondly", "plain"]);
    let text = basefit::plan::preinstall::preinstall_text(&p);
    assert!(
        text.contains("2 of them need what the image lacks"),
        "{text}"
    );
    let row = |name: &str| manifest_row(&text, name);
    assert!(row("cobble").contains("build-essential (likely)"), "{text}");
    assert!(
        row("pondly").contains("build-essential (possible)")
            && row("pondly").contains("libpq-dev (possible)"),
        "{text}"
    );
    assert!(row("plain").ends_with("source"), "{text}");
}

/// A manifest row whose only need the image lacks is a library the catalog maps to no package
/// still says so, on its row and in `at_risk`: dropped, the row reads as safe to install while
/// its build certainly needs `libwobble` (from a mutation review, where only the summary line
/// below the table kept it).
#[test]
fn a_manifest_row_needing_only_an_unmapped_library_says_so() {
    let registry = "packages:
- name: echidna-wob
  versions:
  - {version: 1.0.0, native: {libraries: [libwobble], files: [src/ext/w.c]}}
- name: platypus
  versions:
  - {version: 1.0.0}
";
    let images = "images:\n- {id: deb, runtime: 3.1.0, family: debian, platform: linux/glibc/x86_64, toolchain: true, packages: [build-essential]}\n";
    let p = native_preinstall(registry, images, "priorities:\n- echidna-wob\n- platypus\n");
    assert_eq!(p.at_risk.len(), 1, "{:?}", p.at_risk);
    let row = &p.at_risk[0];
    assert_eq!(row.name, "echidna-wob");
    let unmapped: Vec<(&str, Confidence)> = row
        .unmapped_libraries
        .iter()
        .map(|l| (l.name.as_str(), l.confidence))
        .collect();
    assert_eq!(unmapped, [("libwobble", Confidence::Certain)]);
    let text = basefit::plan::preinstall::preinstall_text(&p);
    assert!(
        manifest_row(&text, "echidna-wob").ends_with("libwobble (certain, no package known)"),
        "{text}"
    );
}

/// `s` and `t` in two major versions; `A` and `C` hold both at 1, so `B` (s ^2) conflicts,
/// `D` falls back to 0.9.0 (t ^1), and so would `E`, whose 0.5.0 declares libxml2. Alone, `E`
/// takes 1.0.0 and installs, so only the native check of the joint pick can leave it out.
const JOINT_NATIVE_REGISTRY: &str = r#"packages:
  - {name: s, versions: [{version: "1.0.0"}, {version: "2.0.0"}]}
  - {name: t, versions: [{version: "1.0.0"}, {version: "2.0.0"}]}
  - {name: A, versions: [{version: "1.0.0", depends: [{name: s, req: "^1"}]}]}
  - {name: C, versions: [{version: "1.0.0", depends: [{name: s, req: "^1"}, {name: t, req: "^1"}]}]}
  - {name: B, versions: [{version: "1.0.0", depends: [{name: s, req: "^2"}]}]}
  - {name: D, versions: [{version: "1.0.0", depends: [{name: t, req: "^2"}]}, {version: "0.9.0", depends: [{name: t, req: "^1"}]}]}
  - name: E
    versions:
      - {version: "1.0.0", depends: [{name: t, req: "^2"}]}
      - {version: "0.5.0", depends: [{name: t, req: "^1"}], native: {libraries: [libxml2]}}
  - name: F
    versions:
      - {version: "1.0.0", depends: [{name: t, req: "^1"}]}
"#;

const JOINT_NATIVE_IMAGE: &str = "images:\n- {id: i, runtime: 1.0.0, family: debian, platform: linux/glibc/x86_64, toolchain: true, packages: [build-essential]}\n";

fn joint_native_preinstall(priorities: &str) -> basefit::plan::preinstall::Preinstall {
    native_preinstall(JOINT_NATIVE_REGISTRY, JOINT_NATIVE_IMAGE, priorities)
}

/// The pre-install set of the first image, with the shipped catalog's native checks.
fn native_preinstall(
    registry: &str,
    images: &str,
    priorities: &str,
) -> basefit::plan::preinstall::Preinstall {
    let mut inp = inputs(registry, images, priorities);
    inp.catalog = basefit::native::Catalog::builtin();
    preinstall(
        &inp,
        &inp.images.images[0],
        &PlanOptions::default(),
        &SetCache::default(),
    )
}

/// A kept entry whose jointly chosen release certainly fails natively is left out, naming
/// the release and what it lacks, and the manifest needs no system package then.
#[test]
fn an_entry_whose_joint_release_certainly_fails_natively_is_left_out() {
    let p = joint_native_preinstall(
        "priorities:\n- {name: A, weight: 5}\n- {name: C, weight: 4}\n- {name: B, weight: 3}\n- {name: D, weight: 2}\n- {name: E, weight: 1}\n",
    );
    let kept: Vec<&str> = p.kept.iter().map(|k| k.name.as_str()).collect();
    assert_eq!(kept, ["A", "C", "D"]);
    assert!(p.manifest.iter().all(|m| m.name != "E"), "{:?}", p.manifest);
    let e = p.left_out.iter().find(|l| l.name == "E").unwrap();
    assert_eq!(
        e.reason,
        "with the kept packages the joint solve picks E 0.5.0 (missing-system-library: add libxml2-dev), which certainly fails natively on i"
    );
    assert!(p.missing_system_packages.is_empty());
    assert!(p.system_needs.is_empty());
    let text = basefit::plan::preinstall::preinstall_text(&p);
    assert!(
        text.contains(": 3 of 5 priority entries kept, 2 left out"),
        "{text}"
    );
    assert!(!text.contains("the manifest needs"), "{text}");
}

/// An entry whose addition moves a kept entry to a release that certainly fails natively is
/// left out too, naming the kept entry it would move: `F` (t ^1) alone installs, but with it
/// `E` must take 0.5.0.
#[test]
fn an_entry_that_moves_a_kept_one_onto_a_native_failure_is_left_out() {
    let p = joint_native_preinstall("priorities:\n- E\n- F\n");
    let kept: Vec<(&str, &str)> = p
        .kept
        .iter()
        .map(|k| (k.name.as_str(), k.version.as_str()))
        .collect();
    assert_eq!(kept, [("E", "1.0.0")]);
    assert_eq!(p.left_out.len(), 1);
    assert_eq!(
        p.left_out[0].reason,
        "with it the joint solve moves kept packages to versions that certainly fail natively on i: E 0.5.0 (missing-system-library: add libxml2-dev)"
    );
}

/// Coverage counts every cell it solves into the progress bar, once: three distinct runtimes
/// (of four given) times four priority entries, twice over for two bases sharing the bar.
#[test]
fn coverage_counts_its_cells_into_the_progress_bar() {
    let inp = inputs(COVERAGE_REGISTRY, ONE_IMAGE, COVERAGE_PRIORITIES);
    let bar = indicatif::ProgressBar::hidden();
    let options = PlanOptions {
        progress: Some(bar.clone()),
        ..PlanOptions::default()
    };
    let runtimes = [v("3.2.0"), v("3.0.0"), v("3.1.0"), v("3.0.0")];
    for _ in 0..2 {
        let image = &inp.images.images[0];
        coverage(&inp, image, &runtimes, 0.5, &options, &SetCache::default());
    }
    assert_eq!((bar.position(), bar.length()), (24, Some(24)));
}

/// A runtime at which nothing resolves has a share of zero, and every rendering says `0.0`:
/// the weight that resolves is a sum of no weights, which in f64 is negative zero and used to
/// print as `-0.0%` in the table and the chart and `-0.0` in the YAML and JSON.
#[test]
fn a_runtime_where_nothing_resolves_prints_zero_not_negative_zero() {
    let dir = tempfile::tempdir().unwrap();
    let path = |n: &str| dir.path().join(n);
    let o = basefit::commands::ImageplanCommand {
        // `--target=-0` is zero too.
        target: -0.0,
        ..imageplan_command(
            dir.path(),
            "packages:\n- name: anchor\n  versions:\n  - {version: 1.0.0, runtime: '>=9'}\n",
            "priorities:\n- {name: anchor, weight: 2}\n",
        )
    };
    let text = basefit::commands::imageplan(&o).unwrap().stdout;
    assert!(text.contains("3.1.0    0.0%"), "{text}");
    assert!(text.contains("target 0.0%"), "{text}");
    let json = basefit::commands::imageplan(&basefit::commands::ImageplanCommand {
        format: basefit::report::Format::Json,
        out: None,
        ..o
    })
    .unwrap()
    .stdout;
    let yaml = std::fs::read_to_string(path("out/imageplan.yaml")).unwrap();
    let svg = std::fs::read_to_string(path("out/coverage.svg")).unwrap();
    assert!(svg.contains("<title>3.1.0: 0.0%</title>"), "{svg}");
    assert!(yaml.contains("share: 0.0"), "{yaml}");
    for (name, doc) in [
        ("text", &text),
        ("JSON", &json),
        ("YAML", &yaml),
        ("SVG", &svg),
    ] {
        assert!(
            !doc.contains("-0.0") && !doc.contains("-0%"),
            "{name}: {doc}"
        );
    }
}

/// `COVERAGE_REGISTRY` plus `deep`, which suits runtimes below 3.2 and sits on a chain of ten
/// dependencies: more solver steps than `DEEP_BUDGET` allows, while every other entry (and
/// `deep` at 3.2, refused at its root) is decided within it.
fn deep_coverage(target: f64) -> Coverage {
    let mut registry = COVERAGE_REGISTRY.to_string();
    registry.push_str(
        "- name: deep\n  versions:\n  - {version: 1.0.0, runtime: '<3.2', depends: [{name: link1, req: '*'}]}\n",
    );
    for i in 1..=10 {
        let dep = match i {
            10 => String::new(),
            _ => format!(", depends: [{{name: link{}, req: '*'}}]", i + 1),
        };
        registry.push_str(&format!(
            "- name: link{i}\n  versions:\n  - {{version: 1.0.0{dep}}}\n"
        ));
    }
    let priorities = format!("{COVERAGE_PRIORITIES}- {{name: deep, weight: 1}}\n");
    let inp = inputs(&registry, ONE_IMAGE, &priorities);
    let options = PlanOptions {
        budget: DEEP_BUDGET,
        ..PlanOptions::default()
    };
    let runtimes = [v("3.0.0"), v("3.1.0"), v("3.2.0")];
    coverage(
        &inp,
        &inp.images.images[0],
        &runtimes,
        target,
        &options,
        &SetCache::default(),
    )
}

const DEEP_BUDGET: u64 = 4;

/// An entry the solver gave up on is neither resolving nor failing: the coverage counts it,
/// the target verdict it could change is left open rather than stated, and it is listed as
/// unknown in the steps instead of as a drop-out or come-in (or as nothing).
#[test]
fn undecided_entries_leave_verdicts_and_steps_open() {
    // Weights of 11: 3.0 resolves 6 (deep open), 3.1 resolves 8 (deep open), 3.2 resolves 9.
    let c = deep_coverage(0.8);
    let undecided: Vec<(usize, &[String])> = c
        .points
        .iter()
        .map(|p| (p.undecided, p.undecided_entries.as_slice()))
        .collect();
    let deep = vec!["deep".to_string()];
    assert_eq!(
        undecided,
        [(1, deep.as_slice()), (1, deep.as_slice()), (0, &[][..])]
    );
    // 3.0: at most 7/11 even if deep resolves; 3.1: 8/11 or 9/11 straddles 80%; 3.2: 9/11.
    let verdicts: Vec<Option<bool>> = c.points.iter().map(|p| p.reaches_target).collect();
    assert_eq!(verdicts, [Some(false), None, Some(true)]);
    assert_eq!(c.oldest_reaching_target, None, "3.1.0 may reach it too");
    assert_eq!(c.target_unknown_at, ["3.1.0"]);
    assert_eq!(c.steps[0].drop_out, ["brine"]);
    assert_eq!(c.steps[1].come_in, ["dune"]);
    assert!(c.steps.iter().all(|s| s.unknown == deep), "{:?}", c.steps);

    let text = basefit::plan::coverage::coverage_text(&c);
    assert!(
        text.contains("oldest runtime reaching the target: unknown; 3.2.0 reaches it, but undecided cells leave 3.1.0 open; raise --budget"),
        "{text}"
    );
    assert!(text.contains("3.1.0    >=72.7%   1 "), "{text}");
    assert!(text.contains("  undecided at 3.0.0: deep\n"), "{text}");
    let svg = coverage_svg(&c);
    check_balanced(&svg);
    assert!(svg.contains("<title>3.1.0: &gt;=72.7%</title>"), "{svg}");
    assert!(svg.contains("points are lower bounds"), "{svg}");

    // Where even an undecided entry resolving could not reach the target, the miss is a fact.
    let c = deep_coverage(0.9);
    assert_eq!(c.target_unknown_at, Vec::<String>::new());
    let text = basefit::plan::coverage::coverage_text(&c);
    assert!(
        text.contains("no candidate runtime reaches the target"),
        "{text}"
    );
    // And where the oldest runtime reaches the target whatever is undecided, it is named.
    let c = deep_coverage(0.5);
    assert_eq!(c.oldest_reaching_target.as_deref(), Some("3.0.0"));
}

/// The demo at a budget of 6 leaves 8 entries undecided on deb-2.4 (as `plan --budget 6`
/// counts them): `imageplan` counts them per runtime, does not claim that no runtime reaches
/// the target, and lists no undecided entry as a drop-out (brolga-cli and mulga-schema are
/// undecided at 3.0.5 and resolve at 3.1.2).
#[test]
fn imageplan_counts_undecided_cells_instead_of_calling_them_failures() {
    let mut args: Vec<&str> = vec![
        "imageplan",
        "--quiet",
        "--image",
        "deb-2.4",
        "--budget",
        "6",
    ];
    args.extend(common::DEMO);
    let (code, text, stderr) = common::run_basefit(&args);
    assert!(code < 2, "{stderr}");
    assert!(!text.contains("no candidate runtime reaches"), "{text}");
    assert!(
        text.contains(
            "whether any candidate runtime reaches the target is unknown: undecided cells leave 2.4.9, 2.6.3, 2.8.1, 3.0.5, 3.1.2, 3.2.0 open; raise --budget"
        ),
        "{text}"
    );
    let row = text.lines().find(|l| l.starts_with("3.0.5 ")).unwrap();
    assert!(row.contains(" 8 "), "{row}");
    assert!(
        !row.contains("brolga-cli") && !row.contains("mulga-schema"),
        "{row}"
    );

    args.extend(["--format", "json"]);
    let (_, json, _) = common::run_basefit(&args);
    let json: serde_json::Value = serde_json::from_str(&json).unwrap();
    let c = &json["coverage"][0];
    assert_eq!(c["points"][0]["undecided"], 8);
    assert!(c["points"][0]["reaches_target"].is_null());
    assert!(c["oldest_reaching_target"].is_null());
    assert_eq!(c["target_unknown_at"].as_array().unwrap().len(), 6);
    let step = &c["steps"][3];
    assert_eq!(step["older"], "3.0.5");
    assert!(
        step["unknown"]
            .as_array()
            .unwrap()
            .contains(&serde_json::json!("brolga-cli")),
        "{step}"
    );
}

/// The table's headers say which way a row compares with its neighbour: on the 3.0.0 row,
/// brine (which needs 3.1) is one that upgrading to 3.1.0 gains, and on the 3.1.0 row dune
/// (below 3.2 only) one that upgrading to 3.2.0 loses. Bare "drop out (vs next newer)" was
/// read the other way round by a reader planning an upgrade.
#[test]
fn coverage_table_headers_say_which_way_a_row_compares() {
    let text = basefit::plan::coverage::coverage_text(&coverage_of(0.95));
    let header = text.lines().nth(1).unwrap();
    let columns: Vec<&str> = header
        .split("  ")
        .map(str::trim)
        .filter(|c| !c.is_empty())
        .collect();
    assert_eq!(
        columns,
        [
            "runtime",
            "coverage",
            "undecided",
            "drop out here (resolve at next newer)",
            "come in here (fail at next newer)"
        ],
        "{text}"
    );
    let row = |v: &str| text.lines().find(|l| l.starts_with(v)).unwrap().to_string();
    assert!(row("3.0.0 ").contains(" brine "), "{text}");
    assert!(row("3.1.0 ").ends_with(" dune"), "{text}");
}

/// The release that fails may lie below the entry: `cand` alone installs (the solve takes
/// `lib` 2.0.0), but beside `kept` (y ^1) the joint solve must take `lib` 1.0.0, which needs
/// libxml2. The reason names that release, not only the entry, which `explain` shows
/// installing.
#[test]
fn a_joint_failure_below_the_entry_names_the_release_that_fails() {
    let registry = "packages:
  - {name: y, versions: [{version: 1.0.0}, {version: 2.0.0}]}
  - name: lib
    versions:
      - {version: 1.0.0, native: {libraries: [libxml2]}}
      - {version: 2.0.0, depends: [{name: y, req: '^2'}]}
  - {name: kept, versions: [{version: 1.0.0, depends: [{name: y, req: '^1'}]}]}
  - {name: cand, versions: [{version: 1.0.0, depends: [{name: lib, req: '*'}, {name: y, req: '*'}]}]}
";
    let p = native_preinstall(registry, JOINT_NATIVE_IMAGE, "priorities: [kept, cand]\n");
    assert_eq!(p.left_out.len(), 1, "{:?}", p.left_out);
    assert_eq!(
        p.left_out[0].reason,
        "with the kept packages the joint solve picks cand 1.0.0 with lib 1.0.0 (missing-system-library: add libxml2-dev), which certainly fails natively on i"
    );
}

/// `--no-native` plans from version solving alone. Every output that could be read as "this
/// image is fine" says so: `imageplan`'s text, JSON, YAML and charts carry the warning and
/// leave out the system-package section (which would read "nothing missing"), `explain` says
/// it on its verdict line and in its notice, and `syslibs`, which would have nothing to
/// report, refuses the flag. Coverage charts carry the notice in any case: they are pasted
/// into documentation on their own.
#[test]
fn no_native_outputs_say_native_needs_were_not_checked() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let mut args: Vec<String> = vec![
        "imageplan".into(),
        "--quiet".into(),
        "--image".into(),
        "deb-3.2-slim".into(),
    ];
    args.extend(common::DEMO.iter().map(|a| a.to_string()));
    let (code, text, stderr) = common::run_basefit(&args);
    assert!(code <= 1, "{stderr}");
    assert!(
        text.contains("deb-3.2-slim: lacks") || text.contains("build-essential"),
        "{text}"
    );
    let svg_checked = {
        let mut a = args.clone();
        a.extend(["--out".to_string(), out.to_str().unwrap().to_string()]);
        common::run_basefit(&a);
        std::fs::read_to_string(out.join("coverage.svg")).unwrap()
    };
    assert!(
        svg_checked.contains("Predicted from declared metadata only"),
        "{svg_checked}"
    );
    assert!(!svg_checked.contains("--no-native"), "{svg_checked}");
    check_balanced(&svg_checked);

    args.push("--no-native".into());
    let (code, text, stderr) = common::run_basefit(&args);
    assert!(code <= 1, "{stderr}");
    assert!(
        text.starts_with(basefit::plan::matrix::NATIVE_SKIPPED_NOTICE),
        "{text}"
    );
    assert!(
        text.contains("system packages per image: not checked (--no-native)"),
        "{text}"
    );
    // The coverage table's shares too, under its own heading: read alone, they would pass
    // for checked ones.
    assert!(
        text.contains(
            "version solving only (--no-native): shares leave out what the base image lacks"
        ),
        "{text}"
    );
    assert!(!text.contains("nothing missing"), "{text}");
    let mut json_args = args.clone();
    json_args.extend(["--format".to_string(), "json".to_string()]);
    let (_, json, _) = common::run_basefit(&json_args);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    assert_eq!(v["native_skipped"], true, "{json}");
    assert!(v.get("system").is_none(), "{json}");
    assert_eq!(v["coverage"][0]["native_skipped"], true, "{json}");
    assert!(
        v["notice"].as_str().unwrap().contains("--no-native"),
        "{json}"
    );
    args.extend(["--out".to_string(), out.to_str().unwrap().to_string()]);
    common::run_basefit(&args);
    let yaml = std::fs::read_to_string(out.join("imageplan.yaml")).unwrap();
    assert!(yaml.contains("native_skipped: true"), "{yaml}");
    let svg = std::fs::read_to_string(out.join("coverage.svg")).unwrap();
    check_balanced(&svg);
    assert!(svg.contains("Planned with --no-native, so"), "{svg}");

    // explain: the verdict line itself, and the notice in text and JSON.
    let explain = |extra: &[&str]| {
        let mut a: Vec<String> = ["explain", "quill-xml", "deb-3.2-slim", "--quiet"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        a.extend(common::DEMO.iter().map(|a| a.to_string()));
        a.extend(extra.iter().map(|s| s.to_string()));
        common::run_basefit(&a)
    };
    let (code, text, _) = explain(&[]);
    assert_eq!(code, 1, "{text}");
    let (code, text, _) = explain(&["--no-native"]);
    assert_eq!(code, 0, "{text}");
    assert!(
        text.starts_with(
            "quill-xml on deb-3.2-slim: installs (2.0.1) (version solving only: --no-native)"
        ),
        "{text}"
    );
    assert!(
        text.contains(basefit::plan::matrix::NATIVE_SKIPPED_NOTICE),
        "{text}"
    );
    let (_, json, _) = explain(&["--no-native", "--format", "json"]);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    assert_eq!(v["native_skipped"], true, "{json}");
    assert!(
        v["notice"]
            .as_str()
            .unwrap()
            .starts_with("Predicted from declared metadata only"),
        "{json}"
    );

    // syslibs has nothing to report without the native step.
    let mut a: Vec<String> = vec!["syslibs".into(), "--no-native".into()];
    a.extend(common::DEMO.iter().map(|a| a.to_string()));
    let (code, _, stderr) = common::run_basefit(&a);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("syslibs reports native needs, which --no-native skips"),
        "{stderr}"
    );
}

/// A kept entry needing a library the catalog names no package for lacks something nobody
/// can name: the pre-install set says so, with who needs it and how surely, rather than
/// reading as a manifest that needs nothing.
#[test]
fn a_manifest_needing_an_unmapped_library_says_so() {
    let registry = "packages:
- name: frobby
  versions:
  - {version: 1.0.0, native: {libraries: [libfrobnicate], files: [src/f.c]}}
- name: tidy
  versions:
  - {version: 1.0.0}
";
    let images = "images:\n- {id: deb, runtime: 3.1.0, family: debian, platform: linux/glibc/x86_64, toolchain: true}\n";
    let p = native_preinstall(registry, images, "priorities:\n- frobby\n- tidy\n");
    let kept: Vec<&str> = p.kept.iter().map(|k| k.name.as_str()).collect();
    assert_eq!(kept, ["frobby", "tidy"]);
    assert!(p.system_needs.is_empty());
    assert_eq!(p.unmapped_libraries.len(), 1, "{:?}", p.unmapped_libraries);
    let need = &p.unmapped_libraries[0];
    assert_eq!(need.library, "libfrobnicate");
    assert_eq!(need.confidence, Confidence::Certain);
    assert_eq!(need.needed_by.len(), 1);
    assert_eq!(need.needed_by[0].name, "frobby");
    let text = basefit::plan::preinstall::preinstall_text(&p);
    assert!(
        text.contains(
            "the manifest needs libraries the catalog names no package for (check the image by hand, or give them with --catalog): libfrobnicate (certain, for frobby 1.0.0)\n"
        ),
        "{text}"
    );
    let json = serde_json::to_value(&p).unwrap();
    assert_eq!(json["unmapped_libraries"][0]["library"], "libfrobnicate");
}

/// A system need of the manifest carries the strongest confidence of the entries that need
/// it (a shipped header: likely), not the first one's (a summary's word: possible).
#[test]
fn a_manifest_need_is_as_strong_as_its_strongest_needer() {
    let registry = r#"packages:
  - name: aa-mention
    summary: helper for zlib streams
    versions: [{version: "1.0.0"}]
  - name: zz-header
    versions: [{version: "1.0.0", native: {files: [include/zlib.h]}}]
"#;
    let images = "images:\n  - {id: deb, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64, toolchain: true}\n";
    let p = native_preinstall(
        registry,
        images,
        "priorities:\n  - aa-mention\n  - zz-header\n",
    );
    let need = p
        .system_needs
        .iter()
        .find(|n| n.package == "zlib1g-dev")
        .unwrap_or_else(|| panic!("{p:#?}"));
    assert_eq!(need.needed_by.len(), 2, "{p:#?}");
    assert_eq!(need.confidence, Confidence::Likely, "{p:#?}");
}

/// A joint solve that moves a kept entry onto a release that certainly needs the C++ compiler
/// a C-only image lacks leaves the candidate out as a toolchain failure.
#[test]
fn a_joint_move_onto_a_certain_cxx_need_leaves_the_candidate_out() {
    let registry = r#"packages:
  - name: anchor
    versions:
      - {version: "1.0.0", native: {libraries: [protobuf], files: [src/ext/codec.cc]}}
      - {version: "2.0.0", depends: [{name: xlib, req: "^2"}]}
  - name: cand
    versions: [{version: "1.0.0", depends: [{name: xlib, req: "^1"}]}]
  - name: xlib
    versions: [{version: "1.0.0"}, {version: "2.0.0"}]
"#;
    let images = "images:\n  - {id: c-only, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64, packages: [gcc, make, libc6-dev, libprotobuf-dev, libprotobuf32, libprotobuf-lite32]}\n";
    let p = native_preinstall(registry, images, "priorities:\n  - anchor\n  - cand\n");
    let kept: Vec<&str> = p.kept.iter().map(|k| k.name.as_str()).collect();
    assert_eq!(kept, ["anchor"], "{p:#?}");
    assert_eq!(p.left_out.len(), 1, "{p:#?}");
    assert!(p.left_out[0].reason.contains("missing-toolchain"), "{p:#?}");
}

/// Default coverage bases: one per family and platform, so a Debian and a RHEL image on the
/// same platform are both bases.
#[test]
fn default_bases_tell_families_apart_on_one_platform() {
    let text = "images:\n\
  - {id: deb, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64}\n\
  - {id: el, runtime: 3.1.5, family: rhel, platform: linux/glibc/x86_64}\n";
    let set = read_images_str("i.yaml", text, &mut basefit::load::diag::Ledger::default()).unwrap();
    let bases: Vec<&str> = basefit::plan::coverage::default_bases(&set.images)
        .iter()
        .map(|i| i.id.as_str())
        .collect();
    assert_eq!(bases, ["deb", "el"]);
}

/// An entry that does not install alone is left out with the whole explanation of its cell,
/// every step joined, down to the missing package: the first line alone ("the entry asks for
/// pkg-kestrel (1.0.0)") says nothing of why.
#[test]
fn an_entry_failing_alone_keeps_its_whole_explanation() {
    let registry = "packages:
- name: pkg-kestrel
  versions: [{version: 1.0.0, depends: [{name: pkg-ghost, req: ^1}]}]
";
    let inp = inputs(registry, ONE_IMAGE, "priorities: [pkg-kestrel]\n");
    let p = preinstall(
        &inp,
        &inp.images.images[0],
        &PlanOptions::default(),
        &SetCache::default(),
    );
    assert!(p.kept.is_empty());
    assert_eq!(p.left_out.len(), 1);
    assert_eq!(
        p.left_out[0].reason,
        "does not install alone (missing-from-registry): the entry asks for pkg-kestrel (1.0.0); pkg-kestrel 1.0.0 depends on pkg-ghost ^1; pkg-ghost is not in the registry; so pkg-kestrel cannot be installed on deb"
    );
}

/// Joint solves get the budget once per root: two entries, each a chain of three that fits
/// the budget alone, both fit jointly. Given one cell's budget, the joint solve would leave the
/// second out for running out of steps, not for any conflict.
#[test]
fn the_joint_solve_gets_the_budget_per_root() {
    let registry = "packages:
- {name: pkg-kestrel, versions: [{version: 1.0.0, depends: [{name: pkg-kestrel-a, req: ^1}]}]}
- {name: pkg-kestrel-a, versions: [{version: 1.0.0, depends: [{name: pkg-kestrel-b, req: ^1}]}]}
- {name: pkg-kestrel-b, versions: [{version: 1.0.0}]}
- {name: pkg-plover, versions: [{version: 1.0.0, depends: [{name: pkg-plover-a, req: ^1}]}]}
- {name: pkg-plover-a, versions: [{version: 1.0.0, depends: [{name: pkg-plover-b, req: ^1}]}]}
- {name: pkg-plover-b, versions: [{version: 1.0.0}]}
";
    let inp = inputs(
        registry,
        ONE_IMAGE,
        "priorities: [pkg-kestrel, pkg-plover]\n",
    );
    let options = PlanOptions {
        budget: 5,
        ..PlanOptions::default()
    };
    let p = preinstall(&inp, &inp.images.images[0], &options, &SetCache::default());
    let kept: Vec<&str> = p.kept.iter().map(|k| k.name.as_str()).collect();
    assert_eq!(kept, ["pkg-kestrel", "pkg-plover"]);
    assert!(p.left_out.is_empty(), "{:?}", p.left_out[0].reason);
}

/// `t` in two majors; `K` and `P` each fall back to a 0.5.0 (t ^1) that declares a library
/// the image lacks; `S` needs t ^1, so with it the joint solve moves both kept entries; `cand`
/// needs t ^1 too and names `K` only as a development dependency.
const JOINT_MOVES_REGISTRY: &str = r#"packages:
  - {name: t, versions: [{version: "1.0.0"}, {version: "2.0.0"}]}
  - name: K
    versions:
      - {version: "1.0.0", depends: [{name: t, req: "^2"}]}
      - {version: "0.5.0", depends: [{name: t, req: "^1"}], native: {libraries: [libxml2]}}
  - name: P
    versions:
      - {version: "1.0.0", depends: [{name: t, req: "^2"}]}
      - {version: "0.5.0", depends: [{name: t, req: "^1"}], native: {libraries: [libpng]}}
  - name: S
    versions:
      - {version: "1.0.0", depends: [{name: t, req: "^1"}]}
  - name: cand
    versions:
      - version: "1.0.0"
        depends: [{name: t, req: "^1"}, {name: K, req: "*", kind: development}]
"#;

/// The kept entries an addition moves onto native failures are named in priority order (the
/// order of the list the reader wrote), each with its release and what it lacks.
#[test]
fn kept_entries_a_candidate_moves_are_named_in_priority_order() {
    let p = native_preinstall(
        JOINT_MOVES_REGISTRY,
        JOINT_NATIVE_IMAGE,
        "priorities: [K, P, S]\n",
    );
    let kept: Vec<&str> = p.kept.iter().map(|k| k.name.as_str()).collect();
    assert_eq!(kept, ["K", "P"]);
    assert_eq!(p.left_out.len(), 1);
    assert_eq!(
        p.left_out[0].reason,
        "with it the joint solve moves kept packages to versions that certainly fail natively on i: K 0.5.0 (missing-system-library: add libxml2-dev), P 0.5.0 (missing-system-library: add libpng-dev)"
    );
}

/// A candidate's part of the joint solution is what its runtime dependencies reach: a kept
/// entry it names only as a development dependency is not installed with it, so the failing
/// release the joint solve moves that entry to is blamed as a moved kept package, not as
/// something the candidate pulls in ("picks cand 1.0.0 with K 0.5.0").
#[test]
fn a_development_dependency_is_not_part_of_the_candidates_joint_release() {
    let p = native_preinstall(
        JOINT_MOVES_REGISTRY,
        JOINT_NATIVE_IMAGE,
        "priorities: [K, cand]\n",
    );
    let kept: Vec<&str> = p.kept.iter().map(|k| k.name.as_str()).collect();
    assert_eq!(kept, ["K"]);
    assert_eq!(p.left_out.len(), 1);
    assert_eq!(
        p.left_out[0].reason,
        "with it the joint solve moves kept packages to versions that certainly fail natively on i: K 0.5.0 (missing-system-library: add libxml2-dev)"
    );
}

/// A kept entry the joint solve holds at another version than it installs alone says so,
/// in the text and as `alone` in JSON: the support matrix shows the version alone, and a
/// reader comparing it with the manifest took the difference for a mistake (an end-to-end
/// review). An entry at its own version carries no such field.
#[test]
fn a_kept_entry_held_at_another_version_than_alone_says_so() {
    let registry = "packages:
- name: base
  versions:
  - {version: 1.0.0}
  - {version: 2.0.0}
- name: anchor
  versions:
  - {version: 1.0.0, depends: [{name: base, req: '^1'}]}
- name: leaf
  versions:
  - {version: 1.0.0, depends: [{name: base, req: '^1'}]}
  - {version: 2.0.0, depends: [{name: base, req: '^2'}]}
";
    let images = "images:\n- {id: deb, runtime: 3.1.0, family: debian, platform: linux/glibc/x86_64, toolchain: true}\n";
    let p = native_preinstall(registry, images, "priorities:\n- anchor\n- leaf\n");
    let kept: Vec<(&str, &str, Option<&str>)> = p
        .kept
        .iter()
        .map(|k| (k.name.as_str(), k.version.as_str(), k.alone.as_deref()))
        .collect();
    assert_eq!(
        kept,
        [("anchor", "1.0.0", None), ("leaf", "1.0.0", Some("2.0.0"))]
    );
    let text = basefit::plan::preinstall::preinstall_text(&p);
    let lines: Vec<&str> = text.lines().filter(|l| l.starts_with("kept ")).collect();
    assert_eq!(
        lines,
        [
            "kept leaf at 1.0.0: alone it installs 2.0.0; the joint solve with the other kept entries holds it there"
        ],
        "{text}"
    );
    let json = serde_json::to_value(&p).unwrap();
    assert_eq!(json["kept"][1]["alone"], "2.0.0", "{json}");
    assert!(json["kept"][0].get("alone").is_none(), "{json}");
}

/// The chart's vertical axis runs up: a share of 100% is drawn at the plot's top (y 40, the
/// top margin) and 0% on the axis line (y 300), the target line between them where its share
/// puts it. From a mutation review, where a chart drawn upside down passed every test.
#[test]
fn svg_draws_higher_coverage_higher_up() {
    let point = |runtime: &str, share: f64| CoveragePoint {
        runtime: runtime.to_string(),
        share: Some(share),
        short_share: Some(1.0 - share),
        failing_share: Some(1.0 - share),
        resolves: Vec::new(),
        undecided: 0,
        undecided_entries: Vec::new(),
        reaches_target: Some(share >= 0.75),
    };
    let c = Coverage {
        base_image: "deb".to_string(),
        family: "debian".to_string(),
        platform: "linux/glibc/x86_64".to_string(),
        target: 0.75,
        points: vec![point("3.0.0", 0.0), point("3.1.0", 1.0)],
        oldest_reaching_target: Some("3.1.0".to_string()),
        target_unknown_at: Vec::new(),
        steps: Vec::new(),
        native_skipped: false,
    };
    let svg = coverage_svg(&c);
    let cy = |runtime: &str| {
        let at = svg.find(&format!("<title>{runtime}: ")).unwrap();
        let circle = &svg[svg[..at].rfind("<circle").unwrap()..at];
        let start = circle.find("cy=\"").unwrap() + 4;
        circle[start..start + circle[start..].find('"').unwrap()].to_string()
    };
    assert_eq!(cy("3.0.0"), "300.0", "{svg}");
    assert_eq!(cy("3.1.0"), "40.0", "{svg}");
    // 75% is a quarter of the 260-unit plot height below its top.
    assert!(
        svg.contains("<line class=\"target\" x1=\"60\" y1=\"105.0\""),
        "{svg}"
    );
}

/// Without `--base`, the first image of each (family, platform) is a base: two images of one
/// family on two platforms are two bases, and a second image of a pair is none. From a
/// mutation review, where keying by family alone passed every test.
#[test]
fn default_bases_are_one_per_family_and_platform() {
    let mut ledger = basefit::Ledger::default();
    let images = read_images_str(
        "i.yaml",
        "images:
- {id: deb-x86, runtime: 3.1.0, family: debian, platform: linux/glibc/x86_64}
- {id: deb-arm, runtime: 3.1.0, family: debian, platform: linux/glibc/aarch64}
- {id: deb-x86-new, runtime: 3.2.0, family: debian, platform: linux/glibc/x86_64}
- {id: alp, runtime: 3.1.0, family: alpine, platform: linux/musl/x86_64}
",
        &mut ledger,
    )
    .unwrap();
    let bases: Vec<&str> = basefit::plan::coverage::default_bases(&images.images)
        .iter()
        .map(|i| i.id.as_str())
        .collect();
    assert_eq!(bases, ["deb-x86", "deb-arm", "alp"]);
}

/// With every priority weight zero no runtime's verdict is open: there is no coverage to
/// decide, so `target_unknown_at` stays empty (the JSON and YAML documents carry it; listing
/// every runtime there would send the reader to raise `--budget` for nothing). From a
/// mutation review.
#[test]
fn zero_weights_leave_no_runtime_open() {
    let priorities = "priorities:
- {name: anchor, weight: 0}
- {name: brine, weight: 0}
";
    let inp = inputs(COVERAGE_REGISTRY, ONE_IMAGE, priorities);
    let c = coverage(
        &inp,
        &inp.images.images[0],
        &[v("3.0.0"), v("3.1.0")],
        0.9,
        &PlanOptions::default(),
        &SetCache::default(),
    );
    assert!(c.points.iter().all(|p| p.share.is_none()), "{c:?}");
    assert_eq!(c.target_unknown_at, Vec::<String>::new());
    assert_eq!(c.oldest_reaching_target, None);
}

/// The text report ends with the notice, once, after the pre-install manifests that readers
/// copy into an image build: it stood between the system packages and the manifests (from
/// an end-to-end review).
#[test]
fn the_text_report_ends_with_the_notice() {
    let notice = basefit::plan::matrix::NOTICE;
    for extra in [&[][..], &["--no-native"][..]] {
        let (code, stdout, stderr) = common::run_basefit(
            ["imageplan", "--quiet"]
                .into_iter()
                .chain(common::DEMO)
                .chain(extra.iter().copied()),
        );
        assert!(code <= 1, "{stderr}");
        assert!(stdout.trim_end().ends_with(notice), "{extra:?}: {stdout}");
        assert_eq!(stdout.matches(notice).count(), 1, "{extra:?}: {stdout}");
        let manifest = stdout
            .find("Pre-install set of")
            .unwrap_or_else(|| panic!("{stdout}"));
        assert!(manifest < stdout.find(notice).unwrap(), "{stdout}");
    }
}

/// An image named twice with `--image` is planned once: one coverage, one system-package
/// section and one pre-install set, the same document as naming it once (from a mutation
/// review of src/commands.rs, where planning it twice survived).
#[test]
fn an_image_named_twice_is_planned_once() {
    let run = |images: &[&str]| {
        let mut args = vec!["imageplan", "--quiet", "--format", "json"];
        for id in images {
            args.extend(["--image", id]);
        }
        args.extend(common::DEMO);
        let (code, stdout, stderr) = common::run_basefit(&args);
        assert!(code < 2, "{stderr}");
        stdout
    };
    let twice = run(&["deb-3.2", "deb-3.2"]);
    let json: serde_json::Value = serde_json::from_str(&twice).unwrap();
    assert_eq!(
        json["preinstall"].as_array().map(Vec::len),
        Some(1),
        "{twice}"
    );
    assert_eq!(
        json["system"]["images"].as_array().map(Vec::len),
        Some(1),
        "{twice}"
    );
    assert_eq!(twice, run(&["deb-3.2"]));
}
