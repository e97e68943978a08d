//! Seeded mutation fuzzing of every input reader. Each valid demo input is damaged at random
//! (lines deleted, duplicated, swapped or re-indented, bytes flipped or inserted, invalid UTF-8
//! and NUL, truncation, scalars replaced by hostile tokens, CRLF, a byte-order mark, and for
//! JSON files values edited inside a structure that still parses) and read again:
//!
//! - through the library: no panic; an error names the damaged file and, where it gives a
//!   line, one that exists; a load that succeeds accounts for every record in the ledger;
//! - for the first few mutants of each input, through the binary at one and at two worker
//!   threads: exit 0, 1 or 2 and never a crash, an exit 2 names the file, and both runs print
//!   the same bytes.
//!
//! `BASEFIT_FUZZ_CASES` (library mutants per input, default 60) and `BASEFIT_FUZZ_CLI_CASES`
//! (of those, how many also run through the binary, default 4) set the size of a run;
//! `BASEFIT_FUZZ_SEED` picks another fixed set of mutants. A failure prints the seed of its
//! mutant; `BASEFIT_FUZZ_REPLAY=SEED` runs that mutant alone.

mod common;

use basefit::load::{self, BadInput, InputPaths};
use basefit::plan::replan::{CACHE_FORMAT, PlanCache, replan};
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

/// Values that readers get wrong: empty, out of range, YAML's null and empty collections,
/// requirement operators without operands, over-long versions, control and bidirectional
/// characters, and characters that end or open syntax in YAML, CSV and JSON.
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

/// Edits one value inside a JSON document and writes it back, so the damage reaches the
/// checks behind the parser: numbers off by one or out of range, list items removed,
/// repeated or swapped, strings replaced by hostile tokens.
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
            let new: serde_json::Value = match rng.below(7) {
                0 => (old + 1).into(),
                1 => (old - 1).into(),
                2 => 0.into(),
                3 => u32::MAX.into(),
                4 => u64::MAX.into(),
                5 => (-1).into(),
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
    Cache,
    Catalog,
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
            Target::Cache => "plan.cache",
            Target::Catalog => "catalog.yaml",
        }
    }

    /// Whether structure-aware JSON edits apply.
    fn json(self) -> bool {
        matches!(self, Target::Matrix | Target::Cache)
    }
}

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
        let matrix = basefit::report::to_json(&cache.matrix);
        let mut fixture = fixture;
        fixture.originals.extend([
            (Target::ResultsCsv, csv.into_bytes()),
            (Target::ResultsJsonLines, jsonl.into_bytes()),
            (Target::Matrix, matrix.into_bytes()),
            (Target::Cache, cache.to_sealed_json().into_bytes()),
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
        let structured = target.json() && rng.below(2) == 0;
        let parsed = serde_json::from_slice::<serde_json::Value>(&bytes);
        match parsed {
            Ok(mut value) if structured => {
                done.push(mutate_json(&mut rng, &mut value, tokens));
                bytes = if target == Target::Cache {
                    reseal(&value)
                        .unwrap_or_else(|| value.to_string())
                        .into_bytes()
                } else {
                    serde_json::to_vec_pretty(&value).unwrap()
                };
            }
            _ => done.push(mutate_bytes(&mut rng, &mut bytes, tokens)),
        }
    }
    (bytes, done)
}

/// A cache edited by structure is sealed again when it still reads as one, as if basefit
/// had written it: the structure checks, not the seal, must then stop it.
fn reseal(value: &serde_json::Value) -> Option<String> {
    let mut value = value.clone();
    value.as_object_mut()?.remove("seal");
    let cache: PlanCache = serde_json::from_value(value).ok()?;
    Some(cache.to_sealed_json())
}

/// Every line an error names lies in the file, and every error names the damaged file.
fn check_error(err: &BadInput, file: &str, text: &[u8]) -> Result<(), String> {
    // YAML ends a line at a lone CR too, so a file with stray CRs has more lines to YAML than
    // to `wc -l`; either count is accepted.
    let crlf = text.windows(2).filter(|w| w == b"\r\n").count();
    let breaks = text.iter().filter(|&&b| b == b'\n' || b == b'\r').count() - crlf;
    let lines = breaks + 1;
    for e in std::iter::once(err).chain(&err.more) {
        if e.file != file {
            return Err(format!("error names {} instead of {file}: {e}", e.file));
        }
        if let Some(line) = e.line
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

/// The library side of one mutant: loads it (and for a matrix or cache, uses it as the
/// command that reads it does) and returns what went wrong.
fn check_library(fixture: &Fixture, target: Target, text: &[u8]) -> Result<(), String> {
    let damaged = fixture.path(target).display().to_string();
    let loaded = catch_unwind(AssertUnwindSafe(|| {
        load::load_inputs(&fixture.paths(target))
    }))
    .map_err(|p| format!("loading panicked: {}", panic_text(p)))?;
    let inputs = match loaded {
        Err(e) if target == Target::Log => return Err(format!("a log file failed the load: {e}")),
        Err(e) => return check_error(&e, &damaged, text),
        Ok(inputs) => inputs,
    };
    let unbalanced = inputs.ledger.unbalanced();
    if !unbalanced.is_empty() {
        let tallies: Vec<String> = unbalanced
            .iter()
            .map(|k| format!("{k:?} {:?}", inputs.ledger.tally(*k)))
            .collect();
        return Err(format!("ledger does not balance: {}", tallies.join(", ")));
    }
    let used = catch_unwind(AssertUnwindSafe(|| use_file(fixture, target, &inputs)))
        .map_err(|p| format!("using the input panicked: {}", panic_text(p)))?;
    match used {
        Ok(()) => Ok(()),
        Err(e) => check_error(&e, &damaged, text),
    }
}

/// Reads a matrix or a cache as the commands do and uses what reads; logs are classified.
fn use_file(fixture: &Fixture, target: Target, inputs: &load::Inputs) -> Result<(), BadInput> {
    match target {
        Target::Log => {
            for r in &inputs.results {
                basefit::verify::logs::classify(r.log.as_deref().unwrap_or(""));
            }
        }
        Target::Matrix => {
            let mut matrix: Matrix = basefit::commands::read_matrix(&fixture.path(target))?;
            for render in [
                basefit::report::html,
                basefit::report::markdown,
                basefit::report::csv,
            ] {
                render(&matrix);
            }
            let review = basefit::verify::compare_inputs(&matrix, inputs);
            basefit::verify::annotate(&mut matrix, &review);
            basefit::report::to_yaml(&matrix);
        }
        Target::Cache => {
            let text = std::fs::read_to_string(fixture.path(target)).unwrap_or_default();
            // What `plan --cache` accepts: this version's format, sound and sealed.
            if let Ok(cache) = serde_json::from_str::<PlanCache>(&text)
                && cache.format == CACHE_FORMAT
                && cache.check().is_ok()
                && PlanCache::seal_holds(&text)
            {
                replan(inputs, &PlanOptions::default(), Some(cache), None);
            }
        }
        _ => {}
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
    let matrix = fixture.path(Target::Matrix).display().to_string();
    let matrix_flag = ["--matrix".to_string(), matrix];
    match target {
        Target::ResultsYaml | Target::ResultsCsv | Target::ResultsJsonLines | Target::Log => vec![
            with("check", true, &[]),
            with("review", true, &[]),
            with("render", true, &[]),
        ],
        Target::Matrix => vec![
            with(
                "render",
                false,
                &[&matrix_flag[..], &["--format".into(), "html".into()]].concat(),
            ),
            with("review", true, &matrix_flag),
        ],
        // Filled in per run: each run reads and rewrites its own copy.
        Target::Cache => vec![with("plan", false, &[])],
        _ => vec![with("check", true, &[]), with("plan", false, &[])],
    }
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
            let (code, stdout, stderr) = run(&args, threads);
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
    for (case, seed) in seeds(target).into_iter().enumerate() {
        let (text, mutations) = mutant(&fixture, target, seed, &tokens);
        std::fs::write(fixture.path(target), &text).unwrap();
        if let Err(what) = check_library(&fixture, target, &text) {
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

/// The unchanged fixture passes every check, so a failure above is the mutation's doing; and
/// the checks are not vacuous: a damaged file is refused naming it.
#[test]
fn the_unchanged_fixture_is_clean_and_damage_is_caught() {
    let fixture = Fixture::new();
    for target in [
        Target::Registry,
        Target::Matrix,
        Target::Cache,
        Target::BulkVersions,
    ] {
        let text = fixture.original(target).to_vec();
        check_library(&fixture, target, &text).unwrap();
        check_cli(&fixture, target, &text).unwrap();
    }
    let damaged = b"packages:\n  - name: [unclosed\n";
    std::fs::write(fixture.path(Target::Registry), damaged).unwrap();
    check_library(&fixture, Target::Registry, damaged).unwrap();
    let err = load::load_inputs(&fixture.paths(Target::Registry)).unwrap_err();
    assert!(check_error(&err, "elsewhere.yaml", damaged).is_err());
    let lines = BadInput::at(fixture.path(Target::Registry).display().to_string(), 9, "x");
    assert!(
        check_error(
            &lines,
            &fixture.path(Target::Registry).display().to_string(),
            damaged
        )
        .is_err()
    );
}
