//! Version solving for one (package, image) cell with the `pubgrub` crate.
//!
//! ```
//! use basefit::load::{RegistryBuilder, registry::read_yaml_str, images::read_images_str};
//! use basefit::solve::{SetCache, ImageView, RootSpec, Solved, solve_cell};
//! let mut b = RegistryBuilder::new();
//! read_yaml_str("r.yaml", "packages:\n- name: kelp\n  versions:\n  - {version: 1.0.0}\n  - {version: 2.0.0, runtime: '>=3'}\n", &mut b).unwrap();
//! let (registry, _) = b.finish();
//! let mut ledger = Default::default();
//! let images = read_images_str("i.yaml", "images:\n- {id: old, runtime: 2.9.0, family: debian, platform: linux/glibc/x86_64}\n", &mut ledger).unwrap();
//! let sets = SetCache::default();
//! let view = ImageView::new(&registry, &images.images[0], &sets);
//! let out = solve_cell(&view, &RootSpec { package: "kelp", req: None, prerelease: false }, 10_000);
//! let Solved::Installs { root_index, .. } = out.solved else { panic!() };
//! assert_eq!(registry.package(registry.id("kelp").unwrap()).releases[root_index as usize].version.to_string(), "1.0.0");
//! ```

pub mod explain;
pub mod image;
pub mod provider;
pub mod sets;

pub use explain::{Blocker, Failure};
pub use image::{Admission, BuildKind, ImageView};
pub use provider::{CellProvider, Node, Observed};
pub use sets::{IndexSet, SetCache};

use crate::model::{PackageId, Requirement};
use pubgrub::PubGrubError;
use serde::Serialize;

/// The default number of solver steps one cell may take before it is undecided.
pub const DEFAULT_BUDGET: u64 = 20_000;

/// Why a package does not install on an image.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, serde::Deserialize,
)]
#[serde(rename_all = "kebab-case")]
pub enum Cause {
    RuntimeTooOld,
    RuntimeTooNew,
    DependencyConflict,
    MissingFromRegistry,
    NoBuildForPlatform,
    OnlyYankedOrPrerelease,
    BudgetExhausted,
    /// Set by the native-library step: a needed development package is not on the image.
    MissingSystemLibrary,
    /// Set by the native-library step: a source build needs a C toolchain, or on an image with
    /// a C compiler only a C++ compiler, that the image lacks.
    MissingToolchain,
}

impl Cause {
    pub const ALL: [Cause; 9] = [
        Cause::RuntimeTooOld,
        Cause::RuntimeTooNew,
        Cause::DependencyConflict,
        Cause::MissingFromRegistry,
        Cause::NoBuildForPlatform,
        Cause::OnlyYankedOrPrerelease,
        Cause::BudgetExhausted,
        Cause::MissingSystemLibrary,
        Cause::MissingToolchain,
    ];

    /// The kebab-case name used in every output format.
    pub fn as_str(self) -> &'static str {
        match self {
            Cause::RuntimeTooOld => "runtime-too-old",
            Cause::RuntimeTooNew => "runtime-too-new",
            Cause::DependencyConflict => "dependency-conflict",
            Cause::MissingFromRegistry => "missing-from-registry",
            Cause::NoBuildForPlatform => "no-build-for-platform",
            Cause::OnlyYankedOrPrerelease => "only-yanked-or-prerelease",
            Cause::BudgetExhausted => "budget-exhausted",
            Cause::MissingSystemLibrary => "missing-system-library",
            Cause::MissingToolchain => "missing-toolchain",
        }
    }

    pub fn parse(s: &str) -> Option<Cause> {
        Cause::ALL.into_iter().find(|c| c.as_str() == s)
    }

    /// A short phrase for sentences.
    pub fn label(self) -> &'static str {
        match self {
            Cause::RuntimeTooOld => "needs a newer runtime",
            Cause::RuntimeTooNew => "needs an older runtime",
            Cause::DependencyConflict => "has conflicting dependency requirements",
            Cause::MissingFromRegistry => "is missing from the registry",
            Cause::NoBuildForPlatform => "has no build for this platform",
            Cause::OnlyYankedOrPrerelease => "has only yanked or pre-release versions",
            Cause::BudgetExhausted => "was not decided within the solver budget",
            Cause::MissingSystemLibrary => "needs a system library the image lacks",
            Cause::MissingToolchain => "needs a C or C++ compiler the image lacks",
        }
    }
}

/// One package and release chosen in a solution.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
pub struct Pin {
    pub package: PackageId,
    pub index: u32,
    pub build: BuildKind,
}

/// The answer for one cell.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub enum Solved {
    /// Installs; the closure holds every package pulled in (the root included), by name order.
    Installs {
        root_index: u32,
        closure: Vec<Pin>,
    },
    Fails(Failure),
    Undecided {
        steps: u64,
    },
}

/// A solve and what it looked at.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CellSolve {
    pub solved: Solved,
    /// What the solve asked of the registry and the image.
    pub observed: Observed,
    pub steps: u64,
}

/// What to solve: a package name, an optional requirement on its version, and whether its
/// pre-releases are admitted.
#[derive(Debug, Clone, Copy)]
pub struct RootSpec<'a> {
    pub package: &'a str,
    pub req: Option<&'a Requirement>,
    pub prerelease: bool,
}

/// Solves one package on one image.
pub fn solve_cell(view: &ImageView<'_>, root: &RootSpec<'_>, budget: u64) -> CellSolve {
    let registry = view.registry;
    let Some(root_id) = registry
        .id(root.package)
        .filter(|id| registry.package(*id).declared)
    else {
        // A name only used as a dependency must stay undeclared for this answer to hold; a
        // name the registry lacks altogether leaves nothing to observe.
        let undeclared: Vec<PackageId> = registry.id(root.package).into_iter().collect();
        return CellSolve {
            solved: Solved::Fails(Failure {
                cause: Cause::MissingFromRegistry,
                lines: vec![format!("{} is not in the registry", root.package)],
                blockers: Vec::new(),
            }),
            observed: Observed {
                packages: undeclared.clone(),
                explained: undeclared,
                ..Observed::default()
            },
            steps: 0,
        };
    };
    let any = Requirement::any();
    let req = root.req.unwrap_or(&any);
    let root_set = sets::root_set(registry, root_id, req, root.prerelease);
    solve_with_root_set(view, root_id, root_set, budget)
}

/// Solves with the root restricted to the release indices in `root_set`.
pub fn solve_with_root_set(
    view: &ImageView<'_>,
    root_id: PackageId,
    root_set: IndexSet,
    budget: u64,
) -> CellSolve {
    run(
        view,
        CellProvider::new(view, root_id, root_set, budget),
        root_id,
    )
}

/// Solves several packages together on one image: one solution in which every root of
/// `roots` (package, allowed release indices) is installed at once, as when an image
/// pre-installs them. An empty `roots` trivially installs nothing. On success the closure
/// covers every root; `root_index` is the first root's release. A failure is explained from
/// the first root's point of view: its lines cover the whole derivation, and so do its
/// blockers unless the cause is read off the first root's own releases (then only those that
/// fail the same way are kept, as in a cell).
pub fn solve_joint(
    view: &ImageView<'_>,
    roots: &[(PackageId, IndexSet)],
    budget: u64,
) -> CellSolve {
    let Some(first) = roots.first().map(|r| r.0) else {
        return CellSolve {
            solved: Solved::Installs {
                root_index: 0,
                closure: Vec::new(),
            },
            observed: Observed::default(),
            steps: 0,
        };
    };
    run(
        view,
        CellProvider::joint(view, roots.to_vec(), budget),
        first,
    )
}

fn run(view: &ImageView<'_>, provider: CellProvider<'_, '_>, root_id: PackageId) -> CellSolve {
    let registry = view.registry;
    let result = pubgrub::resolve(&provider, Node::Root, 0u32);
    let steps = provider.steps();
    let mut observed = provider.take_observed();
    let solved = match result {
        Ok(selected) => {
            let mut closure: Vec<Pin> = selected
                .iter()
                .filter_map(|(node, index)| match node {
                    Node::Package(p) => Some(Pin {
                        package: *p,
                        index: *index,
                        build: view.build_kind(*p, *index as usize),
                    }),
                    _ => None,
                })
                .collect();
            closure.sort_by(|a, b| registry.name(a.package).cmp(registry.name(b.package)));
            let root_index = closure
                .iter()
                .find(|p| p.package == root_id)
                .map(|p| p.index)
                .unwrap_or(0);
            Solved::Installs {
                root_index,
                closure,
            }
        }
        Err(PubGrubError::NoSolution(err)) => {
            // Not collapsed: pubgrub's collapse drops the "no versions" facts that name the
            // cause; the explainer merges them per package itself.
            let (failure, examined) = explain::explain(view, root_id, &err, &mut observed);
            observed.explained = examined;
            observed.finish();
            explain::dismantle(err);
            Solved::Fails(failure)
        }
        Err(PubGrubError::ErrorInShouldCancel(e)) => Solved::Undecided { steps: e.steps },
        Err(PubGrubError::ErrorChoosingVersion { source, .. })
        | Err(PubGrubError::ErrorRetrievingDependencies { source, .. }) => Solved::Undecided {
            steps: source.steps,
        },
    };
    CellSolve {
        solved,
        observed,
        steps,
    }
}

/// A registry read from YAML text and one debian image at runtime 3.0.0, for the solver's
/// unit tests.
#[cfg(test)]
pub(crate) fn test_registry_and_image(yaml: &str) -> (crate::model::Registry, crate::model::Image) {
    let mut b = crate::load::RegistryBuilder::new();
    crate::load::registry::read_yaml_str("r.yaml", yaml, &mut b).unwrap();
    let (registry, _) = b.finish();
    let images = crate::load::images::read_images_str(
        "i.yaml",
        "images:\n- {id: deb, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n",
        &mut Default::default(),
    )
    .unwrap();
    (registry, images.images[0].clone())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn solve(yaml: &str, root: &str) -> (crate::model::Registry, CellSolve) {
        let (registry, image) = test_registry_and_image(yaml);
        let sets = SetCache::default();
        let view = ImageView::new(&registry, &image, &sets);
        let spec = RootSpec {
            package: root,
            req: None,
            prerelease: false,
        };
        let out = solve_cell(&view, &spec, 1_000);
        (registry, out)
    }

    #[test]
    fn a_name_only_depended_on_is_missing_and_watched_as_a_whole() {
        let (registry, out) = solve(
            "packages:\n- name: kelp\n  versions:\n  - {version: 1.0.0, depends: [{name: ghost, req: '*'}]}\n",
            "ghost",
        );
        let ghost = registry.id("ghost").unwrap();
        let Solved::Fails(failure) = out.solved else {
            panic!("expected a failure")
        };
        assert_eq!(failure.cause, Cause::MissingFromRegistry);
        assert_eq!(failure.lines, ["ghost is not in the registry"]);
        assert_eq!(out.steps, 0);
        // Declaring it later must send the cell back to the solver.
        assert_eq!(out.observed.explained, [ghost]);
    }

    #[test]
    fn a_requirement_repeated_on_itself_is_named_once() {
        let (_, out) = solve(
            "packages:\n- name: kelp\n  versions:\n  - {version: 1.0.0, depends: [{name: kelp, req: '^2'}, {name: kelp, req: '^2'}]}\n",
            "kelp",
        );
        let Solved::Fails(failure) = out.solved else {
            panic!("expected a failure")
        };
        let text = failure.lines.join("\n");
        assert!(
            text.contains("kelp 1.0.0 depends on kelp ^2, which excludes itself"),
            "{text}"
        );
        assert!(!text.contains("^2, ^2"), "{text}");
    }
}
