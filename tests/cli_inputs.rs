//! Malformed inputs through the real command line: exit code 2 (or a reported problem where
//! the rest of the file is usable), a message naming the file and line, and never a panic.

mod common;
use common::write;

use std::path::{Path, PathBuf};
use std::process::Command;

const GOOD_IMAGES: &str =
    "images:\n  - {id: plain, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n";
const GOOD_REGISTRY: &str =
    "packages:\n  - name: fernwood\n    versions:\n      - {version: 1.0.0}\n";

fn dir() -> tempfile::TempDir {
    tempfile::tempdir().unwrap()
}

/// The counts on the row for `kind` ("version records", "image records", ...) of the table
/// `check` prints: read, used, left out.
fn record_counts(stdout: &str, kind: &str) -> Vec<String> {
    let line = stdout
        .lines()
        .find(|l| l.starts_with(kind))
        .unwrap_or_else(|| panic!("no `{kind}` row in {stdout}"));
    line[kind.len()..]
        .split_whitespace()
        .map(str::to_string)
        .collect()
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

/// `check` on `registry` and `images`: asserts it found problems (exit 1), that its report
/// holds each of `wants`, and, when given, the (read, used, left out) counts of one kind of
/// record; returns the report.
fn assert_check_finds(
    registry: &Path,
    images: &Path,
    wants: &[&str],
    counts: Option<(&str, [&str; 3])>,
) -> String {
    let (code, stderr, stdout) = check(registry, images);
    assert_eq!(code, 1, "problems found gives exit 1; stderr: {stderr}");
    for want in wants {
        assert!(stdout.contains(want), "wanted {want} in {stdout}");
    }
    if let Some((kind, want)) = counts {
        assert_eq!(record_counts(&stdout, kind), want, "{kind}: {stdout}");
    }
    stdout
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
    // version records: 2 read, 1 used, 1 left out.
    assert_check_finds(
        &reg,
        &img,
        &["registry.yaml:5", "fernwood@nightly-build"],
        Some(("version records", ["2", "1", "1"])),
    );
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
        b"images:\n  - {id: x, runtime: 3.0.0, family: [debian], platform: linux/glibc/x86_64}\n",
    );
    let (code, stderr, _) = check(&reg, &img);
    assert_eq!(code, 2);
    assert!(
        stderr.contains("images.yaml:2:") && stderr.contains("family"),
        "{stderr}"
    );
}

/// An unknown image family leaves out that image, at the line of the family and with the
/// families accepted, and the images built on it as other left-out bases do; the rest of the
/// file is used, as with an unreadable platform. It used to be a schema error that made the
/// whole images file unusable.
#[test]
fn unknown_image_family_leaves_out_only_that_image() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(
        d.path(),
        "images.yaml",
        concat!(
            "images:\n",
            "  - {id: plain, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n",
            "  - id: odd\n",
            "    runtime: 3.1.0\n",
            "    platform: linux/glibc/x86_64\n",
            "    family: gentoo\n",
            "  - id: heir\n",
            "    extends: odd\n",
            "    runtime: 3.2.0\n",
            "  - {id: fixed, extends: odd, family: alpine, platform: linux/musl/x86_64}\n",
        )
        .as_bytes(),
    );
    assert_check_finds(
        &reg,
        &img,
        &[
            "images.yaml:6  odd: family `gentoo`: expected debian, alpine or rhel",
            "images.yaml:8  heir: its base `odd` cannot be built: family `gentoo`: expected debian, alpine or rhel",
            "images.yaml:10  fixed: its base `odd` cannot be built: family `gentoo`",
            "images that cannot be built (left out) (bad-image): 3",
        ],
        Some(("image records", ["4", "1", "3"])),
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
    assert_eq!(
        record_counts(&stdout, "image records"),
        ["4", "1", "3"],
        "{stdout}"
    );
}

/// An image runtime that is not strict semver is listed by `check` as a registry version read
/// the same way is (text and JSON), at the line it is written on and only there: an image
/// that extends it inherits the version read.
#[test]
fn normalised_image_runtime_is_listed_where_written() {
    let d = dir();
    let img = write(
        d.path(),
        "images.yaml",
        concat!(
            "images:\n",
            "  - id: base\n",
            "    family: debian\n",
            "    platform: linux/glibc/x86_64\n",
            "    runtime: \"3.1\"\n",
            "  - {id: slim, extends: base}\n",
        )
        .as_bytes(),
    );
    let (code, stdout, stderr) = check_with(d.path(), &[("--images", &img)]);
    assert_eq!(code, 1, "a note is a problem found; stderr: {stderr}");
    assert!(
        stdout.contains("versions normalised to semver (normalised-version): 1"),
        "{stdout}"
    );
    assert!(
        stdout.contains(
            "images.yaml:5  base: runtime `3.1` read as 3.1.0 (missing components filled with 0)"
        ),
        "{stdout}"
    );
    assert_eq!(
        record_counts(&stdout, "image records"),
        ["2", "2", "0"],
        "both used: {stdout}"
    );

    let (code, stdout, stderr) = common::run_basefit([
        "check".as_ref(),
        "--format".as_ref(),
        "json".as_ref(),
        "--images".as_ref(),
        img.as_os_str(),
    ]);
    assert_eq!(code, 1, "{stderr}");
    let v: serde_json::Value = serde_json::from_str(&stdout).unwrap();
    let groups = v["problems"].as_array().unwrap();
    assert_eq!(groups.len(), 1, "{stdout}");
    assert_eq!(groups[0]["kind"], "normalised-version");
    assert_eq!(groups[0]["left_out"], 0);
    let items = groups[0]["items"].as_array().unwrap();
    assert_eq!(items.len(), 1, "{stdout}");
    assert_eq!(items[0]["subject"], "base");
    assert_eq!(items[0]["origin"]["line"], 5);
    assert!(
        items[0]["origin"]["file"]
            .as_str()
            .unwrap()
            .ends_with("images.yaml"),
        "{stdout}"
    );
    assert_eq!(items[0]["left_out"], false);
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
    assert_eq!(
        record_counts(&stdout, "recorded results"),
        ["1", "1", "0"],
        "{stdout}"
    );
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
    // Every other command lists the flag too (merge as well: its shards can hold gigabytes,
    // and a script that quiets every call must not fail on it).
    for (command, takes_quiet) in [
        ("plan", true),
        ("explain", true),
        ("review", true),
        ("syslibs", true),
        ("imageplan", true),
        ("render", true),
        ("diff", true),
        ("merge", true),
        ("fuse", true),
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

/// A bulk registry with an unknown dependency (row 6 of `deps.csv`) and a requirement no
/// version meets (row 5), beside good images and a priority list: (versions, deps, images,
/// priorities).
fn bulk_with_dependency_problems(d: &Path) -> (PathBuf, PathBuf, PathBuf, PathBuf) {
    let versions = write(
        d,
        "versions.csv",
        b"package,version\npkg-a,1.0.0\npkg-b,2.0.0\npkg-c,0.3.0\n",
    );
    let deps = write(
        d,
        "deps.csv",
        b"package,version,dependency,req\n\
          pkg-b,2.0.0,pkg-c,^0.3\n\
          pkg-a,1.0.0,pkg-b,^2\n\
          \n\
          pkg-a,1.0.0,pkg-c,^0.4\n\
          pkg-a,1.0.0,pkg-gone,*\n",
    );
    let images = write(d, "images.yaml", GOOD_IMAGES.as_bytes());
    let priorities = write(d, "priorities.yaml", b"priorities:\n  - name: pkg-a\n");
    (versions, deps, images, priorities)
}

/// A bulk dependency on a name the versions file never declares, and a requirement no
/// version meets, are reported at the dependency's row (not the first row of the file, nor
/// its version's row), as YAML reports them at the dependency's line.
#[test]
fn bulk_dependency_problems_name_the_dependency_row() {
    let d = dir();
    let (versions, deps, images, _) = bulk_with_dependency_problems(d.path());
    let (code, stdout, stderr) = common::run_basefit([
        "check".as_ref(),
        "--bulk".as_ref(),
        versions.as_os_str(),
        deps.as_os_str(),
        "--images".as_ref(),
        images.as_os_str(),
    ]);
    assert_eq!(code, 1, "{stderr}");
    let deps = deps.display();
    for want in [
        format!(
            "  {deps}:5  pkg-a@1.0.0: requires pkg-c ^0.4, which no published version satisfies"
        ),
        format!("  {deps}:6  pkg-a@1.0.0: depends on `pkg-gone`, which the registry does not have"),
    ] {
        assert!(stdout.lines().any(|l| l == want), "{want}\n{stdout}");
    }
}

/// `--strict` names the first problem by place, so it names the dependency's row too; without
/// `--strict` a plan only counts the problems, the same two.
#[test]
fn bulk_dependency_problems_name_the_dependency_row_under_strict() {
    let d = dir();
    let (versions, deps, images, priorities) = bulk_with_dependency_problems(d.path());
    let plan = |strict: bool| {
        let out = d.path().join("out");
        let mut args = vec![
            "plan".as_ref(),
            "--bulk".as_ref(),
            versions.as_os_str(),
            deps.as_os_str(),
            "--images".as_ref(),
            images.as_os_str(),
            "--priorities".as_ref(),
            priorities.as_os_str(),
            "--out".as_ref(),
            out.as_os_str(),
        ];
        if strict {
            args.push("--strict".as_ref());
        }
        common::run_basefit(args)
    };
    let (code, _, stderr) = plan(true);
    assert_eq!(code, 2, "{stderr}");
    let want = format!(
        "{}:5: --strict: pkg-a@1.0.0: requires pkg-c ^0.4, which no published version satisfies \
         (in all: dependencies on names not in the registry: 1; \
         dependency requirements no published version satisfies: 1)",
        deps.display()
    );
    assert!(stderr.contains(&want), "{want}\n{stderr}");
    let (code, _, stderr) = plan(false);
    assert_eq!(code, 0, "{stderr}");
    let note = "note: 2 data-quality problems in the inputs (run `basefit check` for the list)";
    assert!(stderr.lines().any(|l| l == note), "{stderr}");
}

/// Runs `basefit check` with `inputs`, using a good registry and good images for the flags
/// it leaves out; returns (exit code, stdout, stderr).
fn check_with(d: &Path, inputs: &[(&str, &Path)]) -> (i32, String, String) {
    let reg = write(d, "good-registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(d, "good-images.yaml", GOOD_IMAGES.as_bytes());
    let mut args: Vec<&std::ffi::OsStr> = vec!["check".as_ref()];
    for (flag, default) in [("--registry", &reg), ("--images", &img)] {
        if !inputs.iter().any(|(f, _)| *f == flag) {
            args.push(flag.as_ref());
            args.push(default.as_os_str());
        }
    }
    for (flag, path) in inputs {
        args.push(flag.as_ref());
        args.push(path.as_os_str());
    }
    common::run_basefit(args)
}

/// The YAML parser stops at a NUL as if the file ended there, so a NUL must make every YAML
/// input unusable rather than cut it short.
#[test]
fn nul_byte_in_any_yaml_input_is_refused_with_its_line() {
    let d = dir();
    let cases: [(&str, &str, &[u8]); 4] = [
        (
            "--registry",
            "nul-registry.yaml",
            b"packages:\n  - name: fernwood\n    versions: [{version: 1.0.0}]\n\0  - name: gumleaf\n    versions: [{version: 1.0.0}]\n",
        ),
        (
            "--images",
            "nul-images.yaml",
            b"images:\n  - {id: a, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n\n  - {id: b, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\0\n",
        ),
        (
            "--priorities",
            "nul-priorities.yaml",
            b"priorities:\n  - fernwood\n\n\0  - gumleaf\n",
        ),
        (
            "--results",
            "nul-results.yaml",
            b"results:\n  - {package: fernwood, image: plain, outcome: installed}\n\n  - \0{package: fernwood, image: plain, outcome: failed}\n",
        ),
    ];
    for (flag, name, text) in cases {
        let path = write(d.path(), name, text);
        let (code, stdout, stderr) = check_with(d.path(), &[(flag, &path)]);
        assert_eq!(code, 2, "{name}: stdout {stdout} stderr {stderr}");
        assert!(
            stderr.contains(&format!("{name}:4:"))
                && stderr.contains("a text file cannot hold a NUL byte"),
            "{name}: {stderr}"
        );
    }
}

/// CSV inputs accept a UTF-8 byte-order mark; YAML and JSON-lines inputs must read the same
/// text with one just as they read it without.
#[test]
fn byte_order_mark_starts_yaml_and_json_lines_inputs() {
    let d = dir();
    let bom = |text: &str| [b"\xef\xbb\xbf".as_slice(), text.as_bytes()].concat();
    let reg = write(d.path(), "bom-registry.yaml", bom(GOOD_REGISTRY));
    let img = write(d.path(), "bom-images.yaml", bom(GOOD_IMAGES));
    let pri = write(
        d.path(),
        "bom-priorities.yaml",
        bom("priorities: [fernwood]\n"),
    );
    let res_yaml = write(
        d.path(),
        "bom-results.yaml",
        bom("results:\n  - {package: fernwood, image: plain, outcome: installed}\n"),
    );
    let res_jsonl = write(
        d.path(),
        "bom-results.jsonl",
        bom("{\"package\":\"fernwood\",\"image\":\"plain\",\"outcome\":\"failed\"}\n"),
    );
    for results in [&res_yaml, &res_jsonl] {
        let (code, stdout, stderr) = check_with(
            d.path(),
            &[
                ("--registry", &reg),
                ("--images", &img),
                ("--priorities", &pri),
                ("--results", results),
            ],
        );
        assert_eq!(code, 0, "stdout {stdout} stderr {stderr}");
        for (kind, counts) in [
            ("package records", ["1", "1", "0"]),
            ("image records", ["1", "1", "0"]),
            ("priority entries", ["1", "1", "0"]),
            ("recorded results", ["1", "1", "0"]),
        ] {
            assert_eq!(record_counts(&stdout, kind), counts, "{stdout}");
        }
    }
}

/// A key given twice in one results record makes the record a schema error in JSON lines as
/// in YAML, rather than letting one of the two values win.
#[test]
fn results_record_with_a_key_given_twice_is_refused() {
    let d = dir();
    let cases = [
        (
            "dup.jsonl",
            "{\"package\":\"fernwood\",\"image\":\"plain\",\"outcome\":\"installed\"}\n\
             {\"package\":\"fernwood\",\"package\":\"ghost\",\"image\":\"plain\",\"outcome\":\"failed\"}\n",
        ),
        (
            "dup.yaml",
            "results:\n  - {package: fernwood, image: plain, outcome: installed}\n  - {package: fernwood, package: ghost, image: plain, outcome: failed}\n",
        ),
    ];
    let mut messages = Vec::new();
    for (name, text) in cases {
        let res = write(d.path(), name, text.as_bytes());
        let (code, stdout, stderr) = check_with(d.path(), &[("--results", &res)]);
        assert_eq!(code, 2, "{name}: stdout {stdout} stderr {stderr}");
        let line = if name.ends_with("jsonl") { 2 } else { 3 };
        let want = format!("{name}:{line}: result: field `package` given twice");
        assert!(stderr.contains(&want), "wanted {want} in {stderr}");
        messages.push(stderr.replace(&format!("{name}:{line}:"), "FILE:"));
    }
    assert_eq!(messages[0], messages[1], "JSON lines and YAML differ");
    // Reading the members in order must not change what other bad lines say.
    for (text, want) in [
        ("[1, 2]\n", "other.jsonl:1: expected a JSON object"),
        ("{\"package\": \n", "other.jsonl:1: not valid JSON"),
    ] {
        let res = write(d.path(), "other.jsonl", text.as_bytes());
        let (code, _, stderr) = check_with(d.path(), &[("--results", &res)]);
        assert_eq!(code, 2, "{stderr}");
        assert!(stderr.contains(want), "wanted {want} in {stderr}");
    }
}

/// Priority names are trimmed and an empty one refused in YAML as in CSV, so a name written
/// with spaces around it still matches its package.
#[test]
fn priority_names_are_trimmed_and_empty_ones_refused_in_yaml_as_in_csv() {
    let d = dir();
    let padded = write(
        d.path(),
        "padded.yaml",
        b"priorities:\n  - \" fernwood \"\n  - {name: \"\\tfernwood\", weight: 2}\n",
    );
    let (code, stdout, stderr) = check_with(d.path(), &[("--priorities", &padded)]);
    // The second entry is the first one again once trimmed: a duplicate, not a new package.
    assert_eq!(code, 1, "stdout {stdout} stderr {stderr}");
    assert!(
        stdout.contains("padded.yaml:3") && stdout.contains("already listed at line 2"),
        "{stdout}"
    );
    assert!(!stdout.contains("not have"), "{stdout}");
    for (name, text, lines) in [
        (
            "empty.yaml",
            "priorities:\n  - fernwood\n  - \"\"\n  - {name: \"  \"}\n",
            [3, 4],
        ),
        (
            "empty.csv",
            "name,weight\nfernwood,1\n\"\",1\n  ,1\n",
            [3, 4],
        ),
    ] {
        let path = write(d.path(), name, text.as_bytes());
        let (code, stdout, stderr) = check_with(d.path(), &[("--priorities", &path)]);
        assert_eq!(code, 2, "{name}: stdout {stdout} stderr {stderr}");
        for line in lines {
            let want = format!("{name}:{line}: `name` is empty");
            assert!(stderr.contains(&want), "wanted {want} in {stderr}");
        }
    }
}

/// A blank line is skipped in every CSV table whatever the line endings and the number of
/// columns, and the row after it keeps its own line number.
#[test]
fn blank_csv_lines_are_skipped_with_any_line_ending_and_width() {
    let d = dir();
    for (header, row_a, row_b) in [
        ("name", "fernwood", "ghost"),
        ("name,weight", "fernwood,1", "ghost,1"),
    ] {
        for ending in ["\n", "\r\n"] {
            let text = [header, row_a, "", row_b, ""].join(ending);
            let path = write(d.path(), "blank.csv", text.as_bytes());
            let (code, stdout, stderr) = check_with(d.path(), &[("--priorities", &path)]);
            let case = format!("{header:?} {ending:?}");
            assert_eq!(code, 1, "{case}: stdout {stdout} stderr {stderr}");
            assert!(
                stdout.contains("blank.csv:4  ghost"),
                "{case}: the unknown name is on line 4: {stdout}"
            );
            assert_eq!(
                record_counts(&stdout, "priority entries"),
                ["2", "2", "0"],
                "{case}: {stdout}"
            );
        }
    }
}

/// A CSV file of blank lines has no header, and one whose header cells are all empty has a
/// header with no names: neither is "empty at line 1", which points at a line that holds
/// nothing to fix when the blank lines or the empty header come later.
#[test]
fn csv_without_column_names_says_why_and_names_the_header_line() {
    let d = dir();
    for (flag, name) in [("--priorities", "p.csv"), ("--results", "r.csv")] {
        for blank in ["\n\n\n", "\r\n\r\n", " \n\t\n"] {
            let path = write(d.path(), name, blank.as_bytes());
            let (code, stdout, stderr) = check_with(d.path(), &[(flag, &path)]);
            assert_eq!(code, 2, "{flag} {blank:?}: stdout {stdout} stderr {stderr}");
            let want = format!(
                "{}: the file holds no header, only blank lines; expected a header line",
                path.display()
            );
            assert!(
                stderr.contains(&want),
                "{blank:?}: wanted {want} in {stderr}"
            );
        }
        for (text, line) in [(",,\n", 1), ("\n\n,,\n", 3), ("\r\n , \r\nx,y\r\n", 2)] {
            assert_refused_at_line(
                d.path(),
                (flag, name),
                text,
                line,
                "the header has no column names, only empty cells; expected a header line",
            );
        }
    }
}

/// Writes `text` as the file `name` given to `flag`, and asserts `check` refuses it (exit 2)
/// with `message` at `line` of that file.
fn assert_refused_at_line(
    dir: &Path,
    (flag, name): (&str, &str),
    text: &str,
    line: usize,
    message: &str,
) {
    let path = write(dir, name, text.as_bytes());
    let (code, stdout, stderr) = check_with(dir, &[(flag, &path)]);
    assert_eq!(code, 2, "{flag} {text:?}: stdout {stdout} stderr {stderr}");
    let want = format!("{}:{line}: {message}", path.display());
    assert!(
        stderr.contains(&want),
        "{text:?}: wanted {want} in {stderr}"
    );
}

/// A priorities CSV with a header and no row is refused at the header's line, as every
/// other problem with a CSV's header is; blank lines around the header do not move it.
#[test]
fn priorities_csv_with_no_rows_is_refused_at_its_header() {
    let d = dir();
    for (text, line) in [
        ("name,weight\n", 1),
        ("\n\nname,weight\n\n\n", 3),
        ("\r\nname\r\n\r\n", 2),
    ] {
        assert_refused_at_line(
            d.path(),
            ("--priorities", "p.csv"),
            text,
            line,
            "no priority entries after the header",
        );
    }
}

/// A row with the wrong number of fields in a priority or results CSV once ended the reading
/// and hid the errors found before it: every such row and every other schema error come back
/// together, in line order.
#[test]
fn csv_rows_of_the_wrong_width_are_reported_with_the_other_errors() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    let check_with = |flag: &str, name: &str, text: &[u8]| {
        let out = Command::new(env!("CARGO_BIN_EXE_basefit"))
            .args(["check", "--registry"])
            .arg(&reg)
            .arg("--images")
            .arg(&img)
            .arg(flag)
            .arg(write(d.path(), name, text))
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
        assert_eq!(out.status.code(), Some(2), "{stderr}");
        stderr
    };
    let stderr = check_with(
        "--priorities",
        "p.csv",
        b"name,weight\nfernwood,heavy\nfernwood,1,2\nfernwood\n",
    );
    let lines: Vec<&str> = stderr.lines().collect();
    assert_eq!(lines.len(), 3, "{stderr}");
    for (line, want) in lines.iter().zip([
        "p.csv:2: `weight`: expected a number, found `heavy`",
        "p.csv:3: expected 2 fields as in the header, found 3",
        "p.csv:4: expected 2 fields as in the header, found 1",
    ]) {
        assert!(line.contains(want), "{stderr}");
    }
    let stderr = check_with(
        "--results",
        "r.csv",
        b"package,image,outcome\n,plain,installed\nfernwood,plain\nfernwood,plain,installed\n",
    );
    assert!(
        stderr.contains("r.csv:2: result: empty required column(s) package"),
        "{stderr}"
    );
    assert!(
        stderr.contains("r.csv:3: expected 3 fields as in the header, found 2"),
        "{stderr}"
    );
}

/// A results file with no result in it, in any format, is refused by every command that reads
/// results, naming the file and where the results should have started: a user who gave one
/// expects results to be compared, and `check` used to pass a CSV of a header alone.
#[test]
fn results_files_with_no_result_are_refused_by_every_command() {
    let d = dir();
    let cases = [
        (
            "r.csv",
            "package,image,outcome\n",
            ":1: no recorded install results after the header",
        ),
        (
            "r.csv",
            "\n\npackage,image,outcome\n\n",
            ":3: no recorded install results after the header",
        ),
        (
            "r.yaml",
            "results: []\n",
            ":1: results file: `results` is missing or empty; expected a list of recorded install results",
        ),
        (
            "r.yaml",
            "# none yet\nresults:\n",
            ":2: results file: `results` is missing or empty",
        ),
        (
            "r.jsonl",
            "",
            ": the file is empty; expected one JSON object per line",
        ),
    ];
    for (name, text, want) in cases {
        let path = write(d.path(), name, text.as_bytes());
        let want = format!("{}{want}", path.display());
        for command in [&["check"][..], &["review"], &["render", "--format", "csv"]] {
            let mut args: Vec<&str> = command.to_vec();
            args.extend(common::DEMO);
            args.extend(["--results", path.to_str().unwrap()]);
            let (code, stdout, stderr) = common::run_basefit(&args);
            assert_eq!(
                code, 2,
                "{command:?} {text:?}: stdout {stdout} stderr {stderr}"
            );
            assert!(stdout.is_empty(), "{command:?} {text:?}: {stdout}");
            assert!(
                stderr.contains(&want),
                "{command:?} {text:?}: wanted {want} in {stderr}"
            );
        }
    }
}

/// Weights are each finite but their total must be too: every share of the weight is taken
/// of the total, and past the largest f64 the shares are not numbers.
#[test]
fn priority_weights_that_add_up_past_the_largest_number_are_refused() {
    let d = dir();
    for (name, text) in [
        (
            "huge.yaml",
            "priorities:\n  - {name: fernwood, weight: 1e308}\n  - {name: gumleaf, weight: 0}\n  - {name: ghost, weight: 1e308}\n",
        ),
        (
            "huge.csv",
            "name,weight\nfernwood,1e308\ngumleaf,0\nghost,1e308\n",
        ),
    ] {
        let path = write(d.path(), name, text.as_bytes());
        let (code, stdout, stderr) = check_with(d.path(), &[("--priorities", &path)]);
        assert_eq!(code, 2, "{name}: stdout {stdout} stderr {stderr}");
        let want = format!("{name}:4: the weights up to this entry add up to more than 1.7e308");
        assert!(stderr.contains(&want), "wanted {want} in {stderr}");
        assert!(
            stderr.contains("must add up to a finite number"),
            "{stderr}"
        );
    }
    // Just below the largest number is still a total.
    let near = write(
        d.path(),
        "near.yaml",
        b"priorities:\n  - {name: fernwood, weight: 1e308}\n  - {name: gumleaf, weight: 7e307}\n",
    );
    let (code, stdout, stderr) = check_with(d.path(), &[("--priorities", &near)]);
    assert_eq!(code, 1, "stdout {stdout} stderr {stderr}");
    assert!(
        !stdout.contains("NaN") && !stderr.contains("NaN"),
        "{stdout}"
    );
}

/// A weight written `-0` is zero, in YAML as in CSV: kept with its sign, it reached the
/// matrix as `"weight": -0.0` and the page as `w -0`.
#[test]
fn a_priority_weight_written_minus_zero_is_zero() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    for (name, text) in [
        (
            "zero.yaml",
            "priorities:\n  - {name: fernwood, weight: -0}\n",
        ),
        ("zero.csv", "name,weight\nfernwood,-0.0\n"),
    ] {
        let pri = write(d.path(), name, text.as_bytes());
        let (code, stdout, stderr) = common::run_basefit([
            "render".as_ref(),
            "--quiet".as_ref(),
            "--format".as_ref(),
            "json".as_ref(),
            "--registry".as_ref(),
            reg.as_os_str(),
            "--images".as_ref(),
            img.as_os_str(),
            "--priorities".as_ref(),
            pri.as_os_str(),
        ]);
        assert_eq!(code, 0, "{name}: {stderr}");
        assert!(stdout.contains("\"weight\": 0.0"), "{name}: {stdout}");
        assert!(!stdout.contains("-0"), "{name}: {stdout}");
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
    let all = (N + 1).to_string();
    assert_eq!(
        record_counts(&stdout, "image records"),
        [all.as_str(), all.as_str(), "0"],
        "{stdout}"
    );
}

/// A problem with a field of a long version record names the line of that field's value, not
/// the line where the record starts: in a record of many lines the record's first line points
/// the reader at the wrong place.
#[test]
fn version_record_field_problems_name_the_line_of_the_value() {
    let d = dir();
    let reg = write(
        d.path(),
        "registry.yaml",
        concat!(
            "packages:\n",
            "  - name: fernwood\n",
            "    versions:\n",
            "      - version: 1.0.0\n",
            "        yanked: false\n",
            "        released: someday\n",
            "      - version: 1.1.0\n",
            "        released: 2024-02-03\n",
            "        runtime: \">=>3\"\n",
            "      - yanked: true\n",
            "        version: v2.0\n",
        )
        .as_bytes(),
    );
    let img = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    assert_check_finds(
        &reg,
        &img,
        &[
            "registry.yaml:6  fernwood@1.0.0: `someday` is not a date",
            "registry.yaml:9  fernwood@1.1.0: runtime requirement",
            "registry.yaml:11  fernwood@v2.0: read as 2.0.0",
        ],
        None,
    );
}

/// A prebuilt platform that cannot be read leaves out its version alone, named at the line of
/// the platform, and the rest of the registry is used; it used to make the whole file
/// unusable (exit 2).
#[test]
fn unreadable_prebuilt_platform_leaves_out_only_its_version() {
    let d = dir();
    let reg = write(
        d.path(),
        "registry.yaml",
        concat!(
            "packages:\n",
            "  - name: fernwood\n",
            "    versions:\n",
            "      - {version: 1.0.0}\n",
            "      - version: 1.1.0\n",
            "        builds:\n",
            "          prebuilt:\n",
            "            - linux/glibc/x86_64\n",
            "            - linux-x86_64\n",
        )
        .as_bytes(),
    );
    let img = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    assert_check_finds(
        &reg,
        &img,
        &[
            "registry.yaml:9  fernwood@1.1.0: prebuilt platform `linux-x86_64`: expected a platform as os/libc/arch, e.g. linux/glibc/x86_64",
            "records with an unusable value (left out) (bad-value): 1",
        ],
        Some(("version records", ["2", "1", "1"])),
    );
}

/// A platform with its libc and architecture swapped (`linux/amd64/glibc`, the order Docker
/// and Go write `os/arch` in, with the libc tacked on) is refused at its line, for an image and
/// a prebuilt build alike. Read as written it named a platform nothing is built for: an
/// end-to-end review found such an image planned without a word, every prebuilt-only release
/// failing on it and its `libxml2-dev:amd64` read as another architecture's package, so the
/// advice said to add what the image has.
#[test]
fn a_platform_with_libc_and_architecture_swapped_is_refused_at_its_line() {
    let d = dir();
    let reg = write(
        d.path(),
        "registry.yaml",
        concat!(
            "packages:\n",
            "  - name: fernwood\n",
            "    versions:\n",
            "      - {version: 1.0.0}\n",
            "      - version: 1.1.0\n",
            "        builds:\n",
            "          prebuilt: [linux/x86_64/glibc]\n",
        )
        .as_bytes(),
    );
    let img = write(
        d.path(),
        "images.yaml",
        concat!(
            "images:\n",
            "  - {id: plain, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n",
            "  - id: swapped\n",
            "    runtime: 3.1.0\n",
            "    family: debian\n",
            "    platform: linux/amd64/glibc\n",
            "    packages: [libxml2-dev:amd64]\n",
            "  - {id: alp, runtime: 3.0.0, family: alpine, platform: linux/musl/musl}\n",
        )
        .as_bytes(),
    );
    assert_check_finds(
        &reg,
        &img,
        &[
            "registry.yaml:7  fernwood@1.1.0: prebuilt platform `linux/x86_64/glibc`: `x86_64`, in the C library's place, is an architecture: expected a platform as os/libc/arch",
            "images.yaml:6  swapped: platform `linux/amd64/glibc`: `amd64`, in the C library's place, is an architecture: expected a platform as os/libc/arch, e.g. linux/glibc/x86_64",
            "images.yaml:8  alp: platform `linux/musl/musl`: `musl`, in the architecture's place, is a C library",
            "images that cannot be built (left out) (bad-image): 2",
        ],
        None,
    );
}

/// An image platform not of the form os/libc/arch leaves out that image, at the line of the
/// platform and in the words a registry's `prebuilt` platform gets, and the images built on
/// it as other left-out bases do; the rest of the file is used. It used to be a schema error
/// that made the whole images file unusable.
#[test]
fn unreadable_image_platform_leaves_out_only_that_image() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(
        d.path(),
        "images.yaml",
        concat!(
            "images:\n",
            "  - {id: plain, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n",
            "  - id: odd\n",
            "    runtime: 3.1.0\n",
            "    family: debian\n",
            "    platform: linux-x86_64\n",
            "  - id: heir\n",
            "    extends: odd\n",
            "    platform: linux/glibc/aarch64\n",
            "  - {id: arm, extends: plain, platform: linux/glibc/aarch64}\n",
        )
        .as_bytes(),
    );
    assert_check_finds(
        &reg,
        &img,
        &[
            "images.yaml:6  odd: platform `linux-x86_64`: expected a platform as os/libc/arch, e.g. linux/glibc/x86_64",
            "images.yaml:8  heir: its base `odd` cannot be built: platform `linux-x86_64`: expected a platform as os/libc/arch",
            "images that cannot be built (left out) (bad-image): 2",
        ],
        Some(("image records", ["4", "2", "2"])),
    );
    // The images that are left are planned.
    let (code, stdout, stderr) = common::run_basefit([
        "plan".as_ref(),
        "--quiet".as_ref(),
        "--registry".as_ref(),
        reg.as_os_str(),
        "--images".as_ref(),
        img.as_os_str(),
        "--priorities".as_ref(),
        write(d.path(), "p.yaml", b"priorities: [fernwood]\n").as_os_str(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    let rows: Vec<&str> = stdout
        .lines()
        .skip(2)
        .take_while(|l| !l.is_empty())
        .filter_map(|l| l.split_whitespace().next())
        .collect();
    assert_eq!(rows, ["plain", "arm"], "{stdout}");

    // A file whose every image is left out is refused as any such file is.
    let lone = write(
        d.path(),
        "lone.yaml",
        b"images:\n  - {id: odd, runtime: 3.0.0, family: debian, platform: x86_64}\n",
    );
    let (code, _, stderr) = common::run_basefit([
        "plan".as_ref(),
        "--quiet".as_ref(),
        "--registry".as_ref(),
        reg.as_os_str(),
        "--images".as_ref(),
        lone.as_os_str(),
        "--priorities".as_ref(),
        d.path().join("p.yaml").as_os_str(),
    ]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("lone.yaml: plan needs at least one image: of 1 read, 1 was left out"),
        "{stderr}"
    );
}

/// An unknown dependency `kind` is refused at the line of the kind, not of the entry.
#[test]
fn dependency_kind_is_refused_at_its_line() {
    assert_bad(
        concat!(
            "packages:\n",
            "  - name: fernwood\n",
            "    versions:\n",
            "      - version: 1.0.0\n",
            "        depends:\n",
            "          - name: gumleaf\n",
            "            req: \"^1\"\n",
            "            kind: optional\n",
        )
        .as_bytes(),
        Some(8),
        &["dependency `kind`: expected runtime or development, found `optional`"],
    );
}

/// An empty package name is refused at the line of the name, not of the package record.
#[test]
fn empty_package_name_is_refused_at_its_line() {
    assert_bad(
        b"packages:\n  - summary: Reads fern files\n    name: \"  \"\n",
        Some(3),
        &["package: `name` is empty"],
    );
}

/// A problem with a priority entry's weight, requirement or name names the line of that
/// value, not the line where the entry starts.
#[test]
fn priority_entry_problems_name_the_line_of_the_value() {
    let d = dir();
    let path = write(
        d.path(),
        "prio.yaml",
        concat!(
            "priorities:\n",
            "  - name: fernwood\n",
            "    prerelease: false\n",
            "    weight: -2\n",
            "  - name: gumleaf\n",
            "    req: \">=>1\"\n",
        )
        .as_bytes(),
    );
    let (code, stdout, stderr) = check_with(d.path(), &[("--priorities", &path)]);
    assert_eq!(code, 1, "stdout {stdout} stderr {stderr}");
    for want in [
        "prio.yaml:4  fernwood: weight -2 is negative",
        "prio.yaml:6  gumleaf: ",
    ] {
        assert!(stdout.contains(want), "wanted {want} in {stdout}");
    }
    for (name, text, want) in [
        (
            "empty.yaml",
            "priorities:\n  - weight: 2\n    name: \"  \"\n",
            "empty.yaml:3: `name` is empty",
        ),
        (
            "huge.yaml",
            "priorities:\n  - name: fernwood\n    weight: 1e308\n  - name: gumleaf\n    prerelease: true\n    weight: 1e308\n",
            "huge.yaml:6: the weights up to this entry add up to more than 1.7e308",
        ),
    ] {
        let path = write(d.path(), name, text.as_bytes());
        let (code, stdout, stderr) = check_with(d.path(), &[("--priorities", &path)]);
        assert_eq!(code, 2, "{name}: stdout {stdout} stderr {stderr}");
        assert!(stderr.contains(want), "wanted {want} in {stderr}");
    }
}

/// A problem with one value of a recorded result names the line of that value, not the line
/// where the result starts.
#[test]
fn result_problems_name_the_line_of_the_value() {
    let d = dir();
    let path = write(
        d.path(),
        "r.yaml",
        concat!(
            "results:\n",
            "  - package: fernwood\n",
            "    image: plain\n",
            "    outcome: exploded\n",
            "  - package: fernwood\n",
            "    image: nowhere\n",
            "    outcome: installed\n",
            "  - image: plain\n",
            "    package: ghost\n",
            "    outcome: failed\n",
            "  - package: fernwood\n",
            "    image: plain\n",
            "    outcome: installed\n",
            "    version: nightly\n",
            "  - package: fernwood\n",
            "    image: plain\n",
            "    outcome: failed\n",
            "    log_file: missing.log\n",
        )
        .as_bytes(),
    );
    let (code, stdout, stderr) = check_with(d.path(), &[("--results", &path)]);
    assert_eq!(code, 1, "stdout {stdout} stderr {stderr}");
    for want in [
        "r.yaml:4  fernwood on plain: outcome `exploded`: expected installed or failed",
        "r.yaml:6  fernwood on nowhere: image `nowhere` is not declared",
        "r.yaml:9  ghost on plain: package `ghost` is not in the registry",
        "r.yaml:14  fernwood on plain: installed version `nightly`: ",
        "r.yaml:18  fernwood on plain: log file ",
    ] {
        assert!(stdout.contains(want), "wanted {want} in {stdout}");
    }
}

/// Without a registry (or images) there is nothing to check the names of priority entries
/// and recorded results against: `check` used to report every priority entry and every
/// result as naming something unknown (exit 1, 2 with `--strict`). Those checks are now
/// skipped, the records used, and the report says once, in text and JSON, which checks were
/// skipped for want of which input, so a clean report is not read as names verified.
#[test]
fn check_skips_cross_checks_against_inputs_not_given() {
    use std::ffi::OsStr;
    let d = dir();
    let priorities = write(d.path(), "p.yaml", b"priorities: [fernwood, ghost]\n");
    let results = write(
        d.path(),
        "r.yaml",
        concat!(
            "results:\n",
            "  - {package: fernwood, image: plain, outcome: installed}\n",
            "  - {package: ghost, image: nowhere, outcome: failed}\n",
        )
        .as_bytes(),
    );
    let registry_flags = "--registry FILE or --bulk VERSIONS_CSV DEPS_CSV";
    let run = |args: &[&OsStr]| {
        let mut all = vec![OsStr::new("check")];
        all.extend(args);
        common::run_basefit(all)
    };
    let p = [
        OsStr::new("--priorities"),
        priorities.as_os_str(),
        OsStr::new("--results"),
        results.as_os_str(),
    ];
    for strict in [false, true] {
        let mut args = p.to_vec();
        if strict {
            args.push(OsStr::new("--strict"));
        }
        let (code, stdout, stderr) = run(&args);
        assert_eq!(code, 0, "strict {strict}: {stdout}{stderr}");
        let want = [
            format!(
                "  the packages named by priority entries and recorded results: no registry given ({registry_flags})"
            ),
            "  the images named by recorded results: no images given (--images FILE)".to_string(),
        ];
        for w in &want {
            assert_eq!(
                stdout.matches(w.as_str()).count(),
                1,
                "wanted {w} in {stdout}"
            );
        }
        assert!(
            stdout.contains("no problems found in what could be checked"),
            "{stdout}"
        );
        // Rows of zeros would read as a registry read that held nothing.
        for absent in ["package records", "version records", "dependency records"] {
            assert!(!stdout.contains(absent), "{absent} in {stdout}");
        }
    }
    let mut args = p.to_vec();
    args.extend([OsStr::new("--format"), OsStr::new("json")]);
    let (code, stdout, stderr) = run(&args);
    assert_eq!(code, 0, "{stderr}");
    let v: serde_json::Value = serde_json::from_str(&stdout).unwrap();
    assert_eq!(v["clean"], true);
    assert_eq!(
        v["records"],
        serde_json::json!([
            ["priority entries", {"read": 2, "used": 2, "left_out": 0}],
            ["recorded results", {"read": 2, "used": 2, "left_out": 0}],
        ])
    );
    assert_eq!(
        v["skipped_checks"],
        serde_json::json!([
            {"missing": "registry", "flags": registry_flags, "records": ["priority", "result"]},
            {"missing": "images", "flags": "--images FILE", "records": ["result"]},
        ])
    );

    // Each input given makes its own checks and leaves only the other skipped.
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let mut args = p.to_vec();
    args.extend([OsStr::new("--registry"), reg.as_os_str()]);
    let (code, stdout, _) = run(&args);
    assert_eq!(code, 1, "{stdout}");
    assert!(
        stdout.contains("p.yaml:1  ghost: priority entry names a package")
            && stdout
                .contains("r.yaml:3  ghost on nowhere: package `ghost` is not in the registry")
            && stdout.contains("  the images named by recorded results: no images given")
            && !stdout.contains("no registry given")
            && !stdout.contains("is not declared"),
        "{stdout}"
    );
    let img = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    args.extend([OsStr::new("--images"), img.as_os_str()]);
    let (code, stdout, _) = run(&args);
    assert_eq!(code, 1, "{stdout}");
    assert!(
        stdout.contains("r.yaml:3  ghost on nowhere: image `nowhere` is not declared")
            && !stdout.contains("not checked"),
        "{stdout}"
    );
}

/// `review` without `--matrix` plans on the images given; without any, results are no longer
/// left out against absent images, so the command line is what is named, not the results.
#[test]
fn review_without_a_matrix_needs_images() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let results = write(
        d.path(),
        "r.yaml",
        b"results:\n  - {package: fernwood, image: plain, outcome: installed}\n",
    );
    let (code, stdout, stderr) = common::run_basefit([
        "review".as_ref(),
        "--quiet".as_ref(),
        "--registry".as_ref(),
        reg.as_os_str(),
        "--results".as_ref(),
        results.as_os_str(),
    ]);
    assert_eq!(code, 2, "{stdout}{stderr}");
    assert!(
        stderr.contains(
            "command line: review needs --matrix, or --images with at least one image to plan from (no --images given)"
        ),
        "{stderr}"
    );
}

/// A recorded result on an image the images file declares but left out points at why it was
/// left out, rather than calling the image undeclared; one never declared still reads so.
#[test]
fn a_result_on_a_left_out_image_says_why_the_image_was_left_out() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(
        d.path(),
        "images.yaml",
        concat!(
            "images:\n",
            "  - {id: plain, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n",
            "  - id: odd\n",
            "    runtime: nightly\n",
            "    family: debian\n",
            "    platform: linux/glibc/x86_64\n",
        )
        .as_bytes(),
    );
    let results = write(
        d.path(),
        "results.yaml",
        concat!(
            "results:\n",
            "  - {package: fernwood, image: odd, outcome: installed}\n",
            "  - {package: fernwood, image: nowhere, outcome: installed}\n",
        )
        .as_bytes(),
    );
    let (code, stdout, stderr) = common::run_basefit([
        "check".as_ref(),
        "--registry".as_ref(),
        reg.as_os_str(),
        "--images".as_ref(),
        img.as_os_str(),
        "--results".as_ref(),
        results.as_os_str(),
    ]);
    assert_eq!(code, 1, "{stderr}");
    for want in [
        format!(
            "results.yaml:2  fernwood on odd: image `odd` was left out ({}:4: runtime `nightly`: does not start with a number)",
            img.display()
        ),
        "results.yaml:3  fernwood on nowhere: image `nowhere` is not declared".to_string(),
    ] {
        assert!(stdout.contains(&want), "wanted {want} in {stdout}");
    }
    assert_eq!(record_counts(&stdout, "recorded results"), ["2", "0", "2"]);
}

/// A device never ends (`/dev/zero` would be read until memory runs out), so every input flag
/// refuses one up front, named as given, also behind a symbolic link with a harmless name.
/// `/dev/null` stands in for it here: it ends at once, so a reader that took it would fail on
/// an empty file instead of hanging the test.
#[cfg(unix)]
#[test]
fn a_device_given_as_any_input_is_refused_up_front() {
    let d = dir();
    let link = d.path().join("z.csv");
    std::os::unix::fs::symlink("/dev/null", &link).unwrap();
    let null = Path::new("/dev/null");
    let versions = write(
        d.path(),
        "versions.csv",
        "package,version\nfernwood,1.0.0\n",
    );
    let cases: [(&str, &[&Path]); 7] = [
        ("--registry", &[null]),
        ("--priorities", &[&link]),
        ("--images", &[null]),
        ("--results", &[null]),
        ("--catalog", &[null]),
        ("--bulk", &[null, &versions]),
        ("--bulk", &[&link, &versions]),
    ];
    for (flag, files) in cases {
        let mut args: Vec<&std::ffi::OsStr> = vec!["check".as_ref(), flag.as_ref()];
        args.extend(files.iter().map(|f| f.as_os_str()));
        let (code, stdout, stderr) = common::run_basefit(args);
        assert_eq!(code, 2, "{flag}: stdout {stdout} stderr {stderr}");
        let want = format!(
            "{}: a device, not a regular file; expected a file",
            files[0].display()
        );
        assert!(stderr.contains(&want), "{flag}: {stderr}");
    }
}

/// Process substitution (`--priorities <(query)`) hands the command a pipe: refusing what is
/// not a regular file must not refuse that.
#[cfg(unix)]
#[test]
fn a_fifo_given_as_an_input_is_read() {
    let d = dir();
    let fifo = d.path().join("priorities.yaml");
    let made = Command::new("mkfifo").arg(&fifo).status();
    if !made.is_ok_and(|s| s.success()) {
        eprintln!("skipped: mkfifo is not available");
        return;
    }
    let writer = {
        let fifo = fifo.clone();
        std::thread::spawn(move || std::fs::write(fifo, "priorities:\n  - fernwood\n").unwrap())
    };
    let (code, stdout, stderr) = check_with(d.path(), &[("--priorities", &fifo)]);
    writer.join().unwrap();
    assert_eq!(code, 0, "stdout {stdout} stderr {stderr}");
    assert_eq!(record_counts(&stdout, "priority entries"), ["1", "1", "0"]);
}

/// An extending image inherits only what it does not give (README, "Runtime images"): a
/// `packages` list it gives replaces its base's, and `add` appends to them. `packages` used
/// to be merged with the base's, as if it were `add`.
#[test]
fn an_extending_image_s_packages_replace_its_base_s() {
    let text = concat!(
        "images:\n",
        "  - {id: full, runtime: 3.2.0, family: debian, platform: linux/glibc/x86_64, packages: [build-essential, zlib1g, libssl3]}\n",
        "  - {id: own, extends: full, packages: [zlib1g, ca-certificates]}\n",
        "  - {id: both, extends: full, packages: [zlib1g], add: [curl], remove: [zlib1g]}\n",
        "  - {id: more, extends: full, add: [curl]}\n",
        "  - {id: none, extends: full, packages: []}\n",
    );
    let mut ledger = basefit::Ledger::default();
    let images = basefit::load::images::read_images_str("images.yaml", text, &mut ledger).unwrap();
    assert!(ledger.problems.is_empty(), "{:?}", ledger.problems);
    let packages = |id: &str| -> Vec<&str> {
        let image = images.get(id).unwrap();
        image.system_packages.iter().map(String::as_str).collect()
    };
    assert_eq!(packages("own"), ["ca-certificates", "zlib1g"]);
    assert_eq!(packages("both"), ["curl"]);
    assert_eq!(
        packages("more"),
        ["build-essential", "curl", "libssl3", "zlib1g"]
    );
    assert!(packages("none").is_empty());
}

/// An image lacking `runtime`, `family` or `platform` with no base to inherit it from is left
/// out and listed by `check` as `bad-image` at its line, the rest of the file used (README,
/// "Runtime images"); it used to make the whole images file unusable.
#[test]
fn an_image_lacking_a_required_field_leaves_out_only_that_image() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(
        d.path(),
        "images.yaml",
        concat!(
            "images:\n",
            "  - {id: plain, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n",
            "  - {id: no-runtime, family: debian, platform: linux/glibc/x86_64}\n",
            "  - id: no-family\n",
            "    runtime: 3.0.0\n",
            "    platform: linux/glibc/x86_64\n",
            "  - {id: no-platform, runtime: 3.0.0, family: debian}\n",
            "  - {id: heir, extends: no-family}\n",
        )
        .as_bytes(),
    );
    assert_check_finds(
        &reg,
        &img,
        &[
            "images.yaml:3  no-runtime: missing `runtime` (and no base to inherit it from)",
            "images.yaml:4  no-family: missing `family` (and no base to inherit it from)",
            "images.yaml:7  no-platform: missing `platform` (and no base to inherit it from)",
            "images.yaml:8  heir: its base `no-family` cannot be built: missing `family`",
            "images that cannot be built (left out) (bad-image): 4",
        ],
        Some(("image records", ["5", "1", "4"])),
    );
}

/// Names are taken as written and printed by every report: one with white space at an end
/// never matches a priority entry (those are trimmed), and a tab, ESC or bidirectional
/// control passes for another name or rewrites the terminal. Each is a `bad-value` at its
/// line, shown escaped, and its record is left out (the package, or the release whose
/// dependency names one), in YAML and in the bulk CSV pair.
#[test]
fn registry_names_that_are_no_names_leave_their_record_out() {
    let d = dir();
    let img = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    let reg = write(
        d.path(),
        "registry.yaml",
        concat!(
            "packages:\n",
            "  - name: fernwood\n",
            "    versions:\n",
            "      - {version: 1.0.0}\n",
            "      - version: 1.1.0\n",
            "        depends:\n",
            "          - {name: fernwood}\n",
            "          - {name: \"evil\\e[2J\"}\n",
            "  - name: \"b \"\n",
            "    versions: [{version: 1.0.0, depends: [{name: fernwood}]}]\n",
            "  - {name: \"good\\tpkg\", versions: [{version: 1.0.0}]}\n",
        )
        .as_bytes(),
    );
    let stdout = assert_check_finds(
        &reg,
        &img,
        &[
            r#"registry.yaml:8  fernwood@1.1.0: dependency name "evil\u{1b}[2J" holds a control character"#,
            r#"registry.yaml:9  "b ": package name "b " begins or ends with white space"#,
            r#"registry.yaml:11  "good\tpkg": package name "good\tpkg" holds white space other than at its ends"#,
        ],
        Some(("package records", ["3", "1", "2"])),
    );
    assert_eq!(record_counts(&stdout, "version records"), ["4", "1", "3"]);
    assert_eq!(
        record_counts(&stdout, "dependency records"),
        ["3", "0", "3"]
    );
    assert!(
        !stdout.contains('\u{1b}') && !stdout.contains('\t'),
        "{stdout:?}"
    );

    let versions = write(
        d.path(),
        "versions.csv",
        "package,version\nfernwood,1.0.0\nfernwood,1.1.0\ngood\tpkg,1.0.0\ngood\tpkg,2.0.0\n",
    );
    let deps = write(
        d.path(),
        "deps.csv",
        "package,version,dependency\nfernwood,1.1.0,fernwood\nfernwood,1.1.0,abc\u{202e}fed\ngood\tpkg,2.0.0,fernwood\nfernwood,1.0.0,abc\u{202e}fed\n",
    );
    let (code, stdout, stderr) = common::run_basefit([
        "check".as_ref(),
        "--bulk".as_ref(),
        versions.as_os_str(),
        deps.as_os_str(),
    ]);
    assert_eq!(code, 1, "{stderr}");
    for want in [
        r#"deps.csv:3  fernwood@1.1.0: dependency name "abc\u{202e}fed" holds a bidirectional text control"#,
        r#"deps.csv:5  fernwood@1.0.0: dependency name "abc\u{202e}fed" holds a bidirectional text control"#,
        r#"versions.csv:4  "good\tpkg": package name "good\tpkg" holds white space other than at its ends"#,
    ] {
        assert!(stdout.contains(want), "wanted {want} in {stdout}");
    }
    assert_eq!(record_counts(&stdout, "package records"), ["2", "1", "1"]);
    assert_eq!(record_counts(&stdout, "version records"), ["4", "0", "4"]);
    assert_eq!(
        record_counts(&stdout, "dependency records"),
        ["4", "0", "4"]
    );
    assert!(
        !stdout.contains('\u{202e}') && !stdout.contains('\t'),
        "{stdout:?}"
    );
}

/// The same names in the other inputs: a recorded result's package or image, a priority
/// entry (after the trimming priority names get) and an image id are `bad-value` (an image,
/// `bad-image`) at their line, shown escaped, their record left out.
#[test]
fn names_that_are_no_names_leave_out_results_priorities_and_images() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(
        d.path(),
        "images.yaml",
        format!(
            "{GOOD_IMAGES}  - {{id: \"deb\\u2066\", runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}}\n"
        ),
    );
    let pri = write(
        d.path(),
        "priorities.yaml",
        "priorities:\n  - fernwood\n  - \" fern\\twood \"\n",
    );
    let res = write(
        d.path(),
        "results.yaml",
        concat!(
            "results:\n",
            "  - {package: fernwood, image: plain, outcome: installed}\n",
            "  - {package: \"fern\\x1bwood\", image: plain, outcome: installed}\n",
            "  - {package: fernwood, image: \"plain\\n\", outcome: failed}\n",
        ),
    );
    let (code, stdout, stderr) = check_with(
        d.path(),
        &[
            ("--registry", &reg),
            ("--images", &img),
            ("--priorities", &pri),
            ("--results", &res),
        ],
    );
    assert_eq!(code, 1, "{stderr}");
    for want in [
        r#"images.yaml:3  "deb\u{2066}": image id "deb\u{2066}" holds a bidirectional text control"#,
        r#"priorities.yaml:3  "fern\twood": package name "fern\twood" holds white space other than at its ends"#,
        r#"results.yaml:3  "fern\u{1b}wood" on "plain": package name "fern\u{1b}wood" holds a control character"#,
        r#"results.yaml:4  "fernwood" on "plain\n": image id "plain\n" begins or ends with white space"#,
    ] {
        assert!(stdout.contains(want), "wanted {want} in {stdout}");
    }
    assert_eq!(record_counts(&stdout, "image records"), ["2", "1", "1"]);
    assert_eq!(record_counts(&stdout, "priority entries"), ["2", "1", "1"]);
    assert_eq!(record_counts(&stdout, "recorded results"), ["3", "1", "2"]);
    assert!(!stdout.contains(['\u{1b}', '\u{2066}', '\t']), "{stdout:?}");
}

/// A registry file given twice, however spelled, would have every version reported as a
/// duplicate of itself: refused as `--results` refuses a repeated file, and so is one file
/// given as both halves of `--bulk`.
#[test]
fn a_registry_file_given_twice_is_refused() {
    let d = dir();
    let reg = write(d.path(), "r.yaml", GOOD_REGISTRY.as_bytes());
    let again = d.path().join(".").join("r.yaml");
    let (code, stdout, stderr) = common::run_basefit([
        "check".as_ref(),
        "--registry".as_ref(),
        reg.as_os_str(),
        "--registry".as_ref(),
        again.as_os_str(),
    ]);
    assert_eq!(code, 2, "stdout {stdout} stderr {stderr}");
    let want = format!("{}: given twice as --registry", again.display());
    assert!(stderr.contains(&want), "{stderr}");

    let csv = write(d.path(), "both.csv", "package,version,dependency\n");
    let (code, stdout, stderr) = common::run_basefit([
        "check".as_ref(),
        "--bulk".as_ref(),
        csv.as_os_str(),
        csv.as_os_str(),
    ]);
    assert_eq!(code, 2, "stdout {stdout} stderr {stderr}");
    assert!(stderr.contains("given twice as --bulk"), "{stderr}");
}

/// A matrix given to `review --matrix` may have been edited by hand: a cell's version that is
/// no semver version (it would be reported as a drift to `banana`) and a field basefit does
/// not write are refused, naming the file and the cell, exit 2.
#[test]
fn a_hand_edited_matrix_with_bad_versions_or_unknown_fields_is_refused() {
    let d = dir();
    let out = d.path().join("out");
    let mut args: Vec<String> = ["plan", "--quiet", "--out"].map(String::from).to_vec();
    args.push(out.display().to_string());
    args.extend(common::DEMO.map(String::from));
    let (code, _, stderr) = common::run_basefit(&args);
    assert!(code == 0 || code == 1, "{stderr}");
    let planned = std::fs::read_to_string(out.join("matrix.json")).unwrap();
    let review = |name: &str, edit: &dyn Fn(&mut serde_json::Value)| {
        let mut matrix: serde_json::Value = serde_json::from_str(&planned).unwrap();
        edit(&mut matrix);
        let path = write(d.path(), name, matrix.to_string());
        let mut args: Vec<String> = ["review", "--matrix"].map(String::from).to_vec();
        args.push(path.display().to_string());
        args.extend(common::DEMO.map(String::from));
        args.extend(["--results", "demo-data/results.yaml"].map(String::from));
        common::run_basefit(&args)
    };
    let cell = |m: &serde_json::Value, key: &str| {
        let cells = m["cells"].as_array().unwrap();
        cells.iter().position(|c| !c[key].is_null()).unwrap()
    };
    let (code, _, stderr) = review("banana.json", &|m| {
        let i = cell(m, "root_version");
        m["cells"][i]["root_version"] = "banana".into();
    });
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("banana.json: the ")
            && stderr.contains(" cell (")
            && stderr.contains("root_version `banana` is not a semver version"),
        "{stderr}"
    );
    let (code, _, stderr) = review("closure.json", &|m| {
        let i = cell(m, "closure");
        m["cells"][i]["closure"][0]["version"] = "1.x".into();
    });
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("closure.json: the ") && stderr.contains("`1.x` is not a semver version"),
        "{stderr}"
    );
    let (code, _, stderr) = review("extra.json", &|m| {
        m["notes"] = "hand-edited".into();
    });
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("extra.json:") && stderr.contains("unknown field `notes`"),
        "{stderr}"
    );
}

/// An image built on one left out for its id reads as built on a base that cannot be built,
/// as with every other left-out base, not as extending an undeclared one.
#[test]
fn an_image_on_a_base_left_out_for_its_id_names_why() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(
        d.path(),
        "images.yaml",
        concat!(
            "images:\n",
            "  - {id: \"bad id\", runtime: 3.2.0, family: debian, platform: linux/glibc/x86_64}\n",
            "  - {id: kid, extends: \"bad id\"}\n",
            "  - {id: ok, runtime: 3.2.0, family: debian, platform: linux/glibc/x86_64}\n",
        )
        .as_bytes(),
    );
    let report = assert_check_finds(
        &reg,
        &img,
        &[
            "images.yaml:3  kid: its base \"bad id\" cannot be built: image id \"bad id\" holds white space",
        ],
        Some(("image records", ["3", "1", "2"])),
    );
    assert!(!report.contains("not declared"), "{report}");
}

/// An empty `log_file` used to be reported as `log file : No such file or directory` (or as
/// the results file's folder not being a regular file): the file system's answer about an
/// empty path, which does not say the field is empty. Kept, like any unreadable log, as a
/// `missing-log` at its line.
#[test]
fn an_empty_log_file_is_reported_as_empty() {
    let d = dir();
    let yaml = write(
        d.path(),
        "r.yaml",
        concat!(
            "results:\n",
            "  - package: fernwood\n",
            "    image: plain\n",
            "    outcome: failed\n",
            "    log_file: \"\"\n",
        )
        .as_bytes(),
    );
    let jsonl = write(
        d.path(),
        "r.jsonl",
        b"{\"package\":\"fernwood\",\"image\":\"plain\",\"outcome\":\"failed\",\"log_file\":\"\"}\n",
    );
    // White space alone names no file either.
    let blank = write(
        d.path(),
        "b.jsonl",
        b"{\"package\":\"fernwood\",\"image\":\"plain\",\"outcome\":\"failed\",\"log_file\":\"  \"}\n",
    );
    for (path, line) in [
        (&yaml, "r.yaml:5"),
        (&jsonl, "r.jsonl:1"),
        (&blank, "b.jsonl:1"),
    ] {
        let (code, stdout, stderr) = check_with(d.path(), &[("--results", path)]);
        assert_eq!(code, 1, "stdout {stdout} stderr {stderr}");
        let want = format!(
            "{line}  fernwood on plain: `log_file` is empty; expected the path of a log file \
             under the results file's folder"
        );
        assert!(stdout.contains(&want), "wanted {want} in {stdout}");
        assert!(!stdout.contains("No such file"), "{stdout}");
        assert_eq!(
            record_counts(&stdout, "recorded results"),
            ["1", "1", "0"],
            "{stdout}"
        );
    }
}

/// A quoted number or boolean is text to YAML, and a plain `<<` is a merge key yaml-rust2
/// does not apply. The messages used to be "found a scalar" and "unknown field `<<`", neither
/// of which says what to change; they now name the quoted text and what to write instead.
#[test]
fn quoted_values_and_merge_keys_say_what_to_write() {
    let d = dir();
    let cases: [(&str, &str, &str, &str); 5] = [
        (
            "--priorities",
            "p.yaml",
            "priorities:\n  - name: fernwood\n    weight: \"5\"\n",
            "p.yaml:3: priority entry `weight`: expected a number, found the quoted text \
             `\"5\"`; remove the quotes to write a number",
        ),
        (
            "--priorities",
            "p-text.yaml",
            "priorities:\n  - {name: fernwood, weight: \"heavy\"}\n",
            "p-text.yaml:2: priority entry `weight`: expected a number, found the quoted text \
             `\"heavy\"`",
        ),
        (
            "--registry",
            "reg.yaml",
            "packages:\n  - name: fernwood\n    versions:\n      - version: 1.0.0\n        yanked: \"true\"\n",
            "reg.yaml:5: version record `yanked`: expected true or false, found the quoted \
             text `\"true\"`; remove the quotes to write true or false",
        ),
        (
            "--images",
            "img.yaml",
            concat!(
                "images:\n",
                "  - &base {id: plain, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n",
                "  - <<: *base\n",
                "    id: plain-2\n",
            ),
            "img.yaml:3: image: YAML merge keys (`<<: *anchor`) are not supported; write the \
             fields out",
        ),
        (
            // Quoted, `<<` is an ordinary (unknown) key, not a merge key.
            "--images",
            "img-quoted.yaml",
            concat!(
                "images:\n",
                "  - {\"<<\": x, id: plain, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}\n",
            ),
            "img-quoted.yaml:2: image: unknown field `<<`",
        ),
    ];
    for (flag, name, text, want) in cases {
        let path = write(d.path(), name, text.as_bytes());
        let (code, stdout, stderr) = check_with(d.path(), &[(flag, &path)]);
        assert_eq!(code, 2, "{name}: stdout {stdout} stderr {stderr}");
        assert!(stderr.contains(want), "{name}: wanted {want} in {stderr}");
    }
}

/// A requirement on a package whose every version record was left out is not one "no
/// published version satisfies": the versions were published and could not be read, and
/// the fix is in those records, not in the requirement.
#[test]
fn a_requirement_on_a_package_with_no_readable_version_says_so() {
    let d = dir();
    let reg = write(
        d.path(),
        "registry.yaml",
        concat!(
            "packages:\n",
            "  - name: a\n",
            "    versions:\n",
            "      - {version: 1.0.0, depends: [{name: b, req: '^1'}]}\n",
            "  - name: b\n",
            "    versions:\n",
            "      - {version: banana}\n",
        )
        .as_bytes(),
    );
    let img = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    let report = assert_check_finds(
        &reg,
        &img,
        &[
            "registry.yaml:4  a@1.0.0: requires b ^1, but every version record of b was left out (1; see its problems)",
        ],
        Some(("version records", ["2", "1", "1"])),
    );
    assert!(!report.contains("which no published version"), "{report}");
}

/// A budget of no steps would report every cell undecided: a usage error, not a plan.
#[test]
fn a_budget_of_zero_is_a_usage_error() {
    let (code, _, stderr) = common::run_basefit(
        ["plan", "--budget", "0"]
            .into_iter()
            .chain(common::DEMO.iter().copied()),
    );
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("--budget"), "{stderr}");
}

/// A result naming a package that appears only as a dependency (never declared) is noted as
/// not in the registry, as a name the registry never mentions is.
#[test]
fn a_result_for_an_undeclared_dependency_name_is_noted() {
    use basefit::load::diag::{Ledger, ProblemKind};
    let d = dir();
    let registry = write(
        d.path(),
        "r.yaml",
        b"packages:\n  - name: app\n    versions: [{version: \"1.0.0\", depends: [{name: ghost, req: \"*\"}]}]\n",
    );
    let images = write(d.path(), "i.yaml", GOOD_IMAGES.as_bytes());
    let results = write(
        d.path(),
        "res.yaml",
        b"results:\n  - {package: ghost, image: plain, outcome: installed}\n",
    );
    let inputs = basefit::load::load_inputs(&basefit::load::InputPaths {
        registry: vec![registry],
        images: Some(images),
        ..Default::default()
    })
    .unwrap();
    let mut ledger = Ledger::default();
    let known = basefit::load::results::Known {
        registry: Some(&inputs.registry),
        images: Some(&inputs.images),
    };
    let read = basefit::load::results::read_results(&results, &known, &mut ledger).unwrap();
    assert_eq!(read.len(), 1);
    assert!(
        ledger
            .problems
            .iter()
            .any(|p| p.kind == ProblemKind::UnknownPackage && p.subject == "ghost on plain"),
        "{:#?}",
        ledger.problems
    );
}

/// A priority entry left out (a negative weight) does not make a later, valid entry of the
/// same name a duplicate; and CSV rows without a rank come after the ranked ones, each noted
/// at its line (it moved without a word; from an end-to-end review), while a list with no
/// ranks at all keeps file order without a note.
#[test]
fn left_out_and_unranked_priority_entries_keep_their_place() {
    use basefit::load::diag::{Ledger, ProblemKind};
    let mut ledger = Ledger::default();
    let list = basefit::load::priorities::read_priorities_str(
        "p.yaml",
        "priorities:\n  - {name: alpha, weight: -1}\n  - {name: alpha, weight: 2}\n",
        &mut ledger,
    )
    .unwrap();
    let got: Vec<(&str, f64)> = list
        .entries
        .iter()
        .map(|e| (e.name.as_str(), e.weight))
        .collect();
    assert_eq!(got, [("alpha", 2.0)], "{:#?}", ledger.problems);

    let d = dir();
    let path = write(d.path(), "p.csv", b"rank,name\n,beta\n1,alpha\n");
    let mut ledger = Ledger::default();
    let list = basefit::load::priorities::read_priorities(&path, &mut ledger).unwrap();
    let names: Vec<&str> = list.entries.iter().map(|e| e.name.as_str()).collect();
    assert_eq!(names, ["alpha", "beta"]);
    let noted: Vec<(ProblemKind, usize, &str, bool)> = ledger
        .problems
        .iter()
        .map(|p| (p.kind, p.origin.line, p.subject.as_str(), p.left_out))
        .collect();
    assert_eq!(noted, [(ProblemKind::UnrankedEntry, 2, "beta", false)]);
    assert!(ledger.unbalanced().is_empty());

    let path = write(d.path(), "q.csv", b"rank,name\n,beta\n,alpha\n");
    let mut ledger = Ledger::default();
    let list = basefit::load::priorities::read_priorities(&path, &mut ledger).unwrap();
    let names: Vec<&str> = list.entries.iter().map(|e| e.name.as_str()).collect();
    assert_eq!(names, ["beta", "alpha"]);
    assert!(ledger.problems.is_empty(), "{:?}", ledger.problems);
}

/// `check` on a priorities file beside a good registry and images: (exit code, stdout, stderr).
fn check_priorities(dir: &Path, priorities: &str) -> (i32, String, String) {
    let registry = write(dir, "registry.yaml", GOOD_REGISTRY);
    let images = write(dir, "images.yaml", GOOD_IMAGES);
    let priorities = write(dir, "priorities.yaml", priorities);
    common::run_basefit([
        "check".as_ref(),
        "--registry".as_ref(),
        registry.as_os_str(),
        "--images".as_ref(),
        images.as_os_str(),
        "--priorities".as_ref(),
        priorities.as_os_str(),
    ])
}

/// Loader behaviours a mutation review found unguarded (each probe gave other output with
/// the mutant): a second YAML document, non-finite weights, lone-CR line numbers, the line
/// of a bad name in a block entry, an empty priority list.
#[test]
fn loader_edges_are_refused_or_placed_at_their_line() {
    let d = dir();
    // A second document would otherwise drop its records without a word.
    let (code, _, stderr) = check_priorities(
        d.path(),
        "priorities:\n  - {name: fernwood, weight: 2}\n---\npriorities:\n  - {name: beta, weight: 3}\n",
    );
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("priorities.yaml:4: more than one YAML document; expected exactly one"),
        "{stderr}"
    );
    // YAML 1.2 reads these as floats that are no numbers a weight can be.
    for weight in ["nan", ".nan", ".inf", "-.inf", ".NaN"] {
        let (code, _, stderr) = check_priorities(
            d.path(),
            &format!(
                "priorities:\n  - {{name: fernwood, weight: 1}}\n  - {{name: fernwood2, weight: {weight}}}\n"
            ),
        );
        assert_eq!(code, 2, "{weight}: {stderr}");
        assert!(
            stderr.contains(&format!(
                "priorities.yaml:3: priority entry `weight`: expected a number, found `{weight}`"
            )),
            "{weight}: {stderr}"
        );
    }
    // Classic Mac line ends: the error is on the third line, not the first.
    let (code, _, stderr) = check_priorities(
        d.path(),
        "priorities:\r  - {name: fernwood, weight: 1}\r  - {name: beta, weight: x}\r",
    );
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("priorities.yaml:3: priority entry `weight`: expected a number"),
        "{stderr}"
    );
    // A bad name in a block entry is placed at its own line, not the entry's first.
    let (code, stdout, stderr) = check_priorities(
        d.path(),
        "priorities:\n  - weight: 2\n    name: \"bad name\"\n  - {name: fernwood, weight: 1}\n",
    );
    assert_eq!(code, 1, "{stdout}{stderr}");
    assert!(
        stdout
            .lines()
            .any(|l| l.contains("priorities.yaml:3") && l.contains("\"bad name\"")),
        "{stdout}"
    );
    // No entry at all is a whole-file error, however it is written.
    for empty in ["priorities: []\n", "priorities:\n", "{}\n"] {
        let (code, _, stderr) = check_priorities(d.path(), empty);
        assert_eq!(code, 2, "{empty:?}: {stderr}");
        assert!(
            stderr.contains("priorities.yaml:1: priority list: `priorities` is missing or empty"),
            "{empty:?}: {stderr}"
        );
    }
}

/// An image id given twice names the line of the first declaration; a quoted id with white
/// space around it is read trimmed, and another image extends it by the trimmed name (from a
/// mutation review: neither was guarded).
#[test]
fn image_ids_are_trimmed_and_duplicates_name_the_first_line() {
    let d = dir();
    let registry = write(d.path(), "registry.yaml", GOOD_REGISTRY);
    let images = write(
        d.path(),
        "images.yaml",
        "images:\n  - id: deb-3.0\n    runtime: 3.0.0\n    family: debian\n    platform: linux/glibc/x86_64\n  - id: deb-3.0\n    runtime: 3.1.0\n    family: debian\n    platform: linux/glibc/x86_64\n",
    );
    let stdout = assert_check_finds(
        &registry,
        &images,
        &[],
        Some(("image records", ["2", "1", "1"])),
    );
    assert!(
        stdout
            .lines()
            .any(|l| l.contains("images.yaml:6")
                && l.contains("image id already declared at line 2")),
        "{stdout}"
    );
    let images = write(
        d.path(),
        "images.yaml",
        "images:\n  - id: \" deb-3.0 \"\n    runtime: 3.0.0\n    family: debian\n    platform: linux/glibc/x86_64\n  - id: deb-child\n    extends: deb-3.0\n",
    );
    let (code, stderr, stdout) = check(&registry, &images);
    assert_eq!(code, 0, "{stdout}{stderr}");
    assert_eq!(
        record_counts(&stdout, "image records"),
        ["2", "2", "0"],
        "{stdout}"
    );
}

/// A bulk CSV `yanked` cell reads the YAML flag words too: `On` marks the release yanked, so
/// the plan installs the release before it. Refused, a registry exported by a YAML-minded tool
/// stops every command with an input error (from a mutation review, where only a doctest held
/// the wider word list).
#[test]
fn a_bulk_yanked_cell_reads_on_as_true() {
    let d = dir();
    let versions = write(
        d.path(),
        "versions.csv",
        "package,version,released,runtime,yanked\nwallaby-io,1.0.0,2024-01-01,>=2.0,\nwallaby-io,1.1.0,2024-02-01,>=2.0,On\n",
    );
    let deps = write(
        d.path(),
        "deps.csv",
        "package,version,dependency,req,kind\n",
    );
    let images = write(
        d.path(),
        "images.yaml",
        "images:\n  - {id: deb, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64, packages: [build-essential]}\n",
    );
    let priorities = write(d.path(), "priorities.yaml", "priorities:\n  - wallaby-io\n");
    let (code, stdout, stderr) = common::run_basefit([
        "explain".as_ref(),
        "wallaby-io".as_ref(),
        "deb".as_ref(),
        "--quiet".as_ref(),
        "--bulk".as_ref(),
        versions.as_os_str(),
        deps.as_os_str(),
        "--images".as_ref(),
        images.as_os_str(),
        "--priorities".as_ref(),
        priorities.as_os_str(),
    ]);
    assert_eq!(code, 0, "{stdout}{stderr}");
    assert!(
        stdout.contains("wallaby-io on deb: installs (1.0.0)"),
        "{stdout}"
    );
}

/// A flag reads YAML 1.1's boolean words as well as `true`/`false`, in each of their three
/// cases, and a word that is none of them is refused naming what is read: `yes` was read but
/// `on` refused (from an end-to-end review).
#[test]
fn flags_read_the_yaml_1_1_boolean_words() {
    let d = dir();
    let registry = write(d.path(), "registry.yaml", GOOD_REGISTRY);
    for (word, toolchain) in [
        ("on", true),
        ("On", true),
        ("Y", true),
        ("YES", true),
        ("off", false),
        ("OFF", false),
        ("n", false),
        ("No", false),
    ] {
        let images = write(
            d.path(),
            "images.yaml",
            format!(
                "images:\n  - {{id: plain, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64, toolchain: {word}}}\n"
            ),
        );
        let inputs = basefit::load::load_inputs(&basefit::load::InputPaths {
            registry: vec![registry.clone()],
            images: Some(images),
            ..Default::default()
        })
        .unwrap_or_else(|e| panic!("{word}: {e}"));
        assert_eq!(inputs.images.images[0].toolchain, toolchain, "{word}");
    }
    let images = write(
        d.path(),
        "images.yaml",
        "images:\n  - {id: plain, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64, toolchain: oN}\n",
    );
    let (code, stderr, _) = check(&registry, &images);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("images.yaml:2: image `toolchain`: expected true or false (or y/n, yes/no, on/off), found `oN`"),
        "{stderr}"
    );
}

/// A requirement written as a YAML null (`runtime: ~`, `req: null`, a key with no value) was
/// read as absent, without a word, where `""` is listed: an export that lost the value
/// writes either. Both are now listed alike, at the value's line.
#[test]
fn a_null_requirement_is_listed_as_an_empty_one() {
    let d = dir();
    let registry = write(
        d.path(),
        "registry.yaml",
        "packages:
  - name: plover
    versions:
      - version: 1.0.0
        runtime: ~
        depends:
          - {name: dunlin, req: null}
  - name: dunlin
    versions:
      - {version: 1.0.0, runtime:}
      - {version: 1.1.0, runtime: NULL}
",
    );
    let images = write(d.path(), "images.yaml", GOOD_IMAGES);
    assert_check_finds(
        &registry,
        &images,
        &[
            "(empty-requirement): 4",
            "registry.yaml:5  plover@1.0.0: runtime requirement is empty: read as any runtime",
            "registry.yaml:7  plover@1.0.0: requirement on dunlin is empty: read as any version",
            "registry.yaml:10  dunlin@1.0.0: runtime requirement is empty: read as any runtime",
            "registry.yaml:11  dunlin@1.1.0: runtime requirement is empty: read as any runtime",
        ],
        Some(("version records", ["3", "3", "0"])),
    );
    // A key left without a value in block style is placed at its own line: the YAML reader
    // puts such a null at the next token, lines further on, even inside the next package
    // (a review of the change found lines 7 and 12 reported here).
    let block = write(
        d.path(),
        "block.yaml",
        "packages:
  - name: dunlin
    versions:
      - version: 1.2.0
        runtime:

        depends:
          - name: knot
            req:

  - name: knot
    versions:
      - {version: 0.1.0}
",
    );
    assert_check_finds(
        &block,
        &images,
        &[
            "(empty-requirement): 2",
            "block.yaml:5  dunlin@1.2.0: runtime requirement is empty: read as any runtime",
            "block.yaml:9  dunlin@1.2.0: requirement on knot is empty: read as any version",
        ],
        Some(("version records", ["2", "2", "0"])),
    );
    let (code, stdout, stderr) =
        check_priorities(d.path(), "priorities:\n  - {name: fernwood, req: ~}\n");
    assert_eq!(code, 1, "{stderr}");
    assert!(
        stdout.contains("priorities.yaml:2  fernwood: requirement is empty: read as any version"),
        "{stdout}"
    );
}

/// A requirement given as empty text reads as any version, as an absent one does, but `check`
/// lists it at its line: an export that lost the value reads the same, and the release would
/// go onto every image without a word (from an end-to-end review).
#[test]
fn an_empty_requirement_is_read_as_any_and_listed() {
    let d = dir();
    let registry = write(
        d.path(),
        "registry.yaml",
        "packages:
  - name: hugev
    versions:
      - {version: \"1.0.1\", runtime: \"\"}
      - {version: \"1.0.3\", runtime: \"   \"}
      - {version: \"1.0.4\", runtime: \">=9\"}
  - name: dep2
    versions:
      - {version: \"1.0.0\", depends: [{name: hugev, req: \"\"}, {name: hugev2}]}
  - name: hugev2
    versions:
      - {version: \"1.0.0\"}
",
    );
    let images = write(d.path(), "images.yaml", GOOD_IMAGES);
    let stdout = assert_check_finds(
        &registry,
        &images,
        &[
            "(empty-requirement): 3",
            "registry.yaml:4  hugev@1.0.1: runtime requirement is empty: read as any runtime",
            "registry.yaml:5  hugev@1.0.3: runtime requirement is empty",
            "registry.yaml:9  dep2@1.0.0: requirement on hugev is empty: read as any version",
        ],
        Some(("version records", ["5", "5", "0"])),
    );
    // An absent requirement is no problem.
    assert!(!stdout.contains("hugev2 is empty"), "{stdout}");
    // A priority entry's empty requirement is listed the same way.
    let (code, stdout, stderr) =
        check_priorities(d.path(), "priorities:\n  - {name: fernwood, req: \"\"}\n");
    assert_eq!(code, 1, "{stderr}");
    assert!(
        stdout.contains("priorities.yaml:2  fernwood: requirement is empty: read as any version"),
        "{stdout}"
    );
}

/// Every required column of a results CSV row must hold a value, `outcome` as much as
/// `package` and `image`: an empty `outcome` cell was left out as a bad value with exit 1
/// (mutation review, r1), where the other empty required cells make the file unusable.
#[test]
fn a_results_csv_row_with_an_empty_outcome_is_refused() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    let res = write(
        d.path(),
        "results.csv",
        b"package,image,outcome\nfernwood,plain,installed\nfernwood,plain,\nfernwood,,\n",
    );
    let (code, _, stderr) = common::run_basefit([
        "check".as_ref(),
        "--registry".as_ref(),
        reg.as_os_str(),
        "--images".as_ref(),
        img.as_os_str(),
        "--results".as_ref(),
        res.as_os_str(),
    ]);
    assert_eq!(code, 2, "{stderr}");
    let problems: Vec<&str> = stderr
        .lines()
        .filter(|l| l.contains("empty required column"))
        .map(|l| &l[l.find("results.csv:").unwrap_or(0)..])
        .collect();
    assert_eq!(
        problems,
        [
            "results.csv:3: result: empty required column(s) outcome",
            "results.csv:4: result: empty required column(s) image, outcome",
        ],
        "{stderr}"
    );
}

/// Dependency rows left out with the version they belong to have no problem of their own;
/// `check` says how many of the left-out count went so, and JSON carries the number: the
/// table's "left out 2" beside no problem naming a dependency row read as rows lost (from an
/// end-to-end review). Here `q,1.0.0` duplicates `q,1.0` (both 1.0.0) and takes its two
/// dependency rows with it.
#[test]
fn check_says_which_left_out_rows_went_with_their_version() {
    let dir = tempfile::tempdir().unwrap();
    let versions = common::write(
        dir.path(),
        "v.csv",
        "package,version\nq,1.0\nq,1.0.0\nbeta,1.0.0\n",
    );
    let deps = common::write(
        dir.path(),
        "d.csv",
        "package,version,dependency,req\nq,1.0.0,beta,*\nq,1.0,beta,*\nq,1.0.0,beta,>=5\n",
    );
    let (v, d) = (versions.to_str().unwrap(), deps.to_str().unwrap());
    let (code, stdout, stderr) = common::run_basefit(["check", "--bulk", v, d]);
    assert_eq!(code, 1, "{stderr}");
    assert!(
        stdout.contains(
            "  2 of the dependency records left out went with the record they belong to (a version or package left out below)"
        ),
        "{stdout}"
    );
    // Only where some did: the version left out went with no record (from a mutation review of
    // src/report/text.rs, where a "0 of the ..." line for every kind went unnoticed).
    assert_eq!(
        stdout
            .matches("went with the record they belong to")
            .count(),
        1,
        "{stdout}"
    );
    let (_, json, _) = common::run_basefit(["check", "--bulk", v, d, "--format", "json"]);
    let json: serde_json::Value = serde_json::from_str(&json).unwrap();
    let dependency = json["records"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r[0] == "dependency records")
        .unwrap();
    assert_eq!(
        dependency[1],
        serde_json::json!({"read": 3, "used": 1, "left_out": 2, "left_out_with_owner": 2})
    );
}

/// `check` on a registry with nothing usable says so and exits 1, where `plan` refuses it
/// (exit 2): it said "no problems found" and exited 0 (from an end-to-end review).
#[test]
fn check_reports_a_registry_with_no_usable_package() {
    let dir = tempfile::tempdir().unwrap();
    let empty = common::write(dir.path(), "empty.yaml", "packages: []\n");
    let empty = empty.to_str().unwrap();
    let (code, stdout, stderr) = common::run_basefit(["check", "--registry", empty]);
    assert_eq!(code, 1, "{stdout}{stderr}");
    assert!(!stdout.contains("no problems found"), "{stdout}");
    assert!(
        stdout.contains(&format!(
            "{empty}: the registry has no usable package (the file declares none): every command that plans refuses it"
        )),
        "{stdout}"
    );
    let (code, _, stderr) = common::run_basefit(["check", "--registry", empty, "--format", "json"]);
    assert_eq!(code, 1, "{stderr}");
    assert!(
        stderr.contains("note: ") && stderr.contains("no usable package"),
        "{stderr}"
    );
}

/// Priority lists and recorded results are read by their file name's extension in any case
/// (README, "Input formats": "Extensions match in any case"), and a CSV `rank` must be a
/// finite number: `inf` and `NaN` read as floats but give a row no place among the others
/// (common practice, no source). From a mutation review: neither was guarded.
#[test]
fn extensions_match_in_any_case_and_ranks_must_be_finite() {
    let d = dir();
    let reg = write(d.path(), "registry.yaml", GOOD_REGISTRY.as_bytes());
    let img = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    let run = |flag: &str, name: &str, text: &str| {
        let file = write(d.path(), name, text.as_bytes());
        common::run_basefit([
            "check".as_ref(),
            "--registry".as_ref(),
            reg.as_os_str(),
            "--images".as_ref(),
            img.as_os_str(),
            flag.as_ref(),
            file.as_os_str(),
        ])
    };
    for (flag, name, text) in [
        ("--priorities", "P.CSV", "name,weight\nfernwood,2\n"),
        (
            "--results",
            "R.Csv",
            "package,image,outcome\nfernwood,plain,installed\n",
        ),
        (
            "--results",
            "R.JSONL",
            "{\"package\": \"fernwood\", \"image\": \"plain\", \"outcome\": \"installed\"}\n",
        ),
    ] {
        let (code, stdout, stderr) = run(flag, name, text);
        assert_eq!(code, 0, "{name}: {stdout}{stderr}");
    }
    for rank in ["inf", "NaN", "-inf"] {
        let (code, _, stderr) = run(
            "--priorities",
            "ranked.csv",
            &format!("rank,name\n1,fernwood\n{rank},fernwood-extra\n"),
        );
        assert_eq!(code, 2, "{rank}: {stderr}");
        assert!(
            stderr.contains(&format!(
                "ranked.csv:3: `rank`: expected a number, found `{rank}`"
            )),
            "{rank}: {stderr}"
        );
    }
}

/// One data-quality problem is noted as one: from a mutation review, where the note's noun
/// taking the plural at any count passed every test.
#[test]
fn one_data_quality_problem_is_noted_in_the_singular() {
    let d = dir();
    let registry = write(
        d.path(),
        "registry.yaml",
        "packages:\n  - name: fernwood\n    versions:\n      - {version: 1.0.0, depends: [{name: no-such-name, req: \"^1\"}]}\n",
    );
    let images = write(d.path(), "images.yaml", GOOD_IMAGES.as_bytes());
    let priorities = write(
        d.path(),
        "priorities.yaml",
        "priorities:\n  - {name: fernwood, weight: 1}\n",
    );
    let (code, _, stderr) = common::run_basefit([
        "plan".as_ref(),
        "--quiet".as_ref(),
        "--registry".as_ref(),
        registry.as_os_str(),
        "--images".as_ref(),
        images.as_os_str(),
        "--priorities".as_ref(),
        priorities.as_os_str(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    let note = "note: 1 data-quality problem in the inputs (run `basefit check` for the list)";
    assert!(stderr.lines().any(|l| l == note), "{stderr}");
}

/// A file name may hold a line break (a CI artifact named from a job's output): printed raw in
/// a problem's place or an error, it would add lines that read as basefit's own, as a value
/// quoted from the input would (README, "Commands": such a line break prints as `\n`).
#[cfg(unix)]
#[test]
fn a_line_break_in_a_file_name_adds_no_report_line() {
    let dir = tempfile::tempdir().unwrap();
    let forged = "basefit: forged line";
    let registry = write(
        dir.path(),
        &format!("r\n{forged}.yaml"),
        "packages:\n  - name: kp-a\n    versions: [{version: \"1.x\"}, {version: \"1.0.0\"}]\n",
    );
    let (_, out, err) = common::run_basefit([
        "check".as_ref(),
        "--registry".as_ref(),
        registry.as_os_str(),
    ]);
    for text in [&out, &err] {
        assert!(!text.lines().any(|l| l.starts_with(forged)), "{text}");
    }
    assert!(out.contains(&format!("r\\n{forged}.yaml:3")), "{out}");
    let missing = dir.path().join(format!("gone\n{forged}.yaml"));
    let (code, _, err) =
        common::run_basefit(["check".as_ref(), "--registry".as_ref(), missing.as_os_str()]);
    assert_eq!(code, 2, "{err}");
    assert!(!err.lines().any(|l| l.starts_with(forged)), "{err}");
    assert!(
        err.contains(&format!("gone\\n{forged}.yaml: cannot read")),
        "{err}"
    );
}
