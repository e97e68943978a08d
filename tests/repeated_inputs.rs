//! A file given twice to a repeatable flag is refused rather than read twice: recorded
//! results would each become a retry of themselves, and a fused list would count one
//! source's ranks twice.

mod common;

use std::path::Path;

/// A copy of `file` in a fresh folder, with the folder, so that the test can name the copy
/// both plainly and as `./NAME` from inside that folder.
fn copy_into_temp(file: &str, name: &str) -> (tempfile::TempDir, std::path::PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let path = common::write(dir.path(), name, std::fs::read(file).unwrap());
    (dir, path)
}

/// Runs `basefit` in `dir` with `args`; returns (exit code, stderr).
fn run_in(dir: &Path, args: &[String]) -> (i32, String) {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_basefit"))
        .current_dir(dir)
        .args(args)
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
    assert!(!stderr.contains("panicked"), "panic: {stderr}");
    (out.status.code().unwrap_or(-1), stderr)
}

fn absolute(path: &str) -> String {
    std::fs::canonicalize(path).unwrap().display().to_string()
}

#[test]
fn the_same_results_file_twice_is_refused() {
    let (dir, _) = copy_into_temp("demo-data/results.yaml", "r.yaml");
    let inputs = [
        "--registry".to_string(),
        absolute("demo-data/registry.yaml"),
        "--images".into(),
        absolute("matrices/demo-images.yaml"),
        "--priorities".into(),
        absolute("demo-data/priorities.yaml"),
    ];
    for command in ["review", "render", "check"] {
        // The same file under two spellings.
        let mut args = vec![command.to_string()];
        args.extend(inputs.iter().cloned());
        args.extend(["--results", "r.yaml", "--results", "./r.yaml"].map(String::from));
        let (code, err) = run_in(dir.path(), &args);
        assert_eq!(code, 2, "{command}: {err}");
        assert!(
            err.contains("./r.yaml: given twice as --results (first as r.yaml)"),
            "{command}: {err}"
        );
        // Once is fine.
        let mut args = vec![command.to_string()];
        args.extend(inputs.iter().cloned());
        args.extend(["--results", "r.yaml"].map(String::from));
        let (code, err) = run_in(dir.path(), &args);
        assert_ne!(code, 2, "{command}: {err}");
    }
}

#[test]
fn the_same_fuse_source_twice_is_refused() {
    let (dir, _) = copy_into_temp("demo-data/sources/downloads.csv", "downloads.csv");
    let usage = absolute("demo-data/sources/usage.csv");
    let args = |sources: &[&str]| {
        let mut args = vec!["fuse".to_string()];
        for s in sources {
            args.extend(["--source".to_string(), s.to_string()]);
        }
        args
    };
    let (code, err) = run_in(
        dir.path(),
        &args(&["downloads.csv", &usage, "./downloads.csv"]),
    );
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("./downloads.csv: given twice as --source (first as downloads.csv)"),
        "{err}"
    );
    let (code, err) = run_in(dir.path(), &args(&["downloads.csv", &usage]));
    assert_ne!(code, 2, "{err}");
}

/// A hard link and a symbolic link share no spelling with the file they name, yet read it:
/// both are refused as the file given twice. A path that does not open is left to the reader,
/// which says it cannot read it, rather than called a repeat.
#[cfg(unix)]
#[test]
fn links_to_one_results_file_are_that_file() {
    let (dir, _) = copy_into_temp("demo-data/results.yaml", "r.yaml");
    std::fs::hard_link(dir.path().join("r.yaml"), dir.path().join("hard.yaml")).unwrap();
    std::os::unix::fs::symlink("r.yaml", dir.path().join("soft.yaml")).unwrap();
    let check = |a: &str, b: &str| {
        let mut args = vec!["check".to_string()];
        args.extend(
            [
                "--registry",
                &absolute("demo-data/registry.yaml"),
                "--results",
                a,
                "--results",
                b,
            ]
            .map(String::from),
        );
        run_in(dir.path(), &args)
    };
    for link in ["hard.yaml", "soft.yaml"] {
        let (code, err) = check("r.yaml", link);
        assert_eq!(code, 2, "{link}: {err}");
        assert!(
            err.contains(&format!(
                "{link}: given twice as --results (first as r.yaml)"
            )),
            "{link}: {err}"
        );
    }
    let (code, err) = check("gone.yaml", "gone.yaml");
    assert_eq!(code, 2, "{err}");
    assert!(
        !err.contains("given twice") && err.contains("gone.yaml"),
        "{err}"
    );
}
