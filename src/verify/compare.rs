//! Comparing a predicted matrix with recorded install results, cell by cell.

use super::logs::{self, LogCause, LogFinding};
use crate::model::{ImageSet, RecordedOutcome, RecordedResult, Registry};
use crate::native::{Catalog, Confidence};
use crate::plan::matrix::{Matrix, Outcome, RecordedCheck};
use crate::solve::{Admission, Cause};
use serde::Serialize;
use std::collections::BTreeMap;

/// How one cell's records compare with its prediction.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Verdict {
    AgreedInstall,
    /// Predicted to fail, and it failed.
    AgreedFailure,
    /// Predicted at risk, and it failed, and the log shows a native need the cell was at risk
    /// for: the risk was real.
    RiskConfirmed,
    /// Predicted at risk, and it failed, but the log does not show what the cell was at risk
    /// for (no log, a cause the log does not show, or another one, a kill among them): the
    /// failure agrees with the doubt, yet confirms no native need, so it is not read as one.
    RiskUnconfirmed,
    /// Predicted to install (cleanly), but it failed.
    SurpriseFailure,
    /// Predicted to fail, but it installed: the metadata is stricter than reality.
    SurpriseInstall,
    /// Installed, but not the version predicted.
    Drift,
    /// Installed a release the snapshot says the image cannot take (its runtime requirement,
    /// or no build for the image's platform) where another was predicted to install: the
    /// metadata or the image declaration is wrong, and with it perhaps every prediction for
    /// the image, so it counts as a surprise, not as a drift.
    SurpriseVersion,
    /// Attempts disagree, or the failure looks transient (network, timeout).
    Flaky,
    /// The prediction was undecided (solver budget), so nothing can be compared.
    Undecided,
}

impl Verdict {
    pub fn as_str(self) -> &'static str {
        match self {
            Verdict::AgreedInstall => "agreed-install",
            Verdict::AgreedFailure => "agreed-failure",
            Verdict::RiskConfirmed => "risk-confirmed",
            Verdict::RiskUnconfirmed => "risk-unconfirmed",
            Verdict::SurpriseFailure => "surprise-failure",
            Verdict::SurpriseInstall => "surprise-install",
            Verdict::Drift => "drift",
            Verdict::SurpriseVersion => "surprise-version",
            Verdict::Flaky => "flaky",
            Verdict::Undecided => "undecided",
        }
    }

    pub fn is_surprise(self) -> bool {
        matches!(
            self,
            Verdict::SurpriseFailure | Verdict::SurpriseInstall | Verdict::SurpriseVersion
        )
    }
}

/// One compared cell.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CellReview {
    pub package: String,
    pub image: String,
    pub predicted: Outcome,
    pub predicted_cause: Option<Cause>,
    pub predicted_version: Option<String>,
    pub verdict: Verdict,
    /// Recorded outcomes of every attempt, in file order.
    pub attempts: Vec<RecordedOutcome>,
    pub installed_version: Option<String>,
    /// The classified cause of the deciding failed attempt's log: the attempt whose log shows
    /// the most specific cause, a failure of the moment (network, timeout) counting least, and
    /// the last one among equals. The fields below about "that attempt" are about it.
    pub log_cause: Option<LogCause>,
    /// The log line that shows it.
    pub evidence: Option<String>,
    pub evidence_at: Option<String>,
    /// Every cause that log shows, in log order, `log_cause` among them: a log may show several
    /// (a probe's missing header before the refusal that ended the install), and a reader
    /// deciding what to fix must see them all.
    pub findings: Vec<LogFinding>,
    /// Why that attempt's log file could not be read, naming the record's line: without it the
    /// cell's cause is unknown for want of a log, not because the log showed nothing known.
    pub log_unread: Option<String>,
    /// Whether that attempt recorded a log at all (inline or a file, read or not).
    pub log_recorded: bool,
    /// Bytes at the start of that attempt's log file that were not read (only the tail is):
    /// a cause found nowhere was looked for there only.
    #[serde(skip_serializing_if = "is_zero")]
    pub log_skipped: u64,
    /// Lines of that attempt's own `log` text before its log file's (see
    /// [`log_line_place`]), for placing `findings` lines.
    #[serde(skip)]
    pub log_inline_lines: usize,
    /// That attempt's log file as the record names it, when it was read.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub log_file: Option<String>,
    /// For failures: whether the recorded cause matches the predicted cause class.
    pub cause_agrees: Option<bool>,
    pub suggestion: Option<String>,
}

fn is_zero(n: &u64) -> bool {
    *n == 0
}

/// Where line `line` of a record's `log` is, in words: the record's own `log` text comes
/// first, then the log file's part that was read, whose lines count from the first line read
/// when only its tail was (so a number is never passed off as a line of the whole file).
/// `file` is the log file's path as the record wrote it, when one was read.
///
/// ```
/// use basefit::verify::compare::log_line_place;
/// assert_eq!(log_line_place(0, 0, None, 3), "line 3");
/// assert_eq!(log_line_place(0, 0, Some("logs/a.log"), 3), "line 3 of logs/a.log");
/// assert_eq!(log_line_place(1, 0, Some("a.log"), 1), "line 1 of the record's `log` text");
/// assert_eq!(log_line_place(1, 0, Some("a.log"), 4), "line 3 of a.log");
/// assert_eq!(
///     log_line_place(0, 512, Some("a.log"), 2),
///     "line 2 of the part of a.log read, which skips its first 512 bytes"
/// );
/// ```
pub fn log_line_place(
    inline_lines: usize,
    skipped: u64,
    file: Option<&str>,
    line: usize,
) -> String {
    if inline_lines > 0 && line <= inline_lines {
        return format!("line {line} of the record's `log` text");
    }
    let line = line - inline_lines;
    let file = match file {
        Some(file) => file,
        // A log of one part: its line numbers are the log's own.
        None if inline_lines == 0 && skipped == 0 => return format!("line {line}"),
        // Beside the record's own text, a bare number would read as either part's.
        None => "the log file",
    };
    match skipped {
        0 => format!("line {line} of {file}"),
        skipped => {
            format!("line {line} of the part of {file} read, which skips its first {skipped} bytes")
        }
    }
}

/// Counts of predicted against recorded, flaky and undecided cells left aside.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct Confusion {
    /// Predicted failure, recorded failure.
    pub true_failures: usize,
    /// Predicted failure, recorded install.
    pub false_failures: usize,
    /// Predicted install (at-risk included), recorded failure.
    pub missed_failures: usize,
    /// Predicted install, recorded install.
    pub true_installs: usize,
    /// Of the predicted failures, the share that failed; `None` without predicted failures.
    pub precision: Option<f64>,
    /// Of the recorded failures, the share predicted; `None` without recorded failures.
    pub recall: Option<f64>,
    /// Cells predicted at risk, counted with the installs above, that failed: a risk the
    /// recall counts as missed, though the prediction warned of it.
    pub at_risk_failed: usize,
    /// Cells predicted at risk that installed.
    pub at_risk_installed: usize,
}

/// The review of a set of recorded results.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Review {
    pub cells: Vec<CellReview>,
    pub counts: BTreeMap<String, usize>,
    pub confusion: Confusion,
    /// Results naming a cell the matrix does not have.
    pub outside_matrix: Vec<String>,
    /// Result records left out at loading (an unreadable outcome, an unknown image, ...),
    /// each as `file:line: subject: why`. Filled in by the caller that has the ledger; any of
    /// them could have been a surprise, so a review with one is not a clean review.
    pub results_left_out: Vec<String>,
}

impl Review {
    pub fn surprises(&self) -> usize {
        self.cells
            .iter()
            .filter(|c| c.verdict.is_surprise())
            .count()
    }
}

/// The runtime a log's refusal found, when it is not the one the cell's image declares: the
/// install ran on another runtime than the plan assumed, so the image declaration is out of
/// date (or the install ran elsewhere), whatever else the refusal says.
fn undeclared_runtime<'a>(
    images: &'a ImageSet,
    cell: &crate::plan::matrix::Cell,
    log: &'a LogCause,
) -> Option<(&'a str, &'a semver::Version)> {
    let LogCause::RuntimeRefused { found, .. } = log else {
        return None;
    };
    let image = images.get(&cell.image)?;
    let read = crate::load::lenient::read_version(found);
    read.version()?
        .cmp_precedence(&image.runtime)
        .is_ne()
        .then_some((found.as_str(), &image.runtime))
}

/// Whether the prediction found library `lib` (one a log misses) missing on the cell's image:
/// one of its packages for the image's family among the cell's missing packages, or, where the
/// catalog names none for the family, a need of the library itself.
fn predicted_missing(
    images: &ImageSet,
    cell: &crate::plan::matrix::Cell,
    lib: &crate::native::Library,
) -> bool {
    let family = images.get(&cell.image).map(|i| i.family);
    match family.and_then(|f| lib.families.get(&f)) {
        Some(f) => f
            .dev
            .iter()
            .chain(&f.runtime)
            .any(|p| cell.missing_system_packages.contains(p)),
        None => cell
            .native_needs
            .iter()
            .any(|n| n.library.as_deref() == Some(lib.id.as_str())),
    }
}

/// Whether a log cause confirms the cause `cell` was predicted to fail with.
fn agrees(
    (catalog, images): (&Catalog, &ImageSet),
    cell: &crate::plan::matrix::Cell,
    log: &LogCause,
) -> Option<bool> {
    let predicted = cell.cause?;
    // A refusal of a runtime the image does not declare shows the image is not as planned.
    if undeclared_runtime(images, cell, log).is_some() {
        return Some(false);
    }
    // A library (or catalog compiler) the log misses that the prediction did not find missing
    // is another cause than the one predicted, though of the same kind: one the cell did not
    // need, or one the image declares (the declaration is then what is wrong).
    if let Some(lib) = library_of(catalog, log)
        && !predicted_missing(images, cell, lib)
    {
        return Some(false);
    }
    let expected: &[Cause] = match log {
        // On an image with a C compiler only, for a cell that needs the C++ compiler: a
        // missing C++ compiler confirms the prediction whatever cause it named (the C++
        // compiler is among the packages it lacks), and a missing C compiler or `make`, which
        // the image has, is another cause.
        LogCause::NoCompiler { tool }
            if cell.cxx_missing.is_some() && logs::is_cxx_compiler(tool) =>
        {
            return Some(true);
        }
        LogCause::NoCompiler { tool }
            if cell.cxx_missing.is_some() && logs::catalog_compiler(tool).is_none() =>
        {
            return Some(false);
        }
        LogCause::NoMake if cell.cxx_missing.is_some() => return Some(false),
        LogCause::MissingHeader { .. }
        | LogCause::MissingLibrary { .. }
        | LogCause::MissingPkgConfig { .. }
        | LogCause::MissingSharedObject { .. } => &[Cause::MissingSystemLibrary],
        // A Fortran or Objective-C compiler is a catalog entry (the plan names its package as
        // a library need), and an image lacking it may lack the C toolchain as well.
        LogCause::NoCompiler { tool } if logs::catalog_compiler(tool).is_some() => {
            &[Cause::MissingSystemLibrary, Cause::MissingToolchain]
        }
        LogCause::NoCompiler { .. } | LogCause::NoMake => &[Cause::MissingToolchain],
        // The plan does not model the pkg-config program: a build stopped for it got past
        // resolution, and may or may not have gone on to miss what was predicted.
        LogCause::NoPkgConfig
            if matches!(
                predicted,
                Cause::MissingSystemLibrary | Cause::MissingToolchain
            ) =>
        {
            return None;
        }
        LogCause::NoPkgConfig => &[],
        LogCause::RuntimeRefused { .. } => &[Cause::RuntimeTooOld, Cause::RuntimeTooNew],
        // A build that ran out of memory or was killed stopped before any predicted cause
        // could show: it confirms none of them.
        LogCause::OutOfMemory | LogCause::Killed => &[],
        // A compiler error naming no missing header may still stem from a missing library
        // (a wrong version installed, a header found elsewhere); it confirms no other cause.
        LogCause::BuildError if predicted == Cause::MissingSystemLibrary => return None,
        LogCause::BuildError => return Some(false),
        _ => return None,
    };
    Some(expected.contains(&predicted))
}

/// Whether a log confirms the risk an at-risk cell was predicted with: the system packages it
/// probably needs and the image lacks. A library or compiler the log misses confirms it when
/// its packages are among those; missing something the plan found present, or failing for a
/// runtime refusal, a kill or lack of memory, is another cause. A compiler error or a library
/// the catalog does not know settles nothing.
fn risk_agrees(
    catalog: &Catalog,
    images: &ImageSet,
    cell: &crate::plan::matrix::Cell,
    log: &LogCause,
) -> Option<bool> {
    let family = images.get(&cell.image)?.family;
    let missing = |packages: &[&str]| {
        packages
            .iter()
            .any(|p| cell.missing_system_packages.iter().any(|m| m == p))
    };
    match log {
        LogCause::MissingHeader { .. }
        | LogCause::MissingLibrary { .. }
        | LogCause::MissingPkgConfig { .. }
        | LogCause::MissingSharedObject { .. }
        | LogCause::NoCompiler { .. }
            if let Some(lib) = library_of(catalog, log) =>
        {
            Some(predicted_missing(images, cell, lib))
        }
        // A missing C++ compiler agrees with a risk for the C++ compiler package or for a whole
        // toolchain; a missing C compiler or make only with the latter, since a C-only image
        // at risk for C++ alone says it has them.
        LogCause::NoCompiler { tool } if logs::is_cxx_compiler(tool) => Some(missing(
            &[crate::native::cxx_compiler_package(family)]
                .into_iter()
                .chain(crate::native::toolchain_packages(family).iter().copied())
                .collect::<Vec<_>>(),
        )),
        LogCause::NoCompiler { .. } | LogCause::NoMake => Some(missing(
            &crate::native::compiler_packages(family)
                .into_iter()
                .filter(|p| *p != crate::native::cxx_compiler_package(family))
                .collect::<Vec<_>>(),
        )),
        LogCause::RuntimeRefused { .. } | LogCause::OutOfMemory | LogCause::Killed => Some(false),
        // A library the catalog does not know, that the cell was at risk for under the same
        // name (declared `frobnitz` or `libfrobnitz`, the log missing `-lfrobnitz`).
        LogCause::MissingLibrary { .. }
        | LogCause::MissingPkgConfig { .. }
        | LogCause::MissingSharedObject { .. }
            if uncatalogued_need_named(catalog, cell, log) =>
        {
            Some(true)
        }
        _ => None,
    }
}

/// Whether `log` misses, by link name, pkg-config module or shared object, a library the
/// cell needs that the catalog does not know (a need it was at risk for without a package to
/// name).
fn uncatalogued_need_named(
    catalog: &Catalog,
    cell: &crate::plan::matrix::Cell,
    log: &LogCause,
) -> bool {
    let named = match log {
        LogCause::MissingLibrary { link } => link.as_str(),
        LogCause::MissingPkgConfig { module } => module.as_str(),
        LogCause::MissingSharedObject { soname } => {
            match logs::link_name_of_shared_object(soname) {
                Some(stem) => stem,
                None => return false,
            }
        }
        _ => return false,
    };
    let named = named.to_lowercase();
    cell.native_needs.iter().any(|need| {
        need.library.as_deref().is_some_and(|library| {
            let library = library.to_lowercase();
            catalog.by_declared_name(&library).is_none()
                && (library == named || library.strip_prefix("lib") == Some(named.as_str()))
        })
    })
}

/// The failed attempt whose log a cell's review acts on, with that log's findings: the one
/// showing the most specific cause, the last among equals. A failure of the moment (network,
/// timeout) counts for least, below a log that shows nothing known: a retry that hit the
/// network must not hide an earlier attempt's missing header, nor make a failure of unknown
/// cause look transient.
fn deciding_attempt<'r>(
    records: &[&'r RecordedResult],
) -> (Option<&'r RecordedResult>, Vec<LogFinding>) {
    let mut best: Option<((u8, u8), &'r RecordedResult, Vec<LogFinding>)> = None;
    for r in records
        .iter()
        .filter(|r| r.outcome == RecordedOutcome::Failed)
    {
        let findings = r.log.as_deref().map(logs::classify).unwrap_or_default();
        let key = match logs::primary(&findings) {
            Some(f) if f.cause.likely_flaky() => (2, f.cause.rank()),
            Some(f) => (0, f.cause.rank()),
            None => (1, 0),
        };
        if best.as_ref().is_none_or(|(k, ..)| key <= *k) {
            best = Some((key, r, findings));
        }
    }
    best.map_or((None, Vec::new()), |(_, r, f)| (Some(r), f))
}

/// The catalog library a log cause names, if any.
pub fn library_of<'c>(
    catalog: &'c Catalog,
    cause: &LogCause,
) -> Option<&'c crate::native::Library> {
    match cause {
        LogCause::MissingHeader { header } => catalog.by_header(header),
        LogCause::MissingLibrary { link } => catalog.by_link(link),
        LogCause::MissingPkgConfig { module } => catalog.by_pkg_config(module),
        LogCause::MissingSharedObject { soname } => {
            let stem = logs::link_name_of_shared_object(soname)?;
            catalog
                .by_link(stem)
                .or_else(|| catalog.by_link(logs::unversioned_stem(stem)?))
        }
        LogCause::NoCompiler { tool } => {
            catalog.by_declared_name(logs::catalog_compiler(tool)?.library)
        }
        _ => None,
    }
}

/// The system packages the prediction found the cell lacking, other than the `named` ones the
/// advice already names, as a clause for advice about a missing program: the build stopped
/// there, and with only that added the next install fails for the rest.
fn also_missing(cell: &crate::plan::matrix::Cell, named: &[&str]) -> String {
    let rest: Vec<&str> = cell
        .missing_system_packages
        .iter()
        .map(String::as_str)
        .filter(|p| !named.contains(p))
        .collect();
    match rest.is_empty() {
        true => String::new(),
        false => format!(
            "; the plan finds {} missing too, which the build had not reached",
            rest.join(" ")
        ),
    }
}

/// A concrete next step for a failed cell.
fn suggest(
    registry: &Registry,
    images: &ImageSet,
    catalog: &Catalog,
    cell: &crate::plan::matrix::Cell,
    cause: &LogCause,
    seen_need: Option<&crate::plan::matrix::NeedRow>,
) -> Option<String> {
    let (package, image_id) = (cell.package.as_str(), cell.image.as_str());
    let image = images.get(image_id)?;
    // Advice naming the system package that provides what the log misses.
    let add_package = || -> Option<String> {
        let what = match cause {
            LogCause::MissingHeader { header } => format!("header {header}"),
            LogCause::MissingLibrary { link } => format!("library -l{link}"),
            LogCause::MissingPkgConfig { module } => format!("pkg-config module {module}"),
            LogCause::MissingSharedObject { soname } => format!("shared object {soname}"),
            LogCause::NoCompiler { tool } => match logs::catalog_compiler(tool) {
                Some(c) => format!("{} compiler {tool}", c.language),
                None => format!("compiler {tool}"),
            },
            _ => String::new(),
        };
        let Some(lib) = library_of(catalog, cause) else {
            return Some(format!(
                "the log misses {what}, which the catalog does not know: add it to a catalog file"
            ));
        };
        let family = lib.families.get(&image.family);
        let dev = family
            .and_then(|f| f.dev.clone())
            .unwrap_or_else(|| format!("the {} development package", lib.id));
        // A shared object missing at load time is a runtime package's file: a prebuilt build
        // needs only that, and the development package would bring it too but is not needed.
        let wanted: Vec<String> = match (cause, family) {
            (LogCause::MissingSharedObject { .. }, Some(f)) if !f.runtime.is_empty() => {
                f.runtime.clone()
            }
            _ => vec![dev],
        };
        // Whether the prediction knew of the need decides what the log teaches: nothing, that
        // a weak sign was right, or that the metadata hides the need entirely.
        let hint = match seen_need {
            Some(need) if need.confidence == Confidence::Certain => String::new(),
            Some(need) if need.library.is_none() => format!(
                "the prediction saw a {} native build but not its library ({}: {}): the log shows it needs {}, which no metadata declares (declare it under `native.libraries`); ",
                need.confidence.as_str(),
                need.via,
                need.evidence.join("; "),
                lib.id
            ),
            Some(need) => format!(
                "the log confirms the {} need of {} that the prediction saw ({}: {}), which no metadata declares: declaring it under `native.libraries` would make it certain; ",
                need.confidence.as_str(),
                lib.id,
                need.via,
                need.evidence.join("; ")
            ),
            // The solver gave up before the closure was known: what its packages declare is
            // unknown, and "nothing pointed at it" would send the reader to declare what a
            // dependency may well declare already.
            None if cell.outcome == Outcome::Undecided => format!(
                "the plan did not resolve {package} here (raise --budget), so whether its dependencies declare {} is unknown; ",
                lib.id
            ),
            None => {
                let known = registry.id(package).is_some();
                let who = if known { package } else { "the package" };
                format!(
                    "undeclared native dependency on {}: nothing in the metadata or files of {who} or its dependencies pointed at it (declare it under `native.libraries`); ",
                    lib.id
                )
            }
        };
        // Advice to add what the image already declares would send the reader in a
        // circle: then the declaration is what is wrong, or the build looks elsewhere.
        // So would advice to add a package the image has through another one it declares
        // (another build of it, which may even conflict with it).
        let had = |package: &String| {
            if image.system_packages.contains(package) {
                return Some(package.clone());
            }
            catalog
                .stand_in(image.family, &image.system_packages, package)
                .map(|other| format!("{other} (for {package})"))
        };
        let (declared, absent): (Vec<&String>, Vec<&String>) =
            wanted.iter().partition(|p| had(p).is_some());
        if absent.is_empty() {
            let declared: Vec<String> = declared.into_iter().filter_map(had).collect();
            let (who, looks) = match cause {
                LogCause::MissingSharedObject { .. } => (
                    "the loader",
                    "the loader's search path (ld.so.conf, LD_LIBRARY_PATH) reaches it",
                ),
                _ => ("the build", "the build looks where it puts its files"),
            };
            return Some(format!(
                "{hint}{image_id} declares {}, yet {who} misses {what}: check that the real image installs it (its declaration may be out of date) and that {looks}",
                declared.join(" ")
            ));
        }
        let absent: Vec<&str> = absent.into_iter().map(String::as_str).collect();
        Some(format!(
            "{hint}add {} to {image_id} (missing {what})",
            absent.join(" ")
        ))
    };
    match cause {
        LogCause::MissingHeader { .. }
        | LogCause::MissingLibrary { .. }
        | LogCause::MissingPkgConfig { .. }
        | LogCause::MissingSharedObject { .. } => add_package(),
        LogCause::NoCompiler { tool } if logs::catalog_compiler(tool).is_some() => add_package(),
        LogCause::NoCompiler { tool }
            if logs::is_cxx_compiler(tool) && image.toolchain && !image.cxx =>
        {
            Some(format!(
                "{image_id} has a C compiler only, and the build needs a C++ compiler ({tool}): add {}{}",
                crate::native::cxx_compiler_package(image.family),
                also_missing(cell, &crate::native::compiler_packages(image.family))
            ))
        }
        // As for headers above: advice to add what the image declares would go in a circle.
        LogCause::NoCompiler { .. } | LogCause::NoMake if image.toolchain => Some(format!(
            "{image_id} declares a C toolchain, yet the build found no {}: check that the real image installs {} (its declaration may be out of date) and that the build's PATH reaches it",
            match cause {
                LogCause::NoCompiler { tool } => tool.as_str(),
                _ => "make",
            },
            match image.cxx {
                true => crate::native::toolchain_packages(image.family),
                false => crate::native::c_toolchain_packages(image.family),
            }
            .join(" ")
        )),
        LogCause::NoCompiler { .. } | LogCause::NoMake => Some(format!(
            "{image_id} lacks a C toolchain: add {}{}",
            crate::native::toolchain_packages(image.family).join(" "),
            also_missing(cell, &crate::native::compiler_packages(image.family))
        )),
        LogCause::RuntimeRefused { required, .. }
            if let Some((found, declared)) = undeclared_runtime(images, cell, cause) =>
        {
            Some(format!(
                "the installer refused runtime {found} (requires {required}), but {image_id} declares runtime {declared}: the image declaration is out of date, or the install ran on another image; correct it and plan again before judging the metadata"
            ))
        }
        // Predicted so from the metadata: the log confirms it, and what to change is the
        // image's runtime, not the requirement.
        LogCause::RuntimeRefused { required, found }
            if matches!(cell.cause, Some(Cause::RuntimeTooOld | Cause::RuntimeTooNew)) =>
        {
            Some(format!(
                "the installer refused runtime {found} (requires {required}), as the metadata said: {package} needs an image with another runtime (`basefit explain {package} {image_id}` names the nearest declared one)"
            ))
        }
        // Predicted to resolve: every release the solver chose admits the image's runtime by
        // the snapshot, and the refusal found that runtime. Either the installer reads the
        // requirement otherwise than basefit does, or it saw a requirement that no chosen
        // release has in the snapshot.
        LogCause::RuntimeRefused { required, found } if cell.outcome.resolves() => {
            let admits = crate::model::Requirement::parse(required).map(|req| {
                crate::solve::image::runtime_verdict(&req, &image.runtime) == Admission::Admissible
            });
            Some(match admits {
                Ok(true) => format!(
                    "the installer refused runtime {found} for a requirement, `{required}`, that basefit reads as admitting it: the installer reads runtime requirements otherwise than basefit (pre-releases, partial versions); compare its rule with basefit's before trusting this image's predictions"
                ),
                Ok(false) => format!(
                    "the installer refused runtime {found} (requires {required}), but by the snapshot every release the prediction chose admits it: the snapshot is older than the registry the install used, or the install took other releases than predicted; refresh the snapshot and plan again"
                ),
                // Not a requirement basefit can read, so neither a stale snapshot nor another
                // reading is shown: the snapshot holds none such for the releases chosen.
                Err(_) => format!(
                    "the installer refused runtime {found} for a requirement basefit cannot read, `{required}`, while by the snapshot every release the prediction chose admits it: find which release the installer read it from, and compare that release's metadata with the snapshot's"
                ),
            })
        }
        LogCause::RuntimeRefused { required, found } => Some(format!(
            "the installer refused runtime {found} (requires {required}): the runtime requirement in the metadata may be missing or wrong"
        )),
        LogCause::NoPkgConfig => {
            let packages = crate::native::pkg_config_packages(image.family);
            Some(
                match packages.iter().find(|p| image.system_packages.contains(**p)) {
                    Some(declared) => format!(
                        "{image_id} declares {declared}, yet the build found no usable pkg-config program: check that the real image installs it (its declaration may be out of date), that the build's PATH reaches it, and, for a cross build, that the target's pkg-config is there"
                    ),
                    None => format!(
                        "the build runs the pkg-config program, which {image_id} lacks (basefit does not predict this need): add {}{}",
                        packages[0],
                        also_missing(cell, &[])
                    ),
                },
            )
        }
        LogCause::BuildError => Some(
            "the build failed with a compiler error that names no missing system package: read the log line; no change to the image is known to fix it".into(),
        ),
        LogCause::Network | LogCause::Timeout => {
            Some("likely transient: retry before acting".into())
        }
        LogCause::OutOfMemory | LogCause::Killed => {
            Some("the build ran out of memory or was killed: give the CI job more memory".into())
        }
        LogCause::Unknown => None,
    }
}

/// What the registry snapshot holds of the release an install recorded, judged on the image
/// it was recorded on. Advice about a version the install took must start here: a version the
/// snapshot lacks points at the snapshot, one it holds but refuses on the image points at that
/// refusal, and only one it holds and admits leaves the plan's other inputs to blame.
#[derive(Debug, Clone, PartialEq)]
pub enum Standing {
    /// No version recorded (for a package the snapshot has), or the image is not declared:
    /// nothing could be looked up.
    Unknown,
    /// The snapshot has no release of that version; `package_known` is false when it does not
    /// have the package at all.
    NotInSnapshot { package_known: bool },
    /// In the snapshot but refused on the image: the sentence saying why, and what is wrong;
    /// `by_image` when the image's runtime or platform refuses it, not a yank.
    Refused { why: String, by_image: bool },
    /// In the snapshot and admitted on the image (runtime, platform, not yanked).
    Admitted,
}

/// The [`Standing`] of `version` of `package` on image `image_id`.
pub fn standing(
    registry: &Registry,
    images: &ImageSet,
    package: &str,
    image_id: &str,
    version: Option<&semver::Version>,
) -> Standing {
    // A package the snapshot lacks is stale whatever version installed.
    let Some(id) = registry
        .id(package)
        .filter(|id| registry.package(*id).declared)
    else {
        return Standing::NotInSnapshot {
            package_known: false,
        };
    };
    let Some(version) = version else {
        return Standing::Unknown;
    };
    let Some(index) = registry.find_release_by_precedence(id, version) else {
        return Standing::NotInSnapshot {
            package_known: true,
        };
    };
    let Some(image) = images.get(image_id) else {
        return Standing::Unknown;
    };
    let release = &registry.package(id).releases[index];
    // Found by precedence alone: say which release of the snapshot the sentence is about.
    let version = match release.version == *version {
        true => version.to_string(),
        false => format!("{version} (the snapshot's {})", release.version),
    };
    // The runtime and platform are judged before the yank flag: an install that took a
    // release the image refuses proves that refusal wrong, which matters more than a yank.
    let fit = crate::solve::image::release_fit(registry, image, release);
    let by_image = matches!(
        fit,
        Admission::NeedsNewerRuntime | Admission::NeedsOlderRuntime | Admission::NoBuild
    );
    let why = match fit {
        Admission::NeedsNewerRuntime | Admission::NeedsOlderRuntime => format!(
            "{version} is in the snapshot but declares runtime {}, which {image_id}'s runtime {} does not meet: the requirement or the image declaration is wrong",
            release
                .runtime
                .map(|r| registry.requirement(r).to_string())
                .unwrap_or_default(),
            image.runtime
        ),
        Admission::NoBuild => format!(
            "{version} is in the snapshot but has neither a source build nor a prebuilt build for {}, the platform of {image_id}: its builds in the metadata or the image declaration are wrong",
            image.platform
        ),
        Admission::Admissible | Admission::Yanked if release.yanked => format!(
            "{version} is in the snapshot but yanked: a lock file or a pin chose it, or the registry the install used had not yanked it yet"
        ),
        Admission::Admissible | Admission::Yanked => return Standing::Admitted,
    };
    Standing::Refused { why, by_image }
}

impl Standing {
    /// The sentence for a version the snapshot lacks or refuses; `None` when it holds and
    /// admits it, or nothing could be looked up.
    fn explains(&self, package: &str, version: &str, newer: bool) -> Option<String> {
        match self {
            Standing::NotInSnapshot { package_known } => {
                let what = if *package_known { version } else { package };
                Some(if newer || !package_known {
                    format!(
                        "{what} is not in the registry snapshot, which may be older than the registry the install used: plan again from a newer snapshot before changing the metadata or the image"
                    )
                } else {
                    format!(
                        "{what} is not in the registry snapshot: the install used a registry the snapshot does not reflect (a mirror, a private index, or a release since deleted)"
                    )
                })
            }
            Standing::Refused { why, .. } => Some(why.clone()),
            Standing::Unknown | Standing::Admitted => None,
        }
    }
}

/// The next step when a cell predicted to fail installed. A version the snapshot lacks or
/// refuses on the image says what is wrong by itself; otherwise the step follows what the
/// prediction blamed: a native cause was read from the image declaration, so that declaration
/// is what is out of date; any other cause was read from the package metadata.
fn surprise_install_step(
    cell: &crate::plan::matrix::Cell,
    (registry, images, catalog): (&Registry, &ImageSet, &Catalog),
    standing: &Standing,
    installed: Option<&str>,
    predicted_installed: bool,
    budget: u64,
) -> String {
    let image = &cell.image;
    // A surprise install newer than the prediction points at the snapshot when the snapshot
    // lacks it; without a predicted version (a failure) a missing one is as likely newer.
    let newer = match (installed, cell.root_version.as_deref()) {
        (Some(i), Some(p)) => order(i, p) != Some(std::cmp::Ordering::Less),
        _ => true,
    };
    if let Some(why) = standing.explains(&cell.package, installed.unwrap_or("?"), newer) {
        return why;
    }
    // A native failure predicted for one release tells of the image through an install of
    // another only by what that release itself certainly needs: its closure may need nothing
    // native, or other packages. An install of the predicted release among the retries
    // settles it as predicted.
    let mut only: Option<(bool, Vec<String>)> = None;
    if let (Some(Cause::MissingSystemLibrary | Cause::MissingToolchain), Some(i), Some(p)) =
        (cell.cause, installed, cell.root_version.as_deref())
        && !same_precedence(i, p)
        && !predicted_installed
    {
        let known = match other_release_needs(cell, registry, images, catalog, i, budget) {
            OtherRelease::Needs {
                toolchain,
                packages,
            } if toolchain || !packages.is_empty() => {
                only = Some((toolchain, packages));
                None
            }
            OtherRelease::Needs { .. } => Some(format!("{i}'s closure certainly needs none of it")),
            OtherRelease::Unresolved => Some(format!(
                "whether {i} needs it is unknown (it does not resolve on {image} by the snapshot)"
            )),
            OtherRelease::Undecided => Some(format!(
                "whether {i} needs it is unknown (the solver ran out of budget on it; raise --budget)"
            )),
        };
        if let Some(known) = known {
            return format!(
                "the release that installed, {i}, is not the predicted {p} whose closure needs what {image} lacks; {known}, so this says nothing about the image's system packages: the installer took another release (a pin, a constraint file, or it passed over the native build)"
            );
        }
    }
    // Without a recorded version the install may have taken another release.
    let unsure = match (installed, cell.root_version.as_deref(), cell.cause) {
        (None, Some(p), Some(Cause::MissingSystemLibrary | Cause::MissingToolchain)) => format!(
            "if it installed the predicted {p} (the record gives no version; record it to be sure), "
        ),
        _ => String::new(),
    };
    if let Some((toolchain, packages)) = only {
        let i = installed.unwrap_or("?");
        let p = cell.root_version.as_deref().unwrap_or("?");
        // The toolchain's own packages are among those to add when it is missing, so none to
        // name leaves only the flag, which `other_release_needs` keeps set only for a certain
        // C++ build (a C-only one is turned into the C compiler's packages).
        let has = if packages.is_empty() {
            "a C and C++ toolchain".to_string()
        } else {
            packages.join(" ")
        };
        let step = match packages.len() {
            0 => "set toolchain: true on it".to_string(),
            n => format!(
                "add {} to its packages in the images file{}",
                crate::report::it_or_them(n),
                if toolchain {
                    " and set toolchain: true"
                } else {
                    ""
                }
            ),
        };
        return format!(
            "the release that installed, {i}, is not the predicted {p}, but it certainly needs what {image} lacks too, so the declaration of {image} is out of date: the real image has {has}; {step}"
        );
    }
    match cell.cause {
        Some(Cause::MissingSystemLibrary) => {
            let declared = images.get(image);
            let absent: Vec<&str> = cell
                .missing_system_packages
                .iter()
                .map(String::as_str)
                .filter(|p| declared.is_none_or(|i| !i.system_packages.contains(*p)))
                .collect();
            if absent.is_empty() {
                format!(
                    "{unsure}the declaration of {image} is out of date: it lacks a system package the real image has; update its packages in the images file"
                )
            } else {
                format!(
                    "{unsure}the declaration of {image} is out of date: the real image has {}; add {} to its packages in the images file",
                    absent.join(" "),
                    crate::report::it_or_them(absent.len())
                )
            }
        }
        Some(Cause::MissingToolchain) => {
            // What the predicted release's closure shows of the real image: its certain needs,
            // the libraries among them too (with the compiler alone added, the next plan
            // still predicts the failure for the library).
            let needs = cell
                .root_version
                .as_deref()
                .map(|p| other_release_needs(cell, registry, images, catalog, p, budget));
            let (whole_toolchain, packages) = match needs {
                Some(OtherRelease::Needs {
                    toolchain,
                    packages,
                }) => (toolchain, packages),
                _ => (true, Vec::new()),
            };
            let family = images.get(image).map(|i| i.family);
            let compilers = family
                .map(crate::native::compiler_packages)
                .unwrap_or_default();
            let libraries: Vec<&str> = packages
                .iter()
                .map(String::as_str)
                .filter(|p| !compilers.contains(p))
                .collect();
            let and_libraries = match libraries.is_empty() {
                true => String::new(),
                false => format!(", and add {} to its packages", libraries.join(" ")),
            };
            match images.get(image) {
                // A C-only image failed for want of C++ alone.
                Some(i) if i.toolchain && !i.cxx => {
                    let mut add = vec![crate::native::cxx_compiler_package(i.family)];
                    add.extend(libraries.iter().copied());
                    format!(
                        "{unsure}the declaration of {image} is out of date: the real image has a C++ compiler; add {} to its packages in the images file",
                        add.join(" ")
                    )
                }
                // A C compiler only, unless the closure certainly compiles C++.
                _ if !whole_toolchain && !packages.is_empty() => format!(
                    "{unsure}the declaration of {image} is out of date: the real image has {}, a C compiler among them; add {} to its packages in the images file (not toolchain: true, which says it compiles C++ too)",
                    packages.join(" "),
                    crate::report::it_or_them(packages.len())
                ),
                _ => format!(
                    "{unsure}the declaration of {image} is out of date: the real image has a C and C++ toolchain; set toolchain: true on it{and_libraries}"
                ),
            }
        }
        // A dependency the snapshot lacks was there when the install ran: the snapshot is
        // older than the registry, and no requirement is too strict.
        Some(Cause::MissingFromRegistry) if installed.is_some() => format!(
            "a dependency the plan needs is not in the registry snapshot (`basefit explain {} {image}` names it), yet the install found it: the snapshot is older than the registry the install used; plan again from a newer snapshot before changing the metadata",
            cell.package
        ),
        _ if *standing == Standing::Admitted => format!(
            "{} is in the snapshot and suits {image}, so what the plan refused lies in its dependencies or the priority entry's requirement: `basefit explain {} {image}` names the requirement that is stricter than reality",
            installed.unwrap_or("?"),
            cell.package
        ),
        // Which release installed is unknown, so neither the root's own metadata nor its
        // dependencies can be blamed from here: the explanation lists what the plan refused on.
        _ => match installed {
            None => format!(
                "the record gives no version, so which release installed is unknown (record it to tell more): `basefit explain {} {image}` names the requirements the plan refused on, one of which is stricter than reality or was read from a snapshot older than the registry the install used",
                cell.package
            ),
            Some(i) => format!(
                "{image} is not among the images given, so whether {i} suits it is unknown: the metadata is stricter than reality or the image declaration is wrong; plan with {image} declared to tell which"
            ),
        },
    }
}

/// What an install of another release than predicted shows of the image.
enum OtherRelease {
    /// It resolves there alone: what of the image's lack its closure certainly needs (the
    /// toolchain, system packages), which the install proves the real image has.
    Needs {
        toolchain: bool,
        packages: Vec<String>,
    },
    /// Its version constraints do not resolve there, by the snapshot.
    Unresolved,
    /// The solver ran out of budget on it.
    Undecided,
}

/// The release `installed` of the cell's package solved alone on the cell's image, as
/// [`OtherRelease`] says; `Unresolved` when the snapshot does not hold it.
fn other_release_needs(
    cell: &crate::plan::matrix::Cell,
    registry: &Registry,
    images: &ImageSet,
    catalog: &Catalog,
    installed: &str,
    budget: u64,
) -> OtherRelease {
    let found = || {
        let image = images.get(&cell.image)?;
        let root = registry.id(&cell.package)?;
        let version = semver::Version::parse(installed).ok()?;
        let index = registry.find_release_by_precedence(root, &version)?;
        Some((image, root, index))
    };
    let Some((image, root, index)) = found() else {
        return OtherRelease::Unresolved;
    };
    let sets = crate::solve::SetCache::default();
    let view = crate::solve::ImageView::new(registry, image, &sets);
    let solved = crate::solve::solve_with_root_set(
        &view,
        root,
        crate::solve::IndexSet::singleton(index as u32),
        budget,
    );
    let closure = match solved.solved {
        crate::solve::Solved::Installs { closure, .. } => closure,
        crate::solve::Solved::Undecided { .. } => return OtherRelease::Undecided,
        crate::solve::Solved::Fails(_) => return OtherRelease::Unresolved,
    };
    let a = crate::native::assess(registry, catalog, image, &closure);
    let mut packages: Vec<String> = a
        .missing
        .iter()
        .filter(|(_, c)| *c == Confidence::Certain)
        .map(|(p, _)| p.clone())
        .collect();
    let mut toolchain = a.toolchain_missing == Some(Confidence::Certain);
    // An install proves a C++ compiler only when the closure certainly compiles C++: judged
    // as on the image with a C compiler only. Otherwise it proves the C compiler, whose
    // packages say so without the flag (which means C++ too).
    if toolchain {
        let c_only = crate::model::Image {
            toolchain: true,
            cxx: false,
            ..image.clone()
        };
        let cxx = crate::native::assess(registry, catalog, &c_only, &closure).cxx_missing
            == Some(Confidence::Certain);
        if !cxx {
            let whole = crate::native::toolchain_packages(image.family);
            packages.retain(|p| !whole.contains(&p.as_str()));
            for p in crate::native::c_toolchain_packages(image.family) {
                if !image.system_packages.contains(*p) && !packages.iter().any(|q| q == p) {
                    packages.push(p.to_string());
                }
            }
            packages.sort();
            toolchain = false;
        }
    }
    OtherRelease::Needs {
        toolchain,
        packages,
    }
}

/// Semantic Versioning precedence of two version texts; `None` when either is no version or
/// they differ only in build metadata.
fn order(a: &str, b: &str) -> Option<std::cmp::Ordering> {
    precedence(a, b).filter(|o| o.is_ne())
}

/// Two versions that differ at most in build metadata.
fn same_precedence(a: &str, b: &str) -> bool {
    precedence(a, b).is_some_and(|o| o.is_eq())
}

fn precedence(a: &str, b: &str) -> Option<std::cmp::Ordering> {
    semver::Version::parse(a)
        .ok()
        .zip(semver::Version::parse(b).ok())
        .map(|(a, b)| a.cmp_precedence(&b))
}

/// The next step when an install took another version than predicted. A version the snapshot
/// lacks or refuses on the image says what is wrong by itself. One it holds and admits goes by
/// which way it went: an older one means something held the install back (a lock file, a pin,
/// or a mirror behind the snapshot); a newer one was ruled out by something else the plan read.
fn drift_step(
    installed: &str,
    predicted: &str,
    standing: &Standing,
    package: &str,
    image: &str,
) -> String {
    let order = order(installed, predicted);
    let newer = order == Some(std::cmp::Ordering::Greater);
    let why = match standing.explains(package, installed, newer) {
        Some(why) => why,
        None => match order {
            Some(std::cmp::Ordering::Greater) if *standing == Standing::Admitted => format!(
                "{installed} is in the snapshot and suits {image}, yet the plan did not pick it: its dependencies, the pre-release rule or the priority entry's requirement ruled it out (`basefit explain {package} {image}`), so the install resolved them differently"
            ),
            Some(std::cmp::Ordering::Greater) => {
                "the registry snapshot may be older than the registry the install used".into()
            }
            Some(std::cmp::Ordering::Less) => {
                "something held the install back: a lock file, a pin, or a registry mirror behind the snapshot".into()
            }
            None if *standing == Standing::Admitted && same_precedence(installed, predicted) => format!(
                "{installed} and {predicted} differ only in build metadata, which does not count in precedence (Semantic Versioning 2.0.0, section 10): the same release, built otherwise; check which build the registry served"
            ),
            _ => "the snapshot and the install disagree on the version".into(),
        },
    };
    format!("installed {installed} where {predicted} was predicted: {why}")
}

/// Compares `matrix` with recorded `results`. Every result is either compared or listed in
/// `outside_matrix`. Solves the review makes itself (a release that installed where another
/// was predicted) get the default budget; [`compare_within`] takes the plan's.
pub fn compare(
    matrix: &Matrix,
    results: &[RecordedResult],
    registry: &Registry,
    images: &ImageSet,
    catalog: &Catalog,
) -> Review {
    compare_within(
        matrix,
        results,
        (registry, images, catalog),
        crate::solve::DEFAULT_BUDGET,
    )
}

/// [`compare`] with `budget` solver steps for each solve the review makes itself.
pub fn compare_within(
    matrix: &Matrix,
    results: &[RecordedResult],
    (registry, images, catalog): (&Registry, &ImageSet, &Catalog),
    budget: u64,
) -> Review {
    let mut by_cell: BTreeMap<(usize, usize), Vec<&RecordedResult>> = BTreeMap::new();
    let mut outside = Vec::new();
    let rows: BTreeMap<&str, usize> = matrix
        .packages
        .iter()
        .enumerate()
        .map(|(i, p)| (p.name.as_str(), i))
        .collect();
    let cols: BTreeMap<&str, usize> = matrix
        .images
        .iter()
        .enumerate()
        .map(|(i, c)| (c.id.as_str(), i))
        .collect();
    for r in results {
        match (rows.get(r.package.as_str()), cols.get(r.image.as_str())) {
            (Some(&row), Some(&col)) if row * matrix.images.len() + col < matrix.cells.len() => {
                by_cell.entry((row, col)).or_default().push(r)
            }
            _ => outside.push(format!(
                "{}: {} on {} is not in the matrix",
                r.origin, r.package, r.image
            )),
        }
    }
    let mut cells = Vec::new();
    for ((row, col), records) in by_cell {
        let cell = &matrix.cells[row * matrix.images.len() + col];
        let attempts: Vec<RecordedOutcome> = records.iter().map(|r| r.outcome).collect();
        let (deciding, findings) = deciding_attempt(&records);
        let primary = logs::primary(&findings).cloned();
        // The version an install took; when retries took several, the last one other than
        // the prediction, so a drift shows whatever the order of the attempts.
        let taken: Vec<&semver::Version> = records
            .iter()
            .filter(|r| r.outcome == RecordedOutcome::Installed)
            .filter_map(|r| r.version.as_ref())
            .collect();
        // Another precedence first (another release), then only other build metadata.
        let predicted = cell
            .root_version
            .as_deref()
            .and_then(|v| semver::Version::parse(v).ok());
        let other_release = |v: &&&semver::Version| {
            predicted
                .as_ref()
                .is_none_or(|p| v.cmp_precedence(p).is_ne())
        };
        let installed = taken
            .iter()
            .rev()
            .find(other_release)
            .or_else(|| {
                taken
                    .iter()
                    .rev()
                    .find(|v| Some(v.to_string()) != cell.root_version)
            })
            .or(taken.last())
            .copied();
        let installed_version = installed.map(|v| v.to_string());
        let predicted_installed = predicted
            .as_ref()
            .is_some_and(|p| taken.iter().any(|v| v.cmp_precedence(p).is_eq()));
        let any_installed = attempts.contains(&RecordedOutcome::Installed);
        let any_failed = attempts.contains(&RecordedOutcome::Failed);
        // The strongest need the prediction saw for the library the log misses.
        let seen_need = primary
            .as_ref()
            .and_then(|p| library_of(catalog, &p.cause))
            .and_then(|lib| {
                let of = |library: Option<&str>| {
                    cell.native_needs
                        .iter()
                        .filter(move |n| n.library.as_deref() == library)
                        .max_by_key(|n| n.confidence)
                };
                // Else a native build seen without its library.
                of(Some(lib.id.as_str())).or_else(|| of(None))
            });
        // One recorded install disproves a predicted failure, however many attempts failed
        // around it: retries that disagree must not hide the surprise.
        // An install of another release than predicted (not a build-metadata twin of it,
        // which is the same release) that the image's runtime or platform refuses proves the
        // metadata or the image declaration wrong, whatever other attempts did.
        // What the snapshot holds of the installed version: read once, for the verdict and
        // for the advice.
        let snapshot = standing(registry, images, &cell.package, &cell.image, installed);
        let refused_install = cell.outcome != Outcome::Fails
            && installed.is_some_and(|v| {
                predicted
                    .as_ref()
                    .is_none_or(|p| v.cmp_precedence(p).is_ne())
            })
            && matches!(snapshot, Standing::Refused { by_image: true, .. });
        let verdict = if cell.outcome == Outcome::Undecided {
            Verdict::Undecided
        } else if any_installed && cell.outcome == Outcome::Fails {
            Verdict::SurpriseInstall
        } else if refused_install {
            Verdict::SurpriseVersion
        } else if any_failed
            // Whatever was predicted: a failure of the moment confirms no prediction either.
            && (any_installed || primary.as_ref().is_some_and(|p| p.cause.likely_flaky()))
        {
            Verdict::Flaky
        } else if any_failed {
            // An at-risk cell resolves: only a native need was in doubt. A refusal of the
            // runtime contradicts the resolution itself, as it would for a cell that installs.
            let refused = matches!(
                primary.as_ref().map(|p| &p.cause),
                Some(LogCause::RuntimeRefused { .. })
            );
            match cell.outcome {
                Outcome::Fails => Verdict::AgreedFailure,
                Outcome::AtRisk if !refused => {
                    let shown = primary
                        .as_ref()
                        .and_then(|p| risk_agrees(catalog, images, cell, &p.cause));
                    match shown {
                        Some(true) => Verdict::RiskConfirmed,
                        _ => Verdict::RiskUnconfirmed,
                    }
                }
                _ => Verdict::SurpriseFailure,
            }
        } else if installed_version.is_some()
            && installed_version != cell.root_version
            // Installers often print a version without its build metadata: the predicted
            // release written so is that release (Semantic Versioning 2.0.0, section 10).
            && !installed.is_some_and(|v| {
                v.build.is_empty()
                    && predicted
                        .as_ref()
                        .is_some_and(|p| v.cmp_precedence(p).is_eq())
            })
        {
            Verdict::Drift
        } else {
            Verdict::AgreedInstall
        };
        let log_cause = primary.as_ref().map(|p| p.cause.clone());
        let log_recorded = deciding.is_some_and(|r| r.log.is_some() || r.log_unread.is_some());
        let suggestion = match verdict {
            Verdict::SurpriseInstall => {
                let failed = attempts
                    .iter()
                    .filter(|a| **a == RecordedOutcome::Failed)
                    .count();
                let retries = match failed {
                    0 => String::new(),
                    1 => " (after 1 failed attempt: the retries disagree)".to_string(),
                    n => format!(" (after {n} failed attempts: the retries disagree)"),
                };
                Some(format!(
                    "predicted {} ({}), but it installed{retries}: {}",
                    cell.outcome.as_str(),
                    cell.cause.map(|c| c.as_str()).unwrap_or("no cause"),
                    surprise_install_step(
                        cell,
                        (registry, images, catalog),
                        &snapshot,
                        installed_version.as_deref(),
                        predicted_installed,
                        budget
                    )
                ))
            }
            Verdict::Drift | Verdict::SurpriseVersion => Some(drift_step(
                installed_version.as_deref().unwrap_or("?"),
                cell.root_version.as_deref().unwrap_or("?"),
                &snapshot,
                &cell.package,
                &cell.image,
            )),
            // Nothing in the log to act on: say why the risk stays open, and what settles it.
            Verdict::RiskUnconfirmed if log_cause.is_none() => {
                let at_risk_for = match cell.missing_system_packages.as_slice() {
                    [] => "its native build".to_string(),
                    packages => packages.join(" "),
                };
                // A log file that could not be read leaves the cause unknown for want of it,
                // not unrecognised (README: the review "never" says so of such a log).
                let unread = deciding.filter(|r| r.log_unread.is_some());
                Some(match (log_recorded, unread) {
                    (false, _) => format!(
                        "no log was recorded, so nothing shows whether it failed for what it was at risk for ({at_risk_for}): record the install's log"
                    ),
                    (true, Some(r)) => format!(
                        "the log file could not be read{}, so nothing shows whether it failed for what it was at risk for ({at_risk_for}): make the record's `log_file` readable and review again",
                        match r.log {
                            Some(_) => " and the record's `log` text shows no cause basefit reads",
                            None => "",
                        }
                    ),
                    (true, None) => format!(
                        "the log shows no cause basefit reads, so nothing shows whether it failed for what it was at risk for ({at_risk_for}): read the log for the failing step"
                    ),
                })
            }
            _ => log_cause
                .as_ref()
                .and_then(|c| suggest(registry, images, catalog, cell, c, seen_need)),
        };
        cells.push(CellReview {
            package: cell.package.clone(),
            image: cell.image.clone(),
            predicted: cell.outcome,
            predicted_cause: cell.cause,
            predicted_version: cell.root_version.clone(),
            verdict,
            attempts,
            installed_version,
            cause_agrees: match (verdict, &log_cause) {
                (Verdict::AgreedFailure, Some(c)) => agrees((catalog, images), cell, c),
                (Verdict::RiskConfirmed | Verdict::RiskUnconfirmed, Some(c)) => {
                    risk_agrees(catalog, images, cell, c)
                }
                _ => None,
            },
            evidence: primary.as_ref().map(|p| p.evidence.clone()),
            evidence_at: primary.as_ref().zip(deciding).map(|(p, r)| {
                format!(
                    "{} {}",
                    r.origin,
                    log_line_place(
                        r.log_inline_lines,
                        r.log_skipped,
                        r.log_file.as_deref(),
                        p.line
                    )
                )
            }),
            log_skipped: deciding.map_or(0, |r| r.log_skipped),
            log_inline_lines: deciding.map_or(0, |r| r.log_inline_lines),
            log_file: deciding.and_then(|r| r.log_file.clone()),
            log_cause,
            findings,
            log_unread: deciding.and_then(|r| r.log_unread.clone()),
            log_recorded,
            suggestion,
        });
    }
    let mut counts: BTreeMap<String, usize> = BTreeMap::new();
    let mut confusion = Confusion::default();
    for c in &cells {
        *counts.entry(c.verdict.as_str().to_string()).or_default() += 1;
        // Attempts that disagree are left aside as flaky, except where an install disproves a
        // predicted failure: that cell counts as installed.
        let failed = !c.attempts.contains(&RecordedOutcome::Installed);
        if !matches!(c.verdict, Verdict::Flaky | Verdict::Undecided)
            && c.predicted == Outcome::AtRisk
        {
            match failed {
                true => confusion.at_risk_failed += 1,
                false => confusion.at_risk_installed += 1,
            }
        }
        match (c.verdict, c.predicted == Outcome::Fails, failed) {
            (Verdict::Flaky | Verdict::Undecided, _, _) => {}
            (_, true, true) => confusion.true_failures += 1,
            (_, true, false) => confusion.false_failures += 1,
            (_, false, true) => confusion.missed_failures += 1,
            (_, false, false) => confusion.true_installs += 1,
        }
    }
    let predicted_failures = confusion.true_failures + confusion.false_failures;
    let recorded_failures = confusion.true_failures + confusion.missed_failures;
    confusion.precision = (predicted_failures > 0)
        .then(|| confusion.true_failures as f64 / predicted_failures as f64);
    confusion.recall =
        (recorded_failures > 0).then(|| confusion.true_failures as f64 / recorded_failures as f64);
    Review {
        cells,
        counts,
        confusion,
        outside_matrix: outside,
        results_left_out: Vec::new(),
    }
}

/// [`compare`] with the registry, images and catalog of loaded inputs.
pub fn compare_inputs(matrix: &Matrix, inputs: &crate::load::Inputs) -> Review {
    compare_inputs_within(matrix, inputs, crate::solve::DEFAULT_BUDGET)
}

/// [`compare_inputs`] with `budget` steps for each solve the review makes itself.
pub fn compare_inputs_within(matrix: &Matrix, inputs: &crate::load::Inputs, budget: u64) -> Review {
    compare_within(
        matrix,
        &inputs.results,
        (&inputs.registry, &inputs.images, &inputs.catalog),
        budget,
    )
}

/// Writes each cell's comparison into the matrix, for renderers.
pub fn annotate(matrix: &mut Matrix, review: &Review) {
    // A matrix read back from an earlier rendering carries that rendering's results: they
    // would show beside this review's as if recorded with them.
    for cell in &mut matrix.cells {
        cell.recorded = None;
    }
    let n = matrix.images.len();
    let rows: BTreeMap<String, usize> = matrix
        .packages
        .iter()
        .enumerate()
        .map(|(i, p)| (p.name.clone(), i))
        .collect();
    let cols: BTreeMap<String, usize> = matrix
        .images
        .iter()
        .enumerate()
        .map(|(i, c)| (c.id.clone(), i))
        .collect();
    for c in &review.cells {
        let (Some(&r), Some(&k)) = (rows.get(&c.package), cols.get(&c.image)) else {
            continue;
        };
        // Retries that disagree read as flaky whatever the verdict: a surprise install after a
        // failed attempt keeps its surprise mark, and the record shows both.
        let recorded = if c.attempts.windows(2).any(|w| w[0] != w[1]) {
            "flaky"
        } else if c.attempts.contains(&RecordedOutcome::Failed) {
            "failed"
        } else {
            "installed"
        };
        matrix.cells[r * n + k].recorded = Some(RecordedCheck {
            recorded: recorded.to_string(),
            verdict: c.verdict.as_str().to_string(),
            version: c.installed_version.clone(),
            detail: c
                .suggestion
                .clone()
                .or_else(|| c.evidence.clone())
                .map(|d| match c.cause_agrees {
                    Some(false) => format!("failed for another cause than predicted: {d}"),
                    _ => d,
                })
                .or_else(|| {
                    c.log_unread
                        .as_ref()
                        .map(|why| format!("the log file could not be read: {why}"))
                })
                .unwrap_or_default(),
            attempts: c.attempts.len(),
            cause_agrees: c.cause_agrees,
        });
    }
}

#[cfg(test)]
mod tests {
    use super::{Standing, drift_step, log_line_place};

    #[test]
    fn drift_advice_follows_the_direction_of_the_version() {
        let drift = |installed, predicted, standing: &Standing| {
            drift_step(installed, predicted, standing, "gumleaf", "deb-2.8")
        };
        let held = Standing::Admitted;
        // Precedence by Semantic Versioning 2.0.0, section 11: 2.0.0-rc.1 < 2.0.0.
        assert!(drift("1.2.0", "1.4.2", &held).contains("held the install back"));
        assert!(drift("2.0.0-rc.1", "2.0.0", &held).contains("held the install back"));
        let absent = Standing::NotInSnapshot {
            package_known: true,
        };
        assert!(drift("1.5.0", "1.4.2", &absent).contains("snapshot, which may be older"));
        // A newer version the snapshot holds and admits says nothing of the snapshot's age.
        let step = drift("1.5.0", "1.4.2", &held);
        assert!(
            !step.contains("older") && step.contains("did not pick it"),
            "{step}"
        );
        // Build metadata does not order versions (section 10): a release the snapshot holds
        // differs only in it; text that is no version gives no direction.
        let step = drift("1.4.2+b", "1.4.2+a", &held);
        assert!(step.contains("differ only in build metadata"), "{step}");
        let step = drift("nightly", "1.4.2", &held);
        assert!(step.contains("disagree"), "{step}");
        // A newer version on an image nothing could be looked up on (`compare` called with
        // images lacking the cell's) blames only the snapshot's age, not the plan's choice
        // (from a mutation review, where taking it for an admitted one survived).
        let step = drift("1.5.0", "1.4.2", &Standing::Unknown);
        assert!(
            step.contains("may be older") && !step.contains("did not pick it"),
            "{step}"
        );
        // A package the snapshot lacks entirely points at the snapshot's age whichever way
        // the version went (a `--matrix` written without a registry fingerprint is not checked
        // against the registry; from a mutation review, where reading an older install as a
        // mirror's survived).
        let gone = Standing::NotInSnapshot {
            package_known: false,
        };
        let step = drift("1.2.0", "1.4.2", &gone);
        assert!(
            step.contains("gumleaf is not in the registry snapshot, which may be older"),
            "{step}"
        );
    }

    /// A line after the record's own `log` text, from a log file whose name the caller does
    /// not give, is placed in "the log file", not passed off as a line of the whole log (from
    /// a mutation review, where dropping the `inline_lines == 0` guard survived: the loader
    /// always names a file it read, so only callers of this public function see it).
    #[test]
    fn a_line_after_the_inline_text_is_placed_in_the_log_file() {
        assert_eq!(log_line_place(2, 0, None, 5), "line 3 of the log file");
        assert_eq!(
            log_line_place(2, 0, None, 2),
            "line 2 of the record's `log` text"
        );
    }
}
