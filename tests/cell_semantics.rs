//! What single cells predict and how they explain it: the pre-release flag's bounds, the
//! "newest release that resolves" hint, the cause given when a requirement on a published
//! package matches none of its versions, and which cause a cell reads when its releases fail in
//! different ways. A fictional runtime with invented package names.

mod common;

use basefit::load::{InputPaths, Inputs, load_inputs};
use basefit::plan::PlanOptions;
use basefit::plan::explain::{Direction, explain};
use basefit::solve::Cause;

const IMAGES: &str = "images:\n  - {id: deb, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64, toolchain: true}\n";

fn inputs(registry: &str, priorities: &str) -> Inputs {
    inputs_on(IMAGES, registry, priorities)
}

/// The cell of `package`, the one priority entry, planned from `registry` on [`IMAGES`]'s
/// image.
fn entry_cell(registry: &str, package: &str) -> basefit::plan::matrix::Cell {
    let inputs = inputs(registry, &format!("priorities: [{package}]\n"));
    explain(&inputs, package, "deb", &PlanOptions::default())
        .unwrap()
        .cell
}

fn inputs_on(images: &str, registry: &str, priorities: &str) -> Inputs {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("r.yaml"), registry).unwrap();
    std::fs::write(dir.path().join("i.yaml"), images).unwrap();
    std::fs::write(dir.path().join("p.yaml"), priorities).unwrap();
    load_inputs(&InputPaths {
        registry: vec![dir.path().join("r.yaml")],
        images: Some(dir.path().join("i.yaml")),
        priorities: Some(dir.path().join("p.yaml")),
        ..Default::default()
    })
    .unwrap()
}

/// The hint names a release that resolves when pinned alone. Build metadata is ignored by
/// requirement matching (Semantic Versioning 2.0.0, section 10; the semver crate's
/// VersionReq::matches), so `=2.3.0+2` would also admit 2.3.0+1, and `=1.1.0` with
/// pre-releases admitted takes 1.1.0-rc.1: neither may stand in for the release it names.
#[test]
fn newest_resolving_release_hint_names_a_release_that_resolves() {
    let registry = r#"packages:
  - name: tern
    versions:
      - {version: "2.3.0+1"}
      - {version: "2.3.0+2", runtime: ">=4"}
      - {version: "2.4.0", runtime: ">=4"}
  - name: heron
    versions:
      - {version: "1.1.0-rc.1"}
      - {version: "1.1.0", runtime: ">=4"}
      - {version: "1.2.0", runtime: ">=4"}
"#;
    let inputs = inputs(
        registry,
        "priorities:\n  - {name: tern, req: \">=2.4\"}\n  - {name: heron, req: \">=1.2\"}\n",
    );
    let options = PlanOptions::default();
    let tern = explain(&inputs, "tern", "deb", &options).unwrap();
    assert_eq!(tern.cell.cause, Some(Cause::RuntimeTooOld));
    let found = |e: &basefit::plan::explain::Explanation| {
        e.release_hint
            .as_ref()
            .and_then(|h| h.resolves())
            .map(|t| t.version.clone())
    };
    assert_eq!(found(&tern).as_deref(), Some("2.3.0+1"));
    let heron = explain(&inputs, "heron", "deb", &options).unwrap();
    assert_eq!(found(&heron).as_deref(), Some("1.1.0-rc.1"));
}

/// `prerelease: true` admits a pre-release only where the requirement's comparators hold for
/// it by precedence: 1.1.0-rc.1 is below 1.1.0 (Semantic Versioning 2.0.0, section 11), so
/// neither `>=1.1.0` nor `=1.1.0` admits it; `>=1.0.5` does, and `<1.1.0` does not (see
/// `holds_by_precedence`).
#[test]
fn prerelease_flag_keeps_the_requirements_lower_bound() {
    let registry = r#"packages:
  - name: tern
    versions: [{version: "1.0.0"}, {version: "1.1.0-rc.1"}]
"#;
    let run = |req: &str| {
        let prio = format!("priorities:\n  - {{name: tern, req: \"{req}\", prerelease: true}}\n");
        let inputs = inputs(registry, &prio);
        let e = explain(&inputs, "tern", "deb", &PlanOptions::default()).unwrap();
        e.cell.root_version
    };
    assert_eq!(run(">=1.1.0"), None);
    assert_eq!(run("=1.1.0"), None);
    assert_eq!(run(">=1.0.5").as_deref(), Some("1.1.0-rc.1"));
    // A full upper bound leaves out its own release candidates, as `~1.0` does.
    assert_eq!(run("<1.1.0").as_deref(), Some("1.0.0"));
    assert_eq!(run("~1.0").as_deref(), Some("1.0.0"));
    assert_eq!(run(">=1.0.0").as_deref(), Some("1.1.0-rc.1"));
}

/// A requirement on a published package that none of its versions meets is a dependency
/// conflict, and says so; `missing-from-registry` is kept for names the registry lacks
/// (README, "What the outcomes mean"; demo-data/STORIES.md).
#[test]
fn unmatched_requirement_on_a_published_package_is_not_missing() {
    let registry = r#"packages:
  - name: bittern
    versions: [{version: "1.0.0"}, {version: "1.4.0"}, {version: "2.0.0"}]
  - name: r-disjoint
    versions: [{version: "1.0.0", depends: [{name: bittern, req: "^1"}, {name: bittern, req: "^2"}]}]
  - name: r-high
    versions: [{version: "1.0.0", depends: [{name: bittern, req: "^3"}]}]
  - name: r-ghost
    versions: [{version: "1.0.0", depends: [{name: phantom, req: "^1"}]}]
"#;
    let inputs = inputs(registry, "priorities: [r-disjoint, r-high, r-ghost]\n");
    let options = PlanOptions::default();
    let cell = |name: &str| explain(&inputs, name, "deb", &options).unwrap().cell;

    let disjoint = cell("r-disjoint");
    assert_eq!(disjoint.cause, Some(Cause::DependencyConflict));
    assert!(
        disjoint
            .explanation
            .iter()
            .any(|l| l == "bittern has no published version matching the requirement"),
        "{:?}",
        disjoint.explanation
    );

    let high = cell("r-high");
    assert_eq!(high.cause, Some(Cause::DependencyConflict));
    let reasons: Vec<&str> = high.blockers.iter().map(|b| b.reason.as_str()).collect();
    assert_eq!(
        reasons,
        ["bittern (wanted ^3) has no published version matching the requirement"]
    );

    // The entry's own requirement matching nothing reads as that, not as a package without
    // releases.
    let pinned = crate::inputs(registry, "priorities:\n  - {name: bittern, req: \">=9\"}\n");
    let own = explain(&pinned, "bittern", "deb", &options).unwrap().cell;
    assert_eq!(own.cause, Some(Cause::DependencyConflict));
    assert_eq!(
        own.explanation[0],
        "the entry asks for bittern >=9 (no release the entry may take)"
    );

    let ghost = cell("r-ghost");
    assert_eq!(ghost.cause, Some(Cause::MissingFromRegistry));
    let reasons: Vec<&str> = ghost.blockers.iter().map(|b| b.reason.as_str()).collect();
    assert_eq!(
        reasons,
        ["phantom (wanted ^1) is missing from the registry"]
    );
}

/// When the cause is read off the root's own releases, its blockers are the dependencies that
/// fail the same way; the cell's one-line reason is built from them, so one that fails
/// otherwise would contradict the cause. quarry 2.0.0 needs a newer runtime and 1.0.0 a
/// version of bittern nobody published: the cell reads runtime-too-old (a newer runtime
/// installs 2.0.0), and its lines, not a blocker, say what stops 1.0.0.
#[test]
fn blockers_of_a_cause_read_off_the_root_fail_the_same_way() {
    let registry = r#"packages:
  - name: quarry
    versions:
      - {version: "1.0.0", depends: [{name: bittern, req: "^9"}]}
      - {version: "2.0.0", runtime: ">=4.0"}
  - name: bittern
    versions: [{version: "1.0.0"}]
"#;
    let cell = entry_cell(registry, "quarry");
    assert_eq!(cell.cause, Some(Cause::RuntimeTooOld));
    assert!(cell.blockers.is_empty(), "{:?}", cell.blockers);
    assert!(
        cell.explanation
            .iter()
            .any(|l| l == "bittern has no published version matching the requirement"),
        "{:?}",
        cell.explanation
    );
}

/// Three images that differ in their runtime only, the cell's at 3.5.0.
const RUNTIMES: &str = "images:
  - {id: old, runtime: 2.9.0, family: debian, platform: linux/glibc/x86_64, toolchain: true}
  - {id: mid, runtime: 3.5.0, family: debian, platform: linux/glibc/x86_64, toolchain: true}
  - {id: new, runtime: 4.1.0, family: debian, platform: linux/glibc/x86_64, toolchain: true}
";

/// Root releases the image refuses, beside older or newer ones that need a package the registry
/// lacks: when one refused release asks for nothing missing, an image with another runtime or
/// platform installs it, so the cell names the image's refusal, not the missing name that only
/// blocks the releases left over. Its blockers and lines must not contradict that cause.
#[test]
fn a_release_another_image_would_install_outranks_a_missing_dependency_of_the_others() {
    let registry = r#"packages:
  - name: quill
    versions:
      - {version: "1.0.0", runtime: ">=3.0", depends: [{name: nonesuch, req: "*"}]}
      - {version: "2.0.0", runtime: ">=4.0"}
  - name: quire
    versions:
      - {version: "1.0.0", runtime: "<3.0"}
      - {version: "2.0.0", depends: [{name: nonesuch, req: "^1"}]}
  - name: quoll
    versions:
      - {version: "1.0.0", depends: [{name: nonesuch, req: "*"}]}
      - {version: "2.0.0", builds: {source: false, prebuilt: [linux/musl/x86_64]}}
  - name: quasar
    versions:
      - {version: "1.0.0", depends: [{name: nonesuch, req: "*"}]}
      - {version: "2.0.0", depends: [{name: reedbuck, req: "*"}]}
      - {version: "3.0.0", runtime: ">=4.0"}
  - name: reedbuck
    versions:
      - {version: "1.0.0", runtime: ">=4.0"}
"#;
    let inputs = inputs_on(
        RUNTIMES,
        registry,
        "priorities: [quill, quire, quoll, quasar]\n",
    );
    let options = PlanOptions::default();
    let on_mid = |name: &str| explain(&inputs, name, "mid", &options).unwrap();

    // quill 2.0.0 needs runtime 4.0; 1.0.0, the one the image admits, needs nonesuch.
    let quill = on_mid("quill");
    assert_eq!(quill.cell.cause, Some(Cause::RuntimeTooOld));
    assert!(quill.cell.blockers.is_empty(), "{:?}", quill.cell.blockers);
    let lines = &quill.cell.explanation;
    assert!(
        lines.iter().any(|l| {
            l.starts_with("no version of quill in 2.0.0 can be used here:")
                && l.contains("1 version needs a newer runtime (>=4.0; the image has 3.5.0)")
        }) && lines.iter().any(|l| l == "nonesuch is not in the registry"),
        "{lines:?}"
    );
    // The hint, which solves again at each declared runtime, agrees.
    let hint = quill.runtime_hint.as_ref().unwrap().resolves_at().unwrap();
    assert_eq!(hint.version, "4.1.0");
    let on_new = explain(&inputs, "quill", "new", &options).unwrap().cell;
    assert_eq!(on_new.root_version.as_deref(), Some("2.0.0"));

    // The mirror: the newest release needs nonesuch, the older one an older runtime.
    let quire = on_mid("quire");
    assert_eq!(quire.cell.cause, Some(Cause::RuntimeTooNew));
    assert!(quire.cell.blockers.is_empty(), "{:?}", quire.cell.blockers);
    let hint = quire.runtime_hint.as_ref().unwrap().resolves_at().unwrap();
    assert_eq!(hint.version, "2.9.0");

    // The platform is the image's too: quoll 2.0.0 is built for musl only.
    assert_eq!(on_mid("quoll").cell.cause, Some(Cause::NoBuildForPlatform));

    // A dependency that fails the same way as the root stays a blocker; the missing name,
    // which only blocks the oldest release, does not.
    let quasar = on_mid("quasar").cell;
    assert_eq!(quasar.cause, Some(Cause::RuntimeTooOld));
    let reasons: Vec<&str> = quasar.blockers.iter().map(|b| b.reason.as_str()).collect();
    assert_eq!(reasons, ["reedbuck needs a newer runtime"]);
}

/// `missing-from-registry` stays where no image would help: the entry's package is missing, a
/// yanked release is the only other one, every release needs a missing package, or the
/// releases the image refuses ask for a missing package or an unmet version themselves.
#[test]
fn a_missing_name_stays_the_cause_where_no_image_would_lift_the_failure() {
    let registry = r#"packages:
  - name: quell
    versions:
      - {version: "1.0.0", depends: [{name: nonesuch, req: "*"}]}
      - {version: "2.0.0", runtime: ">=4.0", depends: [{name: nonesuch, req: "*"}]}
  - name: quern
    versions:
      - {version: "1.0.0", depends: [{name: nonesuch, req: "*"}]}
      - {version: "2.0.0", runtime: ">=4.0", depends: [{name: bittern, req: "^9"}]}
      - {version: "2.1.0", runtime: ">=4.0", depends: [{name: bittern, req: "^2"}]}
  - name: bittern
    versions:
      - {version: "1.0.0"}
      - {version: "2.0.0", yanked: true}
  - name: quince
    versions:
      - {version: "1.0.0", depends: [{name: nonesuch, req: "*"}]}
      - {version: "2.0.0", yanked: true}
  - name: quaff
    versions:
      - {version: "1.0.0", depends: [{name: nonesuch, req: "*"}]}
      - {version: "2.0.0", depends: [{name: nonesuch, req: "^2"}]}
  - name: wombat-top
    versions:
      - {version: "1.0.0", depends: [{name: nonesuch, req: "*"}]}
      - {version: "2.0.0", runtime: ">=4.0", depends: [{name: wombat-mid, req: "^1"}]}
  - name: wombat-mid
    versions:
      - {version: "1.0.0", depends: [{name: nonesuch, req: "^1"}]}
      - {version: "1.1.0", yanked: true}
  - name: quokka
    versions:
      - {version: "1.0.0", depends: [{name: nonesuch, req: "*"}]}
      - {version: "2.0.0", builds: {source: false, prebuilt: []}, depends: [{name: wombat-mid, req: "^1"}]}
  - name: bilby-root
    versions:
      - {version: "1.0.0", depends: [{name: nonesuch, req: "*"}]}
      - {version: "2.0.0", runtime: ">=4.0", depends: [{name: bilby-a, req: "*"}]}
      - {version: "3.0.0", runtime: ">=4.0", depends: [{name: bilby-b, req: "*"}]}
  - name: bilby-swapped
    versions:
      - {version: "1.0.0", depends: [{name: nonesuch, req: "*"}]}
      - {version: "2.0.0", runtime: ">=4.0", depends: [{name: bilby-b, req: "*"}]}
      - {version: "3.0.0", runtime: ">=4.0", depends: [{name: bilby-a, req: "*"}]}
  - name: bilby-a
    versions:
      - {version: "1.0.0", depends: [{name: bilby-b, req: "*"}, {name: nonesuch, req: "*"}]}
  - name: bilby-b
    versions:
      - {version: "1.0.0", depends: [{name: bilby-a, req: "*"}]}
"#;
    // wombat-top 2.0.0 and quokka 2.0.0 are refused by the image, but their dependency leads
    // only to the missing name (its other release is yanked): no image installs them either.
    // bilby-a and bilby-b depend on each other, and bilby-a on the missing name too: the
    // cycle supplies nothing, whichever of them a walk meets first.
    let entries = [
        "bilby-root",
        "bilby-swapped",
        "quell",
        "quern",
        "quince",
        "quaff",
        "quagga",
        "wombat-top",
        "quokka",
    ];
    let inputs = inputs_on(
        RUNTIMES,
        registry,
        &format!("priorities: [{}]\n", entries.join(", ")),
    );
    let options = PlanOptions::default();
    for name in entries {
        let cell = explain(&inputs, name, "mid", &options).unwrap().cell;
        assert_eq!(cell.cause, Some(Cause::MissingFromRegistry), "{name}");
        if name != "quagga" {
            let reasons: Vec<&str> = cell.blockers.iter().map(|b| b.reason.as_str()).collect();
            assert!(
                reasons.iter().any(|r| r.starts_with("nonesuch ")),
                "{name}: {reasons:?}"
            );
        }
    }
}

/// Only the root's own refusals are weighed against a missing name: a dependency's refusal is
/// the first blocker the solver met for the releases that need it, and says nothing of the
/// others. quiver 2.0.0 needs reedbuck, which needs runtime 4.0; the cell reads the missing
/// name, and the runtime hint, which solves again, shows that runtime 4.1.0 installs it.
#[test]
fn a_dependency_refused_by_the_image_leaves_the_missing_name_as_the_cause() {
    let registry = r#"packages:
  - name: quiver
    versions:
      - {version: "1.0.0", depends: [{name: nonesuch, req: "*"}]}
      - {version: "2.0.0", depends: [{name: reedbuck, req: "*"}]}
  - name: reedbuck
    versions:
      - {version: "1.0.0", runtime: ">=4.0"}
"#;
    let inputs = inputs_on(RUNTIMES, registry, "priorities: [quiver]\n");
    let e = explain(&inputs, "quiver", "mid", &PlanOptions::default()).unwrap();
    assert_eq!(e.cell.cause, Some(Cause::MissingFromRegistry));
    let hint = e.runtime_hint.as_ref().unwrap().resolves_at().unwrap();
    assert_eq!(hint.version, "4.1.0");
}

/// pubgrub merges what several releases require into one fact; the explanation must keep
/// apart "each release needs one of these" (or) from "one release needs all of these" (and).
#[test]
fn requirements_of_different_releases_read_as_alternatives() {
    let registry = r#"packages:
  - name: either
    versions:
      - {version: "1.0.0", depends: [{name: base, req: "^1"}]}
      - {version: "2.0.0", depends: [{name: base, req: "^2"}]}
  - name: both
    versions:
      - {version: "1.0.0", depends: [{name: base, req: "^1"}, {name: base, req: "^2"}]}
  - name: base
    versions:
      - {version: "3.0.0"}
"#;
    let inputs = inputs(registry, "priorities:\n  - either\n  - both\n");
    let options = PlanOptions::default();
    let lines = |name: &str| {
        explain(&inputs, name, "deb", &options)
            .unwrap()
            .cell
            .explanation
    };
    let either = lines("either");
    assert!(
        either.iter().any(|l| l.contains("base ^1 or ^2"))
            && !either.iter().any(|l| l.contains("^1 and ^2")),
        "{either:?}"
    );
    let both = lines("both");
    assert!(both.iter().any(|l| l.contains("^1 and ^2")), "{both:?}");
}

/// A blocker's reason names the versions that fail when others of the package suit the image
/// (an entry can install its older line while blocking entries that need the newer one), and
/// says nothing of published versions for a package the registry lacks.
#[test]
fn blocker_reasons_name_the_versions_that_fail_and_no_versions_of_a_missing_package() {
    let registry = r#"packages:
  - name: hub
    versions:
      - {version: "1.4.0"}
      - {version: "2.0.0", runtime: ">=4"}
      - {version: "2.1.0", runtime: ">=4"}
  - name: rider
    versions:
      - {version: "1.0.0", depends: [{name: hub, req: "^2"}]}
  - name: seeker
    versions:
      - {version: "1.0.0", depends: [{name: ghost, req: "^4.2"}]}
      - {version: "1.1.0", depends: [{name: ghost, req: "^4.5"}]}
"#;
    let inputs = inputs(registry, "priorities:\n  - hub\n  - rider\n  - seeker\n");
    let options = PlanOptions::default();
    let blocker = |name: &str| {
        let e = explain(&inputs, name, "deb", &options).unwrap();
        assert_eq!(e.cell.blockers.len(), 1, "{:?}", e.cell.blockers);
        e.cell.blockers[0].reason.clone()
    };
    assert_eq!(blocker("rider"), "hub 2.0.0 to 2.1.0 needs a newer runtime");
    assert_eq!(
        blocker("seeker"),
        "ghost (wanted ^4.2 or ^4.5) is missing from the registry"
    );
}

/// A shared blocker lists first the reason given by the most priority weight: text shows only
/// a few, and they must be the ones that matter, not the first in alphabetical order.
#[test]
fn a_shared_blockers_heaviest_reason_comes_first() {
    let registry = r#"packages:
  - name: hub
    versions:
      - {version: "1.0.0"}
      - {version: "2.0.0", runtime: ">=4"}
      - {version: "3.0.0", runtime: ">=4"}
  - name: light
    versions:
      - {version: "1.0.0", depends: [{name: hub, req: "^2"}]}
  - name: heavy
    versions:
      - {version: "1.0.0", depends: [{name: hub, req: "^3"}]}
"#;
    let inputs = inputs(
        registry,
        "priorities:\n  - {name: light, weight: 1}\n  - {name: heavy, weight: 5}\n",
    );
    let matrix = basefit::plan::plan(&inputs, &PlanOptions::default());
    let blockers = basefit::plan::blockers::shared_blockers(&matrix, 5);
    let hub = blockers.iter().find(|b| b.package == "hub").unwrap();
    assert_eq!(
        hub.reasons,
        [
            "hub 3.0.0 needs a newer runtime",
            "hub 2.0.0 needs a newer runtime"
        ]
    );
}

/// The system-package advice counts as unblocked only cells that adding packages can unblock:
/// a cell that also needs a library the catalog has no package for stays at risk.
#[test]
fn advice_gains_leave_out_cells_no_package_can_unblock() {
    let registry = r#"packages:
  - name: parser
    versions: [{version: "1.0.0", native: {libraries: [libxml2]}}]
  - name: oddball
    versions: [{version: "1.0.0", native: {libraries: [libxml2, libnowhere-at-all]}}]
"#;
    let inputs = inputs(registry, "priorities:\n  - parser\n  - oddball\n");
    let matrix = basefit::plan::plan(&inputs, &PlanOptions::default());
    let report = basefit::plan::system::system_report(&inputs, &matrix);
    let deb = &report.images[0];
    // Both cells lack libxml2-dev; only parser's is unblocked by it.
    assert_eq!(deb.missing[0].needed_by, ["parser", "oddball"]);
    assert_eq!(deb.advice.len(), 1);
    assert_eq!(deb.advice[0].step.add, ["libxml2-dev"]);
    assert_eq!(deb.advice[0].step.gain, 1.0);
    assert_eq!(deb.beyond_advice, ["oddball"]);
    // Each step names what it unblocks; JSON carries the names, not positions in a list it
    // never shows.
    assert_eq!(deb.advice[0].unblocks, ["parser"]);
    let json = serde_json::to_value(&report).unwrap();
    let step = &json["images"][0]["advice"][0];
    assert_eq!(step["unblocks"], serde_json::json!(["parser"]));
    assert_eq!(step["add"], serde_json::json!(["libxml2-dev"]));
    assert!(step.get("unblocked").is_none(), "{step}");
}

/// A cell at risk only for a library the catalog cannot name lacks no system package, yet
/// `syslibs` must still list it: no addition helps it.
#[test]
fn a_cell_at_risk_only_for_an_unnamed_library_is_listed_beyond_advice() {
    // loner declares the library; vireo-quasar only names it (a `possible` need): neither
    // lacks a package the advice could add.
    let registry = r#"packages:
  - name: loner
    versions: [{version: "1.0.0", native: {libraries: [libnowhere-at-all]}}]
  - name: vireo-quasar
    versions: [{version: "1.0.0"}]
"#;
    let mut inputs = inputs(registry, "priorities:\n  - loner\n  - vireo-quasar\n");
    inputs
        .catalog
        .apply("test catalog", ALPINE_ONLY_CATALOG)
        .unwrap();
    let matrix = basefit::plan::plan(&inputs, &PlanOptions::default());
    for cell in &matrix.cells {
        assert_eq!(cell.outcome, basefit::plan::Outcome::AtRisk, "{cell:#?}");
        assert!(cell.missing_system_packages.is_empty(), "{cell:#?}");
    }
    let report = basefit::plan::system::system_report(&inputs, &matrix);
    let deb = &report.images[0];
    assert_eq!(deb.beyond_advice, ["loner", "vireo-quasar"]);
    assert!(deb.at_risk_after_advice.is_empty());
    assert!(deb.missing.is_empty() && deb.advice.is_empty());
    let text = basefit::report::text::system_text(&report);
    assert!(text.contains("still at risk whatever is added"), "{text}");
    assert!(text.contains(": loner"), "{text}");
}

/// The per-package weight in `syslibs` promises no more than the advice can gain: a cell no
/// addition unblocks still names the package it lacks, marked, with its weight shown apart.
#[test]
fn missing_package_weight_leaves_out_cells_beyond_advice() {
    let registry = r#"packages:
  - name: parser
    versions: [{version: "1.0.0", native: {libraries: [libxml2]}}]
  - name: oddball
    versions: [{version: "1.0.0", native: {libraries: [libxml2, libnowhere-at-all]}}]
  - name: stray
    versions: [{version: "1.0.0", native: {libraries: [libpng, libnowhere-at-all]}}]
"#;
    let inputs = inputs(
        registry,
        "priorities:\n  - {name: parser, weight: 1}\n  - {name: oddball, weight: 4}\n  - {name: stray, weight: 2}\n",
    );
    let matrix = basefit::plan::plan(&inputs, &PlanOptions::default());
    let report = basefit::plan::system::system_report(&inputs, &matrix);
    let deb = &report.images[0];
    let rows: Vec<(&str, f64, f64, &[String])> = deb
        .missing
        .iter()
        .map(|m| {
            (
                m.package.as_str(),
                m.weight,
                m.weight_beyond_advice,
                m.beyond_advice.as_slice(),
            )
        })
        .collect();
    // libxml2-dev unblocks parser alone; oddball's weight is counted apart. libpng-dev
    // unblocks nothing, yet stays listed: stray lacks it whatever else it lacks.
    assert_eq!(
        rows,
        [
            ("libxml2-dev", 1.0, 4.0, &["oddball".to_string()][..]),
            ("libpng-dev", 0.0, 2.0, &["stray".to_string()][..]),
        ]
    );
    assert_eq!(deb.missing[0].needed_by, ["parser", "oddball"]);
    assert_eq!(deb.beyond_advice, ["oddball", "stray"]);
    // The weights of the table add up to the advice's total.
    let table: f64 = deb.missing.iter().map(|m| m.weight).sum();
    assert_eq!(deb.advice.last().map(|s| s.step.cumulative), Some(table));

    let text = basefit::report::text::system_text(&report);
    assert!(
        text.contains("libxml2-dev [certain] weight 1.00 (+4.00 beyond advice): parser, oddball*"),
        "{text}"
    );
    assert!(
        text.contains("libpng-dev [certain] weight 0.00 (+2.00 beyond advice): stray*"),
        "{text}"
    );
}

/// A library the catalog knows only on Alpine: on the Debian image no package can be named for
/// it. Invented, as are its package names.
const ALPINE_ONLY_CATALOG: &str = r#"libraries:
  - id: quasar
    summary: invented library packaged for Alpine only
    aliases: [quasar]
    headers: [quasar.h]
    families:
      alpine: {dev: quasar-dev, runtime: quasar-libs, source: memory}
"#;

/// Only a `likely` or `certain` need of a library no package can be named for puts a cell
/// beyond advice. A `possible` one (the entry's name mentions the library) leaves the cell
/// counted in the advice and the table, named as possibly at risk after the additions: the
/// advice already counts cells whose missing packages rest on such a mention.
#[test]
fn a_possible_need_of_an_unnamed_library_keeps_the_cell_in_the_advice() {
    let registry = r#"packages:
  - name: parser
    versions: [{version: "1.0.0", native: {libraries: [libxml2]}}]
  - name: vireo-quasar
    versions: [{version: "1.0.0", native: {libraries: [libxml2]}}]
  - name: oddball
    versions: [{version: "1.0.0", native: {libraries: [libxml2], files: [include/quasar.h]}}]
"#;
    let mut inputs = inputs(
        registry,
        "priorities:\n  - {name: parser, weight: 1}\n  - {name: vireo-quasar, weight: 3}\n  - {name: oddball, weight: 4}\n",
    );
    inputs
        .catalog
        .apply("test catalog", ALPINE_ONLY_CATALOG)
        .unwrap();
    let matrix = basefit::plan::plan(&inputs, &PlanOptions::default());
    let report = basefit::plan::system::system_report(&inputs, &matrix);
    let deb = &report.images[0];
    let confidence = |package: &str| {
        let cell = matrix.cells.iter().find(|c| c.package == package).unwrap();
        cell.native_needs
            .iter()
            .find(|n| n.library.as_deref() == Some("quasar"))
            .map(|n| n.confidence)
    };
    use basefit::native::Confidence;
    assert_eq!(confidence("vireo-quasar"), Some(Confidence::Possible));
    assert_eq!(confidence("oddball"), Some(Confidence::Likely));

    assert_eq!(deb.beyond_advice, ["oddball"]);
    assert_eq!(deb.at_risk_after_advice, ["vireo-quasar"]);
    assert_eq!(deb.advice.len(), 1);
    assert_eq!(deb.advice[0].step.add, ["libxml2-dev"]);
    assert_eq!(deb.advice[0].step.gain, 4.0);
    assert_eq!(deb.missing[0].weight, 4.0);
    assert_eq!(deb.missing[0].weight_beyond_advice, 4.0);

    let text = basefit::report::text::system_text(&report);
    assert!(
        text.contains("weight 4.00 (+4.00 beyond advice): parser, vireo-quasar?, oddball*"),
        "{text}"
    );
    assert!(
        text.contains("may stay at risk after the additions") && text.contains(": vireo-quasar\n"),
        "{text}"
    );
}

/// A yanked newest release does not make the cause "only yanked or pre-release versions"
/// when an older, unyanked release is there and fails for another reason.
#[test]
fn a_yanked_newest_release_does_not_hide_why_the_older_ones_fail() {
    let registry = r#"packages:
  - name: plover
    versions:
      - {version: "1.0.0", depends: [{name: godwit, req: ">=5"}]}
      - {version: "2.0.0", yanked: true}
  - name: godwit
    versions: [{version: "1.0.0"}]
"#;
    let planned = inputs(registry, "priorities:\n  - plover\n");
    let matrix = basefit::plan::plan(&planned, &PlanOptions::default());
    let cell = &matrix.cells[0];
    assert_eq!(cell.cause, Some(Cause::DependencyConflict), "{cell:#?}");
    assert!(
        cell.blockers.iter().any(|b| b.package == "godwit"),
        "{cell:#?}"
    );
    // With nothing else tried, the yank is the whole story.
    let registry = r#"packages:
  - name: plover
    versions:
      - {version: "1.0.0", yanked: true}
      - {version: "2.0.0-rc.1"}
"#;
    let planned = inputs(registry, "priorities:\n  - plover\n");
    let matrix = basefit::plan::plan(&planned, &PlanOptions::default());
    assert_eq!(
        matrix.cells[0].cause,
        Some(Cause::OnlyYankedOrPrerelease),
        "{:#?}",
        matrix.cells[0]
    );
}

/// Each missing system package carries the confidence of the needs that ask for it, not the
/// cell's strongest need of any library.
#[test]
fn a_missing_package_is_as_certain_as_the_needs_that_name_it() {
    let registry = r#"packages:
  - name: parser
    summary: draws libpng thumbnails of its trees
    versions: [{version: "1.0.0", native: {libraries: [libxml2]}}]
"#;
    let inputs = inputs(registry, "priorities:\n  - parser\n");
    let matrix = basefit::plan::plan(&inputs, &PlanOptions::default());
    let report = basefit::plan::system::system_report(&inputs, &matrix);
    let rows: Vec<(&str, basefit::native::Confidence)> = report.images[0]
        .missing
        .iter()
        .map(|m| (m.package.as_str(), m.strongest))
        .collect();
    use basefit::native::Confidence::{Certain, Possible};
    assert_eq!(
        rows,
        [("libpng-dev", Possible), ("libxml2-dev", Certain)],
        "{:#?}",
        matrix.cells[0]
    );

    // A prebuilt release's certain need asks for the runtime package alone: the compiler and
    // the development package are wanted only on the summary's say-so.
    let registry = r#"packages:
  - name: possum-app
    summary: helper for zlib streams
    versions: [{version: "1.0.0", depends: [{name: possum-bin, req: "^1"}]}]
  - name: possum-bin
    versions:
      - version: "1.0.0"
        builds: {source: false, prebuilt: [linux/glibc/x86_64]}
        native: {libraries: [zlib]}
"#;
    let bare = "images:\n  - {id: bare, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64, packages: [ca-certificates]}\n";
    let inputs = inputs_on(bare, registry, "priorities:\n  - possum-app\n");
    let matrix = basefit::plan::plan(&inputs, &PlanOptions::default());
    let report = basefit::plan::system::system_report(&inputs, &matrix);
    let mut rows: Vec<(&str, basefit::native::Confidence)> = report.images[0]
        .missing
        .iter()
        .map(|m| (m.package.as_str(), m.strongest))
        .collect();
    rows.sort();
    assert_eq!(
        rows,
        [
            ("build-essential", Possible),
            ("zlib1g", Certain),
            ("zlib1g-dev", Possible)
        ],
        "{:#?}",
        matrix.cells[0]
    );
}

/// A dependency cycle that needs nothing outside itself can be supplied: a release the image
/// refuses that depends on it is one another runtime would let the solver try.
#[test]
fn a_refused_release_over_a_closed_dependency_cycle_outranks_a_missing_name() {
    let registry = r#"packages:
  - name: cycler
    versions:
      - {version: "1.0.0", depends: [{name: nonesuch, req: "*"}]}
      - {version: "2.0.0", runtime: ">=4.0", depends: [{name: loop-a, req: "*"}]}
  - name: loop-a
    versions: [{version: "1.0.0", depends: [{name: loop-b, req: "*"}]}]
  - name: loop-b
    versions: [{version: "1.0.0", depends: [{name: loop-a, req: "*"}]}]
"#;
    let inputs = inputs_on(RUNTIMES, registry, "priorities: [cycler]\n");
    let cell = explain(&inputs, "cycler", "mid", &PlanOptions::default())
        .unwrap()
        .cell;
    assert_eq!(cell.cause, Some(Cause::RuntimeTooOld), "{cell:#?}");
}

/// Yanked releases are never tried as pins, so a package with one other release must not
/// be said to have only that one: a reader would not look at the yanked ones.
#[test]
fn the_release_hint_does_not_call_a_release_beside_yanked_ones_the_only_one() {
    let registry = r#"packages:
  - name: quokka
    versions:
      - {version: "0.9.0", runtime: ">=9"}
      - {version: "1.0.0", runtime: ">=1", yanked: true}
  - name: numbat
    versions:
      - {version: "0.9.0", runtime: ">=9"}
"#;
    let inputs = inputs(registry, "priorities: [quokka, numbat]\n");
    let options = PlanOptions::default();
    let text = |name: &str| {
        basefit::report::text::explain_text(&explain(&inputs, name, "deb", &options).unwrap())
    };
    let quokka = text("quokka");
    assert!(
        quokka.contains("its only release that is not yanked does not resolve on this image"),
        "{quokka}"
    );
    let numbat = text("numbat");
    assert!(
        numbat.contains("its only release does not resolve on this image"),
        "{numbat}"
    );
}

/// A package whose every version record was left out (here `version: banana`) was explained
/// as having "no published version matching the requirement", though the snapshot did
/// publish one: it could not be read. Both as the entry and as a dependency the cell now says
/// so and points at `check`; the cause stays dependency-conflict (no other fits better: the
/// name is in the registry, and nothing about the image is at fault). The YAML and bulk
/// loaders count the records alike.
#[test]
fn a_package_whose_versions_were_all_left_out_has_no_usable_version() {
    let registry = r#"packages:
  - name: avocet
    versions: [{version: "1.0.0", depends: [{name: bunting, req: "^1"}]}]
  - name: bunting
    versions: [{version: banana}, {version: "1.0.0", runtime: "oops"}]
"#;
    let inputs = inputs(registry, "priorities: [avocet, bunting]\n");
    let options = PlanOptions::default();
    let cell = |name: &str| explain(&inputs, name, "deb", &options).unwrap().cell;
    let why = "has no usable version: its 2 version records were left out as unusable (see \
               `basefit check`)";

    let avocet = cell("avocet");
    assert_eq!(avocet.cause, Some(Cause::DependencyConflict));
    assert!(
        avocet.explanation.contains(&format!("bunting {why}")),
        "{:?}",
        avocet.explanation
    );
    let reasons: Vec<&str> = avocet.blockers.iter().map(|b| b.reason.as_str()).collect();
    assert_eq!(reasons, [format!("bunting (wanted ^1) {why}")]);

    let bunting = cell("bunting");
    assert_eq!(bunting.cause, Some(Cause::DependencyConflict));
    assert_eq!(
        bunting.explanation,
        [
            "the entry asks for bunting (no usable version)".to_string(),
            format!("bunting {why}"),
            "so bunting cannot be installed on deb".to_string(),
        ]
    );

    // The same dump in the bulk format: one unreadable version row.
    let dir = tempfile::tempdir().unwrap();
    let (v, d) = (dir.path().join("v.csv"), dir.path().join("d.csv"));
    std::fs::write(&v, "package,version\navocet,1.0.0\nbunting,banana\n").unwrap();
    std::fs::write(
        &d,
        "package,version,dependency,req\navocet,1.0.0,bunting,^1\n",
    )
    .unwrap();
    let (registry, _) = basefit::load::bulk::read_bulk(&v, &d).unwrap();
    let bunting = registry.id("bunting").unwrap();
    assert_eq!(registry.package(bunting).left_out_releases, 1);
}

/// The count of left-out records is in the explanation, so a re-plan must not reuse a cell
/// whose explanation names it once the count changed: the warm cache equals the cold one.
#[test]
fn a_replan_notices_a_changed_count_of_left_out_records() {
    use basefit::plan::replan::replan;
    use basefit::report::to_json;
    let before = r#"packages:
  - name: avocet
    versions: [{version: "1.0.0", depends: [{name: bunting, req: "^1"}]}]
  - name: bunting
    versions: [{version: banana}]
"#;
    let after = r#"packages:
  - name: avocet
    versions: [{version: "1.0.0", depends: [{name: bunting, req: "^1"}]}]
  - name: bunting
    versions: [{version: banana}, {version: cherry}]
"#;
    let priorities = "priorities: [avocet, bunting]\n";
    let options = PlanOptions::default();
    let (cache, _) = replan(&inputs(before, priorities), &options, None, None);
    let after = inputs(after, priorities);
    let (warm, _) = replan(&after, &options, Some(cache), None);
    let (cold, _) = replan(&after, &options, None, None);
    let (warm, cold) = (to_json(&warm.matrix), to_json(&cold.matrix));
    assert!(
        cold.contains("its 2 version records were left out"),
        "{cold}"
    );
    assert!(warm == cold, "warm:\n{warm}\ncold:\n{cold}");
}

/// A runtime requirement no version meets is no matter of the image's age: the explanation
/// says no image can install the release, not that it needs a newer runtime.
#[test]
fn a_runtime_requirement_no_version_meets_blames_no_image() {
    let registry = r#"packages:
  - name: zamia
    versions:
      - {version: "1.0.0", runtime: ">=5, <4"}
  - name: wombat
    versions:
      - {version: "1.0.0", runtime: ">=5"}
"#;
    let inputs = inputs(registry, "priorities: [zamia, wombat]\n");
    let options = PlanOptions::default();
    let cell = |name: &str| explain(&inputs, name, "deb", &options).unwrap().cell;
    let zamia = cell("zamia").explanation.join("\n");
    assert!(
        zamia.contains(
            "1 version needs a runtime no version can be (>=5, <4): no image can install it"
        ),
        "{zamia}"
    );
    assert!(!zamia.contains("newer runtime"), "{zamia}");
    let wombat = cell("wombat").explanation.join("\n");
    assert!(
        wombat.contains("1 version needs a newer runtime (>=5; the image has 3.1.5)"),
        "{wombat}"
    );
}

/// Two dependencies a release cannot meet on the image: whichever the solver meets first (the
/// order they are listed in decides that), both are named, and the cause follows README's
/// ranking (a runtime too old before one too new, before no build, before yanked releases;
/// a missing name before all of them), not the listing order.
#[test]
fn several_unmet_dependencies_give_one_cause_whatever_their_order() {
    let registry = r#"packages:
  - name: wantsold
    versions: [{version: "1.0.0", runtime: "<1"}]
  - name: wantsnew
    versions: [{version: "1.0.0", runtime: ">=9"}]
  - name: muslonly
    versions: [{version: "1.0.0", builds: {prebuilt: [linux/musl/x86_64]}}]
  - name: pulled
    versions: [{version: "1.0.0", yanked: true}]
  - name: pair-a
    versions: [{version: "1.0.0", depends: [{name: wantsold}, {name: wantsnew}]}]
  - name: pair-b
    versions: [{version: "1.0.0", depends: [{name: wantsnew}, {name: wantsold}]}]
  - name: trio-a
    versions: [{version: "1.0.0", depends: [{name: pulled}, {name: muslonly}, {name: wantsnew}]}]
  - name: trio-b
    versions: [{version: "1.0.0", depends: [{name: wantsnew}, {name: muslonly}, {name: pulled}]}]
  - name: ghost-a
    versions: [{version: "1.0.0", depends: [{name: wantsold}, {name: nonesuch}]}]
  - name: ghost-b
    versions: [{version: "1.0.0", depends: [{name: nonesuch}, {name: wantsold}]}]
"#;
    let inputs = inputs(
        registry,
        "priorities: [pair-a, pair-b, trio-a, trio-b, ghost-a, ghost-b]\n",
    );
    let options = PlanOptions::default();
    let blockers = |name: &str| {
        let cell = explain(&inputs, name, "deb", &options).unwrap().cell;
        let mut b: Vec<String> = cell.blockers.iter().map(|b| b.package.clone()).collect();
        b.sort();
        (cell.cause, b)
    };
    for name in ["pair-a", "pair-b"] {
        assert_eq!(
            blockers(name),
            (
                Some(Cause::RuntimeTooOld),
                vec!["wantsnew".to_string(), "wantsold".to_string()]
            ),
            "{name}"
        );
    }
    for name in ["trio-a", "trio-b"] {
        let (cause, b) = blockers(name);
        assert_eq!(cause, Some(Cause::RuntimeTooOld), "{name}");
        assert_eq!(b, ["muslonly", "pulled", "wantsnew"], "{name}");
    }
    for name in ["ghost-a", "ghost-b"] {
        let (cause, b) = blockers(name);
        assert_eq!(cause, Some(Cause::MissingFromRegistry), "{name}");
        assert!(b.contains(&"nonesuch".to_string()), "{name}: {b:?}");
    }
}

/// A runtime requirement no runtime meets (`>=5, <4`: no version is both) is told apart from
/// releases that need a newer or older runtime, and does not choose the cause's direction; nor
/// does another image lift it.
#[test]
fn a_runtime_no_version_can_be_is_told_apart() {
    let registry = r#"packages:
  - name: never-or-newer
    versions:
      - {version: "1.0.0", runtime: ">=5, <4"}
      - {version: "0.9.0", runtime: ">=9"}
  - name: never-or-older
    versions:
      - {version: "1.0.0", runtime: ">=5, <4"}
      - {version: "0.9.0", runtime: "<1"}
  - name: never-or-ghost
    versions:
      - {version: "1.0.0", runtime: ">=5, <4"}
      - {version: "0.9.0", depends: [{name: nonesuch}]}
  - name: never
    versions: [{version: "1.0.0", runtime: ">=5, <4"}]
  - name: needs-never
    versions: [{version: "1.0.0", depends: [{name: never}]}]
  - name: needs-never-too
    versions: [{version: "1.0.0", depends: [{name: wants-new}, {name: never}]}]
  - name: wants-new
    versions: [{version: "1.0.0", runtime: ">=9"}]
"#;
    let inputs = inputs(
        registry,
        "priorities: [never-or-newer, never-or-older, never-or-ghost, needs-never, needs-never-too]\n",
    );
    let options = PlanOptions::default();
    let cell = |name: &str| explain(&inputs, name, "deb", &options).unwrap().cell;
    let newer = cell("never-or-newer");
    assert_eq!(newer.cause, Some(Cause::RuntimeTooOld));
    let line = newer
        .explanation
        .iter()
        .find(|l| l.starts_with("no version of never-or-newer"))
        .unwrap();
    assert!(
        line.contains("1 version needs a runtime no version can be (>=5, <4)")
            && line.contains("1 version needs a newer runtime (>=9;"),
        "{line}"
    );
    // Only the release needing an older runtime could ever install: that is the direction.
    assert_eq!(cell("never-or-older").cause, Some(Cause::RuntimeTooNew));
    // No image admits `>=5, <4`, so the missing name is what stops the package everywhere.
    assert_eq!(
        cell("never-or-ghost").cause,
        Some(Cause::MissingFromRegistry)
    );
    // As a blocker, met first or beside another, it is not said to need a newer runtime.
    for name in ["needs-never", "needs-never-too"] {
        let blockers = cell(name).blockers;
        let never = blockers.iter().find(|b| b.package == "never").unwrap();
        assert!(
            never.reason.ends_with("needs a runtime no version can be"),
            "{name}: {}",
            never.reason
        );
    }
}

/// Build metadata does not count in precedence (Semantic Versioning 2.0.0, section 10), so an
/// image runtime `3.1.5+distro.4` is tried once with `3.1.5`, as the cell's own runtime.
#[test]
fn the_runtime_hint_tries_each_precedence_once() {
    let images = "images:
  - {id: plain, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64, toolchain: true}
  - {id: distro, runtime: 3.1.5+distro.4, family: debian, platform: linux/glibc/x86_64, toolchain: true}
  - {id: new, runtime: 4.1.0, family: debian, platform: linux/glibc/x86_64, toolchain: true}
";
    let registry =
        "packages:\n  - name: lyrebird\n    versions: [{version: \"1.0.0\", runtime: \">=4\"}]\n";
    let inputs = inputs_on(images, registry, "priorities: [lyrebird]\n");
    for image in ["plain", "distro"] {
        let e = explain(&inputs, "lyrebird", image, &PlanOptions::default()).unwrap();
        let tried: Vec<&str> = e
            .runtime_hint
            .as_ref()
            .unwrap()
            .trials
            .iter()
            .map(|t| t.version.as_str())
            .collect();
        let own = if image == "plain" {
            "3.1.5"
        } else {
            "3.1.5+distro.4"
        };
        assert_eq!(tried, [own, "4.1.0"], "{image}");
    }
}

/// `syslibs` shows one line per library of a release, at its strongest confidence, with every
/// piece of evidence (a declaration and a summary mention used to give two lines).
#[test]
fn native_evidence_is_one_line_per_library() {
    let registry = r#"packages:
  - name: pngsmith
    summary: Thumbnails through libpng
    versions: [{version: "1.0.0", native: {libraries: [libpng]}}]
"#;
    let inputs = inputs(registry, "priorities:\n  - pngsmith\n");
    let matrix = basefit::plan::plan(&inputs, &PlanOptions::default());
    let report = basefit::plan::system::system_report(&inputs, &matrix);
    let text = basefit::report::text::system_text(&report);
    let lines: Vec<&str> = text.lines().filter(|l| l.contains("libpng [")).collect();
    assert_eq!(
        lines,
        ["    libpng [certain]: declares libpng; name or summary mentions `libpng`"],
        "{text}"
    );
    assert!(
        text.starts_with("native evidence per package (the newest release chosen on any image")
    );
}

/// A fact about every release of a package names the package before its versions, not after:
/// "corella any version depends on wombil ^1" read as if "any version" were part of the name,
/// and "no version of ... can be used here: any version: 2 versions yanked" repeated what the
/// counts say.
#[test]
fn facts_about_every_version_read_as_sentences() {
    let registry = r#"packages:
  - name: corella
    versions:
      - {version: "0.1.0", depends: [{name: wombil, req: "^1"}]}
      - {version: "0.2.0", depends: [{name: wombil, req: "^1"}]}
  - name: dunnart
    versions:
      - {version: "1.0.0", yanked: true}
      - {version: "1.1.0", yanked: true}
"#;
    let inputs = inputs(registry, "priorities: [corella, dunnart]\n");
    let options = PlanOptions::default();
    let corella = explain(&inputs, "corella", "deb", &options).unwrap();
    assert!(
        corella
            .cell
            .explanation
            .iter()
            .any(|l| l == "every version of corella (0.1.0 to 0.2.0) depends on wombil ^1"),
        "{:?}",
        corella.cell.explanation
    );
    let dunnart = explain(&inputs, "dunnart", "deb", &options).unwrap();
    assert!(
        dunnart
            .cell
            .explanation
            .iter()
            .any(|l| l == "no version of dunnart can be used here: 2 versions yanked"),
        "{:?}",
        dunnart.cell.explanation
    );
    for l in corella
        .cell
        .explanation
        .iter()
        .chain(&dunnart.cell.explanation)
    {
        assert!(
            !l.contains("any version depends") && !l.contains(": any version:"),
            "{l}"
        );
    }
}

/// A release whose runtime requirement has a gap (`>=1.4, <1.7 || >=2.1`) on an image inside
/// the gap fails `runtime-too-old`, yet resolves at an older declared runtime. The lowest
/// success alone pointed away from the upgrade the verdict asks for: the hint also tries the
/// declared runtimes above the image's, nearest first, and names the first that resolves.
#[test]
fn the_runtime_hint_follows_the_cause_past_a_gap() {
    let image = |id: &str, rt: &str| {
        format!(
            "  - {{id: {id}, runtime: {rt}, family: debian, platform: linux/glibc/x86_64, toolchain: true}}\n"
        )
    };
    let registry = "packages:\n  - name: quokka-io\n    versions: [{version: \"1.0.0\", runtime: \">=1.4, <1.7 || >=2.1\"}]\n  - name: bilby-net\n    versions: [{version: \"1.0.0\", runtime: \">=2.1\"}]\n";
    let all = format!(
        "images:\n{}{}{}{}",
        image("old", "1.6.2"),
        image("gap", "2.0.0"),
        image("new", "2.1.3"),
        image("newer", "2.2.0")
    );
    let inputs = inputs_on(&all, registry, "priorities: [quokka-io, bilby-net]\n");
    let e = explain(&inputs, "quokka-io", "gap", &PlanOptions::default()).unwrap();
    assert_eq!(e.cell.cause, Some(Cause::RuntimeTooOld));
    let hint = e.runtime_hint.as_ref().unwrap();
    assert_eq!(hint.resolves_at().unwrap().version, "1.6.2");
    let toward = hint.toward_cause.as_ref().expect("a try toward the cause");
    let tried: Vec<&str> = toward.trials.iter().map(|t| t.version.as_str()).collect();
    assert_eq!(tried, ["2.1.3"]);
    let text = basefit::report::text::explain_text(&e);
    let lines: Vec<&str> = text.lines().map(str::trim).collect();
    let lowest = lines
        .iter()
        .position(|l| *l == "lowest declared runtime at which it resolves here: 1.6.2 (installs)")
        .expect(&text);
    assert_eq!(
        lines[lowest + 1],
        "nearest newer declared runtime, as the cause points: 2.1.3 (installs)",
        "{text}"
    );
    let json = serde_json::to_value(&e).unwrap();
    assert_eq!(
        json["runtime_hint"]["toward_cause"]["trials"][0]["version"],
        "2.1.3"
    );

    // No newer declared runtime: the hint says so rather than staying silent.
    let capped = format!(
        "images:\n{}{}",
        image("old", "1.6.2"),
        image("gap", "2.0.0")
    );
    let inputs = inputs_on(&capped, registry, "priorities: [quokka-io]\n");
    let e = explain(&inputs, "quokka-io", "gap", &PlanOptions::default()).unwrap();
    let toward = e
        .runtime_hint
        .as_ref()
        .unwrap()
        .toward_cause
        .as_ref()
        .unwrap();
    assert!(toward.trials.is_empty());
    assert!(
        basefit::report::text::explain_text(&e).contains(
            "the cause points to a newer runtime, but no declared image's runtime is newer than this one"
        )
    );

    // Where the lowest success already lies the way the cause points, nothing is added.
    let inputs = inputs_on(&all, registry, "priorities: [bilby-net]\n");
    let e = explain(&inputs, "bilby-net", "gap", &PlanOptions::default()).unwrap();
    let hint = e.runtime_hint.as_ref().unwrap();
    assert_eq!(hint.resolves_at().unwrap().version, "2.1.3");
    assert!(hint.toward_cause.is_none());
}

/// A `runtime-too-new` cell that resolves only at a newer runtime: the hint toward the cause
/// lists the older declared runtimes nearest the image's first, as `TowardCause::trials`
/// documents (from a mutation review of src/plan/explain.rs: only the newer direction was
/// tested, so listing the oldest first went unnoticed).
#[test]
fn the_runtime_hint_toward_older_runtimes_starts_nearest_the_image() {
    let image = |id: &str, rt: &str| {
        format!(
            "  - {{id: {id}, runtime: {rt}, family: debian, platform: linux/glibc/x86_64, toolchain: true}}\n"
        )
    };
    // The newest release wants a runtime no image declares, below the image's: too new (the
    // package's own refusal outranks its older release's dependency). That older release
    // installs from 2.1 on, where its dependency does, so the lowest runtime that resolves is
    // newer.
    let registry = "packages:\n  - name: wombat-fs\n    versions:\n      - {version: \"2.0.0\", runtime: \">=1.9.0, <1.9.5\"}\n      - {version: \"1.0.0\", depends: [{name: numbat-io, req: \"^1\"}]}\n  - name: numbat-io\n    versions: [{version: \"1.0.0\", runtime: \">=2.1\"}]\n";
    let all = format!(
        "images:\n{}{}{}{}",
        image("oldest", "1.5.0"),
        image("older", "1.8.0"),
        image("here", "2.0.0"),
        image("newer", "2.1.3")
    );
    let inputs = inputs_on(&all, registry, "priorities: [wombat-fs]\n");
    let e = explain(&inputs, "wombat-fs", "here", &PlanOptions::default()).unwrap();
    assert_eq!(e.cell.cause, Some(Cause::RuntimeTooNew), "{:?}", e.cell);
    let hint = e.runtime_hint.as_ref().unwrap();
    assert_eq!(hint.resolves_at().unwrap().version, "2.1.3");
    let toward = hint.toward_cause.as_ref().expect("a try toward the cause");
    assert_eq!(toward.direction, Direction::Older);
    let tried: Vec<&str> = toward.trials.iter().map(|t| t.version.as_str()).collect();
    assert_eq!(tried, ["1.8.0", "1.5.0"]);
    assert!(toward.resolves_at().is_none());
}

/// A `runtime-too-new` cell that resolves at no declared runtime gets no hint toward the
/// cause: there is no success to contrast with the verdict, and the text says it resolves
/// nowhere. From a mutation review of src/plan/explain.rs, where taking the last runtime
/// tried for the lowest success (a newer one here) added an "older runtimes" line unnoticed.
#[test]
fn a_cell_that_resolves_at_no_runtime_gets_no_hint_toward_the_cause() {
    let image = |id: &str, rt: &str| {
        format!(
            "  - {{id: {id}, runtime: {rt}, family: debian, platform: linux/glibc/x86_64, toolchain: true}}\n"
        )
    };
    let registry =
        "packages:\n  - name: dingo-db\n    versions: [{version: \"1.0.0\", runtime: \"<1.0\"}]\n";
    let all = format!(
        "images:\n{}{}{}",
        image("oldest", "1.5.0"),
        image("here", "2.0.0"),
        image("newer", "2.1.3")
    );
    let inputs = inputs_on(&all, registry, "priorities: [dingo-db]\n");
    let e = explain(&inputs, "dingo-db", "here", &PlanOptions::default()).unwrap();
    assert_eq!(e.cell.cause, Some(Cause::RuntimeTooNew), "{:?}", e.cell);
    let hint = e.runtime_hint.as_ref().unwrap();
    assert!(hint.resolves_at().is_none());
    assert!(hint.toward_cause.is_none(), "{:?}", hint.toward_cause);
    let text = basefit::report::text::explain_text(&e);
    assert!(
        text.contains("it resolves at none of the declared images' runtimes (1.5.0, 2.0.0, 2.1.3)"),
        "{text}"
    );
    assert!(!text.contains("as the cause points"), "{text}");
}

/// The release hint tries the 40 newest releases (yanked ones aside) and counts the rest as
/// untried: the 40th newest is tried, the 41st is not. From a mutation review of
/// src/plan/explain.rs, where trying one release fewer, or counting one untried release too
/// few, passed every test.
#[test]
fn the_release_hint_tries_exactly_the_forty_newest_releases() {
    // `count` releases 1.0.0 .. 1.{count-1}.0; only 1.0.0 installs on the image (the others
    // want a runtime no image has), and the entry's requirement leaves it out, so the cell
    // fails and the hint has to reach 1.0.0 to find it.
    let registry = |count: usize| {
        let mut r = String::from("packages:\n  - name: numbat\n    versions:\n");
        r.push_str("      - {version: \"1.0.0\"}\n");
        for minor in 1..count {
            r.push_str(&format!(
                "      - {{version: \"1.{minor}.0\", runtime: \">=99\"}}\n"
            ));
        }
        r
    };
    let priorities = "priorities:\n  - {name: numbat, req: \">=1.1\"}\n";

    // 40 releases: the 40th newest is 1.0.0, tried, and it resolves.
    let e = explain(
        &inputs(&registry(40), priorities),
        "numbat",
        "deb",
        &PlanOptions::default(),
    )
    .unwrap();
    let hint = e.release_hint.as_ref().unwrap();
    assert_eq!(hint.trials.len(), 40);
    assert_eq!(hint.untried, 0);
    assert_eq!(hint.resolves().map(|t| t.version.as_str()), Some("1.0.0"));

    // 41 releases: 1.0.0 is the 41st newest, left untried.
    let e = explain(
        &inputs(&registry(41), priorities),
        "numbat",
        "deb",
        &PlanOptions::default(),
    )
    .unwrap();
    let hint = e.release_hint.as_ref().unwrap();
    assert_eq!(hint.trials.len(), 40);
    assert_eq!(hint.untried, 1);
    assert!(hint.resolves().is_none());
    let text = basefit::report::text::explain_text(&e);
    assert!(
        text.contains("none of its 40 newest releases resolves on this image"),
        "{text}"
    );
}

/// A release hint that finds a release the entry asks for (the newest fails on a missing
/// library, an older one installs) says nothing about the entry's requirement. From a
/// mutation review of src/plan/explain.rs, where calling that release outside the
/// requirement passed every test.
#[test]
fn a_release_hint_within_the_requirement_is_not_called_outside_it() {
    let registry = "packages:\n  - name: wallaby\n    versions:\n      - {version: \"1.0.0\"}\n      - version: \"2.0.0\"\n        native:\n          libraries: [libxml2]\n";
    let e = explain(
        &inputs(registry, "priorities:\n  - {name: wallaby, req: \">=1\"}\n"),
        "wallaby",
        "deb",
        &PlanOptions::default(),
    )
    .unwrap();
    assert_eq!(
        e.cell.cause,
        Some(Cause::MissingSystemLibrary),
        "{:?}",
        e.cell
    );
    let hint = e.release_hint.as_ref().unwrap();
    assert_eq!(hint.resolves().map(|t| t.version.as_str()), Some("1.0.0"));
    assert_eq!(hint.not_admitted, None);
    assert!(hint.not_asked_for.is_empty(), "{:?}", hint.not_asked_for);
    let text = basefit::report::text::explain_text(&e);
    let line = text
        .lines()
        .map(str::trim)
        .find(|l| l.starts_with("newest release that resolves on this image:"))
        .expect(&text);
    assert_eq!(
        line,
        "newest release that resolves on this image: 1.0.0 (installs)"
    );
}

/// A package whose releases miss the image's runtime in both directions is `runtime-too-old`
/// whichever release needs the newer runtime: README's order of causes puts `runtime-too-old`
/// before `runtime-too-new` ("What the outcomes mean", (5)). The order of the two checks once
/// went untested, and this test's comment once said the newest release decides, which the
/// second registry below (the newest release wanting an older runtime) shows it does not (a
/// mutation review of src/plan found the comment and the code apart).
#[test]
fn releases_that_miss_the_runtime_both_ways_are_runtime_too_old() {
    for registry in [
        "packages:\n  - name: kite\n    versions:\n      - {version: \"1.0.0\", runtime: \"<3\"}\n      - {version: \"2.0.0\", runtime: \">=4\"}\n",
        "packages:\n  - name: kite\n    versions:\n      - {version: \"1.0.0\", runtime: \">=4\"}\n      - {version: \"2.0.0\", runtime: \"<3\"}\n",
    ] {
        let inputs = inputs(registry, "priorities:\n  - {name: kite}\n");
        let e = explain(&inputs, "kite", "deb", &PlanOptions::default()).unwrap();
        assert_eq!(e.cell.cause, Some(Cause::RuntimeTooOld), "{:?}", e.cell);
    }
}

/// An unnamed native build (shipped sources) beside a named library need of the same
/// confidence is that need, not a second one: one need row, not two.
#[test]
fn a_native_build_that_names_its_library_is_one_need() {
    let registry = "packages:\n  - name: pbind\n    versions:\n      - version: \"1.0.0\"\n        native:\n          files: [include/libxml/parser.h, src/ext/x.c]\n";
    let inputs = inputs(registry, "priorities:\n  - {name: pbind}\n");
    let e = explain(&inputs, "pbind", "deb", &PlanOptions::default()).unwrap();
    assert_eq!(e.cell.native_needs.len(), 1, "{:?}", e.cell.native_needs);
    assert_eq!(e.cell.native_needs[0].library.as_deref(), Some("libxml2"));
}

/// A system package asked for by a weak need of one closure package (a summary's word) and a
/// certain need of another (a declaration) is certainly missing: the strongest confidence
/// counts, whichever package comes first, so the cell fails rather than being at risk.
#[test]
fn a_missing_package_counts_at_its_strongest_need() {
    let registry = "packages:\n  - name: aaa-tools\n    summary: helpers around libxml2\n    versions:\n      - version: \"1.0.0\"\n        depends:\n          - {name: zz-bind, req: \"^1\"}\n  - name: zz-bind\n    versions:\n      - version: \"1.0.0\"\n        native:\n          libraries: [libxml2]\n";
    let inputs = inputs(registry, "priorities:\n  - {name: aaa-tools}\n");
    let e = explain(&inputs, "aaa-tools", "deb", &PlanOptions::default()).unwrap();
    assert_eq!(
        e.cell.cause,
        Some(Cause::MissingSystemLibrary),
        "{:?}",
        e.cell
    );
    assert_eq!(e.cell.outcome, basefit::plan::Outcome::Fails);
}

/// A failing priority entry that is also another entry's blocker does not block itself: its
/// weight is what it keeps from other entries. Of two blockers of equal weight, the one that
/// blocks more entries comes first, so a list cut to one shows it.
#[test]
fn shared_blockers_count_other_entries_and_break_ties_by_entries_blocked() {
    use basefit::plan::blockers::shared_blockers;
    let registry = "packages:\n  - name: core\n    versions:\n      - {version: \"1.0.0\", runtime: \">=4\"}\n  - name: app\n    versions:\n      - version: \"1.0.0\"\n        depends:\n          - {name: core, req: \"^1\"}\n";
    let loaded = inputs(registry, "priorities:\n  - {name: app}\n  - {name: core}\n");
    let matrix = basefit::plan::matrix::plan(&loaded, &PlanOptions::default());
    let blockers = shared_blockers(&matrix, 5);
    let core = blockers.iter().find(|b| b.package == "core").unwrap();
    assert_eq!(core.blocks, ["app"], "{blockers:?}");

    let registry = "packages:
  - name: xcore
    versions:
      - {version: \"1.0.0\", runtime: \">=4\"}
  - name: ycore
    versions:
      - {version: \"1.0.0\", runtime: \">=4\"}
  - name: a
    versions:
      - {version: \"1.0.0\", depends: [{name: xcore, req: \"^1\"}]}
  - name: b
    versions:
      - {version: \"1.0.0\", depends: [{name: ycore, req: \"^1\"}]}
  - name: c
    versions:
      - {version: \"1.0.0\", depends: [{name: ycore, req: \"^1\"}]}
";
    let loaded = inputs(
        registry,
        "priorities:\n  - {name: a, weight: 2}\n  - {name: b, weight: 1}\n  - {name: c, weight: 1}\n",
    );
    let matrix = basefit::plan::matrix::plan(&loaded, &PlanOptions::default());
    let top = shared_blockers(&matrix, 1);
    assert_eq!(top.len(), 1, "{top:?}");
    assert_eq!(top[0].package, "ycore", "{top:?}");
}

/// Shared blockers come heaviest first, and each lists the entries it blocks in priority
/// order, also one it reaches only through another failing entry (`aa` -> `dd` -> `core`);
/// from a mutation review, where sorting lightest first and dropping the order of `blocks`
/// both survived. On the demo, deb-2.4's first blocker is wattle-core (demo-data/STORIES.md,
/// story (b)).
#[test]
fn shared_blockers_come_heaviest_first_and_list_entries_in_priority_order() {
    use basefit::plan::blockers::shared_blockers;
    let registry = "packages:
  - name: core
    versions:
      - {version: \"1.0.0\", runtime: \">=9.0\"}
  - name: aa
    versions:
      - {version: \"1.0.0\", depends: [{name: dd, req: \"^2\"}]}
  - name: bb
    versions:
      - {version: \"1.0.0\", depends: [{name: core, req: \"^1\"}]}
  - name: cc
    versions:
      - {version: \"1.0.0\", depends: [{name: core, req: \"^1\"}]}
  - name: dd
    versions:
      - {version: \"1.0.0\", depends: [{name: core, req: \"^1\"}]}
";
    let loaded = inputs(registry, "priorities:\n  - aa\n  - bb\n  - cc\n  - dd\n");
    let matrix = basefit::plan::matrix::plan(&loaded, &PlanOptions::default());
    let blockers = shared_blockers(&matrix, 5);
    let core = blockers.iter().find(|b| b.package == "core").unwrap();
    assert_eq!(core.blocks, ["aa", "bb", "cc", "dd"], "{blockers:?}");

    let demo = common::demo_inputs(Vec::new());
    let matrix = basefit::plan::matrix::plan(&demo, &PlanOptions::default());
    let blockers = shared_blockers(&matrix, 3);
    let on = |image: &str| -> Vec<(&str, f64)> {
        blockers
            .iter()
            .filter(|b| b.image == image)
            .map(|b| (b.package.as_str(), b.blocked_weight))
            .collect()
    };
    let deb24 = on("deb-2.4");
    assert_eq!(deb24.first().map(|b| b.0), Some("wattle-core"), "{deb24:?}");
    for image in matrix.images.iter().map(|i| i.id.as_str()) {
        let weights: Vec<f64> = on(image).iter().map(|b| b.1).collect();
        assert!(
            weights.windows(2).all(|w| w[0] >= w[1]),
            "{image}: {:?}",
            on(image)
        );
    }
}

/// A need whose build kind a matrix does not record (one written before the field) is mapped
/// only when the catalog names packages for both builds: a library with a development package
/// alone stays unmapped, so `syslibs --matrix` does not promise what no package gives.
#[test]
fn a_need_without_a_build_kind_is_mapped_only_for_both_builds() {
    let catalog = r#"libraries:
  - id: quasar
    summary: invented library with a development package only
    aliases: [quasar]
    headers: [quasar.h]
    families:
      debian: {dev: libquasar-dev, source: memory}
"#;
    let registry = "packages:\n  - name: parser\n    versions: [{version: \"1.0.0\", native: {libraries: [quasar]}}]\n";
    let mut loaded = inputs(registry, "priorities:\n  - parser\n");
    loaded.catalog.apply("test catalog", catalog).unwrap();
    let mut matrix = basefit::plan::plan(&loaded, &PlanOptions::default());
    assert!(!matrix.cells[0].native_needs.is_empty());
    for n in &mut matrix.cells[0].native_needs {
        n.build = None;
    }
    let report = basefit::plan::system::system_report(&loaded, &matrix);
    let libs: Vec<&str> = report.images[0]
        .unmapped_libraries
        .iter()
        .map(|u| u.library.as_str())
        .collect();
    assert_eq!(libs, ["quasar"], "{:#?}", report.images[0]);
}

/// The C++ compiler a C-only image lacks is as sure as the C++ sources seen (likely: a
/// dependency ships a `.cpp` file), not the cell's strongest need (certain, of zlib).
#[test]
fn the_cxx_compiler_is_advised_as_surely_as_the_cxx_sources_show() {
    let registry = r#"packages:
  - name: app
    versions:
      - version: "1.0.0"
        depends: [{name: cppdep, req: "*"}]
        native: {libraries: [zlib], files: [src/ext/wrap.c]}
  - name: cppdep
    versions: [{version: "1.0.0", native: {files: [src/ext/hash.cpp]}}]
"#;
    let images = "images:\n  - {id: c-only, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64, packages: [gcc, make, libc6-dev]}\n";
    let loaded = inputs_on(images, registry, "priorities:\n  - app\n");
    let matrix = basefit::plan::plan(&loaded, &PlanOptions::default());
    let cell = &matrix.cells[0];
    assert_eq!(
        cell.cxx_missing,
        Some(basefit::native::Confidence::Likely),
        "{cell:#?}"
    );
    let report = basefit::plan::system::system_report(&loaded, &matrix);
    let gxx = report.images[0]
        .missing
        .iter()
        .find(|m| m.package == "g++")
        .unwrap_or_else(|| panic!("{:#?}", report.images[0]));
    assert_eq!(gxx.strongest, basefit::native::Confidence::Likely);
}

/// `syslibs`' evidence per package is that of the newest release any image chose.
#[test]
fn package_evidence_is_for_the_newest_release_chosen() {
    let registry = r#"packages:
  - name: parser
    versions:
      - {version: "1.0.0", native: {libraries: [libxml2]}}
      - {version: "2.0.0", runtime: ">=3.2", native: {libraries: [libxml2]}}
"#;
    let images = "images:\n\
  - {id: old, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64, toolchain: true}\n\
  - {id: new, runtime: 3.2.0, family: debian, platform: linux/glibc/x86_64, toolchain: true}\n";
    let loaded = inputs_on(images, registry, "priorities:\n  - parser\n");
    let matrix = basefit::plan::plan(&loaded, &PlanOptions::default());
    let report = basefit::plan::system::system_report(&loaded, &matrix);
    assert_eq!(report.packages.len(), 1);
    assert_eq!(report.packages[0].version, "2.0.0");
}

/// A trial of a hand-built hint.
fn trial(
    version: &str,
    outcome: basefit::plan::matrix::Outcome,
    cause: Option<Cause>,
) -> basefit::plan::explain::Trial {
    basefit::plan::explain::Trial {
        version: version.into(),
        outcome,
        cause,
    }
}

/// The hint lines `explain` prints for a failing cell with these hints.
fn hint_lines(
    runtime_hint: Option<basefit::plan::explain::RuntimeHint>,
    release_hint: Option<basefit::plan::explain::ReleaseHint>,
) -> Vec<String> {
    use basefit::plan::matrix::{Cell, Outcome};
    let e = basefit::plan::explain::Explanation {
        notice: "notice".into(),
        native_skipped: false,
        cell: Cell::new("wombat-io", "deb", Outcome::Fails),
        tree: Vec::new(),
        runtime_hint,
        release_hint,
    };
    let text = basefit::report::text::explain_text(&e);
    common::hint_lines(&text)
}

/// Every runtime the hint tried is named in exactly one hint line, whatever mix of native
/// failures, unresolved constraints and budget exhaustion they show: from a mutation review,
/// where with a native failure at one runtime the line on the runtimes whose constraints do not
/// resolve could be dropped, leaving the reader unable to tell what happened there.
#[test]
fn the_runtime_hint_names_every_runtime_it_tried_once() {
    use basefit::plan::explain::RuntimeHint;
    use basefit::plan::matrix::Outcome::{Fails, Undecided};
    let too_old = || Some(Cause::RuntimeTooOld);
    let lib = || Some(Cause::MissingSystemLibrary);
    let budget = || Some(Cause::BudgetExhausted);
    let hint = |trials| {
        Some(RuntimeHint {
            trials,
            toward_cause: None,
        })
    };
    assert_eq!(
        hint_lines(
            hint(vec![
                trial("2.0.0", Fails, too_old()),
                trial("3.0.0", Fails, lib())
            ]),
            None
        ),
        [
            "at runtime 3.0.0 its version constraints resolve, but it fails: missing-system-library",
            "at runtime 2.0.0 its version constraints do not resolve",
            "no declared image's runtime makes it install here",
        ]
    );
    let mixes = [
        vec![
            trial("2.0.0", Fails, too_old()),
            trial("2.5.0", Fails, too_old()),
            trial("3.0.0", Fails, lib()),
        ],
        vec![
            trial("2.0.0", Fails, too_old()),
            trial("3.0.0", Undecided, budget()),
        ],
        vec![
            trial("2.0.0", Fails, lib()),
            trial("3.0.0", Undecided, budget()),
        ],
        vec![
            trial("2.0.0", Fails, too_old()),
            trial("2.5.0", Fails, lib()),
            trial("3.0.0", Undecided, budget()),
        ],
        vec![
            trial("2.0.0", Fails, too_old()),
            trial("3.0.0", Fails, too_old()),
        ],
        vec![trial("2.0.0", Fails, lib()), trial("3.0.0", Fails, lib())],
    ];
    for trials in mixes {
        let versions: Vec<String> = trials.iter().map(|t| t.version.clone()).collect();
        let lines = hint_lines(hint(trials), None);
        for v in &versions {
            let naming = lines.iter().filter(|l| l.contains(v.as_str())).count();
            assert_eq!(naming, 1, "{v} in {lines:#?}");
        }
    }
}

/// Runtimes for a sentence: six are listed in full, a seventh is counted as "and 1 more". From
/// a mutation review: at exactly six an "and 0 more" was appended unnoticed.
#[test]
fn the_runtime_list_counts_what_it_leaves_out() {
    use basefit::plan::explain::RuntimeHint;
    use basefit::plan::matrix::Outcome::Fails;
    let unresolved = |n: usize| {
        Some(RuntimeHint {
            trials: (1..=n)
                .map(|i| trial(&format!("{i}.0.0"), Fails, Some(Cause::RuntimeTooOld)))
                .collect(),
            toward_cause: None,
        })
    };
    assert_eq!(
        hint_lines(unresolved(6), None),
        [
            "it resolves at none of the declared images' runtimes (1.0.0, 2.0.0, 3.0.0, 4.0.0, 5.0.0, 6.0.0)"
        ]
    );
    assert_eq!(
        hint_lines(unresolved(7), None),
        [
            "it resolves at none of the declared images' runtimes (1.0.0, 2.0.0, 3.0.0, 4.0.0, 5.0.0, 6.0.0, and 1 more)"
        ]
    );
}

/// Toward the cause, a runtime is called the "nearest" one at which the cell resolves only when
/// no nearer runtime was left undecided by the budget: the solver may have found one there.
/// From a mutation review, where "nearest" was claimed regardless and so stated a certainty
/// the solver did not have.
#[test]
fn a_runtime_past_an_undecided_one_is_not_called_the_nearest() {
    use basefit::plan::explain::{Direction, RuntimeHint, TowardCause};
    use basefit::plan::matrix::Outcome::{Fails, Installs, Undecided};
    let with_nearer = |nearer| {
        Some(RuntimeHint {
            trials: vec![trial("1.6.0", Installs, None)],
            toward_cause: Some(TowardCause {
                direction: Direction::Newer,
                trials: vec![nearer, trial("3.2.0", Installs, None)],
            }),
        })
    };
    let lines = hint_lines(
        with_nearer(trial("3.1.0", Undecided, Some(Cause::BudgetExhausted))),
        None,
    );
    assert_eq!(
        lines[1],
        "newer declared runtime at which it resolves, as the cause points: 3.2.0 (installs); nearer: 3.1.0 (the solver ran out of budget (raise --budget))"
    );
    let lines = hint_lines(
        with_nearer(trial("3.1.0", Fails, Some(Cause::RuntimeTooOld))),
        None,
    );
    assert_eq!(
        lines[1],
        "nearest newer declared runtime at which it resolves, as the cause points: 3.2.0 (installs); nearer: 3.1.0 (its version constraints do not resolve)"
    );
}

/// A release that lists the same dependency twice shows it once in `explain`'s closure tree:
/// from a mutation review, where without de-duplication the second edge showed as a repeated
/// `(shown above)` line, reading as a second path to it.
#[test]
fn a_dependency_declared_twice_is_one_line_of_the_tree() {
    let registry = "packages:\n  - name: dupe\n    versions:\n      - {version: \"1.0.0\", depends: [{name: leaf, req: \"^1\"}, {name: leaf, req: \"^1\"}]}\n  - name: leaf\n    versions: [{version: \"1.0.0\"}]\n";
    let inputs = inputs(registry, "priorities: [dupe]\n");
    let e = explain(&inputs, "dupe", "deb", &PlanOptions::default()).unwrap();
    let tree: Vec<(usize, &str, bool)> = e
        .tree
        .iter()
        .map(|l| (l.depth, l.name.as_str(), l.repeated))
        .collect();
    assert_eq!(tree, [(0, "dupe", false), (1, "leaf", false)]);
    let text = basefit::report::text::explain_text(&e);
    assert!(!text.contains("(shown above)"), "{text}");
}

/// A dependency two packages of the closure share is a tree line under each, the second
/// marked `(shown above)` (README, `explain`: "the resolved closure as a tree"): unmarked, the
/// second line reads as a second copy of the package in the closure (from a mutation review of
/// src/report/text.rs).
#[test]
fn a_dependency_shared_by_two_packages_is_marked_where_it_repeats() {
    let registry = "packages:\n  - name: top\n    versions:\n      - {version: \"1.0.0\", depends: [{name: left, req: \"^1\"}, {name: right, req: \"^1\"}]}\n  - name: left\n    versions: [{version: \"1.0.0\", depends: [{name: leaf, req: \"^1\"}]}]\n  - name: right\n    versions: [{version: \"1.0.0\", depends: [{name: leaf, req: \"^1\"}]}]\n  - name: leaf\n    versions: [{version: \"1.0.0\"}]\n";
    let inputs = inputs(registry, "priorities: [top]\n");
    let e = explain(&inputs, "top", "deb", &PlanOptions::default()).unwrap();
    let text = basefit::report::text::explain_text(&e);
    let leaves: Vec<&str> = text
        .lines()
        .filter(|l| l.trim_start().starts_with("leaf 1.0.0"))
        .collect();
    assert_eq!(leaves.len(), 2, "{text}");
    assert!(!leaves[0].contains("(shown above)"), "{text}");
    assert!(leaves[1].ends_with(" (shown above)"), "{text}");
}

/// A release with no build for any platform is told apart in the explanation: "without a
/// source build or a prebuilt build for linux/glibc/x86_64" sent the reader to another
/// platform, where it cannot install either. A release with a prebuilt build for another
/// platform only is still explained by this image's platform.
#[test]
fn a_release_with_no_build_at_all_is_not_blamed_on_the_platform() {
    let registry = r#"packages:
  - name: plover
    versions:
      - {version: 1.0.0, builds: {source: false}}
      - {version: 1.1.0, builds: {prebuilt: [linux/musl/x86_64]}}
  - name: dunlin
    versions:
      - {version: 2.0.0, builds: {source: false}}
  - name: knot
    versions:
      - {version: 0.3.0, depends: [{name: dunlin}]}
"#;
    let inputs = inputs(registry, "priorities: [plover, dunlin, knot]\n");
    let options = PlanOptions::default();
    let text = |name: &str| {
        let e = explain(&inputs, name, "deb", &options).unwrap();
        assert_eq!(e.cell.cause, Some(Cause::NoBuildForPlatform), "{name}");
        e.cell.explanation.join("\n")
    };
    let plover = text("plover");
    assert!(
        plover.contains(
            "1 version has no build for any platform (neither a source build nor a prebuilt one): no image can install it"
        ),
        "{plover}"
    );
    assert!(
        plover.contains(
            "1 version without a source build or a prebuilt build for linux/glibc/x86_64"
        ),
        "{plover}"
    );
    let dunlin = text("dunlin");
    assert!(dunlin.contains("no build for any platform"), "{dunlin}");
    assert!(!dunlin.contains("linux/glibc/x86_64"), "{dunlin}");
    // A package that depends on it is blocked by it, and the blocker says why the same way:
    // "has no build for this platform" there sent the reader to another platform too (a
    // review of the change found the blockers and dependents left out).
    let knot = explain(&inputs, "knot", "deb", &options).unwrap();
    let blockers: Vec<(&str, &str)> = knot
        .cell
        .blockers
        .iter()
        .map(|b| (b.package.as_str(), b.reason.as_str()))
        .collect();
    assert_eq!(
        blockers,
        [("dunlin", "dunlin has no build for any platform")],
        "{knot:?}"
    );
    let lines = knot.cell.explanation.join("\n");
    assert!(!lines.contains("this platform"), "{lines}");
}

/// `syslibs`' evidence per package lists only packages with native evidence: one with none,
/// of its own or through a dependency, is no row (mutation review, s3: it came out with
/// `"confidence": null` in JSON and as a bare entry in the text).
#[test]
fn packages_without_native_evidence_are_not_listed() {
    let registry = r#"packages:
  - name: parser
    versions: [{version: "1.0.0", native: {libraries: [libxml2]}}]
  - name: plainly
    versions: [{version: "1.0.0"}]
"#;
    let inputs = inputs(registry, "priorities:\n  - parser\n  - plainly\n");
    let matrix = basefit::plan::plan(&inputs, &PlanOptions::default());
    let report = basefit::plan::system::system_report(&inputs, &matrix);
    let names: Vec<&str> = report.packages.iter().map(|p| p.package.as_str()).collect();
    assert_eq!(names, ["parser"]);
    let json = serde_json::to_value(&report).unwrap();
    let listed: Vec<&str> = json["packages"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["package"].as_str().unwrap())
        .collect();
    assert_eq!(listed, ["parser"], "{json}");
    let text = basefit::report::text::system_text(&report);
    assert!(!text.contains("plainly"), "{text}");
}

/// The mirror image of the prebuilt half of
/// `a_missing_package_is_as_certain_as_the_needs_that_name_it`: a source build's certain need
/// asks for the development package and the compiler, not the runtime package, which a
/// prebuilt dependency's mention asks for only as `possible` (mutation review, s10: the
/// runtime package came out `certain`).
#[test]
fn a_runtime_package_is_as_certain_as_the_prebuilt_needs_that_name_it() {
    let registry = r#"packages:
  - name: possum-app
    versions: [{version: "1.0.0", depends: [{name: possum-bin, req: "^1"}], native: {libraries: [zlib]}}]
  - name: possum-bin
    summary: helper for zlib streams
    versions:
      - version: "1.0.0"
        builds: {source: false, prebuilt: [linux/glibc/x86_64]}
"#;
    let bare = "images:\n  - {id: bare, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64, packages: [ca-certificates]}\n";
    let inputs = inputs_on(bare, registry, "priorities:\n  - possum-app\n");
    let matrix = basefit::plan::plan(&inputs, &PlanOptions::default());
    let report = basefit::plan::system::system_report(&inputs, &matrix);
    let mut rows: Vec<(&str, basefit::native::Confidence)> = report.images[0]
        .missing
        .iter()
        .map(|m| (m.package.as_str(), m.strongest))
        .collect();
    rows.sort();
    use basefit::native::Confidence::{Certain, Possible};
    assert_eq!(
        rows,
        [
            ("build-essential", Certain),
            ("zlib1g", Possible),
            ("zlib1g-dev", Certain)
        ],
        "{:#?}",
        matrix.cells[0]
    );
}

/// A library no package can be named for is listed once per image at the strongest need of
/// any cell, with each entry that needs it named once: the first cell's `possible` mention
/// stood for oddball's `likely` shipped header (mutation review, s11), and twofold, which
/// needs the library itself and through twofold-core, was named twice (s12).
#[test]
fn an_unmapped_library_is_listed_at_its_strongest_need_naming_each_entry_once() {
    let registry = r#"packages:
  - name: vireo-quasar
    versions: [{version: "1.0.0", native: {libraries: [libxml2]}}]
  - name: oddball
    versions: [{version: "1.0.0", native: {libraries: [libxml2], files: [include/quasar.h]}}]
  - name: twofold
    versions: [{version: "1.0.0", depends: [{name: twofold-core, req: "^1"}], native: {files: [include/quasar.h]}}]
  - name: twofold-core
    versions: [{version: "1.0.0", native: {files: [include/quasar.h]}}]
"#;
    // The weaker need comes first.
    let mut inputs = inputs(
        registry,
        "priorities:\n  - vireo-quasar\n  - oddball\n  - twofold\n",
    );
    inputs
        .catalog
        .apply("test catalog", ALPINE_ONLY_CATALOG)
        .unwrap();
    let matrix = basefit::plan::plan(&inputs, &PlanOptions::default());
    let quasar_via = |package: &str| {
        let cell = matrix.cells.iter().find(|c| c.package == package).unwrap();
        let mut via: Vec<&str> = cell
            .native_needs
            .iter()
            .filter(|n| n.library.as_deref() == Some("quasar"))
            .map(|n| n.via.as_str())
            .collect();
        via.sort();
        via
    };
    // The scenario: twofold's cell needs quasar twice, once through each package.
    assert_eq!(quasar_via("twofold"), ["twofold", "twofold-core"]);
    let report = basefit::plan::system::system_report(&inputs, &matrix);
    let unmapped = &report.images[0].unmapped_libraries;
    assert_eq!(unmapped.len(), 1, "{unmapped:#?}");
    assert_eq!(unmapped[0].library, "quasar");
    assert_eq!(unmapped[0].strongest, basefit::native::Confidence::Likely);
    assert_eq!(
        unmapped[0].needed_by,
        ["vireo-quasar", "oddball", "twofold"]
    );
    let text = basefit::report::text::system_text(&report);
    let lines: Vec<&str> = text
        .lines()
        .filter(|l| l.contains("package known for"))
        .collect();
    assert_eq!(
        lines,
        [
            "    no debian package known for (check the image by hand, or give them with --catalog): quasar [likely] (vireo-quasar, oddball, twofold)"
        ],
        "{text}"
    );
}

/// A missing package is as certain as its strongest need over every cell that lacks it, not
/// the first cell's: alpha-thumbs' summary mention (`possible`) came first and stood for
/// beta-png's declaration (mutation review, s15).
#[test]
fn a_missing_package_counts_at_its_strongest_need_over_cells() {
    let registry = r#"packages:
  - name: alpha-thumbs
    summary: draws libpng thumbnails
    versions: [{version: "1.0.0", native: {files: [src/ext/a.c]}}]
  - name: beta-png
    versions: [{version: "1.0.0", native: {libraries: [libpng]}}]
"#;
    let inputs = inputs(registry, "priorities:\n  - alpha-thumbs\n  - beta-png\n");
    let matrix = basefit::plan::plan(&inputs, &PlanOptions::default());
    let report = basefit::plan::system::system_report(&inputs, &matrix);
    let rows: Vec<(&str, basefit::native::Confidence, &[String])> = report.images[0]
        .missing
        .iter()
        .map(|m| (m.package.as_str(), m.strongest, m.needed_by.as_slice()))
        .collect();
    let both = ["alpha-thumbs".to_string(), "beta-png".to_string()];
    assert_eq!(
        rows,
        [(
            "libpng-dev",
            basefit::native::Confidence::Certain,
            &both[..]
        )],
        "{:#?}",
        matrix.cells
    );
    let text = basefit::report::text::system_text(&report);
    assert!(
        text.contains("libpng-dev [certain] weight 2.00: alpha-thumbs, beta-png\n"),
        "{text}"
    );
}

/// Missing packages of equal weight come by weight beyond advice, heaviest first, before
/// name order, and the install command follows the table (mutation review, s19: name order
/// put libpng-dev first). Both cells here are beyond advice, so both weights are 0.
#[test]
fn missing_packages_of_equal_weight_come_by_weight_beyond_advice() {
    let registry = r#"packages:
  - name: png-odd
    versions: [{version: "1.0.0", native: {libraries: [libpng], files: [include/quasar.h]}}]
  - name: xml-odd
    versions: [{version: "1.0.0", native: {libraries: [libxml2], files: [include/quasar.h]}}]
"#;
    let mut inputs = inputs(
        registry,
        "priorities:\n  - {name: png-odd, weight: 1}\n  - {name: xml-odd, weight: 4}\n",
    );
    inputs
        .catalog
        .apply("test catalog", ALPINE_ONLY_CATALOG)
        .unwrap();
    let matrix = basefit::plan::plan(&inputs, &PlanOptions::default());
    let report = basefit::plan::system::system_report(&inputs, &matrix);
    let deb = &report.images[0];
    let rows: Vec<(&str, f64, f64)> = deb
        .missing
        .iter()
        .map(|m| (m.package.as_str(), m.weight, m.weight_beyond_advice))
        .collect();
    assert_eq!(
        rows,
        [("libxml2-dev", 0.0, 4.0), ("libpng-dev", 0.0, 1.0)],
        "{deb:#?}"
    );
    assert_eq!(deb.beyond_advice, ["png-odd", "xml-odd"]);
    let command = deb.command.as_deref().unwrap();
    assert!(command.ends_with(" libxml2-dev libpng-dev"), "{command}");
}

/// With nothing missing on any image, `syslibs` gives no per-family command: a family with
/// nothing to install came out as `apt-get install -y --no-install-recommends ` with no
/// package (mutation review, s21).
#[test]
fn a_family_with_nothing_missing_gets_no_command() {
    let registry = "packages:\n  - name: plainly\n    versions: [{version: \"1.0.0\"}]\n";
    let inputs = inputs(registry, "priorities:\n  - plainly\n");
    let matrix = basefit::plan::plan(&inputs, &PlanOptions::default());
    let report = basefit::plan::system::system_report(&inputs, &matrix);
    assert!(report.families.is_empty(), "{:#?}", report.families);
    assert!(report.images[0].missing.is_empty());
    assert_eq!(report.images[0].command, None);
    let json = serde_json::to_value(&report).unwrap();
    assert_eq!(json["families"], serde_json::json!([]), "{json}");
    let text = basefit::report::text::system_text(&report);
    assert!(!text.contains("per OS family"), "{text}");
    assert!(!text.contains("apt-get"), "{text}");
}

/// A release with no build anywhere is told apart whatever else refuses it here: one that also
/// needs a newer runtime was explained as "needs a newer runtime" with the cause
/// runtime-too-old, sending the reader to a newer image where it cannot install either (a
/// review of the change). A package whose releases are each impossible for one reason or the
/// other blocks its dependents as having no release any image can install.
#[test]
fn no_build_anywhere_outranks_the_runtime_and_mixed_impossible_releases_are_named() {
    let registry = r#"packages:
  - name: gecko
    versions:
      - {version: 1.0.0, runtime: ">=4.0", builds: {source: false}}
  - name: emu
    versions:
      - {version: 1.0.0, runtime: "<0.0.0"}
      - {version: 1.1.0, builds: {}}
  - name: wren
    versions:
      - {version: 0.1.0, depends: [{name: emu}]}
"#;
    let inputs = inputs(registry, "priorities: [gecko, wren]\n");
    let options = PlanOptions::default();
    let gecko = explain(&inputs, "gecko", "deb", &options).unwrap();
    assert_eq!(gecko.cell.cause, Some(Cause::NoBuildForPlatform));
    let lines = gecko.cell.explanation.join("\n");
    assert!(
        lines.contains("1 version has no build for any platform"),
        "{lines}"
    );
    assert!(!lines.contains("newer runtime"), "{lines}");
    let wren = explain(&inputs, "wren", "deb", &options).unwrap();
    let blockers: Vec<(&str, &str)> = wren
        .cell
        .blockers
        .iter()
        .map(|b| (b.package.as_str(), b.reason.as_str()))
        .collect();
    assert_eq!(
        blockers,
        [("emu", "emu has no release any image can install")],
        "{wren:?}"
    );
    // The impossible runtime follows the other refused release, whose cause stays
    // no-build-for-platform (README, "Runtime images"); it set the direction of the cause
    // (runtime-too-new) instead (from a mutation review).
    assert_eq!(wren.cell.cause, Some(Cause::NoBuildForPlatform), "{wren:?}");
    let inputs = inputs_on(IMAGES, registry, "priorities: [emu]\n");
    let emu = explain(&inputs, "emu", "deb", &options).unwrap();
    assert_eq!(emu.cell.cause, Some(Cause::NoBuildForPlatform), "{emu:?}");
}

/// Under a conflict, a dependency the image refuses is a step of the proof, and a blocker
/// that says so: heron needs cormorant <1.4 and lark ^3; lark 3.0.0 needs cormorant ^1.2 (no
/// such release below 1.4) and lark 3.1.0 a newer runtime and cormorant ^2. The cell fails on
/// the conflict over cormorant at every runtime, so a bare "lark 3.1.0 needs a newer runtime"
/// sent readers to upgrade the image for nothing (from an end-to-end review). Where the
/// refused release is the way out (app needs aa >=1 and bb ^1; aa 2.0.0 needs a newer
/// runtime, aa 1.0.0 and bb conflict over cc), the same blocker leads to the fix, so it is
/// kept, with the conflict beside it (from a review of the first fix, which dropped it).
#[test]
fn a_refused_dependency_beside_a_conflict_is_a_blocker_that_names_the_conflict() {
    let registry = r#"packages:
  - name: heron
    versions:
      - version: "1.0.0"
        depends: [{name: cormorant, req: "<1.4"}, {name: lark, req: "^3"}]
  - name: lark
    versions:
      - {version: "3.0.0", depends: [{name: cormorant, req: "^1.2"}]}
      - {version: "3.1.0", runtime: ">=4.0", depends: [{name: cormorant, req: "^2"}]}
  - name: cormorant
    versions: [{version: "1.0.0"}, {version: "1.4.0"}, {version: "2.0.0"}]
  - name: app
    versions:
      - version: "1.0.0"
        depends: [{name: aa, req: ">=1"}, {name: bb, req: "^1"}]
  - name: aa
    versions:
      - {version: "1.0.0", depends: [{name: cc, req: "^1"}]}
      - {version: "2.0.0", runtime: ">=4.0"}
  - name: bb
    versions: [{version: "1.0.0", depends: [{name: cc, req: "^2"}]}]
  - name: cc
    versions: [{version: "1.0.0"}, {version: "2.0.0"}]
"#;
    let inputs = inputs_on(RUNTIMES, registry, "priorities: [heron, app]\n");
    let beside = " (beside a conflict: another image alone may not be enough)";
    let blockers_of = |package: &str| {
        let cell = explain(&inputs, package, "mid", &PlanOptions::default())
            .unwrap()
            .cell;
        assert_eq!(cell.cause, Some(Cause::DependencyConflict), "{package}");
        let mut blockers: Vec<(String, String)> = cell
            .blockers
            .iter()
            .map(|b| (b.package.clone(), b.reason.clone()))
            .collect();
        blockers.sort();
        (blockers, cell.explanation)
    };
    let (heron, lines) = blockers_of("heron");
    assert_eq!(
        heron,
        [
            (
                "cormorant".to_string(),
                "conflicting requirements on cormorant (from lark and heron)".to_string()
            ),
            (
                "lark".to_string(),
                format!("lark 3.1.0 needs a newer runtime{beside}")
            ),
        ],
        "{lines:?}"
    );
    assert!(
        lines
            .iter()
            .any(|l| l.starts_with("no version of lark in 3.1.0 can be used here")),
        "{lines:?}"
    );
    let (app, lines) = blockers_of("app");
    assert!(
        app.iter().any(|(p, r)| p == "aa"
            && r.starts_with("aa 2.0.0 needs a newer runtime")
            && r.ends_with(beside)),
        "{app:?} {lines:?}"
    );
    // On the newer image the refused release installs the entry.
    let newer = explain(&inputs, "app", "new", &PlanOptions::default()).unwrap();
    assert_eq!(newer.cell.root_version.as_deref(), Some("1.0.0"));
    assert!(newer.cell.cause.is_none(), "{:?}", newer.cell);
}

/// One release that needs two requirements of one package that no published version meets
/// together says "all of them", not "any of them": the requirements are one release's pair,
/// not alternatives (`requirement_text`; README, "What the outcomes mean": a requirement pair
/// with no version in common is a dependency conflict). Mutation review: the "all" branch
/// could be dropped unseen.
#[test]
fn one_releases_unmeetable_requirement_pair_says_all_of_them() {
    let registry = r#"packages:
  - name: bittern
    versions: [{version: "1.0.0"}, {version: "2.0.0"}]
  - name: r-pair
    versions: [{version: "1.0.0", depends: [{name: bittern, req: "^1"}, {name: bittern, req: "^2"}]}]
"#;
    let cell = entry_cell(registry, "r-pair");
    assert_eq!(cell.cause, Some(Cause::DependencyConflict));
    assert!(
        cell.explanation.iter().any(|l| l
            == "r-pair 1.0.0 depends on bittern ^1 and ^2 (no published version meets all of them)"),
        "{:?}",
        cell.explanation
    );
}

/// A set of releases reads as its runs of consecutive releases, all of them up to four, and
/// past four the first three and how many more (`sets::describe`). Mutation review: the limit
/// could move by one unseen.
#[test]
fn a_set_of_releases_reads_as_up_to_four_runs() {
    let registry = r#"packages:
  - name: skua
    versions:
      - {version: "1.0.0", runtime: ">=4"}
      - {version: "1.1.0", runtime: ">=4"}
      - {version: "1.2.0", runtime: ">=4"}
      - {version: "1.3.0", runtime: ">=4"}
      - {version: "1.4.0", runtime: ">=4"}
      - {version: "1.5.0", runtime: ">=4"}
      - {version: "1.6.0", runtime: ">=4"}
      - {version: "1.7.0", runtime: ">=4"}
      - {version: "1.8.0", runtime: ">=4"}
"#;
    let first_line = |req: &str| {
        let prio = format!("priorities:\n  - {{name: skua, req: \"{req}\"}}\n");
        let inputs = inputs(registry, &prio);
        let cell = explain(&inputs, "skua", "deb", &PlanOptions::default())
            .unwrap()
            .cell;
        assert_eq!(cell.cause, Some(Cause::RuntimeTooOld), "{req}");
        cell.explanation[0].clone()
    };
    assert_eq!(
        first_line("=1.0.0 || =1.2.0 || =1.4.0 || >=1.6.0, <1.8.0"),
        "the entry asks for skua =1.0.0 || =1.2.0 || =1.4.0 || >=1.6.0, <1.8.0 (1.0.0, 1.2.0, \
         1.4.0, 1.6.0 to 1.7.0)"
    );
    assert_eq!(
        first_line("=1.0.0 || =1.2.0 || =1.4.0 || =1.6.0 || =1.8.0"),
        "the entry asks for skua =1.0.0 || =1.2.0 || =1.4.0 || =1.6.0 || =1.8.0 (1.0.0, 1.2.0, \
         1.4.0, and 2 more runs)"
    );
}

/// A yanked release is never chosen, on any image (README, "What the outcomes mean": "yanked
/// releases are never chosen"), so a package whose one release is yanked fails as having only
/// yanked versions even where that release also needs a newer runtime: "runtime-too-old" would
/// send the reader to a newer image that cannot install it either. Mutation review: a yank
/// read only on releases that suit the image went unseen.
#[test]
fn a_yanked_release_the_runtime_also_refuses_reads_as_yanked() {
    let registry = r#"packages:
  - name: gannet
    versions: [{version: "1.0.0", runtime: ">=4", yanked: true}]
"#;
    let cell = entry_cell(registry, "gannet");
    assert_eq!(cell.cause, Some(Cause::OnlyYankedOrPrerelease), "{cell:?}");
}

/// A release that needs a newer runtime and has a prebuilt build for another platform only is
/// judged by its runtime first (`image::fit_with`; the explanation's "a runtime is judged
/// first"), so the cell reads runtime-too-old, not no-build-for-platform. Mutation review: the
/// order of the two checks could be swapped unseen.
#[test]
fn a_release_refused_by_runtime_and_platform_is_judged_by_its_runtime_first() {
    let registry = r#"packages:
  - name: shag
    versions: [{version: "1.0.0", runtime: ">=4", builds: {prebuilt: [linux/musl/x86_64]}}]
"#;
    let cell = entry_cell(registry, "shag");
    assert_eq!(cell.cause, Some(Cause::RuntimeTooOld), "{cell:?}");
}

/// A dependency whose one release has both a runtime requirement no runtime meets and no
/// build for any platform is blocked the way its explanation line reads: the runtime is judged
/// first there (`explain::unusable`), so the blocker says "needs a runtime no version can be"
/// too, not "has no build for any platform" (README, "What the outcomes mean": the blockers go
/// with the cause). Mutation review: the order of the two labels could be swapped unseen.
#[test]
fn a_blocker_impossible_both_ways_reads_as_its_explanation_line() {
    let registry = r#"packages:
  - name: moa
    versions: [{version: "1.0.0", runtime: "<0.0.0", builds: {source: false}}]
  - name: kea
    versions: [{version: "0.1.0", depends: [{name: moa}]}]
"#;
    let cell = entry_cell(registry, "kea");
    let lines = cell.explanation.join("\n");
    assert!(
        lines.contains("needs a runtime no version can be"),
        "{lines}"
    );
    let blockers: Vec<(&str, &str)> = cell
        .blockers
        .iter()
        .map(|b| (b.package.as_str(), b.reason.as_str()))
        .collect();
    assert_eq!(blockers, [("moa", "moa needs a runtime no version can be")]);
}

/// Two dependencies asking for versions of one package that do not overlap are named as the
/// conflict, and the package they disagree on is a blocker that says who asks (README, "What
/// the outcomes mean": (4) conflicting requirements). Mutation review: a conflict between
/// exactly two went unnamed unseen.
#[test]
fn a_conflict_between_two_dependents_is_named_with_its_blocker() {
    let registry = r#"packages:
  - name: petrel
    versions: [{version: "1.0.0"}, {version: "2.0.0"}]
  - name: fulmar
    versions: [{version: "1.0.0", depends: [{name: petrel, req: "^1"}]}]
  - name: prion
    versions: [{version: "1.0.0", depends: [{name: petrel, req: "^2"}]}]
  - name: albatross
    versions: [{version: "1.0.0", depends: [{name: fulmar}, {name: prion}]}]
"#;
    let cell = entry_cell(registry, "albatross");
    assert_eq!(cell.cause, Some(Cause::DependencyConflict));
    assert!(
        cell.explanation
            .iter()
            .any(|l| l.ends_with("need versions of petrel that do not overlap")),
        "{:?}",
        cell.explanation
    );
    assert!(
        cell.blockers.iter().any(|b| b.package == "petrel"
            && b.reason
                .starts_with("conflicting requirements on petrel (from ")),
        "{:?}",
        cell.blockers
    );
}

/// Every dependency that all of a failing run of releases cannot meet is named, not only the
/// one the solver met first (README, "fails": "Every dependency that all of a failing run of
/// releases cannot meet on the image ... is named"), also when the run holds more than one
/// release. Both orders of listing give the same cause, by README's ranking (a runtime too old
/// before one too new).
#[test]
fn a_run_of_several_releases_names_every_dependency_it_cannot_meet() {
    let registry = r#"packages:
  - name: wantsold
    versions: [{version: "1.0.0", runtime: "<1"}]
  - name: wantsnew
    versions: [{version: "1.0.0", runtime: ">=9"}]
  - name: pair-a
    versions:
      - {version: "1.0.0", depends: [{name: wantsold}, {name: wantsnew}]}
      - {version: "1.1.0", depends: [{name: wantsold}, {name: wantsnew}]}
  - name: pair-b
    versions:
      - {version: "1.0.0", depends: [{name: wantsnew}, {name: wantsold}]}
      - {version: "1.1.0", depends: [{name: wantsnew}, {name: wantsold}]}
"#;
    let inputs = inputs(registry, "priorities: [pair-a, pair-b]\n");
    let options = PlanOptions::default();
    for name in ["pair-a", "pair-b"] {
        let cell = explain(&inputs, name, "deb", &options).unwrap().cell;
        let mut b: Vec<&str> = cell.blockers.iter().map(|b| b.package.as_str()).collect();
        b.sort();
        assert_eq!(
            (cell.cause, b),
            (Some(Cause::RuntimeTooOld), vec!["wantsnew", "wantsold"]),
            "{name}: {:?}",
            cell.explanation
        );
    }
}

/// A dependency whose wanted releases are refused in different ways takes the first cause of
/// README's order for it ("fails" (5): `runtime-too-old`, `runtime-too-new`,
/// `no-build-for-platform`, `only-yanked-or-prerelease`, in that order): a yanked release
/// beside one built only for another platform gives `no-build-for-platform`.
#[test]
fn a_dependency_yanked_or_built_elsewhere_fails_for_its_platform() {
    let registry = r#"packages:
  - name: muslish
    versions:
      - {version: "1.0.0", yanked: true}
      - {version: "1.1.0", builds: {prebuilt: [linux/musl/x86_64]}}
  - name: app
    versions: [{version: "1.0.0", depends: [{name: muslish}]}]
"#;
    let cell = entry_cell(registry, "app");
    assert_eq!(
        cell.cause,
        Some(Cause::NoBuildForPlatform),
        "{:?}",
        cell.explanation
    );
}

/// A requirement on a published package that none of its versions meets is a
/// `dependency-conflict` (README, "fails"), also when one of its versions is yanked: only a
/// package with nothing but yanked or pre-release versions reads "has only yanked or
/// pre-release versions".
#[test]
fn a_requirement_no_version_meets_beside_a_yanked_release_is_a_conflict() {
    let registry = r#"packages:
  - name: dep
    versions:
      - {version: "1.0.0", yanked: true}
      - {version: "2.0.0"}
  - name: app
    versions: [{version: "1.0.0", depends: [{name: dep, req: "^3"}]}]
"#;
    let cell = entry_cell(registry, "app");
    let lines = cell.explanation.join("\n");
    assert_eq!(cell.cause, Some(Cause::DependencyConflict), "{lines}");
    assert!(
        lines.contains("dep has no published version matching the requirement"),
        "{lines}"
    );
    assert!(!lines.contains("only yanked"), "{lines}");
}

/// A package with one release names it by its version where its refusals are counted: a lone
/// release is never "any version" (`sets::describe`, `sets::is_every_version`: "and it has
/// more than one"), so the count "1 version" is not left to stand for the package.
#[test]
fn a_lone_refused_release_is_named_by_its_version() {
    let registry = r#"packages:
  - name: solo
    versions: [{version: "1.0.0", runtime: ">=5"}]
"#;
    let cell = entry_cell(registry, "solo");
    assert!(
        cell.explanation.iter().any(|l| l
            == "no version of solo in 1.0.0 can be used here: 1 version needs a newer runtime \
                (>=5; the image has 3.1.5)"),
        "{:?}",
        cell.explanation
    );
}

/// Platform words are read in lower case on both sides: a registry export that upper-cased
/// its prebuilt platforms made every prebuilt-only release fail for the platform on the very
/// image it was built for, without a word (from an end-to-end review).
#[test]
fn platform_words_match_whatever_their_case() {
    let registry = r#"packages:
  - name: simd
    versions: [{version: "1.0.0", builds: {source: false, prebuilt: [Linux/GLIBC/X86_64]}}]
"#;
    let images = "images:\n  - {id: deb, runtime: 3.1.5, family: debian, platform: LINUX/glibc/x86_64, toolchain: true}\n";
    let inputs = inputs_on(images, registry, "priorities: [simd]\n");
    let cell = explain(&inputs, "simd", "deb", &PlanOptions::default())
        .unwrap()
        .cell;
    assert_eq!(cell.root_version.as_deref(), Some("1.0.0"), "{cell:?}");
    assert!(cell.cause.is_none(), "{cell:?}");
}

/// The other names of one architecture or C library match too: Debian's and Go's `amd64` and
/// `arm64`, `gnu` for glibc (common practice, no source). A registry export written so made
/// every prebuilt-only release fail for the platform without a word (from an end-to-end
/// review), while an image on another architecture still refuses it.
#[test]
fn platform_words_match_under_their_other_names() {
    let registry = r#"packages:
  - name: simd
    versions: [{version: "1.0.0", builds: {source: false, prebuilt: [linux/gnu/amd64, linux/musl/arm64]}}]
"#;
    let images = "images:\n  - {id: deb, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64, toolchain: true}\n  - {id: alp, runtime: 3.1.5, family: alpine, platform: linux/musl/aarch64, toolchain: true}\n  - {id: deb-arm, runtime: 3.1.5, family: debian, platform: linux/glibc/arm64, toolchain: true}\n";
    let inputs = inputs_on(images, registry, "priorities: [simd]\n");
    for (image, installs) in [("deb", true), ("alp", true), ("deb-arm", false)] {
        let cell = explain(&inputs, "simd", image, &PlanOptions::default())
            .unwrap()
            .cell;
        assert_eq!(cell.root_version.is_some(), installs, "{image}: {cell:?}");
    }
    let e = explain(&inputs, "simd", "deb-arm", &PlanOptions::default()).unwrap();
    assert_eq!(
        e.cell.cause,
        Some(Cause::NoBuildForPlatform),
        "{:?}",
        e.cell
    );
    // Explanations name the platforms by the one name basefit reads them by.
    let text = e.cell.explanation.join("\n");
    assert!(
        text.contains("prebuilt build for linux/glibc/aarch64") && !text.contains("arm64"),
        "{text}"
    );
}

/// The release hint names the newest release that resolves as a pre-release when it is one
/// and lies outside the entry's requirement (README, `explain`: "named as a pre-release or as
/// outside the entry's requirement when it is one"): `prerelease: true` admits pre-releases,
/// but 2.0.0-rc.1 is outside `^1` all the same, and a reader should not take it for a release
/// (from a mutation review of src/report/text.rs).
#[test]
fn a_pre_release_outside_the_requirement_is_named_as_one_in_the_release_hint() {
    let registry = r#"packages:
  - name: tern
    versions:
      - {version: "1.0.0", runtime: ">=9"}
      - {version: "2.0.0-rc.1"}
  - name: heron
    versions:
      - {version: "1.0.0", runtime: ">=9"}
      - {version: "2.0.0"}
"#;
    let inputs = inputs(
        registry,
        "priorities:\n  - {name: tern, req: \"^1\", prerelease: true}\n  - {name: heron, req: \"^1\"}\n",
    );
    let hints = |name: &str| {
        let e = explain(&inputs, name, "deb", &PlanOptions::default()).unwrap();
        common::hint_lines(&basefit::report::text::explain_text(&e))
    };
    assert!(
        hints("tern").contains(
            &"newest release that resolves on this image: 2.0.0-rc.1 (installs); a pre-release outside the entry's requirement `^1`".to_string()
        ),
        "{:?}",
        hints("tern")
    );
    assert!(
        hints("heron").contains(
            &"newest release that resolves on this image: 2.0.0 (installs); outside the entry's requirement `^1`".to_string()
        ),
        "{:?}",
        hints("heron")
    );
}

/// Every release the release hint tried is named in one of its lines, whatever mix of
/// unresolved constraints and budget exhaustion they show (README, `explain`: hints "claim
/// only what their tries found"): from a mutation review of src/report/text.rs, where beside
/// a release the solver gave up on, the line on those whose constraints do not resolve could
/// be dropped, leaving them unaccounted for.
#[test]
fn the_release_hint_names_every_release_it_tried() {
    use basefit::plan::explain::ReleaseHint;
    use basefit::plan::matrix::Outcome::{Fails, Undecided};
    let hint = ReleaseHint {
        trials: vec![
            trial("2.0.0", Fails, Some(Cause::RuntimeTooOld)),
            trial("1.0.0", Undecided, Some(Cause::BudgetExhausted)),
        ],
        untried: 0,
        yanked: 0,
        not_admitted: None,
        not_asked_for: Vec::new(),
    };
    assert_eq!(
        hint_lines(None, Some(hint)),
        [
            "pinned to 1.0.0, the solver ran out of budget (raise --budget)",
            "pinned to 2.0.0, its version constraints do not resolve",
            "whether any of its releases resolves on this image is unknown",
        ]
    );
    // A release that resolves, older than one the solver gave up on: a newer one may resolve.
    let hint = ReleaseHint {
        trials: vec![
            trial("2.0.0", Undecided, Some(Cause::BudgetExhausted)),
            trial("1.0.0", basefit::plan::matrix::Outcome::Installs, None),
        ],
        untried: 0,
        yanked: 0,
        not_admitted: None,
        not_asked_for: Vec::new(),
    };
    assert_eq!(
        hint_lines(None, Some(hint)),
        [
            "newest release that resolves on this image: 1.0.0 (installs)",
            "on the newer 2.0.0 the solver ran out of budget, so a newer one may resolve too (raise --budget)",
        ]
    );
}

/// Of a root's releases, one needing an older runtime and one with no build for the image's
/// platform (but a build for another): the runtime is named, as README orders causes
/// ("What the outcomes mean": runtime-too-old, runtime-too-new, no-build-for-platform). From a
/// mutation review, where checking the platform before an older runtime went unnoticed.
#[test]
fn older_runtime_outranks_a_missing_build_for_this_platform() {
    let registry = r#"packages:
  - name: quoll
    versions:
      - {version: 1.0.0, runtime: "<3.0"}
      - {version: 1.1.0, builds: {source: false, prebuilt: [linux/musl/x86_64]}}
"#;
    let cell = entry_cell(registry, "quoll");
    assert_eq!(cell.cause, Some(Cause::RuntimeTooNew), "{cell:?}");
}

/// The runtime requirements a refusal names are distinct (two releases asking `>=4.0` show it
/// once), and past three the rest are counted. From a mutation review: neither the dedup nor
/// the cap of three was pinned.
#[test]
fn runtime_requirements_in_a_refusal_are_distinct_and_capped_at_three() {
    let registry = r#"packages:
  - name: numbat
    versions:
      - {version: 1.0.0, runtime: ">=4.0"}
      - {version: 1.1.0, runtime: ">=4.0"}
      - {version: 1.2.0, runtime: ">=4.1"}
  - name: bilby
    versions:
      - {version: 1.0.0, runtime: ">=4.0"}
      - {version: 1.1.0, runtime: ">=4.1"}
      - {version: 1.2.0, runtime: ">=4.2"}
      - {version: 1.3.0, runtime: ">=4.3"}
      - {version: 1.4.0, runtime: ">=4.4"}
"#;
    let numbat = entry_cell(registry, "numbat");
    let lines = numbat.explanation.join("\n");
    assert!(
        lines.contains("3 versions need a newer runtime (>=4.0; >=4.1; the image has 3.1.5)"),
        "{lines}"
    );
    let bilby = entry_cell(registry, "bilby");
    let lines = bilby.explanation.join("\n");
    assert!(
        lines.contains(
            "5 versions need a newer runtime (>=4.0; >=4.1; >=4.2 and 2 more; the image has 3.1.5)"
        ),
        "{lines}"
    );
}

/// Dependencies beside the one the solver met that fail the same release are named in the
/// order of their names, not the order the release lists them, and one whose requirement no
/// published version meets says so rather than giving the conflict's general label. From a
/// mutation review: neither the sort nor that phrase was pinned.
#[test]
fn unmet_sibling_dependencies_are_sorted_by_name_and_say_what_fails() {
    let registry = r#"packages:
  - name: dingo
    versions: [{version: 1.0.0}]
  - name: bandicoot
    versions: [{version: 1.0.0}]
  - name: kite
    versions:
      - version: 1.0.0
        depends:
          - {name: zorilla, req: "^1"}
          - {name: dingo, req: "^9"}
          - {name: ghost-a, req: "^1"}
          - {name: bandicoot, req: "^9"}
"#;
    let cell = entry_cell(registry, "kite");
    let blockers: Vec<(&str, &str)> = cell
        .blockers
        .iter()
        .map(|b| (b.package.as_str(), b.reason.as_str()))
        .collect();
    assert_eq!(
        blockers,
        [
            // The siblings, by name (the release lists zorilla, dingo, ghost-a).
            (
                "dingo",
                "dingo (wanted ^9) has no published version matching the requirement"
            ),
            (
                "ghost-a",
                "ghost-a (wanted ^1) is missing from the registry"
            ),
            (
                "zorilla",
                "zorilla (wanted ^1) is missing from the registry"
            ),
            // The dependency the solver met, stated after them.
            (
                "bandicoot",
                "bandicoot (wanted ^9) has no published version matching the requirement"
            ),
        ],
        "{cell:?}"
    );
}

/// A root whose one unyanked release fails on a conflict between its dependencies, its other
/// release yanked: the conflict is the cause, since "has only yanked or pre-release versions"
/// would be untrue of the release that was tried. From a mutation review: with no other package
/// failing on its own, only the conflict says the unyanked release was tried.
#[test]
fn conflict_outranks_the_roots_yanked_release() {
    let registry = r#"packages:
  - name: cassowary
    versions: [{version: 1.0.0}, {version: 2.0.0}]
  - name: lyrebird
    versions: [{version: 1.0.0, depends: [{name: cassowary, req: "^1"}]}]
  - name: potoroo
    versions: [{version: 1.0.0, depends: [{name: cassowary, req: "^2"}]}]
  - name: galah
    versions:
      - {version: 1.0.0, yanked: true}
      - {version: 2.0.0, depends: [{name: lyrebird, req: "^1"}, {name: potoroo, req: "^1"}]}
"#;
    let cell = entry_cell(registry, "galah");
    assert_eq!(cell.cause, Some(Cause::DependencyConflict), "{cell:?}");
}

/// Two packages that the entry's dependencies ask for in versions that do not overlap are
/// named in the order of their names, not in the order the registry lists them (package ids
/// follow the order of the input, which output must not). From a mutation review: the sort was
/// not pinned.
#[test]
fn conflicting_packages_are_named_in_name_order() {
    let registry = r#"packages:
  - name: yak
    versions: [{version: 1.0.0}, {version: 2.0.0}]
  - name: anoa
    versions: [{version: 1.0.0}, {version: 2.0.0}]
  - name: lyrebird
    versions:
      - {version: 1.0.0, depends: [{name: yak, req: "^1"}]}
      - {version: 2.0.0, depends: [{name: anoa, req: "^1"}]}
  - name: potoroo
    versions: [{version: 1.0.0, depends: [{name: yak, req: "^2"}, {name: anoa, req: "^2"}]}]
  - name: galah
    versions:
      - {version: 1.0.0, depends: [{name: lyrebird}, {name: potoroo, req: "^1"}]}
"#;
    let cell = entry_cell(registry, "galah");
    assert_eq!(cell.cause, Some(Cause::DependencyConflict), "{cell:?}");
    let named: Vec<&str> = cell
        .explanation
        .iter()
        .filter(|l| l.ends_with("that do not overlap"))
        .map(|l| l.rsplit(" of ").next().unwrap_or(""))
        .collect();
    assert_eq!(
        named,
        ["anoa that do not overlap", "yak that do not overlap"],
        "{cell:?}"
    );
}

/// A dependency whose only release is yanked is named beside the one the solver failed on, though
/// the solver itself read that release as refused (it walks each candidate's releases when it
/// chooses what to decide next). From a mutation review of the explanation: it pins the case; the
/// mutant that counts any release the solver recorded as meeting the requirement still survives
/// it (why was not traced).
#[test]
fn a_yanked_only_dependency_is_named_beside_the_failing_one() {
    let registry = r#"packages:
  - name: lyre
    versions: [{version: 1.0.0, runtime: ">=9"}]
  - name: emu
    versions: [{version: 1.0.0, yanked: true}]
  - name: galah
    versions:
      - {version: 1.0.0, depends: [{name: lyre, req: "^1"}, {name: emu, req: "^1"}]}
"#;
    let cell = entry_cell(registry, "galah");
    let mut blocked: Vec<&str> = cell.blockers.iter().map(|b| b.package.as_str()).collect();
    blocked.sort();
    assert_eq!(blocked, ["emu", "lyre"], "{cell:?}");
}

/// An entry whose requirement is `*` asks for nothing beyond the package: its explanation
/// names the package alone, as an entry without a requirement's does, rather than quoting a
/// `*` that narrows nothing.
#[test]
fn an_entry_asking_for_any_version_is_explained_without_its_star() {
    let registry = "packages:\n  - name: bunting\n    versions: [{version: banana}]\n";
    let inputs = inputs(registry, "priorities:\n  - {name: bunting, req: \"*\"}\n");
    let cell = explain(&inputs, "bunting", "deb", &PlanOptions::default())
        .unwrap()
        .cell;
    assert_eq!(cell.cause, Some(Cause::DependencyConflict));
    assert_eq!(
        cell.explanation[0],
        "the entry asks for bunting (no usable version)"
    );
}

/// A cell failing for a declared library the image lacks, that also needs a library the
/// catalog cannot name, says so beside the packages to add: adding them alone would not make
/// it install.
#[test]
fn a_missing_library_failure_names_the_unmapped_library_beside_it() {
    let registry = r#"packages:
  - name: oddball
    versions: [{version: "1.0.0", native: {libraries: [libxml2, libnowhere-at-all]}}]
"#;
    let cell = entry_cell(registry, "oddball");
    assert_eq!(cell.cause, Some(Cause::MissingSystemLibrary), "{cell:#?}");
    assert_eq!(
        cell.explanation.last().unwrap(),
        "a declared native library is missing on deb; add: libxml2-dev; it also needs \
         libraries the catalog has no package for on this image: libnowhere-at-all"
    );
}
