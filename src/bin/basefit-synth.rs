//! Writes a deterministic synthetic registry: `DIR/versions.csv` and `DIR/dependencies.csv`
//! in the bulk format, or `DIR/registry.yaml` with `--yaml`.

use basefit::synth::{SynthOptions, SynthSummary, write_bulk, write_yaml};
use clap::Parser;
use std::fs::File;
use std::io::BufWriter;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

/// Generate a synthetic registry for load tests (the defaults are the full benchmark scale).
#[derive(Parser)]
#[command(name = "basefit-synth", version)]
struct Args {
    /// Seed: the same seed and sizes give byte-identical files.
    #[arg(long, default_value_t = 1)]
    seed: u64,
    /// Number of packages.
    #[arg(long, default_value_t = 200_000)]
    packages: usize,
    /// Number of version records.
    #[arg(long, default_value_t = 1_500_000)]
    versions: usize,
    /// Number of dependency records.
    #[arg(long, default_value_t = 6_000_000)]
    edges: usize,
    /// Output directory (created when missing).
    #[arg(long)]
    out: PathBuf,
    /// Write `registry.yaml` instead of the CSV pair (meant for small sizes).
    #[arg(long)]
    yaml: bool,
}

fn create(path: &Path) -> Result<BufWriter<File>, String> {
    File::create(path)
        .map(|f| BufWriter::with_capacity(1 << 20, f))
        .map_err(|e| format!("{}: cannot write: {e}", path.display()))
}

fn run(args: &Args) -> Result<SynthSummary, String> {
    let opts = SynthOptions {
        seed: args.seed,
        packages: args.packages,
        versions: args.versions,
        edges: args.edges,
        ..SynthOptions::default()
    };
    std::fs::create_dir_all(&args.out)
        .map_err(|e| format!("{}: cannot create: {e}", args.out.display()))?;
    if args.yaml {
        let path = args.out.join("registry.yaml");
        write_yaml(&opts, create(&path)?).map_err(|e| format!("{}: {e}", path.display()))
    } else {
        let versions = args.out.join("versions.csv");
        let deps = args.out.join("dependencies.csv");
        write_bulk(&opts, create(&versions)?, create(&deps)?)
            .map_err(|e| format!("{}: {e}", args.out.display()))
    }
}

fn main() -> ExitCode {
    let args = Args::parse();
    match run(&args) {
        Ok(s) => {
            println!(
                "wrote {} packages, {} versions ({} normalisable, {} unreadable, {} pre-releases, \
                 {} yanked, {} native), {} dependencies ({} of unreadable versions)",
                s.packages,
                s.versions,
                s.normalised,
                s.unreadable,
                s.prereleases,
                s.yanked,
                s.native,
                s.dependencies,
                s.unreadable_dependencies
            );
            // Sizes the shape cannot hold are lowered, not refused: say so, so a benchmark
            // is not read as run at the size asked for.
            for (what, asked, written, why) in [
                (
                    "packages",
                    args.packages as u64,
                    s.packages,
                    "a package has at least one version",
                ),
                (
                    "versions",
                    args.versions as u64,
                    s.versions,
                    "a version belongs to a package, and none was asked for",
                ),
                (
                    "dependencies",
                    args.edges as u64,
                    s.dependencies,
                    "no more fit the shape it generates (a version depends on another package at most once, and not on every package)",
                ),
            ] {
                if written < asked {
                    eprintln!("note: {written} {what} written of {asked} asked for: {why}");
                }
            }
            ExitCode::SUCCESS
        }
        Err(e) => {
            eprintln!("basefit-synth: {e}");
            ExitCode::from(2)
        }
    }
}
