//! What commands print, through the binary: each accepts only the `--format` values it
//! honours, a matrix planned with `--no-native` says so wherever it is shown, and an image's
//! toolchain reads the same to every command.

mod common;

use common::{DEMO, demo_on_images, run_basefit};
use std::path::Path;

/// Runs `command` with `args`, quietly where it reads inputs (`diff` has no bars); returns
/// (exit code, stdout, stderr).
fn run(command: &[&str], args: &[&str]) -> (i32, String, String) {
    let mut all = command.to_vec();
    if command[0] != "diff" {
        all.push("--quiet");
    }
    all.extend(args);
    run_basefit(&all)
}

/// Plans the demo into `dir`, with `extra` options; returns the matrix.json path.
fn plan_into(dir: &Path, extra: &[&str]) -> String {
    let out = dir.to_str().unwrap();
    let mut args = DEMO.to_vec();
    args.extend(["--out", out]);
    args.extend(extra);
    let (code, _, stderr) = run(&["plan"], &args);
    assert!(code == 0 || code == 1, "{stderr}");
    format!("{out}/matrix.json")
}

/// The `--format` values clap lists for `command`, read from its refusal of a made-up one.
fn listed_formats(command: &[&str], args: &[&str]) -> Vec<String> {
    let mut all = args.to_vec();
    all.extend(["--format", "no-such-format"]);
    let (code, _, stderr) = run(command, &all);
    assert_eq!(code, 2, "{stderr}");
    let list = stderr
        .split("[possible values: ")
        .nth(1)
        .and_then(|rest| rest.split(']').next())
        .unwrap_or_else(|| panic!("no possible values in: {stderr}"));
    list.split(", ").map(str::to_string).collect()
}

#[test]
fn every_command_lists_only_the_formats_it_honours() {
    let dir = tempfile::tempdir().unwrap();
    let before = plan_into(&dir.path().join("a"), &[]);
    let after = plan_into(&dir.path().join("b"), &["--no-native"]);
    let with_results = |extra: &[&'static str]| {
        let mut v = DEMO.to_vec();
        v.extend(extra);
        v
    };
    let report = ["table", "json", "yaml"];
    let matrix = ["markdown", "html", "csv", "json", "yaml"];
    let cases: Vec<(Vec<&str>, Vec<&str>, &[&str])> = vec![
        (
            vec!["check"],
            with_results(&["--results", "demo-data/results.yaml"]),
            &report,
        ),
        (vec!["plan"], DEMO.to_vec(), &report),
        (
            vec!["explain", "quill-xml", "alpine-2.6"],
            DEMO.to_vec(),
            &report,
        ),
        (vec!["syslibs"], DEMO.to_vec(), &report),
        (
            vec!["review"],
            with_results(&[
                "--results",
                "demo-data/results.yaml",
                "--max-surprises",
                "99",
            ]),
            &report,
        ),
        (
            vec!["imageplan"],
            with_results(&["--image", "deb-2.4"]),
            &report,
        ),
        (vec!["diff", &before, &after], Vec::new(), &report),
        (vec!["render"], DEMO.to_vec(), &matrix),
    ];
    for (command, args, expected) in cases {
        let listed = listed_formats(&command, &args);
        assert_eq!(listed, expected, "{command:?}");
        // Each listed format prints something no other listed format prints.
        let mut seen: Vec<(String, String)> = Vec::new();
        for format in &listed {
            let mut all = args.clone();
            all.extend(["--format", format]);
            let (code, stdout, stderr) = run(&command, &all);
            assert!(code < 2, "{command:?} --format {format}: {stderr}");
            assert!(!stdout.is_empty(), "{command:?} --format {format}");
            for (other, text) in &seen {
                assert_ne!(
                    *text, stdout,
                    "{command:?}: --format {format} prints what --format {other} prints"
                );
            }
            seen.push((format.clone(), stdout));
        }
        // YAML is the JSON document's content, value for value.
        let document = |format: &str| -> Option<serde_json::Value> {
            let text = &seen.iter().find(|(f, _)| f == format)?.1;
            Some(match format {
                "json" => serde_json::from_str(text).unwrap(),
                _ => serde_yaml::from_str(text).unwrap(),
            })
        };
        if let (Some(json), Some(yaml)) = (document("json"), document("yaml")) {
            assert_eq!(json, yaml, "{command:?}: YAML and JSON disagree");
        }
        // The formats a command used to accept and ignore are refused.
        for format in ["table", "yaml", "csv", "markdown", "html"] {
            if expected.contains(&format) {
                continue;
            }
            let mut all = args.clone();
            all.extend(["--format", format]);
            let (code, _, stderr) = run(&command, &all);
            assert_eq!(code, 2, "{command:?} --format {format}: {stderr}");
        }
    }
}

const NOT_CHECKED: &str = "native needs were not checked";

#[test]
fn a_matrix_planned_without_native_checks_says_so_wherever_it_is_shown() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("nn");
    let mut args = DEMO.to_vec();
    args.extend(["--no-native", "--out", out.to_str().unwrap()]);
    let (code, summary, stderr) = run(&["plan"], &args);
    assert!(code < 2, "{stderr}");
    assert!(summary.contains(NOT_CHECKED), "{summary}");
    let (_, json_summary, _) = run(&["plan"], &[&args[..], &["--format", "json"]].concat());
    assert!(
        json_summary.contains("\"native_skipped\": true"),
        "{json_summary}"
    );

    let json = out.join("matrix.json");
    let yaml = out.join("matrix.yaml");
    let text = std::fs::read_to_string(&json).unwrap();
    assert!(text.contains("\"native_skipped\": true"));
    // The notice itself says it too, for readers that look at the notice only.
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    assert_eq!(v["notice"], basefit::plan::matrix::notice(true), "{text}");
    assert!(
        std::fs::read_to_string(&yaml)
            .unwrap()
            .contains("native_skipped: true")
    );
    for (matrix, format, needle) in [
        (&json, "markdown", NOT_CHECKED),
        (&json, "html", NOT_CHECKED),
        (&json, "csv", ",false,"),
        (&json, "csv", NOT_CHECKED),
        (&json, "json", "\"native_skipped\": true"),
        (&yaml, "yaml", "native_skipped: true"),
    ] {
        let (code, stdout, stderr) = run(
            &["render"],
            &["--matrix", matrix.to_str().unwrap(), "--format", format],
        );
        assert_eq!(code, 0, "{stderr}");
        assert!(stdout.contains(needle), "{format} lacks {needle:?}");
        // The legend no longer promises that native needs are met.
        assert!(
            !stdout.contains("every native need found is met"),
            "{format} still promises native needs are met"
        );
    }

    // `diff` says which side skipped native checks before listing cells that turn from a
    // native failure into installs, in text and in JSON.
    let full = plan_into(&dir.path().join("with"), &[]);
    let json_path = json.to_str().unwrap();
    for (before, after, side) in [
        (full.as_str(), json_path, "AFTER was"),
        (json_path, full.as_str(), "BEFORE was"),
        (json_path, json_path, "both were"),
    ] {
        let (code, stdout, stderr) = run(&["diff"], &[before, after]);
        assert!(code < 2, "{stderr}");
        let first = stdout.lines().next().unwrap_or_default();
        assert!(
            first.starts_with(&format!("{side} planned with --no-native"))
                && first.contains(NOT_CHECKED),
            "{stdout}"
        );
        let (_, json_out, _) = run(&["diff"], &[before, after, "--format", "json"]);
        let v: serde_json::Value = serde_json::from_str(&json_out).unwrap();
        let flags = &v["native_skipped"];
        assert_eq!(
            (flags["before"] == true, flags["after"] == true),
            (before == json_path, after == json_path),
            "{json_out}"
        );
    }
    let (_, agree, _) = run(&["diff"], &[&full, &full]);
    assert!(agree.starts_with("the matrices agree\n"), "{agree}");

    // A matrix written before the field existed reads as one planned with native checks, and
    // so does a full plan: neither carries the warning.
    let old = dir.path().join("old.json");
    std::fs::write(&old, text.replace("\"native_skipped\": true,", "")).unwrap();
    let full = plan_into(&dir.path().join("full"), &[]);
    for matrix in [&old.to_str().unwrap().to_string(), &full] {
        for format in ["markdown", "html", "csv"] {
            let (code, stdout, stderr) =
                run(&["render"], &["--matrix", matrix, "--format", format]);
            assert_eq!(code, 0, "{stderr}");
            assert!(!stdout.contains(NOT_CHECKED), "{matrix} {format}");
        }
    }
}

/// The demo registry and priorities on one Debian image with `toolchain: false` whose
/// packages are `packages` (the advice `syslibs` gives, taken or not).
fn one_image(dir: &Path, packages: &str) -> Vec<String> {
    demo_on_images(
        dir,
        &format!(
            "images:\n  - id: slim-fixed\n    runtime: 3.2.0\n    family: debian\n    \
             platform: linux/glibc/x86_64\n    toolchain: false\n    packages: [{packages}]\n"
        ),
    )
}

#[test]
fn an_image_carrying_its_toolchain_packages_has_a_toolchain_for_every_command() {
    let dir = tempfile::tempdir().unwrap();
    let fixed = one_image(
        dir.path(),
        "build-essential, gcc, make, libc6-dev, pkg-config, libpq5, libpq-dev, libxml2, \
         libxml2-dev, zlib1g, zlib1g-dev, libpng16-16, libpng-dev, libssl3",
    );
    let fixed: Vec<&str> = fixed.iter().map(String::as_str).collect();
    let (code, stdout, stderr) = run(&["syslibs"], &fixed);
    assert_eq!(code, 0, "{stdout}{stderr}");
    let (_, plan, stderr) = run(&["plan"], &[&fixed[..], &["--format", "json"]].concat());
    assert!(!plan.contains("missing-toolchain"), "{plan}{stderr}");
    // The file says `toolchain: false`: check says the packages win.
    let (code, stdout, _) = run(&["check"], &fixed);
    assert_eq!(code, 1, "{stdout}");
    assert!(
        stdout.contains("slim-fixed: says toolchain: false but carries build-essential"),
        "{stdout}"
    );
    for package in ["burrowdb", "snapfrost"] {
        let (code, stdout, stderr) = run(&["explain", package, "slim-fixed"], &fixed);
        assert_eq!(code, 0, "{package}: {stdout}{stderr}");
        assert!(!stdout.contains("no C toolchain"), "{stdout}");
    }

    // Without them the image has none, and every command names what to add.
    let bare = one_image(dir.path(), "libpq5, libpq-dev");
    let bare: Vec<&str> = bare.iter().map(String::as_str).collect();
    let (code, stdout, _) = run(&["syslibs"], &bare);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("build-essential"), "{stdout}");
    let (code, stdout, _) = run(&["explain", "burrowdb", "slim-fixed"], &bare);
    assert_eq!(code, 1, "{stdout}");
    assert!(
        stdout.contains("has no C toolchain; add: build-essential"),
        "{stdout}"
    );
    for text in [stdout.as_str()] {
        for empty in ["add: \n", "needs: \n", "add: ;", "needs: ;"] {
            assert!(!text.contains(empty), "empty list in: {text}");
        }
    }
}

/// An image that inherits `toolchain: true` and removes its base's compiler package.
const SLIMMED: &str = "images:\n  - id: full\n    runtime: 3.2.0\n    family: debian\n    \
    platform: linux/glibc/x86_64\n    toolchain: true\n    packages: [build-essential, libpq5, libpq-dev]\n  \
    - id: slimmed\n    extends: full\n    remove: [build-essential]\n  \
    - id: slimmed-with-cc\n    extends: full\n    remove: [build-essential]\n    toolchain: true\n";

#[test]
fn removing_the_compiler_package_drops_an_inherited_toolchain() {
    let dir = tempfile::tempdir().unwrap();
    let args = demo_on_images(dir.path(), SLIMMED);
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    // burrowdb builds from source on every image (see `an_image_carrying_...` above).
    let (code, stdout, _) = run(&["explain", "burrowdb", "slimmed"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(
        stdout.contains("has no C toolchain; add: build-essential"),
        "{stdout}"
    );
    // Its own flag still speaks for it, and the base keeps its compiler.
    for image in ["slimmed-with-cc", "full"] {
        let (code, stdout, stderr) = run(&["explain", "burrowdb", image], &args);
        assert_eq!(code, 0, "{image}: {stdout}{stderr}");
        assert!(!stdout.contains("no C toolchain"), "{image}: {stdout}");
    }
    let (code, stdout, _) = run(&["check"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(
        stdout.contains(
            "slimmed: inherits toolchain: true from `full` but removes build-essential; \
             planned without a C toolchain"
        ),
        "{stdout}"
    );
    assert!(!stdout.contains("slimmed-with-cc: inherits"), "{stdout}");
    assert!(
        stdout.contains(
            "images whose toolchain flag, written or inherited, their packages contradict"
        ),
        "{stdout}"
    );

    // A base that has a toolchain only by carrying the package writes no flag: removing the
    // package contradicts nothing the file says, so check has nothing to report.
    let unflagged = "images:\n  - {id: full, runtime: 3.2.0, family: debian, platform: linux/glibc/x86_64, packages: [build-essential, zlib1g]}\n  - id: slim\n    extends: full\n    remove: [build-essential]\n  - {id: flagged-off, runtime: 3.2.0, family: debian, platform: linux/glibc/x86_64, toolchain: false, packages: [build-essential]}\n  - id: slim-off\n    extends: flagged-off\n    remove: [build-essential]\n";
    let args = demo_on_images(dir.path(), unflagged);
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    let (_, stdout, _) = run(&["check"], &args);
    assert!(!stdout.contains("inherits toolchain"), "{stdout}");

    let (code, stdout, _) = run(&["explain", "burrowdb", "slim"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("has no C toolchain"), "{stdout}");

    // Removed a generation up, the toolchain is not inherited, so removing more of it
    // contradicts nothing: only the first removal is noted.
    let generations = "images:\n  - {id: el-full, runtime: 3.2.0, family: rhel, platform: linux/glibc/x86_64, toolchain: true, packages: [gcc, make, zlib]}\n  - {id: el-nogcc, extends: el-full, remove: [gcc]}\n  - {id: el-bare, extends: el-nogcc, remove: [make]}\n";
    let generation_args = demo_on_images(dir.path(), generations);
    let generation_args: Vec<&str> = generation_args.iter().map(String::as_str).collect();
    let (_, stdout, _) = run(&["check"], &generation_args);
    assert!(
        stdout.contains("el-nogcc: inherits toolchain: true from `el-full` but removes gcc"),
        "{stdout}"
    );
    assert!(!stdout.contains("el-bare: inherits"), "{stdout}");
}

/// An image id the command line names that the images file declares but left out is named as
/// left out, at its place in that file and with the reason, not as an unknown id; an id the
/// file never declares is still unknown.
#[test]
fn a_left_out_image_named_on_the_command_line_is_reported_as_left_out() {
    let dir = tempfile::tempdir().unwrap();
    let path = |name: &str| dir.path().join(name).to_str().unwrap().to_string();
    std::fs::write(
        path("r.yaml"),
        "packages:\n- name: a\n  versions:\n  - version: 1.0.0\n",
    )
    .unwrap();
    std::fs::write(
        path("i.yaml"),
        "images:\n\
         - {id: img, runtime: 3.1.0, family: debian, platform: linux/glibc/x86_64}\n\
         - {id: bad, runtime: nightly, family: debian, platform: linux/glibc/x86_64}\n",
    )
    .unwrap();
    std::fs::write(path("p.yaml"), "priorities:\n- a\n").unwrap();
    let (r, i, p) = (path("r.yaml"), path("i.yaml"), path("p.yaml"));
    let inputs = ["--registry", &r, "--images", &i, "--priorities", &p];
    let left_out = format!("{i}:3: ");
    for (command, id_args) in [
        (vec!["explain", "a", "bad"], vec![]),
        (vec!["imageplan"], vec!["--image", "bad"]),
    ] {
        let mut args = inputs.to_vec();
        args.extend(&id_args);
        let (code, _, stderr) = run(&command, &args);
        assert_eq!(code, 2, "{command:?}: {stderr}");
        assert!(stderr.contains(&left_out), "{command:?}: {stderr}");
        assert!(
            stderr.contains(
                "image `bad` is declared in this file but was left out: runtime `nightly`"
            ),
            "{command:?}: {stderr}"
        );
        assert!(!stderr.contains("panicked"), "{stderr}");
    }
    for (command, id_args) in [
        (vec!["explain", "a", "nope"], vec![]),
        (vec!["imageplan"], vec!["--image", "nope"]),
    ] {
        let mut args = inputs.to_vec();
        args.extend(&id_args);
        let (code, _, stderr) = run(&command, &args);
        assert_eq!(code, 2, "{command:?}: {stderr}");
        assert!(
            stderr.contains("command line: ")
                && stderr.contains("no image `nope` in --images; declared: img\n"),
            "{command:?}: {stderr}"
        );
    }
}

/// A registry that declares packages but no version at all is refused for what it is: "of 0
/// read, 0 were left out" would send the user to `check` for a list of nothing. Records read
/// and left out keep their counts; a bulk versions file with only its header declares nothing.
#[test]
fn a_registry_without_versions_is_refused_plainly() {
    let dir = tempfile::tempdir().unwrap();
    let path = |name: &str| dir.path().join(name).to_str().unwrap().to_string();
    let write = |name: &str, text: &str| std::fs::write(path(name), text).unwrap();
    write(
        "i.yaml",
        "images:\n- {id: img, runtime: 3.1.0, family: debian, platform: linux/glibc/x86_64}\n",
    );
    write("p.yaml", "priorities:\n- a\n");
    write(
        "bare.yaml",
        "packages:\n- name: a\n  versions: []\n- name: b\n",
    );
    write("versions.csv", "package,version\n");
    write("bad-versions.csv", "package,version\na,not-a-version\n");
    write("deps.csv", "package,version,dependency,req\n");
    let (i, p) = (path("i.yaml"), path("p.yaml"));
    let cases = [
        (
            vec!["--registry".to_string(), path("bare.yaml")],
            format!(
                "{}: plan needs at least one version record: the file declares 2 packages but no versions\n",
                path("bare.yaml")
            ),
        ),
        (
            vec!["--bulk".to_string(), path("versions.csv"), path("deps.csv")],
            format!(
                "{}: plan needs at least one package: the file declares none\n",
                path("versions.csv")
            ),
        ),
        (
            vec![
                "--bulk".to_string(),
                path("bad-versions.csv"),
                path("deps.csv"),
            ],
            format!(
                "{}: plan needs at least one version record: of 1 read, 1 was left out (`basefit check` lists why)\n",
                path("bad-versions.csv")
            ),
        ),
    ];
    for (registry, want) in cases {
        let mut args: Vec<&str> = registry.iter().map(String::as_str).collect();
        args.extend(["--images", &i, "--priorities", &p]);
        let (code, _, stderr) = run(&["plan"], &args);
        assert_eq!(code, 2, "{stderr}");
        assert!(stderr.ends_with(&want), "{stderr}");
    }
}

/// `--runtimes` reads a runtime as leniently as an images file does (`3.1` is 3.1.0), and a
/// runtime differing from another only in build metadata gets no row of its own: it admits
/// exactly the same releases (Semantic Versioning 2.0.0, section 10: build metadata does not
/// count in precedence).
#[test]
fn imageplan_runtimes_read_as_images_do_and_repeat_no_precedence() {
    let mut args = DEMO.to_vec();
    args.extend(["--image", "deb-2.4", "--runtimes", "3.1,3.1.2+x,v2.8,3.1.2"]);
    let (code, stdout, stderr) = run(&["imageplan"], &args);
    assert!(code < 2, "{stderr}");
    let rows: Vec<&str> = stdout
        .lines()
        .skip_while(|l| !l.starts_with("runtime "))
        .skip(2)
        .take_while(|l| !l.is_empty() && !l.starts_with("oldest"))
        .map(|l| l.split_whitespace().next().unwrap_or_default())
        .collect();
    assert_eq!(rows, ["2.8.0", "3.1.0", "3.1.2"], "{stdout}");
    // The merge is said, not silent: a row gone without a word read as a lost input (an
    // end-to-end review). 3.1 and 3.1.0 are one runtime too.
    let notes: Vec<&str> = stderr
        .lines()
        .filter(|l| l.starts_with("note: --runtimes"))
        .collect();
    assert_eq!(
        notes,
        [
            "note: --runtimes 3.1.2, 3.1.2+x are one runtime by precedence (build metadata aside; a missing part counts as 0): coverage shows it once, as 3.1.2"
        ],
        "{stderr}"
    );
    let mut args = DEMO.to_vec();
    args.extend(["--image", "deb-2.4", "--runtimes", "3.1,3.1.0,2.8"]);
    let (_, _, stderr) = run(&["imageplan"], &args);
    assert!(
        stderr.contains(
            "note: --runtimes names 3.1.0 2 times (a missing part counts as 0): coverage shows it once"
        ),
        "{stderr}"
    );

    let mut args = DEMO.to_vec();
    args.extend(["--image", "deb-2.4", "--runtimes", "3.1,newest"]);
    let (code, _, stderr) = run(&["imageplan"], &args);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("'newest'") && stderr.contains("expected a runtime version"),
        "{stderr}"
    );
}

/// The demo registry and images with a priority list of two entries written into `dir`:
/// gumleaf (installs everywhere) with weight `installs`, gidgee-auth (in no registry, fails
/// everywhere) with weight `fails`.
fn two_entry_demo(dir: &Path, installs: u32, fails: u32) -> Vec<String> {
    common::demo_replacing(
        dir,
        "--priorities",
        &format!(
            "priorities:\n  - {{name: gumleaf, weight: {installs}}}\n  - {{name: gidgee-auth, weight: {fails}}}\n"
        ),
    )
}

/// `imageplan` of deb-2.4 on `inputs` at `target`, its chart written under `dir`: the table
/// it prints and the chart.
fn coverage_of_deb_2_4(dir: &Path, inputs: &[String], target: &str) -> (String, String) {
    let chart = dir.join("chart");
    let table = stdout_of(
        &["imageplan"],
        inputs,
        &[
            "--image",
            "deb-2.4",
            "--target",
            target,
            "--out",
            chart.to_str().unwrap(),
        ],
    );
    let svg = std::fs::read_to_string(chart.join("coverage.svg")).unwrap();
    (table, svg)
}

/// Runs `command` on `inputs` with `extra`, expecting exit 0 or 1; returns stdout.
fn stdout_of(command: &[&str], inputs: &[String], extra: &[&str]) -> String {
    let mut args: Vec<&str> = inputs.iter().map(String::as_str).collect();
    args.extend(extra);
    let (code, stdout, stderr) = run(command, &args);
    assert!(code == 0 || code == 1, "{stderr}");
    stdout
}

/// One failing entry among heavy ones (or one resolving among heavy failures) never shows
/// as 100% (or 0%) in any rendering: text, Markdown, HTML, the coverage table and its chart.
#[test]
fn a_share_strictly_inside_never_prints_as_all_or_nothing() {
    for (installs, fails, text, whole) in [(2000, 1, "99.9%", "99%"), (1, 2000, "0.1%", "1%")] {
        let dir = tempfile::tempdir().unwrap();
        let inputs = two_entry_demo(dir.path(), installs, fails);
        let plan = stdout_of(&["plan"], &inputs, &[]);
        let row = plan.lines().find(|l| l.starts_with("deb-2.4 ")).unwrap();
        assert!(row.ends_with(&format!(" {text}")), "{row}");

        let out = dir.path().join("out");
        stdout_of(&["render"], &inputs, &["--out", out.to_str().unwrap()]);
        let md = std::fs::read_to_string(out.join("matrix.md")).unwrap();
        let md_row = md.lines().find(|l| l.starts_with("| deb-2.4 |")).unwrap();
        assert!(md_row.ends_with(&format!("| {whole} |")), "{md_row}");
        let html = std::fs::read_to_string(out.join("matrix.html")).unwrap();
        assert_eq!(
            html.matches(&format!("<span class=\"foot-share\">{whole}</span>"))
                .count(),
            10,
            "every image's footer"
        );
        assert_eq!(
            html.matches(&format!("<strong>{whole}</strong> of priority weight"))
                .count(),
            10
        );

        let (coverage, svg) = coverage_of_deb_2_4(dir.path(), &inputs, "1");
        assert!(coverage.contains("target 100.0%\n"), "{coverage}");
        let row = coverage.lines().find(|l| l.starts_with("2.4.9 ")).unwrap();
        assert!(row.contains(&format!(" {text} ")), "{row}");
        assert!(coverage.contains("no candidate runtime reaches the target"));
        assert!(
            svg.contains(&format!("<title>2.4.9: {text}</title>")),
            "{svg}"
        );
    }
}

/// A target that needs two places prints with them, and a coverage below it never prints as
/// the target: 97.5% beside "target 97.5%" and "no runtime reaches the target" reads as a
/// contradiction, and 97.53% beside 97.53% would too.
#[test]
fn a_coverage_below_the_target_never_prints_as_the_target() {
    for (installs, fails, shown) in [(3900, 100, "97.50%"), (97529, 2471, "97.529%")] {
        let dir = tempfile::tempdir().unwrap();
        let inputs = two_entry_demo(dir.path(), installs, fails);
        let (coverage, svg) = coverage_of_deb_2_4(dir.path(), &inputs, "0.9753");
        assert!(coverage.contains("target 97.53%\n"), "{coverage}");
        let row = coverage.lines().find(|l| l.starts_with("2.4.9 ")).unwrap();
        assert!(row.contains(&format!(" {shown} ")), "{row}");
        assert!(coverage.contains("no candidate runtime reaches the target"));
        assert!(svg.contains(">target 97.53%</text>"), "{svg}");
        assert!(
            svg.contains(&format!("<title>2.4.9: {shown}</title>")),
            "{svg}"
        );
    }
}

/// A priority list whose every weight is zero (written by hand, or by a query scoring nothing)
/// has no share of weight: every rendering says n/a (JSON null) rather
/// than 0% resolving, `imageplan` says why it has no coverage instead of that the target was
/// missed, and `check` notes the list without refusing it.
#[test]
fn an_all_zero_weight_list_has_no_share_anywhere() {
    let dir = tempfile::tempdir().unwrap();
    // dunecart-deploy fails everywhere through a dependency, so it has a shared blocker.
    let inputs = common::demo_replacing(
        dir.path(),
        "--priorities",
        "priorities:\n  - {name: gumleaf, weight: 0}\n  - {name: dunecart-deploy, weight: 0}\n",
    );
    let list = inputs[5].clone();

    let plan = stdout_of(&["plan"], &inputs, &[]);
    let row = plan.lines().find(|l| l.starts_with("deb-2.4 ")).unwrap();
    assert!(row.ends_with(" n/a"), "{row}");
    assert!(
        plan.contains("deb-2.4: cloudpeg-sdk blocks 1 of the 2 entries (n/a of the weight)"),
        "{plan}"
    );
    let json: serde_json::Value =
        serde_json::from_str(&stdout_of(&["plan"], &inputs, &["--format", "json"])).unwrap();
    let images = json["summary"]["images"].as_array().unwrap();
    assert_eq!(images.len(), 10);
    assert!(images.iter().all(|i| i["weight_share"].is_null()), "{json}");
    let blockers = json["shared_blockers"].as_array().unwrap();
    assert!(!blockers.is_empty());
    assert!(
        blockers.iter().all(|b| b["blocked_share"].is_null()),
        "{json}"
    );

    let out = dir.path().join("out");
    stdout_of(&["render"], &inputs, &["--out", out.to_str().unwrap()]);
    let md = std::fs::read_to_string(out.join("matrix.md")).unwrap();
    let md_row = md.lines().find(|l| l.starts_with("| deb-2.4 |")).unwrap();
    assert!(md_row.ends_with("| n/a |"), "{md_row}");
    let html = std::fs::read_to_string(out.join("matrix.html")).unwrap();
    assert_eq!(
        html.matches("<span class=\"foot-share\">n/a</span>")
            .count(),
        10
    );

    let (coverage, svg) = coverage_of_deb_2_4(dir.path(), &inputs, "0.95");
    let row = coverage.lines().find(|l| l.starts_with("2.4.9 ")).unwrap();
    assert!(row.contains(" n/a "), "{row}");
    assert!(
        coverage.contains("coverage by weight cannot be computed: every priority weight is zero\n"),
        "{coverage}"
    );
    assert!(!coverage.contains("reaches the target"), "{coverage}");
    assert!(
        !svg.contains("<circle"),
        "no point stands for an undefined share"
    );
    assert!(svg.contains("every priority weight is zero"), "{svg}");
    let json: serde_json::Value = serde_json::from_str(&stdout_of(
        &["imageplan"],
        &inputs,
        &["--image", "deb-2.4", "--format", "json"],
    ))
    .unwrap();
    let points = json["coverage"][0]["points"].as_array().unwrap();
    assert!(!points.is_empty());
    assert!(points.iter().all(|p| p["share"].is_null()), "{json}");

    let check = stdout_of(&["check"], &inputs, &[]);
    assert!(
        check.contains(&format!(
            "(all-weights-zero): 1\n  {list}:2  priorities: all 2 entries have weight 0"
        )),
        "{check}"
    );
    // One weight above zero is enough for every share to be defined.
    let dir = tempfile::tempdir().unwrap();
    let inputs = two_entry_demo(dir.path(), 0, 1);
    assert!(!stdout_of(&["check"], &inputs, &[]).contains("all-weights-zero"));
    let plan = stdout_of(&["plan"], &inputs, &[]);
    let row = plan.lines().find(|l| l.starts_with("deb-2.4 ")).unwrap();
    assert!(row.ends_with(" 0.0%"), "{row}");
}

/// One light entry failing beside a very heavy one that resolves: the division rounds to
/// exactly 1, yet the image is not one where everything installs, so no rendering may say
/// 100% (the README's promise for shares strictly between 0 and 1).
#[test]
fn a_failing_light_entry_beside_a_huge_one_never_reads_as_everything() {
    let dir = tempfile::tempdir().unwrap();
    // saltbush fails on deb-2.4 (it needs a newer runtime); tidewater-http installs there.
    let inputs = common::demo_replacing(
        dir.path(),
        "--priorities",
        "priorities:\n  - {name: tidewater-http, weight: 1e17}\n  - {name: saltbush, weight: 1}\n",
    );
    let plan = stdout_of(&["plan"], &inputs, &[]);
    let row = plan.lines().find(|l| l.starts_with("deb-2.4 ")).unwrap();
    assert!(row.ends_with(" 99.9%"), "{row}");
    let row = plan.lines().find(|l| l.starts_with("deb-3.2 ")).unwrap();
    assert!(row.ends_with(" 100.0%"), "{row}");
    let json: serde_json::Value =
        serde_json::from_str(&stdout_of(&["plan"], &inputs, &["--format", "json"])).unwrap();
    let deb_2_4 = &json["summary"]["images"][0];
    assert_eq!(deb_2_4["image"], "deb-2.4");
    assert!(deb_2_4["weight_share"].as_f64().unwrap() < 1.0, "{deb_2_4}");
    let blocked = json["shared_blockers"]
        .as_array()
        .unwrap()
        .iter()
        .find(|b| b["image"] == "deb-2.4")
        .unwrap();
    assert!(
        blocked["blocked_share"].as_f64().unwrap() > 0.0,
        "{blocked}"
    );

    let out = dir.path().join("out");
    stdout_of(&["render"], &inputs, &["--out", out.to_str().unwrap()]);
    let md = std::fs::read_to_string(out.join("matrix.md")).unwrap();
    let md_row = md.lines().find(|l| l.starts_with("| deb-2.4 |")).unwrap();
    assert!(md_row.ends_with("| 99% |"), "{md_row}");

    let (coverage, _) = coverage_of_deb_2_4(dir.path(), &inputs, "1.0");
    assert!(
        coverage.contains("oldest runtime reaching the target: 3.1.2\n"),
        "{coverage}"
    );
    let row = coverage.lines().find(|l| l.starts_with("2.4.9 ")).unwrap();
    assert!(row.contains(" 99.9% "), "{row}");

    // 94.99999999% is no 95%, however close: the verdict and the printed share both miss.
    let inputs = common::demo_replacing(
        dir.path(),
        "--priorities",
        "priorities:\n  - {name: tidewater-http, weight: 9499999999}\n  - {name: saltbush, weight: 500000001}\n",
    );
    let (coverage, _) = coverage_of_deb_2_4(dir.path(), &inputs, "0.95");
    assert!(
        coverage.contains("oldest runtime reaching the target: 3.1.2\n"),
        "{coverage}"
    );
    let row = coverage.lines().find(|l| l.starts_with("2.4.9 ")).unwrap();
    assert!(row.contains(" 94.99999999% "), "{row}");
}

/// The demo's matrix.json planned into `dir`, parsed, and a writer for edited copies.
fn demo_matrix(dir: &Path) -> (String, serde_json::Value) {
    let path = plan_into(dir, &[]);
    let json = serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
    (path, json)
}

fn write_json(dir: &Path, name: &str, value: &serde_json::Value) -> String {
    let path = common::write(dir, name, serde_json::to_string_pretty(value).unwrap());
    path.to_str().unwrap().to_string()
}

const NOTICE: &str =
    "Predicted from declared metadata only: confirm with real installs before shipping an image.";

/// A matrix whose cells all agree but whose image now has another runtime is not "the same":
/// the support matrix a reader publishes changes, so `diff` shows the renderings' diff,
/// exits 1, and, like every human-readable report, ends with the notice.
#[test]
fn diff_shows_a_changed_rendering_even_when_no_cell_moved() {
    let dir = tempfile::tempdir().unwrap();
    let (before, mut m) = demo_matrix(dir.path());
    assert_eq!(m["images"][0]["runtime"], "2.4.9");
    m["images"][0]["runtime"] = "2.4.10".into();
    let after = write_json(dir.path(), "after.json", &m);
    let (code, out, err) = run(&["diff"], &[&before, &after]);
    assert_eq!(code, 1, "{out}{err}");
    assert!(
        out.starts_with(
            "no cell's outcome, cause, version or dependencies changed, but the renderings differ"
        ),
        "{out}"
    );
    assert!(
        out.lines()
            .any(|l| l.starts_with('+') && l.contains("2.4.10")),
        "{out}"
    );
    assert!(
        out.trim_end().ends_with(NOTICE.trim_end_matches('.')) || out.contains(NOTICE),
        "{out}"
    );
    let (code, out, _) = run(&["diff"], &[&before, &before]);
    assert_eq!(code, 0);
    assert!(
        out.starts_with("the matrices agree\n") && out.contains(NOTICE),
        "{out}"
    );
    // The YAML twin of a matrix is the same matrix.
    let yaml = before.replace("matrix.json", "matrix.yaml");
    let (code, out, _) = run(&["diff"], &[&before, &yaml]);
    assert_eq!(code, 0, "{out}");

    // A summary shows in no cell brief and in no Markdown table, yet the files differ.
    let (_, mut m) = demo_matrix(dir.path());
    m["packages"][0]["summary"] = "edited".into();
    let after = write_json(dir.path(), "summary.json", &m);
    let (code, out, _) = run(&["diff"], &[&before, &after]);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.starts_with("no cell's outcome, cause, version or dependencies changed and the Markdown renderings are equal, but the matrices differ"),
        "{out}"
    );
}

/// A new snapshot often moves a cell's dependencies while its own version stays: `diff` names
/// such a cell and the dependencies that moved, also when another cell's version changed too
/// (an end-to-end review found them left out then, and only counted when nothing else moved).
/// A side without closures compares none.
#[test]
fn diff_names_cells_whose_dependencies_moved() {
    let dir = tempfile::tempdir().unwrap();
    let (before, m) = demo_matrix(dir.path());
    let cells = m["cells"].as_array().unwrap();
    // Two installing cells with a dependency each: one gets a new dependency version only,
    // the other a new root version as well.
    let with_deps: Vec<usize> = (0..cells.len())
        .filter(|&i| {
            cells[i]["outcome"] == "installs" && cells[i]["closure"].as_array().unwrap().len() > 1
        })
        .take(2)
        .collect();
    assert_eq!(
        with_deps.len(),
        2,
        "the demo has installing cells with dependencies"
    );
    let mut moved = m.clone();
    let (a, b) = (with_deps[0], with_deps[1]);
    let dep_of = |i: usize| -> (String, usize) {
        let c = &cells[i];
        let k = c["closure"]
            .as_array()
            .unwrap()
            .iter()
            .position(|p| p["name"] != c["package"])
            .unwrap();
        (c["closure"][k]["name"].as_str().unwrap().to_string(), k)
    };
    let (dep_a, k) = dep_of(a);
    let old_a = cells[a]["closure"][k]["version"]
        .as_str()
        .unwrap()
        .to_string();
    moved["cells"][a]["closure"][k]["version"] = "99.0.0".into();
    moved["cells"][b]["root_version"] = "98.0.0".into();
    let after = write_json(dir.path(), "moved.json", &moved);
    let (code, out, err) = run(&["diff"], &[&before, &after]);
    assert_eq!(code, 1, "{out}{err}");
    let (pa, ia) = (
        cells[a]["package"].as_str().unwrap(),
        cells[a]["image"].as_str().unwrap(),
    );
    assert!(out.starts_with("2 cells changed\n"), "{out}");
    assert!(
        out.contains(&format!(
            "  {pa} on {ia}: installs {}\n    dependencies: {dep_a} {old_a} -> 99.0.0\n",
            cells[a]["root_version"].as_str().unwrap()
        )),
        "{out}"
    );
    let (_, json, _) = run(&["diff"], &[&before, &after, "--format", "json"]);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let change = v["changes"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["package"] == pa && c["image"] == ia)
        .unwrap_or_else(|| panic!("{json}"));
    assert_eq!(
        change["dependencies"][0]["name"],
        dep_a.as_str(),
        "{change}"
    );
    assert_eq!(
        change["dependencies"][0]["after"]["version"], "99.0.0",
        "{change}"
    );

    // The entry's own build changing is a change, named as such; a cell that stops
    // resolving lists no dependencies gone with it.
    let mut rebuilt = m.clone();
    let root = cells[b]["closure"]
        .as_array()
        .unwrap()
        .iter()
        .position(|p| p["name"] == cells[b]["package"])
        .unwrap();
    let was = cells[b]["closure"][root]["build"]
        .as_str()
        .unwrap()
        .to_string();
    let other = if was == "source" {
        "prebuilt"
    } else {
        "source"
    };
    rebuilt["cells"][b]["closure"][root]["build"] = other.into();
    rebuilt["cells"][a]["outcome"] = "fails".into();
    rebuilt["cells"][a]["cause"] = "runtime-too-old".into();
    // As a failing cell reads: a matrix whose cell contradicts itself is refused.
    rebuilt["cells"][a]["explanation"] = serde_json::json!(["needs a newer runtime"]);
    rebuilt["cells"][a]["closure"] = serde_json::json!([]);
    rebuilt["cells"][a]["closure_size"] = 0.into();
    rebuilt["cells"][a]
        .as_object_mut()
        .unwrap()
        .remove("root_version");
    let after = write_json(dir.path(), "rebuilt.json", &rebuilt);
    let (_, out, _) = run(&["diff"], &[&before, &after]);
    let (pb, ib, vb) = (
        cells[b]["package"].as_str().unwrap(),
        cells[b]["image"].as_str().unwrap(),
        cells[b]["root_version"].as_str().unwrap(),
    );
    assert!(
        out.contains(&format!(
            "  {pb} on {ib}: installs {vb} [{was}] -> installs {vb} [{other}]\n"
        )),
        "{out}"
    );
    assert!(
        out.contains(&format!("  {pa} on {ia}: installs "))
            && !out.contains(&format!("{dep_a} {old_a} -> (absent)")),
        "{out}"
    );

    // Without closures on one side, dependencies are not compared.
    let mut bare = moved.clone();
    for cell in bare["cells"].as_array_mut().unwrap() {
        cell.as_object_mut().unwrap().remove("closure");
    }
    let after = write_json(dir.path(), "bare.json", &bare);
    let (_, out, _) = run(&["diff"], &[&before, &after]);
    assert!(
        out.contains("1 cells changed") || out.contains("1 cell changed"),
        "{out}"
    );
    assert!(!out.contains("dependencies:"), "{out}");
}

/// Plans `registry` (on one Debian image with a full toolchain, wombat and koala as
/// priorities) into `dir/name`; returns the matrix.json path.
fn plan_registry(dir: &Path, name: &str, registry: &str) -> String {
    let images = common::write(
        dir,
        "images.yaml",
        "images:\n  - {id: deb, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64, packages: [build-essential]}\n",
    );
    let priorities = common::write(
        dir,
        "priorities.yaml",
        "priorities:\n  - wombat\n  - koala\n",
    );
    let registry = common::write(dir, &format!("{name}.yaml"), registry);
    let out = dir.join(name);
    let (code, stdout, stderr) = run(
        &["plan"],
        &[
            "--registry",
            registry.to_str().unwrap(),
            "--images",
            images.to_str().unwrap(),
            "--priorities",
            priorities.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
        ],
    );
    assert_eq!(code, 0, "{stdout}{stderr}");
    out.join("matrix.json").to_str().unwrap().to_string()
}

/// The dependency changes `diff --format json` lists for `package` on deb.
fn dependency_changes(before: &str, after: &str, package: &str) -> Option<serde_json::Value> {
    let (code, json, err) = run(&["diff"], &[before, after, "--format", "json"]);
    assert_eq!(code, 1, "{json}{err}");
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    v["changes"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["package"] == package)
        .map(|c| c["dependencies"].clone())
}

/// `diff` lists as dependency changes exactly the closure packages other than the cell's own
/// whose version or build moved, those gone included: a root that only moves its own version
/// lists no dependency (not itself), a dependency that is no longer installed is listed with
/// nothing after it, and a dependency that gains a prebuilt is listed though its version
/// stays. A dependency dropped silently, or a build change missed, hides that a cell stopped
/// (or started) needing a compiler; listing the root as its own dependency misreads a version
/// bump as a dependency move (from a mutation review, where all three survived).
#[test]
fn diff_lists_dependencies_gone_rebuilt_but_not_the_root() {
    let dir = tempfile::tempdir().unwrap();
    let head = "packages:
  - name: wombat
    versions:
      - version: \"1.0.0\"
        depends: [{name: dingo}, {name: galah}]
  - name: dingo
    versions:
      - version: \"1.0.0\"
";
    let tail = "  - name: galah
    versions:
      - version: \"1.0.0\"
  - name: koala
    versions:
      - version: \"1.0.0\"
";
    let before = plan_registry(dir.path(), "a", &format!("{head}{tail}"));
    // galah leaves wombat's closure and nothing else changes.
    let gone = plan_registry(
        dir.path(),
        "gone",
        &format!("{head}{tail}").replace(", {name: galah}", ""),
    );
    let deps = dependency_changes(&before, &gone, "wombat").expect("wombat changed");
    assert_eq!(deps.as_array().map(Vec::len), Some(1), "{deps}");
    assert_eq!(deps[0]["name"], "galah", "{deps}");
    assert_eq!(deps[0]["before"]["version"], "1.0.0", "{deps}");
    assert!(deps[0]["after"].is_null(), "{deps}");
    let (_, text, _) = run(&["diff"], &[&before, &gone]);
    assert!(
        text.contains("    dependencies: galah 1.0.0 -> (absent)\n"),
        "{text}"
    );
    // dingo gains a prebuilt of the same version; koala moves its own version only.
    let rebuilt = plan_registry(
        dir.path(),
        "rebuilt",
        &format!(
            "{head}        builds: {{source: true, prebuilt: [linux/glibc/x86_64]}}\n{tail}      - version: \"1.1.0\"\n"
        ),
    );
    let deps = dependency_changes(&before, &rebuilt, "wombat").expect("wombat changed");
    assert_eq!(deps.as_array().map(Vec::len), Some(1), "{deps}");
    assert_eq!(deps[0]["name"], "dingo", "{deps}");
    assert_eq!(deps[0]["before"]["build"], "source", "{deps}");
    assert_eq!(deps[0]["after"]["build"], "prebuilt", "{deps}");
    let koala = dependency_changes(&before, &rebuilt, "koala").expect("koala changed");
    assert!(
        koala.is_null() || koala.as_array().is_some_and(Vec::is_empty),
        "{koala}"
    );
    let (_, text, _) = run(&["diff"], &[&before, &rebuilt]);
    assert!(
        text.contains("  koala on deb: installs 1.0.0 -> installs 1.1.0\n")
            && !text.contains("dependencies: koala"),
        "{text}"
    );
}

/// Names come from registries nobody vetted: an escape sequence in one must reach the
/// terminal as visible text, not clear the screen or hide the lines after it.
#[test]
fn control_characters_in_names_print_as_escapes_in_text_reports() {
    let dir = tempfile::tempdir().unwrap();
    let (before, mut m) = demo_matrix(dir.path());
    let evil = "wattle\u{1b}[8m-core\u{202e}x";
    m["packages"][1]["name"] = evil.into();
    for cell in m["cells"].as_array_mut().unwrap() {
        if cell["package"] == "wattle-core" {
            cell["package"] = evil.into();
        }
    }
    let after = write_json(dir.path(), "after.json", &m);
    let (code, out, _) = run(&["diff"], &[&before, &after]);
    assert_eq!(code, 1);
    assert!(
        !out.contains('\u{1b}') && !out.contains('\u{202e}'),
        "{out:?}"
    );
    assert!(
        out.contains("wattle\\u{1b}[8m-core\\u{202e}x on deb-2.4"),
        "{out}"
    );
    // JSON keeps the name exactly, escaped as JSON escapes it.
    let (_, json, _) = run(&["diff"], &[&before, &after, "--format", "json"]);
    let json: serde_json::Value = serde_json::from_str(&json).unwrap();
    assert!(
        json["changes"]
            .as_array()
            .unwrap()
            .iter()
            .any(|c| c["package"] == evil),
        "{json}"
    );
}

/// A matrix file with its notice edited away still renders with basefit's notice, in JSON
/// and YAML as in Markdown and HTML.
#[test]
fn render_of_a_matrix_file_always_carries_the_notice() {
    let dir = tempfile::tempdir().unwrap();
    let (_, mut m) = demo_matrix(dir.path());
    m["notice"] = "".into();
    let edited = write_json(dir.path(), "edited.json", &m);
    for format in ["json", "yaml", "markdown"] {
        let (code, out, err) = run(&["render"], &["--matrix", &edited, "--format", format]);
        assert_eq!(code, 0, "{err}");
        assert!(out.contains(NOTICE), "{format}: {out}");
    }
}

/// saltbush on deb-2.4 is predicted to fail for its runtime; a recorded failure whose log
/// shows a missing header failed for another reason, which `review` says. The rendered
/// matrix must not count it as an agreement: a reader would take the predicted cause as the
/// one to fix.
#[test]
fn a_failure_for_another_cause_is_not_rendered_as_agreement() {
    let dir = tempfile::tempdir().unwrap();
    let results = common::write(
        dir.path(),
        "results.yaml",
        "results:\n  - {package: saltbush, image: deb-2.4, outcome: failed, \
         log: 'salt.c:1:10: fatal error: zlib.h: No such file or directory'}\n",
    );
    let mut args = DEMO.to_vec();
    args.extend(["--results", results.to_str().unwrap()]);
    let (_, review, _) = run(&["review"], &args);
    assert!(review.contains("differs from the prediction"), "{review}");
    let (code, json, err) = run(&["render"], &[&args[..], &["--format", "json"]].concat());
    assert_eq!(code, 0, "{err}");
    let json: serde_json::Value = serde_json::from_str(&json).unwrap();
    let cell = json["cells"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["package"] == "saltbush" && c["image"] == "deb-2.4")
        .unwrap();
    assert_eq!(cell["recorded"]["verdict"], "agreed-failure", "{cell}");
    assert_eq!(cell["recorded"]["cause_agrees"], false, "{cell}");
    assert!(
        cell["recorded"]["detail"]
            .as_str()
            .unwrap()
            .starts_with("failed for another cause than predicted: "),
        "{cell}"
    );
    let (_, md, _) = run(&["render"], &args);
    assert!(
        md.contains(
            "Recorded installs cover 1 cell: 0 agree, 0 contradict the prediction, 1 neither"
        ),
        "{md}"
    );
}

/// A `packages` list on an extending image replaces its base's: one without the compiler
/// package drops the compiler as `remove` does, and the inherited `toolchain: true` goes
/// with it, noted the same way. Two ways to write the same slim image plan the same.
#[test]
fn a_packages_list_without_the_compiler_drops_an_inherited_toolchain() {
    let dir = tempfile::tempdir().unwrap();
    let images = "images:\n  - {id: full, runtime: 3.2.0, family: debian, platform: linux/glibc/x86_64, toolchain: true, packages: [build-essential, libpq-dev]}\n  - {id: by-list, extends: full, packages: [ca-certificates]}\n  - {id: by-remove, extends: full, remove: [build-essential, libpq-dev], add: [ca-certificates]}\n  - {id: keeps-it, extends: full, packages: [build-essential]}\n  - {id: other-family, extends: full, family: alpine, platform: linux/musl/x86_64, packages: [zlib-dev]}\n";
    let args = demo_on_images(dir.path(), images);
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    // The base's compiler is its own family's: an image of another family that lists none
    // of its packages keeps no compiler either.
    for image in ["by-list", "by-remove", "other-family"] {
        let (code, stdout, _) = run(&["explain", "burrowdb", image], &args);
        assert_eq!(code, 1, "{image}: {stdout}");
        assert!(stdout.contains("has no C toolchain"), "{image}: {stdout}");
    }
    let (code, stdout, _) = run(&["explain", "burrowdb", "keeps-it"], &args);
    assert!(!stdout.contains("no C toolchain"), "{code}: {stdout}");
    let (_, stdout, _) = run(&["check"], &args);
    assert!(
        stdout.contains(
            "by-list: inherits toolchain: true from `full` but gives a `packages` list without build-essential; planned without a C toolchain"
        ),
        "{stdout}"
    );
    assert!(!stdout.contains("keeps-it: inherits"), "{stdout}");
}

/// Where the solver gave up, nothing is known of what a cell lacks: `syslibs` and the
/// pre-install set say so rather than "nothing missing" or "does not install alone".
#[test]
fn undecided_cells_are_not_reported_as_lacking_nothing_or_failing() {
    let mut args = DEMO.to_vec();
    args.extend(["--budget", "6"]);
    let (_, syslibs, err) = run(&["syslibs"], &args);
    let line = syslibs
        .lines()
        .find(|l| l.starts_with("  deb-2.4: ") && l.contains("undecided"))
        .unwrap_or_else(|| panic!("{syslibs}{err}"));
    assert!(
        line.contains("so what they lack is unknown; raise --budget: "),
        "{line}"
    );
    assert!(
        syslibs.contains("  deb-2.4: nothing missing among the decided cells\n"),
        "{syslibs}"
    );
    let json: serde_json::Value =
        serde_json::from_str(&run(&["syslibs"], &[&args[..], &["--format", "json"]].concat()).1)
            .unwrap();
    assert!(
        !json["images"][0]["undecided"]
            .as_array()
            .unwrap()
            .is_empty(),
        "{json}"
    );

    // An image whose decided cells lack nothing but whose undecided ones are unknown is not
    // passed by a gate on the exit code (it once exited 0): deb-2.4 alone, whose decided
    // cells lack nothing in the demo.
    let dir = tempfile::tempdir().unwrap();
    let demo_images = std::fs::read_to_string("matrices/demo-images.yaml").unwrap();
    let deb24 = demo_images
        .split("\n  - id: ")
        .find(|block| block.starts_with("deb-2.4\n"))
        .expect("deb-2.4 in the demo images");
    let deb24 = format!("images:\n  - id: {}\n", deb24.trim_end());
    let only = demo_on_images(dir.path(), &deb24);
    let only: Vec<&str> = only.iter().map(String::as_str).collect();
    let (code, syslibs, err) = run(&["syslibs", "--budget", "6"], &only);
    assert!(
        syslibs.contains("  deb-2.4: nothing missing among the decided cells\n")
            && syslibs.contains("undecided"),
        "{syslibs}{err}"
    );
    assert_eq!(code, 1, "{syslibs}");
    let (code, syslibs, _) = run(&["syslibs"], &only);
    assert!(
        syslibs.contains("  deb-2.4: nothing missing\n"),
        "{syslibs}"
    );
    assert_eq!(code, 0, "the same image with every cell decided passes");

    args.extend(["--image", "deb-2.4"]);
    let (_, imageplan, _) = run(&["imageplan"], &args);
    assert!(
        imageplan.contains("undecided alone: the solver ran out of budget"),
        "{imageplan}"
    );
    assert!(
        !imageplan.contains("does not install alone (budget"),
        "{imageplan}"
    );
}

/// A matrix written by an earlier `render --out` carries that rendering's recorded results.
/// Rendered again with other results, only the new ones show (with a note that the old were
/// replaced); rendering into the folder the matrix was read from is refused, since it would
/// overwrite the plan's matrix; and results left out at loading are named on stderr, since
/// the page cannot show them.
#[test]
fn render_shows_only_the_results_it_was_given() {
    let dir = tempfile::tempdir().unwrap();
    let first = dir.path().join("first");
    let mut args = DEMO.to_vec();
    args.extend([
        "--results",
        "demo-data/results.yaml",
        "--out",
        first.to_str().unwrap(),
    ]);
    let (code, _, stderr) = run(&["render"], &args);
    assert_eq!(code, 0, "{stderr}");
    let matrix = first.join("matrix.json");

    let one = common::write(
        dir.path(),
        "one.yaml",
        "results:\n  - package: tidewater-http\n    image: deb-3.2\n    outcome: installed\n    version: \"3.1.0\"\n  - package: tidewater-http\n    image: deb-3.2\n    outcome: FAILED\n",
    );
    let again = [
        "--matrix",
        matrix.to_str().unwrap(),
        "--results",
        one.to_str().unwrap(),
        "--registry",
        "demo-data/registry.yaml",
        "--images",
        "matrices/demo-images.yaml",
        "--format",
        "json",
    ];
    let (code, json, stderr) = run(&["render"], &again);
    assert_eq!(code, 0, "{stderr}");
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let recorded: Vec<&serde_json::Value> = v["cells"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|c| !c["recorded"].is_null())
        .collect();
    assert_eq!(recorded.len(), 1, "{json}");
    assert_eq!(recorded[0]["package"], "tidewater-http");
    assert!(
        stderr.contains("carried recorded results for 11 cells from an earlier rendering"),
        "{stderr}"
    );
    assert!(
        stderr.contains("1 recorded result was left out at loading and is not shown"),
        "{stderr}"
    );
    assert!(
        stderr.contains("one.yaml:8: tidewater-http on deb-3.2: outcome `FAILED`"),
        "{stderr}"
    );

    // One cell carried over is counted as one: from a mutation review, where a note given
    // only from two carried cells up passed every test.
    let second = dir.path().join("second");
    let mut once = again.to_vec();
    once.truncate(once.len() - 2);
    once.extend(["--out", second.to_str().unwrap()]);
    let (code, _, stderr) = run(&["render"], &once);
    assert_eq!(code, 0, "{stderr}");
    let carried = second.join("matrix.json");
    let mut twice = again.to_vec();
    twice[1] = carried.to_str().unwrap();
    let (code, _, stderr) = run(&["render"], &twice);
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stderr.contains("carried recorded results for 1 cell from an earlier rendering"),
        "{stderr}"
    );

    let mut over = again.to_vec();
    over.truncate(over.len() - 2);
    over.extend(["--out", first.to_str().unwrap()]);
    let before = std::fs::read(&matrix).unwrap();
    let (code, _, stderr) = run(&["render"], &over);
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("is the matrix.json that --out"), "{stderr}");
    assert_eq!(std::fs::read(&matrix).unwrap(), before);
}

/// A blank package name is a usage error, not a package explained as missing from the
/// registry.
#[test]
fn explain_refuses_a_blank_package_name() {
    for name in ["", "  "] {
        let mut args = vec![name, "deb-2.4"];
        args.extend(DEMO);
        let (code, stdout, stderr) = run(&["explain"], &args);
        assert_eq!(code, 2, "{stdout}{stderr}");
        assert!(stderr.contains("the package name is empty"), "{stderr}");
        assert!(stdout.is_empty(), "{stdout}");
    }
}

/// A line break inside an input value (a requirement, a version, a declared library or file
/// name) cannot add lines to a report: a problem quoting the value prints it as `\n`, on one
/// line, and a native name holding one leaves its version out as an unusable value, since it
/// would be printed in evidence lines.
#[test]
fn line_breaks_in_values_cannot_forge_report_lines() {
    let dir = tempfile::tempdir().unwrap();
    let registry = common::write(
        dir.path(),
        "r.yaml",
        "packages:\n  - name: pkg-tarn\n    versions:\n      - version: \"1.0.0\"\n        runtime: \">=2\\n  r.yaml:99  forged line\"\n      - version: \"2.0.0\"\n        native: {libraries: [\"zlib\\nforged [certain]: declares zlib\"]}\n      - version: \"3.0.0\"\n        native: {files: [\"src/a.c\\nforged\"]}\n",
    );
    let (code, out, stderr) = run(&["check"], &["--registry", registry.to_str().unwrap()]);
    assert_eq!(code, 1, "{stderr}");
    assert!(!out.contains("\n  r.yaml:99"), "{out}");
    assert!(out.contains("`>=2\\n  r.yaml:99  forged line`"), "{out}");
    assert!(
        out.contains("r.yaml:6  pkg-tarn@2.0.0: native library name \"zlib\\nforged [certain]: declares zlib\" holds a control character"),
        "{out}"
    );
    assert!(
        out.contains(
            "pkg-tarn@3.0.0: native file name \"src/a.c\\nforged\" holds a control character"
        ),
        "{out}"
    );
    assert!(!out.lines().any(|l| l.starts_with("forged")), "{out}");

    let versions = common::write(
        dir.path(),
        "v.csv",
        "package,version\npkg-tarn,1.0.0\npkg-fen,2.0.0\n",
    );
    let deps = common::write(
        dir.path(),
        "d.csv",
        "package,version,dependency,req\npkg-tarn,1.0.0,pkg-fen,\"^2,\n  d.csv:9  forged\"\n",
    );
    let (code, out, stderr) = run(
        &["check"],
        &["--bulk", versions.to_str().unwrap(), deps.to_str().unwrap()],
    );
    assert_eq!(code, 1, "{stderr}");
    assert!(!out.contains("\n  d.csv:9"), "{out}");
    assert!(out.contains("`^2,\\n  d.csv:9  forged`"), "{out}");
}

/// A failing entry with a requirement shows it as written: "no release the entry may take"
/// alone does not say what was asked for.
#[test]
fn a_failing_entry_shows_its_requirement_as_written() {
    let dir = tempfile::tempdir().unwrap();
    let inputs = common::demo_replacing(
        dir.path(),
        "--priorities",
        "priorities:\n  - {name: gumleaf, req: \">=5\"}\n  - {name: saltbush, req: \"^1.2\"}\n",
    );
    let args: Vec<&str> = inputs.iter().map(String::as_str).collect();
    let (code, out, _) = run(&["explain", "gumleaf", "deb-2.4"], &args);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains("the entry asks for gumleaf >=5 (no release the entry may take)"),
        "{out}"
    );
    let (_, out, _) = run(&["explain", "saltbush", "deb-2.4"], &args);
    assert!(
        out.contains("the entry asks for saltbush ^1.2 (1.2.3)"),
        "{out}"
    );
}

/// One early cell that stops failing changes its row, its package's note and its image's
/// counts, and nothing else: numbered notes shifted the number of every later note, and the unified diff
/// was mostly rows whose only change was a number.
#[test]
fn diff_of_one_changed_cell_holds_only_that_cells_lines() {
    let dir = tempfile::tempdir().unwrap();
    let (before, mut m) = demo_matrix(dir.path());
    let first_row = m["packages"].as_array().unwrap().iter().find_map(|p| {
        let name = p["name"].as_str().unwrap();
        m["cells"]
            .as_array()
            .unwrap()
            .iter()
            .position(|c| c["package"] == name && c["outcome"] != "installs")
    });
    let i = first_row.expect("a cell that does not install");
    let cell = &mut m["cells"][i];
    let (package, image) = (
        cell["package"].as_str().unwrap().to_string(),
        cell["image"].as_str().unwrap().to_string(),
    );
    // As a cell that installs reads: a matrix whose cell contradicts itself is refused.
    cell["outcome"] = "installs".into();
    cell["cause"] = serde_json::Value::Null;
    cell["root_version"] = "1.0.0".into();
    cell["closure_size"] = 1.into();
    cell["closure"] = serde_json::json!([{"name": package, "version": "1.0.0", "build": "source"}]);
    // The demo has later notes whose numbers this cell's note would have shifted.
    let notes_after = m["cells"].as_array().unwrap()[i + 1..]
        .iter()
        .filter(|c| c["outcome"] != "installs")
        .count();
    assert!(notes_after > 10, "{notes_after}");
    let after = write_json(dir.path(), "after.json", &m);
    let (code, out, err) = run(&["diff"], &[&before, &after]);
    assert_eq!(code, 1, "{out}{err}");
    assert!(out.starts_with("1 cell changed\n"), "{out}");
    let changed: Vec<&str> = out
        .lines()
        .filter(|l| (l.starts_with('-') || l.starts_with('+')) && !l.starts_with("---"))
        .filter(|l| !l.starts_with("+++"))
        .collect();
    let image_row = format!("| {image} |");
    for l in &changed {
        assert!(
            l.contains(&format!("| {package} |"))
                || l[1..].starts_with(&format!("- **[{package} on "))
                || l[1..].starts_with(&image_row),
            "{l}\n{out}"
        );
    }
    // Its row before and after, its note (which, shared with other images of the row, reads
    // as theirs after), its image's counts before and after.
    assert!(changed.len() <= 6, "{out}");
}

/// `plan --no-closures` writes the same matrix as `plan` but for each cell's closure, whose
/// size stays; a sweep over a whole registry needs it to fit in memory.
#[test]
fn a_plan_without_closures_differs_only_in_them() {
    let dir = tempfile::tempdir().unwrap();
    let matrix = |name: &str, extra: &[&str]| {
        let path = plan_into(&dir.path().join(name), extra);
        let text = std::fs::read_to_string(path).unwrap();
        serde_json::from_str::<serde_json::Value>(&text).unwrap()
    };
    let mut full = matrix("full", &[]);
    let bare = matrix("bare", &["--no-closures"]);
    let mut dropped = 0;
    for cell in full["cells"].as_array_mut().unwrap() {
        if let Some(closure) = cell.as_object_mut().unwrap().remove("closure") {
            assert!(!closure.as_array().unwrap().is_empty());
            dropped += 1;
        }
    }
    assert!(dropped > 100, "{dropped}");
    assert_eq!(full, bare);
}

/// A matrix planned with `--no-closures` against one with closures: the closures are not
/// blamed, the diff says they are not compared, and the matrices otherwise agree.
#[test]
fn a_diff_against_a_matrix_without_closures_says_closures_are_not_compared() {
    let dir = tempfile::tempdir().unwrap();
    let full = plan_into(&dir.path().join("full"), &[]);
    let bare = plan_into(&dir.path().join("bare"), &["--no-closures"]);
    let (code, out, err) = common::run_basefit(["diff", &full, &bare]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(
        out.starts_with("AFTER was planned with --no-closures: closures are not compared")
            && out.contains("the matrices agree"),
        "{out}"
    );
}

/// `check` lists up to five examples of each kind of problem and counts the rest: the demo's
/// five normalised versions are listed with no "and 0 more" line, and a sixth is counted as
/// "and 1 more". From a mutation review, where the cap was off by one at exactly five.
#[test]
fn check_counts_only_the_problems_it_leaves_out() {
    let (_, demo, stderr) = run(&["check"], &DEMO);
    let kind = demo
        .split("(normalised-version): 5\n")
        .nth(1)
        .unwrap_or_else(|| panic!("five normalised versions in the demo: {demo}{stderr}"));
    let listed: Vec<&str> = kind.lines().take_while(|l| l.starts_with("  ")).collect();
    assert_eq!(listed.len(), 5, "{demo}");
    assert!(!demo.contains("more (see --format json)"), "{demo}");

    let dir = tempfile::tempdir().unwrap();
    let versions: Vec<String> = (1..=6)
        .map(|i| format!("{{version: \"v{i}.0\"}}"))
        .collect();
    let registry = common::write(
        dir.path(),
        "registry.yaml",
        format!(
            "packages:\n  - name: numbat-cli\n    versions: [{}]\n",
            versions.join(", ")
        ),
    );
    let mut args = DEMO.to_vec();
    args[1] = registry.to_str().unwrap();
    let (_, six, stderr) = run(&["check"], &args);
    let kind = six
        .split("(normalised-version): 6\n")
        .nth(1)
        .unwrap_or_else(|| panic!("six normalised versions: {six}{stderr}"));
    let listed: Vec<&str> = kind.lines().take_while(|l| l.starts_with("  ")).collect();
    assert_eq!(listed.len(), 6, "{six}");
    assert_eq!(listed[5], "  ... and 1 more (see --format json)", "{six}");
}

/// `diff` warns that cells moving between installs and a native failure may come from
/// `--no-native` exactly when one side was planned with it and the other not, and cells
/// changed; two matrices both planned with `--no-native` get the flag's note but not that
/// warning. From a mutation review, where the condition could be inverted unnoticed.
#[test]
fn diff_warns_of_a_no_native_side_only_when_the_sides_differ_in_it() {
    const MAY_REFLECT: &str = "cells changing between installs and a native failure may reflect that, not a change in the inputs";
    let dir = tempfile::tempdir().unwrap();
    let native = plan_into(&dir.path().join("native"), &[]);
    let skipped = plan_into(&dir.path().join("skipped"), &["--no-native"]);
    let tight = plan_into(&dir.path().join("tight"), &["--no-native", "--budget", "8"]);

    let (code, out, stderr) = run(&["diff"], &[&native, &skipped]);
    assert_eq!(code, 1, "{stderr}");
    assert_eq!(out.lines().nth(1), Some(MAY_REFLECT), "{out}");

    let (code, out, stderr) = run(&["diff"], &[&skipped, &tight]);
    assert_eq!(code, 1, "cells changed with the budget: {out}{stderr}");
    assert!(
        out.starts_with("both were planned with --no-native"),
        "{out}"
    );
    assert!(!out.contains(MAY_REFLECT), "{out}");
}

/// `plan`, `review` and `syslibs` print their JSON and YAML documents with the notice that
/// their text ends with: `syslibs`' JSON carries install commands a pipeline may run in an
/// image build, and none of the three said that predictions need real installs to confirm
/// them (from an end-to-end review). YAML is read back with serde_yaml.
#[test]
fn prediction_reports_carry_the_notice_in_json_and_yaml() {
    let notice = basefit::plan::matrix::NOTICE;
    for command in ["plan", "review", "syslibs"] {
        for format in ["json", "yaml"] {
            let mut args = vec![command, "--quiet", "--format", format];
            args.extend(DEMO);
            if command == "review" {
                args.extend(["--results", "demo-data/results.yaml"]);
            }
            let (code, stdout, stderr) = run_basefit(&args);
            assert!(code <= 1, "{command} {format}: {stderr}");
            let v: serde_json::Value = match format {
                "json" => serde_json::from_str(&stdout).unwrap(),
                _ => serde_yaml::from_str(&stdout).unwrap(),
            };
            assert_eq!(v["notice"], notice, "{command} {format}: {stdout}");
        }
    }
}

/// Every command's `--help` has one layout, and each `--format` value says what it prints:
/// `render`'s values had no descriptions, so clap printed its help in the compact layout
/// while every other command's was long (from an end-to-end review).
#[test]
fn every_format_value_is_described_in_help() {
    for command in [
        "check",
        "plan",
        "explain",
        "review",
        "syslibs",
        "imageplan",
        "render",
        "diff",
    ] {
        let (code, help, stderr) = run_basefit([command, "--help"]);
        assert_eq!(code, 0, "{command}: {stderr}");
        let formats = help
            .split_once("--format <FORMAT>")
            .unwrap_or_else(|| panic!("{command}: {help}"))
            .1;
        assert!(formats.contains("Possible values:"), "{command}: {help}");
        assert!(formats.contains("- json: "), "{command}: {help}");
    }
}

/// `--out` never writes over an input: `plan --images out/matrix.yaml --out out` replaced the
/// images file with the matrix, and `render --results out/matrix.csv --out out` the recorded
/// results with the rendered CSV, both exiting 0 (from a mutation review of the command
/// layer). Each is refused (exit 2) naming the flag and the file, and the input is left as it
/// was; `imageplan`'s charts are checked as well.
#[test]
fn out_never_writes_over_an_input() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().to_str().unwrap().to_string();
    let images = std::fs::read_to_string("matrices/demo-images.yaml").unwrap();
    let results = std::fs::read_to_string("demo-data/results.yaml").unwrap();
    let cases: [(&str, &str, &str, &str); 4] = [
        ("plan", "--images", "matrix.yaml", images.as_str()),
        ("plan", "--images", "matrix.json", images.as_str()),
        ("render", "--results", "matrix.csv", results.as_str()),
        ("imageplan", "--images", "coverage.svg", images.as_str()),
    ];
    for (command, flag, name, content) in cases {
        let input = common::write(dir.path(), name, content);
        let input = input.to_str().unwrap().to_string();
        let mut args: Vec<String> = vec![command.into(), "--quiet".into()];
        args.extend(DEMO.map(String::from));
        match flag {
            "--images" => {
                let at = args.iter().position(|a| a == "--images").unwrap();
                args[at + 1] = input.clone();
            }
            _ => args.extend([flag.to_string(), input.clone()]),
        }
        args.extend(["--out".to_string(), out.clone()]);
        let (code, _, stderr) = run_basefit(&args);
        assert_eq!(code, 2, "{command} {flag} {name}: {stderr}");
        assert!(
            stderr.contains(&format!(
                "{flag} {input} is the {name} that --out {out} would write"
            )),
            "{command}: {stderr}"
        );
        assert_eq!(
            std::fs::read_to_string(&input).unwrap(),
            content,
            "{command}"
        );
        std::fs::remove_file(&input).unwrap();
    }
}

/// `imageplan --out` refused to write over an input only after loading and planning, which on
/// a registry dump takes a while: a registry named `imageplan.yaml` in the `--out` folder is
/// refused before any input is read, so a broken priorities file beside it is not reported first.
#[test]
fn imageplan_refuses_writing_over_an_input_before_planning() {
    let dir = tempfile::tempdir().unwrap();
    let registry = std::fs::read_to_string("demo-data/registry.yaml").unwrap();
    let input = common::write(dir.path(), "imageplan.yaml", &registry);
    let broken = common::write(dir.path(), "priorities.yaml", "priorities: [\n");
    let out = dir.path().to_str().unwrap();
    let (code, _, stderr) = run_basefit([
        "imageplan",
        "--quiet",
        "--registry",
        input.to_str().unwrap(),
        "--images",
        "matrices/demo-images.yaml",
        "--priorities",
        broken.to_str().unwrap(),
        "--out",
        out,
    ]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!(
            "--registry {} is the imageplan.yaml that --out {out} would write",
            input.display()
        )),
        "{stderr}"
    );
    assert!(!stderr.contains("priorities.yaml"), "{stderr}");
    assert_eq!(std::fs::read_to_string(&input).unwrap(), registry);
}

/// Every command that plans from the inputs notes their data-quality problems on stderr, as
/// `plan`, `review` and `render` did: a shard of a plan, `explain`, `syslibs` and `imageplan`
/// said nothing (from a mutation review of the command layer). The demo registry has such
/// problems (demo-data/STORIES.md).
#[test]
fn every_planning_command_notes_data_quality_problems() {
    let dir = tempfile::tempdir().unwrap();
    let shard_out = dir.path().to_str().unwrap();
    let runs: [&[&str]; 7] = [
        &["plan"],
        &["plan", "--shard", "1/2", "--out", shard_out],
        &["explain", "saltbush", "deb-2.4"],
        &["syslibs"],
        &["imageplan"],
        &["review", "--results", "demo-data/results.yaml"],
        &["render", "--format", "csv"],
    ];
    for run in runs {
        let (code, _, stderr) = run_basefit(run.iter().copied().chain(["--quiet"]).chain(DEMO));
        assert!(code <= 1, "{run:?}: {stderr}");
        assert!(
            stderr
                .contains("data-quality problems in the inputs (run `basefit check` for the list)"),
            "{run:?}: {stderr}"
        );
    }
}

/// The text summary of `plan` counts failures by cause as its JSON summary does (README,
/// `plan`: "prints the summary"): every cause with its count, none dropped (from a mutation
/// review of src/report/text.rs, where the line could go unnoticed).
#[test]
fn the_plan_summary_counts_each_failure_cause_as_the_json_does() {
    let (code, text, stderr) = run(&["plan"], &DEMO);
    assert!(code < 2, "{stderr}");
    let (_, json, _) = run(&["plan"], &[&DEMO[..], &["--format", "json"]].concat());
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let causes = v["summary"]["causes"].as_object().unwrap();
    assert!(causes.len() > 3, "{json}");
    let expected: Vec<String> = causes.iter().map(|(c, n)| format!("{c} {n}")).collect();
    let line = format!("\nfailure causes: {}\n", expected.join(", "));
    assert!(text.contains(&line), "{line:?} not in {text}");
}

/// `syslibs` text gives each image's greedy order as steps numbered from 1, with the gains and
/// packages its JSON holds, and one install command per OS family (README, `syslibs`: "a
/// greedy order to add them ... one install command per OS family"): from a mutation review
/// of src/report/text.rs, where neither the numbering nor the family commands were checked.
#[test]
fn syslibs_text_numbers_the_advice_and_gives_each_familys_command() {
    let (code, text, stderr) = run(&["syslibs"], &DEMO);
    assert!(code < 2, "{stderr}");
    let (_, json, _) = run(&["syslibs"], &[&DEMO[..], &["--format", "json"]].concat());
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let words = |a: &serde_json::Value, sep: &str| {
        a.as_array()
            .unwrap()
            .iter()
            .map(|s| s.as_str().unwrap())
            .collect::<Vec<_>>()
            .join(sep)
    };
    let mut steps = 0;
    for image in v["images"].as_array().unwrap() {
        for (n, s) in image["advice"].as_array().unwrap().iter().enumerate() {
            let line = format!(
                "\n      {}. {}  +{:.2} (total {:.2}): {}\n",
                n + 1,
                words(&s["add"], " "),
                s["gain"].as_f64().unwrap(),
                s["cumulative"].as_f64().unwrap(),
                words(&s["unblocks"], ", ")
            );
            assert!(text.contains(&line), "{line:?} not in {text}");
            steps += 1;
        }
    }
    assert!(steps > 1, "{json}");
    let families = v["families"].as_array().unwrap();
    assert!(families.len() > 1, "{json}");
    let section = text
        .split("\nper OS family, everything missing on any of its images:\n")
        .nth(1)
        .unwrap_or_else(|| panic!("{text}"));
    for f in families {
        let line = format!(
            "  {}: {}\n",
            f["family"].as_str().unwrap(),
            f["command"].as_str().unwrap()
        );
        assert!(section.contains(&line), "{line:?} not in {text}");
    }
}

/// The check report says how many problems it found in how many categories, as its JSON
/// holds them, plural where more than one (from a mutation review of src/report/text.rs; the
/// demo's inputs have several problems in several categories).
#[test]
fn the_check_report_counts_its_problems_and_categories() {
    let (_, text, stderr) = run(&["check"], &DEMO);
    let (_, json, _) = run(&["check"], &[&DEMO[..], &["--format", "json"]].concat());
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let groups = v["problems"].as_array().unwrap();
    let total: u64 = groups.iter().map(|g| g["total"].as_u64().unwrap()).sum();
    assert!(groups.len() > 1 && total > 1, "{json}");
    let line = format!("\n{total} problems in {} categories\n", groups.len());
    assert!(text.contains(&line), "{line:?} not in {text}{stderr}");
}

/// `plan`'s weight resolving is a lower bound on an image with undecided cells (they may yet
/// resolve), and says so as `imageplan`'s coverage does (`>=`). With a budget that decides
/// nothing it printed a bare "0.0%" beside 1 undecided cell (from an end-to-end review).
#[test]
fn plan_marks_the_weight_resolving_of_an_image_with_undecided_cells_as_a_lower_bound() {
    let d = tempfile::tempdir().unwrap();
    let registry = common::write(
        d.path(),
        "r.yaml",
        "packages:\n  - name: alpha\n    versions: [{version: \"1.0.0\", depends: [{name: beta, req: \"*\"}]}]\n  - name: beta\n    versions: [{version: \"1.0.0\"}]\n",
    );
    let images = common::write(
        d.path(),
        "i.yaml",
        "images:\n  - {id: deb, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64, toolchain: true}\n",
    );
    let priorities = common::write(d.path(), "p.yaml", "priorities:\n  - alpha\n");
    let args = |budget: &str| {
        vec![
            "plan".to_string(),
            "--registry".into(),
            registry.display().to_string(),
            "--images".into(),
            images.display().to_string(),
            "--priorities".into(),
            priorities.display().to_string(),
            "--budget".into(),
            budget.into(),
        ]
    };
    let (code, stdout, stderr) = common::run_basefit(args("1"));
    assert_eq!(code, 0, "{stderr}");
    let row = stdout.lines().find(|l| l.starts_with("deb ")).unwrap();
    assert!(row.contains(" 1 ") && row.ends_with(">=0.0%"), "{stdout}");
    let (_, stdout, _) = common::run_basefit(args("20000"));
    let row = stdout.lines().find(|l| l.starts_with("deb ")).unwrap();
    assert!(row.ends_with(" 100.0%"), "{stdout}");
    // The rendered Markdown and HTML summaries say the same (the review left them bare).
    for (budget, markdown_cell, html_share) in [
        (
            "1",
            "| 1 | >=0% |",
            "at least <strong>0%</strong> of priority weight resolves",
        ),
        (
            "20000",
            "| 0 | 100% |",
            "<strong>100%</strong> of priority weight resolves",
        ),
    ] {
        let out = tempfile::tempdir().unwrap();
        let mut render = args(budget);
        render[0] = "render".into();
        render.extend(["--out".into(), out.path().display().to_string()]);
        let (code, _, stderr) = common::run_basefit(render);
        assert_eq!(code, 0, "{stderr}");
        let markdown = std::fs::read_to_string(out.path().join("matrix.md")).unwrap();
        let row = markdown.lines().find(|l| l.starts_with("| deb |")).unwrap();
        assert!(row.ends_with(markdown_cell), "{row}");
        let html = std::fs::read_to_string(out.path().join("matrix.html")).unwrap();
        assert!(html.contains(html_share), "budget {budget}");
        assert_eq!(
            html.contains("at least <strong>"),
            budget == "1",
            "budget {budget}"
        );
    }
}

/// `review` without `--matrix` plans only the cells with results; planned with `--no-native`,
/// its predictions never looked at system libraries, and its notice must say so as a whole
/// plan's does, or an agreed install would read as a checked one.
#[test]
fn a_review_planned_with_no_native_says_so() {
    let mut args = DEMO.to_vec();
    args.extend(["--results", "demo-data/results.yaml", "--no-native"]);
    let (_, json, err) = run(&["review"], &[&args[..], &["--format", "json"]].concat());
    let json: serde_json::Value =
        serde_json::from_str(&json).unwrap_or_else(|e| panic!("{e}: {err}"));
    assert_eq!(json["notice"], basefit::plan::matrix::notice(true), "{err}");
}

/// `explain` looks at one cell and plans no list: it runs without `--priorities`. From a
/// mutation review, where refusing it for want of a priority list passed every test.
#[test]
fn explain_needs_no_priority_list() {
    let (code, stdout, stderr) = run(
        &["explain", "quill-xml", "alpine-2.6"],
        &[
            "--registry",
            "demo-data/registry.yaml",
            "--images",
            "matrices/demo-images.yaml",
        ],
    );
    assert!(code == 0 || code == 1, "exit {code}: {stderr}");
    assert!(stdout.contains("quill-xml"), "{stdout}");
}

/// `explain` exits 1 for a cell whose outcome is not `installs`, at-risk and undecided
/// included, and 0 for
/// one that installs (README, "Exit codes"); its JSON's `native_skipped` follows
/// `--no-native`. From a mutation review of src/plan/explain.rs, where an at-risk cell exiting
/// 0 and a flipped `native_skipped` passed every test.
#[test]
fn explain_exits_by_outcome_and_says_whether_native_was_skipped() {
    // Outcomes from demo-data/expected.yaml.
    for (package, image, outcome, want) in [
        ("gumleaf", "deb-2.4", "installs", 0),
        ("skink-html", "deb-3.2-slim", "at-risk", 1),
    ] {
        let (code, json, err) = run(
            &["explain", package, image],
            &[&DEMO[..], &["--format", "json"]].concat(),
        );
        let json: serde_json::Value =
            serde_json::from_str(&json).unwrap_or_else(|e| panic!("{e}: {err}"));
        assert_eq!(json["cell"]["outcome"], outcome, "{package} on {image}");
        assert_eq!(code, want, "{package} on {image}: {err}");
        assert_eq!(json["native_skipped"], false, "{package} on {image}");
    }
    // Undecided is not `installs` either: the demo's saltbush on deb-2.4 runs out of a budget
    // of 8 steps (tests/solver_budget.rs).
    let mut args = DEMO.to_vec();
    args.extend(["--budget", "8", "--format", "json"]);
    let (code, json, err) = run(&["explain", "saltbush", "deb-2.4"], &args);
    let json: serde_json::Value =
        serde_json::from_str(&json).unwrap_or_else(|e| panic!("{e}: {err}"));
    assert_eq!(json["cell"]["outcome"], "undecided", "{err}");
    assert_eq!(code, 1, "{err}");
    let mut args = DEMO.to_vec();
    args.extend(["--no-native", "--format", "json"]);
    let (_, json, err) = run(&["explain", "gumleaf", "deb-2.4"], &args);
    let json: serde_json::Value =
        serde_json::from_str(&json).unwrap_or_else(|e| panic!("{e}: {err}"));
    assert_eq!(json["native_skipped"], true, "{err}");
}
