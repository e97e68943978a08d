//! The plan of the demo data gives each demo story its written-down outcome
//! (demo-data/expected.yaml, reasoned by hand in demo-data/STORIES.md), cell by cell.

use basefit::load::{InputPaths, load_inputs};
use basefit::plan::{PlanOptions, plan};

fn demo_inputs() -> basefit::load::Inputs {
    load_inputs(&InputPaths {
        registry: vec!["demo-data/registry.yaml".into()],
        images: Some("matrices/demo-images.yaml".into()),
        priorities: Some("demo-data/priorities.yaml".into()),
        results: vec!["demo-data/results.yaml".into()],
        ..Default::default()
    })
    .unwrap()
}

#[test]
fn every_demo_story_gets_its_written_down_outcome() {
    let inputs = demo_inputs();
    let matrix = plan(&inputs, &PlanOptions::default());
    let expected: serde_yaml::Value =
        serde_yaml::from_str(&std::fs::read_to_string("demo-data/expected.yaml").unwrap()).unwrap();
    let cells = expected["cells"].as_sequence().unwrap();
    assert!(cells.len() >= 40);
    let mut wrong = Vec::new();
    for e in cells {
        let package = e["package"].as_str().unwrap();
        let image = e["image"].as_str().unwrap();
        let cell = matrix
            .cell(package, image)
            .unwrap_or_else(|| panic!("no cell {package} on {image}"));
        let want_outcome = e["outcome"].as_str().unwrap();
        let want_cause = e["cause"].as_str();
        let want_version = e["root_version"].as_str();
        let got_cause = cell.cause.map(|c| c.as_str());
        let ok = cell.outcome.as_str() == want_outcome
            && (want_cause.is_none() || want_cause == got_cause)
            && (want_version.is_none() || want_version == cell.root_version.as_deref());
        if !ok {
            wrong.push(format!(
                "{package} on {image}: want {want_outcome} {want_cause:?} {want_version:?}, got {} {got_cause:?} {:?} -- {}\n    {}",
                cell.outcome.as_str(),
                cell.root_version,
                e["story"].as_str().unwrap_or(""),
                cell.explanation.join("\n    ")
            ));
        }
    }
    assert!(
        wrong.is_empty(),
        "{} of {} cells differ:\n{}",
        wrong.len(),
        cells.len(),
        wrong.join("\n")
    );
}

#[test]
fn nothing_is_lost_on_the_demo_data() {
    let inputs = demo_inputs();
    assert!(
        inputs.ledger.unbalanced().is_empty(),
        "{:?}",
        inputs.ledger.tallies
    );
    for (kind, t) in &inputs.ledger.tallies {
        assert_eq!(t.read, t.used + t.left_out, "{kind:?}");
    }
}
