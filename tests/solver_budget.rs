//! A registry that forces heavy backtracking ends within a small step budget as undecided.
//!
//! The registry encodes the pigeonhole principle: `PIGEONS` packages ("pigeons") must each be
//! installed, pigeon `i` at version `j.0.0` means "pigeon i sits in hole j", and that release
//! depends on hole package `hj` at exactly version `i.0.0`. Two pigeons in one hole ask for
//! two versions of the same hole package, which cannot both be chosen (one version per
//! package), so with more pigeons than holes there is no solution. Conflict-driven clause
//! learning, which PubGrub is built on (dart-lang/pub `doc/solver.md`, "Overview": "based on
//! the Conflict-Driven Clause Learning algorithm"), needs exponentially many steps to refute
//! pigeonhole formulas (Haken 1985, "The intractability of resolution": every resolution
//! refutation of the pigeonhole formulas has exponential size): each conflict the solver meets
//! is local (two pigeons in one hole) and says nothing about the other holes, so it learns
//! one small fact after another and backtracks again and again before it can conclude.

use basefit::load::RegistryBuilder;
use basefit::load::images::read_images_str;
use basefit::load::registry::read_yaml_str;
use basefit::model::Registry;
use basefit::solve::{Cause, CellSolve, ImageView, RootSpec, SetCache, Solved, solve_cell};

/// 8 pigeons into 7 holes: about 3,600 steps to refute (a few seconds in debug); one hole more
/// takes minutes, one fewer refutes within the small budget.
const HOLES: usize = 7;
const PIGEONS: usize = HOLES + 1;
const SMALL_BUDGET: u64 = 2_000;
const HUGE_BUDGET: u64 = 10_000_000;

/// `flock 1.0.0` needs every one of `pigeons` pigeons; pigeon `i` has one release per hole.
fn pigeonhole_registry(pigeons: usize, holes: usize) -> Registry {
    let mut y =
        String::from("packages:\n- name: flock\n  versions:\n  - version: '1.0.0'\n    depends:\n");
    for i in 1..=pigeons {
        y.push_str(&format!("    - {{name: pigeon{i}, req: '*'}}\n"));
    }
    for i in 1..=pigeons {
        y.push_str(&format!("- name: pigeon{i}\n  versions:\n"));
        for j in 1..=holes {
            y.push_str(&format!(
                "  - {{version: '{j}.0.0', depends: [{{name: hole{j}, req: '={i}.0.0'}}]}}\n"
            ));
        }
    }
    for j in 1..=holes {
        y.push_str(&format!("- name: hole{j}\n  versions:\n"));
        for i in 1..=pigeons {
            y.push_str(&format!("  - {{version: '{i}.0.0'}}\n"));
        }
    }
    let mut b = RegistryBuilder::new();
    read_yaml_str("pigeonhole.yaml", &y, &mut b).unwrap();
    b.finish().0
}

fn solve(registry: &Registry, budget: u64) -> CellSolve {
    let mut ledger = Default::default();
    let images = read_images_str(
        "i.yaml",
        "images:\n- {id: img, runtime: 1.0.0, family: debian, platform: linux/glibc/x86_64}\n",
        &mut ledger,
    )
    .unwrap();
    let sets = SetCache::default();
    let view = ImageView::new(registry, &images.images[0], &sets);
    let root = RootSpec {
        package: "flock",
        req: None,
        prerelease: false,
    };
    solve_cell(&view, &root, budget)
}

#[test]
fn pigeonhole_exhausts_a_small_budget() {
    let registry = pigeonhole_registry(PIGEONS, HOLES);
    let small = solve(&registry, SMALL_BUDGET);
    assert_eq!(
        small.solved,
        Solved::Undecided {
            steps: SMALL_BUDGET
        },
        "a small budget must end the solve undecided"
    );
    // The steps taken are reported, and never more than the budget.
    assert_eq!(small.steps, SMALL_BUDGET);
    // The budget really bit: given room, the same solve takes far more steps than the small
    // budget, and ends with the answer the pigeonhole principle gives (no solution).
    let full = solve(&registry, HUGE_BUDGET);
    println!("pigeonhole {PIGEONS} into {HOLES}: {} steps", full.steps);
    assert!(
        full.steps > SMALL_BUDGET,
        "only {} steps without a budget",
        full.steps
    );
    match &full.solved {
        Solved::Fails(f) => assert_eq!(f.cause, Cause::DependencyConflict, "{:#?}", f.lines),
        other => panic!("expected no solution, got {other:?}"),
    }
}

#[test]
fn one_pigeon_fewer_installs() {
    // Control: with as many pigeons as holes the registry is solvable (each pigeon in its own
    // hole), so the failure above comes from the counting argument, not from the encoding.
    let registry = pigeonhole_registry(HOLES, HOLES);
    let out = solve(&registry, HUGE_BUDGET);
    let Solved::Installs { closure, .. } = out.solved else {
        panic!("{:?}", out.solved)
    };
    // flock, HOLES pigeons and HOLES holes; every hole holds a distinct pigeon.
    assert_eq!(closure.len(), 1 + 2 * HOLES);
    let mut holes_used: Vec<String> = closure
        .iter()
        .filter(|p| registry.name(p.package).starts_with("pigeon"))
        .map(|p| {
            registry.package(p.package).releases[p.index as usize]
                .version
                .to_string()
        })
        .collect();
    holes_used.sort();
    holes_used.dedup();
    assert_eq!(holes_used.len(), HOLES);
}

/// `explain` on a cell the budget left undecided: its hints say they do not know, rather than
/// that nothing resolves; with the default budget the same cell installs. The diamond: `dia-ok`
/// needs `b ^1` and `c ^1`, and only `c 1.0.0` agrees with `b ^1`.
#[test]
fn explain_hints_on_an_undecided_cell_say_they_do_not_know() {
    use basefit::load::{InputPaths, load_inputs};
    use basefit::plan::PlanOptions;
    use basefit::plan::explain::explain;
    use basefit::plan::matrix::Outcome;
    use basefit::report::text::explain_text;
    let dir = tempfile::tempdir().unwrap();
    let write = |name: &str, text: &str| std::fs::write(dir.path().join(name), text).unwrap();
    write(
        "r.yaml",
        "packages:
  - name: b
    versions: [{version: 1.0.0}, {version: 1.5.0}, {version: 2.0.0}, {version: 2.3.0}]
  - name: c
    versions:
      - {version: 1.0.0, depends: [{name: b, req: '^1'}]}
      - {version: 1.1.0, depends: [{name: b, req: '^2'}]}
  - name: dia-ok
    versions: [{version: 1.0.0, depends: [{name: b, req: '^1'}, {name: c, req: '^1'}]}]
",
    );
    write(
        "i.yaml",
        "images:
  - {id: deb-3.1, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64}
  - {id: deb-2.4, runtime: 2.4.0, family: debian, platform: linux/glibc/x86_64}
",
    );
    write("p.yaml", "priorities: [dia-ok]\n");
    let inputs = load_inputs(&InputPaths {
        registry: vec![dir.path().join("r.yaml")],
        images: Some(dir.path().join("i.yaml")),
        priorities: Some(dir.path().join("p.yaml")),
        ..Default::default()
    })
    .unwrap();
    let tight = PlanOptions {
        budget: 2,
        ..PlanOptions::default()
    };
    let e = explain(&inputs, "dia-ok", "deb-3.1", &tight).unwrap();
    assert_eq!(e.cell.outcome, Outcome::Undecided);
    let text = explain_text(&e);
    assert!(
        text.contains("at runtimes 2.4.0, 3.1.5 the solver ran out of budget"),
        "{text}"
    );
    assert!(
        text.contains("whether its only release resolves on this image is unknown"),
        "{text}"
    );
    for claim in ["resolves at none", "does not resolve", "none of its"] {
        assert!(!text.contains(claim), "`{claim}` in {text}");
    }
    let e = explain(&inputs, "dia-ok", "deb-3.1", &PlanOptions::default()).unwrap();
    assert_eq!(e.cell.outcome, Outcome::Installs);
    assert!(e.runtime_hint.is_none() && e.release_hint.is_none());
}

/// When the budget leaves the lower runtimes undecided and a higher one resolves, the runtime
/// hint says the cell may resolve lower: "lowest declared runtime ... 3.1.2" alone would read
/// as certain. From a mutation review, where dropping that caveat passed every test. The
/// demo's saltbush on deb-2.4 with a budget of 8 steps.
#[test]
fn a_resolving_runtime_above_undecided_ones_keeps_its_caveat() {
    use basefit::load::{InputPaths, load_inputs};
    use basefit::plan::PlanOptions;
    use basefit::plan::explain::explain;
    use basefit::plan::matrix::Outcome;
    use basefit::report::text::explain_text;
    let inputs = load_inputs(&InputPaths {
        registry: vec!["demo-data/registry.yaml".into()],
        images: Some("matrices/demo-images.yaml".into()),
        priorities: Some("demo-data/priorities.yaml".into()),
        ..Default::default()
    })
    .unwrap();
    let tight = PlanOptions {
        budget: 8,
        ..PlanOptions::default()
    };
    let e = explain(&inputs, "saltbush", "deb-2.4", &tight).unwrap();
    assert_eq!(e.cell.outcome, Outcome::Undecided);
    let text = explain_text(&e);
    let lines: Vec<&str> = text.lines().map(str::trim).collect();
    let lowest = lines
        .iter()
        .position(|l| *l == "lowest declared runtime at which it resolves here: 3.1.2 (installs)")
        .unwrap_or_else(|| panic!("{text}"));
    assert_eq!(
        lines[lowest + 1],
        "at the lower runtimes 2.4.9, 2.6.3, 2.8.1, 3.0.5 the solver ran out of budget, so it may resolve lower (raise --budget)",
        "{text}"
    );
}
