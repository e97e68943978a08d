//! The review of the demo's recorded results, its counts asserted exactly against the
//! outcomes written down in demo-data/STORIES.md.

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
            .args([
                "review",
                "--registry",
                "demo-data/registry.yaml",
                "--images",
                "matrices/demo-images.yaml",
                "--priorities",
                "demo-data/priorities.yaml",
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
