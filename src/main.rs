//! The `basefit` command: parses arguments and dispatches to one library call per command.

use basefit::commands::{self, Output, exit};
use basefit::load::{BadInput, InputPaths};
use basefit::plan::PlanOptions;
use basefit::report::{Format, MatrixFormat};
use clap::{Args, Parser, Subcommand};
use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

#[derive(Parser)]
#[command(
    name = "basefit",
    version,
    about = "Plan and verify which packages install on which runtime images"
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Load every input and print the data-quality report.
    #[command(
        after_help = "Example:\n  basefit check --registry demo-data/registry.yaml --images matrices/demo-images.yaml \\\n    --priorities demo-data/priorities.yaml --results demo-data/results.yaml"
    )]
    Check(CheckArgs),
    /// Solve every priority entry on every image and print a summary; --out writes the matrix.
    #[command(
        after_help = "Example:\n  basefit plan --registry demo-data/registry.yaml --images matrices/demo-images.yaml \\\n    --priorities demo-data/priorities.yaml --out out/"
    )]
    Plan(PlanArgs),
    /// Explain one package on one image: its resolved tree, or why it fails and what would help.
    #[command(
        after_help = "Example:\n  basefit explain saltbush deb-2.4 --registry demo-data/registry.yaml \\\n    --images matrices/demo-images.yaml --priorities demo-data/priorities.yaml"
    )]
    Explain(ExplainArgs),
    /// Compare recorded install results with the predictions: surprises first.
    #[command(
        after_help = "Example:\n  basefit review --registry demo-data/registry.yaml --images matrices/demo-images.yaml \\\n    --priorities demo-data/priorities.yaml --results demo-data/results.yaml --max-surprises 0"
    )]
    Review(ReviewArgs),
    /// Compare two matrices written by `plan`: changed cells and a unified diff.
    #[command(
        after_help = "Example (each matrix from `basefit plan ... --out DIR`):\n  basefit plan --registry demo-data/registry.yaml --images matrices/demo-images.yaml \\\n    --priorities demo-data/priorities.yaml --out before/\n  basefit plan --registry demo-data/registry.yaml --images matrices/demo-images.yaml \\\n    --priorities demo-data/priorities.yaml --no-native --out after/\n  basefit diff before/matrix.json after/matrix.json"
    )]
    Diff(DiffArgs),
    /// Native system libraries: evidence per package, what each image lacks, install commands.
    #[command(
        after_help = "Example:\n  basefit syslibs --registry demo-data/registry.yaml --images matrices/demo-images.yaml \\\n    --priorities demo-data/priorities.yaml"
    )]
    Syslibs(SyslibsArgs),
    /// Combine shard matrices (from `plan --shard K/N --out DIR`) into the whole matrix.
    #[command(
        after_help = "Example (the shards from `basefit plan ... --shard K/N --out DIR`):\n  basefit plan --registry demo-data/registry.yaml --images matrices/demo-images.yaml \\\n    --priorities demo-data/priorities.yaml --shard 1/2 --out shard1/\n  basefit plan --registry demo-data/registry.yaml --images matrices/demo-images.yaml \\\n    --priorities demo-data/priorities.yaml --shard 2/2 --out shard2/\n  basefit merge --out out/ shard1/matrix.json shard2/matrix.json"
    )]
    Merge(MergeArgs),
    /// Render the support matrix: HTML page, Markdown table, CSV, JSON and YAML.
    #[command(
        after_help = "Example:\n  basefit render --registry demo-data/registry.yaml --images matrices/demo-images.yaml \\\n    --priorities demo-data/priorities.yaml --results demo-data/results.yaml --out out/"
    )]
    Render(RenderArgs),
    /// Build a priority list from several ranked or scored source lists (CSV).
    #[command(
        after_help = "Example:\n  basefit fuse --source demo-data/sources/downloads.csv --source demo-data/sources/usage.csv \\\n    --method reciprocal --out priorities.yaml"
    )]
    Fuse(FuseArgs),
    /// Plan images: runtime coverage, system-package advice and a pre-install set per image.
    #[command(
        after_help = "Example:\n  basefit imageplan --registry demo-data/registry.yaml --images matrices/demo-images.yaml \\\n    --priorities demo-data/priorities.yaml --image deb-2.4 --runtimes 2.8.1,3.1.2 \\\n    --target 0.95 --out out/"
    )]
    Imageplan(ImageplanArgs),
}

#[derive(Args, Clone)]
struct InputArgs {
    /// Registry snapshot in YAML (repeatable).
    #[arg(long, value_name = "FILE")]
    registry: Vec<PathBuf>,
    /// Bulk registry as two CSV files: versions, then dependencies.
    #[arg(long, num_args = 2, value_names = ["VERSIONS_CSV", "DEPS_CSV"])]
    bulk: Option<Vec<PathBuf>>,
    /// Runtime images (YAML).
    #[arg(long, value_name = "FILE")]
    images: Option<PathBuf>,
    /// Priority list (YAML, or CSV by extension).
    #[arg(long, value_name = "FILE")]
    priorities: Option<PathBuf>,
    /// System-library catalog file applied over the shipped one.
    #[arg(long, value_name = "FILE")]
    catalog: Option<PathBuf>,
    /// Treat every data-quality problem as unusable input (exit 2).
    #[arg(long)]
    strict: bool,
    /// No progress bars.
    #[arg(long)]
    quiet: bool,
}

impl InputArgs {
    fn paths(&self, results: &[PathBuf]) -> InputPaths {
        InputPaths {
            registry: self.registry.clone(),
            bulk: self.bulk.as_ref().map(|b| (b[0].clone(), b[1].clone())),
            images: self.images.clone(),
            priorities: self.priorities.clone(),
            results: results.to_vec(),
            catalog: self.catalog.clone(),
            progress: progress_bar(self.quiet),
        }
    }
}

#[derive(Args)]
struct SolveArgs {
    /// Solver steps per cell before it is reported undecided (at least 1).
    #[arg(long, default_value_t = basefit::solve::DEFAULT_BUDGET,
          value_parser = clap::value_parser!(u64).range(1..))]
    budget: u64,
    /// Skip the native-library step (predictions from version solving only; syslibs, which
    /// reports that step, refuses it).
    #[arg(long)]
    no_native: bool,
    /// Worker threads (default: all cores). Output is identical at any count.
    #[arg(long)]
    threads: Option<usize>,
}

impl SolveArgs {
    fn options(&self, quiet: bool) -> PlanOptions {
        PlanOptions {
            budget: self.budget,
            native: !self.no_native,
            closures: true,
            progress: progress_bar(quiet),
        }
    }
}

#[derive(Args)]
struct CheckArgs {
    #[command(flatten)]
    input: InputArgs,
    /// Recorded install results to check too (YAML, CSV or JSON lines; repeatable).
    #[arg(long, value_name = "FILE")]
    results: Vec<PathBuf>,
    #[arg(long, value_enum, default_value = "table")]
    format: Format,
}

#[derive(Args)]
struct PlanArgs {
    #[command(flatten)]
    input: InputArgs,
    #[command(flatten)]
    solve: SolveArgs,
    /// Folder to write matrix.yaml and matrix.json into.
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    /// Shared blockers listed per image.
    #[arg(long, default_value_t = 3)]
    blockers: usize,
    /// Plan cache file: unchanged cells of the previous plan are reused, then it is rewritten.
    #[arg(long, value_name = "FILE")]
    cache: Option<PathBuf>,
    /// Plan only shard K of N (cells with index % N == K-1); merge shards with `merge`.
    #[arg(long, value_name = "K/N", value_parser = basefit::plan::replan::Shard::parse)]
    shard: Option<basefit::plan::replan::Shard>,
    /// Leave each cell's resolved closure out of the matrix (its size is kept): on a sweep
    /// over a whole registry the closures take most of the memory and of the files.
    #[arg(long)]
    no_closures: bool,
    #[arg(long, value_enum, default_value = "table")]
    format: Format,
}

#[derive(Args)]
struct ExplainArgs {
    /// Package name.
    package: String,
    /// Image id.
    image: String,
    #[command(flatten)]
    input: InputArgs,
    #[command(flatten)]
    solve: SolveArgs,
    #[arg(long, value_enum, default_value = "table")]
    format: Format,
}

#[derive(Args)]
struct ReviewArgs {
    #[command(flatten)]
    input: InputArgs,
    #[command(flatten)]
    solve: SolveArgs,
    /// Recorded install results (YAML, CSV or JSON lines; repeatable).
    #[arg(long, value_name = "FILE", required = true)]
    results: Vec<PathBuf>,
    /// Compare against this matrix (from `plan`) instead of planning afresh; still give the
    /// images and registry it was planned from, since results are read against them.
    #[arg(long, value_name = "FILE")]
    matrix: Option<PathBuf>,
    /// Exit 1 when there are more surprises than this.
    #[arg(long, default_value_t = 0)]
    max_surprises: usize,
    #[arg(long, value_enum, default_value = "table")]
    format: Format,
}

#[derive(Args)]
struct DiffArgs {
    /// The earlier matrix (JSON or YAML).
    before: PathBuf,
    /// The later matrix.
    after: PathBuf,
    #[arg(long, value_enum, default_value = "table")]
    format: Format,
    /// No progress spinner.
    #[arg(long)]
    quiet: bool,
}

fn run_review(a: ReviewArgs) -> anyhow::Result<Output> {
    with_threads(a.solve.threads, || {
        commands::review(&commands::ReviewCommand {
            inputs: a.input.paths(&a.results),
            strict: a.input.strict,
            plan: a.solve.options(a.input.quiet),
            matrix: a.matrix.clone(),
            max_surprises: a.max_surprises,
            format: a.format,
        })
    })
}

fn run_diff(a: DiffArgs) -> anyhow::Result<Output> {
    commands::diff(&commands::DiffCommand {
        before: a.before,
        after: a.after,
        format: a.format,
        progress: progress_bar(a.quiet),
    })
}

#[derive(Args)]
struct SyslibsArgs {
    #[command(flatten)]
    input: InputArgs,
    #[command(flatten)]
    solve: SolveArgs,
    #[arg(long, value_enum, default_value = "table")]
    format: Format,
}

fn run_syslibs(a: SyslibsArgs) -> anyhow::Result<Output> {
    with_threads(a.solve.threads, || {
        commands::system(&commands::SystemCommand {
            inputs: a.input.paths(&[]),
            strict: a.input.strict,
            plan: a.solve.options(a.input.quiet),
            format: a.format,
        })
    })
}

#[derive(Args)]
struct MergeArgs {
    /// Shard matrices (matrix.json of each shard run).
    #[arg(required = true)]
    shards: Vec<PathBuf>,
    /// Folder for the merged matrix.yaml and matrix.json.
    #[arg(long, value_name = "DIR")]
    out: PathBuf,
    /// No progress spinner.
    #[arg(long)]
    quiet: bool,
}

fn run_merge(a: MergeArgs) -> anyhow::Result<Output> {
    commands::merge(&commands::MergeCommand {
        shards: a.shards,
        out: a.out,
        progress: progress_bar(a.quiet),
    })
}

#[derive(Args)]
struct ImageplanArgs {
    #[command(flatten)]
    input: InputArgs,
    #[command(flatten)]
    solve: SolveArgs,
    /// Image id to plan (repeatable; default: every image).
    #[arg(long = "image", value_name = "ID")]
    image: Vec<String>,
    /// Candidate runtime versions for coverage, comma-separated (default: the images' runtimes).
    #[arg(long, value_delimiter = ',', value_name = "VERSIONS", value_parser = basefit::load::lenient::runtime_arg)]
    runtimes: Vec<semver::Version>,
    /// Share of priority weight a runtime must resolve, between 0 and 1.
    #[arg(long, default_value_t = 0.95)]
    target: f64,
    /// Folder to write imageplan.yaml and coverage.svg into (coverage-ID.svg for each further
    /// base image).
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    #[arg(long, value_enum, default_value = "table")]
    format: Format,
}

fn run_imageplan(a: ImageplanArgs) -> anyhow::Result<Output> {
    with_threads(a.solve.threads, || {
        commands::imageplan(&commands::ImageplanCommand {
            inputs: a.input.paths(&[]),
            strict: a.input.strict,
            plan: a.solve.options(a.input.quiet),
            images: a.image.clone(),
            runtimes: a.runtimes.clone(),
            target: a.target,
            out: a.out.clone(),
            format: a.format,
        })
    })
}

#[derive(Args)]
struct RenderArgs {
    #[command(flatten)]
    input: InputArgs,
    #[command(flatten)]
    solve: SolveArgs,
    /// Recorded install results to show in the cells (repeatable).
    #[arg(long, value_name = "FILE")]
    results: Vec<PathBuf>,
    /// Render this matrix (from `plan`) instead of planning afresh.
    #[arg(long, value_name = "FILE")]
    matrix: Option<PathBuf>,
    /// Folder for matrix.html, matrix.md, matrix.csv, matrix.json and matrix.yaml; their paths
    /// are printed.
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    /// Without --out: the format printed to stdout.
    #[arg(long, value_enum, default_value = "markdown")]
    format: MatrixFormat,
}

fn run_render(a: RenderArgs) -> anyhow::Result<Output> {
    with_threads(a.solve.threads, || {
        commands::render(&commands::RenderCommand {
            inputs: a.input.paths(&a.results),
            strict: a.input.strict,
            plan: a.solve.options(a.input.quiet),
            matrix: a.matrix.clone(),
            out: a.out.clone(),
            format: a.format,
        })
    })
}

#[derive(Clone, Copy, clap::ValueEnum)]
enum FuseMethod {
    /// Sum of ranks, lowest first (with --missing exclude, the mean over the lists holding it).
    RankSum,
    /// Borda count.
    Borda,
    /// Reciprocal rank fusion (see --k).
    Reciprocal,
    /// Sum of each list's score shares.
    ShareSum,
}

#[derive(Clone, Copy, clap::ValueEnum)]
enum FuseMissing {
    /// A package absent from a list ranks just behind its last entry.
    WorstPlusOne,
    /// A package is scored only on the lists that hold it.
    Exclude,
}

#[derive(Args)]
struct FuseArgs {
    /// Source list CSV with columns name and rank and/or score (and date); repeatable.
    #[arg(long = "source", value_name = "FILE", required = true)]
    sources: Vec<PathBuf>,
    #[arg(long, value_enum, default_value = "reciprocal")]
    method: FuseMethod,
    /// The reciprocal rank fusion constant (default 60); only `--method reciprocal` has one.
    #[arg(long, allow_negative_numbers = true)]
    k: Option<f64>,
    #[arg(long, value_enum, default_value = "worst-plus-one")]
    missing: FuseMissing,
    /// Only rows dated within FROM..TO (YYYY-MM-DD..YYYY-MM-DD, both included).
    #[arg(long, value_name = "FROM..TO", value_parser = basefit::plan::fusion::Window::parse)]
    window: Option<basefit::plan::fusion::Window>,
    /// File for the priority list (default: stdout).
    #[arg(long, value_name = "FILE")]
    out: Option<PathBuf>,
    /// No progress spinner.
    #[arg(long)]
    quiet: bool,
}

fn run_fuse(a: FuseArgs) -> anyhow::Result<Output> {
    use basefit::plan::fusion::{Method, Missing};
    if a.k.is_some() && !matches!(a.method, FuseMethod::Reciprocal) {
        // A constant the method has no use for would otherwise be dropped without a word.
        use clap::CommandFactory;
        let mut cli = Cli::command();
        cli.build();
        cli.find_subcommand_mut("fuse")
            .expect("fuse is a subcommand")
            .error(
                clap::error::ErrorKind::ArgumentConflict,
                "--k is the constant of --method reciprocal; the method chosen has none",
            )
            .exit();
    }
    commands::fuse(&commands::FuseCommand {
        sources: a.sources,
        method: match a.method {
            FuseMethod::RankSum => Method::RankSum,
            FuseMethod::Borda => Method::Borda,
            FuseMethod::Reciprocal => Method::Reciprocal {
                k: a.k.unwrap_or(60.0),
            },
            FuseMethod::ShareSum => Method::ShareSum,
        },
        missing: match a.missing {
            FuseMissing::WorstPlusOne => Missing::WorstPlusOne,
            FuseMissing::Exclude => Missing::Exclude,
        },
        window: a.window,
        out: a.out,
        progress: progress_bar(a.quiet),
    })
}

fn run_check(a: CheckArgs) -> anyhow::Result<Output> {
    Ok(commands::check(&commands::CheckOptions {
        inputs: a.input.paths(&a.results),
        strict: a.input.strict,
        format: a.format,
    })?)
}

fn run_plan(a: PlanArgs) -> anyhow::Result<Output> {
    with_threads(a.solve.threads, || {
        commands::plan(&commands::PlanCommand {
            inputs: a.input.paths(&[]),
            strict: a.input.strict,
            plan: PlanOptions {
                closures: !a.no_closures,
                ..a.solve.options(a.input.quiet)
            },
            out: a.out.clone(),
            format: a.format,
            blockers: a.blockers,
            cache: a.cache.clone(),
            shard: a.shard,
        })
    })
}

fn run_explain(a: ExplainArgs) -> anyhow::Result<Output> {
    commands::explain(&commands::ExplainCommand {
        inputs: a.input.paths(&[]),
        strict: a.input.strict,
        plan: a.solve.options(a.input.quiet),
        package: a.package,
        image: a.image,
        format: a.format,
    })
}

/// A progress bar on stderr, only when stderr is a terminal and `--quiet` is not given; the
/// step that uses it sets its style.
fn progress_bar(quiet: bool) -> Option<indicatif::ProgressBar> {
    use std::io::IsTerminal;
    if quiet || !std::io::stderr().is_terminal() {
        return None;
    }
    Some(indicatif::ProgressBar::new(0))
}

/// Runs `f` on a rayon pool of `threads` workers (the global pool when not given).
fn with_threads<T: Send>(
    threads: Option<usize>,
    f: impl FnOnce() -> anyhow::Result<T> + Send,
) -> anyhow::Result<T> {
    match threads {
        None => f(),
        Some(n) => rayon::ThreadPoolBuilder::new()
            .num_threads(n.max(1))
            .build()?
            .install(f),
    }
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Check(a) => run_check(a),
        Command::Plan(a) => run_plan(a),
        Command::Explain(a) => run_explain(a),
        Command::Review(a) => run_review(a),
        Command::Diff(a) => run_diff(a),
        Command::Syslibs(a) => run_syslibs(a),
        Command::Merge(a) => run_merge(a),
        Command::Render(a) => run_render(a),
        Command::Fuse(a) => run_fuse(a),
        Command::Imageplan(a) => run_imageplan(a),
    };
    match result {
        Ok(out) => {
            for line in &out.stderr {
                eprintln!("{}", basefit::report::visible(line));
            }
            let mut stdout = std::io::stdout().lock();
            // A closed pipe (e.g. `| head`) ends the run quietly.
            let written = stdout
                .write_all(out.stdout.as_bytes())
                .and_then(|_| stdout.flush());
            if let Err(e) = written
                && e.kind() != std::io::ErrorKind::BrokenPipe
            {
                eprintln!("basefit: cannot write output: {e}");
                return ExitCode::from(exit::BAD_INPUT);
            }
            ExitCode::from(out.exit)
        }
        Err(e) => {
            // Messages quote input files, which may hold anything.
            let message = match e.downcast_ref::<BadInput>() {
                Some(bad) => bad.to_string(),
                None => format!("{e:#}"),
            };
            eprintln!("basefit: {}", basefit::report::visible(&message));
            ExitCode::from(exit::BAD_INPUT)
        }
    }
}
