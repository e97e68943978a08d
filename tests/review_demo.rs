//! The review of the demo's recorded results, its counts asserted exactly against the
//! outcomes written down in demo-data/STORIES.md.

mod common;

use basefit::load::{InputPaths, load_inputs};
use basefit::plan::{PlanOptions, plan};
use basefit::verify::{Verdict, compare};

#[test]
fn demo_review_counts() {
    let inputs = load_inputs(&InputPaths {
        registry: vec!["demo-data/registry.yaml".into()],
        images: Some("matrices/demo-images.yaml".into()),
        priorities: Some("demo-data/priorities.yaml".into()),
        results: vec!["demo-data/results.yaml".into()],
        ..Default::default()
    })
    .unwrap();
    let matrix = plan(&inputs, &PlanOptions::default());
    let review = compare(
        &matrix,
        &inputs.results,
        &inputs.registry,
        &inputs.images,
        &inputs.catalog,
    );
    let count = |v: Verdict| review.cells.iter().filter(|c| c.verdict == v).count();
    assert_eq!(review.cells.len(), 11);
    assert!(review.outside_matrix.is_empty());
    assert_eq!(count(Verdict::AgreedInstall), 3);
    assert_eq!(count(Verdict::AgreedFailure), 3);
    assert_eq!(count(Verdict::RiskConfirmed), 1);
    assert_eq!(count(Verdict::SurpriseFailure), 1);
    assert_eq!(count(Verdict::SurpriseInstall), 1);
    assert_eq!(count(Verdict::Drift), 1);
    assert_eq!(count(Verdict::Flaky), 1);
    assert_eq!(review.surprises(), 2);
    let c = &review.confusion;
    assert_eq!(
        (
            c.true_failures,
            c.false_failures,
            c.missed_failures,
            c.true_installs
        ),
        (3, 1, 2, 4)
    );
    assert_eq!(c.precision, Some(0.75));
    assert_eq!(c.recall, Some(0.6));
    // The undeclared libxml2 need is caught from the real gcc wording in the log and mapped
    // through the catalog to the Alpine development package.
    let surprise = review
        .cells
        .iter()
        .find(|c| c.verdict == Verdict::SurpriseFailure)
        .unwrap();
    assert_eq!(surprise.package, "thornbill-xml");
    let s = surprise.suggestion.as_deref().unwrap();
    assert!(
        s.contains("undeclared native dependency on libxml2") && s.contains("libxml2-dev"),
        "{s}"
    );
    // The link failure maps to the RHEL-family package.
    let link = review
        .cells
        .iter()
        .find(|c| c.package == "burrow-lite")
        .unwrap();
    assert!(link.suggestion.as_deref().unwrap().contains("libpq-devel"));
}

#[test]
fn review_command_gates_on_max_surprises() {
    let run = |max: &str| {
        std::process::Command::new(env!("CARGO_BIN_EXE_basefit"))
            .arg("review")
            .args(common::DEMO)
            .args([
                "--results",
                "demo-data/results.yaml",
                "--max-surprises",
                max,
                "--format",
                "json",
            ])
            .output()
            .unwrap()
    };
    assert_eq!(run("0").status.code(), Some(1));
    let ok = run("2");
    assert_eq!(ok.status.code(), Some(0));
    let v: serde_json::Value = serde_json::from_slice(&ok.stdout).unwrap();
    assert_eq!(v["cells"].as_array().unwrap().len(), 11);
}

/// The review of `results` (a results YAML document) against the demo's plan.
fn review_of(results: &str) -> basefit::verify::Review {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("results.yaml");
    std::fs::write(&path, results).unwrap();
    let inputs = load_inputs(&InputPaths {
        registry: vec!["demo-data/registry.yaml".into()],
        images: Some("matrices/demo-images.yaml".into()),
        priorities: Some("demo-data/priorities.yaml".into()),
        results: vec![path],
        ..Default::default()
    })
    .unwrap();
    let matrix = plan(&inputs, &PlanOptions::default());
    basefit::verify::compare_inputs(&matrix, &inputs)
}

fn cell<'r>(
    review: &'r basefit::verify::Review,
    package: &str,
    image: &str,
) -> &'r basefit::verify::compare::CellReview {
    review
        .cells
        .iter()
        .find(|c| c.package == package && c.image == image)
        .unwrap()
}

#[test]
fn retries_do_not_hide_an_install_predicted_to_fail() {
    // spadefoot-compat on deb-3.2 and quill-xml on alpine-2.6 are predicted to fail
    // (demo-data/STORIES.md); one recorded install disproves that whatever failed before it.
    // dunnart-json on alpine-2.6 is the mirror case: predicted to install, a failed attempt
    // then an install stays flaky.
    let review = review_of(
        "results:
  - {package: quill-xml, image: alpine-2.6, outcome: failed, log: \"fatal error: libxml/parser.h: No such file or directory\"}
  - {package: quill-xml, image: alpine-2.6, outcome: installed, version: \"2.0.1\"}
  - {package: spadefoot-compat, image: deb-3.2, outcome: failed, log: \"error: download failed: Connection reset by peer\"}
  - {package: spadefoot-compat, image: deb-3.2, outcome: installed, version: \"0.5.1\"}
  - {package: dunnart-json, image: alpine-2.6, outcome: failed, log: \"error: download failed: Connection reset by peer\"}
  - {package: dunnart-json, image: alpine-2.6, outcome: installed, version: \"1.4.0\"}
",
    );
    for (package, image) in [("quill-xml", "alpine-2.6"), ("spadefoot-compat", "deb-3.2")] {
        let c = cell(&review, package, image);
        assert_eq!(c.verdict, Verdict::SurpriseInstall, "{package} on {image}");
        let s = c.suggestion.as_deref().unwrap();
        assert!(s.contains("after 1 failed attempt"), "{s}");
    }
    assert_eq!(
        cell(&review, "dunnart-json", "alpine-2.6").verdict,
        Verdict::Flaky
    );
    assert_eq!(review.surprises(), 2);
    // The two surprise installs count as recorded installs of predicted failures; the flaky
    // cell is left aside.
    let c = &review.confusion;
    assert_eq!(
        (
            c.true_failures,
            c.false_failures,
            c.missed_failures,
            c.true_installs
        ),
        (0, 2, 0, 0)
    );
}

#[test]
fn a_surprise_install_suggestion_follows_the_predicted_cause() {
    let review = review_of(
        "results:
  - {package: quill-xml, image: alpine-3.2, outcome: installed, version: \"2.0.1\"}
  - {package: mopoke-docs, image: deb-3.2-slim, outcome: installed, version: \"1.0.0\"}
  - {package: spadefoot-compat, image: deb-3.2, outcome: installed, version: \"0.5.1\"}
",
    );
    // A native cause was read from the image declaration, so that is what is out of date
    // (demo-data/STORIES.md, recorded result 11).
    let s = cell(&review, "quill-xml", "alpine-3.2")
        .suggestion
        .as_deref()
        .unwrap();
    assert!(
        s.contains("declaration of alpine-3.2 is out of date")
            && s.contains("libxml2-dev")
            && !s.contains("runtime requirement"),
        "{s}"
    );
    let s = cell(&review, "mopoke-docs", "deb-3.2-slim")
        .suggestion
        .as_deref()
        .unwrap();
    assert!(
        s.contains("declaration of deb-3.2-slim is out of date") && s.contains("toolchain"),
        "{s}"
    );
    // A runtime cause was read from the package metadata.
    let s = cell(&review, "spadefoot-compat", "deb-3.2")
        .suggestion
        .as_deref()
        .unwrap();
    assert!(
        s.contains("runtime requirement and builds of spadefoot-compat"),
        "{s}"
    );
}

#[test]
fn no_advice_to_add_a_package_the_image_already_declares() {
    // deb-3.2 declares libxml2-dev (matrices/demo-images.yaml, through deb-2.4).
    let review = review_of(
        "results:
  - {package: thornbill-xml, image: deb-3.2, outcome: failed, log: \"src/ext/parse.c:3:10: fatal error: libxml/parser.h: No such file or directory\"}
",
    );
    let s = cell(&review, "thornbill-xml", "deb-3.2")
        .suggestion
        .as_deref()
        .unwrap();
    assert!(
        !s.contains("add libxml2-dev to deb-3.2") && s.contains("deb-3.2 declares libxml2-dev"),
        "{s}"
    );
}
