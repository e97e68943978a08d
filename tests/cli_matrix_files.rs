//! Commands that read matrices or recorded results written earlier: a file that cannot be
//! what it claims, or a run that would compare nothing, is an input error naming the file
//! (exit 2), never an empty report that passes for a clean one.

mod common;

use common::{DEMO, demo_on_images, run_basefit};
use std::path::Path;

/// Runs `command` quietly on the demo inputs, then `rest`; returns (exit code, stdout, stderr).
fn run_on_demo(command: &str, rest: &[&str]) -> (i32, String, String) {
    let mut args = vec![command, "--quiet"];
    args.extend(DEMO);
    args.extend(rest);
    run_basefit(&args)
}

/// Plans the demo into `dir` (optionally one shard of it) and returns the matrix.json path.
fn plan_into(dir: &Path, shard: Option<&str>) -> String {
    let out = dir.to_str().unwrap();
    let mut rest = vec!["--out", out];
    if let Some(s) = shard {
        rest.extend(["--shard", s]);
    }
    let (code, _, stderr) = run_on_demo("plan", &rest);
    assert_eq!(code, 0, "{stderr}");
    format!("{out}/matrix.json")
}

/// Runs `args` with the demo registry and priorities and an images file in `dir` holding
/// only `image` (a YAML flow mapping); returns the exit code and stderr.
fn run_on_one_image(dir: &Path, image: &str, args: &[&str]) -> (i32, String) {
    let flags = demo_on_images(dir, &format!("images:\n- {image}\n"));
    let mut all = args.to_vec();
    all.push("--quiet");
    all.extend(flags.iter().map(String::as_str));
    let (code, _, stderr) = run_basefit(&all);
    (code, stderr)
}

/// `command` (`review` or `render`) reading `matrix` with the demo's recorded results and
/// images, the registry given and, if any, a catalog file.
fn read_with_demo_results(
    command: &str,
    matrix: &str,
    registry: &str,
    catalog: Option<&str>,
) -> (i32, String, String) {
    let mut args = vec![
        command,
        "--quiet",
        "--matrix",
        matrix,
        "--results",
        "demo-data/results.yaml",
        "--images",
        "matrices/demo-images.yaml",
        "--registry",
        registry,
    ];
    if let Some(c) = catalog {
        args.extend(["--catalog", c]);
    }
    run_basefit(args)
}

/// Runs `args` and asserts it is refused as an input error (exit 2) naming `want` on stderr,
/// with nothing on stdout that could pass for a report.
fn assert_refused(args: &[&str], want: &str) {
    let (code, stdout, stderr) = run_basefit(args);
    assert_eq!(code, 2, "{args:?}: {stderr}");
    assert!(stdout.is_empty(), "{args:?}: {stdout}");
    assert!(stderr.contains(want), "{args:?}: wanted {want} in {stderr}");
}

/// Runs every command that plans, explains or reads results against a registry with
/// `inputs` (`explain` on the cell `package` `image`, `review` and `render --results` with
/// `results`), and asserts each is refused with the message `want` gives for the command.
fn assert_every_planning_command_refuses(
    inputs: &[&str],
    [package, image]: [&str; 2],
    results: &str,
    want: impl Fn(&str) -> String,
) {
    let runs: [(&str, &[&str]); 7] = [
        ("plan", &[]),
        ("imageplan", &[]),
        ("syslibs", &[]),
        ("explain", &[package, image]),
        ("review", &["--results", results]),
        ("render", &[]),
        ("render", &["--results", results]),
    ];
    for (command, rest) in runs {
        let mut args = vec![command];
        args.extend(rest);
        args.extend(inputs);
        assert_refused(&args, &want(command));
    }
}

#[test]
fn review_against_a_matrix_needs_the_inputs_it_reads_results_against() {
    let dir = tempfile::tempdir().unwrap();
    let matrix = plan_into(dir.path(), None);
    // Without images and registry every result would be left out, and an empty review
    // would exit 0 with "no surprises".
    let (code, _, stderr) = run_basefit([
        "review",
        "--quiet",
        "--matrix",
        &matrix,
        "--results",
        "demo-data/results.yaml",
    ]);
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("--images"), "{stderr}");
    // With them, the demo's two surprises are found (demo-data/expected.yaml).
    let (code, stdout, stderr) = run_on_demo(
        "review",
        &["--matrix", &matrix, "--results", "demo-data/results.yaml"],
    );
    assert_eq!(code, 1, "{stderr}");
    assert!(
        stdout.contains("11 cells with recorded results"),
        "{stdout}"
    );
}

#[test]
fn a_review_that_can_compare_nothing_is_an_input_error() {
    let dir = tempfile::tempdir().unwrap();
    let empty = common::write(dir.path(), "empty-results.yaml", "results: []\n");
    let (code, _, stderr) = run_on_demo("review", &["--results", empty.to_str().unwrap()]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("empty-results.yaml:1: results file: `results` is missing or empty"),
        "{stderr}"
    );
    // Results recorded on images the images file does not declare: all are left out.
    let (code, stderr) = run_on_one_image(
        dir.path(),
        "{id: elsewhere, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64}",
        &["review", "--results", "demo-data/results.yaml"],
    );
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("demo-data/results.yaml: no recorded result could be compared")
            && stderr.contains("of 12 read, 12 were left out"),
        "{stderr}"
    );
}

#[test]
fn a_matrix_whose_cells_do_not_follow_its_rows_and_columns_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let matrix = plan_into(dir.path(), None);
    let mut m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&matrix).unwrap()).unwrap();
    let cells = m["cells"].as_array_mut().unwrap();
    cells.swap(0, 1);
    let swapped = common::write(
        dir.path(),
        "swapped.json",
        serde_json::to_string(&m).unwrap(),
    );
    for args in [
        vec!["render", "--quiet", "--format", "csv", "--matrix"],
        vec!["diff", &matrix],
    ] {
        let mut args = args.clone();
        args.push(swapped.to_str().unwrap());
        let (code, _, stderr) = run_basefit(&args);
        assert_eq!(code, 2, "{args:?}: {stderr}");
        assert!(
            stderr.contains("swapped.json")
                && stderr.contains("the 1st cell is tidewater-http on deb-2.8"),
            "{args:?}: {stderr}"
        );
    }
}

#[test]
fn a_yaml_matrix_whose_weight_is_no_number_json_can_write_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let matrix = plan_into(dir.path(), None).replace("matrix.json", "matrix.yaml");
    let text = std::fs::read_to_string(&matrix).unwrap();
    let edited = dir.path().join("edited.yaml");
    // Not-a-number and the infinities as the YAML 1.2.2 core schema spells them (section
    // 10.3.2, "Tag Resolution"), and a negative weight, which no priority list can give.
    for weight in [".nan", ".inf", "-.inf", "-1.5"] {
        std::fs::write(
            &edited,
            text.replacen("weight: 8.9", &format!("weight: {weight}"), 1),
        )
        .unwrap();
        let (code, _, stderr) = run_basefit([
            "render",
            "--quiet",
            "--format",
            "json",
            "--matrix",
            edited.to_str().unwrap(),
        ]);
        assert_eq!(code, 2, "{weight}: {stderr}");
        assert!(
            stderr.contains("edited.yaml: the 2nd package row (wattle-core): weight ")
                && stderr.contains("is not a finite number of at least 0"),
            "{weight}: {stderr}"
        );
    }
}

#[test]
fn a_matrix_that_does_not_parse_is_refused_at_file_and_line() {
    let dir = tempfile::tempdir().unwrap();
    let matrix = plan_into(dir.path(), None);
    let text = std::fs::read_to_string(&matrix).unwrap();
    // Cut inside the cells, as an interrupted copy leaves it: JSON then ends on its last line.
    let cut = dir.path().join("cut.json");
    let kept = &text[..text.find("\"cells\"").unwrap() + 20];
    std::fs::write(&cut, kept).unwrap();
    let last = kept.lines().count();
    for args in [
        vec!["render", "--quiet", "--format", "csv", "--matrix"],
        vec!["diff", &matrix],
    ] {
        let mut args = args.clone();
        args.push(cut.to_str().unwrap());
        let (code, _, stderr) = run_basefit(&args);
        assert_eq!(code, 2, "{args:?}: {stderr}");
        assert!(
            stderr.contains(&format!("cut.json:{last}: not a basefit matrix: ")),
            "{args:?}: {stderr}"
        );
        // The prefix says where; the parser's own "at line L column C" would say it twice.
        assert!(
            !stderr.contains(&format!("at line {last} column")),
            "{args:?}: {stderr}"
        );
    }
    // The same for a YAML matrix, whose parser words its positions alike.
    let yaml = common::write(dir.path(), "broken.yaml", "packages: []\n  cells: []\n");
    let (code, _, stderr) = run_basefit(["render", "--quiet", "--matrix", yaml.to_str().unwrap()]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("broken.yaml:2: not a basefit matrix: "),
        "{stderr}"
    );
    assert!(!stderr.contains("at line 2 column"), "{stderr}");
    // A YAML matrix cut off inside a key: the YAML parser places the error on the line after
    // the last, as if the text ended with a line break; the message names the last line.
    let yaml_matrix = matrix.replace("matrix.json", "matrix.yaml");
    let text = std::fs::read_to_string(&yaml_matrix).unwrap();
    let kept = &text[..text.find("\n  runtime:").unwrap() + 6];
    let cut = common::write(dir.path(), "cut.yaml", kept);
    let last = kept.lines().count();
    let (code, _, stderr) = run_basefit(["render", "--quiet", "--matrix", cut.to_str().unwrap()]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!("cut.yaml:{last}: not a basefit matrix: ")),
        "{stderr}"
    );
    // A control character deep in a YAML matrix: serde_yaml words it as a byte position on
    // line 1; the message names its own line.
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    lines[99].push('\u{13}');
    let ctl = common::write(dir.path(), "ctl.yaml", lines.join("\n") + "\n");
    let (code, _, stderr) = run_basefit(["diff", &matrix, ctl.to_str().unwrap()]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("ctl.yaml:100: not a basefit matrix: control character U+0013"),
        "{stderr}"
    );
}

#[test]
fn merge_names_the_shard_file_at_fault() {
    let dir = tempfile::tempdir().unwrap();
    let first = plan_into(&dir.path().join("s1"), Some("1/2"));
    let (code, _, stderr) = run_basefit([
        "merge",
        "--out",
        dir.path().join("m").to_str().unwrap(),
        &first,
        &first,
    ]);
    assert_eq!(code, 2, "{stderr}");
    // Once, without naming the same path again as another part (an end-to-end review found
    // the message saying it three times).
    assert!(
        stderr.contains(&format!(
            "{first}: shard 1/2 is given twice, as parts 1 and 2 (the same file, given twice)"
        )),
        "{stderr}"
    );
    assert!(!dir.path().join("m").exists(), "nothing is written");
    // A link to it is the same file too.
    #[cfg(unix)]
    {
        let link = dir.path().join("link.json");
        std::os::unix::fs::symlink(&first, &link).unwrap();
        let (code, _, stderr) = run_basefit([
            "merge",
            "--out",
            dir.path().join("m").to_str().unwrap(),
            &first,
            link.to_str().unwrap(),
        ]);
        assert_eq!(code, 2, "{stderr}");
        assert!(stderr.contains("(the same file, given twice)"), "{stderr}");
    }
    // Two files of the same shard: the other is named.
    let copy = dir.path().join("copy.json");
    std::fs::copy(&first, &copy).unwrap();
    let (code, _, stderr) = run_basefit([
        "merge",
        "--out",
        dir.path().join("m").to_str().unwrap(),
        &first,
        copy.to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!(
            "{}: shard 1/2 is given twice, as parts 1 and 2 (part 1 is {first})",
            copy.display()
        )),
        "{stderr}"
    );
    // A shard's YAML matrix is the wrong file of the pair: say which one merge reads.
    let yaml = first.replace("matrix.json", "matrix.yaml");
    let (code, _, stderr) = run_basefit([
        "merge",
        "--out",
        dir.path().join("m").to_str().unwrap(),
        &yaml,
    ]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!("{yaml}:1:")) && stderr.contains("matrix.json"),
        "{stderr}"
    );
}

/// A matrix file carries no seal, so a hand edit can make a cell contradict itself: `fails`
/// beside the closure it installs and no cause (an end-to-end review merged, rendered and
/// diffed one as a prediction). Every reader refuses such a cell, naming it, and each
/// contradiction a reader can meet is told apart.
#[test]
fn a_cell_that_contradicts_itself_is_refused_by_every_reader() {
    let dir = tempfile::tempdir().unwrap();
    let (_, code, stderr) = merge_edited(dir.path(), |s| {
        let cells = s[0]["cells"].as_array_mut().unwrap();
        let cell = cells
            .iter_mut()
            .find(|c| c["outcome"] == "installs")
            .unwrap();
        cell["outcome"] = "fails".into();
    });
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("`fails` names no cause"), "{stderr}");

    let whole = plan_into(&dir.path().join("whole"), None);
    let matrix: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&whole).unwrap()).unwrap();
    let at = |outcome: &str| {
        matrix["cells"]
            .as_array()
            .unwrap()
            .iter()
            .position(|c| {
                c["outcome"] == outcome && c["cause"].is_null() == (outcome == "installs")
            })
            .unwrap()
    };
    let (installs, fails) = (at("installs"), at("fails"));
    let native = matrix["cells"]
        .as_array()
        .unwrap()
        .iter()
        .position(|c| c["outcome"] == "fails" && !c["root_version"].is_null())
        .expect("the demo has a native failure");
    type Edit<'a> = (&'a str, usize, &'a dyn Fn(&mut serde_json::Value), &'a str);
    let edits: [Edit; 11] = [
        (
            "no-root.json",
            installs,
            &|c| c["root_version"] = serde_json::Value::Null,
            "`installs` names no root_version",
        ),
        (
            "empty.json",
            installs,
            &|c| {
                c["closure_size"] = 0.into();
                c["closure"] = serde_json::json!([]);
            },
            "`installs` with a closure_size of 0",
        ),
        (
            "size.json",
            installs,
            &|c| c["closure_size"] = 99.into(),
            "with a closure_size of 99",
        ),
        (
            "no-cause.json",
            fails,
            &|c| c["cause"] = serde_json::Value::Null,
            "`fails` names no cause",
        ),
        (
            "conflict-root.json",
            fails,
            &|c| {
                c["cause"] = "dependency-conflict".into();
                c["root_version"] = "1.0.0".into();
            },
            "`fails` (dependency-conflict) names a release it installs",
        ),
        // From a review of the check, which found these let through.
        (
            "installs-cause.json",
            installs,
            &|c| c["cause"] = "dependency-conflict".into(),
            "`installs` names a failure cause",
        ),
        (
            "native-to-installs.json",
            native,
            &|c| c["outcome"] = "installs".into(),
            "`installs` names a failure cause",
        ),
        (
            "fails-budget.json",
            fails,
            &|c| c["cause"] = "budget-exhausted".into(),
            "`fails` with the cause budget-exhausted, which only an undecided cell has",
        ),
        (
            "undecided-cause.json",
            fails,
            &|c| c["outcome"] = "undecided".into(),
            ": the cause of an undecided cell is budget-exhausted",
        ),
        (
            "installs-to-toolchain.json",
            installs,
            &|c| {
                c["outcome"] = "fails".into();
                c["cause"] = "missing-toolchain".into();
            },
            "`fails` gives no explanation",
        ),
        (
            "native-no-root.json",
            native,
            &|c| c["root_version"] = serde_json::Value::Null,
            "names no root_version, though only a cell that resolved fails on what the image lacks",
        ),
    ];
    for (name, i, edit, want) in edits {
        let mut edited = matrix.clone();
        edit(&mut edited["cells"][i]);
        let path = dir.path().join(name);
        std::fs::write(&path, serde_json::to_string_pretty(&edited).unwrap()).unwrap();
        let path = path.to_str().unwrap();
        let ordinal = basefit::report::ordinal(i + 1);
        let cell = format!("{path}: the {ordinal} cell (");
        // Shown beside the cell it names, and by both readers of a whole matrix.
        assert_refused(&["diff", &whole, path], &cell);
        assert_refused(&["diff", &whole, path], want);
        let mut render = vec!["render", "--quiet", "--matrix", path];
        render.extend(common::DEMO);
        assert_refused(&render, want);
    }
    // The unedited matrix, with its native failure that keeps the release it resolved, is
    // read by every reader.
    let mut render = vec!["render", "--quiet", "--matrix", &whole];
    render.extend(common::DEMO);
    let (code, _, stderr) = run_basefit(&render);
    assert_eq!(code, 0, "{stderr}");
}

/// `merge --out` into a shard's own folder wrote the merged matrix over that shard's
/// matrix.json, and the set no longer merged (an end-to-end review): it is refused before
/// anything is read or written, as `render` refuses to write over its `--matrix`.
#[test]
fn merge_refuses_to_write_over_a_shard() {
    let dir = tempfile::tempdir().unwrap();
    let first = plan_into(&dir.path().join("s1"), Some("1/2"));
    let second = plan_into(&dir.path().join("s2"), Some("2/2"));
    let before = std::fs::read(&second).unwrap();
    let out = dir.path().join("s2");
    assert_refused(
        &["merge", "--out", out.to_str().unwrap(), &first, &second],
        &format!(
            "shard {second} is the matrix.json that --out {} would write: merge into another folder",
            out.display()
        ),
    );
    assert_eq!(
        std::fs::read(&second).unwrap(),
        before,
        "the shard is untouched"
    );
    // Spelled another way, it is the same file.
    let dotted = dir.path().join(".").join("s2");
    assert_refused(
        &["merge", "--out", dotted.to_str().unwrap(), &first, &second],
        "merge into another folder",
    );
    // Another folder is fine, and the shards still merge afterwards.
    let (code, _, stderr) = run_basefit([
        "merge",
        "--out",
        dir.path().join("m").to_str().unwrap(),
        &first,
        &second,
    ]);
    assert_eq!(code, 0, "{stderr}");
}

/// How many cells the shard matrix at `path` holds.
fn shard_cells(path: &str) -> usize {
    let shard: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    shard["cells"].as_array().unwrap().len()
}

/// Plans the demo in two shards under `dir`, applies `edit` to the parsed shards, writes them
/// back and merges them; returns the shard paths, the exit code and stderr.
fn merge_edited(
    dir: &Path,
    edit: impl FnOnce(&mut [serde_json::Value; 2]),
) -> ([String; 2], i32, String) {
    let paths = ["1/2", "2/2"].map(|s| plan_into(&dir.join(s.replace('/', "-of-")), Some(s)));
    let mut shards = paths
        .clone()
        .map(|p| serde_json::from_str(&std::fs::read_to_string(p).unwrap()).unwrap());
    edit(&mut shards);
    for (path, shard) in paths.iter().zip(&shards) {
        std::fs::write(path, serde_json::to_string_pretty(shard).unwrap()).unwrap();
    }
    let out = dir.join("merged");
    let (code, _, stderr) = run_basefit([
        "merge",
        "--out",
        out.to_str().unwrap(),
        &paths[0],
        &paths[1],
    ]);
    assert!(code != 2 || !out.exists(), "nothing is written on an error");
    (paths, code, stderr)
}

#[test]
fn merge_names_the_shard_whose_cell_is_wrong_or_missing() {
    let dir = tempfile::tempdir().unwrap();
    // A cell naming an image no part lists.
    let (paths, code, stderr) = merge_edited(dir.path(), |s| {
        s[1]["cells"][0]["image"] = "deb-9.9".into();
    });
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!("{}: the shard's 1st cell", paths[1]))
            && stderr.contains("on deb-9.9) names a package or image the matrix does not list"),
        "{stderr}"
    );
    // A cell moved into the other shard: the part that holds it out of place is named, not
    // the part left without it.
    let (paths, code, stderr) = merge_edited(dir.path(), |s| {
        let moved = s[1]["cells"].as_array_mut().unwrap().remove(0);
        s[0]["cells"].as_array_mut().unwrap().push(moved);
    });
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!("{}: the shard's ", paths[0]))
            && stderr.contains("belongs to shard 2/2, not 1/2"),
        "{stderr}"
    );
    // A cell given twice in one part: the copy's place in the file is counted from 1, and
    // says so by its ordinal, where the whole matrix's cells are counted from 0 (an
    // end-to-end review found "cell 31" beside "cell 6 ..., counting from 0").
    let (paths, code, stderr) = merge_edited(dir.path(), |s| {
        let copy = s[0]["cells"][3].clone();
        s[0]["cells"].as_array_mut().unwrap().push(copy);
    });
    assert_eq!(code, 2, "{stderr}");
    // The copy is the edited file's last cell.
    let last = shard_cells(&paths[0]);
    assert!(
        stderr.contains(&format!(
            "{}: the shard's {} cell (",
            paths[0],
            basefit::report::ordinal(last)
        )) && stderr.contains("is listed twice"),
        "{stderr}"
    );
    // A cell removed: the shard it belongs to is named.
    let (paths, code, stderr) = merge_edited(dir.path(), |s| {
        s[1]["cells"].as_array_mut().unwrap().remove(2);
    });
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!("{}: shard 2/2 lacks its cell for ", paths[1])),
        "{stderr}"
    );
}

/// `merge` holds shards to what `render` and `diff` ask of a matrix, so it never writes one
/// they refuse.
#[test]
fn merge_refuses_what_a_matrix_reader_would() {
    let dir = tempfile::tempdir().unwrap();
    let (paths, code, stderr) = merge_edited(dir.path(), |s| {
        for shard in s.iter_mut() {
            shard["packages"][0]["weight"] = (-5.0).into();
        }
    });
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!("{}: the 1st package row (", paths[0]))
            && stderr.contains("weight -5 is not a finite number of at least 0"),
        "{stderr}"
    );
}

/// Rows and columns added by hand, however many, give an error naming a shard rather than an
/// allocation that ends the run.
#[test]
fn merge_allocates_by_the_cells_the_shards_hold() {
    let dir = tempfile::tempdir().unwrap();
    // 40,000 images x 40,000 packages would be 1.6 billion cells.
    const MANY: usize = 40_000;
    let (paths, code, stderr) = merge_edited(dir.path(), |s| {
        for shard in s.iter_mut() {
            let images = shard["images"].as_array_mut().unwrap();
            let template = images[0].clone();
            let packages = shard["packages"].as_array_mut().unwrap();
            let row = packages[0].clone();
            for i in 0..MANY {
                let mut row = row.clone();
                row["name"] = format!("added-{i}").into();
                packages.push(row);
            }
            let images = shard["images"].as_array_mut().unwrap();
            for i in 0..MANY {
                let mut column = template.clone();
                column["id"] = format!("added-{i}").into();
                images.push(column);
            }
        }
    });
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("lacks its cell for"), "{stderr}");
    assert!(
        stderr.contains(&paths[0]) || stderr.contains(&paths[1]),
        "{stderr}"
    );
}

/// A weight written `-0` reads back as zero, as a priority list's does, so no rendering
/// prints `-0`.
#[test]
fn a_matrix_weight_of_minus_zero_renders_as_zero() {
    let dir = tempfile::tempdir().unwrap();
    let path = plan_into(&dir.path().join("plan"), None);
    let mut m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
    m["packages"][0]["weight"] = (-0.0).into();
    std::fs::write(&path, serde_json::to_string(&m).unwrap()).unwrap();
    let out = dir.path().join("out");
    let (code, _, stderr) =
        run_basefit(["render", "--matrix", &path, "--out", out.to_str().unwrap()]);
    assert_eq!(code, 0, "{stderr}");
    for file in ["matrix.csv", "matrix.html", "matrix.json", "matrix.yaml"] {
        let text = std::fs::read_to_string(out.join(file)).unwrap();
        assert!(
            !text.contains(",-0,") && !text.contains("w -0<") && !text.contains("-0.0"),
            "{file} prints a signed zero"
        );
    }
}

#[test]
fn merge_names_both_shards_that_disagree() {
    let dir = tempfile::tempdir().unwrap();
    // Damage to the first part shows as the second disagreeing with it: which is wrong cannot
    // be told, so both are named.
    let (paths, code, stderr) = merge_edited(dir.path(), |s| {
        s[0]["packages"][0]["weight"] = 0.5.into();
    });
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!(
            "{}: shard 2/2 lists other images or priorities than part 1 (part 1 is {})",
            paths[1], paths[0]
        )),
        "{stderr}"
    );
    let (paths, code, stderr) = merge_edited(dir.path(), |s| {
        s[0]["shard"]["count"] = 3.into();
    });
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!(
            "{}: shard 2/2 does not belong to the split into 3 that part 1 is from (part 1 is {})",
            paths[1], paths[0]
        )),
        "{stderr}"
    );
    let (paths, code, stderr) = merge_edited(dir.path(), |s| {
        s[0]["planned_from"] = "0".into();
    });
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!("(part 1 is {})", paths[0])) && stderr.contains(&paths[1]),
        "{stderr}"
    );
}

#[test]
fn a_plan_left_with_no_image_names_the_images_file() {
    let dir = tempfile::tempdir().unwrap();
    // The only image has a runtime that is not a version: it is left out, not fatal.
    let (code, stderr) = run_on_one_image(
        dir.path(),
        "{id: odd, runtime: soon, family: debian, platform: linux/glibc/x86_64}",
        &["plan"],
    );
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("images.yaml: plan needs at least one image: of 1 read, 1 was left out"),
        "{stderr}"
    );
}

/// Every command that plans a matrix (`plan`, `imageplan`, `syslibs`, and `render` without
/// `--matrix`) refuses one with no image or no priority entry the same way: a flag not given
/// names the flag (`render` offers `--matrix` beside it), a file that left nothing names the
/// file with its counts. `syslibs` used to plan an empty matrix and report nothing missing,
/// and `render` blamed the command line for a file that was given.
#[test]
fn commands_that_plan_a_matrix_need_images_and_priorities() {
    let dir = tempfile::tempdir().unwrap();
    let images = common::write(
        dir.path(),
        "images.yaml",
        "images:\n- {id: odd, runtime: soon, family: debian, platform: linux/glibc/x86_64}\n",
    );
    let priorities = common::write(
        dir.path(),
        "priorities.yaml",
        "priorities:\n- {name: fernwood, weight: -1}\n",
    );
    let (images, priorities) = (images.to_str().unwrap(), priorities.to_str().unwrap());
    let registry = ["--registry", "demo-data/registry.yaml"];
    let demo_images = ["--images", "matrices/demo-images.yaml"];
    let demo_priorities = ["--priorities", "demo-data/priorities.yaml"];
    for command in ["plan", "imageplan", "syslibs", "render"] {
        let needs = match command {
            "render" => {
                "--matrix, or --images and --priorities with at least one entry each to plan from"
            }
            _ => "--images and --priorities with at least one entry each",
        };
        let cases: [(Vec<&str>, String); 4] = [
            (
                [&registry[..], &demo_priorities[..]].concat(),
                format!("command line: {command} needs {needs} (no --images given)"),
            ),
            (
                [&registry[..], &demo_images[..]].concat(),
                format!("command line: {command} needs {needs} (no --priorities given)"),
            ),
            (
                [
                    &registry[..],
                    &["--images", images][..],
                    &demo_priorities[..],
                ]
                .concat(),
                format!(
                    "{images}: {command} needs at least one image: of 1 read, 1 was left out (`basefit check` lists why)"
                ),
            ),
            (
                [
                    &registry[..],
                    &demo_images[..],
                    &["--priorities", priorities][..],
                ]
                .concat(),
                format!(
                    "{priorities}: {command} needs at least one priority entry: of 1 read, 1 was left out (`basefit check` lists why)"
                ),
            ),
        ];
        for (flags, want) in cases {
            let mut args = vec![command, "--quiet"];
            args.extend(&flags);
            assert_refused(&args, &want);
        }
    }
}

/// `explain` looks its image up among those given: with none given it names `--images`, and
/// with a file that left none it names the file with its counts. It used to blame the image
/// id ("no image `deb-3.2`; declared: ", an empty list) either way.
#[test]
fn explain_names_the_images_it_was_not_given() {
    let dir = tempfile::tempdir().unwrap();
    let images = common::write(
        dir.path(),
        "images.yaml",
        "images:\n- {id: deb-3.2, runtime: soon, family: debian, platform: linux/glibc/x86_64}\n",
    );
    let images = images.to_str().unwrap();
    let explain = ["explain", "saltbush", "deb-3.2", "--quiet"];
    let registry = ["--registry", "demo-data/registry.yaml"];
    let cases = [
        (
            [&explain[..], &registry[..]].concat(),
            "command line: explain needs --images with at least one image (no --images given)"
                .to_string(),
        ),
        (
            [&explain[..], &registry[..], &["--images", images][..]].concat(),
            format!(
                "{images}: explain needs at least one image: of 1 read, 1 was left out (`basefit check` lists why)"
            ),
        ),
    ];
    for (args, want) in cases {
        assert_refused(&args, &want);
    }
}

#[test]
fn output_files_that_belong_together_are_replaced_together_or_not_at_all() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    std::fs::create_dir_all(out.join("matrix.json")).unwrap();
    std::fs::write(out.join("matrix.yaml"), "old\n").unwrap();
    let (code, _, stderr) = run_on_demo("plan", &["--out", out.to_str().unwrap()]);
    assert_ne!(code, 0, "{stderr}");
    assert!(stderr.contains("matrix.json"), "{stderr}");
    assert_eq!(
        std::fs::read_to_string(out.join("matrix.yaml")).unwrap(),
        "old\n",
        "the YAML half is not replaced while the JSON half cannot be"
    );
    let left: Vec<_> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert!(left.iter().all(|n| !n.contains(".tmp-")), "{left:?}");
}

#[test]
fn coverage_charts_of_images_whose_ids_make_one_file_name_do_not_overwrite_each_other() {
    let dir = tempfile::tempdir().unwrap();
    // Three base images (one per family and platform); the last two ids differ only in a
    // character a file name cannot hold.
    let flags = demo_on_images(
        dir.path(),
        "images:\n\
         - {id: deb-3.2, runtime: 3.2.0, family: debian, platform: linux/glibc/x86_64}\n\
         - {id: 'arm:3.2', runtime: 3.2.0, family: debian, platform: linux/glibc/aarch64}\n\
         - {id: arm/3.2, runtime: 3.2.0, family: alpine, platform: linux/musl/aarch64}\n",
    );
    let out = dir.path().join("out");
    let mut args = vec!["imageplan".to_string(), "--quiet".to_string()];
    args.extend(flags);
    args.extend(["--out".to_string(), out.to_str().unwrap().to_string()]);
    let (code, _, stderr) = run_basefit(args);
    assert_eq!(code, 0, "{stderr}");
    let mut charts: Vec<String> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".svg"))
        .collect();
    charts.sort();
    assert_eq!(
        charts,
        [
            "coverage-arm_3.2-2.svg",
            "coverage-arm_3.2.svg",
            "coverage.svg"
        ]
    );
    let first = std::fs::read_to_string(out.join("coverage-arm_3.2.svg")).unwrap();
    let second = std::fs::read_to_string(out.join("coverage-arm_3.2-2.svg")).unwrap();
    assert!(first.contains("arm:3.2") && second.contains("arm/3.2"));
}

#[test]
fn render_against_a_matrix_needs_the_inputs_it_reads_results_against() {
    let dir = tempfile::tempdir().unwrap();
    let matrix = plan_into(dir.path(), None);
    // The same guard as review's: without images and registry every recorded result would be
    // dropped and the page rendered without them.
    for command in ["render", "review"] {
        let (code, _, stderr) = run_basefit([
            command,
            "--quiet",
            "--matrix",
            &matrix,
            "--results",
            "demo-data/results.yaml",
        ]);
        assert_eq!(code, 2, "{command}: {stderr}");
        assert!(
            stderr.contains(&format!(
                "{command} --matrix with --results needs the --images"
            )),
            "{command}: {stderr}"
        );
    }
    // A matrix alone renders without them.
    let (code, _, stderr) = run_basefit(["render", "--quiet", "--matrix", &matrix]);
    assert_eq!(code, 0, "{stderr}");

    // Given, but with nothing in it: the file is what to fix, not the command line.
    let broken = common::write(dir.path(), "empty.yaml", "packages: []\n");
    for command in ["render", "review"] {
        let (code, _, stderr) = run_basefit([
            command,
            "--quiet",
            "--matrix",
            &matrix,
            "--results",
            "demo-data/results.yaml",
            "--images",
            "matrices/demo-images.yaml",
            "--registry",
            broken.to_str().unwrap(),
        ]);
        assert_eq!(code, 2, "{command}: {stderr}");
        assert!(
            stderr.contains(&format!(
                "{}: {command} --matrix with --results needs at least one package from here",
                broken.display()
            )),
            "{command}: {stderr}"
        );
    }
}

/// A registry whose every version record is left out (unreadable versions) is named, with its
/// counts, by every command that would plan, explain or read results against it: every cell
/// would fail for want of versions the file has, and results would be set against those
/// failures (or left out, with the results file blamed). `check` still lists why.
#[test]
fn a_registry_with_no_usable_release_is_named_by_every_command_that_needs_one() {
    let dir = tempfile::tempdir().unwrap();
    let registry = common::write(
        dir.path(),
        "registry.yaml",
        "packages:\n  - name: fernwood\n    versions:\n      - {version: nightly}\n      - {version: latest}\n",
    );
    let results = common::write(
        dir.path(),
        "results.yaml",
        "results:\n  - {package: fernwood, image: deb-3.2, outcome: installed}\n",
    );
    let (registry, results) = (registry.to_str().unwrap(), results.to_str().unwrap());
    let inputs = [
        "--quiet",
        "--registry",
        registry,
        "--images",
        "matrices/demo-images.yaml",
        "--priorities",
        "demo-data/priorities.yaml",
    ];
    assert_every_planning_command_refuses(&inputs, ["fernwood", "deb-3.2"], results, |command| {
        format!(
            "{registry}: {command} needs at least one version record: of 2 read, 2 were left out (`basefit check` lists why)"
        )
    });
    // `check` lists the problems rather than refusing the registry.
    let mut args = vec!["check"];
    args.extend(inputs);
    let (code, stdout, stderr) = run_basefit(&args);
    assert_eq!(code, 1, "{stderr}");
    for want in [
        "registry.yaml:4  fernwood@nightly: does not start with a number",
        "registry.yaml:5  fernwood@latest: does not start with a number",
        "registry.yaml:2  fernwood: no usable version record",
    ] {
        assert!(stdout.contains(want), "wanted {want} in {stdout}");
    }

    // The bulk pair is named by its versions file.
    let versions = common::write(
        dir.path(),
        "versions.csv",
        "package,version\nfernwood,nightly\n",
    );
    let deps = common::write(
        dir.path(),
        "dependencies.csv",
        "package,version,dependency\n",
    );
    let (versions, deps) = (versions.to_str().unwrap(), deps.to_str().unwrap());
    let mut args = vec!["plan", "--bulk", versions, deps];
    args.extend(&inputs[3..]);
    let (code, _, stderr) = run_basefit(&args);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!(
            "{versions}: plan needs at least one version record: of 1 read, 1 was left out"
        )),
        "{stderr}"
    );
}

/// Without any registry every cell would be planned as missing from it: each command that
/// plans refuses, naming both ways of giving one. `check` still checks the images and
/// priorities alone.
#[test]
fn every_command_that_plans_refuses_to_run_without_a_registry() {
    let dir = tempfile::tempdir().unwrap();
    let results = common::write(
        dir.path(),
        "results.yaml",
        "results:\n  - {package: tidewater-http, image: deb-3.2, outcome: installed}\n",
    );
    let results = results.to_str().unwrap();
    let inputs = [
        "--quiet",
        "--images",
        "matrices/demo-images.yaml",
        "--priorities",
        "demo-data/priorities.yaml",
    ];
    assert_every_planning_command_refuses(
        &inputs,
        ["tidewater-http", "deb-3.2"],
        results,
        |command| {
            format!(
                "command line: {command} needs a registry to plan from: --registry FILE or --bulk VERSIONS_CSV DEPS_CSV (neither given)"
            )
        },
    );
    let (code, stdout, stderr) = run_basefit(["check", "--images", "matrices/demo-images.yaml"]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.contains("no problems found"), "{stdout}");
}

/// Every message that names the ways of giving a registry spells them alike, as `--help`
/// shows them. `review`/`render --matrix --results` once wrote "(--registry or --bulk)", and
/// giving both once named neither flag.
#[test]
fn messages_spell_the_registry_flags_one_way() {
    let dir = tempfile::tempdir().unwrap();
    let matrix = plan_into(dir.path(), None);
    let spelling = "--registry FILE or --bulk VERSIONS_CSV DEPS_CSV";
    let runs: [&[&str]; 4] = [
        &[
            "plan",
            "--images",
            "matrices/demo-images.yaml",
            "--priorities",
            "demo-data/priorities.yaml",
        ],
        &[
            "review",
            "--matrix",
            &matrix,
            "--results",
            "demo-data/results.yaml",
        ],
        &[
            "render",
            "--matrix",
            &matrix,
            "--results",
            "demo-data/results.yaml",
        ],
        &[
            "check",
            "--registry",
            "demo-data/registry.yaml",
            "--bulk",
            "v.csv",
            "d.csv",
        ],
    ];
    for args in runs {
        let mut all = vec![args[0], "--quiet"];
        all.extend(&args[1..]);
        let (code, _, stderr) = run_basefit(&all);
        assert_eq!(code, 2, "{args:?}: {stderr}");
        assert!(
            stderr.starts_with("basefit: command line: ") && stderr.contains(spelling),
            "{args:?}: wanted {spelling} in {stderr}"
        );
    }
}

/// Against a matrix from an earlier plan, recorded results are read against the registry
/// given; one with no usable release is named, rather than the results file being blamed for
/// results left out against it.
#[test]
fn results_against_a_matrix_name_a_registry_with_no_usable_release() {
    let dir = tempfile::tempdir().unwrap();
    let matrix = plan_into(dir.path(), None);
    let registry = common::write(
        dir.path(),
        "registry.yaml",
        "packages:\n  - name: fernwood\n    versions:\n      - {version: nightly}\n",
    );
    let registry = registry.to_str().unwrap();
    for command in ["review", "render"] {
        assert_refused(
            &[
                command,
                "--quiet",
                "--matrix",
                &matrix,
                "--results",
                "demo-data/results.yaml",
                "--images",
                "matrices/demo-images.yaml",
                "--registry",
                registry,
            ],
            &format!(
                "{registry}: {command} --matrix with --results needs at least one version record from here to read recorded results against; of 1 read, 1 was left out (`basefit check` lists why)"
            ),
        );
    }
}

#[test]
fn render_refuses_results_it_cannot_compare_and_notes_left_out_ones() {
    let dir = tempfile::tempdir().unwrap();
    let none = common::write(
        dir.path(),
        "none.yaml",
        "results:\n  - {package: nosuch, image: deb-3.2, outcome: installed}\n",
    );
    let (code, stdout, stderr) = run_on_demo("render", &["--results", none.to_str().unwrap()]);
    assert_eq!(code, 2, "{stderr}");
    assert!(stdout.is_empty(), "{stdout}");
    assert!(
        stderr.contains("none.yaml: no recorded result could be compared"),
        "{stderr}"
    );
    // One bad row among good ones: rendered, with the note every command gives on stderr.
    let some = common::write(
        dir.path(),
        "some.csv",
        "package,image,outcome\ngumleaf,deb-2.8,installed\ngumleaf,deb-2.8,instaled\n",
    );
    let (code, stdout, stderr) = run_on_demo("render", &["--results", some.to_str().unwrap()]);
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.contains("Recorded installs cover 1 cell:"),
        "{stdout}"
    );
    assert!(
        stderr.contains("data-quality problems in the inputs"),
        "{stderr}"
    );
}

#[test]
fn the_data_quality_note_goes_to_stderr() {
    // The demo registry has planted data-quality problems (demo-data/STORIES.md); README:
    // "Data goes to stdout, diagnostics to stderr".
    for (command, rest) in [
        ("plan", vec![]),
        ("review", vec!["--results", "demo-data/results.yaml"]),
        ("render", vec![]),
    ] {
        let (_, stdout, stderr) = run_on_demo(command, &rest);
        assert!(!stdout.contains("data-quality"), "{command}: {stdout}");
        assert!(
            stderr.contains("note: 10 data-quality problems in the inputs"),
            "{command}: {stderr}"
        );
    }
}

#[test]
fn a_surprise_install_after_a_failed_retry_fails_the_review() {
    let dir = tempfile::tempdir().unwrap();
    let results = common::write(dir.path(), "retries.yaml", "results:
  - {package: spadefoot-compat, image: deb-3.2, outcome: failed, log: \"error: download failed: Connection reset by peer\"}
  - {package: spadefoot-compat, image: deb-3.2, outcome: installed, version: \"0.5.1\"}
");
    let results = results.to_str().unwrap();
    let (code, stdout, stderr) = run_on_demo("review", &["--results", results]);
    assert_eq!(code, 1, "{stderr}");
    assert!(stdout.contains("surprise-install: 1"), "{stdout}");
    let (code, stdout, stderr) = run_on_demo("render", &["--results", results]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.contains("1 contradict the prediction"), "{stdout}");
}

/// A review of a matrix file that can compare no recorded result names the records it could
/// not use, three of them, and counts the rest exactly ("and 1 more" for four, "and 2 more" for
/// five, nothing for three): the reasons are what the user fixes, and a count off by one
/// hides a record (from a mutation review, where both dropping the cells outside the matrix
/// from the reasons and an off-by-one count survived).
#[test]
fn a_review_comparing_nothing_names_the_cells_outside_the_matrix() {
    let dir = tempfile::tempdir().unwrap();
    let matrix = plan_into(&dir.path().join("plan"), None);
    let names = ["kookaburra", "jabiru", "dotterel", "whimbrel", "godwit"];
    for (n, more) in [(3, None), (4, Some("and 1 more")), (5, Some("and 2 more"))] {
        let records: String = names[..n]
            .iter()
            .map(|p| format!("  - {{package: {p}, image: deb-3.2, outcome: failed}}\n"))
            .collect();
        let results = common::write(dir.path(), "results.yaml", format!("results:\n{records}"));
        let (code, _, stderr) = run_on_demo(
            "review",
            &["--matrix", &matrix, "--results", results.to_str().unwrap()],
        );
        assert_eq!(code, 2, "{n}: {stderr}");
        assert!(
            stderr.contains(&format!(
                "{n} name cells the matrix does not have:\n  {}:2: kookaburra on deb-3.2 is not in the matrix\n",
                results.display()
            )),
            "{n}: {stderr}"
        );
        assert!(
            stderr.contains("results.yaml:4: dotterel on deb-3.2 is not in the matrix"),
            "{n}: {stderr}"
        );
        // Three reasons are shown, never a fourth beside a count that leaves it out.
        assert!(
            !stderr.contains("whimbrel on deb-3.2 is not in the matrix"),
            "{n}: {stderr}"
        );
        match more {
            Some(more) => assert!(
                stderr.contains(&format!("  {more} (`basefit check` lists them)")),
                "{n}: {stderr}"
            ),
            None => assert!(!stderr.contains(" more (`basefit check`"), "{n}: {stderr}"),
        }
    }
}

#[test]
fn results_outside_a_matrix_read_from_a_file_are_not_passed_over_in_silence() {
    // mudflat is in the demo registry but not its priority list: a fresh review plans it and
    // finds the recorded failure a surprise; a review of a matrix file cannot, and says so.
    let dir = tempfile::tempdir().unwrap();
    let matrix = plan_into(&dir.path().join("plan"), None);
    let results = common::write(
        dir.path(),
        "results.yaml",
        "results:\n  - {package: mudflat, image: deb-3.2, outcome: failed}\n  - {package: gumleaf, image: deb-3.2, outcome: installed, version: \"2.1.1\"}\n",
    );
    let results = results.to_str().unwrap();
    let (fresh, _, _) = run_on_demo("review", &["--results", results]);
    assert_eq!(
        fresh, 1,
        "a fresh review plans mudflat and finds a surprise"
    );
    // Not compared, it could have been a surprise: the gate does not pass (an end-to-end
    // review of the gate found it passing with --matrix where it failed without). One result
    // reads in the singular, as one left out at loading does.
    let (code, _, stderr) = run_on_demo("review", &["--matrix", &matrix, "--results", results]);
    assert_eq!(code, 1, "{stderr}");
    assert!(
        stderr.contains("note: 1 recorded result names a cell the matrix does not have and was not compared; it could have been a surprise, so the review exits 1; plan the matrix with its package and image, or review without --matrix, which plans it")
            && !stderr.contains("plans them"),
        "{stderr}"
    );
    let (code, _, stderr) = run_on_demo("render", &["--results", results]);
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stderr.contains("1 recorded result names a cell the matrix does not have"),
        "{stderr}"
    );
}

#[test]
fn a_package_with_two_rows_is_refused_by_readers_and_by_merge() {
    let dir = tempfile::tempdir().unwrap();
    let matrix = plan_into(&dir.path().join("whole"), None);
    let mut m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&matrix).unwrap()).unwrap();
    let n = m["images"].as_array().unwrap().len();
    let row = m["packages"][0].clone();
    let cells: Vec<serde_json::Value> = m["cells"].as_array().unwrap()[..n].to_vec();
    m["packages"].as_array_mut().unwrap().push(row);
    m["cells"].as_array_mut().unwrap().extend(cells);
    let twice = common::write(dir.path(), "twice.json", serde_json::to_string(&m).unwrap());
    // `diff` looks cells up by name: it called this matrix equal to the one without the copy.
    let (code, _, stderr) = run_basefit(["diff", &matrix, twice.to_str().unwrap()]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("twice.json: package `tidewater-http` has two rows"),
        "{stderr}"
    );
    // Shards that agree on the same doubled row: the first part is named.
    let (paths, code, stderr) = merge_edited(dir.path(), |s| {
        for shard in s.iter_mut() {
            let row = shard["packages"][0].clone();
            shard["packages"].as_array_mut().unwrap().push(row);
        }
    });
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!(
            "{}: package `tidewater-http` has two rows",
            paths[0]
        )),
        "{stderr}"
    );
}

/// An image with two columns is refused as a package with two rows is: cells are looked up by
/// name, so `diff` would otherwise compare only one of the columns (`Matrix::check_names`:
/// "every package has one row and every image one column").
#[test]
fn an_image_with_two_columns_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let matrix = plan_into(&dir.path().join("whole"), None);
    let mut m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&matrix).unwrap()).unwrap();
    let n = m["images"].as_array().unwrap().len();
    let image = m["images"][0].clone();
    let id = image["id"].as_str().unwrap().to_string();
    let cells = m["cells"].as_array().unwrap().clone();
    let mut doubled = Vec::new();
    for row in cells.chunks(n) {
        doubled.extend(row.iter().cloned());
        doubled.push(row[0].clone());
    }
    m["images"].as_array_mut().unwrap().push(image);
    m["cells"] = doubled.into();
    let twice = common::write(dir.path(), "twice.json", serde_json::to_string(&m).unwrap());
    let (code, _, stderr) = run_basefit(["diff", &matrix, twice.to_str().unwrap()]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!("twice.json: image `{id}` has two columns")),
        "{stderr}"
    );
}

/// Package rows whose weights are each finite but add up past the largest number are refused,
/// as the priority list's loader refuses such a list (`the weights up to this entry add up to
/// more than 1.7e308`; `Matrix::check_rows`): no share of an infinite total means anything.
#[test]
fn a_matrix_whose_weights_add_up_past_the_largest_number_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let matrix = plan_into(&dir.path().join("whole"), None);
    let mut m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&matrix).unwrap()).unwrap();
    assert!(m["packages"].as_array().unwrap().len() >= 2);
    m["packages"][0]["weight"] = 1e308.into();
    m["packages"][1]["weight"] = 1e308.into();
    let huge = common::write(dir.path(), "huge.json", serde_json::to_string(&m).unwrap());
    let (code, _, stderr) = run_basefit(["diff", &matrix, huge.to_str().unwrap()]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr
            .contains("huge.json: the package rows' weights add up to more than a number can hold"),
        "{stderr}"
    );
}

#[test]
fn a_matrix_file_extension_is_read_in_any_case() {
    // Priority lists and results choose their reader by extension in any case; a matrix
    // saved as `.YAML` (or `.Yml`) is YAML too, not JSON that fails at line 1.
    let dir = tempfile::tempdir().unwrap();
    let json = plan_into(dir.path(), None);
    let text = std::fs::read_to_string(json.replace("matrix.json", "matrix.yaml")).unwrap();
    for name in ["MATRIX.YAML", "matrix.Yml"] {
        let upper = common::write(dir.path(), name, &text);
        let (code, stdout, stderr) = run_basefit(["diff", &json, upper.to_str().unwrap()]);
        assert_eq!(code, 0, "{name}: {stderr}");
        assert!(stdout.contains("the matrices agree"), "{name}: {stdout}");
    }
}

/// A matrix records the registry snapshot it was planned from; `review` and `render` given it
/// with recorded results refuse another snapshot, whose releases the predictions never saw
/// (an end-to-end review found a drift explained from an un-yanked release the plan had not
/// seen). The same snapshot in another file order is the same snapshot, a matrix without the
/// record is not checked, and `diff` does not count a snapshot change that moves no cell.
#[test]
fn a_matrix_read_with_results_must_come_from_the_registry_given() {
    let dir = tempfile::tempdir().unwrap();
    let matrix = plan_into(&dir.path().join("p"), None);
    let demo = std::fs::read_to_string("demo-data/registry.yaml").unwrap();
    // A package nobody depends on: no cell moves, but the snapshot is another one.
    let grown = dir.path().join("grown.yaml");
    std::fs::write(
        &grown,
        format!("{demo}  - name: lonely-leaf\n    versions:\n      - {{version: \"1.0.0\"}}\n"),
    )
    .unwrap();
    let with = |registry: &str, matrix: &str, command: &str| {
        read_with_demo_results(command, matrix, registry, None)
    };
    for command in ["review", "render"] {
        let (code, _, stderr) = with(grown.to_str().unwrap(), &matrix, command);
        assert_eq!(code, 2, "{command}: {stderr}");
        assert!(
            stderr.contains(&format!(
                "grown.yaml: is not the registry snapshot the matrix {matrix} was planned from"
            )),
            "{command}: {stderr}"
        );
        let (code, _, stderr) = with("demo-data/registry.yaml", &matrix, command);
        assert_ne!(code, 2, "{command}: {stderr}");
    }
    // The demo's packages in reverse order: the same snapshot.
    let value: serde_yaml::Value = serde_yaml::from_str(&demo).unwrap();
    let mut packages = value["packages"].as_sequence().unwrap().clone();
    packages.reverse();
    let reversed = dir.path().join("reversed.yaml");
    std::fs::write(
        &reversed,
        serde_yaml::to_string(&serde_yaml::Mapping::from_iter([(
            "packages".into(),
            serde_yaml::Value::Sequence(packages),
        )]))
        .unwrap(),
    )
    .unwrap();
    let (code, _, stderr) = with(reversed.to_str().unwrap(), &matrix, "review");
    assert_ne!(code, 2, "{stderr}");
    // Without the record (a matrix from before it), nothing is checked.
    let mut m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&matrix).unwrap()).unwrap();
    assert!(m["registry_fingerprint"].is_string(), "{m}");
    m.as_object_mut().unwrap().remove("registry_fingerprint");
    let old = dir.path().join("old.json");
    std::fs::write(&old, serde_json::to_string(&m).unwrap()).unwrap();
    let (code, _, stderr) = with(grown.to_str().unwrap(), old.to_str().unwrap(), "review");
    assert_ne!(code, 2, "{stderr}");
    // A fingerprint an earlier basefit made (before the format prefix, with another hasher:
    // the demo's, as it printed then) cannot be compared: not refused as another snapshot,
    // which it may well not be, but named in a note, by both readers.
    m["registry_fingerprint"] = "1ac3900c91044a19".into();
    let earlier = dir.path().join("earlier.json");
    std::fs::write(&earlier, serde_json::to_string(&m).unwrap()).unwrap();
    for command in ["review", "render"] {
        let (code, _, stderr) = with(
            "demo-data/registry.yaml",
            earlier.to_str().unwrap(),
            command,
        );
        assert_ne!(code, 2, "{command}: {stderr}");
        assert!(
            stderr.contains(&format!(
                "note: {} records its registry's fingerprint in a form this basefit does not make (another version of basefit wrote it), so it cannot be compared: make sure demo-data/registry.yaml is the snapshot it was planned from, or plan again",
                earlier.display()
            )),
            "{command}: {stderr}"
        );
    }
    let planned: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&matrix).unwrap()).unwrap();
    assert!(
        planned["registry_fingerprint"]
            .as_str()
            .is_some_and(|f| f.starts_with(basefit::plan::replan::REGISTRY_FINGERPRINT_FORMAT)),
        "{planned}"
    );
    // diff: the support matrix is the same.
    let out = dir.path().join("g");
    let (code, _, stderr) = run_basefit([
        "plan",
        "--quiet",
        "--registry",
        grown.to_str().unwrap(),
        "--images",
        "matrices/demo-images.yaml",
        "--priorities",
        "demo-data/priorities.yaml",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    let after = out.join("matrix.json");
    let (code, stdout, _) = run_basefit(["diff", &matrix, after.to_str().unwrap()]);
    assert_eq!(code, 0, "{stdout}");
    assert!(stdout.starts_with("the matrices agree\n"), "{stdout}");
}

/// `render` planning afresh records the registry snapshot in the matrix it writes, as `plan`
/// does, so a later `review --matrix` of the rendered matrix.json refuses another snapshot
/// (README: `plan`, `merge` and `render` write `registry_fingerprint`). From a mutation review
/// of src/commands.rs, where rendering without the fingerprint went unnoticed.
#[test]
fn a_rendered_matrix_records_the_registry_it_was_planned_from() {
    let dir = tempfile::tempdir().unwrap();
    let planned = plan_into(&dir.path().join("plan"), None);
    let planned: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(planned).unwrap()).unwrap();
    let (code, stdout, stderr) = run_on_demo("render", &["--format", "json"]);
    assert_eq!(code, 0, "{stderr}");
    let rendered: serde_json::Value = serde_json::from_str(&stdout).unwrap();
    assert!(
        rendered["registry_fingerprint"].is_string(),
        "{}",
        rendered["registry_fingerprint"]
    );
    assert_eq!(
        rendered["registry_fingerprint"],
        planned["registry_fingerprint"]
    );
}

/// Shards merged by `merge` give the bytes of one `plan` run's matrix.json, registry
/// fingerprint included: `plan` records the snapshot it planned from, and a merged matrix
/// that lost it would no longer have `review --results` refuse a registry other than the one
/// it was planned from.
#[test]
fn merged_shards_keep_the_registry_fingerprint_of_one_run() {
    let dir = tempfile::tempdir().unwrap();
    let whole = plan_into(&dir.path().join("whole"), None);
    let first = plan_into(&dir.path().join("s1"), Some("1/2"));
    let second = plan_into(&dir.path().join("s2"), Some("2/2"));
    let out = dir.path().join("m");
    let (code, _, stderr) = run_basefit(["merge", "--out", out.to_str().unwrap(), &first, &second]);
    assert_eq!(code, 0, "{stderr}");
    let merged = std::fs::read_to_string(out.join("matrix.json")).unwrap();
    let json: serde_json::Value = serde_json::from_str(&merged).unwrap();
    let fingerprint = json["registry_fingerprint"].as_str().unwrap_or_default();
    assert!(!fingerprint.is_empty(), "{}", json["registry_fingerprint"]);
    assert!(
        merged == std::fs::read_to_string(&whole).unwrap(),
        "the merged matrix.json differs from one run's"
    );
}

/// A matrix read with recorded results must have been planned with the catalog given: logs are
/// read, and advice given, by the catalog's libraries, so another one silently turned advice
/// about a library the plan's catalog knows into "the catalog does not know it" (from an
/// end-to-end review of the bulk path). A catalog that reads the same matches; a matrix
/// without the record is not checked.
#[test]
fn a_matrix_read_with_results_must_come_from_the_catalog_given() {
    let dir = tempfile::tempdir().unwrap();
    let matrix = plan_into(&dir.path().join("p"), None);
    let planned: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&matrix).unwrap()).unwrap();
    assert!(
        planned["catalog_fingerprint"]
            .as_str()
            .is_some_and(|f| f.starts_with(basefit::plan::replan::CATALOG_FINGERPRINT_FORMAT)),
        "{planned}"
    );
    let site = common::write(
        dir.path(),
        "site.yaml",
        "libraries:\n  - id: quokka-codec\n    headers: [quokka/codec.h]\n    families:\n      debian: {dev: libquokka-dev}\n",
    );
    let empty = common::write(dir.path(), "empty.yaml", "libraries: []\n");
    let with = |matrix: &str, catalog: Option<&str>, command: &str| {
        read_with_demo_results(command, matrix, "demo-data/registry.yaml", catalog)
    };
    for command in ["review", "render"] {
        let (code, _, stderr) = with(&matrix, Some(site.to_str().unwrap()), command);
        assert_eq!(code, 2, "{command}: {stderr}");
        assert!(
            stderr.contains(&format!(
                "site.yaml: is not the system-library catalog the matrix {matrix} was planned with"
            )),
            "{command}: {stderr}"
        );
        // A catalog file that changes nothing is the same catalog.
        let (code, _, stderr) = with(&matrix, Some(empty.to_str().unwrap()), command);
        assert_ne!(code, 2, "{command}: {stderr}");
    }
    // Planned with the site catalog, read without it.
    let out = dir.path().join("s");
    let (code, _, stderr) = run_on_demo(
        "plan",
        &[
            "--out",
            out.to_str().unwrap(),
            "--catalog",
            site.to_str().unwrap(),
        ],
    );
    assert_eq!(code, 0, "{stderr}");
    let with_site = format!("{}/matrix.json", out.display());
    let (code, _, stderr) = with(&with_site, None, "review");
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("the shipped catalog (no --catalog): is not the system-library catalog"),
        "{stderr}"
    );
    let (code, _, stderr) = with(&with_site, Some(site.to_str().unwrap()), "review");
    assert_ne!(code, 2, "{stderr}");
    // Without the record (a matrix from before it), nothing is checked.
    let mut m = planned.clone();
    m.as_object_mut().unwrap().remove("catalog_fingerprint");
    let old = common::write(dir.path(), "old.json", serde_json::to_string(&m).unwrap());
    let (code, _, stderr) = with(
        old.to_str().unwrap(),
        Some(site.to_str().unwrap()),
        "review",
    );
    assert_ne!(code, 2, "{stderr}");
}

/// A matrix an earlier basefit planned from a registry that writes a platform under another
/// name (`linux/glibc/amd64`) is not refused as planned from another snapshot: this basefit
/// reads that registry's releases otherwise (as `linux/glibc/x86_64`), so it prints the same
/// file otherwise, and the format of its fingerprint says so; a note asks to check the
/// registry. `r2-b651c9a16bfde1aa` is what basefit at commit 8e590e8 (format `r2-`, before
/// platform words were read under their other names) recorded for this registry, run on this
/// project's machine. From a review of that change, which kept the format and so refused the
/// very file the matrix was planned from.
#[test]
fn a_fingerprint_from_before_platform_names_were_read_as_one_is_noted_not_refused() {
    let dir = tempfile::tempdir().unwrap();
    let write = |name: &str, text: &str| {
        let path = dir.path().join(name);
        std::fs::write(&path, text).unwrap();
        path.to_str().unwrap().to_string()
    };
    let registry = write(
        "registry.yaml",
        "packages:\n  - name: tinkerbark\n    versions:\n      - {version: \"1.0.0\", builds: {source: false, prebuilt: [linux/glibc/amd64]}}\n  - name: quollpack\n    versions:\n      - {version: \"1.0.0\"}\n",
    );
    let images = write(
        "images.yaml",
        "images:\n  - {id: deb, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64, toolchain: true}\n",
    );
    let priorities = write(
        "priorities.yaml",
        "priorities:\n  - {name: tinkerbark, weight: 3}\n  - {name: quollpack, weight: 1}\n",
    );
    let results = write(
        "results.yaml",
        "results:\n  - {package: tinkerbark, image: deb, outcome: installed, version: \"1.0.0\"}\n",
    );
    let out = dir.path().join("out");
    let (code, _, stderr) = run_basefit([
        "plan",
        "--quiet",
        "--registry",
        &registry,
        "--images",
        &images,
        "--priorities",
        &priorities,
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    let matrix = out.join("matrix.json");
    let mut m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&matrix).unwrap()).unwrap();
    m["registry_fingerprint"] = "r2-b651c9a16bfde1aa".into();
    let earlier = write("earlier.json", &serde_json::to_string(&m).unwrap());
    let (code, _, stderr) = run_basefit([
        "review",
        "--quiet",
        "--matrix",
        &earlier,
        "--results",
        &results,
        "--images",
        &images,
        "--registry",
        &registry,
    ]);
    assert_ne!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!(
            "note: {earlier} records its registry's fingerprint in a form this basefit does not make"
        )),
        "{stderr}"
    );
}

/// `--no-native` beside a `--matrix` planned with system libraries checked was accepted and
/// ignored: the rendering and the review kept the native verdicts while the command line said
/// they were left out. It is refused (exit 2) for `review` and for `render` with or without
/// results; a matrix planned with `--no-native` still takes the flag.
#[test]
fn no_native_is_refused_beside_a_matrix_planned_with_native_checks() {
    let dir = tempfile::tempdir().unwrap();
    let checked = plan_into(&dir.path().join("checked"), None);
    let want = format!("--no-native does not apply to --matrix {checked}");
    let mut review = vec![
        "review",
        "--matrix",
        &checked,
        "--results",
        "demo-data/results.yaml",
    ];
    review.extend(DEMO);
    review.push("--no-native");
    assert_refused(&review, &want);
    for results in [true, false] {
        let mut render = vec!["render", "--format", "csv", "--matrix", &checked];
        render.extend(DEMO);
        if results {
            render.extend(["--results", "demo-data/results.yaml"]);
        }
        render.push("--no-native");
        assert_refused(&render, &want);
    }
    let skipped = dir.path().join("skipped");
    let out = skipped.to_str().unwrap();
    let (code, _, stderr) = run_on_demo("plan", &["--out", out, "--no-native"]);
    assert_eq!(code, 0, "{stderr}");
    let matrix = format!("{out}/matrix.json");
    let mut render = vec![
        "render",
        "--format",
        "csv",
        "--matrix",
        &matrix,
        "--no-native",
    ];
    render.extend(DEMO);
    let (code, stdout, stderr) = run_basefit(&render);
    assert_eq!(code, 0, "{stderr}");
    assert!(!stdout.is_empty());
}
