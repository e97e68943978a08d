//! `fuse` writes a priority list that basefit's own priority reader accepts, in fused order.

mod common;

use basefit::load::{Ledger, read_priorities};
use std::ffi::OsStr;

#[test]
fn fused_list_reads_back_as_a_priority_list() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("priorities.yaml");
    let (code, _) = fuse(&[
        OsStr::new("--source"),
        OsStr::new("demo-data/sources/downloads.csv"),
        OsStr::new("--source"),
        OsStr::new("demo-data/sources/usage.csv"),
        OsStr::new("--method"),
        OsStr::new("rank-sum"),
        OsStr::new("--out"),
        out.as_os_str(),
    ]);
    assert_eq!(code, 0);
    let mut ledger = Ledger::default();
    let list = read_priorities(&out, &mut ledger).unwrap();
    assert!(ledger.is_clean(), "{:?}", ledger.problems);
    let names: Vec<&str> = list.entries.iter().map(|e| e.name.as_str()).collect();
    // Ranks by hand. downloads.csv summed per name: tidewater-http 1200 (1), wattle-core 700
    // (2), gumleaf 650 (3), saltbush 100 (4), brolga-cli absent (5 = worst plus one).
    // usage.csv: wattle-core 1, gumleaf 2, saltbush 3, brolga-cli 4, tidewater-http absent (5).
    // Sums: wattle-core 3, gumleaf 5, tidewater-http 6, saltbush 7, brolga-cli 9.
    assert_eq!(
        names,
        [
            "wattle-core",
            "gumleaf",
            "tidewater-http",
            "saltbush",
            "brolga-cli"
        ]
    );
}

#[test]
fn sources_with_no_usable_row_or_an_empty_window_are_input_errors() {
    let dir = tempfile::tempdir().unwrap();
    let source = dir.path().join("bad.csv");
    std::fs::write(&source, "name,rank\n,1\nnumbat,x\n").unwrap();
    let out = dir.path().join("priorities.yaml");
    let stderr = fuse_refused(&[
        "--source",
        source.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(
        stderr.contains("bad.csv") && stderr.contains("no usable row"),
        "{stderr}"
    );
    assert!(!out.exists(), "an empty list is not written");
    // A window that ends before it starts holds no day.
    let stderr = fuse_refused(&[
        "--source",
        "demo-data/sources/downloads.csv",
        "--window",
        "2024-12-31..2024-01-01",
    ]);
    assert!(stderr.contains("ends before it starts"), "{stderr}");
}

/// Runs `basefit fuse` with `args`; returns its exit code and stderr.
fn fuse<S: AsRef<OsStr>>(args: &[S]) -> (i32, String) {
    let all = std::iter::once(OsStr::new("fuse")).chain(args.iter().map(AsRef::as_ref));
    let (code, _, stderr) = common::run_basefit(all);
    (code, stderr)
}

/// Runs `basefit fuse` with `args`, asserts it is refused as an input error (exit 2), and
/// returns its stderr.
fn fuse_refused(args: &[&str]) -> String {
    let (code, stderr) = fuse(args);
    assert_eq!(code, 2, "fuse {args:?}: {stderr}");
    stderr
}

#[test]
fn share_sum_names_the_row_without_a_score() {
    let dir = tempfile::tempdir().unwrap();
    let source = dir.path().join("stars.csv");
    std::fs::write(&source, "rank,name,score\n1,gumleaf,420\n2,numbat,\n").unwrap();
    let stderr = fuse_refused(&[
        "--method",
        "share-sum",
        "--source",
        source.to_str().unwrap(),
    ]);
    assert!(
        stderr.contains(&format!(
            "{}:3: share-sum fusion needs a score for every entry, but `numbat` has an empty `score`",
            source.display()
        )),
        "{stderr}"
    );
    // A ranking without the column is refused at its header.
    let stderr = fuse_refused(&[
        "--method",
        "share-sum",
        "--source",
        "demo-data/sources/usage.csv",
    ]);
    assert!(
        stderr.contains("demo-data/sources/usage.csv:1: share-sum fusion needs a score")
            && stderr.contains("no `score` column"),
        "{stderr}"
    );
    // Blank lines may come before the header: the error names the header's own line.
    let spaced = dir.path().join("spaced.csv");
    std::fs::write(&spaced, "\n\nrank,name\n1,gumleaf\n").unwrap();
    let stderr = fuse_refused(&[
        "--method",
        "share-sum",
        "--source",
        spaced.to_str().unwrap(),
    ]);
    assert!(
        stderr.contains(&format!(
            "{}:3: share-sum fusion needs a score",
            spaced.display()
        )),
        "{stderr}"
    );
}

/// A source with a header and no row is refused at the header's line, blank lines around it
/// or not, as the other problems with a source's header are.
#[test]
fn a_source_with_no_rows_is_refused_at_its_header() {
    let dir = tempfile::tempdir().unwrap();
    for (text, line) in [
        ("name,score\n", 1),
        ("\n\nrank,name\n\n", 3),
        ("\r\nname,score\r\n\r\n", 2),
    ] {
        let source = dir.path().join("headed.csv");
        std::fs::write(&source, text).unwrap();
        let stderr = fuse_refused(&["--source", source.to_str().unwrap()]);
        let want = format!("{}:{line}: no entries after the header", source.display());
        assert!(
            stderr.contains(&want),
            "{text:?}: wanted {want} in {stderr}"
        );
    }
}

/// A source row left out (no name) is listed on stderr and the run exits 1, as README's exit
/// codes say: the list was written, but not from every row given.
#[test]
fn a_row_left_out_is_listed_and_exits_one() {
    let dir = tempfile::tempdir().unwrap();
    let source = dir.path().join("gappy.csv");
    std::fs::write(&source, "name,rank\nnumbat,1\n,2\nquokka,3\n").unwrap();
    let out = dir.path().join("priorities.yaml");
    let (code, stderr) = fuse(&[
        OsStr::new("--source"),
        source.as_os_str(),
        OsStr::new("--out"),
        out.as_os_str(),
    ]);
    assert_eq!(code, 1, "{stderr}");
    assert!(stderr.contains("gappy.csv:3"), "{stderr}");
    let mut ledger = Ledger::default();
    let list = read_priorities(&out, &mut ledger).unwrap();
    let names: Vec<&str> = list.entries.iter().map(|e| e.name.as_str()).collect();
    assert_eq!(names, ["numbat", "quokka"]);
}

/// A source that `--window` leaves with no row takes no part in the fusion. Under
/// worst-plus-one it used to give every name an absent rank of 1 (its length plus one), which
/// left the order alone but changed every weight (rank-sum totals 2, 3, 4 instead of 1, 2, 3)
/// while the header counted it as fused. Now a warning names it, the header counts it apart,
/// and the run exits 1 (source rows were left out); when every source is emptied there is
/// nothing to fuse, and the run is refused naming the files.
#[test]
fn a_source_the_window_empties_takes_no_part() {
    let dir = tempfile::tempdir().unwrap();
    let october = dir.path().join("october.csv");
    std::fs::write(
        &october,
        "name,score,date\nweb,900,2026-10-01\ndb,500,2026-10-02\nlog,20,2026-10-03\n",
    )
    .unwrap();
    let september = dir.path().join("september.csv");
    std::fs::write(
        &september,
        "name,score,date\nlog,900,2026-09-01\nweb,5,2026-09-02\n",
    )
    .unwrap();
    let out = dir.path().join("priorities.yaml");
    let (code, stderr) = fuse(&[
        OsStr::new("--method"),
        OsStr::new("rank-sum"),
        OsStr::new("--missing"),
        OsStr::new("worst-plus-one"),
        OsStr::new("--window"),
        OsStr::new("2026-10-01..2026-10-31"),
        OsStr::new("--source"),
        october.as_os_str(),
        OsStr::new("--source"),
        september.as_os_str(),
        OsStr::new("--out"),
        out.as_os_str(),
    ]);
    assert_eq!(code, 1, "{stderr}");
    assert!(
        stderr.contains(&format!(
            "warning: {}: no usable row inside --window 2026-10-01..2026-10-31, so this source is left out of the fusion",
            september.display()
        )),
        "{stderr}"
    );
    let yaml = std::fs::read_to_string(&out).unwrap();
    assert!(
        yaml.starts_with(&format!(
            "# Fused by basefit from 1 source list(s): \"{}\"\n# left out of the fusion, 1 source list(s) with no row: \"{}\" (no usable row inside --window 2026-10-01..2026-10-31)\n",
            october.display(),
            september.display()
        )),
        "{yaml}"
    );
    let mut ledger = Ledger::default();
    let list = read_priorities(&out, &mut ledger).unwrap();
    let got: Vec<(&str, f64)> = list
        .entries
        .iter()
        .map(|e| (e.name.as_str(), e.weight))
        .collect();
    // Rank totals 1, 2, 3 from october.csv alone; weight = best total / total.
    assert_eq!(got, [("web", 1.0), ("db", 0.5), ("log", 1.0 / 3.0)]);

    let stderr = fuse_refused(&[
        "--window",
        "2026-11-01..2026-11-30",
        "--source",
        october.to_str().unwrap(),
        "--source",
        september.to_str().unwrap(),
    ]);
    assert!(
        stderr.contains(&format!(
            "{}, {}: no source has a row to fuse",
            october.display(),
            september.display()
        )),
        "{stderr}"
    );
}

/// `--out` naming a source list would replace it with the fused YAML, and an `--out` ending
/// in `.csv` would be read back as CSV by `plan --priorities` and refused: both are refused
/// up front, and the source is left as it was.
#[test]
fn out_may_name_neither_a_source_nor_a_csv_file() {
    let dir = tempfile::tempdir().unwrap();
    let source = dir.path().join("stars.csv");
    let text = "rank,name,score\n1,gumleaf,420\n2,numbat,17\n";
    std::fs::write(&source, text).unwrap();
    let spelled_otherwise = dir.path().join(".").join("stars.csv");
    let stderr = fuse_refused(&[
        "--source",
        source.to_str().unwrap(),
        "--out",
        spelled_otherwise.to_str().unwrap(),
    ]);
    assert!(stderr.contains("is the source list"), "{stderr}");
    assert_eq!(std::fs::read_to_string(&source).unwrap(), text);

    let fused = dir.path().join("fused.CSV");
    let stderr = fuse_refused(&[
        "--source",
        source.to_str().unwrap(),
        "--out",
        fused.to_str().unwrap(),
    ]);
    assert!(stderr.contains("name it .yaml"), "{stderr}");
    assert!(!fused.exists());

    let fused = dir.path().join("fused.yaml");
    let (code, stderr) = fuse(&[
        "--source",
        source.to_str().unwrap(),
        "--out",
        fused.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(fused.exists());
}

#[test]
fn a_negative_k_is_read_as_a_value_and_refused_by_its_rule() {
    // Written `--k -1`, the value once read as an unknown flag; it is now the constant, which
    // must be at least 0.
    let stderr = fuse_refused(&["--source", "demo-data/sources/usage.csv", "--k", "-1"]);
    assert!(
        stderr.contains("constant k must be a finite number of at least 0, not -1"),
        "{stderr}"
    );
}

#[test]
fn a_constant_given_to_a_method_without_one_is_refused() {
    // `--k` once went unused under any method but reciprocal, so a user comparing methods at
    // several constants got the same list each time without a word.
    for method in ["borda", "rank-sum", "share-sum"] {
        let stderr = fuse_refused(&[
            "--source",
            "demo-data/sources/usage.csv",
            "--method",
            method,
            "--k",
            "10",
        ]);
        assert!(
            stderr.contains("--k is the constant of --method reciprocal"),
            "{method}: {stderr}"
        );
    }
}

/// An unreadable date is only noted without `--window` (the row is used) and leaves its row
/// out under one, in the same words; a negative score always leaves its row out. Each stderr
/// line says which, so a reader can tell whether the package took part in the fusion.
#[test]
fn each_problem_line_says_whether_its_row_was_used() {
    let dir = tempfile::tempdir().unwrap();
    let source = dir.path().join("dated.csv");
    std::fs::write(
        &source,
        "name,score,date\nweb,900,2026-10-01\nzip,50,2026-13-01\nimg,-3,2026-10-02\n",
    )
    .unwrap();
    let (code, stderr) = fuse(&[OsStr::new("--source"), source.as_os_str()]);
    assert_eq!(code, 1, "{stderr}");
    let line = |row: u32| {
        let at = format!("{}:{row}:", source.display());
        stderr
            .lines()
            .find(|l| l.starts_with(&at))
            .unwrap_or_else(|| panic!("no line for row {row} in {stderr}"))
            .to_string()
    };
    assert!(
        line(3).ends_with("found `2026-13-01` (noted; the row is used)"),
        "{stderr}"
    );
    assert!(line(4).ends_with("is negative (row left out)"), "{stderr}");
    let (code, stderr) = fuse(&[
        OsStr::new("--window"),
        OsStr::new("2026-10-01..2026-10-31"),
        OsStr::new("--source"),
        source.as_os_str(),
    ]);
    assert_eq!(code, 1, "{stderr}");
    assert!(
        stderr.contains("found `2026-13-01` (row left out)"),
        "{stderr}"
    );
}
