//! The pre-install set of one image: packages an image ships together must resolve as one
//! set, so they are chosen greedily in priority order with a joint solve.

use super::matrix::{Outcome, Pinned, PlanOptions, plan_cell};
use crate::load::Inputs;
use crate::model::{DepKind, Image, PackageId, Requirement};
use crate::native::{Assessment, Confidence};
use crate::solve::{self, Cause, CellSolve, ImageView, IndexSet, Pin, SetCache, Solved, sets};
use serde::Serialize;
use std::collections::{BTreeMap, HashMap};
use std::fmt::Write;

/// A kept priority entry and the version the joint solution installs.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Kept {
    pub name: String,
    pub version: String,
    /// The version the entry installs when planned alone, where the joint solve chose another:
    /// the set holds it back (or forward) to fit the other kept entries, before or after it,
    /// which a reader comparing the manifest with the support matrix would otherwise take for
    /// a mistake.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub alone: Option<String>,
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
    /// The version the manifest installs all the same, when the kept entries' dependencies
    /// take the package (a pre-release one pins, say): "left out" beside a manifest row of
    /// the same name read as a contradiction.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub in_manifest: Option<String>,
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
    /// The same system packages, each with the manifest packages that need it and the
    /// strongest confidence among them.
    pub system_needs: Vec<SystemNeed>,
    /// Libraries the manifest needs that the catalog names no system package for on the
    /// image's family (or knows not at all): what the image lacks for them is unknown, so an
    /// empty `system_needs` does not mean nothing is missing.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub unmapped_libraries: Vec<UnmappedNeed>,
    /// The manifest rows that need something the image lacks, each with what and how surely
    /// its own release needs it: such a row is at risk of failing to install as the image
    /// stands, though the solve kept it, so copying the manifest into an image build as it
    /// is may fail there. In manifest order.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub at_risk: Vec<RowNeeds>,
}

/// What one manifest row needs that the image lacks: system packages and libraries the
/// catalog names no package for, each with the confidence of its own release's need.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RowNeeds {
    pub name: String,
    pub version: String,
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub system_packages: Vec<Lack>,
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub unmapped_libraries: Vec<Lack>,
}

/// A system package or library a manifest row needs, and how surely.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Lack {
    pub name: String,
    pub confidence: Confidence,
}

impl RowNeeds {
    /// `build-essential (likely), libfoo (possible, no package known)`.
    fn describe(&self) -> String {
        let packages = self
            .system_packages
            .iter()
            .map(|l| format!("{} ({})", l.name, l.confidence.as_str()));
        let libraries = self
            .unmapped_libraries
            .iter()
            .map(|l| format!("{} ({}, no package known)", l.name, l.confidence.as_str()));
        packages.chain(libraries).collect::<Vec<_>>().join(", ")
    }
}

/// A library the manifest needs that no system package can be named for, and who needs it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct UnmappedNeed {
    /// The catalog id, or the name as declared when the catalog does not know it.
    pub library: String,
    /// The strongest confidence of the needs of it.
    pub confidence: Confidence,
    /// Manifest packages whose own release needs it, in name order.
    pub needed_by: Vec<Pinned>,
}

/// A system package the image lacks for the manifest, and who needs it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SystemNeed {
    pub package: String,
    /// The strongest confidence of the needs that ask for it.
    pub confidence: Confidence,
    /// Manifest packages whose own release asks for it, in name order.
    pub needed_by: Vec<Pinned>,
}

struct Root {
    name: String,
    id: PackageId,
    set: IndexSet,
    /// The version it installs planned alone.
    alone: String,
}

/// The joint solve of `roots`. `budget` is per root: a joint solve decides every root's
/// closure, so one cell's budget would cut a set of hundreds of entries short and leave
/// entries out for running out of steps, not for a conflict.
fn joint(view: &ImageView<'_>, roots: &[&Root], budget: u64) -> CellSolve {
    let r: Vec<(PackageId, IndexSet)> = roots.iter().map(|r| (r.id, r.set.clone())).collect();
    solve::solve_joint(view, &r, budget.saturating_mul(roots.len().max(1) as u64))
}

/// A minimal subset of `kept` (in priority order: dropping any entry of it makes it succeed)
/// that `fails` with the candidate, given that all of `kept` does, favouring the
/// highest-priority entries: a conflict among the first entries is found before one that
/// needs later ones. `fails` is told the subset to try.
///
/// Divide and conquer: when the first half (with what is already known to be needed) fails
/// alone, nothing of the second half is needed; otherwise the part of the second half needed
/// is found first, then the part of the first half needed beside it. This takes a number of
/// solves about the conflict's size times the logarithm of `kept`'s, where dropping one entry
/// at a time took one solve per kept entry, each of hundreds of roots on a large list.
fn minimal_conflict<T: Copy>(kept: &[T], fails: &mut dyn FnMut(&[T]) -> bool) -> Vec<T> {
    fn needed<T: Copy>(
        known: &[T],
        known_grew: bool,
        among: &[T],
        fails: &mut dyn FnMut(&[T]) -> bool,
    ) -> Vec<T> {
        if known_grew && fails(known) {
            return Vec::new();
        }
        if among.len() <= 1 {
            return among.to_vec();
        }
        let (first, second) = among.split_at(among.len() / 2);
        let with_first = [known, first].concat();
        let from_second = needed(&with_first, true, second, fails);
        let with_those = [known, &from_second].concat();
        let from_first = needed(&with_those, !from_second.is_empty(), first, fails);
        [from_first, from_second].concat()
    }
    needed(&[], false, kept, fails)
}

/// Why a closure certainly fails natively on the image, by the rule `plan` applies to a
/// cell's native step: a certain need of a C (or C++) compiler the image lacks, else of a system
/// package it lacks. The cause and the packages to add; `None` when the closure may install.
fn certain_native_failure(a: &Assessment) -> Option<(Cause, Vec<String>)> {
    if a.toolchain_missing == Some(Confidence::Certain)
        || a.cxx_missing == Some(Confidence::Certain)
    {
        return Some((Cause::MissingToolchain, a.packages_to_add()));
    }
    let certain: Vec<String> = a
        .missing
        .iter()
        .filter(|(_, c)| *c == Confidence::Certain)
        .map(|(p, _)| p.clone())
        .collect();
    (!certain.is_empty()).then_some((Cause::MissingSystemLibrary, certain))
}

/// The packages of `closure` that `root` installs: its release there and everything its
/// runtime dependencies reach within the closure.
fn reached_from(inputs: &Inputs, closure: &[Pin], root: PackageId) -> Vec<Pin> {
    let registry = &inputs.registry;
    let at: HashMap<PackageId, usize> = closure
        .iter()
        .enumerate()
        .map(|(i, p)| (p.package, i))
        .collect();
    let mut seen = vec![false; closure.len()];
    let mut stack: Vec<usize> = at.get(&root).copied().into_iter().collect();
    let mut out = Vec::new();
    while let Some(i) = stack.pop() {
        if std::mem::replace(&mut seen[i], true) {
            continue;
        }
        let pin = closure[i];
        out.push(pin);
        let release = &registry.package(pin.package).releases[pin.index as usize];
        for d in release.deps.iter().filter(|d| d.kind == DepKind::Runtime) {
            stack.extend(at.get(&d.package).copied());
        }
    }
    out
}

/// The version `pin` names, for messages.
fn version_of(inputs: &Inputs, pin: &Pin) -> String {
    inputs.registry.package(pin.package).releases[pin.index as usize]
        .version
        .to_string()
}

/// Native checks of single releases, each made once: a closure certainly fails natively
/// exactly when one of its releases does, since a need's confidence is its own release's.
struct NativeChecks<'a> {
    inputs: &'a Inputs,
    image: &'a Image,
    fails: BTreeMap<Pin, bool>,
}

impl NativeChecks<'_> {
    fn assess(&self, pins: &[Pin]) -> Assessment {
        crate::native::assess(
            &self.inputs.registry,
            &self.inputs.catalog,
            self.image,
            pins,
        )
    }

    fn certainly_fails(&mut self, pin: Pin) -> bool {
        if let Some(f) = self.fails.get(&pin) {
            return *f;
        }
        let f = certain_native_failure(&self.assess(&[pin])).is_some();
        self.fails.insert(pin, f);
        f
    }

    /// Why the joint solution `closure` of `roots` cannot be kept because some root's part
    /// of it certainly fails natively; `None` when no release of it does. The last root is
    /// the candidate: its own part is named first, else the kept roots its addition moved.
    fn joint_failure(&mut self, closure: &[Pin], roots: &[&Root]) -> Option<String> {
        if !closure.iter().any(|p| self.certainly_fails(*p)) {
            return None;
        }
        let (candidate, kept) = roots.split_last()?;
        // "E 0.5.0 (missing-system-library: add libxml2-dev)" for a root whose own release
        // fails; "cand 1.0.0 with lib 1.0.0 (...)" when a release it reaches does, since the
        // root alone may well install and only the release the joint solve moved to fails.
        let why = |checks: &mut Self, root: &Root| -> Option<String> {
            let part = reached_from(checks.inputs, closure, root.id);
            let (cause, add) = certain_native_failure(&checks.assess(&part))?;
            let own = part.iter().find(|p| p.package == root.id);
            let version = own
                .map(|p| version_of(checks.inputs, p))
                .unwrap_or_default();
            let inputs = checks.inputs;
            let failing: Vec<String> = part
                .iter()
                .filter(|p| Some(*p) != own && checks.certainly_fails(**p))
                .map(|p| {
                    format!(
                        "{} {}",
                        inputs.registry.name(p.package),
                        version_of(inputs, p)
                    )
                })
                .collect();
            let through = match (
                own.is_some_and(|p| checks.certainly_fails(*p)),
                failing.is_empty(),
            ) {
                (_, true) => String::new(),
                (true, false) => format!(" and {}", failing.join(", ")),
                (false, false) => format!(" with {}", failing.join(", ")),
            };
            let add = match add.is_empty() {
                true => String::new(),
                false => format!(": add {}", add.join(" ")),
            };
            Some(format!(
                "{} {version}{through} ({}{add})",
                root.name,
                cause.as_str()
            ))
        };
        if let Some(own) = why(self, candidate) {
            return Some(format!(
                "with the kept packages the joint solve picks {own}, which certainly fails natively on {}",
                self.image.id
            ));
        }
        let moved: Vec<String> = kept.iter().filter_map(|r| why(self, r)).collect();
        Some(format!(
            "with it the joint solve moves kept packages to versions that certainly fail natively on {}: {}",
            self.image.id,
            moved.join(", ")
        ))
    }
}

/// Builds the pre-install set of `image`.
///
/// Each entry, in priority order, is first planned alone (native step included when
/// `options.native` is set): one that does not resolve alone, or needs system packages the
/// image certainly lacks, is left out with that reason. Otherwise it is kept when the kept
/// packages plus it still have a joint solution and, with the native step, no kept entry's
/// part of that solution certainly fails natively (the joint solve may pick an older release
/// of it, or move a kept entry to one, that fails where the release chosen alone did not).
/// When they have no joint solution, the conflict named is a minimal subset of the kept
/// packages that fails with the candidate (not always the smallest), favouring the
/// highest-priority packages ([`minimal_conflict`]); the reason says whether the other kept
/// packages leave room for it. Joint solves get `options.budget` per root. A joint solve that
/// runs out of budget counts as "not shown to fail", so it never names a package without
/// evidence.
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
    let mut checks = NativeChecks {
        inputs,
        image,
        fails: BTreeMap::new(),
    };
    for entry in &inputs.priorities.entries {
        if let Some(pb) = &options.progress {
            pb.inc(1);
        }
        let cell = plan_cell(inputs, &view, entry, options);
        if cell.outcome == Outcome::Undecided {
            // Not shown to fail: left out only because nothing can be said of it yet.
            left_out.push(LeftOut {
                name: entry.name.clone(),
                reason: "undecided alone: the solver ran out of budget before an answer, so whether it installs is unknown (raise --budget)".to_string(),
                conflicts_with: Vec::new(),
                in_manifest: None,
            });
            continue;
        }
        if !cell.outcome.resolves() {
            let why = if cell.explanation.is_empty() {
                "does not resolve".to_string()
            } else {
                cell.explanation.join("; ")
            };
            let cause = cell.cause.map(|c| c.as_str()).unwrap_or("fails");
            left_out.push(LeftOut {
                name: entry.name.clone(),
                reason: format!("does not install alone ({cause}): {why}"),
                conflicts_with: Vec::new(),
                in_manifest: None,
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
                in_manifest: None,
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
            alone: cell.root_version.clone().unwrap_or_default(),
        };
        let mut with: Vec<&Root> = kept.iter().collect();
        with.push(&candidate);
        let solved = joint(&view, &with, options.budget);
        match solved.solved {
            Solved::Installs { closure, .. } => {
                match options
                    .native
                    .then(|| checks.joint_failure(&closure, &with))
                    .flatten()
                {
                    Some(reason) => left_out.push(LeftOut {
                        name: entry.name.clone(),
                        reason,
                        conflicts_with: Vec::new(),
                        in_manifest: None,
                    }),
                    None => kept.push(candidate),
                }
            }
            Solved::Undecided { steps } => left_out.push(LeftOut {
                name: entry.name.clone(),
                reason: format!(
                    "the joint solve with the kept packages gave up after {steps} steps"
                ),
                conflicts_with: Vec::new(),
                in_manifest: None,
            }),
            Solved::Fails(_) => {
                let all: Vec<&Root> = kept.iter().collect();
                let culprits = minimal_conflict(&all, &mut |some: &[&Root]| {
                    let trial: Vec<&Root> = some
                        .iter()
                        .copied()
                        .chain(std::iter::once(&candidate))
                        .collect();
                    matches!(
                        joint(&view, &trial, options.budget).solved,
                        Solved::Fails(_)
                    )
                });
                let names: Vec<String> = culprits.iter().map(|r| r.name.clone()).collect();
                // The set is minimal, not the only one nor always the smallest: say whether
                // leaving it out would let the entry in, so nobody drops a package for nothing.
                let others = if names.is_empty() {
                    String::new()
                } else {
                    let mut rest: Vec<&Root> =
                        kept.iter().filter(|k| !names.contains(&k.name)).collect();
                    rest.push(&candidate);
                    match joint(&view, &rest, options.budget).solved {
                        Solved::Installs { .. } => {
                            "; the other kept entries leave room for it".to_string()
                        }
                        Solved::Fails(_) => "; other kept entries conflict with it too".to_string(),
                        Solved::Undecided { .. } => String::new(),
                    }
                };
                left_out.push(LeftOut {
                    name: entry.name.clone(),
                    reason: format!(
                        "cannot be installed together with {}{others}",
                        if names.is_empty() {
                            "the kept packages".to_string()
                        } else {
                            names.join(", ")
                        }
                    ),
                    conflicts_with: names,
                    in_manifest: None,
                });
            }
        }
    }
    let all: Vec<&Root> = kept.iter().collect();
    let final_solve = joint(&view, &all, options.budget);
    let mut manifest = Vec::new();
    let mut missing_system_packages = Vec::new();
    let mut system_needs = Vec::new();
    let mut unmapped_libraries = Vec::new();
    let mut at_risk = Vec::new();
    let mut kept_rows: Vec<Kept> = kept
        .iter()
        .map(|r| Kept {
            name: r.name.clone(),
            version: String::new(),
            alone: None,
        })
        .collect();
    if let Solved::Installs { closure, .. } = &final_solve.solved {
        if options.native {
            missing_system_packages = checks.assess(closure).packages_to_add();
            (system_needs, unmapped_libraries, at_risk) = needs_by_package(&checks, closure);
        }
        for p in closure {
            let version = registry.package(p.package).releases[p.index as usize]
                .version
                .to_string();
            if let Some(i) = kept.iter().position(|r| r.id == p.package)
                && let Some(k) = kept_rows.get_mut(i)
            {
                k.version = version.clone();
                k.alone = (kept[i].alone != version).then(|| kept[i].alone.clone());
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
                in_manifest: None,
            });
        }
    }
    for l in &mut left_out {
        l.in_manifest = manifest
            .iter()
            .find(|m: &&Pinned| m.name == l.name)
            .map(|m| m.version.clone());
    }
    Preinstall {
        image: image.id.clone(),
        runtime: image.runtime.to_string(),
        platform: image.platform.to_string(),
        kept: kept_rows,
        manifest,
        left_out,
        missing_system_packages,
        system_needs,
        unmapped_libraries,
        at_risk,
    }
}

/// Which releases of `closure` need which system packages the image lacks, and which need
/// libraries no package can be named for: each release assessed alone, since a package
/// name alone does not say who asked for it.
fn needs_by_package(
    checks: &NativeChecks<'_>,
    closure: &[Pin],
) -> (Vec<SystemNeed>, Vec<UnmappedNeed>, Vec<RowNeeds>) {
    let registry = &checks.inputs.registry;
    // Keyed by system package or library: (strongest confidence, who needs it).
    type Needers = BTreeMap<String, (Confidence, Vec<Pinned>)>;
    let mut packages: Needers = BTreeMap::new();
    let mut libraries: Needers = BTreeMap::new();
    let note = |into: &mut Needers, key: &str, confidence: Confidence, pin: &Pin| {
        let (strongest, by) = into
            .entry(key.to_string())
            .or_insert((confidence, Vec::new()));
        *strongest = (*strongest).max(confidence);
        by.push(Pinned {
            name: registry.name(pin.package).to_string(),
            version: version_of(checks.inputs, pin),
            build: pin.build,
        });
    };
    let mut rows: Vec<RowNeeds> = Vec::new();
    for pin in closure {
        let a = checks.assess(&[*pin]);
        let mut row = RowNeeds {
            name: registry.name(pin.package).to_string(),
            version: version_of(checks.inputs, pin),
            system_packages: Vec::new(),
            unmapped_libraries: Vec::new(),
        };
        for (package, confidence) in &a.missing {
            note(&mut packages, package, *confidence, pin);
            row.system_packages.push(Lack {
                name: package.clone(),
                confidence: *confidence,
            });
        }
        for library in &a.unknown_libraries {
            let confidence = a
                .needs
                .iter()
                .filter(|n| n.library.as_deref() == Some(library.as_str()))
                .map(|n| n.confidence)
                .max()
                .unwrap_or(Confidence::Possible);
            note(&mut libraries, library, confidence, pin);
            row.unmapped_libraries.push(Lack {
                name: library.clone(),
                confidence,
            });
        }
        if !row.system_packages.is_empty() || !row.unmapped_libraries.is_empty() {
            rows.push(row);
        }
    }
    let sorted = |mut by: Vec<Pinned>| {
        by.sort_by(|a, b| a.name.cmp(&b.name));
        by
    };
    let system_needs = packages
        .into_iter()
        .map(|(package, (confidence, by))| SystemNeed {
            package,
            confidence,
            needed_by: sorted(by),
        })
        .collect();
    let unmapped = libraries
        .into_iter()
        .map(|(library, (confidence, by))| UnmappedNeed {
            library,
            confidence,
            needed_by: sorted(by),
        })
        .collect();
    (system_needs, unmapped, rows)
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
    // Kept rows that need what the image lacks would fail an image build that copies the
    // manifest as it is: each says so on its own row.
    if !p.at_risk.is_empty() {
        let n = p.at_risk.len();
        let addable = p.at_risk.iter().any(|r| !r.system_packages.is_empty());
        let mut unmapped: Vec<&str> = p
            .at_risk
            .iter()
            .flat_map(|r| &r.unmapped_libraries)
            .map(|l| l.name.as_str())
            .collect();
        unmapped.sort_unstable();
        unmapped.dedup();
        let libraries = crate::report::one_or_many(unmapped.len(), "the library", "the libraries");
        // "add that first" where nothing can be added sent readers looking for a package.
        let what = match (addable, unmapped.is_empty()) {
            (true, true) => "what the image lacks (last column): add that first".to_string(),
            (true, false) => format!(
                "what the image lacks (last column): add the packages named first, and check the image by hand for {libraries} no package is known for"
            ),
            _ => format!(
                "{} no system package is known for (last column): check the image has {} by hand",
                crate::report::one_or_many(unmapped.len(), "a library", "libraries"),
                crate::report::one_or_many(unmapped.len(), "it", "them")
            ),
        };
        let _ = writeln!(
            s,
            "{n} of them {} {what}, or {} may fail to install",
            crate::report::one_or_many(n, "needs", "need"),
            crate::report::one_or_many(n, "it", "they")
        );
    }
    let lacks: HashMap<(&str, &str), String> = p
        .at_risk
        .iter()
        .map(|r| ((r.name.as_str(), r.version.as_str()), r.describe()))
        .collect();
    let mut header = vec![
        "package".to_string(),
        "version".to_string(),
        "build".to_string(),
    ];
    if !lacks.is_empty() {
        header.push("needs, the image lacks".to_string());
    }
    let mut rows = vec![header];
    for m in &p.manifest {
        let mut row = vec![
            m.name.clone(),
            m.version.clone(),
            m.build.as_str().to_string(),
        ];
        if !lacks.is_empty() {
            row.push(
                lacks
                    .get(&(m.name.as_str(), m.version.as_str()))
                    .cloned()
                    .unwrap_or_default(),
            );
        }
        rows.push(row);
    }
    if p.manifest.is_empty() {
        s.push_str("manifest: (empty)\n");
    } else {
        s.push_str(&crate::report::text::table(&rows));
    }
    for k in &p.kept {
        if let Some(alone) = &k.alone {
            let _ = writeln!(
                s,
                "kept {} at {}: alone it installs {alone}; the joint solve with the other kept entries holds it there",
                k.name, k.version
            );
        }
    }
    for l in &p.left_out {
        let _ = write!(s, "left out {}: {}", l.name, l.reason);
        if let Some(version) = &l.in_manifest {
            let _ = write!(
                s,
                "; the manifest installs {} {version} all the same, which the kept entries' dependencies take",
                l.name
            );
        }
        s.push('\n');
    }
    let listed = |what: &str, confidence: Confidence, needed_by: &[Pinned]| {
        let by: Vec<String> = needed_by
            .iter()
            .map(|m| format!("{} {}", m.name, m.version))
            .collect();
        format!("{what} ({}, for {})", confidence.as_str(), by.join(", "))
    };
    let closing = [
        (
            "the manifest needs system packages the image lacks",
            p.system_needs
                .iter()
                .map(|n| listed(&n.package, n.confidence, &n.needed_by))
                .collect::<Vec<_>>(),
        ),
        (
            "the manifest needs libraries the catalog names no package for (check the image by hand, or give them with --catalog)",
            p.unmapped_libraries
                .iter()
                .map(|n| listed(&n.library, n.confidence, &n.needed_by))
                .collect(),
        ),
    ];
    for (what, needs) in closing {
        if !needs.is_empty() {
            let _ = writeln!(s, "{what}: {}", needs.join("; "));
        }
    }
    s
}

#[cfg(test)]
mod tests {
    use super::minimal_conflict;

    /// What is already known is not solved again: a lone kept entry is the conflict without a
    /// solve, and halving eight entries to the first takes three solves.
    #[test]
    fn no_solve_repeats_a_known_answer() {
        let mut solves = 0;
        let found = minimal_conflict(&[7u32], &mut |s: &[u32]| {
            solves += 1;
            s.contains(&7)
        });
        assert_eq!((found, solves), (vec![7], 0));
        let mut solves = 0;
        let kept: Vec<u32> = (0..8).collect();
        let found = minimal_conflict(&kept, &mut |s: &[u32]| {
            solves += 1;
            s.contains(&0)
        });
        assert_eq!(found, vec![0]);
        assert_eq!(solves, 3, "solves");
    }

    /// The subset dropping one entry at a time finds, lowest priority first: the reference.
    fn by_deletion(kept: &[u32], fails: &dyn Fn(&[u32]) -> bool) -> Vec<u32> {
        let mut culprits = kept.to_vec();
        for i in (0..culprits.len()).rev() {
            let trial: Vec<u32> = culprits
                .iter()
                .enumerate()
                .filter(|(j, _)| *j != i)
                .map(|(_, r)| *r)
                .collect();
            if fails(&trial) {
                culprits.remove(i);
            }
        }
        culprits
    }

    #[test]
    fn the_minimal_conflict_is_the_one_deletion_finds_in_fewer_solves() {
        // Conflicts as families of sets: a subset fails when it holds one of them whole, which
        // is monotone, as joint solves are (more roots, no fewer constraints).
        let mut seed = 0x2545_f491_4f6c_dd1du64;
        let mut next = move |n: u64| {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            seed % n
        };
        for _ in 0..300 {
            let n = 1 + next(60) as u32;
            let kept: Vec<u32> = (0..n).collect();
            let family: Vec<Vec<u32>> = (0..1 + next(4))
                .map(|_| (0..1 + next(4)).map(|_| next(n as u64) as u32).collect())
                .collect();
            let fails = |s: &[u32]| family.iter().any(|c| c.iter().all(|x| s.contains(x)));
            let mut solves = 0;
            let found = minimal_conflict(&kept, &mut |s: &[u32]| {
                solves += 1;
                fails(s)
            });
            assert_eq!(found, by_deletion(&kept, &fails), "{family:?}");
            assert!(fails(&found));
            assert!(
                solves <= 2 * 4 * (1 + n.ilog2() as usize) + 2,
                "{solves} solves for {n}"
            );
        }
    }
}
