//! One library call per command: each takes its options struct, does the work and returns
//! what to print and the exit code. `main.rs` only parses arguments into these structs.

use crate::load::{self, BadInput, InputPaths, Inputs, REGISTRY_FLAGS};
use crate::plan::{self, Matrix, PlanOptions, blockers};
use crate::report::{self, Format, MatrixFormat, text};
use anyhow::Result;
use std::path::PathBuf;

/// Exit codes shared by every command.
pub mod exit {
    pub const OK: u8 = 0;
    /// The run worked and found what the user asked to be warned about.
    pub const FOUND: u8 = 1;
    /// Usage error or unusable input.
    pub const BAD_INPUT: u8 = 2;
}

/// What a command prints and how it exits.
#[derive(Debug, Default)]
pub struct Output {
    pub stdout: String,
    /// Lines for stderr (where files went, warnings).
    pub stderr: Vec<String>,
    pub exit: u8,
}

impl Output {
    /// `value` as JSON when asked for, else its text rendering; exit 1 when `found` (the run
    /// found what the command warns about), else 0.
    fn report<T: serde::Serialize>(
        format: Format,
        value: &T,
        text: impl FnOnce(&T) -> String,
        found: bool,
    ) -> Output {
        Output {
            stdout: match format {
                Format::Json => report::to_json(value),
                Format::Yaml => report::to_yaml(value),
                Format::Table => report::visible(&text(value)).into_owned(),
            },
            stderr: Vec::new(),
            exit: if found { exit::FOUND } else { exit::OK },
        }
    }
}

/// A prediction report's JSON or YAML document with the notice first, as its text ends with
/// it: a pipeline reading the document (running `syslibs`' install commands in an image
/// build) would otherwise never see that predictions need real installs to confirm them.
#[derive(serde::Serialize)]
struct Noticed<'a, T> {
    notice: String,
    #[serde(flatten)]
    report: &'a T,
}

/// Loads inputs, and with `strict` refuses any data-quality problem, naming the first by its
/// own place. Otherwise problems may still be at stand-in places: a command that shows them
/// calls [`Inputs::place_deferred`] first (only `check` does).
pub fn load(paths: &InputPaths, strict: bool) -> Result<Inputs, BadInput> {
    let mut inputs = load::load_inputs(paths)?;
    if strict && !inputs.ledger.is_clean() {
        // Which problem comes first depends on where each is.
        inputs.place_deferred(paths.progress.as_ref());
        let groups = inputs.ledger.by_kind();
        let parts: Vec<String> = groups
            .iter()
            // Label first, as `check` lists them: the labels are plural, so "1 dependencies"
            // would read as a slip.
            .map(|(k, v)| format!("{}: {}", k.label(), v.len()))
            .collect();
        let first = &inputs.ledger.problems[0];
        // The place named may be a stand-in: say so rather than pass it off as the problem's own.
        let unplaced: String = inputs
            .ledger
            .unplaced
            .iter()
            .filter(|u| u.holds(first))
            .map(|u| format!("; {}", u.sentence()))
            .collect();
        return Err(BadInput::at(
            first.origin.file.clone(),
            first.origin.line,
            format!(
                "--strict: {}: {} (in all: {}){unplaced}",
                first.subject,
                first.detail,
                parts.join("; ")
            ),
        ));
    }
    Ok(inputs)
}

/// A command that plans a matrix, as [`require_matrix_inputs`] names it.
#[derive(Clone, Copy)]
struct Planner<'a> {
    command: &'a str,
    /// Whether a matrix from an earlier plan (`--matrix`) can stand in for planning; the
    /// usage error then offers it, so it does not read as the only way to run the command.
    or_matrix: bool,
    /// Whether it needs a priority entry; `review` plans every recorded package as well.
    priorities: bool,
}

impl<'a> Planner<'a> {
    /// A command that always plans.
    fn plans(command: &'a str) -> Self {
        Planner {
            command,
            or_matrix: false,
            priorities: true,
        }
    }

    /// A command that plans unless given `--matrix`.
    fn plans_without_matrix(command: &'a str) -> Self {
        Planner {
            command,
            or_matrix: true,
            priorities: true,
        }
    }

    /// The same command when it plans packages named elsewhere than the priority list.
    fn without_priorities(self) -> Self {
        Planner {
            priorities: false,
            ..self
        }
    }
}

/// Refuses a run that has nothing to put in a matrix, naming the file that left it empty.
fn require_matrix_inputs(
    inputs: &Inputs,
    paths: &InputPaths,
    planner: Planner<'_>,
) -> Result<(), BadInput> {
    let command = planner.command;
    use crate::load::diag::RecordKind;
    let checks = [
        (
            inputs.images.images.is_empty(),
            &paths.images,
            "--images",
            RecordKind::Image,
            "image",
        ),
        (
            planner.priorities && inputs.priorities.entries.is_empty(),
            &paths.priorities,
            "--priorities",
            RecordKind::Priority,
            "priority entry",
        ),
    ];
    for (empty, path, flag, kind, noun) in checks {
        if !empty {
            continue;
        }
        let Some(path) = path else {
            let needs = match planner.priorities {
                true => "--images and --priorities with at least one entry each",
                false => "--images with at least one image",
            };
            let needs = match planner.or_matrix {
                true => format!("--matrix, or {needs} to plan from"),
                false => needs.to_string(),
            };
            return Err(BadInput::file(
                "command line",
                format!("{command} needs {needs} (no {flag} given)"),
            ));
        };
        let tally = inputs.ledger.tally(kind);
        return Err(BadInput::file(
            path.display().to_string(),
            format!(
                "{command} needs at least one {noun}: of {} read, {} {} left out (`basefit check` lists why)",
                tally.read,
                tally.left_out,
                crate::report::one_or_many(tally.left_out, "was", "were")
            ),
        ));
    }
    require_releases(inputs, paths, command)
}

/// The registry files given (YAML, or the versions file of a bulk pair), for messages.
fn registry_files(paths: &InputPaths) -> Vec<String> {
    paths
        .registry
        .iter()
        .chain(paths.bulk.iter().map(|(versions, _)| versions))
        .map(|p| p.display().to_string())
        .collect()
}

/// When registry files were given but hold no usable release: the files, what came to
/// nothing (no package at all, or packages whose every version record was left out) and why,
/// for a message that goes on "needs at least one {noun}: ". `None` when a release is usable
/// or no registry was given.
fn registry_left_nothing(
    inputs: &Inputs,
    paths: &InputPaths,
) -> Option<(String, &'static str, String)> {
    use crate::load::diag::RecordKind;
    let files = registry_files(paths);
    if files.is_empty() || inputs.registry.release_count() > 0 {
        return None;
    }
    let packages = inputs.registry.packages.len();
    let (noun, kind) = match packages {
        0 => ("package", RecordKind::Package),
        _ => ("version record", RecordKind::Version),
    };
    let tally = inputs.ledger.tally(kind);
    // "Of 0 read, 0 were left out" would send the user to `check` for a list that is empty:
    // when nothing of the kind was read, the file simply has none.
    let why = match (tally.read, packages) {
        (0, 0) => format!("{} none", declare(files.len())),
        (0, n) => format!("{} {n} packages but no versions", declare(files.len())),
        (read, _) => format!(
            "of {read} read, {} {} left out (`basefit check` lists why)",
            tally.left_out,
            crate::report::one_or_many(tally.left_out, "was", "were")
        ),
    };
    Some((files.join(", "), noun, why))
}

/// "the file declares" or "the files declare", for `files` registry files.
fn declare(files: usize) -> &'static str {
    match files {
        1 => "the file declares",
        _ => "the files declare",
    }
}

/// Refuses a run that would plan without a registry, or from one that was given but has no
/// usable release. Without one every cell would be planned as missing from the registry, a
/// matrix of nothing but failures that reads like a finding. A registry with no usable
/// release would fail every cell for want of versions the file does have, written in a way
/// basefit cannot read, and recorded results would be set against those failures: the
/// registry file is what to fix.
fn require_releases(inputs: &Inputs, paths: &InputPaths, command: &str) -> Result<(), BadInput> {
    if !paths.registry_given() {
        return Err(BadInput::file(
            "command line",
            format!("{command} needs a registry to plan from: {REGISTRY_FLAGS} (neither given)"),
        ));
    }
    match registry_left_nothing(inputs, paths) {
        None => Ok(()),
        Some((files, noun, why)) => Err(BadInput::file(
            files,
            format!("{command} needs at least one {noun}: {why}"),
        )),
    }
}

/// The note that inputs had data-quality problems, for stderr: records were left out or
/// changed, and a report should not pass for one built on clean inputs.
fn data_quality_note(inputs: &Inputs, out: &mut Output) {
    if !inputs.ledger.is_clean() {
        let n = inputs.ledger.problems.len();
        out.stderr.push(format!(
            "note: {n} data-quality {} in the inputs (run `basefit check` for the list)",
            report::one_or_many(n, "problem", "problems")
        ));
    }
}

/// The recorded-results files given, for messages.
fn results_files(paths: &InputPaths) -> String {
    paths
        .results
        .iter()
        .map(|p| p.display().to_string())
        .collect::<Vec<_>>()
        .join(", ")
}

/// Refuses recorded results set against a matrix read from a file without the inputs they are
/// read against: without the images and the registry every result would be left out, and an
/// empty comparison would pass for a clean one.
fn require_results_context(
    inputs: &Inputs,
    paths: &InputPaths,
    command: &str,
) -> Result<(), BadInput> {
    // A file that was given but left nothing usable is what to fix, not the command line.
    let given_but_empty = if inputs.images.images.is_empty() {
        paths.images.as_ref().map(|p| {
            (
                p.display().to_string(),
                "image",
                "none was usable (`basefit check` lists why)".to_string(),
            )
        })
    } else {
        registry_left_nothing(inputs, paths)
    };
    if let Some((file, noun, why)) = given_but_empty {
        return Err(BadInput::file(
            file,
            format!(
                "{command} --matrix with --results needs at least one {noun} from here to read recorded results against; {why}"
            ),
        ));
    }
    if inputs.images.images.is_empty() || inputs.registry.packages.is_empty() {
        return Err(BadInput::file(
            "command line",
            format!(
                "{command} --matrix with --results needs the --images and the registry ({REGISTRY_FLAGS}) the matrix was planned from: recorded results are read against them"
            ),
        ));
    }
    Ok(())
}

/// Reads the matrix at `path` for recorded results to be set against, refusing inputs that
/// cannot be: without the images and registry it was planned from (see
/// [`require_results_context`]), or with images that contradict its record of them.
fn read_matrix_for_results(
    path: &std::path::Path,
    inputs: &Inputs,
    paths: &InputPaths,
    command: &str,
    out: &mut Output,
) -> Result<Matrix, BadInput> {
    require_results_context(inputs, paths, command)?;
    let matrix = read_matrix(path)?;
    require_planned_images(&matrix, path, inputs, paths)?;
    require_planned_registry(&matrix, path, inputs, paths, out)?;
    require_planned_catalog(&matrix, path, inputs, paths, out)?;
    Ok(matrix)
}

/// Refuses `--no-native` beside a matrix planned with system libraries checked: its cells keep
/// the verdicts of that check, so the flag would be silently ignored and the reader would take
/// the rendering or review for a version-solving-only one.
fn refuse_no_native_on_checked_matrix(
    options: &PlanOptions,
    matrix: &Matrix,
    path: &std::path::Path,
) -> Result<(), BadInput> {
    if options.native || matrix.native_skipped {
        return Ok(());
    }
    Err(BadInput::file(
        "command line",
        format!(
            "--no-native does not apply to --matrix {}: it was planned with system libraries \
             checked, and its cells keep those verdicts; plan it again with --no-native, or \
             leave the flag out",
            path.display()
        ),
    ))
}

/// Refuses a registry other than the snapshot a matrix read from a file was planned from
/// (when the matrix records it): recorded versions would be looked up, and surprise installs
/// solved, in releases the predictions never saw, so advice would point at the wrong thing.
fn require_planned_registry(
    matrix: &Matrix,
    matrix_path: &std::path::Path,
    inputs: &Inputs,
    paths: &InputPaths,
    out: &mut Output,
) -> Result<(), BadInput> {
    require_planned_print(
        PlannedPrint {
            recorded: matrix.registry_fingerprint.as_deref(),
            format: plan::replan::REGISTRY_FINGERPRINT_FORMAT,
            files: registry_files(paths).join(", "),
            whose: "registry's",
            kind: "registry snapshot",
            short: "snapshot",
            verb: "planned from",
            give: "give the registry it was planned from",
        },
        || plan::replan::registry_fingerprint(&inputs.registry),
        matrix_path,
        out,
    )
}

/// Refuses a catalog other than the one a matrix read from a file was planned with (when the
/// matrix records it): logs would be read, and advice given, by other libraries than the
/// predictions were made with, so a risk the plan's catalog confirms would read unconfirmed.
fn require_planned_catalog(
    matrix: &Matrix,
    matrix_path: &std::path::Path,
    inputs: &Inputs,
    paths: &InputPaths,
    out: &mut Output,
) -> Result<(), BadInput> {
    require_planned_print(
        PlannedPrint {
            recorded: matrix.catalog_fingerprint.as_deref(),
            format: plan::replan::CATALOG_FINGERPRINT_FORMAT,
            files: match &paths.catalog {
                Some(p) => p.display().to_string(),
                None => "the shipped catalog (no --catalog)".to_string(),
            },
            whose: "catalog's",
            kind: "system-library catalog",
            short: "catalog",
            verb: "planned with",
            give: "give the --catalog it was planned with (or none, if it was planned with the shipped one)",
        },
        || plan::replan::catalog_fingerprint(&inputs.catalog),
        matrix_path,
        out,
    )
}

/// What a matrix records of one input it was planned from, and the words for it.
struct PlannedPrint<'a> {
    recorded: Option<&'a str>,
    format: &'static str,
    /// The input files given, as an error names them.
    files: String,
    whose: &'static str,
    kind: &'static str,
    short: &'static str,
    verb: &'static str,
    give: &'static str,
}

/// Refuses an input whose fingerprint (`given`, made only when needed) differs from the one
/// the matrix records. A fingerprint another version of basefit made another way cannot be
/// compared: a note says so. A matrix without one is not checked.
fn require_planned_print(
    print: PlannedPrint<'_>,
    given: impl FnOnce() -> String,
    matrix_path: &std::path::Path,
    out: &mut Output,
) -> Result<(), BadInput> {
    let Some(planned) = print.recorded else {
        return Ok(());
    };
    let (files, m) = (&print.files, matrix_path.display());
    if !planned.starts_with(print.format) {
        out.stderr.push(format!(
            "note: {m} records its {} fingerprint in a form this basefit does not make (another version of basefit wrote it), so it cannot be compared: make sure {files} is the {} it was {}, or plan again",
            print.whose, print.short, print.verb
        ));
        return Ok(());
    }
    let given = given();
    if planned == given {
        return Ok(());
    }
    Err(BadInput::file(
        print.files.clone(),
        format!(
            "is not the {} the matrix {m} was {} (fingerprint {given}, the matrix records {planned}): {}, or plan again",
            print.kind, print.verb, print.give
        ),
    ))
}

/// Records the registry and catalog `matrix` was planned from, for a later `--matrix` read to
/// check.
fn stamp_inputs(matrix: &mut Matrix, inputs: &Inputs) {
    matrix.registry_fingerprint = Some(plan::replan::registry_fingerprint(&inputs.registry));
    matrix.catalog_fingerprint = Some(plan::replan::catalog_fingerprint(&inputs.catalog));
}

/// Refuses an images file that does not declare every image of a matrix read from a file as
/// the matrix records it. Results are judged against the images given (their runtime and
/// platform decide which releases they admit, their packages what to add), so a changed
/// image yields advice about an image other than the one predicted, and a missing one drops
/// its results as outside the matrix although the matrix has their cells.
fn require_planned_images(
    matrix: &Matrix,
    matrix_path: &std::path::Path,
    inputs: &Inputs,
    paths: &InputPaths,
) -> Result<(), BadInput> {
    let images_file = paths
        .images
        .as_ref()
        .map(|p| p.display().to_string())
        .unwrap_or_else(|| "command line".into());
    let planned_from = format!(
        "the matrix {} was planned from other images, or by an older basefit that read them otherwise: give the --images file it was planned from, or plan again",
        matrix_path.display()
    );
    let errors = matrix
        .images
        .iter()
        .filter_map(|planned| match inputs.images.get(&planned.id) {
            None => Some(BadInput::file(
                &images_file,
                format!(
                    "declares no usable image {}, which the matrix has: {planned_from}",
                    planned.id
                ),
            )),
            Some(image) => {
                let differences = planned.differences(&plan::matrix::ImageColumn::of(image));
                (!differences.is_empty()).then(|| {
                    BadInput::at(
                        &image.origin.file,
                        image.origin.line,
                        format!(
                            "image {} differs from the matrix's record of it ({}): {planned_from}",
                            planned.id,
                            differences.join("; ")
                        ),
                    )
                })
            }
        })
        .collect();
    BadInput::combine(errors).map_or(Ok(()), Err)
}

/// A note for stderr when a matrix read from a file records no system packages for some
/// image (written before it did): those were not checked against the images file, and a
/// clean run would otherwise read as if they had been.
fn packages_unchecked_note(matrix: &Matrix, path: &std::path::Path, out: &mut Output) {
    let unchecked = matrix
        .images
        .iter()
        .filter(|i| i.packages.is_none())
        .count();
    if unchecked > 0 {
        out.stderr.push(format!(
            "note: {} records no system packages for {unchecked} of its images (written by an older basefit): the images file's packages were not checked against it; plan again to check them",
            path.display()
        ));
    }
}

/// A note for stderr when results set against a matrix read from a file name cells it does
/// not have: planned afresh, their packages would have been planned too and compared, so a
/// gate on the file's review could pass where a fresh one fails.
fn outside_matrix_note(review: &crate::verify::Review, remedy: &str, out: &mut Output) {
    if !review.outside_matrix.is_empty() {
        let n = review.outside_matrix.len();
        out.stderr.push(format!(
            "note: {n} recorded {} the matrix does not have and {} not compared; {remedy}",
            report::one_or_many(n, "result names a cell", "results name cells"),
            report::one_or_many(n, "was", "were"),
        ));
    }
}

/// Compares `matrix` with the recorded results, refusing a comparison of nothing: a review
/// or rendering with every result left out would pass for one where all agree.
fn review_results(
    matrix: &Matrix,
    inputs: &Inputs,
    paths: &InputPaths,
    budget: u64,
) -> Result<crate::verify::Review, BadInput> {
    let mut review = crate::verify::compare::compare_inputs_within(matrix, inputs, budget);
    let files: Vec<String> = paths
        .results
        .iter()
        .map(|p| p.display().to_string())
        .collect();
    review.results_left_out = inputs
        .ledger
        .problems
        .iter()
        .filter(|p| p.left_out && files.contains(&p.origin.file))
        .map(|p| format!("{}: {}: {}", p.origin, p.subject, p.detail))
        .collect();
    if review.cells.is_empty() {
        let tally = inputs.ledger.tally(crate::load::diag::RecordKind::Result);
        // The reasons are known: the first few go in the message itself.
        const SHOWN: usize = 3;
        let reasons: Vec<&String> = review
            .results_left_out
            .iter()
            .chain(&review.outside_matrix)
            .take(SHOWN)
            .collect();
        let more =
            (review.results_left_out.len() + review.outside_matrix.len()).saturating_sub(SHOWN);
        let mut why: String = reasons.iter().map(|r| format!("\n  {r}")).collect();
        if more > 0 {
            why.push_str(&format!("\n  and {more} more (`basefit check` lists them)"));
        }
        return Err(BadInput::file(
            results_files(paths),
            format!(
                "no recorded result could be compared with the predictions: of {} read, {} {} left out and {} {} the matrix does not have:{why}",
                tally.read,
                tally.left_out,
                crate::report::one_or_many(tally.left_out, "was", "were"),
                review.outside_matrix.len(),
                crate::report::one_or_many(
                    review.outside_matrix.len(),
                    "names a cell",
                    "name cells"
                )
            ),
        ));
    }
    // Results on cells the solver left undecided compare with no prediction either: with
    // nothing else, `render` would show a page of them and exit 0.
    if review
        .cells
        .iter()
        .all(|c| c.verdict == crate::verify::Verdict::Undecided)
    {
        let n = review.cells.len();
        return Err(BadInput::file(
            results_files(paths),
            format!(
                "no recorded result could be compared with the predictions: the {n} {} they fall on {} undecided (the solver ran out of --budget {budget}; raise it)",
                crate::report::one_or_many(n, "cell", "cells"),
                crate::report::one_or_many(n, "was", "were"),
            ),
        ));
    }
    Ok(review)
}

pub struct CheckOptions {
    pub inputs: InputPaths,
    pub strict: bool,
    pub format: Format,
}

/// `check`: the data-quality report. Exit 0 when clean, 1 when problems were found.
pub fn check(o: &CheckOptions) -> Result<Output, BadInput> {
    let mut inputs = load(&o.inputs, o.strict)?;
    // The report names each problem's place; the other commands only count problems.
    inputs.place_deferred(o.inputs.progress.as_ref());
    let ledger = &inputs.ledger;
    // A registry with nothing usable holds no problem record, yet every planning command
    // refuses it: "no problems found" and exit 0 would pass it.
    let empty = registry_left_nothing(&inputs, &o.inputs);
    let empty = empty.map(|(files, noun, why)| {
        format!(
            "{files}: the registry has no usable {noun} ({why}): every command that plans refuses it"
        )
    });
    let mut out = Output::report(
        o.format,
        &text::check_report(ledger),
        |_| text::check_text(ledger, empty.as_deref()),
        !ledger.is_clean() || empty.is_some(),
    );
    if let (Some(line), Format::Json | Format::Yaml) = (&empty, o.format) {
        out.stderr.push(format!("note: {line}"));
    }
    Ok(out)
}

pub struct PlanCommand {
    pub inputs: InputPaths,
    pub strict: bool,
    pub plan: PlanOptions,
    /// Folder for matrix.yaml and matrix.json.
    pub out: Option<PathBuf>,
    pub format: Format,
    /// Shared blockers shown per image.
    pub blockers: usize,
    /// A plan cache: read when it exists, so unchanged cells are reused; written afterwards.
    pub cache: Option<PathBuf>,
    pub shard: Option<plan::replan::Shard>,
}

/// `plan`: the predicted matrix, written as YAML and JSON, and its summary.
pub fn plan(o: &PlanCommand) -> Result<Output> {
    // Checked before the inputs load: a registry-sized run would otherwise be thrown away.
    if o.shard.is_some() && o.out.is_none() {
        return Err(BadInput::file(
            "command line",
            "--shard needs --out DIR: a shard's matrix is only of use written down for `basefit merge`",
        )
        .into());
    }
    if let (Some(cache), Some(dir)) = (&o.cache, &o.out)
        && let Some((_, name)) = written_over([cache.as_path()], dir, &MATRIX_FILES)
    {
        return Err(BadInput::file(
            cache.display().to_string(),
            format!("--cache names the {name} that --out writes; give the cache a file of its own"),
        )
        .into());
    }
    if let Some(dir) = &o.out {
        refuse_writing_over_inputs(&o.inputs, MATRIX_FILES.map(|name| dir.join(name)))?;
    }
    if let Some(cache) = &o.cache
        && let Some((flag, input)) = input_at(&o.inputs, cache)
    {
        return Err(BadInput::file(
            cache.display().to_string(),
            format!(
                "--cache names {flag} {}, an input of this run, which the plan would overwrite; give the cache a file of its own",
                input.display()
            ),
        )
        .into());
    }
    let inputs = load(&o.inputs, o.strict)?;
    require_matrix_inputs(&inputs, &o.inputs, Planner::plans("plan"))?;
    let mut out = Output::default();
    let previous = match &o.cache {
        Some(p) if p.exists() => read_cache(p, &mut out)?,
        _ => None,
    };
    if let (Some(p), Some(cached)) = (&o.cache, &previous)
        && cached.matrix.shard != o.shard
    {
        let run = |shard: Option<plan::replan::Shard>| {
            shard.map_or("the whole plan".to_string(), |s| {
                format!("shard {}/{}", s.index, s.count)
            })
        };
        out.stderr.push(format!(
            "note: plan cache {} holds the cells of {}, this run plans {}: only cells both hold can be reused, and the cache is replaced; give each shard its own cache file",
            p.display(),
            run(cached.matrix.shard),
            run(o.shard)
        ));
    }
    let (mut cache, stats) = match &o.cache {
        Some(_) => plan::replan::replan(&inputs, &o.plan, previous, o.shard),
        None => plan::replan::plan_uncached(&inputs, &o.plan, o.shard),
    };
    stamp_inputs(&mut cache.matrix, &inputs);
    let matrix = &cache.matrix;
    if let Some(dir) = &o.out {
        let bar = o.plan.progress.as_ref();
        crate::load::spinning(bar, "writing matrix.yaml and matrix.json", || {
            write_matrix(matrix, dir, &mut out)
        })?;
    }
    if let Some(p) = &o.cache {
        if stats.previous_set_aside {
            out.stderr.push(format!(
                "plan cache {} was written by another version of basefit, or with another --budget, --no-native, --no-closures or catalog; planning from scratch",
                p.display()
            ));
        }
        crate::load::spinning(o.plan.progress.as_ref(), "writing the plan cache", || {
            report::write_atomic(p, cache.to_sealed_json().as_bytes())
        })?;
        out.stderr.push(format!(
            "plan cache {}: {} cells reused, {} solved",
            p.display(),
            stats.reused,
            stats.solved
        ));
    }
    // Each shard's run notes them too: a shard is a plan of its own for whoever reads its log.
    data_quality_note(&inputs, &mut out);
    if let Some(s) = o.shard {
        let (cells, total) = (
            matrix.cells.len(),
            matrix.packages.len() * matrix.images.len(),
        );
        let document = serde_json::json!({
            "shard": { "index": s.index, "count": s.count },
            "cells": cells,
            "total": total,
        });
        out.stdout = match o.format {
            Format::Json => report::to_json(&document),
            Format::Yaml => report::to_yaml(&document),
            Format::Table => format!(
                "shard {}/{}: {cells} of {total} cells planned; merge the shards with `basefit merge`\n",
                s.index, s.count
            ),
        };
        return Ok(out);
    }
    let summary = plan::summarise(matrix);
    let shared = blockers::shared_blockers(matrix, o.blockers);
    #[derive(serde::Serialize)]
    struct PlanReport<'a> {
        summary: &'a plan::matrix::Summary,
        shared_blockers: &'a [blockers::SharedBlocker],
    }
    let document = Noticed {
        notice: matrix.notice.clone(),
        report: &PlanReport {
            summary: &summary,
            shared_blockers: &shared,
        },
    };
    out.stdout = match o.format {
        Format::Json => report::to_json(&document),
        Format::Yaml => report::to_yaml(&document),
        Format::Table => report::visible(&text::plan_text(&summary, &shared)).into_owned(),
    };
    Ok(out)
}

/// A plan cache, or `None` (with a note) when another version of basefit wrote it: its
/// cells cannot be checked, so the plan starts from scratch and replaces it.
fn read_cache(
    path: &std::path::Path,
    out: &mut Output,
) -> Result<Option<plan::replan::PlanCache>, BadInput> {
    #[derive(serde::Deserialize)]
    struct Header {
        format: Option<u32>,
        global: Option<u64>,
    }
    let what = "basefit plan cache (delete it to plan from scratch)";
    let text = crate::load::diag::read_text(path)?;
    // One parse on the usual path: a registry-sized cache is tens of megabytes. Only when the
    // whole does not read is the header read alone, to tell another version's cache from a
    // damaged one.
    let whole: Result<plan::replan::PlanCache, BadInput> = parse_json(path, &text, what);
    if let Ok(cache) = &whole
        && cache.format == plan::replan::CACHE_FORMAT
    {
        // Well-formed JSON can still be damaged: a re-plan carries runs of unchanged packages
        // over unread, so they are checked here, once, at a fraction of the parse.
        cache.check().map_err(|e| {
            BadInput::file(path.display().to_string(), format!("not a {what}: {e}"))
        })?;
        if !plan::replan::PlanCache::seal_holds(&text) {
            return Err(BadInput::file(
                path.display().to_string(),
                format!(
                    "not a {what}: it was changed after basefit wrote it (its seal does not match what it holds)"
                ),
            ));
        }
        return whole.map(Some);
    }
    // Not this version's cache: it may be any file given by mistake, which deleting would
    // destroy.
    let what = "basefit plan cache (if it is a damaged one, delete it to plan from scratch; if it is another file, give --cache a path of its own)";
    let header: Header = parse_json(path, &text, what)?;
    match header {
        // This version's cache that does not read: damaged, reported where it breaks.
        Header {
            format: Some(plan::replan::CACHE_FORMAT),
            ..
        } => return whole.map(Some),
        // Every cache basefit ever wrote is one object with a `format` and a `global`
        // fingerprint. Anything else is some other file given as --cache by mistake (a
        // matrix.json, a settings file), which planning from scratch would overwrite.
        Header {
            format: Some(_),
            global: Some(_),
        } if text.trim_start().starts_with('{') => {}
        _ => {
            return Err(BadInput::file(
                path.display().to_string(),
                format!(
                    "not a {what}: it is no JSON object with the `format` and `global` fields every cache carries"
                ),
            ));
        }
    }
    out.stderr.push(format!(
        "plan cache {} was written by another version of basefit; planning from scratch",
        path.display()
    ));
    Ok(None)
}

/// Reads a JSON document basefit wrote, naming the file and line when it does not parse.
fn read_json<T: serde::de::DeserializeOwned>(
    path: &std::path::Path,
    what: &str,
) -> Result<T, BadInput> {
    parse_json(path, &crate::load::diag::read_text(path)?, what)
}

fn parse_json<T: serde::de::DeserializeOwned>(
    path: &std::path::Path,
    text: &str,
    what: &str,
) -> Result<T, BadInput> {
    serde_json::from_str(text).map_err(|e| {
        // basefit writes caches on one line: without the column a line says nothing there.
        let column = match e.column() {
            0 => String::new(),
            c => format!(" (column {c})"),
        };
        BadInput::parsed(
            path.display().to_string(),
            e.line(),
            e.column(),
            &format!("not a {what}: {e}{column}"),
        )
    })
}

pub struct MergeCommand {
    pub shards: Vec<PathBuf>,
    pub out: PathBuf,
    /// Spinners while the shards are read and the merged files written (a registry-wide
    /// sweep's shards hold gigabytes).
    pub progress: Option<indicatif::ProgressBar>,
}

/// `merge`: shard matrices into the matrix one run gives.
pub fn merge(o: &MergeCommand) -> Result<Output> {
    // Writing over a shard would leave a set that no longer merges: that shard would have to
    // be planned again.
    if let Some((shard, name)) =
        written_over(o.shards.iter().map(|p| p.as_path()), &o.out, &MATRIX_FILES)
    {
        return Err(BadInput::file(
            "command line",
            format!(
                "shard {} is the {name} that --out {} would write: merge into another folder",
                shard.display(),
                o.out.display()
            ),
        )
        .into());
    }
    let bar = o.progress.as_ref();
    let mut parts = Vec::new();
    for (k, p) in o.shards.iter().enumerate() {
        let what = format!("reading shard {} of {}", k + 1, o.shards.len());
        parts.push(crate::load::spinning(bar, &what, || read_shard(p))?);
    }
    let merged = plan::replan::merge_shards(parts).map_err(|e| {
        let file = match e.part.and_then(|k| o.shards.get(k)) {
            Some(path) => path.display().to_string(),
            None => match o.shards.len() {
                1 => "the shard file given".to_string(),
                n => format!("the {n} shard files given"),
            },
        };
        let this = e.part.and_then(|k| o.shards.get(k));
        let message = match e.other.and_then(|k| Some((k, o.shards.get(k)?))) {
            // Naming the same path again would read as two files.
            Some((_, path)) if this.is_some_and(|t| crate::load::diag::same_file(t, path)) => {
                format!("{} (the same file, given twice)", e.message)
            }
            Some((k, path)) => format!("{} (part {} is {})", e.message, k + 1, path.display()),
            None => e.message,
        };
        BadInput::file(file, message)
    })?;
    let mut out = Output::default();
    crate::load::spinning(bar, "writing matrix.yaml and matrix.json", || {
        write_matrix(&merged, &o.out, &mut out)
    })?;
    out.stdout = format!(
        "{} cells from {} shards\n",
        merged.cells.len(),
        o.shards.len()
    );
    Ok(out)
}

fn read_shard(path: &std::path::Path) -> Result<Matrix, BadInput> {
    let mut shard: Matrix = read_json(
        path,
        "basefit matrix in JSON (merge reads the matrix.json that `plan --shard` wrote)",
    )?;
    // Checked here, as `read_matrix` checks a whole matrix: the merged one must read back.
    shard
        .check_cells()
        .map_err(|e| BadInput::file(path.display().to_string(), e))?;
    shard.notice = plan::matrix::NOTICE.to_string();
    Ok(shard)
}

/// The files `plan --out` and `merge --out` write into their folder.
const MATRIX_FILES: [&str; 2] = ["matrix.yaml", "matrix.json"];

/// The first of `inputs` that is one of the files `names` a command writes into `dir`, with
/// that file's name: reading and writing the same file would destroy the input.
fn written_over<'a>(
    inputs: impl IntoIterator<Item = &'a std::path::Path>,
    dir: &std::path::Path,
    names: &[&'static str],
) -> Option<(&'a std::path::Path, &'static str)> {
    inputs.into_iter().find_map(|input| {
        let name = names
            .iter()
            .find(|name| crate::load::diag::same_file(input, &dir.join(name)))?;
        Some((input, *name))
    })
}

/// The input files of `paths`, each with the flag that names it.
fn input_files(paths: &InputPaths) -> Vec<(&'static str, &std::path::Path)> {
    let mut files: Vec<(&'static str, &std::path::Path)> = Vec::new();
    files.extend(paths.registry.iter().map(|p| ("--registry", p.as_path())));
    if let Some((versions, deps)) = &paths.bulk {
        files.extend([("--bulk", versions.as_path()), ("--bulk", deps.as_path())]);
    }
    files.extend(paths.images.iter().map(|p| ("--images", p.as_path())));
    files.extend(
        paths
            .priorities
            .iter()
            .map(|p| ("--priorities", p.as_path())),
    );
    files.extend(paths.results.iter().map(|p| ("--results", p.as_path())));
    files.extend(paths.catalog.iter().map(|p| ("--catalog", p.as_path())));
    files
}

/// The input of `paths` that `path` names, however spelled or linked, with its flag.
fn input_at<'p>(
    paths: &'p InputPaths,
    path: &std::path::Path,
) -> Option<(&'static str, &'p std::path::Path)> {
    input_files(paths)
        .into_iter()
        .find(|(_, input)| crate::load::diag::same_file(input, path))
}

/// Refuses a run that would write one of `outputs` (the files its `--out` writes) over an
/// input it reads: the input would be replaced by the output (`plan --images out/matrix.yaml
/// --out out` wrote the matrix over the images file, and exited 0).
fn refuse_writing_over_inputs(
    paths: &InputPaths,
    outputs: impl IntoIterator<Item = std::path::PathBuf>,
) -> Result<(), BadInput> {
    for output in outputs {
        if let Some((flag, input)) = input_at(paths, &output) {
            return Err(BadInput::file(
                "command line",
                format!(
                    "{flag} {} is the {} that --out {} would write: write into another folder",
                    input.display(),
                    output.file_name().unwrap_or_default().to_string_lossy(),
                    output.parent().unwrap_or(&output).display()
                ),
            ));
        }
    }
    Ok(())
}

/// Writes `matrix.yaml` and `matrix.json` into `dir`.
pub fn write_matrix(matrix: &Matrix, dir: &std::path::Path, out: &mut Output) -> Result<()> {
    let [yaml, json] = MATRIX_FILES.map(|name| dir.join(name));
    report::write_made_atomic(vec![
        (
            yaml.clone(),
            Box::new(|w: &mut dyn std::io::Write| report::write_matrix_yaml(matrix, w)),
        ),
        (
            json.clone(),
            Box::new(|w: &mut dyn std::io::Write| report::write_json(matrix, w)),
        ),
    ])?;
    out.stderr
        .push(format!("wrote {} and {}", yaml.display(), json.display()));
    Ok(())
}

pub struct ExplainCommand {
    pub inputs: InputPaths,
    pub strict: bool,
    pub plan: PlanOptions,
    pub package: String,
    pub image: String,
    pub format: Format,
}

/// `explain`: one cell in depth. Exit 1 when it does not install cleanly.
pub fn explain(o: &ExplainCommand) -> Result<Output> {
    let inputs = load(&o.inputs, o.strict)?;
    // The image is looked up among those given: without any, the lookup would blame the
    // image id on the command line rather than the flag or the file that left none.
    require_matrix_inputs(
        &inputs,
        &o.inputs,
        Planner::plans("explain").without_priorities(),
    )?;
    let e = plan::explain::explain(&inputs, &o.package, &o.image, &o.plan)?;
    let mut out = Output::report(
        o.format,
        &e,
        report::text::explain_text,
        plan::explain::needs_attention(e.cell.outcome),
    );
    data_quality_note(&inputs, &mut out);
    Ok(out)
}

/// Reads a matrix written by `plan` (YAML when its name ends in `.yaml` or `.yml`, in any
/// case, as priority lists and results choose their reader; JSON otherwise).
pub fn read_matrix(path: &std::path::Path) -> Result<Matrix, BadInput> {
    use crate::load::priorities::has_extension;
    let file = path.display().to_string();
    let text = crate::load::diag::read_text(path)?;
    let yaml = has_extension(path, "yaml") || has_extension(path, "yml");
    // The line goes into the error's own field, so the message reads `file:line:` as every
    // other input error does, not `file: ... line N` inside the text.
    let parsed: Result<Matrix, (usize, usize, String)> = if yaml {
        serde_yaml::from_str(&text).map_err(|e| {
            let (line, column) = e.location().map_or((0, 0), |l| (l.line(), l.column()));
            (line, column, e.to_string())
        })
    } else {
        serde_json::from_str(&text).map_err(|e| (e.line(), e.column(), e.to_string()))
    };
    let m = parsed.map_err(|(line, column, e)| {
        // serde_yaml places a control character at line 1 with a byte offset: name its line.
        // YAML 1.2, section 5.1: a stream holds tab, line breaks and printable characters
        // only (of the C1 block, only U+0085).
        let unprintable = |c: char| c.is_control() && !matches!(c, '\t' | '\n' | '\r' | '\u{85}');
        if yaml && let Some(at) = text.find(unprintable) {
            let line = text[..at].matches('\n').count() + 1;
            let c = text[at..].chars().next().unwrap_or_default();
            return BadInput::at(
                &file,
                line,
                format!(
                    "not a basefit matrix: control character U+{:04X}, which YAML allows only escaped in a double-quoted string",
                    c as u32
                ),
            );
        }
        let mut err = BadInput::parsed(&file, line, column, &format!("not a basefit matrix: {e}"));
        // The YAML parser reads a text without a final line break as if one followed, so an
        // error at its end would name a line after the last.
        if yaml {
            err.line = err
                .line
                .map(|l| l.min(crate::load::yaml::line_count(&text)));
        }
        err
    })?;
    m.check_layout().map_err(|e| BadInput::file(&file, e))?;
    // Every rendering carries this basefit's warning, whatever a file says in its place: an
    // edited or emptied notice must not leave JSON and YAML without one.
    Ok(Matrix {
        notice: plan::matrix::notice(m.native_skipped),
        ..m
    })
}

pub struct ReviewCommand {
    pub inputs: InputPaths,
    pub strict: bool,
    pub plan: PlanOptions,
    /// A matrix from an earlier `plan`; planned afresh when absent.
    pub matrix: Option<PathBuf>,
    pub max_surprises: usize,
    pub format: Format,
}

/// `review`: recorded results against predictions. Exit 1 when surprises exceed the limit.
pub fn review(o: &ReviewCommand) -> Result<Output> {
    let mut inputs = load(&o.inputs, o.strict)?;
    let results_read = inputs.ledger.tally(crate::load::diag::RecordKind::Result);
    if results_read.read == 0 {
        return Err(BadInput::file(
            results_files(&o.inputs),
            "holds no recorded install result: nothing to review",
        )
        .into());
    }
    let mut notes = Output::default();
    let matrix = match &o.matrix {
        Some(p) => {
            let matrix = read_matrix_for_results(p, &inputs, &o.inputs, "review", &mut notes)?;
            refuse_no_native_on_checked_matrix(&o.plan, &matrix, p)?;
            matrix
        }
        None => {
            // Results are read against the images only when images are given, so without
            // them every result would end up outside an empty matrix.
            require_matrix_inputs(
                &inputs,
                &o.inputs,
                Planner::plans_without_matrix("review").without_priorities(),
            )?;
            // Recorded packages outside the priority list are planned too, so no result is
            // left uncompared.
            let mut rows: std::collections::HashMap<String, usize> = inputs
                .priorities
                .entries
                .iter()
                .enumerate()
                .map(|(k, e)| (e.name.clone(), k))
                .collect();
            let mut added = Vec::new();
            for r in &inputs.results {
                if !rows.contains_key(&r.package) {
                    let rank = inputs.priorities.entries.len() + added.len() + 1;
                    rows.insert(r.package.clone(), rank - 1);
                    added.push(crate::model::Priority {
                        weight: 0.0,
                        ..crate::model::Priority::named(rank, &r.package, r.origin.clone())
                    });
                }
            }
            inputs.priorities.entries.extend(added);
            // Only the cells with results are read: planning the whole product would solve
            // every recorded package on every image.
            let columns: std::collections::HashMap<&str, usize> = inputs
                .images
                .images
                .iter()
                .enumerate()
                .map(|(k, i)| (i.id.as_str(), k))
                .collect();
            let wanted: std::collections::BTreeSet<usize> = inputs
                .results
                .iter()
                .filter_map(|r| {
                    Some(rows[&r.package] * columns.len() + columns.get(r.image.as_str())?)
                })
                .collect();
            plan::matrix::plan_only(&inputs, &o.plan, &wanted)
        }
    };
    let review = review_results(&matrix, &inputs, &o.inputs, o.plan.budget)?;
    let surprises = review.surprises();
    let undecided = review
        .cells
        .iter()
        .filter(|c| c.verdict == crate::verify::Verdict::Undecided)
        .count();
    // A result left out, set against no cell, or set against a cell the solver gave up on
    // could have been a surprise: the gate cannot pass without it.
    let mut out = Output::report(
        o.format,
        &Noticed {
            notice: plan::matrix::notice(matrix.native_skipped),
            report: &review,
        },
        |n| text::review_text(n.report),
        surprises > o.max_surprises
            || !review.results_left_out.is_empty()
            || !review.outside_matrix.is_empty()
            || undecided > 0,
    );
    out.stderr.append(&mut notes.stderr);
    data_quality_note(&inputs, &mut out);
    let remedy = if review.outside_matrix.len() == 1 {
        "it could have been a surprise, so the review exits 1; plan the matrix with its package and image, or review without --matrix, which plans it"
    } else {
        "any could have been a surprise, so the review exits 1; plan the matrix with those packages and images, or review without --matrix, which plans them"
    };
    outside_matrix_note(&review, remedy, &mut out);
    if undecided > 0 {
        out.stderr.push(format!(
            "note: {undecided} {} with recorded results {} undecided (the solver ran out of --budget), so {} not compared and the review exits 1; raise --budget",
            report::one_or_many(undecided, "cell", "cells"),
            report::one_or_many(undecided, "was", "were"),
            report::one_or_many(undecided, "it was", "they were"),
        ));
    }
    if let Some(path) = &o.matrix {
        packages_unchecked_note(&matrix, path, &mut out);
    }
    Ok(out)
}

pub struct DiffCommand {
    pub before: PathBuf,
    pub after: PathBuf,
    pub format: Format,
    /// Shown on a terminal only; reading and comparing large matrices takes seconds.
    pub progress: Option<indicatif::ProgressBar>,
}

/// `diff`: what changed between two matrices. Exit 1 when anything did, a cell or only what
/// the renderings show besides.
pub fn diff(o: &DiffCommand) -> Result<Output> {
    let d = crate::load::spinning(o.progress.as_ref(), "comparing the matrices", || {
        let a = read_matrix(&o.before)?;
        let b = read_matrix(&o.after)?;
        anyhow::Ok(crate::verify::diff::diff(&a, &b, report::markdown_keyed))
    })?;
    Ok(Output::report(o.format, &d, text::diff_text, d.any()))
}

pub struct SystemCommand {
    pub inputs: InputPaths,
    pub strict: bool,
    pub plan: PlanOptions,
    pub format: Format,
}

/// `syslibs`: native evidence per package, missing system packages per image with the weight
/// they unblock, and one install command per OS family. Exit 1 when anything is missing, or
/// when what an image lacks is unknown: a needed library maps to no system package, or the
/// solver ran out of budget on a cell.
pub fn system(o: &SystemCommand) -> Result<Output> {
    // Every figure of this report comes from the native step: without it each image would
    // read "nothing missing", and a CI gate on the exit code would pass.
    if !o.plan.native {
        return Err(BadInput::file(
            "command line",
            "syslibs reports native needs, which --no-native skips: drop --no-native",
        )
        .into());
    }
    let inputs = load(&o.inputs, o.strict)?;
    require_matrix_inputs(&inputs, &o.inputs, Planner::plans("syslibs"))?;
    let matrix = plan::plan(&inputs, &o.plan);
    let r = plan::system::system_report(&inputs, &matrix);
    // Undecided cells leave what the image lacks unknown, as an unmapped library does: a
    // gate must not pass the image.
    let any_missing = r
        .images
        .iter()
        .any(|i| i.lacks_anything() || !i.undecided.is_empty());
    let noticed = Noticed {
        notice: plan::matrix::NOTICE.to_string(),
        report: &r,
    };
    let mut out = Output::report(
        o.format,
        &noticed,
        |n| text::system_text(n.report),
        any_missing,
    );
    data_quality_note(&inputs, &mut out);
    Ok(out)
}

pub struct ImageplanCommand {
    pub inputs: InputPaths,
    pub strict: bool,
    pub plan: PlanOptions,
    /// Image ids to plan; empty means every declared image.
    pub images: Vec<String>,
    /// Candidate runtimes for coverage; empty means the declared images' runtimes.
    pub runtimes: Vec<semver::Version>,
    /// Share of priority weight a runtime must resolve to count as covering.
    pub target: f64,
    /// Folder for imageplan.yaml and coverage.svg.
    pub out: Option<PathBuf>,
    pub format: Format,
}

/// The document `imageplan` writes.
#[derive(Debug, serde::Serialize)]
pub struct ImagePlan {
    pub notice: String,
    /// Planned with `--no-native`: coverage and pre-install sets come from version solving
    /// alone, and there is no system-package section (it would say nothing is missing).
    pub native_skipped: bool,
    pub target: f64,
    pub coverage: Vec<plan::coverage::Coverage>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub system: Option<plan::system::SystemReport>,
    pub preinstall: Vec<plan::preinstall::Preinstall>,
}

/// Builds the image plan for the selected images: runtime coverage per base image,
/// system-package advice and the pre-install set of each image.
pub fn build_imageplan(mut inputs: Inputs, o: &ImageplanCommand) -> Result<ImagePlan, BadInput> {
    if !(0.0..=1.0).contains(&o.target) {
        return Err(BadInput::file(
            "command line",
            format!("--target {} must be between 0 and 1", o.target),
        ));
    }
    // `--target=-0` is zero; adding zero drops the sign the documents would print.
    let target = o.target + 0.0;
    let mut selected = Vec::new();
    for id in &o.images {
        let img = inputs.image_from_command_line(id, &format!("--image {id}"))?;
        if !selected
            .iter()
            .any(|s: &crate::model::Image| s.id == img.id)
        {
            selected.push(img.clone());
        }
    }
    if o.images.is_empty() {
        selected = inputs.images.images.clone();
    }
    let runtimes = if o.runtimes.is_empty() {
        plan::coverage::declared_runtimes(&inputs)
    } else {
        o.runtimes.clone()
    };
    // Every step below reads the selected images only; the system report walks all images of
    // its inputs, so the inputs are narrowed in place (a copy would double the registry).
    inputs.images.images = selected;
    let inputs = &inputs;
    let selected = &inputs.images.images;
    let sets = crate::solve::SetCache::default();
    if let Some(pb) = &o.plan.progress {
        let template = "{pos}/{len} cells at candidate runtimes, {rate}, eta {eta} {wide_bar}";
        crate::load::start_bar(pb, 0, template);
    }
    let coverage = plan::coverage::default_bases(selected)
        .into_iter()
        .map(|base| plan::coverage::coverage(inputs, base, &runtimes, target, &o.plan, &sets))
        .collect();
    let system = o.plan.native.then(|| {
        let matrix = plan::plan(inputs, &o.plan);
        plan::system::system_report(inputs, &matrix)
    });
    if let Some(pb) = &o.plan.progress {
        let entries = (inputs.priorities.entries.len() * selected.len()) as u64;
        let template =
            "{pos}/{len} entries tried for pre-install sets, {rate}, eta {eta} {wide_bar}";
        crate::load::start_bar(pb, entries, template);
    }
    // Images do not depend on each other; `collect` keeps their order.
    let preinstall = {
        use rayon::prelude::*;
        selected
            .par_iter()
            .map(|img| plan::preinstall::preinstall(inputs, img, &o.plan, &sets))
            .collect()
    };
    if let Some(pb) = &o.plan.progress {
        pb.finish_and_clear();
    }
    Ok(ImagePlan {
        notice: plan::matrix::notice(!o.plan.native),
        native_skipped: !o.plan.native,
        target,
        coverage,
        system,
        preinstall,
    })
}

/// Notes `--runtimes` values that are one runtime by precedence (`1.4` and `1.4.0`, or
/// `1.4.0+b1` and `1.4.0`: build metadata does not count, Semantic Versioning 2.0.0, section
/// 10): coverage shows one row for them, and a row gone without a word reads as a lost input.
fn runtimes_merged_note(given: &[semver::Version], out: &mut Output) {
    let mut sorted = given.to_vec();
    sorted.sort();
    for group in sorted.chunk_by(|a, b| a.cmp_precedence(b).is_eq()) {
        if let [first, ..] = group
            && group.len() > 1
        {
            let mut shown: Vec<String> = group.iter().map(|v| v.to_string()).collect();
            shown.dedup();
            out.stderr.push(match shown.as_slice() {
                [one] => format!(
                    "note: --runtimes names {one} {} times (a missing part counts as 0): coverage shows it once",
                    group.len()
                ),
                _ => format!(
                    "note: --runtimes {} are one runtime by precedence (build metadata aside; a missing part counts as 0): coverage shows it once, as {first}",
                    shown.join(", ")
                ),
            });
        }
    }
}

/// `imageplan`: coverage by runtime, system packages and pre-install sets per image, written
/// as `imageplan.yaml` and `coverage.svg` with `--out`.
pub fn imageplan(o: &ImageplanCommand) -> Result<Output> {
    // The files whose names do not depend on the plan are checked before it is computed, which
    // on a registry dump takes a while; the charts of further base images after it.
    if let Some(dir) = &o.out {
        refuse_writing_over_inputs(
            &o.inputs,
            ["imageplan.yaml", "coverage.svg"].map(|name| dir.join(name)),
        )?;
    }
    let inputs = load(&o.inputs, o.strict)?;
    require_matrix_inputs(&inputs, &o.inputs, Planner::plans("imageplan"))?;
    let mut out = Output::default();
    data_quality_note(&inputs, &mut out);
    let p = build_imageplan(inputs, o)?;
    runtimes_merged_note(&o.runtimes, &mut out);
    if let Some(dir) = &o.out {
        let mut files = vec![(dir.join("imageplan.yaml"), report::to_yaml(&p).into_bytes())];
        // One chart per base image; the first keeps the plain name the docs promise. Ids that
        // make the same file name (`arm:3.2` and `arm/3.2`) get a number each after the first,
        // so no chart overwrites another.
        let mut taken = std::collections::HashSet::new();
        for (i, c) in p.coverage.iter().enumerate() {
            let stem = if i == 0 {
                "coverage".to_string()
            } else {
                format!("coverage-{}", sanitize(&c.base_image))
            };
            let name = (1..)
                .map(|k| match k {
                    1 => format!("{stem}.svg"),
                    k => format!("{stem}-{k}.svg"),
                })
                .find(|name| taken.insert(name.clone()))
                .expect("some number is free");
            files.push((dir.join(name), plan::coverage::coverage_svg(c).into_bytes()));
        }
        refuse_writing_over_inputs(&o.inputs, files.iter().map(|(path, _)| path.clone()))?;
        report::write_all_atomic(&files)?;
        for (path, _) in &files {
            out.stderr.push(format!("wrote {}", path.display()));
        }
    }
    match o.format {
        Format::Json => {
            out.stdout = report::to_json(&p);
            return Ok(out);
        }
        Format::Yaml => {
            out.stdout = report::to_yaml(&p);
            return Ok(out);
        }
        Format::Table => {}
    }
    let mut s = String::new();
    if p.native_skipped {
        s.push_str(plan::matrix::NATIVE_SKIPPED_NOTICE);
        s.push_str("\n\n");
    }
    for c in &p.coverage {
        s.push_str(&plan::coverage::coverage_text(c));
        s.push('\n');
    }
    match &p.system {
        Some(system) => s.push_str(&text::system_body(system)),
        None => s.push_str("system packages per image: not checked (--no-native)\n"),
    }
    s.push('\n');
    for pre in &p.preinstall {
        s.push_str(&plan::preinstall::preinstall_text(pre));
        s.push('\n');
    }
    // Last, after the manifests readers copy into an image build (a `--no-native` plan says
    // so at the top already).
    s.push_str(plan::matrix::NOTICE);
    s.push('\n');
    out.stdout = report::visible(&s).into_owned();
    Ok(out)
}

/// A file-name-safe form of an image id.
fn sanitize(id: &str) -> String {
    id.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '.' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

/// The files `render --out` writes, in the order of their bodies there.
const RENDERED_FILES: [&str; 5] = [
    "matrix.html",
    "matrix.md",
    "matrix.csv",
    "matrix.json",
    "matrix.yaml",
];

pub struct RenderCommand {
    pub inputs: InputPaths,
    pub strict: bool,
    pub plan: PlanOptions,
    /// Render this matrix (from `plan`) instead of planning afresh.
    pub matrix: Option<PathBuf>,
    /// Folder for matrix.html, matrix.md, matrix.csv, matrix.json and matrix.yaml.
    pub out: Option<PathBuf>,
    /// Without `out`: the one format printed to stdout.
    pub format: MatrixFormat,
}

/// `render`: the support matrix as an HTML page, a Markdown table, CSV, JSON and YAML; with
/// recorded results, each cell also shows how its installs compare.
pub fn render(o: &RenderCommand) -> Result<Output> {
    // Rendering over the matrix read would replace the plan's matrix with an annotated one.
    if let (Some(matrix), Some(dir)) = (&o.matrix, &o.out)
        && let Some((_, name)) = written_over([matrix.as_path()], dir, &RENDERED_FILES)
    {
        return Err(BadInput::file(
            "command line",
            format!(
                "--matrix {} is the {name} that --out {} would write: render into another folder",
                matrix.display(),
                dir.display()
            ),
        )
        .into());
    }
    if let Some(dir) = &o.out {
        refuse_writing_over_inputs(&o.inputs, RENDERED_FILES.map(|name| dir.join(name)))?;
    }
    let inputs = load(&o.inputs, o.strict)?;
    let mut out = Output::default();
    let mut matrix = match &o.matrix {
        Some(p) => {
            let matrix = if o.inputs.results.is_empty() {
                read_matrix(p)?
            } else {
                read_matrix_for_results(p, &inputs, &o.inputs, "render", &mut out)?
            };
            refuse_no_native_on_checked_matrix(&o.plan, &matrix, p)?;
            matrix
        }
        None => {
            require_matrix_inputs(&inputs, &o.inputs, Planner::plans_without_matrix("render"))?;
            let mut matrix = plan::plan(&inputs, &o.plan);
            stamp_inputs(&mut matrix, &inputs);
            matrix
        }
    };
    // Results given but none usable are refused as in `review`, not rendered as a matrix
    // without recorded installs.
    if !o.inputs.results.is_empty() {
        let review = review_results(&matrix, &inputs, &o.inputs, o.plan.budget)?;
        let earlier = matrix.cells.iter().filter(|c| c.recorded.is_some()).count();
        if let (Some(path), 1..) = (&o.matrix, earlier) {
            out.stderr.push(format!(
                "note: {} carried recorded results for {earlier} {} from an earlier rendering; they are replaced by those of --results",
                path.display(),
                report::one_or_many(earlier, "cell", "cells")
            ));
        }
        crate::verify::annotate(&mut matrix, &review);
        // The page counts what it shows: a result left out at loading could have been a
        // surprise, and nothing on the page would say it was ever recorded.
        if !review.results_left_out.is_empty() {
            out.stderr.push(format!(
                "note: {} recorded {} left out at loading and {} not shown (`basefit check` lists why; `review` exits 1 for them):\n  {}",
                review.results_left_out.len(),
                if review.results_left_out.len() == 1 { "result was" } else { "results were" },
                if review.results_left_out.len() == 1 { "is" } else { "are" },
                review.results_left_out.join("\n  ")
            ));
        }
        outside_matrix_note(
            &review,
            "the support matrix shows the priority list's packages only (`review` compares them all)",
            &mut out,
        );
        if let Some(path) = &o.matrix {
            packages_unchecked_note(&matrix, path, &mut out);
        }
    }
    data_quality_note(&inputs, &mut out);
    match &o.out {
        Some(dir) => {
            let m = &matrix;
            let makers: [report::Made<'_>; 5] = [
                report::made_text(|| report::html(m)),
                report::made_text(|| report::markdown(m)),
                report::made_text(|| report::csv(m)),
                Box::new(|w: &mut dyn std::io::Write| report::write_json(m, w)),
                Box::new(|w: &mut dyn std::io::Write| report::write_matrix_yaml(m, w)),
            ];
            let paths: Vec<PathBuf> = RENDERED_FILES.iter().map(|n| dir.join(n)).collect();
            let files = paths.iter().cloned().zip(makers).collect();
            // Each file is made just before it is written, so the five are never in memory
            // together.
            let sizes = crate::load::spinning(o.plan.progress.as_ref(), "rendering", || {
                report::write_made_atomic(files)
            })?;
            for (path, size) in paths.iter().zip(sizes) {
                out.stdout.push_str(&format!("{}\n", path.display()));
                if path.extension().is_some_and(|e| e == "html") {
                    let shown = path.display().to_string();
                    out.stderr.extend(report::html::large_page_note(
                        &shown,
                        size,
                        "matrix.md or matrix.csv",
                    ));
                }
            }
        }
        None => {
            out.stdout = match o.format {
                MatrixFormat::Html => {
                    let page = report::html(&matrix);
                    out.stderr.extend(report::html::large_page_note(
                        "the page",
                        page.len(),
                        "--format markdown or csv",
                    ));
                    page
                }
                MatrixFormat::Csv => report::csv(&matrix),
                MatrixFormat::Json => report::to_json(&matrix),
                MatrixFormat::Yaml => report::matrix_yaml(&matrix),
                MatrixFormat::Markdown => report::markdown(&matrix),
            }
        }
    }
    Ok(out)
}

pub struct FuseCommand {
    pub sources: Vec<PathBuf>,
    pub method: plan::fusion::Method,
    pub missing: plan::fusion::Missing,
    pub window: Option<plan::fusion::Window>,
    /// File for the priority list; stdout when absent.
    pub out: Option<PathBuf>,
    /// Shown on a terminal only; sources of millions of rows take seconds.
    pub progress: Option<indicatif::ProgressBar>,
}

/// `fuse`: one priority list (basefit's YAML format) from several ranked or scored lists.
pub fn fuse(o: &FuseCommand) -> Result<Output> {
    crate::load::spinning(o.progress.as_ref(), "fusing the source lists", || {
        fuse_lists(o)
    })
}

fn fuse_lists(o: &FuseCommand) -> Result<Output> {
    crate::load::diag::refuse_repeated(
        &o.sources,
        "--source",
        "the same list would be fused with itself, counting its ranks twice",
    )?;
    if let Some(out) = &o.out {
        if let Some(source) = o
            .sources
            .iter()
            .find(|s| crate::load::diag::same_file(s, out))
        {
            return Err(BadInput::file(
                "command line",
                format!(
                    "--out {} is the source list {}: writing the fused list would destroy it",
                    out.display(),
                    source.display()
                ),
            )
            .into());
        }
        // Priority lists are read by their extension: a YAML list under a CSV name would be
        // refused by the `plan` it was made for.
        if crate::load::priorities::has_extension(out, "csv") {
            return Err(BadInput::file(
                "command line",
                format!(
                    "--out {}: fuse writes a YAML priority list, which `plan --priorities` would read as CSV by its name: name it .yaml",
                    out.display()
                ),
            )
            .into());
        }
    }
    let mut ledger = crate::load::Ledger::default();
    let mut lists = Vec::new();
    // Sources left with no row, each with why: they take no part in the fusion.
    let mut emptied: Vec<(String, String)> = Vec::new();
    for p in &o.sources {
        let before = ledger.problems.len();
        let list = plan::fusion::read_source_csv_within(p, o.window, &mut ledger)?;
        if list.is_empty() {
            let outside = ledger.problems[before..]
                .iter()
                .filter(|p| p.kind == crate::load::diag::ProblemKind::OutsideWindow)
                .count();
            let why = match o.window {
                Some(w) if outside > 0 => {
                    format!("no usable row inside --window {}..{}", w.from, w.to)
                }
                _ => "no usable row".to_string(),
            };
            emptied.push((list.file().to_string(), why));
        }
        lists.push(list);
    }
    if lists.iter().all(|l| l.is_empty()) {
        // Nothing is left to fuse; an empty list is no priority list (the priority reader
        // refuses one), and writing it would pass the problems off as a result.
        let files: Vec<String> = emptied.iter().map(|(f, _)| f.clone()).collect();
        let whys: Vec<String> = emptied.iter().map(|(f, w)| format!("{f}: {w}")).collect();
        let first = ledger
            .problems
            .first()
            .map(|p| format!(": first, {}: {}: {}", p.origin, p.subject, p.detail))
            .unwrap_or_default();
        return Err(BadInput::file(
            files.join(", "),
            format!(
                "no source has a row to fuse ({}; {} problems noted){first}",
                whys.join("; "),
                ledger.problems.len()
            ),
        )
        .into());
    }
    let fused = plan::fusion::fuse(&lists, o.method, o.missing).map_err(|e| match &e {
        plan::fusion::FuseError::NotScored {
            file,
            line: Some(line),
            ..
        } => BadInput::at(file, *line, e.message()),
        plan::fusion::FuseError::NotScored { file, .. } => BadInput::file(file, e.message()),
        plan::fusion::FuseError::BadConstant { .. } => BadInput::file("command line", e.message()),
    })?;
    let yaml =
        plan::fusion::to_priority_yaml_leaving_out(&fused, o.method, o.missing, &lists, &emptied);
    let mut out = Output::default();
    // Each line says what became of its row: a date that cannot be read is the same text
    // whether the row was left out (under --window) or only noted (without one).
    for p in &ledger.problems {
        let fate = if p.left_out {
            "row left out"
        } else {
            "noted; the row is used"
        };
        out.stderr.push(format!(
            "{}: {}: {} ({fate})",
            p.origin, p.subject, p.detail
        ));
    }
    for (file, why) in &emptied {
        out.stderr.push(format!(
            "warning: {file}: {why}, so this source is left out of the fusion (it would count every name as absent from it and change every weight)"
        ));
    }
    match &o.out {
        Some(path) => {
            report::write_atomic(path, yaml.as_bytes())?;
            out.stderr.push(format!(
                "wrote {} ({} packages)",
                path.display(),
                fused.len()
            ));
        }
        None => out.stdout = yaml,
    }
    // An emptied source had rows (a file with none is refused), each left out and noted, so
    // the ledger is not clean then either; the test keeps the exit honest if that changes.
    out.exit = if ledger.is_clean() && emptied.is_empty() {
        exit::OK
    } else {
        exit::FOUND
    };
    Ok(out)
}
