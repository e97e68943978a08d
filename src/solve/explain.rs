//! Turning the solver's derivation tree into a cause class, readable lines and blockers.

use super::Cause;
use super::image::{Admission, ImageView};
use super::provider::{Node, Observed, pick};
use super::sets::{IndexSet, describe, describe_named, indices, is_every_version};
use crate::model::PackageId;
use pubgrub::{DerivationTree, External};
use rustc_hash::FxHashMap;
use serde::Serialize;
use std::collections::{BTreeMap, HashSet};
use std::sync::Arc;

type Tree = DerivationTree<Node, IndexSet, String>;

/// A package (other than the root) whose state makes the root fail.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Blocker {
    pub package: PackageId,
    /// Short reason, e.g. `needs a newer runtime (>=3.1)`.
    pub reason: String,
}

/// A failed solve, explained.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Failure {
    pub cause: Cause,
    pub lines: Vec<String>,
    pub blockers: Vec<Blocker>,
}

/// The facts of a derivation tree, in the order the tree states them. Runs of unavailable
/// versions of one package are merged into one fact so they read as one line.
#[derive(Default)]
struct Facts {
    no_versions: BTreeMap<PackageId, IndexSet>,
    order: Vec<Fact>,
    /// The dependency facts in `order`, so a repeat is found without scanning it: a chain of
    /// dependencies states one per link, and scanning made collecting them quadratic.
    depends: HashSet<(Node, IndexSet, PackageId, IndexSet)>,
}

enum Fact {
    NoVersions(PackageId),
    Depends(Node, IndexSet, PackageId, IndexSet),
    Other(String),
}

/// Walks the tree depth first, `cause1` before `cause2`, with an explicit stack: a chain of
/// dependencies makes a tree as deep as the chain is long, and a recursive walk overflowed the
/// stack of a solver thread on a chain of 20,000 packages.
fn collect(tree: &Tree, facts: &mut Facts) {
    let mut stack = vec![tree];
    while let Some(tree) = stack.pop() {
        collect_one(tree, facts, &mut stack);
    }
}

fn collect_one<'t>(tree: &'t Tree, facts: &mut Facts, stack: &mut Vec<&'t Tree>) {
    match tree {
        DerivationTree::External(ext) => match ext {
            External::NotRoot(..) => {}
            External::NoVersions(Node::Package(p), set) => match facts.no_versions.get_mut(p) {
                Some(existing) => *existing = existing.union(set),
                None => {
                    facts.no_versions.insert(*p, set.clone());
                    facts.order.push(Fact::NoVersions(*p));
                }
            },
            External::NoVersions(..) => {}
            External::FromDependencyOf(_, _, Node::Runtime, _) => {}
            External::FromDependencyOf(a, sa, Node::Package(b), sb) => {
                if facts.depends.insert((*a, sa.clone(), *b, sb.clone())) {
                    facts
                        .order
                        .push(Fact::Depends(*a, sa.clone(), *b, sb.clone()));
                }
            }
            External::FromDependencyOf(..) => {}
            External::Custom(_, _, msg) => facts.order.push(Fact::Other(msg.clone())),
        },
        DerivationTree::Derived(d) => {
            stack.push(&d.cause2);
            stack.push(&d.cause1);
        }
    }
}

/// Drops a derivation tree one node at a time. The tree's own drop recurses once per level
/// (each cause is an `Arc` of a subtree), and a chain of 3,000 packages was enough to overflow
/// a 256 KiB stack that way. A cause shared with another node is only released here; the last
/// node to hold it takes it apart.
pub(crate) fn dismantle(tree: Tree) {
    let mut stack = vec![tree];
    while let Some(tree) = stack.pop() {
        if let DerivationTree::Derived(d) = tree {
            for cause in [d.cause1, d.cause2] {
                if let Ok(inner) = Arc::try_unwrap(cause) {
                    stack.push(inner);
                }
            }
        }
    }
}

/// Tally of why the releases of `package` in `set` cannot be used on the image.
fn refusals(
    view: &ImageView<'_>,
    package: PackageId,
    set: &IndexSet,
) -> BTreeMap<Admission, Vec<u32>> {
    let admissions = view.admissions(package);
    let mut out: BTreeMap<Admission, Vec<u32>> = BTreeMap::new();
    for i in indices(set, admissions.len()) {
        if admissions[i as usize] != Admission::Admissible {
            out.entry(admissions[i as usize]).or_default().push(i);
        }
    }
    out
}

fn cause_of_refusals(tally: &BTreeMap<Admission, Vec<u32>>) -> Cause {
    if tally.contains_key(&Admission::NeedsNewerRuntime) {
        Cause::RuntimeTooOld
    } else if tally.contains_key(&Admission::NeedsOlderRuntime) {
        Cause::RuntimeTooNew
    } else if tally.contains_key(&Admission::NoBuild) {
        Cause::NoBuildForPlatform
    } else {
        Cause::OnlyYankedOrPrerelease
    }
}

/// The releases of `root` in `set` that the image refuses for its runtime or platform and
/// whose dependencies the registry can supply all the way down (see [`supplied`]), tallied by
/// reason, and the packages read to tell. An image that admits one of them would let the
/// solver try a release it never tried here; one whose dependencies lead to a missing package
/// would fail on any image, so it does not count.
fn refusals_another_image_lifts(
    view: &ImageView<'_>,
    root: PackageId,
    set: &IndexSet,
) -> (BTreeMap<Admission, Vec<u32>>, Vec<PackageId>) {
    let mut tally = refusals(view, root, set);
    tally.retain(|reason, _| {
        matches!(
            reason,
            Admission::NeedsNewerRuntime | Admission::NeedsOlderRuntime | Admission::NoBuild
        )
    });
    // No image has a runtime a requirement like `>=5, <4` admits.
    let releases = &view.registry.package(root).releases;
    for idx in tally.values_mut() {
        idx.retain(|&i| !runtime_unmeetable(view.registry, &releases[i as usize]));
    }
    tally.retain(|_, idx| !idx.is_empty());
    let starts: Vec<(PackageId, u32)> = tally.values().flatten().map(|&i| (root, i)).collect();
    let (answers, mut read) = supplied(view, &starts);
    let ok: std::collections::BTreeSet<u32> = starts
        .iter()
        .zip(answers)
        .filter(|(_, ok)| *ok)
        .map(|((_, i), _)| *i)
        .collect();
    for idx in tally.values_mut() {
        idx.retain(|i| ok.contains(i));
    }
    tally.retain(|_, idx| !idx.is_empty());
    read.sort_unstable();
    read.dedup();
    (tally, read)
}

/// Which of `starts` (releases) the registry can supply all the way down: every name they
/// depend on is published, and each requirement admits some unyanked release that can in
/// turn be supplied. Runtimes, platforms and conflicts between branches are left aside, so
/// this over-approximates what another image could install; what it rules out (a chain that
/// ends at a missing name or at nothing published) fails on every image.
///
/// The answer is the largest set of releases each of whose requirements admits a release in
/// the set, so a dependency cycle counts as supplied exactly when nothing it needs outside
/// itself fails, whatever order the walk takes. The walk reads the dependencies of at most
/// [`SUPPLY_LIMIT`] releases (and stops adding candidates past eight times that); a release
/// it did not read counts as not supplied, so a huge graph keeps the missing name as the
/// cause rather than taking long to drop it. Also returns every package whose releases the
/// walk read, for re-plans. No recursion: chains thousands deep must not need stack.
fn supplied(view: &ImageView<'_>, starts: &[(PackageId, u32)]) -> (Vec<bool>, Vec<PackageId>) {
    let registry = view.registry;
    let mut graph = SupplyGraph::default();
    for &start in starts {
        graph.node(start);
    }
    let mut read = Vec::new();
    let mut next = 0;
    while next < graph.nodes.len() && next < SUPPLY_LIMIT && graph.nodes.len() < 8 * SUPPLY_LIMIT {
        let (package, index) = graph.nodes[next];
        graph.explored[next] = true;
        for d in registry.package(package).releases[index as usize].runtime_deps() {
            read.push(d.package);
            let target = registry.package(d.package);
            let slot = graph.slot_owner.len();
            graph.slot_owner.push(next);
            graph.slot_alive.push(0);
            if !target.declared {
                continue;
            }
            let wanted = view.sets.get(registry, d.package, d.req);
            for j in indices(&wanted, target.releases.len())
                .collect::<Vec<_>>()
                .into_iter()
                .rev()
            {
                if !target.releases[j as usize].yanked {
                    let candidate = graph.node((d.package, j));
                    graph.candidate_in[candidate].push(slot);
                    graph.slot_alive[slot] += 1;
                }
            }
        }
        next += 1;
    }
    // Take out what cannot be supplied, and whatever then has a requirement left without a
    // candidate, until nothing changes.
    let mut alive: Vec<bool> = graph.explored.clone();
    let mut dying: Vec<usize> = (0..graph.nodes.len()).filter(|&n| !alive[n]).collect();
    for (slot, &owner) in graph.slot_owner.iter().enumerate() {
        if graph.slot_alive[slot] == 0 && alive[owner] {
            alive[owner] = false;
            dying.push(owner);
        }
    }
    while let Some(n) = dying.pop() {
        for &slot in &graph.candidate_in[n] {
            graph.slot_alive[slot] -= 1;
            let owner = graph.slot_owner[slot];
            if graph.slot_alive[slot] == 0 && alive[owner] {
                alive[owner] = false;
                dying.push(owner);
            }
        }
    }
    let answers = starts
        .iter()
        .map(|start| graph.index.get(start).is_some_and(|&n| alive[n]))
        .collect();
    (answers, read)
}

/// Releases whose dependencies [`supplied`] reads.
const SUPPLY_LIMIT: usize = 4096;

/// The releases [`supplied`] met and their requirements ("slots"): a release is supplied
/// while every one of its slots has a candidate left that is.
#[derive(Default)]
struct SupplyGraph {
    nodes: Vec<(PackageId, u32)>,
    index: FxHashMap<(PackageId, u32), usize>,
    /// Whether the node's dependencies were read.
    explored: Vec<bool>,
    /// The slots each node is a candidate in.
    candidate_in: Vec<Vec<usize>>,
    /// Per slot: the node whose requirement it is, and how many candidates it has left.
    slot_owner: Vec<usize>,
    slot_alive: Vec<usize>,
}

impl SupplyGraph {
    fn node(&mut self, release: (PackageId, u32)) -> usize {
        if let Some(&n) = self.index.get(&release) {
            return n;
        }
        let n = self.nodes.len();
        self.nodes.push(release);
        self.index.insert(release, n);
        self.explored.push(false);
        self.candidate_in.push(Vec::new());
        n
    }
}

/// Why nothing in `set` of `package` is usable, as one cause and one phrase.
pub(crate) fn unusable(
    view: &ImageView<'_>,
    package: PackageId,
    set: &IndexSet,
) -> (Cause, String) {
    let registry = view.registry;
    let pkg = registry.package(package);
    if !pkg.declared {
        return (Cause::MissingFromRegistry, "is not in the registry".into());
    }
    let releases = &pkg.releases;
    if indices(set, releases.len()).next().is_none() {
        if !releases.is_empty()
            && releases
                .iter()
                .all(|r| r.yanked || !r.version.pre.is_empty())
        {
            return (
                Cause::OnlyYankedOrPrerelease,
                "has only yanked or pre-release versions".into(),
            );
        }
        // The snapshot did publish versions, but none could be read: "no published version"
        // would send the reader to the registry rather than to `check`'s list of them.
        if releases.is_empty() && pkg.left_out_releases > 0 {
            return (
                Cause::DependencyConflict,
                no_usable_version(pkg.left_out_releases),
            );
        }
        // The package is there; the requirement is what nothing meets. "missing" would send
        // the reader to look for a name that exists.
        return (
            Cause::DependencyConflict,
            "has no published version matching the requirement".into(),
        );
    }
    let mut tally = refusals(view, package, set);
    // A requirement no runtime meets is no matter of this image's age: grouped with the
    // releases that need a newer or older runtime it would send the reader to build images in
    // vain, and it would choose the direction of the cause. Such releases are told apart,
    // and set the cause only when nothing else is refused.
    let mut impossible: Vec<u32> = Vec::new();
    for (reason, idx) in tally.iter_mut() {
        if matches!(
            reason,
            Admission::NeedsNewerRuntime | Admission::NeedsOlderRuntime
        ) {
            idx.retain(|&i| {
                let no_runtime = runtime_unmeetable(registry, &releases[i as usize]);
                if no_runtime {
                    impossible.push(i);
                }
                !no_runtime
            });
        }
    }
    // Likewise a release with no build for any platform, whatever else refuses it here (a
    // runtime is judged first): "no build for linux/musl/x86_64" would send the reader to
    // another platform in vain, and "needs a newer runtime" to a newer image in vain.
    let mut no_build: Vec<u32> = Vec::new();
    for idx in tally.values_mut() {
        idx.retain(|&i| {
            let none = unbuildable(&releases[i as usize]);
            if none {
                no_build.push(i);
            }
            !none
        });
    }
    no_build.sort_unstable();
    tally.retain(|_, idx| !idx.is_empty());
    let cause = if !tally.is_empty() {
        cause_of_refusals(&tally)
    } else if !no_build.is_empty() {
        // Releases with no runtime possible follow the others (README, "Runtime images"),
        // whose cause stays no-build-for-platform.
        Cause::NoBuildForPlatform
    } else {
        cause_of_refusals(&refusals(view, package, set))
    };
    let image = view.image;
    let mut parts = Vec::new();
    if !impossible.is_empty() {
        impossible.sort_unstable();
        let n = impossible.len();
        let (versions, need) = if n == 1 {
            ("version", "needs")
        } else {
            ("versions", "need")
        };
        let shown = runtime_requirements(registry, releases, &impossible);
        parts.push(format!(
            "{n} {versions} {need} a runtime no version can be ({shown}): no image can install {}",
            crate::report::it_or_them(n)
        ));
    }
    if !no_build.is_empty() {
        let n = no_build.len();
        let (versions, have) = if n == 1 {
            ("version", "has")
        } else {
            ("versions", "have")
        };
        parts.push(format!(
            "{n} {versions} {have} no build for any platform (neither a source build nor a \
             prebuilt one): no image can install {}",
            crate::report::it_or_them(n)
        ));
    }
    for (reason, idx) in &tally {
        let n = idx.len();
        let versions = if n == 1 { "version" } else { "versions" };
        let phrase = match reason {
            Admission::NeedsNewerRuntime | Admission::NeedsOlderRuntime => {
                let shown = runtime_requirements(registry, releases, idx);
                let dir = if *reason == Admission::NeedsNewerRuntime {
                    "a newer"
                } else {
                    "an older"
                };
                let need = if n == 1 { "needs" } else { "need" };
                format!(
                    "{n} {versions} {need} {dir} runtime ({shown}; the image has {})",
                    image.runtime
                )
            }
            Admission::Yanked => format!("{n} {versions} yanked"),
            Admission::NoBuild => format!(
                "{n} {versions} without a source build or a prebuilt build for {}",
                image.platform
            ),
            Admission::Admissible => continue,
        };
        parts.push(phrase);
    }
    // Counts that cover every release already say which versions: "any version: 2 versions
    // yanked" would only repeat them.
    let phrase = match scope_of(registry, package, set) {
        None => parts.join(", "),
        Some(scope) => format!("{scope}: {}", parts.join(", ")),
    };
    (cause, phrase)
}

/// The releases a phrase of [`unusable`] starts with, when it names some: those of `set`
/// when they are not all of the package's.
fn scope_of(
    registry: &crate::model::Registry,
    package: PackageId,
    set: &IndexSet,
) -> Option<String> {
    let releases = registry.package(package).releases.len();
    (indices(set, releases).next().is_some() && !is_every_version(registry, package, set))
        .then(|| describe(registry, package, set))
}

/// "no version of `name` can be used here", scoped to the releases `phrase` (of [`unusable`]
/// for `set`) is about when they are not all of the package's: "no version of X can be used
/// here: 0.3.0: 1 version yanked" read as if X had no usable version at all, though an older
/// one installs.
fn no_version_line(
    view: &ImageView<'_>,
    package: PackageId,
    set: &IndexSet,
    phrase: &str,
) -> String {
    let name = view.registry.name(package);
    let scoped = scope_of(view.registry, package, set).and_then(|scope| {
        let counts = phrase.strip_prefix(&format!("{scope}: "))?;
        Some(format!(
            "no version of {name} in {scope} can be used here: {counts}"
        ))
    });
    scoped.unwrap_or_else(|| format!("no version of {name} can be used here: {phrase}"))
}

/// Whether some release of `package` in `set` is admissible, recording in `record`, when so,
/// what shows it: nothing when the solver already found a release in the set admissible (its
/// record stands, and a re-plan rewrites it alone when a look-alike takes that release's
/// place), else the walk up from the oldest release to the first admissible one. Oldest
/// first, so that neither a release published since nor a yank of the newest changes what a
/// cold solve records, and a re-plan keeps the cell through both; a release below the first
/// admissible one that becomes admissible is in the walk. When none is admissible nothing is
/// recorded: the caller asks again as the solver asks.
///
/// The first `sorted` records of `record.admissions` are the solver's, sorted (the solve's
/// [`Observed::finish`]): they are searched by package rather than scanned, since a long
/// failing chain asks this thousands of times.
fn met_oldest_first(
    view: &ImageView<'_>,
    package: PackageId,
    set: &IndexSet,
    record: &mut Observed,
    sorted: usize,
) -> bool {
    let admissions = view.admissions(package);
    let (solver, since) = record
        .admissions
        .split_at(sorted.min(record.admissions.len()));
    let from = solver.partition_point(|r| r.0 < package);
    let to = solver.partition_point(|r| r.0 <= package);
    let seen = solver[from..to]
        .iter()
        .chain(since)
        .any(|&(p, k, ok)| p == package && ok && set.contains(&k));
    if seen {
        return true;
    }
    let mut walk = Vec::new();
    for i in indices(set, admissions.len()) {
        if !view.fits(package, i) {
            walk.push((i, None));
            continue;
        }
        let admissible = admissions[i as usize] == Admission::Admissible;
        walk.push((i, Some(admissible)));
        if admissible {
            for (k, admission) in walk {
                match admission {
                    None => record.unfit.push((package, k)),
                    Some(ok) => record.admissions.push((package, k, ok)),
                }
            }
            return true;
        }
    }
    false
}

/// The cause's label for a blocker whose releases in `set` are all refused, unless no image
/// can install any of them: each has a runtime requirement no runtime meets (the cause keeps
/// a direction then, and "needs a newer runtime" would send the reader to build an image no
/// runtime can make) or no build for any platform ("no build for this platform" would send
/// the reader to another platform in vain).
fn refusal_label(
    registry: &crate::model::Registry,
    package: PackageId,
    set: &IndexSet,
    cause: Cause,
) -> &'static str {
    let pkg = registry.package(package);
    let releases: Vec<&crate::model::Release> = indices(set, pkg.releases.len())
        .map(|i| &pkg.releases[i as usize])
        .collect();
    if !pkg.declared || releases.is_empty() {
        return cause.label();
    }
    let no_runtime = releases.iter().all(|r| runtime_unmeetable(registry, r));
    let no_build = releases.iter().all(|r| unbuildable(r));
    let neither = releases
        .iter()
        .all(|r| runtime_unmeetable(registry, r) || unbuildable(r));
    match (no_runtime, no_build, neither) {
        (true, _, _) => "needs a runtime no version can be",
        (_, true, _) => "has no build for any platform",
        (_, _, true) => "has no release any image can install",
        _ => cause.label(),
    }
}

/// Whether `release` has neither a source build nor a prebuilt build for any platform: no
/// image can install it, whatever its platform.
fn unbuildable(release: &crate::model::Release) -> bool {
    !release.build.source && release.build.prebuilt.is_empty()
}

/// Whether `release` has a runtime requirement no runtime version meets (`<0.0.0`,
/// `>=5, <4`): no image can install it, whatever its runtime.
fn runtime_unmeetable(registry: &crate::model::Registry, release: &crate::model::Release) -> bool {
    release
        .runtime
        .is_some_and(|r| !super::image::admits_some_runtime(registry.requirement(r)))
}

/// The distinct runtime requirements of `releases` at `idx`, sorted, at most three shown.
fn runtime_requirements(
    registry: &crate::model::Registry,
    releases: &[crate::model::Release],
    idx: &[u32],
) -> String {
    let mut reqs: Vec<String> = idx
        .iter()
        .filter_map(|&i| releases[i as usize].runtime)
        .map(|r| registry.requirement(r).text.clone())
        .collect();
    reqs.sort();
    reqs.dedup();
    if reqs.len() > 3 {
        format!("{} and {} more", reqs[..3].join("; "), reqs.len() - 3)
    } else {
        reqs.join("; ")
    }
}

/// Why a package whose every one of `left_out` version records was left out has no version.
fn no_usable_version(left_out: u32) -> String {
    let (records, were) = if left_out == 1 {
        ("record", "was")
    } else {
        ("records", "were")
    };
    format!(
        "has no usable version: its {left_out} version {records} {were} left out as unusable \
         (see `basefit check`)"
    )
}

/// The requirement text `dependent`'s releases in `dependent_set` place on `target`, when they
/// all agree; otherwise the requirements of each release joined with "and", and those of
/// different releases with "or" (pubgrub merges facts about several releases into one, and a
/// reader must not take requirements of two releases for one release's pair); a set no
/// requirement names is described by its versions.
fn requirement_text(
    view: &ImageView<'_>,
    dependent: PackageId,
    dependent_set: &IndexSet,
    target: PackageId,
    target_set: &IndexSet,
) -> String {
    let registry = view.registry;
    let releases = &registry.package(dependent).releases;
    let mut groups: Vec<Vec<&str>> = Vec::new();
    for i in indices(dependent_set, releases.len()) {
        let mut group: Vec<&str> = Vec::new();
        for d in releases[i as usize]
            .runtime_deps()
            .filter(|d| d.package == target)
        {
            let t = registry.requirement(d.req).text.as_str();
            if !group.contains(&t) {
                group.push(t);
            }
        }
        if !group.is_empty() && !groups.contains(&group) {
            groups.push(group);
        }
    }
    let empty = indices(target_set, registry.package(target).releases.len())
        .next()
        .is_none();
    let alternatives = groups.len();
    let phrase = groups
        .iter()
        .map(|g| {
            let joined = g.join(" and ");
            if g.len() > 1 && alternatives > 1 {
                format!("({joined})")
            } else {
                joined
            }
        })
        .collect::<Vec<_>>()
        .join(" or ");
    // A package the registry lacks has no versions to describe: saying none meets the
    // requirements would read as if some were published.
    let absent = registry.package(target).releases.is_empty();
    match groups.as_slice() {
        [] => describe(registry, target, target_set),
        [one] if one.len() == 1 => phrase,
        _ if absent => phrase,
        [_] if empty => format!("{phrase} (no published version meets all of them)"),
        _ if empty => format!("{phrase} (no published version meets any of them)"),
        _ => format!("{phrase} ({})", describe(registry, target, target_set)),
    }
}

/// Every package whose facts the explanation of `facts` reads beyond what the solver was
/// answered: those its facts name, whose refusals, requirement texts and release lists it
/// describes.
fn named(facts: &Facts) -> Vec<PackageId> {
    let mut out: Vec<PackageId> = facts.no_versions.keys().copied().collect();
    for f in &facts.order {
        if let Fact::Depends(a, _, b, _) = f {
            if let Node::Package(a) = a {
                out.push(*a);
            }
            out.push(*b);
        }
    }
    out
}

/// How many releases of a dependent [`unusable_siblings`] looks at: a fact about more of them
/// is about a long run of versions, where each release's own dependencies rarely all fail.
const SIBLING_RELEASES: usize = 64;

/// A dependency of some releases of a package that none of them can meet on the image: its
/// name, what the cause is, the requirement text and the phrase saying why.
struct Sibling {
    package: PackageId,
    /// The releases its requirement admits (of the first release that has it).
    set: IndexSet,
    cause: Cause,
    req: String,
    phrase: String,
}

/// The dependencies, other than those in `known`, that every release of `dependent` in `set`
/// has and cannot meet on the image: a name the registry lacks, or a requirement none of whose
/// releases the image admits. Each fails those releases as surely as the dependency the
/// solver happened to meet first, which depends on the order the dependencies are listed in;
/// naming them too keeps the cause and the blockers from depending on that order.
///
/// What it reads goes where a re-plan checks it: whether a requirement can be met is asked as
/// the solver asks it ([`pick`], recorded in `record` with the releases whose dependencies
/// were read), and each dependency named as unmet is pushed onto `read`, to be kept whole as
/// every package an explanation names.
fn unusable_siblings(
    view: &ImageView<'_>,
    dependent: PackageId,
    set: &IndexSet,
    known: &[PackageId],
    read: &mut Vec<PackageId>,
    record: &mut Observed,
    sorted: usize,
) -> Vec<Sibling> {
    let registry = view.registry;
    let releases = &registry.package(dependent).releases;
    let mut chosen: Vec<u32> = Vec::new();
    for i in indices(set, releases.len()) {
        if chosen.len() == SIBLING_RELEASES {
            return Vec::new();
        }
        chosen.push(i);
    }
    let Some(&first) = chosen.first() else {
        return Vec::new();
    };
    let mut out: Vec<Sibling> = Vec::new();
    'targets: for dep in releases[first as usize].runtime_deps() {
        let target = dep.package;
        if known.contains(&target) || out.iter().any(|s| s.package == target) {
            continue;
        }
        // A release without the dependency is not failed by it: decided by the dependent's
        // own releases, which the explanation keeps whole, before anything else is read.
        if !chosen.iter().all(|&i| {
            releases[i as usize]
                .runtime_deps()
                .any(|d| d.package == target)
        }) {
            continue;
        }
        let mut first_set = None;
        for &i in &chosen {
            record.fetched.push((dependent, i));
            record.packages.push(target);
            let mut unmet = None;
            for (p, dep_set) in view.dependency_sets_on(dependent, i, move |p| p == target) {
                if !met_oldest_first(view, p, &dep_set, record, sorted) {
                    // Asked as the solver asks, stretches included: a release published
                    // later inside the set may meet it, and a re-plan must then solve again.
                    pick(view, p, &dep_set, record);
                    unmet = Some(dep_set);
                    break;
                }
            }
            match unmet {
                Some(dep_set) => {
                    first_set.get_or_insert(dep_set);
                }
                None => continue 'targets,
            }
        }
        let Some(dep_set) = first_set else {
            continue;
        };
        read.push(target);
        let (cause, phrase) = unusable(view, target, &dep_set);
        out.push(Sibling {
            package: target,
            cause,
            req: requirement_text(view, dependent, set, target, &dep_set),
            phrase,
            set: dep_set,
        });
    }
    out.sort_by(|a, b| registry.name(a.package).cmp(registry.name(b.package)));
    out
}

/// Explains a failed solve of `root` on the view's image. Also returns every package the
/// explanation read beyond what the solver was answered (sorted, unique): a re-plan keeps the
/// failure only while they are unchanged. Those are the packages its facts name, the
/// dependencies it names as unmet beside them, and, when a fact names a package missing from
/// the registry, those below the root's releases the image refuses, which decide whether
/// another image would lift the failure (the choice of cause). Whether other dependencies can
/// be met it asks as the solver asks, recorded in `record` (the solve's [`Observed`]; call
/// [`Observed::finish`] again after).
pub fn explain(
    view: &ImageView<'_>,
    root: PackageId,
    tree: &Tree,
    record: &mut Observed,
) -> (Failure, Vec<PackageId>) {
    let registry = view.registry;
    let mut facts = Facts::default();
    collect(tree, &mut facts);
    let mut examined = named(&facts);
    // Per dependent named in a dependency fact (the first fact about it), the other
    // dependencies its releases there cannot meet.
    // Per dependent, every package the facts say it depends on, gathered in one pass: a
    // chain of dependencies states thousands of facts, and a scan per dependent was quadratic.
    let mut known: BTreeMap<PackageId, Vec<PackageId>> = BTreeMap::new();
    for f in &facts.order {
        if let Fact::Depends(Node::Package(a), _, b, _) = f {
            known.entry(*a).or_default().push(*b);
        }
    }
    let mut siblings: BTreeMap<PackageId, Vec<Sibling>> = BTreeMap::new();
    let sorted = record.admissions.len();
    for f in &facts.order {
        if let Fact::Depends(Node::Package(a), sa, ..) = f
            && !siblings.contains_key(a)
        {
            let found = unusable_siblings(view, *a, sa, &known[a], &mut examined, record, sorted);
            siblings.insert(*a, found);
        }
    }
    // Walked wherever a missing name is among the facts, which covers every failure whose
    // cause can be a missing name: reading more only costs a re-plan a solve.
    let refusals_lifted = match facts.no_versions.get(&root) {
        Some(set) if examined.iter().any(|p| !registry.package(*p).declared) => {
            let (tally, read) = refusals_another_image_lifts(view, root, set);
            examined.extend(read);
            Some(tally)
        }
        _ => None,
    };
    examined.sort_unstable();
    examined.dedup();
    // What the entry asks for reads best first; the rest keeps the tree's order.
    facts
        .order
        .sort_by_key(|f| !matches!(f, Fact::Depends(Node::Root, ..)));
    let mut lines = Vec::new();
    // Each with the cause it stands for, so that the ones a chosen cause disowns can go.
    let mut blockers: Vec<(Blocker, Cause)> = Vec::new();
    let mut leaf_causes: Vec<(PackageId, Cause)> = Vec::new();
    let mut constrained_by: BTreeMap<PackageId, Vec<Node>> = BTreeMap::new();
    // A requirement no published release meets is a cause in itself: say so where it is stated.
    let empty_requirement = |b: PackageId,
                             set: &IndexSet,
                             lines: &mut Vec<String>,
                             leaf_causes: &mut Vec<(PackageId, Cause)>|
     -> Option<(Cause, String)> {
        if indices(set, registry.package(b).releases.len())
            .next()
            .is_some()
        {
            return None;
        }
        let (cause, phrase) = unusable(view, b, set);
        lines.push(format!("{} {phrase}", registry.name(b)));
        leaf_causes.push((b, cause));
        Some((cause, phrase))
    };
    let mut stated: Vec<(PackageId, PackageId, String, IndexSet)> = Vec::new();
    for fact in &facts.order {
        match fact {
            Fact::NoVersions(p) => {
                let set = &facts.no_versions[p];
                // Past the published releases (pubgrub derives these from exhausted ranges):
                // a consequence, not a cause. Empty requirements are reported where they are
                // stated, on the dependency.
                if registry.package(*p).declared
                    && indices(set, registry.package(*p).releases.len())
                        .next()
                        .is_none()
                {
                    continue;
                }
                let (cause, phrase) = unusable(view, *p, set);
                let name = registry.name(*p);
                lines.push(if registry.package(*p).declared {
                    no_version_line(view, *p, set, &phrase)
                } else {
                    format!("{name} {phrase}")
                });
                leaf_causes.push((*p, cause));
                if *p != root {
                    // Naming the versions matters when others suit the image: a package that
                    // installs as an entry can still block entries that need its newer line.
                    let releases = &registry.package(*p).releases;
                    let all = indices(set, releases.len()).count() == releases.len();
                    let why = refusal_label(registry, *p, set, cause);
                    let reason = if registry.package(*p).declared && !all {
                        format!("{name} {} {why}", describe(registry, *p, set))
                    } else {
                        format!("{name} {why}")
                    };
                    blockers.push((
                        Blocker {
                            package: *p,
                            reason,
                        },
                        cause,
                    ));
                }
            }
            Fact::Depends(a, sa, b, sb) => {
                let target = registry.name(*b);
                let deps_on = constrained_by.entry(*b).or_default();
                if !deps_on.contains(a) {
                    deps_on.push(*a);
                }
                match a {
                    Node::Root => {
                        // An empty set here is the entry's requirement matching nothing, not a
                        // package without releases: the next line names what is missing.
                        let releases = registry.package(*b).releases.len();
                        let root_desc = if indices(sb, releases).next().is_none() && releases > 0 {
                            "no release the entry may take".to_string()
                        } else if releases == 0 && registry.package(*b).left_out_releases > 0 {
                            // Published, but unusable: the next line says why.
                            "no usable version".to_string()
                        } else {
                            describe(registry, *b, sb)
                        };
                        lines.push(format!("the entry asks for {target} ({root_desc})"));
                        empty_requirement(*b, sb, &mut lines, &mut leaf_causes);
                    }
                    Node::Package(ap) => {
                        let req = requirement_text(view, *ap, sa, *b, sb);
                        // pubgrub may state one dependency for a range and again for part of
                        // it; the part adds nothing to read.
                        let covered = stated.iter().any(|(p, t, r, set)| {
                            p == ap && t == b && *r == req && sa.subset_of(set)
                        });
                        if covered {
                            continue;
                        }
                        stated.push((*ap, *b, req.clone(), sa.clone()));
                        lines.push(format!(
                            "{} depends on {target} {req}",
                            describe_named(registry, *ap, sa)
                        ));
                        for sib in siblings.get_mut(ap).map(std::mem::take).unwrap_or_default() {
                            let name = registry.name(sib.package);
                            let unmet = if registry.package(sib.package).declared {
                                no_version_line(view, sib.package, &sib.set, &sib.phrase)
                            } else {
                                format!("{name} {}", sib.phrase)
                            };
                            lines.push(format!(
                                "{} also depends on {name} {}; {unmet}",
                                describe_named(registry, *ap, sa),
                                sib.req,
                            ));
                            leaf_causes.push((sib.package, sib.cause));
                            let why = if sib.cause == Cause::DependencyConflict {
                                sib.phrase.as_str()
                            } else {
                                refusal_label(registry, sib.package, &sib.set, sib.cause)
                            };
                            blockers.push((
                                Blocker {
                                    package: sib.package,
                                    reason: format!("{name} (wanted {}) {why}", sib.req),
                                },
                                sib.cause,
                            ));
                        }
                        if let Some((cause, phrase)) =
                            empty_requirement(*b, sb, &mut lines, &mut leaf_causes)
                        {
                            // The cause's label speaks of conflicting requirements in general;
                            // the phrase says that no published version meets this one.
                            let why = if cause == Cause::DependencyConflict {
                                phrase.as_str()
                            } else {
                                cause.label()
                            };
                            let reason = format!("{target} (wanted {req}) {why}");
                            blockers.push((
                                Blocker {
                                    package: *b,
                                    reason,
                                },
                                cause,
                            ));
                        }
                    }
                    Node::Runtime => {}
                }
            }
            Fact::Other(msg) => lines.push(msg.clone()),
        }
    }
    // By name: package ids follow the order names appear in the input files, which an
    // unrelated edit can change, and output must depend on content only (re-plans rely on it).
    let mut conflicts: Vec<PackageId> = constrained_by
        .iter()
        .filter(|(_, by)| by.len() >= 2)
        .map(|(p, _)| *p)
        .collect();
    conflicts.sort_by(|a, b| registry.name(*a).cmp(registry.name(*b)));
    let missing = leaf_causes
        .iter()
        .any(|(_, c)| *c == Cause::MissingFromRegistry);
    // Yanked and pre-release releases are set aside by the registry, not by the image: when
    // the root's other releases were tried and failed for a reason of their own, that reason
    // is the cause, and "has only yanked or pre-release versions" would be untrue.
    let others_failed = !conflicts.is_empty() || leaf_causes.iter().any(|(p, _)| *p != root);
    let own = leaf_causes
        .iter()
        .find(|(p, _)| *p == root)
        .map(|(_, c)| *c)
        .filter(|c| *c != Cause::OnlyYankedOrPrerelease || !others_failed);
    // A missing name fails a release on every image, so it outranks the root's own refusals
    // unless one of them is the image's doing alone: then an image with another runtime or
    // platform would install that release, and saying so is what the image's maintainer can
    // act on. Only the root's own refusals are weighed: they name exactly the releases the
    // image rules out, while a dependency's refusal is the first blocker the solver met on
    // one path, and may hide others (`explain`'s runtime hint solves again to find out).
    let lifted = refusals_lifted
        .filter(|tally| missing && !tally.is_empty())
        .map(|tally| cause_of_refusals(&tally));
    let (cause, from_root) = if let Some(c) = lifted {
        (c, true)
    } else if missing {
        (Cause::MissingFromRegistry, false)
    } else if let Some(c) = own {
        (c, true)
    } else if !conflicts.is_empty()
        || leaf_causes
            .iter()
            .any(|(_, c)| *c == Cause::DependencyConflict)
    {
        (Cause::DependencyConflict, false)
    } else {
        let c = [
            Cause::RuntimeTooOld,
            Cause::RuntimeTooNew,
            Cause::NoBuildForPlatform,
            Cause::OnlyYankedOrPrerelease,
        ]
        .into_iter()
        .find(|c| leaf_causes.iter().any(|(_, lc)| lc == c))
        .unwrap_or(Cause::DependencyConflict);
        (c, false)
    };
    for &p in conflicts
        .iter()
        .filter(|_| cause == Cause::DependencyConflict)
    {
        let by: Vec<String> = constrained_by[&p]
            .iter()
            .map(|n| match n {
                Node::Package(q) => registry.name(*q).to_string(),
                _ => "the entry".to_string(),
            })
            .collect();
        lines.push(format!(
            "{} and {} need versions of {} that do not overlap",
            by[..by.len() - 1].join(", "),
            by[by.len() - 1],
            registry.name(p)
        ));
        if p != root {
            // Who asks for the versions that do not overlap: the blocked package itself may
            // be sound, and a reader of the blockers would otherwise suspect it.
            let reason = format!(
                "conflicting requirements on {} (from {})",
                registry.name(p),
                by.join(" and ")
            );
            blockers.push((Blocker { package: p, reason }, Cause::DependencyConflict));
        }
    }
    lines.push(format!(
        "so {} cannot be installed on {}",
        registry.name(root),
        view.image.id
    ));
    // A cause read off the root's own releases names no other package; a dependency that
    // fails in another way only blocks the releases left over, and as the cell's one-line
    // reason it would contradict the cause.
    if from_root {
        blockers.retain(|(_, c)| *c == cause);
    }
    // Under a conflict, a dependency the image refuses is one step of the proof: another
    // image may admit it and install the entry, or meet the conflict still (`explain`'s
    // runtime hint solves again to find out). Said bare, "needs a newer runtime" sent readers
    // to upgrade an image for a package that conflicts at every runtime.
    if cause == Cause::DependencyConflict {
        for (b, c) in blockers.iter_mut() {
            if *c != Cause::DependencyConflict {
                b.reason
                    .push_str(" (beside a conflict: another image alone may not be enough)");
            }
        }
    }
    let mut blockers: Vec<Blocker> = blockers.into_iter().map(|(b, _)| b).collect();
    blockers.dedup();
    (
        Failure {
            cause,
            lines,
            blockers,
        },
        examined,
    )
}
