//! Loads a bulk registry dump and prints what was counted and how long it took:
//! `cargo run --release --example load_bulk -- DIR/versions.csv DIR/dependencies.csv`.

use std::path::Path;
use std::process::ExitCode;
use std::time::Instant;

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let [versions, deps] = args.as_slice() else {
        eprintln!("usage: load_bulk VERSIONS.csv DEPENDENCIES.csv");
        return ExitCode::from(2);
    };
    let started = Instant::now();
    match basefit::load::read_bulk(Path::new(versions), Path::new(deps)) {
        Ok((registry, ledger)) => {
            let elapsed = started.elapsed();
            for (kind, t) in &ledger.tallies {
                println!(
                    "{:<22} read {:>9}  used {:>9}  left out {:>7}",
                    kind.label(),
                    t.read,
                    t.used,
                    t.left_out
                );
            }
            for (kind, problems) in ledger.by_kind() {
                println!("{:>9}  {}", problems.len(), kind.label());
            }
            println!(
                "{} packages, {} releases, {} requirements; loaded in {:.2} s",
                registry.packages.len(),
                registry.release_count(),
                registry.requirements.len(),
                elapsed.as_secs_f64()
            );
            ExitCode::SUCCESS
        }
        Err(e) => {
            eprintln!("{e}");
            ExitCode::from(2)
        }
    }
}
