//! One cell in depth: the resolved closure as a tree, or the failure, plus cheap hints on what
//! would make it install.

use super::matrix::{Cell, Outcome, PlanOptions, plan_cell, plan_pinned_cell};
use crate::load::{BadInput, Inputs};
use crate::model::{PackageId, Priority};
use crate::solve::{ImageView, SetCache};
use serde::Serialize;
use std::collections::{BTreeMap, BTreeSet};

/// Older root releases tried when looking for one that installs.
const OLDER_RELEASES_TRIED: usize = 40;

/// A line of the closure tree.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct TreeLine {
    pub depth: usize,
    pub name: String,
    pub version: String,
    pub requirement: Option<String>,
    /// Already shown higher up (a shared dependency or a cycle); its children are not repeated.
    pub repeated: bool,
}

/// Everything `explain` prints for one cell.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Explanation {
    pub cell: Cell,
    pub tree: Vec<TreeLine>,
    /// The lowest runtime among the declared images' runtimes at which the package resolves on
    /// this image's platform, if any.
    pub lowest_runtime: Option<String>,
    /// The newest root release older than the newest one that resolves on this image.
    pub older_release: Option<String>,
}

/// Explains `package` on `image_id`.
pub fn explain(
    inputs: &Inputs,
    package: &str,
    image_id: &str,
    options: &PlanOptions,
) -> Result<Explanation, BadInput> {
    let image = inputs.images.get(image_id).ok_or_else(|| {
        let known: Vec<&str> = inputs.images.images.iter().map(|i| i.id.as_str()).collect();
        BadInput::file(
            "command line",
            format!("no image `{image_id}`; declared: {}", known.join(", ")),
        )
    })?;
    let entry = inputs
        .priorities
        .entries
        .iter()
        .find(|e| e.name == package)
        .cloned()
        .unwrap_or_else(|| {
            let origin = crate::load::diag::Origin {
                file: "command line".into(),
                line: 0,
            };
            Priority {
                weight: 0.0,
                ..Priority::named(0, package, origin)
            }
        });
    let sets = SetCache::default();
    let view = ImageView::new(&inputs.registry, image, &sets);
    let cell = plan_cell(inputs, &view, &entry, options);
    let tree = if cell.outcome.resolves() {
        closure_tree(inputs, &cell)
    } else {
        Vec::new()
    };
    let (lowest_runtime, older_release) = if cell.outcome.resolves() {
        (None, None)
    } else {
        hints(inputs, image, &entry, &sets, options)
    };
    Ok(Explanation {
        cell,
        tree,
        lowest_runtime,
        older_release,
    })
}

fn hints(
    inputs: &Inputs,
    image: &crate::model::Image,
    entry: &Priority,
    sets: &SetCache,
    options: &PlanOptions,
) -> (Option<String>, Option<String>) {
    let mut runtimes: Vec<semver::Version> = inputs
        .images
        .images
        .iter()
        .map(|i| i.runtime.clone())
        .collect();
    runtimes.sort();
    runtimes.dedup();
    let lowest = runtimes.into_iter().find(|rt| {
        let mut trial = image.clone();
        trial.runtime = rt.clone();
        let view = ImageView::new(&inputs.registry, &trial, sets);
        plan_cell(inputs, &view, entry, options).outcome.resolves()
    });
    // Older releases are judged like the cell itself, native step included, by pinning the
    // entry to each release in turn. Pinned by index: a requirement such as `=2.3.0+2` also
    // admits 2.3.0+1 (matching ignores build metadata), so the hint could name a release
    // that does not resolve.
    let view = ImageView::new(&inputs.registry, image, sets);
    let older = inputs.registry.id(&entry.name).and_then(|root| {
        let releases = &inputs.registry.package(root).releases;
        (0..releases.len())
            .rev()
            .filter(|&i| !releases[i].yanked)
            .take(OLDER_RELEASES_TRIED)
            .find(|&i| {
                plan_pinned_cell(inputs, &view, entry, root, i as u32, options)
                    .outcome
                    .resolves()
            })
            .map(|i| releases[i].version.to_string())
    });
    (lowest.map(|v| v.to_string()), older)
}

/// The closure of a resolved cell as a dependency tree from the root, in depth-first order
/// with each package's dependencies by name. An explicit stack rather than recursion: the tree
/// is as deep as the longest dependency chain, which a registry may make any length.
fn closure_tree(inputs: &Inputs, cell: &Cell) -> Vec<TreeLine> {
    let registry = &inputs.registry;
    let chosen: BTreeMap<&str, &str> = cell
        .closure
        .iter()
        .map(|p| (p.name.as_str(), p.version.as_str()))
        .collect();
    let mut out = Vec::new();
    let mut shown: BTreeSet<&str> = BTreeSet::new();
    let mut stack: Vec<(&str, Option<String>, usize)> = vec![(cell.package.as_str(), None, 0)];
    while let Some((name, requirement, depth)) = stack.pop() {
        let version = chosen.get(name).copied().unwrap_or("?");
        let repeated = !shown.insert(name);
        out.push(TreeLine {
            depth,
            name: name.to_string(),
            version: version.to_string(),
            requirement,
            repeated,
        });
        if repeated {
            continue;
        }
        let Some(id): Option<PackageId> = registry.id(name) else {
            continue;
        };
        let Ok(v) = semver::Version::parse(version) else {
            continue;
        };
        let Some(index) = registry.find_release(id, &v) else {
            continue;
        };
        let release = &registry.package(id).releases[index];
        let mut deps: Vec<(&str, String)> = release
            .runtime_deps()
            .map(|d| {
                (
                    registry.name(d.package),
                    registry.requirement(d.req).text.clone(),
                )
            })
            .collect();
        deps.sort();
        deps.dedup();
        // Reversed so the first by name is popped, and its subtree written, first.
        for (dep, req) in deps.into_iter().rev() {
            stack.push((dep, Some(req), depth + 1));
        }
    }
    out
}

/// Whether the outcome is one a user must act on.
pub fn needs_attention(outcome: Outcome) -> bool {
    outcome != Outcome::Installs
}
