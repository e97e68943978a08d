//! Dependency chains far deeper than any real registry has, solved and explained on a thread
//! with a small stack: whatever walks the chain must not need stack in proportion to it. The
//! recursive walks these tests were written against overflowed at this depth in a debug build
//! (a whole-process abort, not a test failure).

use basefit::load::{InputPaths, load_inputs};
use basefit::plan::PlanOptions;
use basefit::plan::explain::explain;
use std::path::Path;

/// Packages in the chain: p0 depends on p1, ..., the last on `tail`.
const DEPTH: usize = 3_000;
/// Far below the main thread's 8 MiB, so a walk that recursed once per link would overflow
/// here at a depth a test can solve quickly.
const STACK: usize = 256 * 1024;

fn chain_inputs(dir: &Path, tail: Option<&str>) -> basefit::load::Inputs {
    let mut reg = String::from("packages:\n");
    for i in 0..DEPTH {
        let dep = if i + 1 < DEPTH {
            format!("p{}", i + 1)
        } else {
            match tail {
                Some(t) => t.to_string(),
                None => {
                    reg.push_str(&format!(
                        "  - name: p{i}\n    versions: [{{version: \"1.0.0\"}}]\n"
                    ));
                    continue;
                }
            }
        };
        reg.push_str(&format!(
            "  - name: p{i}\n    versions: [{{version: \"1.0.0\", depends: [{{name: {dep}}}]}}]\n"
        ));
    }
    std::fs::write(dir.join("r.yaml"), reg).unwrap();
    std::fs::write(
        dir.join("i.yaml"),
        "images:\n  - {id: deb, runtime: 3.2.0, family: debian, platform: linux/glibc/x86_64}\n",
    )
    .unwrap();
    std::fs::write(dir.join("p.yaml"), "priorities: [p0]\n").unwrap();
    load_inputs(&InputPaths {
        registry: vec![dir.join("r.yaml")],
        images: Some(dir.join("i.yaml")),
        priorities: Some(dir.join("p.yaml")),
        ..Default::default()
    })
    .unwrap()
}

fn options() -> PlanOptions {
    PlanOptions {
        budget: 10 * DEPTH as u64,
        ..PlanOptions::default()
    }
}

/// Runs `f` on a thread with a small stack; an overflow there aborts the test binary.
fn on_small_stack<T: Send + 'static>(f: impl FnOnce() -> T + Send + 'static) -> T {
    std::thread::Builder::new()
        .stack_size(STACK)
        .spawn(f)
        .unwrap()
        .join()
        .unwrap()
}

/// The closure tree of a cell that installs is as deep as the chain.
#[test]
fn explain_draws_a_deep_closure_tree() {
    let dir = tempfile::tempdir().unwrap();
    let inputs = chain_inputs(dir.path(), None);
    let e = on_small_stack(move || explain(&inputs, "p0", "deb", &options()).unwrap());
    assert_eq!(e.cell.outcome.as_str(), "installs");
    assert_eq!(e.tree.len(), DEPTH);
    for (i, line) in e.tree.iter().enumerate() {
        assert_eq!(
            (line.depth, line.name.as_str()),
            (i, format!("p{i}").as_str())
        );
    }
}

/// A chain ending in a package the registry does not have: the derivation tree is as deep
/// as the chain, and the explanation walks it.
#[test]
fn explain_walks_a_deep_derivation_tree() {
    let dir = tempfile::tempdir().unwrap();
    let inputs = chain_inputs(dir.path(), Some("nowhere"));
    let e = on_small_stack(move || explain(&inputs, "p0", "deb", &options()).unwrap());
    assert_eq!(e.cell.outcome.as_str(), "fails");
    assert!(
        e.cell
            .explanation
            .iter()
            .any(|l| l == "nowhere is not in the registry"),
        "{:?}",
        &e.cell.explanation[..5]
    );
    assert!(e.tree.is_empty());
}

/// Every image of a long `extends` chain that cannot be built is reported on its own, each
/// with the first cause only. Repeating each base's message inside the next one made the
/// messages of a 4,000-image chain hundreds of megabytes; a cycle's path is shortened the
/// same way, since it is reported once per image on it.
#[test]
fn images_of_a_long_broken_chain_get_short_messages() {
    use basefit::load::images::read_images_str;
    const IMAGES: usize = 4_000;
    let fields = "runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64";
    let mut chain = String::from("images:\n");
    let mut cycle = String::from("images:\n");
    for i in 0..IMAGES {
        let base = if i + 1 < IMAGES {
            format!("i{}", i + 1)
        } else {
            "nowhere".to_string()
        };
        chain.push_str(&format!("- {{id: i{i}, {fields}, extends: {base}}}\n"));
        cycle.push_str(&format!(
            "- {{id: c{i}, {fields}, extends: c{}}}\n",
            (i + 1) % IMAGES
        ));
    }
    for (text, first) in [
        (
            chain,
            "its base `i1` cannot be built: extends `nowhere`, which is not declared",
        ),
        (
            cycle,
            "its base `c1` cannot be built: extends in a cycle: c0 -> c1 -> c2 -> c3 -> (3993 more) -> c3997 -> c3998 -> c3999 -> c0",
        ),
    ] {
        let mut ledger = Default::default();
        let images = read_images_str("images.yaml", &text, &mut ledger).unwrap();
        assert!(images.images.is_empty());
        let ledger: basefit::load::Ledger = ledger;
        assert_eq!(ledger.problems.len(), IMAGES, "one report per image");
        assert_eq!(ledger.problems[0].detail, first);
        let longest = ledger
            .problems
            .iter()
            .map(|p| p.detail.len())
            .max()
            .unwrap();
        assert!(longest < 200, "a message of {longest} bytes");
    }
}

/// The text form of a deep closure tree grows with the number of lines, not with the square
/// of the depth: indentation stops at a depth no reader follows, and deeper lines give it.
#[test]
fn a_deep_closure_tree_reads_as_text_without_growing_with_the_square_of_its_depth() {
    let dir = tempfile::tempdir().unwrap();
    let inputs = chain_inputs(dir.path(), None);
    let e = on_small_stack(move || explain(&inputs, "p0", "deb", &options()).unwrap());
    let text = basefit::report::text::explain_text(&e);
    let last = format!("(depth {}) p{} 1.0.0 [source]", DEPTH - 1, DEPTH - 1);
    assert!(text.contains(&last), "{}", &text[..2000]);
    let tree_lines = text.lines().filter(|l| l.contains(" 1.0.0"));
    assert_eq!(tree_lines.clone().count(), DEPTH);
    let longest = tree_lines.map(str::len).max().unwrap();
    assert!(longest < 120, "a tree line of {longest} bytes");
    // Shallow lines keep their indentation: two spaces per level, plus two.
    assert!(
        text.contains("\n      p2 1.0.0 [source] (wants *)\n"),
        "{}",
        &text[..400]
    );
}

/// A root whose newest release the image refuses for its runtime, on top of the chain, and
/// whose older release needs a missing name: whether another runtime would help turns on the
/// whole chain, which the choice of cause walks without recursing.
#[test]
fn the_cause_check_walks_a_deep_chain_below_a_refused_release() {
    for (tail, cause) in [
        (None, "runtime-too-old"),
        (Some("nowhere"), "missing-from-registry"),
    ] {
        let dir = tempfile::tempdir().unwrap();
        chain_inputs(dir.path(), tail);
        let registry = dir.path().join("r.yaml");
        let mut text = std::fs::read_to_string(&registry).unwrap();
        text.push_str(
            "  - name: crest\n    versions:\n      - {version: \"1.0.0\", depends: [{name: nowhere}]}\n      - {version: \"2.0.0\", runtime: \">=4.0\", depends: [{name: p0}]}\n",
        );
        std::fs::write(&registry, text).unwrap();
        std::fs::write(dir.path().join("p.yaml"), "priorities: [crest]\n").unwrap();
        let inputs = load_inputs(&InputPaths {
            registry: vec![registry],
            images: Some(dir.path().join("i.yaml")),
            priorities: Some(dir.path().join("p.yaml")),
            ..Default::default()
        })
        .unwrap();
        let e = on_small_stack(move || explain(&inputs, "crest", "deb", &options()).unwrap());
        assert_eq!(e.cell.cause.map(|c| c.as_str()), Some(cause), "{tail:?}");
    }
}

/// The closure tree indents up to depth 30 and says the depth of deeper lines instead: a line
/// at depth 30 is indented and unlabelled, one at 31 carries `(depth 31)` at the same indent.
/// From a mutation review: only chains far past the cap were tested, so an off-by-one at the
/// cap went unnoticed and mislabelled the last indented line.
#[test]
fn the_tree_indent_stops_exactly_at_its_cap() {
    use basefit::plan::explain::{Explanation, TreeLine};
    use basefit::plan::matrix::{Cell, Outcome};
    let line = |depth: usize, name: &str| TreeLine {
        depth,
        name: name.into(),
        version: "1.0.0".into(),
        requirement: None,
        repeated: false,
    };
    let e = Explanation {
        notice: "notice".into(),
        native_skipped: false,
        cell: Cell::new("root", "img", Outcome::Installs),
        tree: vec![line(29, "shallow"), line(30, "capped"), line(31, "deep")],
        runtime_hint: None,
        release_hint: None,
    };
    let text = basefit::report::text::explain_text(&e);
    let spaces = |n: usize| " ".repeat(n);
    for want in [
        format!("\n{}shallow 1.0.0\n", spaces(60)),
        format!("\n{}capped 1.0.0\n", spaces(62)),
        format!("\n{}(depth 31) deep 1.0.0\n", spaces(62)),
    ] {
        assert!(text.contains(&want), "{want:?} in {text}");
    }
}
