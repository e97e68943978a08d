//! The pre-install set of one image: packages an image ships together must resolve as one
//! set, so they are chosen greedily in priority order with a joint solve.

use super::matrix::{Outcome, Pinned, PlanOptions, plan_cell};
use crate::load::Inputs;
use crate::model::{Image, PackageId, Requirement};
use crate::solve::{self, CellSolve, ImageView, IndexSet, SetCache, Solved, sets};
use serde::Serialize;
use std::fmt::Write;

/// A kept priority entry and the version the joint solution installs.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Kept {
    pub name: String,
    pub version: String,
}

/// A priority entry left out of the pre-install set.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct LeftOut {
    pub name: String,
    pub reason: String,
    /// Higher-priority kept packages it cannot be installed together with: a minimal set
    /// that, with this package, has no joint solution (one name for a pairwise conflict).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub conflicts_with: Vec<String>,
}

/// The pre-install plan of one image.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Preinstall {
    pub image: String,
    pub runtime: String,
    pub platform: String,
    /// Kept entries in priority order.
    pub kept: Vec<Kept>,
    /// The manifest: every package of the final joint solution with its exact version.
    pub manifest: Vec<Pinned>,
    pub left_out: Vec<LeftOut>,
    /// System packages the image lacks for the joint closure (the native step on the final
    /// solution, which may pick other versions than each package alone).
    pub missing_system_packages: Vec<String>,
}

struct Root {
    name: String,
    id: PackageId,
    set: IndexSet,
}

fn joint(view: &ImageView<'_>, roots: &[&Root], budget: u64) -> CellSolve {
    let r: Vec<(PackageId, IndexSet)> = roots.iter().map(|r| (r.id, r.set.clone())).collect();
    solve::solve_joint(view, &r, budget)
}

/// Builds the pre-install set of `image`.
///
/// Each entry, in priority order, is first planned alone (native step included when
/// `options.native` is set): one that does not resolve alone, or needs system packages the
/// image certainly lacks, is left out with that reason. Otherwise it is kept when the kept
/// packages plus it still have a joint solution. When they do not, the conflict is named by
/// deletion: starting from all kept packages, each is dropped (lowest priority first) if the
/// rest plus the candidate still fail, which leaves a minimal conflicting subset that favours
/// the highest-priority packages. A joint solve that runs out of budget counts as "not shown
/// to fail", so it never names a package without evidence.
pub fn preinstall(
    inputs: &Inputs,
    image: &Image,
    options: &PlanOptions,
    sets_cache: &SetCache,
) -> Preinstall {
    let registry = &inputs.registry;
    let view = ImageView::new(registry, image, sets_cache);
    let mut kept: Vec<Root> = Vec::new();
    let mut left_out = Vec::new();
    for entry in &inputs.priorities.entries {
        let cell = plan_cell(inputs, &view, entry, options);
        if !cell.outcome.resolves() {
            let why = if cell.explanation.is_empty() {
                "does not resolve".to_string()
            } else {
                cell.explanation.join("; ")
            };
            let cause = cell
                .cause
                .map(|c| c.as_str())
                .unwrap_or(match cell.outcome {
                    Outcome::Undecided => "budget-exhausted",
                    _ => "fails",
                });
            left_out.push(LeftOut {
                name: entry.name.clone(),
                reason: format!("does not install alone ({cause}): {why}"),
                conflicts_with: Vec::new(),
            });
            continue;
        }
        // plan_cell resolved it, so the package is declared in the registry; were it not,
        // the entry is still accounted for.
        let Some(id) = registry.id(&entry.name) else {
            left_out.push(LeftOut {
                name: entry.name.clone(),
                reason: "not in the registry".to_string(),
                conflicts_with: Vec::new(),
            });
            continue;
        };
        let any = Requirement::any();
        let candidate = Root {
            name: entry.name.clone(),
            id,
            set: sets::root_set(
                registry,
                id,
                entry.req.as_ref().unwrap_or(&any),
                entry.prerelease,
            ),
        };
        let mut with: Vec<&Root> = kept.iter().collect();
        with.push(&candidate);
        let solved = joint(&view, &with, options.budget);
        match solved.solved {
            Solved::Installs { .. } => kept.push(candidate),
            Solved::Undecided { steps } => left_out.push(LeftOut {
                name: entry.name.clone(),
                reason: format!(
                    "the joint solve with the kept packages gave up after {steps} steps"
                ),
                conflicts_with: Vec::new(),
            }),
            Solved::Fails(_) => {
                let mut culprits: Vec<&Root> = kept.iter().collect();
                for i in (0..culprits.len()).rev() {
                    let mut trial: Vec<&Root> = culprits
                        .iter()
                        .enumerate()
                        .filter(|(j, _)| *j != i)
                        .map(|(_, r)| *r)
                        .collect();
                    trial.push(&candidate);
                    let s = joint(&view, &trial, options.budget);
                    if matches!(s.solved, Solved::Fails(_)) {
                        culprits.remove(i);
                    }
                }
                let names: Vec<String> = culprits.iter().map(|r| r.name.clone()).collect();
                left_out.push(LeftOut {
                    name: entry.name.clone(),
                    reason: format!(
                        "cannot be installed together with {}",
                        if names.is_empty() {
                            "the kept packages".to_string()
                        } else {
                            names.join(", ")
                        }
                    ),
                    conflicts_with: names,
                });
            }
        }
    }
    let all: Vec<&Root> = kept.iter().collect();
    let final_solve = joint(&view, &all, options.budget);
    let mut manifest = Vec::new();
    let mut missing_system_packages = Vec::new();
    let mut kept_rows: Vec<Kept> = kept
        .iter()
        .map(|r| Kept {
            name: r.name.clone(),
            version: String::new(),
        })
        .collect();
    if let Solved::Installs { closure, .. } = &final_solve.solved {
        if options.native {
            missing_system_packages =
                crate::native::assess(registry, &inputs.catalog, image, closure).packages_to_add();
        }
        for p in closure {
            let version = registry.package(p.package).releases[p.index as usize]
                .version
                .to_string();
            if let Some(k) = kept
                .iter()
                .position(|r| r.id == p.package)
                .and_then(|i| kept_rows.get_mut(i))
            {
                k.version = version.clone();
            }
            manifest.push(Pinned {
                name: registry.name(p.package).to_string(),
                version,
                build: p.build,
            });
        }
    } else {
        // Every kept set was shown to solve when its last member was added, and solving is
        // deterministic, so this is not expected; if it happens, nothing is promised and
        // every entry is still accounted for.
        for k in kept_rows.drain(..) {
            left_out.push(LeftOut {
                name: k.name,
                reason: "the joint solve of the kept set did not complete".to_string(),
                conflicts_with: Vec::new(),
            });
        }
    }
    Preinstall {
        image: image.id.clone(),
        runtime: image.runtime.to_string(),
        platform: image.platform.to_string(),
        kept: kept_rows,
        manifest,
        left_out,
        missing_system_packages,
    }
}

/// A readable report of one pre-install plan.
pub fn preinstall_text(p: &Preinstall) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        // The manifest also lists the entries' dependencies: counting entries alone beside
        // it read as rows gone missing.
        "Pre-install set of {} (runtime {}, {}): {} of {} priority entries kept, {} left out; {} packages to install with their dependencies",
        p.image,
        p.runtime,
        p.platform,
        p.kept.len(),
        p.kept.len() + p.left_out.len(),
        p.left_out.len(),
        p.manifest.len()
    );
    let mut rows = vec![vec![
        "package".to_string(),
        "version".to_string(),
        "build".to_string(),
    ]];
    for m in &p.manifest {
        rows.push(vec![
            m.name.clone(),
            m.version.clone(),
            format!("{:?}", m.build).to_lowercase(),
        ]);
    }
    if p.manifest.is_empty() {
        s.push_str("manifest: (empty)\n");
    } else {
        s.push_str(&crate::report::text::table(&rows));
    }
    for l in &p.left_out {
        let _ = writeln!(s, "left out {}: {}", l.name, l.reason);
    }
    if !p.missing_system_packages.is_empty() {
        let _ = writeln!(
            s,
            "the manifest needs system packages the image lacks: {}",
            p.missing_system_packages.join(" ")
        );
    }
    s
}
