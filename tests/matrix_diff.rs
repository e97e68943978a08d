//! What `diff` counts as a changed cell, on small plans of a fictional runtime's packages.

mod common;

use basefit::load::{InputPaths, load_inputs};
use basefit::plan::PlanOptions;
use basefit::plan::matrix::Pinned;
use basefit::plan::matrix::{Matrix, RecordedCheck};
use basefit::verify::diff::{CellBrief, CellChange, diff};

/// A plan of `alpha` and `beta` (one release each) on one image, for the entries `priorities`.
fn planned(priorities: &str) -> Matrix {
    planned_from(
        "packages:\n  - name: alpha\n    versions: [{version: \"1.0.0\"}]\n  - name: beta\n    versions: [{version: \"1.0.0\"}]\n",
        priorities,
        &PlanOptions::default(),
    )
}

/// A plan of `registry` on one glibc image with a toolchain, for the entries `priorities`.
fn planned_from(registry: &str, priorities: &str, options: &PlanOptions) -> Matrix {
    let dir = tempfile::tempdir().unwrap();
    let write = |name: &str, text: &str| common::write(dir.path(), name, text);
    let inputs = load_inputs(&InputPaths {
        registry: vec![write("r.yaml", registry)],
        images: Some(write(
            "i.yaml",
            "images:\n  - {id: deb, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64, toolchain: true}\n",
        )),
        priorities: Some(write("p.yaml", priorities)),
        ..Default::default()
    })
    .unwrap();
    basefit::plan::plan(&inputs, options)
}

/// A cell whose recorded result changed is a changed cell.
#[test]
fn a_changed_recorded_result_is_a_changed_cell() {
    let mut before = planned("priorities:\n  - alpha\n");
    let mut after = before.clone();
    let check = |recorded: &str| RecordedCheck {
        recorded: recorded.into(),
        verdict: "agreed-install".into(),
        version: None,
        detail: String::new(),
        attempts: 1,
        cause_agrees: None,
    };
    before.cells[0].recorded = Some(check("installed"));
    after.cells[0].recorded = Some(check("failed"));
    let d = diff(&before, &after, |_| String::new());
    assert_eq!(d.changes.len(), 1, "{d:#?}");
    assert_eq!(
        d.changes[0].after.as_ref().unwrap().recorded.as_deref(),
        Some("failed")
    );
}

/// A cell only in the older matrix (its entry left the list) is a change with no `after`.
#[test]
fn a_cell_gone_from_the_newer_matrix_is_a_change() {
    let before = planned("priorities:\n  - alpha\n  - beta\n");
    let after = planned("priorities:\n  - alpha\n");
    let d = diff(&before, &after, |_| String::new());
    let gone: Vec<(&str, bool)> = d
        .changes
        .iter()
        .map(|c| (c.package.as_str(), c.after.is_none()))
        .collect();
    assert_eq!(gone, [("beta", true)], "{d:#?}");
}

/// `(name, before, after)` of a change's dependencies, each side `version build` or `-`.
fn dependency_lines(change: &CellChange) -> Vec<(String, String, String)> {
    let side = |p: &Option<Pinned>| {
        p.as_ref().map_or("-".to_string(), |p| {
            format!("{} {}", p.version, p.build.as_str())
        })
    };
    change
        .dependencies
        .iter()
        .map(|d| (d.name.clone(), side(&d.before), side(&d.after)))
        .collect()
}

/// A cell's dependency changes list, by name, the ones gone from the closure, the ones new to
/// it and the ones whose version or build moved (a source build turned prebuilt installs
/// something else), and not the entry itself, whose version its brief already gives.
#[test]
fn a_cells_dependency_changes_are_every_moved_dependency_by_name() {
    let before = planned_from(
        "packages:
  - name: kestrel
    versions: [{version: 1.0.0, depends: [{name: zz, req: '*'}, {name: aa, req: '*'}, {name: yy, req: '*'}]}]
  - {name: aa, versions: [{version: 1.0.0}]}
  - {name: yy, versions: [{version: 1.0.0}]}
  - {name: zz, versions: [{version: 1.0.0}]}
",
        "priorities:\n  - kestrel\n",
        &PlanOptions::default(),
    );
    let after = planned_from(
        "packages:
  - name: kestrel
    versions: [{version: 2.0.0, depends: [{name: zz, req: '*'}, {name: mm, req: '*'}, {name: yy, req: '*'}]}]
  - {name: mm, versions: [{version: 1.0.0}]}
  - {name: yy, versions: [{version: 1.0.0, builds: {prebuilt: [linux/glibc/x86_64]}}]}
  - {name: zz, versions: [{version: 2.0.0}]}
",
        "priorities:\n  - kestrel\n",
        &PlanOptions::default(),
    );
    let d = diff(&before, &after, |_| String::new());
    assert_eq!(d.changes.len(), 1, "{d:#?}");
    let line = |name: &str, b: &str, a: &str| (name.to_string(), b.to_string(), a.to_string());
    assert_eq!(
        dependency_lines(&d.changes[0]),
        [
            line("aa", "1.0.0 source", "-"),
            line("mm", "-", "1.0.0 source"),
            line("yy", "1.0.0 source", "1.0.0 prebuilt"),
            line("zz", "1.0.0 source", "2.0.0 source"),
        ]
    );
    let versions = |c: &Option<CellBrief>| c.as_ref().unwrap().version.clone();
    assert_eq!(versions(&d.changes[0].before).as_deref(), Some("1.0.0"));
    assert_eq!(versions(&d.changes[0].after).as_deref(), Some("2.0.0"));
}

/// A cell that did not resolve before and installs now lists no dependency changes: it had
/// no closure to compare with, and its outcome already says what changed. Listing every
/// dependency as new would read as a snapshot that moved them.
#[test]
fn a_cell_that_starts_resolving_lists_no_dependency_changes() {
    let root =
        "  - name: kestrel\n    versions: [{version: 1.0.0, depends: [{name: ghost, req: ^1}]}]\n";
    let before = planned_from(
        &format!("packages:\n{root}"),
        "priorities:\n  - kestrel\n",
        &PlanOptions::default(),
    );
    let after = planned_from(
        &format!("packages:\n{root}  - {{name: ghost, versions: [{{version: 1.0.0}}]}}\n"),
        "priorities:\n  - kestrel\n",
        &PlanOptions::default(),
    );
    let d = diff(&before, &after, |_| String::new());
    assert_eq!(d.changes.len(), 1, "{d:#?}");
    let c = &d.changes[0];
    assert!(!c.before.as_ref().unwrap().outcome.resolves(), "{c:#?}");
    assert!(c.after.as_ref().unwrap().outcome.resolves(), "{c:#?}");
    assert!(c.dependencies.is_empty(), "{:?}", c.dependencies);
}

/// When one side was planned `--no-closures`, neither side's brief gives the entry's build
/// (one side cannot know it), so the same plan with and without closures shows no changed
/// cell rather than one whose build "appeared".
#[test]
fn a_side_without_closures_hides_the_build_on_both_sides() {
    let registry = "packages:\n  - name: kestrel\n    versions: [{version: 1.0.0, depends: [{name: aa, req: '*'}]}]\n  - {name: aa, versions: [{version: 1.0.0}]}\n";
    let without = PlanOptions {
        closures: false,
        ..PlanOptions::default()
    };
    let before = planned_from(registry, "priorities:\n  - kestrel\n", &without);
    let after = planned_from(
        registry,
        "priorities:\n  - kestrel\n",
        &PlanOptions::default(),
    );
    let d = diff(&before, &after, |_| String::new());
    assert_eq!(
        (d.closures_left_out.before, d.closures_left_out.after),
        (true, false)
    );
    assert!(d.changes.is_empty(), "{:#?}", d.changes);
}

/// The unified diff of the renderings shows two lines of context around a change, the radius
/// `diff` sets (tighter than the three of `diff -u`; common practice, no source): another
/// radius changes every unified diff a reader has saved or scripted against.
#[test]
fn the_unified_diff_has_two_lines_of_context() {
    let before = planned("priorities:\n  - alpha\n");
    let after = planned("priorities:\n  - beta\n");
    let render = |m: &Matrix| format!("l1\nl2\nl3\nl4\n{}\nl6\nl7\nl8\nl9\n", m.cells[0].package);
    let d = diff(&before, &after, render);
    assert_eq!(
        d.unified,
        "--- before\n+++ after\n@@ -3,5 +3,5 @@\n l3\n l4\n-alpha\n+beta\n l6\n l7\n"
    );
}

/// A cell that resolves its constraints but fails on the image (a declared library the image
/// lacks) has a closure too, and what the image would install once the library is added
/// moves with the snapshot: its dependency changes are listed like an installing cell's (they
/// were left out, and `diff` said no cell's dependencies changed).
#[test]
fn a_native_failure_lists_its_dependency_changes() {
    let registry = |aa: &str| {
        format!(
            "packages:
  - name: kestrel
    versions:
      - version: 1.0.0
        depends: [{{name: aa, req: '*'}}]
        native: {{libraries: [libyaml], files: [ext/k.c]}}
  - {{name: aa, versions: [{{version: {aa}}}]}}
"
        )
    };
    let before = planned_from(
        &registry("1.0.0"),
        "priorities:\n  - kestrel\n",
        &PlanOptions::default(),
    );
    let after = planned_from(
        &registry("1.1.0"),
        "priorities:\n  - kestrel\n",
        &PlanOptions::default(),
    );
    for m in [&before, &after] {
        assert_eq!(
            m.cells[0].cause,
            Some(basefit::solve::Cause::MissingSystemLibrary),
            "{:?}",
            m.cells[0]
        );
    }
    let d = diff(&before, &after, |_| String::new());
    assert_eq!(d.changes.len(), 1, "{d:#?}");
    assert_eq!(
        dependency_lines(&d.changes[0]),
        [(
            "aa".to_string(),
            "1.0.0 source".to_string(),
            "1.1.0 source".to_string()
        )]
    );
}

/// The text names what changed in a cell whose outcome and version stayed: its recorded
/// result, the system packages it lacks. The line read "alpha on deb: installs 1.0.0" with
/// nothing to show what moved (from an end-to-end review).
#[test]
fn the_text_names_a_changed_recorded_result_and_missing_packages() {
    let mut before = planned("priorities:\n  - alpha\n  - beta\n");
    let mut after = before.clone();
    after.cells[0].recorded = Some(RecordedCheck {
        recorded: "installed".into(),
        verdict: "agreed-install".into(),
        version: None,
        detail: String::new(),
        attempts: 1,
        cause_agrees: None,
    });
    before.cells[1].missing_system_packages = vec!["libxml2-dev".into()];
    let d = diff(&before, &after, |_| String::new());
    let text = basefit::report::text::diff_text(&d);
    assert!(
        text.contains(
            "alpha on deb: installs 1.0.0 [no recorded install] -> installs 1.0.0 [recorded installed]"
        ),
        "{text}"
    );
    assert!(
        text.contains(
            "beta on deb: installs 1.0.0 [lacks libxml2-dev] -> installs 1.0.0 [lacks no system package]"
        ),
        "{text}"
    );
}

/// A side planned with `--no-native` checked no system package: its cells are not said to lack
/// none. Diffing a native plan against a `--no-native` one printed "fails 1.0.0
/// (missing-system-library) [lacks libyaml-dev] -> installs 1.0.0 [lacks no system package]",
/// which reads as if the image had gained the package (from an end-to-end review).
#[test]
fn a_side_planned_without_native_checks_is_not_said_to_lack_nothing() {
    let registry = "packages:
  - name: kestrel
    versions:
      - version: 1.0.0
        native: {libraries: [libyaml], files: [ext/k.c]}
";
    let before = planned_from(
        registry,
        "priorities:\n  - kestrel\n",
        &PlanOptions::default(),
    );
    let after = planned_from(
        registry,
        "priorities:\n  - kestrel\n",
        &PlanOptions {
            native: false,
            ..PlanOptions::default()
        },
    );
    assert!(after.native_skipped, "{after:?}");
    let d = diff(&before, &after, |_| String::new());
    let text = basefit::report::text::diff_text(&d);
    assert!(
        text.contains("[lacks libyaml-dev] -> installs 1.0.0 [system packages not checked]"),
        "{text}"
    );
    assert!(!text.contains("lacks no system package"), "{text}");
}

/// A cell whose only change is its own build (a source build turned prebuilt) names the build
/// on both sides, and only then: beside another change the build is not named.
#[test]
fn the_text_names_the_entrys_build_where_it_is_all_that_changed() {
    let registry = |builds: &str| {
        format!("packages:\n  - name: kestrel\n    versions: [{{version: 1.0.0{builds}}}]\n")
    };
    let before = planned_from(
        &registry(""),
        "priorities:\n  - kestrel\n",
        &PlanOptions::default(),
    );
    let after = planned_from(
        &registry(", builds: {prebuilt: [linux/glibc/x86_64]}"),
        "priorities:\n  - kestrel\n",
        &PlanOptions::default(),
    );
    let text = basefit::report::text::diff_text(&diff(&before, &after, |_| String::new()));
    assert!(
        text.contains("kestrel on deb: installs 1.0.0 [source] -> installs 1.0.0 [prebuilt]"),
        "{text}"
    );
    let later = planned_from(
        "packages:\n  - name: kestrel\n    versions: [{version: 1.0.0}, {version: 2.0.0, builds: {prebuilt: [linux/glibc/x86_64]}}]\n",
        "priorities:\n  - kestrel\n",
        &PlanOptions::default(),
    );
    let text = basefit::report::text::diff_text(&diff(&before, &later, |_| String::new()));
    assert!(
        text.contains("kestrel on deb: installs 1.0.0 -> installs 2.0.0\n"),
        "{text}"
    );
}

/// A dependency whose build alone changed (source turned prebuilt at the same version) names
/// the build on both sides of its line, and only then: "aa 1.0.0 -> 1.0.0" would list it as
/// moved with nothing to show for it (from a mutation review of src/report/text.rs).
#[test]
fn the_text_names_a_dependencys_build_where_it_is_all_that_changed() {
    let registry = |aa: &str| {
        format!(
            "packages:\n  - name: kestrel\n    versions: [{{version: 1.0.0, depends: [{{name: aa, req: '*'}}]}}]\n  - {{name: aa, versions: [{aa}]}}\n"
        )
    };
    let plan = |aa: &str| {
        planned_from(
            &registry(aa),
            "priorities:\n  - kestrel\n",
            &PlanOptions::default(),
        )
    };
    let before = plan("{version: 1.0.0}");
    let after = plan("{version: 1.0.0, builds: {prebuilt: [linux/glibc/x86_64]}}");
    let text = basefit::report::text::diff_text(&diff(&before, &after, |_| String::new()));
    assert!(
        text.contains("\n    dependencies: aa 1.0.0 (source) -> 1.0.0 (prebuilt)\n"),
        "{text}"
    );
    let later =
        plan("{version: 1.0.0}, {version: 2.0.0, builds: {prebuilt: [linux/glibc/x86_64]}}");
    let text = basefit::report::text::diff_text(&diff(&before, &later, |_| String::new()));
    assert!(
        text.contains("\n    dependencies: aa 1.0.0 -> 2.0.0\n"),
        "{text}"
    );
}

/// Two matrices that differ only in their notice (a newer basefit's wording) agree: the
/// notice is the crate's, not part of the prediction, as `MatrixDiff::differ` documents (from
/// a mutation review of src/verify/diff.rs: comparing the notices passed every test).
#[test]
fn matrices_differing_only_in_their_notice_agree() {
    let before = planned("priorities:\n  - alpha\n");
    let mut after = before.clone();
    after.notice = format!("{} Reworded.", before.notice);
    let d = diff(&before, &after, |_| String::new());
    assert!(!d.differ && !d.any(), "{d:#?}");
    // With a side planned without closures, the same holds.
    let mut no_closures = after.clone();
    no_closures.cells.iter_mut().for_each(|c| {
        c.closure.clear();
        c.closure_size = c.closure_size.max(1);
    });
    let mut before_nc = no_closures.clone();
    before_nc.notice = before.notice.clone();
    let d = diff(&before_nc, &no_closures, |_| String::new());
    assert!(d.closures_left_out.before && !d.any(), "{d:#?}");
}
