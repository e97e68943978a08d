//! What `diff` counts as a changed cell, on small plans of a fictional runtime's packages.

mod common;

use basefit::load::{InputPaths, load_inputs};
use basefit::plan::PlanOptions;
use basefit::plan::matrix::{Matrix, RecordedCheck};
use basefit::verify::diff::diff;

/// A plan of `alpha` and `beta` (one release each) on one image, for the entries `priorities`.
fn planned(priorities: &str) -> Matrix {
    let dir = tempfile::tempdir().unwrap();
    let write = |name: &str, text: &str| common::write(dir.path(), name, text);
    let inputs = load_inputs(&InputPaths {
        registry: vec![write(
            "r.yaml",
            "packages:\n  - name: alpha\n    versions: [{version: \"1.0.0\"}]\n  - name: beta\n    versions: [{version: \"1.0.0\"}]\n",
        )],
        images: Some(write(
            "i.yaml",
            "images:\n  - {id: deb, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64, toolchain: true}\n",
        )),
        priorities: Some(write("p.yaml", priorities)),
        ..Default::default()
    })
    .unwrap();
    basefit::plan::plan(&inputs, &PlanOptions::default())
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
