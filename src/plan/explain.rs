//! One cell in depth: the resolved closure as a tree, or the failure, plus cheap hints on what
//! would make it install.

use super::matrix::{Cell, Outcome, PlanOptions, plan_cell, plan_pinned_cell};
use crate::load::{BadInput, Inputs};
use crate::model::{PackageId, Priority};
use crate::solve::sets::root_set;
use crate::solve::{Cause, ImageView, SetCache};
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
    /// [`super::matrix::notice`]: predictions are not install results, and under
    /// `--no-native` an installing cell promises nothing about system libraries.
    pub notice: String,
    pub native_skipped: bool,
    pub cell: Cell,
    pub tree: Vec<TreeLine>,
    /// The entry tried on this image at the declared images' runtimes (when the cell does not
    /// resolve).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub runtime_hint: Option<RuntimeHint>,
    /// The entry pinned to its newest releases in turn (when the cell does not resolve).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub release_hint: Option<ReleaseHint>,
}

/// How the cell came out at one declared runtime, or with the entry pinned to one release.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Trial {
    /// The runtime tried, or the release pinned.
    pub version: String,
    pub outcome: Outcome,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub cause: Option<Cause>,
}

impl Trial {
    fn of(version: String, cell: &Cell) -> Trial {
        Trial {
            version,
            outcome: cell.outcome,
            cause: cell.cause,
        }
    }

    /// Installs or is at risk.
    pub fn resolves(&self) -> bool {
        self.outcome.resolves()
    }

    /// Its version constraints resolve, and the native step fails it.
    pub fn fails_natively(&self) -> bool {
        self.outcome == Outcome::Fails
            && matches!(
                self.cause,
                Some(Cause::MissingToolchain | Cause::MissingSystemLibrary)
            )
    }

    /// The solver ran out of budget: nothing is known.
    pub fn undecided(&self) -> bool {
        self.outcome == Outcome::Undecided
    }
}

/// The entry on this image (its platform, toolchain and system packages) at each declared
/// image's runtime, lowest first, up to and including the first at which it resolves. At the
/// image's own runtime the trial is the cell itself.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct RuntimeHint {
    pub trials: Vec<Trial>,
    /// When the lowest runtime at which it resolves lies the other way from the one the cause
    /// points to (a `runtime-too-old` cell that resolves at an older runtime, as a release
    /// with a gap in its runtime requirement can): the declared runtimes the cause points to,
    /// nearest the image's first, up to and including the first at which it resolves. The
    /// lowest success alone would send the reader away from the upgrade the verdict asks for.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub toward_cause: Option<TowardCause>,
}

/// The declared runtimes tried in the direction a runtime cause points to.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct TowardCause {
    /// `newer` for `runtime-too-old`, `older` for `runtime-too-new`.
    pub direction: Direction,
    /// Nearest the image's runtime first; a runtime also in [`RuntimeHint::trials`] is its
    /// trial there, not solved again.
    pub trials: Vec<Trial>,
}

/// Which way from the image's runtime.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Direction {
    Newer,
    Older,
}

impl TowardCause {
    /// The nearest runtime in the direction at which it resolves, if any was found.
    pub fn resolves_at(&self) -> Option<&Trial> {
        self.trials.last().filter(|t| t.resolves())
    }
}

impl RuntimeHint {
    /// The lowest runtime at which it resolves, if any was found.
    pub fn resolves_at(&self) -> Option<&Trial> {
        self.trials.last().filter(|t| t.resolves())
    }
}

/// The entry pinned to each of its newest releases (yanked ones aside) in turn, newest first,
/// up to and including the first that resolves on this image.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct ReleaseHint {
    pub trials: Vec<Trial>,
    /// Releases (yanked ones aside) older than the oldest one tried, left untried.
    pub untried: usize,
    /// Yanked releases, never tried: with them, a package's one other release is not its
    /// only release.
    #[serde(skip_serializing_if = "is_zero")]
    pub yanked: usize,
    /// When the last trial resolves and the entry as written does not admit that release: why
    /// not.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub not_admitted: Option<NotAdmitted>,
    /// The releases tried that the entry as written does not ask for (outside its requirement,
    /// or a pre-release it does not allow), in trial order: a failing try among them says
    /// nothing about what the entry itself would install.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub not_asked_for: Vec<String>,
}

/// Why the entry as written does not ask for a release the hint found.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum NotAdmitted {
    /// A pre-release, and the entry does not set `prerelease: true`.
    Prerelease,
    /// Outside the entry's requirement (its text).
    Requirement(String),
}

fn is_zero(n: &usize) -> bool {
    *n == 0
}

impl ReleaseHint {
    /// The newest release tried that resolves, if any.
    pub fn resolves(&self) -> Option<&Trial> {
        self.trials.last().filter(|t| t.resolves())
    }
}

/// Explains `package` on `image_id`.
pub fn explain(
    inputs: &Inputs,
    package: &str,
    image_id: &str,
    options: &PlanOptions,
) -> Result<Explanation, BadInput> {
    // A blank name would be explained as a package missing from the registry.
    if package.trim().is_empty() {
        return Err(BadInput::file(
            "command line",
            format!("explain {package:?} {image_id}: the package name is empty"),
        ));
    }
    let image =
        inputs.image_from_command_line(image_id, &format!("explain {package} {image_id}"))?;
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
    let (runtime_hint, release_hint) = if cell.outcome.resolves() {
        (None, None)
    } else {
        (
            Some(runtime_hint(inputs, image, &entry, &cell, &sets, options)),
            Some(release_hint(inputs, &view, &entry, options)),
        )
    };
    Ok(Explanation {
        notice: super::matrix::notice(!options.native),
        native_skipped: !options.native,
        cell,
        tree,
        runtime_hint,
        release_hint,
    })
}

fn runtime_hint(
    inputs: &Inputs,
    image: &crate::model::Image,
    entry: &Priority,
    cell: &Cell,
    sets: &SetCache,
    options: &PlanOptions,
) -> RuntimeHint {
    // One per precedence: `3.2.0+distro.4` admits what `3.2.0` admits.
    let runtimes = crate::plan::coverage::declared_runtimes(inputs);
    let try_at = |rt: &semver::Version| {
        if rt.cmp_precedence(&image.runtime).is_eq() {
            // The cell itself: the hint must not contradict it.
            Trial::of(image.runtime.to_string(), cell)
        } else {
            let mut trial = image.clone();
            trial.runtime = rt.clone();
            let view = ImageView::new(&inputs.registry, &trial, sets);
            Trial::of(rt.to_string(), &plan_cell(inputs, &view, entry, options))
        }
    };
    let mut trials: Vec<(semver::Version, Trial)> = Vec::new();
    for rt in &runtimes {
        let trial = try_at(rt);
        let done = trial.resolves();
        trials.push((rt.clone(), trial));
        if done {
            break;
        }
    }
    let lowest = trials
        .last()
        .filter(|(_, t)| t.resolves())
        .map(|(rt, _)| rt);
    let direction = match cell.cause {
        Some(Cause::RuntimeTooOld) => Some(Direction::Newer),
        Some(Cause::RuntimeTooNew) => Some(Direction::Older),
        _ => None,
    };
    let wrong_way = |d: Direction| {
        let order = lowest.map(|rt| rt.cmp_precedence(&image.runtime));
        match d {
            Direction::Newer => order.is_some_and(|o| o.is_lt()),
            Direction::Older => order.is_some_and(|o| o.is_gt()),
        }
    };
    let toward_cause = direction.filter(|&d| wrong_way(d)).map(|direction| {
        let ahead: Vec<&semver::Version> = match direction {
            Direction::Newer => runtimes
                .iter()
                .filter(|rt| rt.cmp_precedence(&image.runtime).is_gt())
                .collect(),
            Direction::Older => runtimes
                .iter()
                .rev()
                .filter(|rt| rt.cmp_precedence(&image.runtime).is_lt())
                .collect(),
        };
        let mut toward = Vec::new();
        for rt in ahead {
            let known = trials
                .iter()
                .find(|(tried, _)| tried.cmp_precedence(rt).is_eq())
                .map(|(_, t)| t.clone());
            let trial = known.unwrap_or_else(|| try_at(rt));
            let done = trial.resolves();
            toward.push(trial);
            if done {
                break;
            }
        }
        TowardCause {
            direction,
            trials: toward,
        }
    });
    RuntimeHint {
        trials: trials.into_iter().map(|(_, t)| t).collect(),
        toward_cause,
    }
}

/// Older releases are judged like the cell itself, native step included, by pinning the
/// entry to each release in turn.
fn release_hint(
    inputs: &Inputs,
    view: &ImageView<'_>,
    entry: &Priority,
    options: &PlanOptions,
) -> ReleaseHint {
    let registry = &inputs.registry;
    let mut hint = ReleaseHint {
        trials: Vec::new(),
        untried: 0,
        yanked: 0,
        not_admitted: None,
        not_asked_for: Vec::new(),
    };
    let Some(root) = registry.id(&entry.name) else {
        return hint;
    };
    let releases = &registry.package(root).releases;
    let candidates: Vec<usize> = (0..releases.len())
        .rev()
        .filter(|&i| !releases[i].yanked)
        .collect();
    let any = crate::model::Requirement::any();
    let req = entry.req.as_ref().unwrap_or(&any);
    let asked_for = root_set(registry, root, req, entry.prerelease);
    let mut found = None;
    for &i in candidates.iter().take(OLDER_RELEASES_TRIED) {
        if !asked_for.contains(&(i as u32)) {
            hint.not_asked_for.push(releases[i].version.to_string());
        }
        // Pinned by index: a requirement such as `=2.3.0+2` also admits 2.3.0+1 (matching
        // ignores build metadata), so the hint could name a release that does not resolve.
        let trial = Trial::of(
            releases[i].version.to_string(),
            &plan_pinned_cell(inputs, view, entry, root, i as u32, options),
        );
        let done = trial.resolves();
        hint.trials.push(trial);
        if done {
            found = Some(i);
            break;
        }
    }
    hint.untried = candidates.len() - hint.trials.len();
    hint.yanked = releases.len() - candidates.len();
    if let Some(i) = found {
        hint.not_admitted = if asked_for.contains(&(i as u32)) {
            None
        } else if root_set(registry, root, req, true).contains(&(i as u32)) {
            Some(NotAdmitted::Prerelease)
        } else {
            Some(NotAdmitted::Requirement(req.text.clone()))
        };
    }
    hint
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
