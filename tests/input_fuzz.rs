//! Seeded mutation fuzzing of every input reader. Each valid input is damaged at random
//! (lines deleted, duplicated, swapped or re-indented, bytes flipped or inserted, invalid UTF-8
//! and NUL, truncation, scalars replaced by hostile tokens, CRLF, a byte-order mark, and for
//! the files basefit writes itself, JSON or YAML, values edited inside a structure that still
//! parses) and read again:
//!
//! - through the library: no panic; an error names the damaged file and, where it gives a
//!   line, one that exists; a load that succeeds accounts for every record in the ledger; what
//!   a command writes from a damaged input (a matrix, a fused priority list, merged shards)
//!   reads back as basefit's own input with nothing lost;
//! - for the first few mutants of each input, through the binary at one and at two worker
//!   threads: exit 0, 1 or 2 and never a crash, an exit 2 names the file, and both runs print
//!   (and write) the same bytes.
//!
//! `BASEFIT_FUZZ_CASES` (library mutants per input, default 60) and `BASEFIT_FUZZ_CLI_CASES`
//! (of those, how many also run through the binary, default 4) set the size of a run;
//! `BASEFIT_FUZZ_SEED` picks another fixed set of mutants. A failure prints the seed of its
//! mutant; `BASEFIT_FUZZ_REPLAY=SEED` runs that mutant alone.

mod common;

use basefit::load::{self, BadInput, InputPaths, Ledger};
use basefit::plan::fusion::{self, Method, Missing, Window};
use basefit::plan::replan::{CACHE_FORMAT, PlanCache, Shard, replan};
use basefit::plan::{Matrix, PlanOptions};
use std::panic::{AssertUnwindSafe, catch_unwind};
use std::path::{Path, PathBuf};
use std::process::Command;

const ROOT: &str = env!("CARGO_MANIFEST_DIR");

/// SplitMix64: small, seedable and the same on every platform, so a seed printed by a failure
/// names the same mutant anywhere.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }

    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }

    fn pick<'a, T>(&mut self, items: &'a [T]) -> &'a T {
        &items[self.below(items.len())]
    }
}

/// Values that readers get wrong: empty, out of range, YAML's null, infinities, not-a-number
/// and empty collections, requirement operators without operands, over-long versions, control
/// and bidirectional characters, and characters that end or open syntax in YAML, CSV and JSON.
fn nasty_tokens() -> Vec<String> {
    let mut tokens: Vec<String> = [
        "",
        "99999999999999999999999999999999",
        "18446744073709551616",
        "4294967296",
        "-1",
        "-0",
        "1e999",
        "NaN",
        ".inf",
        "-.inf",
        ".nan",
        "0x1f",
        "~",
        "null",
        "[]",
        "{}",
        "[",
        "{",
        "1.2.3.4.5",
        "1.2.3-",
        "1.2.3+",
        "01.02.03",
        "0.0.0-0.0",
        ">=",
        "^",
        "~>",
        "||",
        ",",
        "*",
        ">=1, <",
        "=",
        "true",
        "no",
        "\"",
        "'",
        "\"\"",
        ":",
        "- ",
        "#",
        "&a",
        "*a",
        "!!binary",
        "!custom",
        "|",
        ">",
        "?",
        "@",
        "%",
        "\t",
        "\\",
        "linux/glibc",
        "../../x",
        "/",
        "2025-02-30",
        "9999-99-99",
        "wattle-core",
        "deb-3.2",
        "ünïcödé-пакет",
        "🦘🦘",
        "\u{202e}evil",
        "\u{0301}",
        "a\u{0}b",
        "\u{feff}",
    ]
    .map(str::to_string)
    .to_vec();
    tokens.push("x".repeat(70_000));
    tokens.push("1.".repeat(5_000) + "0");
    tokens.push("[".repeat(5_000));
    tokens
}

/// Bytes that are not valid UTF-8 on their own, or that only control characters are.
const HOSTILE_BYTES: &[&[u8]] = &[
    b"\xff",
    b"\xfe\xff",
    b"\xc3",
    b"\xed\xa0\x80",
    b"\xf4\x90\x80\x80",
    b"\x00",
    b"\r",
    b"\r\n",
    b"\n",
    b"\t",
    b"\x1b[31m",
    b"\xef\xbb\xbf",
    b"\"",
    b",",
    b":",
    b"-",
    b"{",
    b"]",
];

fn lines_of(bytes: &[u8]) -> Vec<Vec<u8>> {
    bytes
        .split_inclusive(|&b| b == b'\n')
        .map(<[u8]>::to_vec)
        .collect()
}

/// Byte ranges of scalar-looking runs (names, versions, numbers, operators) in `text`.
fn scalar_spans(text: &[u8]) -> Vec<(usize, usize)> {
    let is_scalar = |b: u8| b.is_ascii_alphanumeric() || b".-_^<>=~*+/".contains(&b);
    let mut spans = Vec::new();
    let mut i = 0;
    while i < text.len() {
        if is_scalar(text[i]) {
            let start = i;
            while i < text.len() && is_scalar(text[i]) {
                i += 1;
            }
            spans.push((start, i));
        } else {
            i += 1;
        }
    }
    spans
}

/// Applies one random mutation to `bytes` and returns its description.
fn mutate_bytes(rng: &mut Rng, bytes: &mut Vec<u8>, tokens: &[String]) -> String {
    let mut lines = lines_of(bytes);
    let op = rng.below(12);
    let description = match op {
        0..=3 if lines.len() > 1 => {
            let a = rng.below(lines.len());
            let b = rng.below(lines.len());
            match op {
                0 => {
                    lines.remove(a);
                    format!("delete line {}", a + 1)
                }
                1 => {
                    let copy = lines[a].clone();
                    lines.insert(b, copy);
                    format!("copy line {} before line {}", a + 1, b + 1)
                }
                2 => {
                    lines.swap(a, b);
                    format!("swap lines {} and {}", a + 1, b + 1)
                }
                _ => {
                    let line = &mut lines[a];
                    let indent = line.iter().take_while(|&&c| c == b' ').count();
                    let how = rng.below(3);
                    let (cut, put) = match how {
                        0 => (0, vec![b' '; 1 + rng.below(4)]),
                        1 => (indent.min(1 + rng.below(4)), Vec::new()),
                        _ => (indent, vec![b'\t']),
                    };
                    line.splice(0..cut, put);
                    format!(
                        "re-indent line {} ({})",
                        a + 1,
                        ["deeper", "shallower", "tab"][how]
                    )
                }
            }
        }
        4 => {
            let at = rng.below(bytes.len() + 1);
            bytes.truncate(at);
            return format!("truncate at byte {at}");
        }
        5 if !bytes.is_empty() => {
            let at = rng.below(bytes.len());
            let bit = 1u8 << rng.below(8);
            bytes[at] ^= bit;
            return format!("flip bit {bit:#x} of byte {at}");
        }
        6 => {
            let at = rng.below(bytes.len() + 1);
            let insert = rng.pick(HOSTILE_BYTES);
            bytes.splice(at..at, insert.iter().copied());
            return format!("insert {insert:?} at byte {at}");
        }
        7..=9 => {
            let spans = scalar_spans(bytes);
            if spans.is_empty() {
                return "no scalar to replace".to_string();
            }
            let (start, end) = *rng.pick(&spans);
            let token = rng.pick(tokens).clone();
            let was = String::from_utf8_lossy(&bytes[start..end]).into_owned();
            bytes.splice(start..end, token.bytes());
            return format!("replace `{was}` at byte {start} with {:?}", shorten(&token));
        }
        10 => {
            let crlf: Vec<u8> = bytes
                .iter()
                .flat_map(|&b| {
                    if b == b'\n' {
                        vec![b'\r', b'\n']
                    } else {
                        vec![b]
                    }
                })
                .collect();
            *bytes = crlf;
            return "CRLF line ends".to_string();
        }
        _ => {
            bytes.splice(0..0, *b"\xef\xbb\xbf");
            return "byte-order mark".to_string();
        }
    };
    *bytes = lines.concat();
    description
}

fn shorten(text: &str) -> String {
    if text.chars().count() > 24 {
        format!(
            "{}... ({} bytes)",
            text.chars().take(12).collect::<String>(),
            text.len()
        )
    } else {
        text.to_string()
    }
}

/// Edits one value inside a JSON document (or a YAML one read as JSON values) so the damage
/// reaches the checks behind the parser: numbers off by one, out of range or not numbers at
/// all, list items removed, repeated or swapped, strings replaced by hostile tokens.
fn mutate_json(rng: &mut Rng, value: &mut serde_json::Value, tokens: &[String]) -> String {
    fn count(v: &serde_json::Value) -> usize {
        1 + match v {
            serde_json::Value::Array(a) => a.iter().map(count).sum(),
            serde_json::Value::Object(o) => o.values().map(count).sum(),
            _ => 0,
        }
    }
    fn nth<'a>(
        v: &'a mut serde_json::Value,
        n: &mut usize,
        path: &mut String,
    ) -> Option<&'a mut serde_json::Value> {
        if *n == 0 {
            return Some(v);
        }
        *n -= 1;
        match v {
            serde_json::Value::Array(a) => {
                for (i, item) in a.iter_mut().enumerate() {
                    let size = count(item);
                    if *n < size {
                        path.push_str(&format!("[{i}]"));
                        return nth(item, n, path);
                    }
                    *n -= size;
                }
                None
            }
            serde_json::Value::Object(o) => {
                for (k, item) in o.iter_mut() {
                    let size = count(item);
                    if *n < size {
                        path.push_str(&format!(".{k}"));
                        return nth(item, n, path);
                    }
                    *n -= size;
                }
                None
            }
            _ => None,
        }
    }
    let mut n = rng.below(count(value));
    let mut path = String::new();
    let Some(target) = nth(value, &mut n, &mut path) else {
        return "no value found".to_string();
    };
    let what = match target {
        serde_json::Value::Number(num) => {
            let old = num.as_i64().unwrap_or(0);
            let new: serde_json::Value = match rng.below(9) {
                0 => (old + 1).into(),
                1 => (old - 1).into(),
                2 => 0.into(),
                3 => u32::MAX.into(),
                4 => u64::MAX.into(),
                5 => (-1).into(),
                // JSON has no spelling for these; `yaml_floats` makes them numbers in YAML.
                6 => ".nan".into(),
                7 => "-.inf".into(),
                _ => serde_json::Value::Null,
            };
            let text = new.to_string();
            *target = new;
            format!("number -> {text}")
        }
        serde_json::Value::Array(items) if !items.is_empty() => {
            let a = rng.below(items.len());
            let b = rng.below(items.len());
            match rng.below(3) {
                0 => {
                    items.remove(a);
                    format!("remove item {a}")
                }
                1 => {
                    let copy = items[a].clone();
                    items.insert(b, copy);
                    format!("copy item {a} to {b}")
                }
                _ => {
                    items.swap(a, b);
                    format!("swap items {a} and {b}")
                }
            }
        }
        serde_json::Value::Object(members) if !members.is_empty() => {
            let key = members.keys().nth(rng.below(members.len())).cloned();
            let key = key.unwrap_or_default();
            members.remove(&key);
            format!("remove member {key}")
        }
        other => {
            let token = rng.pick(tokens).clone();
            *other = serde_json::Value::String(token.clone());
            format!("value -> {:?}", shorten(&token))
        }
    };
    format!("edit {path}: {what}")
}

/// The inputs a mutant can replace. Every one lives in the same folder with the others, so
/// a message naming the wrong file shows.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Target {
    Registry,
    MessyRegistry,
    BulkVersions,
    BulkDependencies,
    Images,
    PrioritiesYaml,
    PrioritiesCsv,
    ResultsYaml,
    ResultsCsv,
    ResultsJsonLines,
    Log,
    Matrix,
    MatrixYaml,
    Cache,
    Catalog,
    /// `fuse` sources: a scored list with dates, a bare ranking, and a ranking that keeps
    /// scores and dates.
    FuseScores,
    FuseRanks,
    FuseRanksWithScores,
    /// The two shard matrices `merge` reads; the first part sets the split the others join.
    ShardFirst,
    ShardSecond,
}

/// Where the commands read a damaged file.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Role {
    /// Among the inputs `load::load_inputs` reads.
    Input,
    /// Beside those inputs, which stay undamaged, so they are loaded once per run.
    BesideInputs,
    /// Without them: `fuse` and `merge` read only files of their own kind.
    Alone,
}

/// How the structure of a file basefit writes can be edited while it still parses.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Syntax {
    Json,
    Yaml,
}

impl Target {
    fn file(self) -> &'static str {
        match self {
            Target::Registry => "registry.yaml",
            Target::MessyRegistry => "messy-registry.yaml",
            Target::BulkVersions => "versions.csv",
            Target::BulkDependencies => "dependencies.csv",
            Target::Images => "images.yaml",
            Target::PrioritiesYaml => "priorities.yaml",
            Target::PrioritiesCsv => "priorities.csv",
            Target::ResultsYaml => "results.yaml",
            Target::ResultsCsv => "results.csv",
            Target::ResultsJsonLines => "results.jsonl",
            Target::Log => "logs/gumleaf-deb-2.8.log",
            Target::Matrix => "matrix.json",
            Target::MatrixYaml => "matrix.yaml",
            Target::Cache => "plan.cache",
            Target::Catalog => "catalog.yaml",
            Target::FuseScores => "downloads.csv",
            Target::FuseRanks => "usage.csv",
            Target::FuseRanksWithScores => "stars.csv",
            Target::ShardFirst => "shard-1.json",
            Target::ShardSecond => "shard-2.json",
        }
    }

    /// The syntax of a file basefit writes, for structure-aware edits.
    fn written_by_basefit(self) -> Option<Syntax> {
        match self {
            Target::Matrix | Target::Cache | Target::ShardFirst | Target::ShardSecond => {
                Some(Syntax::Json)
            }
            Target::MatrixYaml => Some(Syntax::Yaml),
            _ => None,
        }
    }

    /// The same matrix in the other syntax, which `diff` compares a damaged one with.
    fn twin(self) -> Target {
        match self {
            Target::Matrix => Target::MatrixYaml,
            Target::MatrixYaml => Target::Matrix,
            other => panic!("{other:?} is not a matrix"),
        }
    }

    fn role(self) -> Role {
        match self {
            Target::Matrix | Target::MatrixYaml | Target::Cache => Role::BesideInputs,
            Target::FuseScores
            | Target::FuseRanks
            | Target::FuseRanksWithScores
            | Target::ShardFirst
            | Target::ShardSecond => Role::Alone,
            _ => Role::Input,
        }
    }

    /// Whether the command reads the damaged file together with others of its kind and may
    /// blame the disagreement on either: its error must name the damaged file, but may do so
    /// in the message rather than as the file it is about.
    fn read_with_siblings(self) -> bool {
        matches!(
            self,
            Target::FuseScores
                | Target::FuseRanks
                | Target::FuseRanksWithScores
                | Target::ShardFirst
                | Target::ShardSecond
        )
    }
}

const FUSE_SOURCES: [Target; 3] = [
    Target::FuseScores,
    Target::FuseRanks,
    Target::FuseRanksWithScores,
];

/// A ranking with every optional column, so a ranked list's scores (kept for share-sum) and
/// dates (read for a window) are damaged too; the demo's `usage.csv` has neither.
const STARS: &str = "\
rank,name,score,date
1,gumleaf,420,2026-10-01
2,tidewater-http,310,2026-10-02
3,numbat-json,120,2026-10-02
4,wattle-core,95,2026-10-03
";

/// A folder holding a valid copy of every input, the demo's wherever there is one.
struct Fixture {
    dir: tempfile::TempDir,
    originals: Vec<(Target, Vec<u8>)>,
}

const CATALOG: &str = "\
native_helpers: [cbridge-build]
libraries:
  - id: libxml2
    summary: XML parser and toolkit
    aliases: [libxml2, libxml, xml2]
    headers: [libxml/parser.h, libxml/tree.h]
    link: [xml2]
    pkg_config: [libxml-2.0]
    families:
      debian: {dev: libxml2-dev, runtime: libxml2, source: memory}
      alpine: {dev: libxml2-dev, runtime: libxml2, source: memory}
      rhel:   {dev: libxml2-devel, runtime: libxml2, source: memory}
  - id: libwombat
    summary: an invented library for the fuzz fixture
    aliases: [wombat]
    headers: [wombat.h]
    link: [wombat]
    pkg_config: []
    families:
      debian: {dev: libwombat-dev, runtime: libwombat1}
";

impl Fixture {
    fn new() -> Fixture {
        let dir = tempfile::tempdir().unwrap();
        let root = Path::new(ROOT);
        let copy = |from: &str| std::fs::read(root.join(from)).unwrap();
        let mut originals = vec![
            (Target::Registry, copy("demo-data/registry.yaml")),
            (
                Target::MessyRegistry,
                copy("tests/data/messy-registry.yaml"),
            ),
            (Target::Images, copy("matrices/demo-images.yaml")),
            (Target::PrioritiesYaml, copy("demo-data/priorities.yaml")),
            (Target::PrioritiesCsv, copy("demo-data/priorities.csv")),
            (Target::ResultsYaml, copy("demo-data/results.yaml")),
            (Target::Catalog, CATALOG.as_bytes().to_vec()),
            (Target::FuseScores, copy("demo-data/sources/downloads.csv")),
            (Target::FuseRanks, copy("demo-data/sources/usage.csv")),
            (Target::FuseRanksWithScores, STARS.as_bytes().to_vec()),
        ];
        std::fs::create_dir(dir.path().join("logs")).unwrap();
        for entry in std::fs::read_dir(root.join("demo-data/logs")).unwrap() {
            let entry = entry.unwrap();
            let name = format!("logs/{}", entry.file_name().to_string_lossy());
            std::fs::write(dir.path().join(&name), std::fs::read(entry.path()).unwrap()).unwrap();
        }
        originals.push((Target::Log, copy("demo-data/logs/gumleaf-deb-2.8.log")));
        let (mut versions, mut deps) = (Vec::new(), Vec::new());
        let synth = basefit::synth::SynthOptions::scaled(11, 60);
        basefit::synth::write_bulk(&synth, &mut versions, &mut deps).unwrap();
        originals.push((Target::BulkVersions, versions));
        originals.push((Target::BulkDependencies, deps));
        let fixture = Fixture { dir, originals };
        fixture.write_originals();

        // The other result formats and the files `plan` writes come from the demo itself.
        let inputs = load::load_inputs(&fixture.paths(Target::ResultsYaml)).unwrap();
        let (csv, jsonl) = results_as_csv_and_json_lines(&inputs);
        let options = PlanOptions::default();
        let (cache, _) = replan(&inputs, &options, None, None);
        let shard = |index| {
            let (part, _) = replan(&inputs, &options, None, Some(Shard { index, count: 2 }));
            basefit::report::to_json(&part.matrix).into_bytes()
        };
        let mut fixture = fixture;
        fixture.originals.extend([
            (Target::ResultsCsv, csv.into_bytes()),
            (Target::ResultsJsonLines, jsonl.into_bytes()),
            (
                Target::Matrix,
                basefit::report::to_json(&cache.matrix).into_bytes(),
            ),
            (
                Target::MatrixYaml,
                basefit::report::to_yaml(&cache.matrix).into_bytes(),
            ),
            (Target::Cache, cache.to_sealed_json().into_bytes()),
            (Target::ShardFirst, shard(1)),
            (Target::ShardSecond, shard(2)),
        ]);
        fixture.write_originals();
        fixture
    }

    fn path(&self, target: Target) -> PathBuf {
        self.dir.path().join(target.file())
    }

    fn original(&self, target: Target) -> &[u8] {
        &self.originals.iter().find(|(t, _)| *t == target).unwrap().1
    }

    fn write_originals(&self) {
        for (target, bytes) in &self.originals {
            std::fs::write(self.path(*target), bytes).unwrap();
        }
    }

    /// The inputs loaded when `target` is the damaged one: every reader it can affect.
    fn paths(&self, target: Target) -> InputPaths {
        let registry = match target {
            Target::MessyRegistry => vec![self.path(Target::MessyRegistry)],
            Target::BulkVersions | Target::BulkDependencies => Vec::new(),
            _ => vec![self.path(Target::Registry)],
        };
        let bulk = matches!(target, Target::BulkVersions | Target::BulkDependencies).then(|| {
            (
                self.path(Target::BulkVersions),
                self.path(Target::BulkDependencies),
            )
        });
        let priorities = match target {
            Target::PrioritiesCsv => Target::PrioritiesCsv,
            _ => Target::PrioritiesYaml,
        };
        let results = match target {
            Target::ResultsCsv | Target::ResultsJsonLines => target,
            _ => Target::ResultsYaml,
        };
        InputPaths {
            registry,
            bulk,
            images: Some(self.path(Target::Images)),
            priorities: Some(self.path(priorities)),
            results: vec![self.path(results)],
            catalog: (target == Target::Catalog).then(|| self.path(Target::Catalog)),
            progress: None,
        }
    }

    /// The input flags for the command line, as `paths` gives them.
    fn flags(&self, target: Target, with_results: bool) -> Vec<String> {
        let p = self.paths(target);
        let shown = |path: &Path| path.display().to_string();
        let mut flags = Vec::new();
        for r in &p.registry {
            flags.extend(["--registry".to_string(), shown(r)]);
        }
        if let Some((v, d)) = &p.bulk {
            flags.extend(["--bulk".to_string(), shown(v), shown(d)]);
        }
        flags.extend(["--images".to_string(), shown(p.images.as_deref().unwrap())]);
        flags.extend([
            "--priorities".to_string(),
            shown(p.priorities.as_deref().unwrap()),
        ]);
        if with_results {
            flags.extend(["--results".to_string(), shown(&p.results[0])]);
        }
        if let Some(c) = &p.catalog {
            flags.extend(["--catalog".to_string(), shown(c)]);
        }
        flags.push("--quiet".to_string());
        flags
    }
}

fn results_as_csv_and_json_lines(inputs: &load::Inputs) -> (String, String) {
    let mut csv = String::from("package,image,outcome,version,log,log_file\n");
    let mut jsonl = String::new();
    for (i, r) in inputs.results.iter().enumerate() {
        let outcome = format!("{:?}", r.outcome).to_lowercase();
        let version = r
            .version
            .as_ref()
            .map(ToString::to_string)
            .unwrap_or_default();
        // One record per file reads its log from disk, as the YAML's do.
        let log_file = if i == 0 {
            "logs/gumleaf-deb-2.8.log"
        } else {
            ""
        };
        csv.push_str(&format!(
            "{},{},{outcome},{version},,{log_file}\n",
            r.package, r.image
        ));
        let mut record = serde_json::json!({
            "package": r.package, "image": r.image, "outcome": outcome,
        });
        if !version.is_empty() {
            record["version"] = version.into();
        }
        if !log_file.is_empty() {
            record["log_file"] = log_file.into();
        }
        jsonl.push_str(&format!("{record}\n"));
    }
    (csv, jsonl)
}

/// What a run of one input's mutants found wrong, each with the seed that reproduces it.
struct Findings {
    target: Target,
    failures: Vec<String>,
}

impl Findings {
    const CAP: usize = 12;

    fn fail(&mut self, seed: u64, mutations: &[String], what: String) {
        if self.failures.len() < Self::CAP {
            self.failures.push(format!(
                "{:?} mutant BASEFIT_FUZZ_REPLAY={seed:#x} ({}): {what}",
                self.target,
                mutations.join("; ")
            ));
        }
    }

    fn assert_none(self) {
        assert!(
            self.failures.is_empty(),
            "{} failure(s):\n{}",
            self.failures.len(),
            self.failures.join("\n")
        );
    }
}

/// The seeds of one input's mutants: fixed, different per input, another set per
/// `BASEFIT_FUZZ_SEED`, or the one given in `BASEFIT_FUZZ_REPLAY`.
fn seeds(target: Target) -> Vec<u64> {
    if let Ok(text) = std::env::var("BASEFIT_FUZZ_REPLAY") {
        let text = text.trim();
        let seed = match text.strip_prefix("0x") {
            Some(hex) => u64::from_str_radix(hex, 16),
            None => text.parse(),
        };
        return vec![seed.unwrap_or_else(|_| panic!("BASEFIT_FUZZ_REPLAY={text}: not a seed"))];
    }
    let base = common::env_count("BASEFIT_FUZZ_SEED", 0);
    let cases = common::env_count("BASEFIT_FUZZ_CASES", 60);
    let mut rng = Rng(base ^ (target as u64 + 1).wrapping_mul(0x2545_f491_4f6c_dd1d));
    (0..cases).map(|_| rng.next()).collect()
}

/// The mutant of `seed`: one to three mutations of the original.
fn mutant(
    fixture: &Fixture,
    target: Target,
    seed: u64,
    tokens: &[String],
) -> (Vec<u8>, Vec<String>) {
    let mut rng = Rng(seed);
    let mut bytes = fixture.original(target).to_vec();
    let mut done = Vec::new();
    for _ in 0..1 + rng.below(3) {
        let syntax = target.written_by_basefit().filter(|_| rng.below(2) == 0);
        let parsed = match syntax {
            Some(Syntax::Json) => serde_json::from_slice::<serde_json::Value>(&bytes).ok(),
            Some(Syntax::Yaml) => serde_yaml::from_slice::<serde_json::Value>(&bytes).ok(),
            None => None,
        };
        match parsed {
            Some(mut value) => {
                done.push(mutate_json(&mut rng, &mut value, tokens));
                bytes = match target {
                    Target::Cache => reseal(&value)
                        .unwrap_or_else(|| value.to_string())
                        .into_bytes(),
                    Target::MatrixYaml => yaml_floats(&serde_yaml::to_string(&value).unwrap()),
                    _ => serde_json::to_vec_pretty(&value).unwrap(),
                };
            }
            None => done.push(mutate_bytes(&mut rng, &mut bytes, tokens)),
        }
    }
    (bytes, done)
}

/// YAML written from JSON values, with the strings that spell YAML's infinities and
/// not-a-number unquoted, so an edit can put them where a number belongs.
fn yaml_floats(yaml: &str) -> Vec<u8> {
    let mut yaml = yaml.to_string();
    for float in [".nan", ".inf", "-.inf"] {
        yaml = yaml.replace(&format!("'{float}'"), float);
    }
    yaml.into_bytes()
}

/// A cache edited by structure is sealed again when it still reads as one, as if basefit
/// had written it: the structure checks, not the seal, must then stop it.
fn reseal(value: &serde_json::Value) -> Option<String> {
    let mut value = value.clone();
    value.as_object_mut()?.remove("seal");
    let cache: PlanCache = serde_json::from_value(value).ok()?;
    Some(cache.to_sealed_json())
}

/// Every line an error names lies in the file, and every error names the damaged file. With
/// `siblings` (files read together, such as the parts of a merge) an error about another of
/// them passes if it names the damaged one too: which of two disagreeing files is the wrong one
/// cannot be known. Never is the command line to blame: it is the same for every mutant.
fn check_error(err: &BadInput, file: &str, text: &[u8], siblings: bool) -> Result<(), String> {
    // YAML ends a line at a lone CR too, so a file with stray CRs has more lines to YAML than
    // to `wc -l`; either count is accepted.
    let crlf = text.windows(2).filter(|w| w == b"\r\n").count();
    let breaks = text.iter().filter(|&&b| b == b'\n' || b == b'\r').count() - crlf;
    let lines = breaks + 1;
    for e in std::iter::once(err).chain(&err.more) {
        let named = e.file == file || (siblings && e.to_string().contains(file));
        if !named || e.file == "command line" {
            return Err(format!("error names {} instead of {file}: {e}", e.file));
        }
        if let Some(line) = e.line.filter(|_| e.file == file)
            && !(1..=lines).contains(&line)
        {
            return Err(format!("line {line} of a {lines}-line file: {e}"));
        }
        // A reader that knows the line must say it where every error does: `file:line:`.
        let says_line = e
            .message
            .match_indices("line ")
            .any(|(at, _)| e.message[at + 5..].starts_with(|c: char| c.is_ascii_digit()));
        if e.line.is_none() && says_line {
            return Err(format!("the line is only in the message: {e}"));
        }
    }
    Ok(())
}

fn panic_text(payload: Box<dyn std::any::Any + Send>) -> String {
    payload
        .downcast_ref::<String>()
        .cloned()
        .or_else(|| payload.downcast_ref::<&str>().map(|s| s.to_string()))
        .unwrap_or_else(|| "a panic".to_string())
}

/// A ledger in which some kind of record is neither used nor left out, as a finding.
fn balanced(ledger: &Ledger) -> Result<(), String> {
    let unbalanced = ledger.unbalanced();
    if unbalanced.is_empty() {
        return Ok(());
    }
    let tallies: Vec<String> = unbalanced
        .iter()
        .map(|k| format!("{k:?} {:?}", ledger.tally(*k)))
        .collect();
    Err(format!("ledger does not balance: {}", tallies.join(", ")))
}

/// How using a damaged file can end other than well.
enum Used {
    /// Refused as bad input: right, if the error names the file and a line in it.
    Refused(BadInput),
    /// Accepted, but what came of it is wrong.
    Wrong(String),
}

impl From<BadInput> for Used {
    fn from(e: BadInput) -> Used {
        Used::Refused(e)
    }
}

impl From<String> for Used {
    fn from(what: String) -> Used {
        Used::Wrong(what)
    }
}

/// A command's error: bad input is a refusal; anything else (a failed write) is a finding.
fn refused(e: anyhow::Error) -> Used {
    match e.downcast::<BadInput>() {
        Ok(bad) => Used::Refused(bad),
        Err(other) => Used::Wrong(format!("not an input error: {other:#}")),
    }
}

/// The library side of one mutant: loads it (and for a file a command reads beside the
/// inputs, or alone, uses it as that command does) and returns what went wrong. `beside` are
/// the undamaged inputs of a `Role::BesideInputs` target.
fn check_library(
    fixture: &Fixture,
    target: Target,
    text: &[u8],
    beside: Option<&load::Inputs>,
) -> Result<(), String> {
    let damaged = fixture.path(target).display().to_string();
    let siblings = target.read_with_siblings();
    let mut loaded = None;
    if target.role() == Role::Input {
        let load = catch_unwind(AssertUnwindSafe(|| {
            load::load_inputs(&fixture.paths(target))
        }))
        .map_err(|p| format!("loading panicked: {}", panic_text(p)))?;
        match load {
            Err(e) if target == Target::Log => {
                return Err(format!("a log file failed the load: {e}"));
            }
            Err(e) => return check_error(&e, &damaged, text, siblings),
            Ok(inputs) => {
                balanced(&inputs.ledger)?;
                loaded = Some(inputs);
            }
        }
    }
    let inputs = loaded.as_ref().or(beside);
    let used = catch_unwind(AssertUnwindSafe(|| use_file(fixture, target, inputs)))
        .map_err(|p| format!("using the input panicked: {}", panic_text(p)))?;
    match used {
        Ok(()) => Ok(()),
        Err(Used::Refused(e)) => check_error(&e, &damaged, text, siblings),
        Err(Used::Wrong(what)) => Err(what),
    }
}

/// The undamaged inputs a `Role::BesideInputs` target is read with.
fn inputs_beside(fixture: &Fixture, target: Target) -> Option<load::Inputs> {
    (target.role() == Role::BesideInputs)
        .then(|| load::load_inputs(&fixture.paths(target)).unwrap())
}

/// Uses the damaged file as the commands that read it do: a matrix is rendered, compared and
/// diffed, a cache re-planned from, fuse sources fused, shards merged; logs are classified.
/// `inputs` are given for every target but those read alone.
fn use_file(fixture: &Fixture, target: Target, inputs: Option<&load::Inputs>) -> Result<(), Used> {
    let inputs = || inputs.expect("given for a target read with the inputs");
    match target {
        Target::Log => {
            for r in &inputs().results {
                basefit::verify::logs::classify(r.log.as_deref().unwrap_or(""));
            }
        }
        Target::Matrix | Target::MatrixYaml => {
            let mut matrix: Matrix = basefit::commands::read_matrix(&fixture.path(target))?;
            for render in [
                basefit::report::html,
                basefit::report::markdown,
                basefit::report::csv,
            ] {
                render(&matrix);
            }
            let undamaged = basefit::commands::read_matrix(&fixture.path(target.twin()))
                .map_err(|e| format!("the undamaged matrix does not read: {e}"))?;
            basefit::verify::diff::diff(&undamaged, &matrix, basefit::report::markdown);
            let review = basefit::verify::compare_inputs(&matrix, inputs());
            basefit::verify::annotate(&mut matrix, &review);
            reads_back(
                fixture,
                &matrix,
                "an accepted matrix, annotated as `render` writes it",
            )?;
        }
        Target::Cache => {
            let text = std::fs::read_to_string(fixture.path(target)).unwrap_or_default();
            // What `plan --cache` accepts: this version's format, sound and sealed.
            if let Ok(cache) = serde_json::from_str::<PlanCache>(&text)
                && cache.format == CACHE_FORMAT
                && cache.check().is_ok()
                && PlanCache::seal_holds(&text)
            {
                replan(inputs(), &PlanOptions::default(), Some(cache), None);
            }
        }
        Target::FuseScores | Target::FuseRanks | Target::FuseRanksWithScores => {
            fuse_sources(fixture, target)?;
        }
        Target::ShardFirst | Target::ShardSecond => merge_shards(fixture)?,
        _ => {}
    }
    Ok(())
}

/// The source sets `fuse` is run on, with the window each is read within, and the method
/// the command line uses on it. Share-sum needs a score in every list and a window a date
/// column, which the demo's ranking has neither of, so those run on the other two.
fn fuse_runs() -> [(&'static [Target], Option<&'static str>, &'static str); 3] {
    const SCORED: &[Target] = &[Target::FuseScores, Target::FuseRanksWithScores];
    [
        (&FUSE_SOURCES, None, "reciprocal"),
        (SCORED, None, "share-sum"),
        (SCORED, Some("2026-10-01..2026-10-02"), "borda"),
    ]
}

const FUSE_METHODS: [Method; 4] = [
    Method::RankSum,
    Method::Borda,
    Method::RECIPROCAL,
    Method::ShareSum,
];

/// Fuses every source set holding `target` by every method: the ledger balances, and the
/// list `fuse` writes reads back through the priority reader, cleanly, with every name of
/// every source exactly once.
fn fuse_sources(fixture: &Fixture, target: Target) -> Result<(), Used> {
    for (sources, window, _) in fuse_runs() {
        if !sources.contains(&target) {
            continue;
        }
        let window = window.map(|w| Window::parse(w).unwrap());
        let paths: Vec<PathBuf> = sources.iter().map(|t| fixture.path(*t)).collect();
        let mut ledger = Ledger::default();
        let mut names = std::collections::BTreeSet::new();
        for path in &paths {
            let list = fusion::read_source_csv_within(path, window, &mut ledger)?;
            names.extend(list.entries().iter().map(|e| e.name.clone()));
        }
        balanced(&ledger)?;
        for method in FUSE_METHODS {
            if method == Method::ShareSum && sources.contains(&Target::FuseRanks) {
                continue;
            }
            for missing in [Missing::WorstPlusOne, Missing::Exclude] {
                let out = basefit::commands::fuse(&basefit::commands::FuseCommand {
                    sources: paths.clone(),
                    method,
                    missing,
                    window,
                    out: None,
                    progress: None,
                })
                .map_err(refused)?;
                let what = format!("the list fused by {} ({})", method.label(), missing.label());
                let mut back = Ledger::default();
                let list = basefit::load::priorities::read_priorities_str(
                    "fused.yaml",
                    &out.stdout,
                    &mut back,
                )
                .map_err(|e| format!("{what} does not read as a priority list: {e}"))?;
                if !back.is_clean() {
                    let problem = &back.problems[0];
                    return Err(Used::Wrong(format!(
                        "{what} reads back with problems: {}: {}: {}",
                        problem.origin, problem.subject, problem.detail
                    )));
                }
                let fused: Vec<&String> = list.entries.iter().map(|e| &e.name).collect();
                if fused.len() != names.len() || !fused.iter().all(|n| names.contains(*n)) {
                    return Err(Used::Wrong(format!(
                        "{what} holds {fused:?}, the sources {names:?}"
                    )));
                }
            }
        }
    }
    Ok(())
}

/// Merges the two shards as `merge` does: the whole matrix it writes holds every cell of the
/// parts and reads back, from JSON and from YAML, as `render`, `review` and `diff` read it.
fn merge_shards(fixture: &Fixture) -> Result<(), Used> {
    let out = fixture.dir.path().join("merged");
    let _ = std::fs::remove_dir_all(&out);
    std::fs::create_dir(&out).unwrap();
    let shards = vec![
        fixture.path(Target::ShardFirst),
        fixture.path(Target::ShardSecond),
    ];
    basefit::commands::merge(&basefit::commands::MergeCommand {
        shards: shards.clone(),
        out: out.clone(),
        progress: None,
    })
    .map_err(refused)?;
    #[derive(serde::Deserialize)]
    struct Cells {
        cells: Vec<serde::de::IgnoredAny>,
    }
    // Every part reads, since the merge read it.
    let part_cells: usize = shards
        .iter()
        .map(|p| {
            let text = std::fs::read_to_string(p).unwrap();
            serde_json::from_str::<Cells>(&text).unwrap().cells.len()
        })
        .sum();
    let mut read = Vec::new();
    for name in ["matrix.json", "matrix.yaml"] {
        let merged = basefit::commands::read_matrix(&out.join(name))
            .map_err(|e| format!("the merged {name} does not read back: {e}"))?;
        if merged.cells.len() != part_cells {
            return Err(Used::Wrong(format!(
                "the merged {name} holds {} cells, the parts {part_cells}",
                merged.cells.len()
            )));
        }
        read.push(basefit::report::to_json(&merged));
    }
    if read[0] != read[1] {
        return Err(Used::Wrong(
            "the merged matrix.json and matrix.yaml read back as different matrices".into(),
        ));
    }
    Ok(())
}

/// `matrix` written as `render` and `merge` write it, as JSON and as YAML, reads back as the
/// same matrix.
fn reads_back(fixture: &Fixture, matrix: &Matrix, what: &str) -> Result<(), Used> {
    let json = basefit::report::to_json(matrix);
    let written = [
        ("written.json", json.clone()),
        ("written.yaml", basefit::report::to_yaml(matrix)),
    ];
    for (name, text) in written {
        let path = fixture.dir.path().join(name);
        std::fs::write(&path, &text).unwrap();
        let back = basefit::commands::read_matrix(&path)
            .map_err(|e| format!("{what}, written as {name}, does not read back: {e}"))?;
        if basefit::report::to_json(&back) != json {
            return Err(Used::Wrong(format!(
                "{what}, written as {name}, reads back as another matrix"
            )));
        }
    }
    Ok(())
}

/// One run of the binary: exit code, stdout and stderr.
fn run(args: &[String], threads: usize) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_basefit"))
        .args(args)
        .env("RAYON_NUM_THREADS", threads.to_string())
        .output()
        .unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// The command lines that read `target`.
fn commands(fixture: &Fixture, target: Target) -> Vec<Vec<String>> {
    let with = |command: &str, results: bool, extra: &[String]| {
        let mut args = vec![command.to_string()];
        args.extend(fixture.flags(target, results));
        args.extend(extra.iter().cloned());
        args
    };
    let shown = |t: Target| fixture.path(t).display().to_string();
    let matrix_flag = ["--matrix".to_string(), shown(target)];
    // The damaged matrix is the later one, so every change it makes is listed.
    let diff = |before: Target| vec!["diff".to_string(), shown(before), shown(target)];
    match target {
        Target::ResultsYaml | Target::ResultsCsv | Target::ResultsJsonLines | Target::Log => vec![
            with("check", true, &[]),
            with("review", true, &[]),
            with("render", true, &[]),
        ],
        Target::Matrix | Target::MatrixYaml => {
            // A matrix read from YAML is printed as JSON: what YAML can hold that JSON cannot
            // (infinities, not-a-number) shows there.
            let format = if target == Target::Matrix {
                "html"
            } else {
                "json"
            };
            vec![
                with(
                    "render",
                    false,
                    &[&matrix_flag[..], &["--format".into(), format.into()]].concat(),
                ),
                with("review", true, &matrix_flag),
                diff(target.twin()),
            ]
        }
        // Filled in per run: each run reads and rewrites its own copy.
        Target::Cache => vec![with("plan", false, &[])],
        Target::FuseScores | Target::FuseRanks | Target::FuseRanksWithScores => fuse_runs()
            .into_iter()
            .filter(|(sources, _, _)| sources.contains(&target))
            .map(|(sources, window, method)| {
                let mut args = vec!["fuse".to_string(), "--method".into(), method.into()];
                for source in sources {
                    args.extend(["--source".to_string(), shown(*source)]);
                }
                if let Some(w) = window {
                    args.extend(["--window".to_string(), w.to_string()]);
                }
                args
            })
            .collect(),
        Target::ShardFirst | Target::ShardSecond => vec![vec![
            "merge".to_string(),
            "--out".into(),
            OUT.into(),
            shown(Target::ShardFirst),
            shown(Target::ShardSecond),
        ]],
        _ => vec![with("check", true, &[]), with("plan", false, &[])],
    }
}

/// Stands for a fresh output folder per run in `commands`; what the run writes there is
/// compared with the other run's as its stdout is.
const OUT: &str = "{out}";

/// The files in `dir`, each after its name, in name order.
fn written_files(dir: &Path) -> String {
    let mut names: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    names.sort();
    let mut all = String::new();
    for path in names {
        let name = path.file_name().unwrap().to_string_lossy().into_owned();
        let text = String::from_utf8_lossy(&std::fs::read(&path).unwrap()).into_owned();
        all.push_str(&format!("\n== {name}\n{text}"));
    }
    all
}

/// The command-line side of one mutant, at one and at two worker threads.
fn check_cli(fixture: &Fixture, target: Target, text: &[u8]) -> Result<(), String> {
    let damaged = fixture.path(target).display().to_string();
    for args in commands(fixture, target) {
        let mut runs = Vec::new();
        for threads in [1, 2] {
            let mut args = args.clone();
            let mut named = damaged.clone();
            if target == Target::Cache {
                let copy = fixture.dir.path().join(format!("plan-{threads}.cache"));
                std::fs::write(&copy, text).unwrap();
                named = copy.display().to_string();
                args.extend(["--cache".to_string(), named.clone()]);
            }
            let out = fixture.dir.path().join(format!("out-{threads}"));
            let writes = args.iter_mut().find(|a| *a == OUT).map(|arg| {
                let _ = std::fs::remove_dir_all(&out);
                std::fs::create_dir(&out).unwrap();
                *arg = out.display().to_string();
            });
            let (code, mut stdout, stderr) = run(&args, threads);
            if writes.is_some() {
                stdout.push_str(&written_files(&out));
            }
            let shown = format!("`basefit {}` at {threads} thread(s)", args[0]);
            if stdout.contains("panicked")
                || stderr.contains("panicked")
                || !(0..=2).contains(&code)
            {
                return Err(format!("{shown}: exit {code}, stderr: {stderr}"));
            }
            if code == 2 && !stderr.contains(&named) {
                return Err(format!("{shown}: exit 2 without naming {named}: {stderr}"));
            }
            if target == Target::Cache && code != 2 && cache_must_be_refused(fixture, text) {
                return Err(format!(
                    "{shown}: a damaged cache gave exit {code}: {stderr}"
                ));
            }
            runs.push((code, stdout));
        }
        if runs[0] != runs[1] {
            return Err(format!(
                "`basefit {}` differs between one and two threads: exit {} vs {}, stdout\n{}\nvs\n{}",
                args[0], runs[0].0, runs[1].0, runs[0].1, runs[1].1
            ));
        }
    }
    Ok(())
}

/// Whether `plan --cache` must refuse this text (README: a cache that does not read, reads
/// but is damaged, or does not match its seal is an input error, and so is JSON naming no
/// format). A text that reads as JSON naming another format is another version's cache,
/// replaced with a note; a cache that
/// was sealed again after an edit is judged by its structure, which the run itself checks.
fn cache_must_be_refused(fixture: &Fixture, text: &[u8]) -> bool {
    #[derive(serde::Deserialize)]
    struct Header {
        format: Option<u32>,
    }
    let Ok(text) = std::str::from_utf8(text) else {
        return true;
    };
    if text.as_bytes() == fixture.original(Target::Cache) || PlanCache::seal_holds(text) {
        return false;
    }
    !matches!(
        serde_json::from_str::<Header>(text),
        Ok(h) if h.format.is_some_and(|f| f != CACHE_FORMAT)
    )
}

fn fuzz(target: Target) {
    let fixture = Fixture::new();
    let tokens = nasty_tokens();
    let cli_cases = common::env_count("BASEFIT_FUZZ_CLI_CASES", 4) as usize;
    let mut findings = Findings {
        target,
        failures: Vec::new(),
    };
    let beside = inputs_beside(&fixture, target);
    for (case, seed) in seeds(target).into_iter().enumerate() {
        let (text, mutations) = mutant(&fixture, target, seed, &tokens);
        std::fs::write(fixture.path(target), &text).unwrap();
        if let Err(what) = check_library(&fixture, target, &text, beside.as_ref()) {
            findings.fail(seed, &mutations, what);
        } else if case < cli_cases
            && let Err(what) = check_cli(&fixture, target, &text)
        {
            findings.fail(seed, &mutations, what);
        }
        std::fs::write(fixture.path(target), fixture.original(target)).unwrap();
    }
    findings.assert_none();
}

#[test]
fn registry_yaml() {
    fuzz(Target::Registry);
}

#[test]
fn messy_registry_yaml() {
    fuzz(Target::MessyRegistry);
}

#[test]
fn bulk_versions_csv() {
    fuzz(Target::BulkVersions);
}

#[test]
fn bulk_dependencies_csv() {
    fuzz(Target::BulkDependencies);
}

#[test]
fn images_yaml() {
    fuzz(Target::Images);
}

#[test]
fn priorities_yaml() {
    fuzz(Target::PrioritiesYaml);
}

#[test]
fn priorities_csv() {
    fuzz(Target::PrioritiesCsv);
}

#[test]
fn results_yaml() {
    fuzz(Target::ResultsYaml);
}

#[test]
fn results_csv() {
    fuzz(Target::ResultsCsv);
}

#[test]
fn results_json_lines() {
    fuzz(Target::ResultsJsonLines);
}

#[test]
fn install_log() {
    fuzz(Target::Log);
}

#[test]
fn matrix_json() {
    fuzz(Target::Matrix);
}

#[test]
fn plan_cache() {
    fuzz(Target::Cache);
}

#[test]
fn catalog_yaml() {
    fuzz(Target::Catalog);
}

#[test]
fn matrix_yaml() {
    fuzz(Target::MatrixYaml);
}

#[test]
fn fuse_scored_source() {
    fuzz(Target::FuseScores);
}

#[test]
fn fuse_ranked_source() {
    fuzz(Target::FuseRanks);
}

#[test]
fn fuse_ranked_source_with_scores() {
    fuzz(Target::FuseRanksWithScores);
}

#[test]
fn merge_first_shard() {
    fuzz(Target::ShardFirst);
}

#[test]
fn merge_second_shard() {
    fuzz(Target::ShardSecond);
}

/// The unchanged fixture passes every check, so a failure above is the mutation's doing; and
/// the checks are not vacuous: a damaged file is refused naming it.
#[test]
fn the_unchanged_fixture_is_clean_and_damage_is_caught() {
    let fixture = Fixture::new();
    for target in [
        Target::Registry,
        Target::Matrix,
        Target::MatrixYaml,
        Target::Cache,
        Target::BulkVersions,
        Target::FuseScores,
        Target::FuseRanks,
        Target::FuseRanksWithScores,
        Target::ShardFirst,
        Target::ShardSecond,
    ] {
        let text = fixture.original(target).to_vec();
        let beside = inputs_beside(&fixture, target);
        check_library(&fixture, target, &text, beside.as_ref()).unwrap();
        check_cli(&fixture, target, &text).unwrap();
    }
    let damaged = b"packages:\n  - name: [unclosed\n";
    std::fs::write(fixture.path(Target::Registry), damaged).unwrap();
    check_library(&fixture, Target::Registry, damaged, None).unwrap();
    let err = load::load_inputs(&fixture.paths(Target::Registry)).unwrap_err();
    assert!(check_error(&err, "elsewhere.yaml", damaged, false).is_err());
    let lines = BadInput::at(fixture.path(Target::Registry).display().to_string(), 9, "x");
    assert!(
        check_error(
            &lines,
            &fixture.path(Target::Registry).display().to_string(),
            damaged,
            false
        )
        .is_err()
    );
}
