//! `plan --cache` through the real command line: a warm run writes exactly the files a cold
//! run writes, a cache another version wrote is replaced with a note, and a damaged cache is
//! an input error naming the file and line (exit 2), never a panic.

mod common;

use std::path::{Path, PathBuf};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Runs `basefit plan` on the demo inputs with `cache`, writing into `out`; returns (exit
/// code, stdout, stderr).
fn plan(cache: &Path, out: &Path) -> (i32, String, String) {
    plan_with(cache, out, &[])
}

/// [`plan`] with more arguments.
fn plan_with(cache: &Path, out: &Path, more: &[&str]) -> (i32, String, String) {
    let r = root();
    let mut args: Vec<std::ffi::OsString> = vec!["plan".into()];
    for (flag, file) in [
        ("--registry", "demo-data/registry.yaml"),
        ("--images", "matrices/demo-images.yaml"),
        ("--priorities", "demo-data/priorities.yaml"),
    ] {
        args.push(flag.into());
        args.push(r.join(file).into());
    }
    args.extend(["--cache".into(), cache.into(), "--out".into(), out.into()]);
    args.extend(more.iter().map(|a| a.into()));
    common::run_basefit(args)
}

fn read(path: PathBuf) -> Vec<u8> {
    std::fs::read(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

/// The "N cells reused, M solved" counts of a run's stderr.
fn counts(stderr: &str) -> (usize, usize) {
    let line = stderr
        .lines()
        .find(|l| l.starts_with("plan cache ") && l.contains(" cells reused, "))
        .unwrap_or_else(|| panic!("no cache line in {stderr}"));
    let numbers: Vec<usize> = line
        .split(|c: char| !c.is_ascii_digit())
        .filter_map(|w| w.parse().ok())
        .collect();
    let n = numbers.len();
    assert!(n >= 2, "{line}");
    (numbers[n - 2], numbers[n - 1])
}

#[test]
fn a_warm_run_writes_the_files_a_cold_run_writes() {
    let d = tempfile::tempdir().unwrap();
    let cache = d.path().join("plan.cache");
    let (code, cold_stdout, cold_err) = plan(&cache, &d.path().join("cold"));
    assert_eq!(code, 0, "{cold_err}");
    let (reused, solved) = counts(&cold_err);
    assert_eq!(reused, 0);
    assert!(solved > 0);
    let (code, warm_stdout, warm_err) = plan(&cache, &d.path().join("warm"));
    assert_eq!(code, 0, "{warm_err}");
    // Nothing changed, so every cell is reused and none solved.
    assert_eq!(counts(&warm_err), (solved, 0));
    assert_eq!(cold_stdout, warm_stdout);
    for file in ["matrix.json", "matrix.yaml"] {
        assert!(
            read(d.path().join("cold").join(file)) == read(d.path().join("warm").join(file)),
            "{file} differs between the cold and the warm run"
        );
    }
}

#[test]
fn a_cache_another_version_wrote_is_replanned_and_replaced() {
    let d = tempfile::tempdir().unwrap();
    let cache = d.path().join("plan.cache");
    // Every cache carried a format and a global fingerprint from the first one on.
    std::fs::write(&cache, "{\"format\": 0, \"global\": 7, \"cells\": []}\n").unwrap();
    let (code, _, stderr) = plan(&cache, &d.path().join("first"));
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stderr.contains("written by another version of basefit; planning from scratch"),
        "{stderr}"
    );
    let (reused, solved) = counts(&stderr);
    assert_eq!(reused, 0);
    // The file now holds this version's cache: the next run reuses every cell.
    let (code, _, stderr) = plan(&cache, &d.path().join("second"));
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(counts(&stderr), (solved, 0));
}

/// JSON without a `format` field is no cache of any version (every one carried it), but some
/// other file given as --cache by mistake: overwriting it would lose it.
#[test]
fn a_json_file_that_is_no_cache_is_refused_and_left_alone() {
    let d = tempfile::tempdir().unwrap();
    let cache = d.path().join("matrix.json");
    let text = "{\"packages\": [], \"cells\": []}\n";
    std::fs::write(&cache, text).unwrap();
    let (code, _, stderr) = plan(&cache, &d.path().join("out"));
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("matrix.json: not a basefit plan cache")
            && stderr.contains("no JSON object with the `format` and `global` fields"),
        "{stderr}"
    );
    assert_eq!(std::fs::read_to_string(&cache).unwrap(), text);
}

#[test]
fn a_damaged_cache_is_an_input_error_naming_file_and_line() {
    let format = basefit::plan::replan::CACHE_FORMAT;
    for (text, line) in [
        // Not JSON at all, on the second line.
        ("{\n  oops\n}\n".to_string(), 2),
        // This version's format, cut short.
        (
            format!("{{\"format\": {format},\n\"global\": 1,\n\"packages\": ["),
            3,
        ),
        // This version's format without its fields.
        (format!("{{\"format\": {format}}}\n"), 1),
    ] {
        let d = tempfile::tempdir().unwrap();
        let cache = d.path().join("plan.cache");
        std::fs::write(&cache, &text).unwrap();
        let (code, _, stderr) = plan(&cache, &d.path().join("out"));
        assert_eq!(code, 2, "{text:?}: {stderr}");
        assert!(
            stderr.contains(&format!("plan.cache:{line}:")),
            "{text:?}: wanted line {line} in {stderr}"
        );
        assert!(stderr.contains("not a basefit plan cache"), "{stderr}");
        // The damaged file is left as it was for the user to look at.
        assert_eq!(std::fs::read_to_string(&cache).unwrap(), text);
    }
}

#[test]
fn a_cache_that_reads_but_is_damaged_is_an_input_error_naming_the_cell() {
    let d = tempfile::tempdir().unwrap();
    let cache = d.path().join("plan.cache");
    let (code, _, stderr) = plan(&cache, &d.path().join("first"));
    assert_eq!(code, 0, "{stderr}");
    // Valid JSON and this version's format, but the first run of the first cell that observed
    // anything is one value longer than its lists and the next one shorter: runs that a
    // re-plan would carry over unread while their packages stay unchanged.
    let mut json: serde_json::Value = serde_json::from_slice(&read(cache.clone())).unwrap();
    let bases = json["bases"].as_array_mut().unwrap();
    let (k, basis) = bases
        .iter_mut()
        .enumerate()
        .find(|(_, b)| b["lengths"].as_array().is_some_and(|l| l.len() >= 2))
        .unwrap();
    let lengths = basis["lengths"].as_array_mut().unwrap();
    lengths[0] = (lengths[0].as_u64().unwrap() + 1).into();
    lengths[1] = (lengths[1].as_u64().unwrap() - 1).into();
    let text = serde_json::to_string(&json).unwrap();
    std::fs::write(&cache, &text).unwrap();
    let (code, _, stderr) = plan(&cache, &d.path().join("second"));
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("plan.cache"), "{stderr}");
    assert!(stderr.contains("not a basefit plan cache"), "{stderr}");
    assert!(
        stderr.contains(&format!("the {} cell (", basefit::report::ordinal(k + 1))),
        "{stderr}"
    );
    assert_eq!(std::fs::read_to_string(&cache).unwrap(), text);
}

#[test]
fn a_cache_edited_where_its_structure_stays_sound_is_an_input_error() {
    let d = tempfile::tempdir().unwrap();
    let cache = d.path().join("plan.cache");
    let (code, _, stderr) = plan(&cache, &d.path().join("first"));
    assert_eq!(code, 0, "{stderr}");
    // One cached prediction changed by hand: every structure check still passes, and a
    // re-plan would carry the cell over unread into the new matrix.
    let text = String::from_utf8(read(cache.clone())).unwrap();
    let edited = text.replacen("\"outcome\":\"installs\"", "\"outcome\":\"fails\"", 1);
    assert_ne!(edited, text);
    std::fs::write(&cache, &edited).unwrap();
    let (code, _, stderr) = plan(&cache, &d.path().join("second"));
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("plan.cache") && stderr.contains("changed after basefit wrote it"),
        "{stderr}"
    );
    assert_eq!(std::fs::read_to_string(&cache).unwrap(), edited);
}

/// JSON that has a `format` number but is no cache (a settings file, an array) is not taken
/// for an older cache and replaced.
#[test]
fn json_with_a_format_number_that_is_no_cache_is_left_alone() {
    for text in [
        "{\"format\": 2, \"name\": \"my settings\"}\n",
        "[18]\n",
        "[18, 5]\n",
    ] {
        let d = tempfile::tempdir().unwrap();
        let cache = d.path().join("settings.json");
        std::fs::write(&cache, text).unwrap();
        let (code, _, stderr) = plan(&cache, &d.path().join("out"));
        assert_eq!(code, 2, "{text}: {stderr}");
        assert!(stderr.contains("not a basefit plan cache"), "{stderr}");
        assert_eq!(std::fs::read_to_string(&cache).unwrap(), text);
    }
}

/// A cache written with other options is set aside whole, and the run says so.
#[test]
fn a_cache_planned_with_other_options_is_set_aside_with_a_note() {
    let d = tempfile::tempdir().unwrap();
    let cache = d.path().join("plan.cache");
    let (code, _, stderr) = plan_with(&cache, &d.path().join("a"), &["--budget", "500"]);
    assert_eq!(code, 0, "{stderr}");
    assert!(!stderr.contains("planning from scratch"), "{stderr}");
    let (code, _, stderr) = plan(&cache, &d.path().join("b"));
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stderr.contains(
            "or with another --budget, --no-native, --no-closures or catalog; planning from scratch"
        ),
        "{stderr}"
    );
    assert_eq!(counts(&stderr).0, 0);
    // Leaving closures out changes every cell's output: set aside too.
    let (code, _, stderr) = plan_with(&cache, &d.path().join("c"), &["--no-closures"]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stderr.contains("planning from scratch"), "{stderr}");
    assert_eq!(counts(&stderr).0, 0);
}

/// The cache is written on one line: a parse error names the column too.
#[test]
fn a_damaged_one_line_cache_names_the_column() {
    let d = tempfile::tempdir().unwrap();
    let cache = d.path().join("plan.cache");
    let (code, _, stderr) = plan(&cache, &d.path().join("a"));
    assert_eq!(code, 0, "{stderr}");
    let text = std::fs::read_to_string(&cache).unwrap();
    assert_eq!(text.lines().count(), 1);
    let at = text.len() / 2 + text[text.len() / 2..].find(',').unwrap();
    let damaged = format!("{};{}", &text[..at], &text[at + 1..]);
    std::fs::write(&cache, &damaged).unwrap();
    let (code, _, stderr) = plan(&cache, &d.path().join("b"));
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("plan.cache:1: ") && stderr.contains(&format!("(column {})", at + 1)),
        "wanted column {} in {stderr}",
        at + 1
    );
}

/// `--cache` naming a file `--out` writes would leave the cache where the matrix should be.
#[test]
fn a_cache_that_is_one_of_the_out_files_is_refused() {
    let d = tempfile::tempdir().unwrap();
    let out = d.path().join("out");
    for cache in [
        out.join("matrix.json"),
        out.join(".").join("matrix.yaml"),
        // Before the folder exists, as written on the command line.
        d.path().join("new").join("matrix.json"),
    ] {
        let dir = if cache.starts_with(&out) {
            out.clone()
        } else {
            d.path().join("new")
        };
        std::fs::create_dir_all(&out).unwrap();
        let (code, _, stderr) = plan(&cache, &dir);
        assert_eq!(code, 2, "{}: {stderr}", cache.display());
        assert!(
            stderr.contains("--cache names the matrix.") && stderr.contains("that --out writes"),
            "{stderr}"
        );
        assert!(!cache.exists());
    }
}

#[test]
fn a_shard_needs_out_and_reports_in_json_when_asked() {
    let d = tempfile::tempdir().unwrap();
    let r = root();
    let inputs = [
        "--registry".to_string(),
        r.join("demo-data/registry.yaml").display().to_string(),
        "--images".to_string(),
        r.join("matrices/demo-images.yaml").display().to_string(),
        "--priorities".to_string(),
        r.join("demo-data/priorities.yaml").display().to_string(),
    ];
    let (code, stdout, stderr) = common::run_basefit(
        ["plan", "--shard", "1/2"]
            .iter()
            .map(|s| s.to_string())
            .chain(inputs.clone()),
    );
    assert_eq!(code, 2, "{stdout}{stderr}");
    assert!(stderr.contains("--shard needs --out DIR"), "{stderr}");
    let out = d.path().join("s1");
    let (code, stdout, stderr) = common::run_basefit(
        ["plan", "--shard", "1/2", "--format", "json", "--out"]
            .iter()
            .map(|s| s.to_string())
            .chain([out.display().to_string()])
            .chain(inputs),
    );
    assert_eq!(code, 0, "{stderr}");
    let v: serde_json::Value = serde_json::from_str(&stdout).unwrap();
    assert_eq!(v["shard"]["index"], 1);
    assert_eq!(v["shard"]["count"], 2);
    // The demo plans 33 entries on 10 images; shard 1/2 holds the even cells.
    assert_eq!(v["total"], 330);
    assert_eq!(v["cells"], 165);
}

/// One shard's cache given to another shard: nothing of it can be reused, and the run says so
/// rather than silently replacing it.
#[test]
fn a_cache_of_another_shard_is_named_in_a_note() {
    let d = tempfile::tempdir().unwrap();
    let cache = d.path().join("plan.cache");
    let (code, _, stderr) = plan_with(&cache, &d.path().join("s1"), &["--shard", "1/2"]);
    assert_eq!(code, 0, "{stderr}");
    assert!(!stderr.contains("holds the cells of"), "{stderr}");
    let (code, _, stderr) = plan_with(&cache, &d.path().join("s2"), &["--shard", "2/2"]);
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stderr.contains("holds the cells of shard 1/2, this run plans shard 2/2"),
        "{stderr}"
    );
    assert_eq!(counts(&stderr).0, 0);
    // The same shard again reuses everything, without the note.
    let (code, _, stderr) = plan_with(&cache, &d.path().join("s2b"), &["--shard", "2/2"]);
    assert_eq!(code, 0, "{stderr}");
    assert!(!stderr.contains("holds the cells of"), "{stderr}");
    assert_eq!(counts(&stderr).1, 0);
}

/// `--cache` naming an input of the run is refused before anything is read or written, and a
/// file that is no cache of this version is not called one to delete: `--cache images.yaml`
/// said "delete it to plan from scratch" of the images file (from an end-to-end review).
#[test]
fn a_cache_path_that_is_an_input_is_refused_and_no_other_file_is_called_deletable() {
    let d = tempfile::tempdir().unwrap();
    let images = root().join("matrices/demo-images.yaml");
    let before = read(images.clone());
    let (code, _, stderr) = plan(&images, &d.path().join("out"));
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains(&format!(
            "--cache names --images {}, an input of this run",
            images.display()
        )),
        "{stderr}"
    );
    assert_eq!(read(images), before);
    // Some other file that is no cache: the advice covers both readings.
    let other = d.path().join("notes.txt");
    std::fs::write(&other, "remember the milk\n").unwrap();
    let (code, _, stderr) = plan(&other, &d.path().join("out"));
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("if it is another file, give --cache a path of its own"),
        "{stderr}"
    );
    assert_eq!(
        std::fs::read_to_string(&other).unwrap(),
        "remember the milk\n"
    );
}
