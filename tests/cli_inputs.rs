//! Malformed inputs through the real command line: exit code 2 (or a reported problem where
//! the rest of the file is usable), a message naming the file and line, and never a panic.

mod common;

use std::path::{Path, PathBuf};
use std::process::Command;

const GOOD_IMAGES: &str =
    "images:\n  - {id: plain, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n";
const GOOD_REGISTRY: &str =
    "packages:\n  - name: fernwood\n    versions:\n      - {version: 1.0.0}\n";

fn dir() -> tempfile::TempDir {
    tempfile::tempdir().unwrap()
}

fn write(dir: &Path, name: &str, content: &[u8]) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, content).unwrap();
    p
}

/// Runs `basefit check` and returns (exit code, stderr, stdout).
fn check(registry: &Path, images: &Path) -> (i32, String, String) {
    let (code, stdout, stderr) = common::run_basefit([
        "check".as_ref(),
        "--registry".as_ref(),
        registry.as_os_str(),
        "--images".as_ref(),
        images.as_os_str(),
    ]);
    (code, stderr, stdout)
}

fn assert_bad(registry_text: &[u8], want_line: Option<usize>, want_words: &[&str]) {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", registry_text);
    let img = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    let (code, stderr, _) = check(&reg, &img);
    assert_eq!(code, 2, "stderr: {stderr}");
    let location = match want_line {
        Some(l) => format!("registry.yaml:{l}:"),
        None => "registry.yaml".to_string(),
    };
    assert!(stderr.contains(&location), "wanted {location} in {stderr}");
    for w in want_words {
        assert!(stderr.contains(w), "wanted {w:?} in {stderr}");
    }
}

#[test]
fn bad_yaml_syntax() {
    assert_bad(
        b"packages:\n  - name: [unclosed\n",
        Some(3),
        &["not valid YAML"],
    );
}

#[test]
fn wrong_type() {
    assert_bad(
        b"packages:\n  - name: fernwood\n    versions: 12\n",
        Some(3),
        &["expected a list"],
    );
}

#[test]
fn unknown_field_suggests_closest() {
    assert_bad(
        b"packages:\n  - name: fernwood\n    versions:\n      - version: 1.0.0\n        dependz: []\n",
        Some(5),
        &["unknown field `dependz`", "did you mean `depends`"],
    );
}

#[test]
fn missing_required_field() {
    assert_bad(
        b"packages:\n  - name: fernwood\n    versions:\n      - released: 2024-01-01\n",
        Some(4),
        &["missing required field `version`"],
    );
}

#[test]
fn empty_file() {
    assert_bad(b"", None, &["empty"]);
}

#[test]
fn binary_garbage() {
    let mut garbage = vec![0u8, 159, 146, 150, 255, 10, 1, 2, 3];
    garbage.extend_from_slice(&[0xc3, 0x28, 0xa0, 0xa1]);
    assert_bad(&garbage, Some(1), &["not UTF-8"]);
}

#[test]
fn alias_expansion_bomb() {
    let mut text = String::from("a0: &a0 [x, x, x, x, x, x, x, x, x, x]\n");
    for i in 1..12 {
        let p = i - 1;
        text.push_str(&format!(
            "a{i}: &a{i} [*a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}]\n"
        ));
    }
    text.push_str("packages: *a11\n");
    assert_bad(text.as_bytes(), None, &["alias-expansion"]);
}

#[test]
fn unreadable_version_is_reported_and_the_rest_used() {
    let d = dir();
    let reg = write(
        d.path(),
        "registry.yaml",
        b"packages:\n  - name: fernwood\n    versions:\n      - {version: 1.0.0}\n      - {version: nightly-build}\n",
    );
    let img = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    let (code, stderr, stdout) = check(&reg, &img);
    assert_eq!(code, 1, "problems found gives exit 1; stderr: {stderr}");
    assert!(stdout.contains("registry.yaml:5"), "{stdout}");
    assert!(stdout.contains("fernwood@nightly-build"), "{stdout}");
    // version records: 2 read, 1 used, 1 left out.
    let line = stdout
        .lines()
        .find(|l| l.starts_with("version records"))
        .unwrap();
    let nums: Vec<&str> = line.split_whitespace().skip(2).collect();
    assert_eq!(nums, ["2", "1", "1"], "{line}");
}

#[test]
fn strict_turns_problems_into_failure() {
    let d = dir();
    let reg = write(
        d.path(),
        "registry.yaml",
        b"packages:\n  - name: fernwood\n    versions:\n      - {version: v1.0}\n",
    );
    let img = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    let out = Command::new(env!("CARGO_BIN_EXE_basefit"))
        .args(["check", "--strict", "--registry"])
        .arg(&reg)
        .arg("--images")
        .arg(&img)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("registry.yaml:4:") && stderr.contains("--strict"),
        "{stderr}"
    );
}

#[test]
fn clean_inputs_exit_zero_and_json_is_parseable() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    let (code, stderr, _) = check(&reg, &img);
    assert_eq!(code, 0, "{stderr}");
    let out = Command::new(env!("CARGO_BIN_EXE_basefit"))
        .args(["check", "--format", "json", "--registry"])
        .arg(&reg)
        .arg("--images")
        .arg(&img)
        .output()
        .unwrap();
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["clean"], serde_json::Value::Bool(true));
}

#[test]
fn image_errors_name_file_and_line() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(
        d.path(),
        "images.yaml",
        b"images:\n  - {id: x, runtime: 3.0.0, family: gentoo, platform: linux/glibc/x86_64}\n",
    );
    let (code, stderr, _) = check(&reg, &img);
    assert_eq!(code, 2);
    assert!(
        stderr.contains("images.yaml:2:") && stderr.contains("expected debian, alpine or rhel"),
        "{stderr}"
    );
}

#[test]
fn image_with_unknown_base_is_reported_not_dropped() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(
        d.path(),
        "images.yaml",
        format!("{GOOD_IMAGES}  - {{id: child, extends: nobody}}\n  - {{id: a, extends: b}}\n  - {{id: b, extends: a}}\n").as_bytes(),
    );
    let (code, _, stdout) = check(&reg, &img);
    assert_eq!(code, 1);
    assert!(stdout.contains("extends `nobody`"), "{stdout}");
    assert!(stdout.contains("cycle"), "{stdout}");
    let line = stdout
        .lines()
        .find(|l| l.starts_with("image records"))
        .unwrap();
    let nums: Vec<&str> = line.split_whitespace().skip(2).collect();
    assert_eq!(nums, ["4", "1", "3"], "{line}");
}

#[test]
fn results_malformed_inputs() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    let run = |name: &str, text: &str| {
        let res = write(d.path(), name, text.as_bytes());
        let out = Command::new(env!("CARGO_BIN_EXE_basefit"))
            .args(["check", "--registry"])
            .arg(&reg)
            .arg("--images")
            .arg(&img)
            .arg("--results")
            .arg(&res)
            .output()
            .unwrap();
        (
            out.status.code().unwrap_or(-1),
            String::from_utf8_lossy(&out.stdout).into_owned(),
            String::from_utf8_lossy(&out.stderr).into_owned(),
        )
    };
    // An unknown outcome value is reported and left out, not dropped silently.
    let (code, stdout, _) = run(
        "r1.yaml",
        "results:\n  - {package: fernwood, image: plain, outcome: exploded}\n",
    );
    assert_eq!(code, 1);
    assert!(
        stdout.contains("r1.yaml:2") && stdout.contains("expected installed or failed"),
        "{stdout}"
    );
    // Missing columns in CSV: unusable file.
    let (code, _, stderr) = run("r2.csv", "package,outcome\nfernwood,installed\n");
    assert_eq!(code, 2);
    assert!(
        stderr.contains("r2.csv:1:") && stderr.contains("missing required column `image`"),
        "{stderr}"
    );
    // A log path that does not exist: reported, the result kept.
    let (code, stdout, _) = run(
        "r3.jsonl",
        "{\"package\":\"fernwood\",\"image\":\"plain\",\"outcome\":\"failed\",\"log_file\":\"nope.log\"}\n",
    );
    assert_eq!(code, 1);
    assert!(
        stdout.contains("r3.jsonl:1") && stdout.contains("nope.log"),
        "{stdout}"
    );
    let line = stdout
        .lines()
        .find(|l| l.starts_with("recorded results"))
        .unwrap();
    let nums: Vec<&str> = line.split_whitespace().skip(2).collect();
    assert_eq!(nums, ["1", "1", "0"], "{line}");
    // Unknown image and package: reported.
    let (_, stdout, _) = run(
        "r4.csv",
        "package,image,outcome\nfernwood,ghost-image,installed\nghost-pkg,plain,failed\n",
    );
    assert!(
        stdout.contains("ghost-image") && stdout.contains("ghost-pkg"),
        "{stdout}"
    );
}

/// `--quiet` belongs to the input flags, so every command that reads inputs takes it; off a
/// terminal no bar is drawn either way, so stderr holds only what the command reports.
#[test]
fn every_input_reading_command_takes_quiet() {
    let d = dir();
    let versions = write(
        d.path(),
        "versions.csv",
        b"package,version\nfernwood,1.0.0\n",
    );
    let deps = write(d.path(), "deps.csv", b"package,version,dependency\n");
    let images = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    for quiet in [false, true] {
        let mut command = Command::new(env!("CARGO_BIN_EXE_basefit"));
        command
            .args(["check", "--bulk"])
            .args([&versions, &deps])
            .arg("--images")
            .arg(&images);
        if quiet {
            command.arg("--quiet");
        }
        let out = command.output().unwrap();
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(0), "stderr: {stderr}");
        assert!(
            !stderr.contains("registry"),
            "a bar off a terminal: {stderr}"
        );
    }
    // Every other command that reads inputs lists the flag; those that read none do not.
    for (command, takes_quiet) in [
        ("plan", true),
        ("explain", true),
        ("review", true),
        ("syslibs", true),
        ("imageplan", true),
        ("render", true),
        ("diff", false),
        ("merge", false),
        ("fuse", false),
    ] {
        let out = Command::new(env!("CARGO_BIN_EXE_basefit"))
            .args([command, "--help"])
            .output()
            .unwrap();
        let help = String::from_utf8_lossy(&out.stdout);
        assert_eq!(out.status.code(), Some(0), "{command} --help");
        assert_eq!(help.contains("--quiet"), takes_quiet, "{command}: {help}");
    }
}

/// Each image extends the next one declared, so the first image's chain is the whole file.
/// Resolving bases recursively overflowed the stack at 10,000 images (about 5,000 in a debug
/// build), and its cycle check scanned the path at every step.
#[test]
fn long_extends_chain_resolves() {
    const N: usize = 10_000;
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let mut text = String::from("images:\n");
    for i in 0..N {
        text.push_str(&format!("  - {{id: c{i}, extends: c{}}}\n", i + 1));
    }
    text.push_str(&format!(
        "  - {{id: c{N}, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64, packages: [zlib]}}\n"
    ));
    let img = write(d.path(), "images.yaml", text.as_bytes());
    let (code, stderr, stdout) = check(&reg, &img);
    assert_eq!(code, 0, "{stderr}{stdout}");
    let line = stdout
        .lines()
        .find(|l| l.starts_with("image records"))
        .unwrap();
    let nums: Vec<&str> = line.split_whitespace().skip(2).collect();
    let all = (N + 1).to_string();
    assert_eq!(nums, [all.as_str(), all.as_str(), "0"], "{line}");
}
