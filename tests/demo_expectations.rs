//! The plan of the demo data gives each demo story its written-down outcome
//! (demo-data/expected.yaml, reasoned by hand in demo-data/STORIES.md), cell by cell.

mod common;

use basefit::plan::{PlanOptions, plan};

fn demo_inputs() -> basefit::load::Inputs {
    common::demo_inputs(vec!["demo-data/results.yaml".into()])
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

/// `explain`'s hints claim only what their trials found, and agree with the plan: the trial at
/// the image's own runtime is the cell itself, and the full Debian images deb-2.4, deb-2.8,
/// deb-3.1 and deb-3.2 differ in their runtime only, so a trial on one of them at another's
/// runtime must come out as that image's cell does. A cell whose version constraints resolve
/// (it fails for a native reason) is never said to resolve nowhere.
#[test]
fn explain_hints_agree_with_the_plan() {
    use basefit::plan::explain::{NotAdmitted, explain};
    use basefit::report::text::explain_text;
    let inputs = demo_inputs();
    let options = PlanOptions::default();
    let matrix = plan(&inputs, &options);
    let siblings = ["deb-2.4", "deb-2.8", "deb-3.1", "deb-3.2"];
    let runtime_of = |id: &str| {
        let col = matrix.images.iter().find(|i| i.id == id).unwrap();
        col.runtime.clone()
    };
    let mut explained = 0;
    for cell in matrix.cells.iter().filter(|c| !c.outcome.resolves()) {
        let e = explain(&inputs, &cell.package, &cell.image, &options).unwrap();
        assert_eq!((e.cell.outcome, e.cell.cause), (cell.outcome, cell.cause));
        let text = explain_text(&e);
        let rt = e.runtime_hint.as_ref().expect("a failing cell gets hints");
        let own = runtime_of(&cell.image);
        for t in &rt.trials {
            if t.version == own {
                assert_eq!((t.outcome, t.cause), (cell.outcome, cell.cause), "{text}");
            }
            if siblings.contains(&cell.image.as_str())
                && let Some(other) = siblings.iter().find(|s| runtime_of(s) == t.version)
            {
                let c = matrix.cell(&cell.package, other).unwrap();
                assert_eq!(
                    (t.outcome, t.cause),
                    (c.outcome, c.cause),
                    "at {other}: {text}"
                );
            }
        }
        if rt
            .trials
            .iter()
            .any(|t| t.fails_natively() || t.undecided())
        {
            assert!(!text.contains("resolves at none"), "{text}");
        }
        let rel = e.release_hint.as_ref().unwrap();
        if rel
            .trials
            .iter()
            .any(|t| t.fails_natively() || t.undecided())
        {
            assert!(!text.contains("releases resolves on"), "{text}");
            assert!(!text.contains("does not resolve on"), "{text}");
        }
        explained += 1;
    }
    assert!(explained >= 20, "{explained}");

    // The reviewers' cells. quill-xml resolves on the slim image (2.0.1) but must compile.
    let e = explain(&inputs, "quill-xml", "deb-3.2-slim", &options).unwrap();
    let text = explain_text(&e);
    assert!(
        text.contains("its version constraints resolve, but it fails: missing-toolchain"),
        "{text}"
    );
    assert!(
        text.contains("no declared image's runtime makes it install here"),
        "{text}"
    );
    assert!(
        text.contains("none of its releases installs on this image"),
        "{text}"
    );
    // bluetongue-async has pre-releases only, and its entry does not ask for them: no runtime
    // helps, and the release that resolves when pinned is named as the pre-release it is.
    let e = explain(&inputs, "bluetongue-async", "deb-3.2", &options).unwrap();
    let text = explain_text(&e);
    assert!(
        text.contains("it resolves at none of the declared images' runtimes"),
        "{text}"
    );
    assert_eq!(
        e.release_hint.as_ref().unwrap().not_admitted,
        Some(NotAdmitted::Prerelease)
    );
    assert!(
        text.contains(
            "newest release that resolves on this image: 0.2.0-beta.1 (installs); a pre-release, which the entry does not ask for"
        ),
        "{text}"
    );
    // pixelmoss's entry asks for ^4 (demo-data/priorities.yaml); the release hint also tries
    // 3.2.0, and a failing try of it is named as outside what the entry asks for.
    let e = explain(&inputs, "pixelmoss", "alpine-2.6", &options).unwrap();
    let text = explain_text(&e);
    assert_eq!(e.release_hint.as_ref().unwrap().not_asked_for, ["3.2.0"]);
    assert!(
        text.contains("the entry as written does not ask for 3.2.0 (its requirement or pre-release setting rules it out)"),
        "{text}"
    );
    // saltbush on deb-2.4 (STORIES.md, story b): every release needs wattle-core 2.x, which
    // needs runtime 3.1 or newer.
    let e = explain(&inputs, "saltbush", "deb-2.4", &options).unwrap();
    let text = explain_text(&e);
    assert!(
        text.contains("lowest declared runtime at which it resolves here: 3.1.2 (installs)"),
        "{text}"
    );
}

/// The hint lines of `explain` for `package` on `image` in the demo.
fn demo_hints(package: &str, image: &str) -> Vec<String> {
    let e =
        basefit::plan::explain::explain(&demo_inputs(), package, image, &PlanOptions::default())
            .unwrap();
    let text = basefit::report::text::explain_text(&e);
    common::hint_lines(&text)
}

/// burrowdb on el9-3.0 fails for one cause at every runtime and every release tried: the hints
/// name the cause once, not once per trial. From a mutation review, where dropping the
/// de-duplication repeated `missing-system-library` six times, which reads like six different
/// problems. The demo's six runtimes are listed in full, with no "and 0 more".
#[test]
fn explain_hints_name_a_shared_cause_once() {
    assert_eq!(
        demo_hints("burrowdb", "el9-3.0"),
        [
            "at runtimes 2.4.9, 2.6.3, 2.8.1, 3.0.5, 3.1.2, 3.2.0 its version constraints resolve, but it fails: missing-system-library",
            "no declared image's runtime makes it install here",
            "pinned to 1.5.2, 1.4.0, its version constraints resolve, but it fails: missing-system-library",
            "none of its releases installs on this image",
        ]
    );
    assert_eq!(
        demo_hints("nosuchpkg", "deb-2.4"),
        [
            "it resolves at none of the declared images' runtimes (2.4.9, 2.6.3, 2.8.1, 3.0.5, 3.1.2, 3.2.0)",
            "it has no release to try on this image",
        ]
    );
}

/// `explain`'s closure tree lists each package's dependencies by name, each followed by its own
/// subtree: from a mutation review, where reversing the order passed every test. mopoke-docs on
/// deb-3.2 has three direct dependencies and one nested one.
#[test]
fn explain_tree_lists_dependencies_by_name_with_their_subtrees() {
    let e = basefit::plan::explain::explain(
        &demo_inputs(),
        "mopoke-docs",
        "deb-3.2",
        &PlanOptions::default(),
    )
    .unwrap();
    let text = basefit::report::text::explain_text(&e);
    let tree: Vec<&str> = text
        .split("\nresolved closure:\n")
        .nth(1)
        .unwrap_or_else(|| panic!("{text}"))
        .lines()
        .take_while(|l| !l.is_empty())
        .collect();
    assert_eq!(
        tree,
        [
            "  mopoke-docs 1.0.0 [source]",
            "    pixelmoss 4.1.2 [prebuilt] (wants ^4.1)",
            "    quandong-templates 1.3.1 [source] (wants ^1.2)",
            "      rivergum-time 2.1.0 [source] (wants >=1.4)",
            "    quill-xml 2.0.1 [source] (wants ^2.0)",
        ],
        "{text}"
    );
}
