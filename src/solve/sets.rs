//! Version sets over a package's published releases.
//!
//! The solver's versions are indices into a package's sorted release list, and a version set is
//! a [`Ranges<u32>`] of indices. A requirement becomes a set by calling
//! `semver::VersionReq::matches` on every listed release, so the solver agrees with the
//! `semver` crate exactly by construction, pre-release rule included; union, intersection and
//! complement are interval operations on small integers.

use crate::model::{PackageId, Registry, ReqId, Requirement};
use pubgrub::Ranges;
use rustc_hash::{FxHashMap, FxHasher};
use semver::Version;
use std::hash::{Hash, Hasher};
use std::ops::Bound;
use std::sync::Mutex;

/// A set of release indices of one package.
pub type IndexSet = Ranges<u32>;

/// The set of indices `i` for which `admit(i)` holds, as maximal runs.
pub fn set_from_predicate(count: usize, mut admit: impl FnMut(usize) -> bool) -> IndexSet {
    let mut segments = Vec::new();
    let mut start: Option<u32> = None;
    for i in 0..count {
        match (admit(i), start) {
            (true, None) => start = Some(i as u32),
            (false, Some(s)) => {
                segments.push((Bound::Included(s), Bound::Excluded(i as u32)));
                start = None;
            }
            _ => {}
        }
    }
    if let Some(s) = start {
        segments.push((Bound::Included(s), Bound::Excluded(count as u32)));
    }
    segments.into_iter().collect()
}

/// The releases of `package` that `req` admits.
pub fn requirement_set(registry: &Registry, package: PackageId, req: &Requirement) -> IndexSet {
    let releases = &registry.package(package).releases;
    set_from_predicate(releases.len(), |i| req.matches(&releases[i].version))
}

/// Like [`requirement_set`], and when `prerelease` is set also admits every pre-release for
/// which the requirement's comparators hold by precedence (Semantic Versioning 2.0.0, section
/// 11: `1.1.0-rc.1` is below `1.1.0`, so `>=1.1.0` does not admit it), as if the `semver`
/// crate did not limit pre-releases to a comparator's own major.minor.patch; `<2.0.0` admits
/// no pre-release of 2.0.0 ([`holds_by_precedence`]).
pub fn root_set(
    registry: &Registry,
    package: PackageId,
    req: &Requirement,
    prerelease: bool,
) -> IndexSet {
    let releases = &registry.package(package).releases;
    set_from_predicate(releases.len(), |i| {
        let v = &releases[i].version;
        req.matches(v) || (prerelease && !v.pre.is_empty() && holds_by_precedence(req, v))
    })
}

/// Whether some alternative of `req` has every comparator hold for `version` by precedence,
/// except that an upper bound written in full, `<M.m.p`, admits no pre-release of `M.m.p`.
///
/// The `semver` crate evaluates each comparator by precedence and then admits a pre-release
/// only when some comparator names a pre-release of the same major.minor.patch. Adding
/// `>=M.m.p-0` (`-0` is the lowest pre-release of `M.m.p`, so it holds for every one of them)
/// meets that condition without changing the verdict of the others. The exception keeps the
/// spellings of one bound in agreement: `^1`, `~1` and `<2` refuse `2.0.0-rc.1` in the crate
/// (they compare major.minor.patch first), so `<2.0.0` must refuse it too; a user who caps a
/// requirement below 2.0.0 does not mean its release candidates (common practice, no source).
pub fn holds_by_precedence(req: &Requirement, version: &Version) -> bool {
    let zero = semver::Prerelease::new("0").expect("`0` is a valid pre-release");
    let floor = semver::Comparator {
        op: semver::Op::GreaterEq,
        major: version.major,
        minor: Some(version.minor),
        patch: Some(version.patch),
        pre: zero.clone(),
    };
    req.alternatives.iter().any(|alt| {
        let mut lifted = alt.clone();
        for c in &mut lifted.comparators {
            if c.op == semver::Op::Less
                && c.pre.is_empty()
                && (c.major, c.minor, c.patch)
                    == (version.major, Some(version.minor), Some(version.patch))
            {
                c.pre = zero.clone();
            }
        }
        lifted.comparators.push(floor.clone());
        lifted.matches(version)
    })
}

/// The indices one run of a set covers, clipped to a list of `count` releases.
pub(crate) fn index_run(
    (lo, hi): (&Bound<u32>, &Bound<u32>),
    count: usize,
) -> std::ops::Range<u32> {
    let lo = match lo {
        Bound::Included(v) => *v,
        Bound::Excluded(v) => v.saturating_add(1),
        Bound::Unbounded => 0,
    };
    let hi = match hi {
        Bound::Included(v) => v.saturating_add(1),
        Bound::Excluded(v) => *v,
        Bound::Unbounded => count as u32,
    }
    .min(count as u32);
    lo..hi.max(lo)
}

/// The indices in `set`, in ascending order.
pub fn indices(set: &IndexSet, count: usize) -> impl Iterator<Item = u32> + '_ {
    set.iter().flat_map(move |run| index_run(run, count))
}

/// The indices in `set`, newest (highest) first.
pub fn indices_newest_first(set: &IndexSet, count: usize) -> impl Iterator<Item = u32> {
    let runs: Vec<std::ops::Range<u32>> = set.iter().map(|run| index_run(run, count)).collect();
    runs.into_iter().rev().flat_map(|r| r.rev())
}

/// Requirement sets shared by every solve of a plan: they depend only on the registry, and
/// the same (package, requirement) pair recurs across thousands of cells.
pub struct SetCache {
    shards: Vec<Mutex<FxHashMap<(PackageId, ReqId), IndexSet>>>,
}

impl Default for SetCache {
    fn default() -> Self {
        SetCache {
            shards: (0..64).map(|_| Mutex::new(FxHashMap::default())).collect(),
        }
    }
}

impl SetCache {
    pub fn get(&self, registry: &Registry, package: PackageId, req: ReqId) -> IndexSet {
        let mut h = FxHasher::default();
        (package, req).hash(&mut h);
        let shard = &self.shards[(h.finish() as usize) % self.shards.len()];
        if let Some(s) = shard
            .lock()
            .unwrap_or_else(|e| e.into_inner())
            .get(&(package, req))
        {
            return s.clone();
        }
        // Computed outside the lock; a rare duplicate computation gives the same value.
        let set = requirement_set(registry, package, registry.requirement(req));
        shard
            .lock()
            .unwrap_or_else(|e| e.into_inner())
            .insert((package, req), set.clone());
        set
    }
}

/// A set of releases of `package` as the subject of a sentence, its name included:
/// `every version of orvik-db (0.1.0 to 0.2.0)`, `orvik-db 1.0.0 to 1.4.2, 2.0.1`, or `no
/// published version of orvik-db`. [`describe`]'s `any version` reads as a parenthesis
/// ("asks for orvik-db (any version)") but not after a name ("orvik-db any version depends
/// on ...").
pub fn describe_named(registry: &Registry, package: PackageId, set: &IndexSet) -> String {
    let name = registry.name(package);
    let releases = &registry.package(package).releases;
    let n = indices(set, releases.len()).count();
    if n == 0 {
        return format!("no published version of {name}");
    }
    if n == releases.len() && n > 1 {
        return format!("every version of {name} ({})", runs(releases, set));
    }
    format!("{name} {}", describe(registry, package, set))
}

/// Whether `set` holds every release of `package`, and it has more than one: what
/// [`describe`] calls `any version`.
pub fn is_every_version(registry: &Registry, package: PackageId, set: &IndexSet) -> bool {
    let len = registry.package(package).releases.len();
    len > 1 && indices(set, len).count() == len
}

/// Renders a set of releases of `package` for people: `any version`, `1.2.0`, or runs such
/// as `1.0.0 to 1.4.2, 2.0.1`.
pub fn describe(registry: &Registry, package: PackageId, set: &IndexSet) -> String {
    let releases = &registry.package(package).releases;
    let idx: Vec<u32> = indices(set, releases.len()).collect();
    if idx.is_empty() {
        return "no published version".into();
    }
    if idx.len() == releases.len() && releases.len() > 1 {
        return "any version".into();
    }
    runs(releases, set)
}

/// The releases of `set` as runs of consecutive releases, `1.0.0 to 1.4.2, 2.0.1`, past four
/// runs the first three and how many more.
fn runs(releases: &[crate::model::Release], set: &IndexSet) -> String {
    let idx: Vec<u32> = indices(set, releases.len()).collect();
    let mut runs: Vec<String> = Vec::new();
    let mut i = 0;
    while i < idx.len() {
        let mut j = i;
        while j + 1 < idx.len() && idx[j + 1] == idx[j] + 1 {
            j += 1;
        }
        let a = &releases[idx[i] as usize].version;
        if i == j {
            runs.push(a.to_string());
        } else {
            let b = &releases[idx[j] as usize].version;
            runs.push(format!("{a} to {b}"));
        }
        i = j + 1;
    }
    if runs.len() > 4 {
        let n = runs.len();
        runs.truncate(3);
        runs.push(format!("and {} more runs", n - 3));
    }
    runs.join(", ")
}
