//! basefit's solver against a brute-force oracle on seeded random small registries.

use basefit::load::RegistryBuilder;
use basefit::load::images::read_images_str;
use basefit::solve::{DEFAULT_BUDGET, ImageView, RootSpec, SetCache, Solved, solve_cell};

/// Found by the oracle (seed 195424104, reduced): a release whose dependency on its own
/// package excludes its own version can never be chosen (one version per package), and
/// must not make the solver drop the root. pubgrub 0.4.0 given such a self-dependency, after
/// backtracking out of a sibling release, returned a "solution" without the root package.
#[test]
fn self_dependency_excluding_itself() {
    use basefit::load::registry::read_yaml_str;
    let solve = |yaml: &str| {
        let mut b = RegistryBuilder::new();
        read_yaml_str("r.yaml", yaml, &mut b).unwrap();
        let (registry, _) = b.finish();
        let mut ledger = Default::default();
        let images = read_images_str(
            "i.yaml",
            "images:\n- {id: img, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n",
            &mut ledger,
        )
        .unwrap();
        let sets = SetCache::default();
        let view = ImageView::new(&registry, &images.images[0], &sets);
        let root = RootSpec {
            package: "p0",
            req: None,
            prerelease: false,
        };
        match solve_cell(&view, &root, DEFAULT_BUDGET).solved {
            Solved::Installs { closure, .. } => Ok(closure
                .iter()
                .map(|p| {
                    let pkg = registry.package(p.package);
                    format!("{} {}", pkg.name, pkg.releases[p.index as usize].version)
                })
                .collect::<Vec<_>>()),
            Solved::Fails(f) => Err(f.lines),
            other => panic!("{other:?}"),
        }
    };
    // p0 1.0.0 needs p1 `^0.9` and p1 `>=1.1, <2`, which no p1 version meets together
    // (semver: p1 2.0.0 meets neither); p0 0.9.0 needs p0 `^1`, which 0.9.0 does not meet.
    // No version of p0 can be chosen: no solution.
    let base = "packages:
- name: p0
  versions:
  - {version: '1.0.0', depends: [{name: p1, req: '^0.9'}, {name: p1, req: '>=1.1, <2'}]}
  - {version: '0.9.0', depends: [{name: p0, req: '^1'}]}
- name: p1
  versions:
  - {version: '2.0.0'}
";
    let lines = solve(base).expect_err("no version of p0 is usable");
    assert!(
        lines
            .iter()
            .any(|l| l.contains("p0 0.9.0 depends on p0 ^1")),
        "{lines:#?}"
    );
    // With a release whose self-dependency it meets itself (0.8.0 meets `<1`), that release
    // is the solution, alone.
    let with_good = base.replace(
        "  - {version: '0.9.0',",
        "  - {version: '0.8.0', depends: [{name: p0, req: '<1'}]}\n  - {version: '0.9.0',",
    );
    assert!(with_good.contains("0.8.0"));
    assert_eq!(solve(&with_good), Ok(vec!["p0 0.8.0".to_string()]));
}
