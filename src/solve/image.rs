//! What depends only on the image, computed once per image and shared by all of its cells:
//! which releases of each package are admissible there, and why the others are not.

use super::sets::{IndexSet, SetCache, index_run};
use crate::model::{Image, PackageId, PerPackage, Registry, ReqId, Requirement};
use semver::{Op, Version};
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
        if let Some(req) = r.runtime {
            let v = self.runtime_verdict(req);
            if v != Admission::Admissible {
                return v;
            }
        }
        if r.build.source || self.prebuilt_here(&r.build.prebuilt) {
            Admission::Admissible
        } else {
            Admission::NoBuild
        }
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

/// Whether `runtime` meets `req`, and if not, in which direction it misses.
///
/// A requirement misses "low" when some alternative would admit a newer runtime: one of its
/// comparators puts a lower bound above `runtime`. Otherwise every alternative fails on an
/// upper bound and the runtime is too new.
///
/// ```
/// use basefit::model::Requirement;
/// use basefit::solve::image::{runtime_verdict, Admission};
/// use semver::Version;
/// let v = Version::parse("3.0.5").unwrap();
/// assert_eq!(runtime_verdict(&Requirement::parse(">=3.1").unwrap(), &v), Admission::NeedsNewerRuntime);
/// assert_eq!(runtime_verdict(&Requirement::parse(">=2.4, <3.0").unwrap(), &v), Admission::NeedsOlderRuntime);
/// assert_eq!(runtime_verdict(&Requirement::parse("^3").unwrap(), &v), Admission::Admissible);
/// ```
pub fn runtime_verdict(req: &Requirement, runtime: &Version) -> Admission {
    if req.matches(runtime) {
        return Admission::Admissible;
    }
    let below_some_alternative = req.alternatives.iter().any(|alt| {
        alt.comparators.iter().any(|c| {
            let lower = Version::new(c.major, c.minor.unwrap_or(0), c.patch.unwrap_or(0));
            match c.op {
                Op::Greater => *runtime <= lower,
                Op::GreaterEq | Op::Exact | Op::Tilde | Op::Caret | Op::Wildcard => {
                    *runtime < lower
                }
                _ => false,
            }
        })
    });
    if below_some_alternative {
        Admission::NeedsNewerRuntime
    } else {
        Admission::NeedsOlderRuntime
    }
}
