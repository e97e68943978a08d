//! The pubgrub dependency provider for one (package, image) cell.

use super::image::{Admission, ImageView};
use super::sets::{IndexSet, indices_newest_first};
use crate::model::PackageId;
use pubgrub::{
    Dependencies, DependencyConstraints, DependencyProvider, PackageResolutionStatistics,
};
use std::cell::{Cell, RefCell};
use std::cmp::Reverse;
use std::fmt;
use std::ops::Bound;

/// A package as the solver sees it. The root stands for the priority entry being solved, so a
/// missing or unusable root package is explained like any other dependency; the runtime is a
/// virtual package fixed at the image's runtime version.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Node {
    Root,
    Runtime,
    Package(PackageId),
}

impl fmt::Display for Node {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Node::Root => f.write_str("(root)"),
            Node::Runtime => f.write_str("(runtime)"),
            Node::Package(id) => write!(f, "#{}", id.0),
        }
    }
}

/// Why a solve stopped without an answer.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct BudgetExhausted {
    pub steps: u64,
}

impl fmt::Display for BudgetExhausted {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "solver budget of {} steps used up", self.steps)
    }
}

impl std::error::Error for BudgetExhausted {}

pub struct CellProvider<'v, 'r> {
    pub view: &'v ImageView<'r>,
    /// What the virtual root depends on: one package for a cell, several for a joint solve
    /// (packages an image pre-installs together), each restricted to its allowed releases.
    pub roots: Vec<(PackageId, IndexSet)>,
    budget: u64,
    steps: Cell<u64>,
    /// What the solver asked and was answered; see [`Observed`].
    pub observed: RefCell<Observed>,
}

/// What one solve learnt from the registry and the image, kept so that a later plan can tell
/// whether a changed registry would answer every question the same way. pubgrub is
/// deterministic: given the same answers it asks the same questions and reaches the same
/// result, so a cell whose observations all still hold needs no new solve.
///
/// Release indices are only comparable while a package's list of versions is unchanged;
/// whoever checks observations must check that first.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Observed {
    /// Every package whose versions or dependencies were consulted (sorted and unique once
    /// the solve is over): the answer cannot change unless one of them, or the image, does.
    pub packages: Vec<PackageId>,
    /// `(package, release, admissible)` for each release whose admission decided a choice of
    /// version: in each range the solver picked from, the newest admissible release and every
    /// newer one that suits the image (the whole range when none was admissible). Newer ones
    /// that do not suit are in `unfit`; older releases in the range did not matter.
    pub admissions: Vec<(PackageId, u32, bool)>,
    /// `(package, release)` for each release that a pick passed over because it does not
    /// suit the image's runtime or platform (its yank flag did not matter).
    pub unfit: Vec<(PackageId, u32)>,
    /// `(package, from, to)`: releases `from..to` whose stretch (the points between a release
    /// and the next, which pubgrub's sets can hold without the release itself) lies in a range
    /// the solver picked from. A release published since that lies in exactly the same
    /// requirement sets as an old one falls in such a range exactly when the old one's stretch
    /// does, so this tells a re-plan whether a cold solve would have picked from a range
    /// holding it. Merged runs, in order.
    pub covered: Vec<(PackageId, u32, u32)>,
    /// `(package, ceiling)` for each package the solver prioritized: its candidate count in a
    /// range is the number of releases in the range below the ceiling
    /// ([`ImageView::ceiling`]).
    pub ceilings: Vec<(PackageId, u32)>,
    /// Releases whose dependencies the solver read.
    pub fetched: Vec<(PackageId, u32)>,
    /// Packages a failure's explanation read beyond the solver's answers (refusal reasons,
    /// the requirements of releases never picked, the dependencies its choice of cause walks
    /// below root releases the image refuses): they must be unchanged as a whole.
    pub explained: Vec<PackageId>,
    /// Packages asked about with a range that reaches past their last release.
    pub open_ended: Vec<PackageId>,
    /// `(package, release)` where a range the solver prioritized or picked from held the
    /// release without the stretch after it, or the stretch without the release. Ranges
    /// built from requirements never do; only what the solver learned from deciding that
    /// very release (and later undoing it) splits them so. A re-plan that lets a new
    /// look-alike release stand in for the newest one relies on there being no split there.
    pub splits: Vec<(PackageId, u32)>,
}

/// The newest admissible release of `package` in `range`, recording in `observed` what the
/// walk down to it read: the stretches of the range, the admission of each release that suits
/// the image, and the releases that do not (whose yank flag did not matter). The solver picks
/// so; an explanation that asks whether a requirement can be met asks so too, so that a
/// re-plan checks its question as it checks the solver's.
pub(crate) fn pick(
    view: &ImageView<'_>,
    package: PackageId,
    range: &IndexSet,
    observed: &mut Observed,
) -> Option<u32> {
    let admissions = view.admissions(package);
    // A run of the range from `a` to `b` (either end open or closed) holds the stretch
    // after each release from `a` up to but not including `b`.
    observed.covered.extend(range.iter().filter_map(|(lo, hi)| {
        let from = match lo {
            Bound::Included(v) | Bound::Excluded(v) => *v,
            Bound::Unbounded => 0,
        };
        let to = match hi {
            Bound::Included(v) | Bound::Excluded(v) => (*v).min(admissions.len() as u32),
            Bound::Unbounded => admissions.len() as u32,
        };
        (from < to).then_some((package, from, to))
    }));
    for i in indices_newest_first(range, admissions.len()) {
        if !view.fits(package, i) {
            observed.unfit.push((package, i));
            continue;
        }
        let admissible = admissions[i as usize] == Admission::Admissible;
        observed.admissions.push((package, i, admissible));
        if admissible {
            return Some(i);
        }
    }
    None
}

impl Observed {
    /// Sorts every list and drops repeats; merges the covered runs. Again after more was
    /// recorded, it gives what one call after all of it gives.
    pub(crate) fn finish(&mut self) {
        self.packages.sort_unstable();
        self.packages.dedup();
        self.admissions.sort_unstable();
        self.admissions.dedup();
        self.unfit.sort_unstable();
        self.unfit.dedup();
        self.ceilings.sort_unstable();
        self.ceilings.dedup();
        self.fetched.sort_unstable();
        self.fetched.dedup();
        self.open_ended.sort_unstable();
        self.open_ended.dedup();
        self.splits.sort_unstable();
        self.splits.dedup();
        self.covered.sort_unstable();
        let mut merged: Vec<(PackageId, u32, u32)> = Vec::with_capacity(self.covered.len());
        for &(package, from, to) in &self.covered {
            match merged.last_mut() {
                Some(last) if last.0 == package && from <= last.2 => last.2 = last.2.max(to),
                _ => merged.push((package, from, to)),
            }
        }
        self.covered = merged;
    }
}

impl<'v, 'r> CellProvider<'v, 'r> {
    pub fn new(view: &'v ImageView<'r>, root: PackageId, root_set: IndexSet, budget: u64) -> Self {
        Self::joint(view, vec![(root, root_set)], budget)
    }

    /// A provider whose root depends on every package of `roots` at once. Duplicate packages
    /// are intersected, since pubgrub takes one constraint per package.
    pub fn joint(view: &'v ImageView<'r>, roots: Vec<(PackageId, IndexSet)>, budget: u64) -> Self {
        let mut merged: Vec<(PackageId, IndexSet)> = Vec::with_capacity(roots.len());
        for (id, set) in roots {
            match merged.iter_mut().find(|(p, _)| *p == id) {
                Some((_, existing)) => *existing = existing.intersection(&set),
                None => merged.push((id, set)),
            }
        }
        let observed = Observed {
            packages: merged.iter().map(|(p, _)| *p).collect(),
            ..Observed::default()
        };
        CellProvider {
            view,
            roots: merged,
            budget,
            steps: Cell::new(0),
            observed: RefCell::new(observed),
        }
    }

    /// Records what the shape of `range` tells a re-plan: `package` is open-ended when the
    /// range reaches past its last release (a release published later would then fall inside
    /// a range the solver asked about; ranges built from requirement sets never do, the
    /// record keeps re-plans exact if pubgrub ever asks with one that does), and each release
    /// the range splits from its stretch ([`Observed::splits`]).
    fn note_range(&self, package: PackageId, range: &IndexSet, count: usize) {
        let open = range.iter().last().is_some_and(|(_, hi)| match hi {
            Bound::Included(v) => *v as usize >= count,
            Bound::Excluded(v) => *v as usize > count,
            Bound::Unbounded => true,
        });
        let mut observed = self.observed.borrow_mut();
        if open {
            observed.open_ended.push(package);
        }
        for (lo, hi) in range.iter() {
            // A run that starts just after a release holds its stretch without it; one that
            // ends at a release holds it without its stretch.
            if let Bound::Excluded(v) = lo
                && (*v as usize) < count
            {
                observed.splits.push((package, *v));
            }
            if let Bound::Included(v) = hi
                && (*v as usize) < count
            {
                observed.splits.push((package, *v));
            }
        }
    }

    fn pick(&self, package: PackageId, range: &IndexSet) -> Option<u32> {
        pick(self.view, package, range, &mut self.observed.borrow_mut())
    }

    /// What the solve observed, sorted and unique.
    pub fn take_observed(&self) -> Observed {
        let mut observed = self.observed.take();
        observed.finish();
        observed
    }

    pub fn steps(&self) -> u64 {
        self.steps.get()
    }
}

impl DependencyProvider for CellProvider<'_, '_> {
    type P = Node;
    type V = u32;
    type VS = IndexSet;
    type M = String;
    type Err = BudgetExhausted;
    /// Higher first: packages that conflicted more, then those with fewer candidate versions.
    type Priority = (u32, Reverse<u32>);

    fn prioritize(
        &self,
        package: &Node,
        range: &IndexSet,
        stats: &PackageResolutionStatistics,
    ) -> Self::Priority {
        let candidates = match package {
            Node::Root | Node::Runtime => 0,
            Node::Package(id) => {
                let count = self.view.registry.package(*id).releases.len();
                self.note_range(*id, range, count);
                // The releases up to the newest one that suits the image: those newer can
                // never be picked (typically they need a newer runtime), and counting them
                // would let a release the image refuses change the order of decisions. Yank
                // flags are left aside, so that a yank does not reorder decisions either. The
                // ceiling is the package's, not the range's: a newly published release that
                // suits the image can then only raise counts, which a re-plan relies on.
                // The look-alikes at the ceiling count once ([`ImageView::candidates`]).
                let ceiling = self.view.ceiling(*id);
                self.observed.borrow_mut().ceilings.push((*id, ceiling));
                self.view.candidates(*id, range)
            }
        };
        (stats.conflict_count(), Reverse(candidates))
    }

    fn choose_version(
        &self,
        package: &Node,
        range: &IndexSet,
    ) -> Result<Option<u32>, BudgetExhausted> {
        match package {
            Node::Root | Node::Runtime => Ok(range.contains(&0).then_some(0)),
            Node::Package(id) => {
                let count = self.view.registry.package(*id).releases.len();
                self.note_range(*id, range, count);
                self.observed.borrow_mut().packages.push(*id);
                // Newest admissible first; inadmissible releases are never offered, so an
                // exhausted range is learned in one step as "no versions".
                Ok(self.pick(*id, range))
            }
        }
    }

    fn get_dependencies(
        &self,
        package: &Node,
        version: &u32,
    ) -> Result<Dependencies<Node, IndexSet, String>, BudgetExhausted> {
        match package {
            Node::Runtime => Ok(Dependencies::Available(DependencyConstraints::default())),
            Node::Root => Ok(Dependencies::Available(
                self.roots
                    .iter()
                    .map(|(p, set)| (Node::Package(*p), set.clone()))
                    .collect(),
            )),
            Node::Package(id) => {
                let registry = self.view.registry;
                let release = &registry.package(*id).releases[*version as usize];
                // Dependency targets count as consulted even if never decided: their release
                // lists shape the requirement sets the solver reasons with.
                let mut observed = self.observed.borrow_mut();
                observed.fetched.push((*id, *version));
                observed
                    .packages
                    .extend(release.runtime_deps().map(|d| d.package));
                drop(observed);
                let mut deps: Vec<(Node, IndexSet)> = Vec::with_capacity(release.deps.len() + 1);
                if release.runtime.is_some() {
                    // Admissible releases meet the image's runtime; stating the dependency keeps
                    // the runtime in every solution and explanation.
                    deps.push((Node::Runtime, IndexSet::singleton(0u32)));
                }
                for (package, set) in self.view.dependency_sets(*id, *version) {
                    let node = Node::Package(package);
                    // Two requirements on one package must both hold.
                    match deps.iter_mut().find(|(n, _)| *n == node) {
                        Some((_, existing)) => *existing = existing.intersection(&set),
                        None => deps.push((node, set)),
                    }
                }
                // A dependency of a release on its own package is decided by the release
                // alone, since one version per package is chosen: met when the requirement
                // admits this very version, never met otherwise. pubgrub 0.4 must not see it:
                // it turns a self-dependency into an incompatibility with two terms on one
                // package, and when the requirement excludes the version, resolution can then
                // drop a required package and report a "solution" without it (fixed upstream in
                // pubgrub-rs/pubgrub#455, after 0.4.0, by tracking it as a single term).
                if let Some(pos) = deps.iter().position(|(n, _)| *n == Node::Package(*id)) {
                    let (_, own) = deps.swap_remove(pos);
                    if !own.contains(version) {
                        let mut reqs: Vec<&str> = release
                            .runtime_deps()
                            .filter(|d| d.package == *id)
                            .map(|d| registry.requirement(d.req).text.as_str())
                            .collect();
                        reqs.dedup();
                        let name = registry.name(*id);
                        return Ok(Dependencies::Unavailable(format!(
                            "{name} {} depends on {name} {}, which excludes itself",
                            release.version,
                            reqs.join(", ")
                        )));
                    }
                }
                Ok(Dependencies::Available(deps.into_iter().collect()))
            }
        }
    }

    fn should_cancel(&self) -> Result<(), BudgetExhausted> {
        // The step that would exceed the budget is refused, not taken: it is not counted, so
        // the steps a solve reports never exceed its budget.
        let steps = self.steps.get() + 1;
        if steps > self.budget {
            Err(BudgetExhausted { steps: self.budget })
        } else {
            self.steps.set(steps);
            Ok(())
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Image, Registry};
    use crate::solve::{SetCache, Solved, solve_joint};

    /// Four releases of one package, all admissible on the image.
    const KELP: &str = "packages:\n- name: kelp\n  versions:\n  - {version: 1.0.0}\n  - {version: 2.0.0}\n  - {version: 3.0.0}\n  - {version: 4.0.0}\n";

    fn setup(yaml: &str) -> (Registry, Image) {
        crate::solve::test_registry_and_image(yaml)
    }

    #[test]
    fn a_package_named_twice_in_a_joint_solve_meets_both_restrictions() {
        let (registry, image) = setup(KELP);
        let sets = SetCache::default();
        let view = ImageView::new(&registry, &image, &sets);
        let kelp = registry.id("kelp").unwrap();
        // Worked by hand: only 1.0.0 (index 0) lies in both sets, so the newest release the
        // second entry alone would allow (4.0.0) must not be installed.
        let roots = vec![(kelp, IndexSet::singleton(0u32)), (kelp, IndexSet::full())];
        let Solved::Installs { closure, .. } = solve_joint(&view, &roots, 1_000).solved else {
            panic!("expected an install");
        };
        assert_eq!(closure.iter().map(|p| p.index).collect::<Vec<_>>(), [0]);
    }

    #[test]
    fn a_pick_records_the_stretches_its_range_holds() {
        let (registry, image) = setup(KELP);
        let sets = SetCache::default();
        let view = ImageView::new(&registry, &image, &sets);
        let kelp = registry.id("kelp").unwrap();
        let covered = |range: IndexSet| {
            let mut observed = Observed::default();
            pick(&view, kelp, &range, &mut observed);
            observed.covered
        };
        // Below release 2, open at the bottom: the stretches after releases 0 and 1.
        assert_eq!(covered(IndexSet::strictly_lower_than(2u32)), [(kelp, 0, 2)]);
        // Up to and including release 2: release 2's own stretch is not held.
        assert_eq!(covered(IndexSet::lower_than(2u32)), [(kelp, 0, 2)]);
        // One release alone holds no stretch, so nothing is recorded.
        assert_eq!(covered(IndexSet::singleton(3u32)), []);
    }

    #[test]
    fn finish_merges_touching_and_nested_runs_of_one_package_only() {
        let (p, q, r) = (PackageId(0), PackageId(1), PackageId(2));
        let mut observed = Observed {
            covered: vec![
                (p, 2, 3),
                (p, 0, 2),
                (q, 5, 6),
                (q, 1, 2),
                (r, 2, 3),
                (r, 0, 6),
            ],
            ..Observed::default()
        };
        observed.finish();
        assert_eq!(
            observed.covered,
            [(p, 0, 3), (q, 1, 2), (q, 5, 6), (r, 0, 6)]
        );
    }

    #[test]
    fn a_range_that_holds_the_last_release_is_not_open_ended_but_past_it_is() {
        let (registry, image) = setup(KELP);
        let sets = SetCache::default();
        let view = ImageView::new(&registry, &image, &sets);
        let kelp = registry.id("kelp").unwrap();
        let noted = |range: IndexSet| {
            let provider = CellProvider::new(&view, kelp, IndexSet::full(), 1_000);
            provider.note_range(kelp, &range, 4);
            let observed = provider.take_observed();
            (observed.open_ended, observed.splits)
        };
        // Index 4 is one past the last release: a release published later would land there.
        assert_eq!(noted(IndexSet::lower_than(4u32)), (vec![kelp], vec![]));
        // Ending at release 2 included holds it without the stretch after it.
        assert_eq!(noted(IndexSet::lower_than(2u32)), (vec![], vec![(kelp, 2)]));
        assert_eq!(noted(IndexSet::lower_than(3u32)), (vec![], vec![(kelp, 3)]));
    }
}
