//! Reading inputs: registry snapshots, runtime images, priority lists and recorded results.
//!
//! Every reader follows one rule: each input record is either used or reported. Schema
//! violations (bad syntax, wrong type, unknown or missing field) make the file unusable and
//! come back as [`BadInput`]; data-quality problems (an unreadable version string, a dependency
//! on an unknown name) are written to the [`Ledger`] and the rest of the file is used.

pub mod bulk;
pub mod diag;
pub mod images;
pub mod lenient;
pub mod priorities;
pub mod registry;
pub mod results;
pub mod table;
pub mod yaml;

pub use bulk::read_bulk;
pub use diag::{BadInput, Ledger};
pub use images::read_images;
pub use priorities::read_priorities;
pub use registry::RegistryBuilder;
pub use results::read_results;

use crate::model::Registry;
use std::path::Path;

fn file_size(path: &Path) -> u64 {
    std::fs::metadata(path).map_or(0, |m| m.len())
}

/// Gives a bar its length and style, and starts its clock: bars are made before the step that
/// shows on them, and one bar may serve several steps in turn. Nothing is drawn until all is
/// set, so no frame shows one step's style with another's numbers. Bars exist only when stderr
/// is a terminal (the command layer decides), so drawing goes back to stderr.
pub(crate) fn start_bar(bar: &indicatif::ProgressBar, length: u64, template: &str) {
    // A step of unknown length before this one animated the bar on a timer.
    bar.disable_steady_tick();
    // Erases what the previous step left on screen; a new draw target would not know of it.
    bar.finish_and_clear();
    bar.set_draw_target(indicatif::ProgressDrawTarget::hidden());
    let style = indicatif::ProgressStyle::with_template(template)
        .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar())
        // Whole steps per second: `{per_sec}` prints four decimals.
        .with_key(
            "rate",
            |state: &indicatif::ProgressState, w: &mut dyn std::fmt::Write| {
                let _ = write!(w, "{:.0}/s", state.per_sec());
            },
        );
    bar.set_style(style);
    bar.set_length(length);
    bar.reset();
    bar.set_draw_target(indicatif::ProgressDrawTarget::stderr());
}

/// Runs `index` (sorting names, ordering versions, checking requirements: seconds on a
/// registry-sized input, with nothing to count) while `bar`, if any, shows that the registry
/// files are read and the registry is being indexed, animated on a timer rather than sitting
/// full and still. Position and length are kept; the timer stops when `index` returns, since
/// while it runs the bar draws only on the timer.
pub(crate) fn while_indexing<T>(
    bar: Option<&indicatif::ProgressBar>,
    index: impl FnOnce() -> T,
) -> T {
    let Some(bar) = bar else {
        return index();
    };
    let style = indicatif::ProgressStyle::with_template(
        "registry read, indexing {spinner} {elapsed} {wide_bar}",
    )
    .unwrap_or_else(|_| indicatif::ProgressStyle::default_spinner());
    bar.set_style(style);
    // `{elapsed}` then counts the indexing, not the reading before it.
    bar.reset_elapsed();
    ticking(bar, index)
}

/// Runs `step` while `bar` redraws on a timer: with nothing to count, only the timer moves it.
fn ticking<T>(bar: &indicatif::ProgressBar, step: impl FnOnce() -> T) -> T {
    bar.enable_steady_tick(std::time::Duration::from_millis(120));
    let done = step();
    bar.disable_steady_tick();
    done
}

/// Runs `step`, a last step of unknown length (writing output files), with a spinner saying
/// `what` and the time it has taken, on `bar`'s terminal, and clears it after.
pub(crate) fn spinning<T>(
    bar: Option<&indicatif::ProgressBar>,
    what: &str,
    step: impl FnOnce() -> T,
) -> T {
    let Some(bar) = bar else {
        return step();
    };
    let what = what.replace(['{', '}'], "");
    start_bar(bar, 0, &format!("{what} {{spinner}} {{elapsed}}"));
    let done = ticking(bar, step);
    bar.finish_and_clear();
    done
}

/// Reads one or more registry files (YAML) into one registry.
pub fn read_registry(paths: &[&Path]) -> Result<(Registry, Ledger), BadInput> {
    let mut builder = RegistryBuilder::new();
    for path in paths {
        registry::read_yaml(path, &mut builder)?;
    }
    Ok(builder.finish())
}

use crate::model::{Image, ImageSet, PriorityList, RecordedResult};
use crate::native::Catalog;
use std::path::PathBuf;

/// The two ways of giving a registry, as every message that names them spells them (the
/// value names `--help` shows), so a user reads one spelling whichever message they meet.
pub const REGISTRY_FLAGS: &str = "--registry FILE or --bulk VERSIONS_CSV DEPS_CSV";

/// Where the inputs of a run come from.
#[derive(Debug, Clone, Default)]
pub struct InputPaths {
    /// Registry snapshots in YAML.
    pub registry: Vec<PathBuf>,
    /// A bulk registry: versions CSV and dependencies CSV.
    pub bulk: Option<(PathBuf, PathBuf)>,
    pub images: Option<PathBuf>,
    pub priorities: Option<PathBuf>,
    pub results: Vec<PathBuf>,
    /// A user catalog file applied over the shipped one.
    pub catalog: Option<PathBuf>,
    /// Shows how far the registry and the recorded results have been read (the inputs that
    /// can take long).
    pub progress: Option<indicatif::ProgressBar>,
}

impl InputPaths {
    /// Whether a registry was given, in either format.
    pub fn registry_given(&self) -> bool {
        !self.registry.is_empty() || self.bulk.is_some()
    }
}

/// Everything a command works on, with the ledger of what was read.
#[derive(Debug, Clone, Default)]
pub struct Inputs {
    pub registry: Registry,
    pub images: ImageSet,
    pub priorities: PriorityList,
    pub results: Vec<RecordedResult>,
    pub catalog: Catalog,
    pub ledger: Ledger,
}

impl Inputs {
    /// The image the command line names as `arg` (`--image deb`). An image that was declared
    /// but left out is named at its problem's place with the reason: reported as unknown it
    /// would send the user looking for a typo in an id the file does have.
    pub fn image_from_command_line(&self, id: &str, arg: &str) -> Result<&Image, BadInput> {
        if let Some(image) = self.images.get(id) {
            return Ok(image);
        }
        if let Some(p) = self.ledger.left_out_image(id) {
            return Err(BadInput::at(
                p.origin.file.clone(),
                p.origin.line,
                format!(
                    "{arg}: image `{id}` is declared in this file but was left out: {}",
                    p.detail
                ),
            ));
        }
        let known: Vec<&str> = self.images.images.iter().map(|i| i.id.as_str()).collect();
        Err(BadInput::file(
            "command line",
            format!(
                "{arg}: no image `{id}` in --images; declared: {}",
                known.join(", ")
            ),
        ))
    }

    /// Moves every problem the load reported at a stand-in place to its own
    /// ([`Ledger::place_deferred`]) and keeps the problems in order ([`Ledger::sort`]).
    /// `progress`, if given, shows the read and is cleared after it. Call it before showing
    /// where problems are (`check`, the error of `--strict`); a run that only counts them
    /// should not, since it may read the bulk dependencies file a second time.
    ///
    /// ```
    /// # fn main() -> Result<(), Box<dyn std::error::Error>> {
    /// use basefit::load::{InputPaths, load_inputs};
    /// let dir = tempfile::tempdir()?;
    /// let (versions, deps) = (dir.path().join("versions.csv"), dir.path().join("deps.csv"));
    /// std::fs::write(&versions, "package,version\npkg-a,1.0.0\n")?;
    /// std::fs::write(&deps, "package,version,dependency\npkg-a,1.0.0,pkg-gone\n")?;
    /// let paths = InputPaths { bulk: Some((versions.clone(), deps.clone())), ..Default::default() };
    /// let mut inputs = load_inputs(&paths)?;
    /// let first = |inputs: &basefit::load::Inputs| inputs.ledger.problems[0].origin.clone();
    /// assert_eq!(first(&inputs).file, versions.display().to_string());
    /// inputs.place_deferred(None);
    /// assert_eq!(first(&inputs).file, deps.display().to_string());
    /// assert_eq!(first(&inputs).line, 2);
    /// # Ok(()) }
    /// ```
    pub fn place_deferred(&mut self, progress: Option<&indicatif::ProgressBar>) {
        if self.ledger.deferred() == 0 {
            return;
        }
        if self.ledger.place_deferred_showing(progress) > 0 {
            self.ledger.sort();
        }
        if let Some(bar) = progress {
            bar.finish_and_clear();
        }
    }
}

/// Loads every input named in `paths`. A missing optional input is simply empty.
///
/// Problems come sorted by place ([`Ledger::sort`]). A few may be at a stand-in place (a
/// bulk registry's dependency problems at their version's row, see
/// [`read_bulk`]) until [`Inputs::place_deferred`] finds their own; a caller that shows
/// places calls it, one that only counts problems need not.
pub fn load_inputs(paths: &InputPaths) -> Result<Inputs, BadInput> {
    let loaded = load_all(paths);
    // One clear for every step (each step's `start_bar` resets the bar), and also when a file
    // is unusable, so its message is not printed under a stale bar.
    if let Some(bar) = &paths.progress {
        bar.finish_and_clear();
    }
    loaded
}

fn load_all(paths: &InputPaths) -> Result<Inputs, BadInput> {
    diag::refuse_repeated(
        &paths.results,
        "--results",
        "its results would be counted twice, each one a retry of itself",
    )?;
    diag::refuse_repeated(
        &paths.registry,
        "--registry",
        "its versions would be read twice, each one reported a duplicate of itself",
    )?;
    if let Some((versions, deps)) = &paths.bulk {
        diag::refuse_repeated(
            &[versions.clone(), deps.clone()],
            "--bulk",
            "one file cannot be both the versions and the dependencies file",
        )?;
    }
    let mut builder = RegistryBuilder::new();
    let yaml_bar = paths
        .progress
        .as_ref()
        .filter(|_| !paths.registry.is_empty());
    if let Some(bar) = yaml_bar {
        // Parsing, then checking the packages: each is counted as the file's size.
        let sizes = paths.registry.iter().map(|p| 2 * file_size(p)).sum();
        start_bar(bar, sizes, "registry {percent}% read, eta {eta} {wide_bar}");
    }
    for path in &paths.registry {
        registry::read_yaml_showing(path, &mut builder, yaml_bar)?;
    }
    let (registry, mut ledger) = match &paths.bulk {
        Some((versions, deps)) if paths.registry.is_empty() => {
            bulk::read_bulk_showing(versions, deps, paths.progress.as_ref())?
        }
        Some(_) => {
            return Err(BadInput::file(
                "command line",
                format!("give {REGISTRY_FLAGS}, not both"),
            ));
        }
        None => while_indexing(yaml_bar, || builder.finish()),
    };
    if !paths.registry_given() {
        // An empty registry still counts its kinds of record; with none given, rows of zeros
        // would read as a registry that was read and held nothing.
        for kind in [
            diag::RecordKind::Package,
            diag::RecordKind::Version,
            diag::RecordKind::Dependency,
        ] {
            ledger.tallies.remove(&kind);
        }
    }
    let images = match &paths.images {
        Some(p) => read_images(p, &mut ledger)?,
        None => ImageSet::default(),
    };
    let priorities = match &paths.priorities {
        Some(p) => read_priorities(p, &mut ledger)?,
        None => PriorityList::default(),
    };
    // Without a registry there is nothing to check names against: the check is recorded as
    // skipped rather than every entry reported unknown.
    let known_registry = paths.registry_given().then_some(&registry);
    match known_registry {
        Some(registry) => {
            for entry in &priorities.entries {
                if registry
                    .id(&entry.name)
                    .is_none_or(|id| !registry.package(id).declared)
                {
                    // Kept: the plan reports the entry as missing from the registry.
                    ledger.note(
                        diag::ProblemKind::UnknownPackage,
                        entry.origin.clone(),
                        &entry.name,
                        "priority entry names a package the registry does not have",
                    );
                }
            }
        }
        None if paths.priorities.is_some() => {
            ledger.skip_check(diag::RecordKind::Priority, diag::Reference::Registry);
        }
        None => {}
    }
    let mut results = Vec::new();
    let results_bar = paths
        .progress
        .as_ref()
        .filter(|_| !paths.results.is_empty());
    if let Some(bar) = results_bar {
        // Grown by each file's records as it is read.
        start_bar(
            bar,
            0,
            "{pos}/{len} recorded results read, eta {eta} {wide_bar}",
        );
    }
    for p in &paths.results {
        let known = results::Known {
            registry: known_registry,
            images: paths.images.as_ref().map(|_| &images),
        };
        results.extend(results::read_results_showing(
            p,
            &known,
            &mut ledger,
            results_bar,
        )?);
    }
    let catalog = match &paths.catalog {
        Some(p) => {
            // A catalog file is all used or refused; counting it lets `check` say it was read.
            let (catalog, entries) = Catalog::with_override_counted(p)?;
            ledger.read_many(diag::RecordKind::CatalogLibrary, entries as u64);
            ledger.used_many(diag::RecordKind::CatalogLibrary, entries as u64);
            catalog
        }
        None => Catalog::builtin(),
    };
    note_unknown_libraries(&registry, &catalog, &mut ledger);
    ledger.sort();
    Ok(Inputs {
        registry,
        images,
        priorities,
        results,
        catalog,
        ledger,
    })
}

/// Notes each release that declares a native library the catalog does not know by any of its
/// names: the cells needing it stay at risk whatever an image adds, and without a note `check`
/// would say nothing of it. Noted at the release's record, once per name.
fn note_unknown_libraries(registry: &Registry, catalog: &Catalog, ledger: &mut Ledger) {
    for id in registry.ids() {
        let pkg = registry.package(id);
        for release in &pkg.releases {
            let Some(native) = &release.native else {
                continue;
            };
            let mut seen: Vec<&str> = Vec::new();
            for lib in &native.libraries {
                // An empty name is reported where it is read (`bad-value`).
                if lib.trim().is_empty()
                    || seen.contains(&lib.as_str())
                    || catalog.by_declared_name(lib).is_some()
                {
                    continue;
                }
                seen.push(lib);
                ledger.note(
                    diag::ProblemKind::UnknownLibrary,
                    diag::Origin {
                        file: registry
                            .files
                            .get(release.file as usize)
                            .cloned()
                            .unwrap_or_default(),
                        line: release.line as usize,
                    },
                    format!("{}@{}", pkg.name, release.version),
                    format!(
                        "declares native library `{lib}`, which the catalog knows by no id, alias, pkg-config module or link name: no image is told what to add for it, and its cells stay at risk (give the library with --catalog)"
                    ),
                );
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use diag::ProblemKind;

    fn write(dir: &Path, name: &str, text: &str) -> PathBuf {
        let path = dir.join(name);
        std::fs::write(&path, text).unwrap();
        path
    }

    fn kinds(inputs: &Inputs) -> Vec<(ProblemKind, String)> {
        let ledger = &inputs.ledger;
        ledger
            .problems
            .iter()
            .map(|p| (p.kind, p.subject.clone()))
            .collect()
    }

    /// Problems come sorted by place, whichever reader found them first: the unknown-library
    /// notes are made after every file is read, yet the registry file sorts before the
    /// images file. From a mutation review, where dropping the sort passed every test.
    #[test]
    fn problems_are_sorted_by_file_whatever_the_reading_order() {
        let dir = tempfile::tempdir().unwrap();
        let registry = write(
            dir.path(),
            "a-registry.yaml",
            "packages:\n  - name: pkg-a\n    versions:\n      - version: 1.0.0\n        native:\n          libraries: [no-such-lib-xyz, no-such-lib-xyz]\n",
        );
        let images = write(
            dir.path(),
            "b-images.yaml",
            "images:\n  - {id: odd, runtime: 3.0.0, family: no-such-family, platform: linux/glibc/x86_64}\n",
        );
        let paths = InputPaths {
            registry: vec![registry],
            images: Some(images),
            ..Default::default()
        };
        let inputs = load_inputs(&paths).unwrap();
        let got = kinds(&inputs);
        // The library declared twice is noted once.
        let unknown: Vec<_> = got
            .iter()
            .filter(|(k, _)| *k == ProblemKind::UnknownLibrary)
            .collect();
        assert_eq!(unknown.len(), 1, "{got:?}");
        // Noted at the version's record.
        let noted = &inputs.ledger.problems[0];
        assert_eq!(
            (noted.kind, noted.origin.line),
            (ProblemKind::UnknownLibrary, 4)
        );
        assert_eq!(got.last().unwrap().0, ProblemKind::BadImage, "{got:?}");
        assert!(inputs.ledger.unbalanced().is_empty());
    }

    /// A name the registry holds only as a dependency target is no package of the registry:
    /// a priority entry naming it is reported unknown. From a mutation review.
    #[test]
    fn a_priority_naming_only_a_dependency_target_is_unknown() {
        let dir = tempfile::tempdir().unwrap();
        let registry = write(
            dir.path(),
            "r.yaml",
            "packages:\n  - name: pkg-a\n    versions:\n      - version: 1.0.0\n        depends:\n          - {name: pkg-ghost, req: \"^1\"}\n",
        );
        let priorities = write(
            dir.path(),
            "p.yaml",
            "priorities:\n  - {name: pkg-a, weight: 1}\n  - {name: pkg-ghost, weight: 1}\n",
        );
        let paths = InputPaths {
            registry: vec![registry],
            priorities: Some(priorities),
            ..Default::default()
        };
        let inputs = load_inputs(&paths).unwrap();
        let unknown: Vec<_> = kinds(&inputs)
            .into_iter()
            .filter(|(k, _)| *k == ProblemKind::UnknownPackage)
            .collect();
        assert_eq!(
            unknown,
            [(ProblemKind::UnknownPackage, "pkg-ghost".to_string())]
        );
    }

    /// A YAML registry and a bulk one together are refused, not one read and the other's
    /// records dropped unreported. From a mutation review.
    #[test]
    fn yaml_and_bulk_registries_together_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        let registry = write(
            dir.path(),
            "r.yaml",
            "packages:\n  - name: pkg-a\n    versions:\n      - version: 1.0.0\n",
        );
        let versions = write(dir.path(), "v.csv", "package,version\npkg-b,1.0.0\n");
        let deps = write(dir.path(), "d.csv", "package,version,dependency\n");
        let paths = InputPaths {
            registry: vec![registry],
            bulk: Some((versions, deps)),
            ..Default::default()
        };
        let e = load_inputs(&paths).unwrap_err();
        assert_eq!(
            e.to_string(),
            format!("command line: give {REGISTRY_FLAGS}, not both")
        );
    }
}
