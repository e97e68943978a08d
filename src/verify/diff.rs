//! Comparing two matrices: structured cell changes and a unified diff of their renderings.

use crate::plan::matrix::{Cell, Matrix, Outcome, Pinned};
use crate::solve::Cause;
use serde::Serialize;
use std::collections::BTreeMap;

/// What a cell says, in brief.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct CellBrief {
    pub outcome: Outcome,
    pub cause: Option<Cause>,
    pub version: Option<String>,
    /// How the entry's own release gets onto the image, when the matrix lists the closure.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub build: Option<crate::solve::image::BuildKind>,
    pub missing_system_packages: Vec<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub recorded: Option<String>,
}

impl CellBrief {
    /// `builds`: whether both sides list closures, so that the entry's build can be known.
    fn of(c: &Cell, builds: bool) -> CellBrief {
        CellBrief {
            outcome: c.outcome,
            cause: c.cause,
            version: c.root_version.clone(),
            build: c
                .closure
                .iter()
                .find(|p| p.name == c.package && builds)
                .map(|p| p.build),
            missing_system_packages: c.missing_system_packages.clone(),
            recorded: c.recorded.as_ref().map(|r| r.recorded.clone()),
        }
    }
}

/// One cell that differs; `None` on a side where the cell does not exist.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct CellChange {
    pub package: String,
    pub image: String,
    pub before: Option<CellBrief>,
    pub after: Option<CellBrief>,
    /// The dependencies of the closure whose version or build changed, by name, when both
    /// sides list the cell's closure: a new snapshot often moves a cell's dependencies while
    /// its own version stays, and what gets installed changes with them.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub dependencies: Vec<DependencyChange>,
}

/// A closure package of one cell whose version or build differs; `None` on the side whose
/// closure lacks it.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct DependencyChange {
    pub name: String,
    pub before: Option<Pinned>,
    pub after: Option<Pinned>,
}

/// The changed dependencies between two closures of the cell of `root`, by name.
fn dependency_changes(root: &str, before: &[Pinned], after: &[Pinned]) -> Vec<DependencyChange> {
    let side = |closure: &[Pinned]| -> BTreeMap<String, Pinned> {
        closure
            .iter()
            .filter(|p| p.name != root)
            .map(|p| (p.name.clone(), p.clone()))
            .collect()
    };
    let (mut old, new) = (side(before), side(after));
    let mut out: Vec<DependencyChange> = Vec::new();
    for (name, a) in new {
        let b = old.remove(&name);
        if b.as_ref() != Some(&a) {
            out.push(DependencyChange {
                name,
                before: b,
                after: Some(a),
            });
        }
    }
    out.extend(old.into_iter().map(|(name, b)| DependencyChange {
        name,
        before: Some(b),
        after: None,
    }));
    out.sort_by(|x, y| x.name.cmp(&y.name));
    out
}

/// Whether each side was planned with `--no-native` ([`Matrix::native_skipped`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct NativeSkipped {
    pub before: bool,
    pub after: bool,
}

/// Whether each side left its cells' closures out (`plan --no-closures`): a cell with a
/// closure size lists no closure only then.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct ClosuresLeftOut {
    pub before: bool,
    pub after: bool,
}

/// Whether `m` was planned without closures.
fn closures_left_out(m: &Matrix) -> bool {
    m.cells
        .iter()
        .any(|c| c.closure_size > 0 && c.closure.is_empty())
}

#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct MatrixDiff {
    /// Without it a cell turning from a native failure into `installs` would read as a fix,
    /// when the side that installs never looked at system libraries.
    pub native_skipped: NativeSkipped,
    /// Without it a side lacking closures would read as every closure changed, and two such
    /// sides as no dependency version changed.
    pub closures_left_out: ClosuresLeftOut,
    pub changes: Vec<CellChange>,
    /// Unified diff of the two renderings; empty when they are equal. `basefit diff` renders
    /// with [`crate::report::markdown_keyed`], whose note labels do not shift when another
    /// cell changes.
    pub unified: String,
    /// Whether the matrices differ at all, their notices and registry fingerprints aside (a
    /// new snapshot that changes no prediction leaves the support matrix as it was): a
    /// summary, an image's packages or a weight below the rounding shown change neither a
    /// cell's brief nor the rendering, yet the files are not the same.
    pub differ: bool,
}

impl MatrixDiff {
    /// Whether anything differs, for the exit code.
    pub fn any(&self) -> bool {
        self.differ || !self.changes.is_empty() || !self.unified.is_empty()
    }
}

/// Cells of `before` and `after` that differ, in `after`'s order (then cells only in
/// `before`), and a unified diff of `render` applied to each.
pub fn diff(before: &Matrix, after: &Matrix, render: impl Fn(&Matrix) -> String) -> MatrixDiff {
    let closures = ClosuresLeftOut {
        before: closures_left_out(before),
        after: closures_left_out(after),
    };
    let key = |c: &Cell| (c.package.clone(), c.image.clone());
    let old: BTreeMap<(String, String), &Cell> = before.cells.iter().map(|c| (key(c), c)).collect();
    let mut seen = std::collections::BTreeSet::new();
    let mut changes = Vec::new();
    for c in &after.cells {
        let k = key(c);
        let was = old.get(&k);
        let builds = !closures.before && !closures.after;
        let b = was.map(|c| CellBrief::of(c, builds));
        let a = Some(CellBrief::of(c, builds));
        // Closures compare only where both sides list them, and only between two cells that
        // resolved their constraints (a native failure did too): a cell that stops resolving
        // loses its closure, which its outcome says.
        let dependencies = match was {
            Some(was)
                if !closures.before
                    && !closures.after
                    && was.closure_size > 0
                    && c.closure_size > 0 =>
            {
                dependency_changes(&c.package, &was.closure, &c.closure)
            }
            _ => Vec::new(),
        };
        if b != a || !dependencies.is_empty() {
            changes.push(CellChange {
                package: c.package.clone(),
                image: c.image.clone(),
                before: b,
                after: a,
                dependencies,
            });
        }
        seen.insert(k);
    }
    for c in &before.cells {
        if !seen.contains(&key(c)) {
            changes.push(CellChange {
                package: c.package.clone(),
                image: c.image.clone(),
                before: Some(CellBrief::of(c, !closures.before && !closures.after)),
                after: None,
                dependencies: Vec::new(),
            });
        }
    }
    let (ra, rb) = (render(before), render(after));
    let unified = if ra == rb {
        String::new()
    } else {
        similar::TextDiff::from_lines(&ra, &rb)
            .unified_diff()
            .context_radius(2)
            .header("before", "after")
            .to_string()
    };
    let without_closures = |m: &Matrix| {
        let mut m = m.clone();
        m.cells.iter_mut().for_each(|c| c.closure.clear());
        m
    };
    let differ = if closures.before || closures.after {
        Matrix {
            notice: after.notice.clone(),
            registry_fingerprint: after.registry_fingerprint.clone(),
            catalog_fingerprint: after.catalog_fingerprint.clone(),
            ..without_closures(before)
        } != without_closures(after)
    } else {
        Matrix {
            notice: after.notice.clone(),
            registry_fingerprint: after.registry_fingerprint.clone(),
            catalog_fingerprint: after.catalog_fingerprint.clone(),
            ..before.clone()
        } != *after
    };
    MatrixDiff {
        native_skipped: NativeSkipped {
            before: before.native_skipped,
            after: after.native_skipped,
        },
        closures_left_out: closures,
        changes,
        unified,
        differ,
    }
}
