//! What depends only on the image, computed once per image and shared by all of its cells:
//! which releases of each package are admissible there, and why the others are not.

use super::sets::{IndexSet, SetCache, index_run};
use crate::model::{Image, PackageId, PerPackage, Registry, ReqId, Requirement};
use semver::{BuildMetadata, Comparator, Op, Prerelease, Version, VersionReq};
use serde::Serialize;
use std::sync::OnceLock;

/// Whether one release can be chosen on an image.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Admission {
    Admissible,
    Yanked,
    /// Its runtime requirement admits only runtimes newer than the image's.
    NeedsNewerRuntime,
    /// Its runtime requirement admits only runtimes older than the image's.
    NeedsOlderRuntime,
    /// Neither a source build nor a prebuilt build for the image's platform.
    NoBuild,
}

/// How a chosen release gets onto the image.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, serde::Deserialize,
)]
#[serde(rename_all = "lowercase")]
pub enum BuildKind {
    Prebuilt,
    Source,
}

impl BuildKind {
    /// The name outputs give it, as serialized.
    pub fn as_str(self) -> &'static str {
        match self {
            BuildKind::Prebuilt => "prebuilt",
            BuildKind::Source => "source",
        }
    }
}

/// Per-image solver context: the registry, the image, and lazily computed admissibility.
pub struct ImageView<'r> {
    pub registry: &'r Registry,
    pub image: &'r Image,
    pub sets: &'r SetCache,
    platform: Option<crate::model::PlatformId>,
    runtime_verdicts: Vec<OnceLock<Admission>>,
    packages: PerPackage<PackageFit>,
}

/// What the image makes of one package's releases.
struct PackageFit {
    admissions: Box<[Admission]>,
    ceiling: u32,
    /// Where the run of look-alike releases ([`Release::same_shape`]) that ends at the
    /// newest suiting release starts (equal to the ceiling when none suits).
    ///
    /// [`Release::same_shape`]: crate::model::Release::same_shape
    top_run: u32,
}

impl<'r> ImageView<'r> {
    pub fn new(registry: &'r Registry, image: &'r Image, sets: &'r SetCache) -> Self {
        let platform = registry
            .platforms
            .iter()
            .position(|p| *p == image.platform)
            .map(|i| crate::model::PlatformId(i as u16));
        ImageView {
            registry,
            image,
            sets,
            platform,
            runtime_verdicts: (0..registry.requirements.len())
                .map(|_| OnceLock::new())
                .collect(),
            packages: PerPackage::new(registry.packages.len()),
        }
    }

    fn runtime_verdict(&self, req: ReqId) -> Admission {
        *self.runtime_verdicts[req.0 as usize]
            .get_or_init(|| runtime_verdict(self.registry.requirement(req), &self.image.runtime))
    }

    fn package_fit(&self, package: PackageId) -> &PackageFit {
        self.packages.get_or_init(package, || {
            let releases = &self.registry.package(package).releases;
            let fits: Vec<Admission> = releases.iter().map(|r| self.fit(r)).collect();
            let ceiling = fits
                .iter()
                .rposition(|a| *a == Admission::Admissible)
                .map_or(0, |newest| newest as u32 + 1);
            let admissions = releases
                .iter()
                .zip(fits)
                .map(|(r, fit)| if r.yanked { Admission::Yanked } else { fit })
                .collect();
            let mut top_run = ceiling.saturating_sub(1);
            while top_run > 0
                && releases[top_run as usize - 1].same_shape(&releases[top_run as usize])
            {
                top_run -= 1;
            }
            PackageFit {
                admissions,
                ceiling,
                top_run,
            }
        })
    }

    /// Admission of every release of `package`, in release order.
    pub fn admissions(&self, package: PackageId) -> &[Admission] {
        &self.package_fit(package).admissions
    }

    /// How many releases of `package` lie up to and including the newest one that suits the
    /// image's runtime and platform, yanked or not (0 when none does). Releases past it can
    /// never be picked here: typically they need a newer runtime.
    pub fn ceiling(&self, package: PackageId) -> u32 {
        self.package_fit(package).ceiling
    }

    /// How many candidates `range` offers for ordering decisions: its releases below the
    /// [ceiling](ImageView::ceiling), with the run of look-alike releases that ends at the
    /// newest suiting one ([`Release::same_shape`]) counted once. A patch that changes nothing
    /// the solver reads then leaves every count as it was, which lets a re-plan keep a cell
    /// whose solve would only see it stand in for the release before it (see
    /// `plan::replan`). Older look-alikes still count one by one: merging them too changed
    /// the order of decisions enough to cost 6-7% more solver steps on the bench registry.
    ///
    /// [`Release::same_shape`]: crate::model::Release::same_shape
    pub fn candidates(&self, package: PackageId, range: &IndexSet) -> u32 {
        let fit = self.package_fit(package);
        let (mut all, mut top) = (0u32, 0u32);
        for run in range.iter() {
            let run = index_run(run, fit.ceiling as usize);
            all += run.len() as u32;
            top += run.end.saturating_sub(run.start.max(fit.top_run));
        }
        all - top.saturating_sub(1)
    }

    /// Whether release `index` of `package` suits the image's runtime and platform, yanked
    /// or not.
    pub fn fits(&self, package: PackageId, index: u32) -> bool {
        self.fit(&self.registry.package(package).releases[index as usize]) == Admission::Admissible
    }

    /// A release's admission leaving its yank flag aside.
    fn fit(&self, r: &crate::model::Release) -> Admission {
        fit_with(
            r,
            |req| self.runtime_verdict(req),
            |p| self.prebuilt_here(p),
        )
    }

    /// The requirement sets the solver is given for the runtime dependencies of release
    /// `index` of `package`, one per dependency, in the release's order.
    pub fn dependency_sets(
        &self,
        package: PackageId,
        index: u32,
    ) -> impl Iterator<Item = (PackageId, IndexSet)> + '_ {
        self.dependency_sets_on(package, index, |_| true)
    }

    /// [`ImageView::dependency_sets`] on the dependency targets `wanted` accepts only, so
    /// that no set is built for the others.
    pub fn dependency_sets_on<'a>(
        &'a self,
        package: PackageId,
        index: u32,
        wanted: impl Fn(PackageId) -> bool + 'a,
    ) -> impl Iterator<Item = (PackageId, IndexSet)> + 'a {
        let registry = self.registry;
        registry.package(package).releases[index as usize]
            .runtime_deps()
            .filter(move |d| wanted(d.package))
            .map(move |d| (d.package, self.sets.get(registry, d.package, d.req)))
    }

    fn prebuilt_here(&self, prebuilt: &[crate::model::PlatformId]) -> bool {
        self.platform.is_some_and(|p| prebuilt.contains(&p))
    }

    /// How release `index` of `package` would be installed here.
    pub fn build_kind(&self, package: PackageId, index: usize) -> BuildKind {
        let r = &self.registry.package(package).releases[index];
        if self.prebuilt_here(&r.build.prebuilt) {
            BuildKind::Prebuilt
        } else {
            BuildKind::Source
        }
    }
}

/// A release's admission leaving its yank flag aside, given how to judge a runtime
/// requirement and a list of prebuilt platforms: the solver's view caches both, a one-off
/// question ([`release_fit`]) does not.
fn fit_with(
    r: &crate::model::Release,
    runtime: impl Fn(ReqId) -> Admission,
    prebuilt_here: impl Fn(&[crate::model::PlatformId]) -> bool,
) -> Admission {
    if let Some(req) = r.runtime {
        let v = runtime(req);
        if v != Admission::Admissible {
            return v;
        }
    }
    if r.build.source || prebuilt_here(&r.build.prebuilt) {
        Admission::Admissible
    } else {
        Admission::NoBuild
    }
}

/// Whether `release` suits `image`'s runtime and platform, yank flag aside, judged as the
/// solver judges it but without building an [`ImageView`] (whose tables are sized by the
/// whole registry) for one release.
pub fn release_fit(
    registry: &Registry,
    image: &Image,
    release: &crate::model::Release,
) -> Admission {
    let platform = registry
        .platforms
        .iter()
        .position(|p| *p == image.platform)
        .map(|i| crate::model::PlatformId(i as u16));
    fit_with(
        release,
        |req| runtime_verdict(registry.requirement(req), &image.runtime),
        |prebuilt| platform.is_some_and(|p| prebuilt.contains(&p)),
    )
}

/// Whether `runtime` meets `req`, and if not, in which direction it misses.
///
/// An alternative (the part between `||`) admits a release runtime exactly when
/// `semver::VersionReq::matches` says so. A pre-release runtime (`3.2.0-rc.1`) stands for the
/// release it previews: it is compared as `3.2.0` against every alternative except those that
/// name a pre-release of that same major.minor.patch (`>=3.2.0-rc.2`), which get it whole, by
/// the semver crate's own rule. So a release candidate image predicts what the release will
/// install, which is what an engineer testing a candidate wants to know; toolchains commonly
/// judge a pre-release of themselves so when checking a package's declared minimum (common
/// practice, no source).
///
/// A runtime that no alternative admits misses "low" (the image needs a newer runtime) when an
/// alternative that admits some runtime puts its lower bound above this one, and "high"
/// otherwise: every such alternative lies wholly below it. Bounds follow the semver crate's
/// documented meaning of partial versions (`>3.1` is `>=3.2.0`, `<=3.1` is `<3.2.0`, `~3.1` is
/// `>=3.1.0, <3.2.0`, ...). A requirement no runtime meets has no true direction; it is
/// reported "low" when some lower bound lies above the runtime.
///
/// ```
/// use basefit::model::Requirement;
/// use basefit::solve::image::{runtime_verdict, Admission};
/// use semver::Version;
/// let v = Version::parse("3.1.5").unwrap();
/// let verdict = |r: &str| runtime_verdict(&Requirement::parse(r).unwrap(), &v);
/// assert_eq!(verdict(">=3.2"), Admission::NeedsNewerRuntime);
/// assert_eq!(verdict(">3.1"), Admission::NeedsNewerRuntime); // `>3.1` is `>=3.2.0`
/// assert_eq!(verdict(">=2.4, <3.1"), Admission::NeedsOlderRuntime);
/// assert_eq!(verdict("^3"), Admission::Admissible);
/// // A release candidate counts as the release it previews...
/// let rc = Version::parse("3.2.0-rc.1").unwrap();
/// let verdict = |r: &str| runtime_verdict(&Requirement::parse(r).unwrap(), &rc);
/// assert_eq!(verdict(">=3.0"), Admission::Admissible);
/// assert_eq!(verdict(">=3.2"), Admission::Admissible);
/// assert_eq!(verdict("<3.2"), Admission::NeedsOlderRuntime);
/// // ...except where a requirement names a pre-release of that release.
/// assert_eq!(verdict(">=3.2.0-rc.2"), Admission::NeedsNewerRuntime);
/// assert_eq!(verdict(">=3.2.0-beta.1, <3.2.0"), Admission::Admissible);
/// ```
pub fn runtime_verdict(req: &Requirement, runtime: &Version) -> Admission {
    let whole = Version {
        build: BuildMetadata::EMPTY,
        ..runtime.clone()
    };
    let release = Version::new(runtime.major, runtime.minor, runtime.patch);
    let seen = |alt: &VersionReq| seen_by(alt, &whole, &release);
    if req.alternatives.iter().any(|alt| alt.matches(seen(alt))) {
        return Admission::Admissible;
    }
    let above = |alt: &&VersionReq| {
        let v = seen(alt);
        alt.comparators
            .iter()
            .any(|c| lower_bound(c).is_some_and(|lo| lo.above(v)))
    };
    let mut satisfiable = req
        .alternatives
        .iter()
        .filter(|a| satisfiable(a))
        .peekable();
    let newer = if satisfiable.peek().is_some() {
        satisfiable.any(|a| above(&a))
    } else {
        req.alternatives.iter().any(|a| above(&a))
    };
    if newer {
        Admission::NeedsNewerRuntime
    } else {
        Admission::NeedsOlderRuntime
    }
}

/// A runtime as alternative `alt` sees it: `whole` where `alt` names a pre-release of its
/// major.minor.patch, else `release`, the release it previews.
fn seen_by<'v>(alt: &VersionReq, whole: &'v Version, release: &'v Version) -> &'v Version {
    if names_prerelease_of(alt, whole) {
        whole
    } else {
        release
    }
}

/// Whether a comparator of `alt` names a pre-release of `v`'s major.minor.patch: the semver
/// crate's condition for letting a pre-release `v` match at all.
fn names_prerelease_of(alt: &VersionReq, v: &Version) -> bool {
    !v.pre.is_empty()
        && alt.comparators.iter().any(|c| {
            !c.pre.is_empty()
                && c.major == v.major
                && c.minor == Some(v.minor)
                && c.patch == Some(v.patch)
        })
}

/// The lowest version a comparator admits, by precedence.
#[derive(Debug, Clone, PartialEq, Eq)]
enum Lower {
    /// This version and everything above it.
    From(Version),
    /// Everything above this version.
    After(Version),
    /// Nothing: the bound lies past the largest version there is (`>18446744073709551615`).
    Beyond,
}

impl Lower {
    /// Whether `v` lies below the bound.
    fn above(&self, v: &Version) -> bool {
        match self {
            Lower::From(lo) => v < lo,
            Lower::After(lo) => v <= lo,
            Lower::Beyond => true,
        }
    }

    /// The least version past the bound (`None` for [`Lower::Beyond`]).
    fn least(&self) -> Option<Version> {
        match self {
            Lower::From(lo) => Some(lo.clone()),
            Lower::After(lo) if lo.pre.is_empty() => {
                let (major, minor, patch) = (lo.major, lo.minor, lo.patch);
                patch
                    .checked_add(1)
                    .map(|p| Version::new(major, minor, p))
                    .or_else(|| minor.checked_add(1).map(|m| Version::new(major, m, 0)))
                    .or_else(|| major.checked_add(1).map(|m| Version::new(m, 0, 0)))
            }
            // The successor of `I.J.K-pre` by precedence: one more, lowest, identifier.
            Lower::After(lo) => Prerelease::new(&format!("{}.0", lo.pre))
                .ok()
                .map(|pre| Version { pre, ..lo.clone() }),
            Lower::Beyond => None,
        }
    }

    /// The tighter of two bounds.
    fn max(self, other: Lower) -> Lower {
        fn key(l: &Lower) -> (bool, Option<&Version>, bool) {
            match l {
                Lower::From(v) => (false, Some(v), false),
                Lower::After(v) => (false, Some(v), true),
                Lower::Beyond => (true, None, false),
            }
        }
        if key(&other) > key(&self) {
            other
        } else {
            self
        }
    }
}

/// The lower bound of `c` (`None` for `<` and `<=`, which have none), by the semver crate's
/// documented meaning of partial versions: `>I.J` is `>=I.(J+1).0`, `>I` is `>=(I+1).0.0`,
/// and `=`, `~`, `^`, `>=` and wildcards start at the version with missing parts set to 0.
fn lower_bound(c: &Comparator) -> Option<Lower> {
    let full = |minor: u64, patch: u64| Version {
        major: c.major,
        minor,
        patch,
        pre: c.pre.clone(),
        build: BuildMetadata::EMPTY,
    };
    Some(match c.op {
        Op::Less | Op::LessEq => return None,
        Op::Greater => match (c.minor, c.patch) {
            (Some(minor), Some(patch)) => Lower::After(full(minor, patch)),
            (Some(minor), None) => match minor.checked_add(1) {
                Some(next) => Lower::From(Version::new(c.major, next, 0)),
                None => next_major(c.major),
            },
            (None, _) => next_major(c.major),
        },
        _ => Lower::From(full(c.minor.unwrap_or(0), c.patch.unwrap_or(0))),
    })
}

fn next_major(major: u64) -> Lower {
    major
        .checked_add(1)
        .map_or(Lower::Beyond, |m| Lower::From(Version::new(m, 0, 0)))
}

/// Whether some runtime version meets `req`. A release whose requirement none meets fails on
/// every image, each verdict naming a runtime direction no image can follow, so the registry
/// loaders report it (see [`crate::load::diag::ProblemKind::UnsatisfiableRuntime`]).
///
/// ```
/// use basefit::model::Requirement;
/// use basefit::solve::image::admits_some_runtime;
/// let admits = |r: &str| admits_some_runtime(&Requirement::parse(r).unwrap());
/// assert!(admits(">=3.1, <4"));
/// assert!(admits("<0.0.0 || >=2"));
/// assert!(!admits("<0.0.0"));
/// assert!(!admits(">=5, <4"));
/// ```
pub fn admits_some_runtime(req: &Requirement) -> bool {
    req.alternatives.iter().any(satisfiable)
}

/// Whether some runtime meets `alt`: the least version its lower bounds allow does, since
/// what an alternative admits is one stretch of versions.
fn satisfiable(alt: &VersionReq) -> bool {
    let lowest = alt
        .comparators
        .iter()
        .filter_map(lower_bound)
        .fold(Lower::From(Version::new(0, 0, 0)), Lower::max);
    lowest.least().is_some_and(|v| {
        let release = Version::new(v.major, v.minor, v.patch);
        alt.matches(seen_by(alt, &v, &release))
    })
}
