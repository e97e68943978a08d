//! Deterministic synthetic registries for load tests and benchmarks.
//!
//! The shape follows what real registry dumps look like, with invented names (`pkg-000123`):
//! a heavy-tailed number of versions per package, dependents concentrated on a few popular
//! packages (preferential attachment over earlier packages, so the graph is mostly acyclic
//! with a few cycles), release dates increasing with the version, runtime requirements that
//! tighten over time, a few percent of versions declaring native libraries, yanked, or
//! written with messy version strings.
//!
//! All randomness comes from a small PRNG written here and uses only integer arithmetic and
//! IEEE-exact floating-point operations (no `powf`, `ln`, ...), so a seed gives byte-identical
//! output on every run and platform.
//!
//! ```
//! use basefit::synth::{SynthOptions, write_bulk};
//! let opts = SynthOptions::scaled(7, 200);
//! let (mut versions, mut deps) = (Vec::new(), Vec::new());
//! let summary = write_bulk(&opts, &mut versions, &mut deps).unwrap();
//! assert_eq!(summary.versions, 200);
//! let text = String::from_utf8(versions).unwrap();
//! assert!(text.starts_with("package,version,released,runtime,"));
//! assert_eq!(text.lines().count(), 201);
//! ```

use crate::load::bulk::{DEPENDENCY_COLUMNS, LIST_SEPARATOR, VERSION_COLUMNS};
use crate::model::DepKind;
use semver::Version;
use std::fmt::Write as _;
use std::io::{self, Write};

/// Bumped whenever the generator's output for some options changes, so that files generated
/// by an earlier version (the benchmark's cached registry) are not taken for current ones.
pub const GENERATOR_VERSION: u32 = 2;

/// What to generate. [`SynthOptions::default`] is the full benchmark scale.
#[derive(Debug, Clone, PartialEq)]
pub struct SynthOptions {
    /// The same seed and options give byte-identical output.
    pub seed: u64,
    /// Packages in total (named `pkg-000000` upwards).
    pub packages: usize,
    /// Version records in total; every package gets at least one, so `packages` is lowered
    /// to this when it is larger.
    pub versions: usize,
    /// Dependency records in total (slightly fewer are written when the graph is too small
    /// to hold them without repeating a dependency).
    pub edges: usize,
    /// Share of packages that declare native libraries (all their versions do).
    pub native_share: f64,
    /// Share of versions that are yanked.
    pub yanked_share: f64,
    /// Share of versions written with a messy version string; one in eight of those is
    /// unreadable on purpose (and is left out on loading), the rest normalise.
    pub messy_share: f64,
    /// Runtime versions released over the timeline, oldest first; requirements name them.
    pub runtime_versions: Vec<Version>,
}

impl Default for SynthOptions {
    fn default() -> Self {
        SynthOptions {
            seed: 1,
            packages: 200_000,
            versions: 1_500_000,
            edges: 6_000_000,
            native_share: 0.03,
            yanked_share: 0.02,
            messy_share: 0.02,
            runtime_versions: default_runtimes(),
        }
    }
}

fn default_runtimes() -> Vec<Version> {
    let mut out: Vec<Version> = (0..10).map(|m| Version::new(2, m, 0)).collect();
    out.extend((0..3).map(|m| Version::new(3, m, 0)));
    out
}

impl SynthOptions {
    /// Options with the full-scale proportions (7.5 versions per package, 4 dependencies
    /// per version) for `versions` versions.
    pub fn scaled(seed: u64, versions: usize) -> SynthOptions {
        SynthOptions {
            seed,
            packages: (versions * 2 / 15).max(1),
            versions,
            edges: versions * 4,
            ..SynthOptions::default()
        }
    }

    /// Rejects shares outside 0..=1 and runtime lists that are not ascending.
    pub fn validate(&self) -> Result<(), String> {
        for (name, v) in [
            ("native_share", self.native_share),
            ("yanked_share", self.yanked_share),
            ("messy_share", self.messy_share),
        ] {
            if !(0.0..=1.0).contains(&v) {
                return Err(format!("{name} must be between 0 and 1, found {v}"));
            }
        }
        if self.runtime_versions.windows(2).any(|w| w[0] >= w[1]) {
            return Err("runtime_versions must be in ascending order without repeats".into());
        }
        Ok(())
    }
}

/// What a generator run wrote, so a test can check a loader against it.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct SynthSummary {
    /// Packages written (fewer than asked when there are fewer versions than packages).
    pub packages: u64,
    /// Version records written.
    pub versions: u64,
    /// Dependency records written.
    pub dependencies: u64,
    /// Versions written in a messy form that a reader normalises.
    pub normalised: u64,
    /// Versions written unreadable on purpose.
    pub unreadable: u64,
    /// Dependency records of the unreadable versions (left out with them).
    pub unreadable_dependencies: u64,
    /// Versions that are pre-releases (`-rc.N`).
    pub prereleases: u64,
    /// Versions marked yanked.
    pub yanked: u64,
    /// Versions that declare native libraries.
    pub native: u64,
}

/// Writes the bulk CSV pair (see `docs/bulk-format.md`).
pub fn write_bulk(
    opts: &SynthOptions,
    versions: impl Write,
    deps: impl Write,
) -> io::Result<SynthSummary> {
    let mut sink = BulkSink {
        versions: csv::Writer::from_writer(versions),
        deps: csv::Writer::from_writer(deps),
        late_versions: csv::WriterBuilder::new()
            .has_headers(false)
            .from_writer(Vec::new()),
        late_deps: csv::WriterBuilder::new()
            .has_headers(false)
            .from_writer(Vec::new()),
    };
    sink.versions.write_record(VERSION_COLUMNS)?;
    sink.deps.write_record(DEPENDENCY_COLUMNS)?;
    let summary = generate(opts, &mut sink)?;
    sink.finish()?;
    Ok(summary)
}

/// Writes the same registry as [`write_bulk`] in the YAML registry format. The YAML reader
/// holds a whole file in memory, so this is meant for small sizes.
pub fn write_yaml(opts: &SynthOptions, out: impl Write) -> io::Result<SynthSummary> {
    let mut sink = YamlSink {
        out: io::BufWriter::new(out),
        line: String::new(),
    };
    writeln!(
        sink.out,
        "# Synthetic registry (basefit synth, seed {}); names are invented.\npackages:",
        opts.seed
    )?;
    let summary = generate(opts, &mut sink)?;
    sink.out.flush()?;
    Ok(summary)
}

/// splitmix64: a tiny generator whose sequence is the same on every platform, for seeded
/// data that must not change with a dependency's version.
///
/// ```
/// use basefit::synth::SplitMix64;
/// let mut a = SplitMix64::new(7, 1, 2);
/// let mut b = SplitMix64::new(7, 1, 2);
/// assert_eq!(a.next(), b.next());
/// assert!(a.below(10) < 10);
/// ```
pub struct SplitMix64(u64);

impl SplitMix64 {
    /// An independent stream per purpose and index, so adding a draw in one place does not
    /// shift every value after it.
    pub fn new(seed: u64, stream: u64, index: u64) -> SplitMix64 {
        let mut r = SplitMix64(
            seed ^ stream.wrapping_mul(0xD1B5_4A32_D192_ED03)
                ^ index.wrapping_mul(0x8CB9_2BA7_2F3D_8DD7),
        );
        r.next();
        r
    }

    #[allow(clippy::should_implement_trait)]
    pub fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform in [0, 1).
    fn unit(&mut self) -> f64 {
        (self.next() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// Uniform in 0..n (0 when n is 0).
    pub fn below(&mut self, n: u64) -> u64 {
        ((u128::from(self.next()) * u128::from(n)) >> 64) as u64
    }

    fn chance(&mut self, p: f64) -> bool {
        self.unit() < p
    }

    /// Pareto-like with tail exponent 1 (P(x > t) = 1/t), capped: the shape of "versions per
    /// package" and "dependencies per package" in registries.
    fn heavy(&mut self, cap: f64) -> f64 {
        (1.0 / (1.0 - self.unit())).min(cap)
    }
}

const STREAM_PACKAGE: u64 = 1;
const STREAM_VERSION: u64 = 2;
const STREAM_TARGETS: u64 = 3;
const STREAM_STYLE: u64 = 4;
const STREAM_LATE: u64 = 5;

const LIBRARIES: &[&str] = &["libxml2", "zlib", "libpng", "libpq", "openssl", "libffi"];
const NATIVE_FILES: &[&str] = &["ext/binding.c", "ext/shim.h", "build/native.cfg"];
const PLATFORMS: &[&str] = &[
    "linux/glibc/x86_64",
    "linux/musl/x86_64",
    "linux/glibc/aarch64",
];

/// Days since 1970-01-01 of the timeline's ends.
const FIRST_DAY: i64 = 15_340; // 2012-01-01
const LAST_DAY: i64 = 20_453; // 2025-12-31
/// Native packages ship prebuilt builds for versions released after this day (2018-01-01).
const PREBUILT_FROM: i64 = 17_532;

/// How a version string is written.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Form {
    Strict,
    LeadingV,
    /// `1.2` for `1.2.0`.
    Short,
    /// `2.0.0rc1` for a pre-release.
    NoHyphen,
    LeadingZero,
    /// `dev-1.2`: refused.
    Prefixed,
    /// `1.2.3-`: refused.
    TrailingDash,
}

impl Form {
    fn readable(self) -> bool {
        !matches!(self, Form::Prefixed | Form::TrailingDash)
    }
}

struct VersionPlan {
    major: u32,
    minor: u32,
    patch: u32,
    /// `rc.N` pre-release when not 0.
    rc: u8,
    day: i64,
    form: Form,
    yanked: bool,
}

impl VersionPlan {
    /// A version a requirement can be aimed at: readable and not a pre-release.
    fn aimable(&self) -> bool {
        self.rc == 0 && self.form.readable()
    }

    fn write_text(&self, out: &mut String) {
        out.clear();
        let (ma, mi, pa, rc) = (self.major, self.minor, self.patch, self.rc);
        let _ = match self.form {
            Form::Strict | Form::LeadingV | Form::LeadingZero => {
                let prefix = match self.form {
                    Form::LeadingV => "v",
                    Form::LeadingZero => "0",
                    _ => "",
                };
                if rc > 0 {
                    write!(out, "{prefix}{ma}.{mi}.{pa}-rc.{rc}")
                } else {
                    write!(out, "{prefix}{ma}.{mi}.{pa}")
                }
            }
            Form::Short => write!(out, "{ma}.{mi}"),
            Form::NoHyphen => write!(out, "{ma}.{mi}.{pa}rc{rc}"),
            Form::Prefixed => write!(out, "dev-{ma}.{mi}"),
            Form::TrailingDash => write!(out, "{ma}.{mi}.{pa}-"),
        };
    }
}

struct PackagePlan {
    first: usize,
    count: usize,
    /// Relative number of dependencies of its versions.
    degree: f64,
    /// Bit i set: declares `LIBRARIES[i]`.
    libraries: u8,
    files: u8,
    /// How many of `PLATFORMS` its prebuilt versions ship for.
    platforms: usize,
    helper: bool,
    /// Runtimes of the newest this many before the current one stay supported.
    runtime_window: usize,
    /// Declares no runtime requirement before 2016.
    old_style: bool,
}

/// One version record as the sinks write it.
struct Record<'a> {
    package: &'a str,
    version: &'a str,
    released: &'a str,
    runtime: &'a str,
    yanked: bool,
    /// `None`: nothing said about builds (source only).
    builds: Option<(bool, &'a [&'static str])>,
    libraries: &'a [&'static str],
    files: &'a [&'static str],
    /// Package-level fields, given on the package's first generated version only.
    summary: Option<&'a str>,
    helper: Option<bool>,
    deps: &'a [(usize, String, DepKind)],
    names: &'a [Box<str>],
    /// Written after all other rows (bulk only), so rows of a package are not all adjacent.
    late: bool,
}

trait Sink {
    fn package(&mut self, name: &str, summary: &str, helper: bool) -> io::Result<()>;
    fn version(&mut self, r: &Record<'_>) -> io::Result<()>;
}

struct BulkSink<V: Write, D: Write> {
    versions: csv::Writer<V>,
    deps: csv::Writer<D>,
    late_versions: csv::Writer<Vec<u8>>,
    late_deps: csv::Writer<Vec<u8>>,
}

impl<V: Write, D: Write> BulkSink<V, D> {
    fn finish(self) -> io::Result<()> {
        let late_versions = self
            .late_versions
            .into_inner()
            .map_err(|e| e.into_error())?;
        let late_deps = self.late_deps.into_inner().map_err(|e| e.into_error())?;
        let mut versions = self.versions.into_inner().map_err(|e| e.into_error())?;
        versions.write_all(&late_versions)?;
        versions.flush()?;
        let mut deps = self.deps.into_inner().map_err(|e| e.into_error())?;
        deps.write_all(&late_deps)?;
        deps.flush()
    }
}

fn join(items: &[&str], out: &mut String) {
    out.clear();
    for (i, item) in items.iter().enumerate() {
        if i > 0 {
            out.push(LIST_SEPARATOR);
        }
        out.push_str(item);
    }
}

fn flag(v: bool) -> &'static str {
    if v { "true" } else { "false" }
}

impl<V: Write, D: Write> Sink for BulkSink<V, D> {
    fn package(&mut self, _: &str, _: &str, _: bool) -> io::Result<()> {
        Ok(())
    }

    fn version(&mut self, r: &Record<'_>) -> io::Result<()> {
        let (mut prebuilt, mut libraries, mut files) =
            (String::new(), String::new(), String::new());
        let source = match r.builds {
            None => "",
            Some((source, platforms)) => {
                join(platforms, &mut prebuilt);
                flag(source)
            }
        };
        join(r.libraries, &mut libraries);
        join(r.files, &mut files);
        let row: [&str; 11] = [
            r.package,
            r.version,
            r.released,
            r.runtime,
            if r.yanked { "true" } else { "" },
            source,
            &prebuilt,
            &libraries,
            &files,
            r.summary.unwrap_or(""),
            r.helper.map(flag).unwrap_or(""),
        ];
        if r.late {
            write_rows(&mut self.late_versions, &mut self.late_deps, &row, r)
        } else {
            write_rows(&mut self.versions, &mut self.deps, &row, r)
        }
    }
}

fn write_rows<V: Write, D: Write>(
    versions: &mut csv::Writer<V>,
    deps: &mut csv::Writer<D>,
    row: &[&str; 11],
    r: &Record<'_>,
) -> io::Result<()> {
    versions.write_record(row)?;
    for (target, req, kind) in r.deps {
        let kind = match kind {
            DepKind::Runtime => "",
            DepKind::Development => "development",
        };
        deps.write_record([r.package, r.version, &r.names[*target], req.as_str(), kind])?;
    }
    Ok(())
}

struct YamlSink<W: Write> {
    out: io::BufWriter<W>,
    line: String,
}

/// A double-quoted YAML scalar: the generator's strings are plain ASCII, but quoting keeps
/// `1.2` a string rather than a number.
fn quoted(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 2);
    out.push('"');
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

fn quoted_list(items: &[&str]) -> String {
    let inner: Vec<String> = items.iter().map(|s| quoted(s)).collect();
    format!("[{}]", inner.join(", "))
}

impl<W: Write> Sink for YamlSink<W> {
    fn package(&mut self, name: &str, summary: &str, helper: bool) -> io::Result<()> {
        writeln!(self.out, "  - name: {}", quoted(name))?;
        writeln!(self.out, "    summary: {}", quoted(summary))?;
        if helper {
            writeln!(self.out, "    native_helper: true")?;
        }
        writeln!(self.out, "    versions:")
    }

    fn version(&mut self, r: &Record<'_>) -> io::Result<()> {
        let l = &mut self.line;
        l.clear();
        let _ = writeln!(l, "      - version: {}", quoted(r.version));
        let _ = writeln!(l, "        released: {}", quoted(r.released));
        if !r.runtime.is_empty() {
            let _ = writeln!(l, "        runtime: {}", quoted(r.runtime));
        }
        if r.yanked {
            let _ = writeln!(l, "        yanked: true");
        }
        if !r.deps.is_empty() {
            let _ = writeln!(l, "        depends:");
            for (target, req, kind) in r.deps {
                let _ = write!(l, "          - {{name: {}", quoted(&r.names[*target]));
                if !req.is_empty() {
                    let _ = write!(l, ", req: {}", quoted(req));
                }
                if *kind == DepKind::Development {
                    let _ = write!(l, ", kind: development");
                }
                let _ = writeln!(l, "}}");
            }
        }
        if let Some((source, platforms)) = r.builds {
            let _ = writeln!(
                l,
                "        builds: {{source: {}, prebuilt: {}}}",
                flag(source),
                quoted_list(platforms)
            );
        }
        if !r.libraries.is_empty() || !r.files.is_empty() {
            let _ = writeln!(
                l,
                "        native: {{libraries: {}, files: {}}}",
                quoted_list(r.libraries),
                quoted_list(r.files)
            );
        }
        self.out.write_all(l.as_bytes())
    }
}

/// The civil date of a day number (days since 1970-01-01), as `YYYY-MM-DD`.
fn civil(day: i64, out: &mut String) {
    // Howard Hinnant's days-to-civil algorithm: integers only.
    let z = day + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    out.clear();
    let _ = write!(out, "{y:04}-{m:02}-{d:02}");
}

/// The whole registry minus its dependencies, planned before anything is written because a
/// dependency may point at any package (for the few cycles).
struct Plan {
    packages: Vec<PackagePlan>,
    versions: Vec<VersionPlan>,
    /// Relative dependency weight of every version, and their sum.
    weights: Vec<f64>,
    total_weight: f64,
}

fn plan(opts: &SynthOptions) -> Plan {
    let n_pkg = opts.packages.min(opts.versions);
    let extra = (opts.versions - n_pkg) as f64;
    let mut pkg_rng: Vec<SplitMix64> = (0..n_pkg)
        .map(|i| SplitMix64::new(opts.seed, STREAM_PACKAGE, i as u64))
        .collect();
    let shares: Vec<f64> = pkg_rng.iter_mut().map(|r| r.heavy(1000.0)).collect();
    let total_share: f64 = shares.iter().sum();
    let helpers = (n_pkg / 2000).max(1);
    let mut packages = Vec::with_capacity(n_pkg);
    let mut versions = Vec::with_capacity(opts.versions);
    let (mut cum, mut given) = (0.0f64, 0usize);
    let span = (LAST_DAY - FIRST_DAY) as f64;
    for (i, rng) in pkg_rng.iter_mut().enumerate() {
        // Cumulative rounding gives exactly `versions` in total.
        cum += shares[i];
        let upto = if i + 1 == n_pkg {
            opts.versions - n_pkg
        } else {
            ((cum * extra / total_share) as usize).min(opts.versions - n_pkg)
        };
        let count = 1 + upto.saturating_sub(given);
        given = given.max(upto);
        let native = rng.chance(opts.native_share);
        let libraries = if native {
            let a = rng.below(LIBRARIES.len() as u64);
            let b = rng.below(LIBRARIES.len() as u64);
            (1u8 << a) | if rng.chance(0.4) { 1u8 << b } else { 0 }
        } else {
            0
        };
        let files = if native && rng.chance(0.5) {
            1u8 << rng.below(NATIVE_FILES.len() as u64)
        } else {
            0
        };
        let platforms = match rng.below(10) {
            0..=5 => 1,
            6..=8 => 2,
            _ => 3,
        };
        let degree = rng.heavy(60.0) - 1.0;
        let runtime_window = 3 + rng.below(4) as usize;
        let old_style = rng.chance(0.5);
        // Packages appear over the timeline in index order; each lives a random share of
        // the time left.
        let start =
            FIRST_DAY + (span * 0.92 * (i as f64 / n_pkg as f64)) as i64 + rng.below(30) as i64;
        let life = (LAST_DAY - start).max(1) as f64 * (0.2 + 0.8 * rng.unit());
        let first = versions.len();
        plan_versions(opts, i, count, start, life, &mut versions);
        packages.push(PackagePlan {
            first,
            count,
            degree,
            libraries,
            files,
            platforms,
            helper: i < helpers,
            runtime_window,
            old_style,
        });
    }
    let mut weights = Vec::with_capacity(versions.len());
    for p in &packages {
        for k in 0..p.count {
            // Later versions tend to have more dependencies.
            let ramp = if p.count > 1 {
                0.5 + 0.5 * (k as f64 / (p.count - 1) as f64)
            } else {
                0.75
            };
            weights.push(p.degree * ramp);
        }
    }
    let total_weight = weights.iter().sum();
    Plan {
        packages,
        versions,
        weights,
        total_weight,
    }
}

fn plan_versions(
    opts: &SynthOptions,
    package: usize,
    count: usize,
    start: i64,
    life: f64,
    out: &mut Vec<VersionPlan>,
) {
    let mut rng = SplitMix64::new(opts.seed, STREAM_VERSION, package as u64);
    let (mut major, mut minor, mut patch) = if rng.chance(0.4) {
        (0, 1, 0)
    } else {
        (1, 0, 0)
    };
    // Cumulative random gaps spread the dates over the package's life, never decreasing.
    let gaps: Vec<f64> = (0..count).map(|_| 0.5 + rng.unit()).collect();
    let total: f64 = gaps.iter().sum();
    let mut acc = 0.0;
    let mut pending_rc = false;
    for (k, gap) in gaps.iter().enumerate() {
        let day = start + (life * acc / total) as i64;
        acc += gap;
        if k > 0 && !pending_rc {
            let r = rng.unit();
            if r < 0.62 {
                patch += 1;
            } else if r < 0.93 {
                minor += 1;
                patch = 0;
            } else {
                major += 1;
                minor = 0;
                patch = 0;
            }
        }
        // Some minor and major releases are preceded by a release candidate.
        let rc = if pending_rc {
            pending_rc = false;
            0
        } else if k > 0 && k + 1 < count && patch == 0 && rng.chance(0.12) {
            pending_rc = true;
            1 + rng.below(3) as u8
        } else {
            0
        };
        let form = if rng.chance(opts.messy_share) {
            if rng.chance(0.125) {
                let unreadable = if rng.chance(0.5) {
                    Form::Prefixed
                } else {
                    Form::TrailingDash
                };
                // A package's only version stays readable: unreadable, it would leave the
                // package without versions and its dependents' requirements unmeetable,
                // problems nobody meant to generate.
                if count > 1 {
                    unreadable
                } else {
                    Form::LeadingV
                }
            } else if rc > 0 && rng.chance(0.6) {
                Form::NoHyphen
            } else if patch == 0 && rc == 0 && rng.chance(0.5) {
                Form::Short
            } else if rng.chance(0.7) {
                Form::LeadingV
            } else {
                Form::LeadingZero
            }
        } else {
            Form::Strict
        };
        out.push(VersionPlan {
            major,
            minor,
            patch,
            rc,
            day,
            form,
            yanked: rng.chance(opts.yanked_share),
        });
    }
}

fn generate(opts: &SynthOptions, sink: &mut dyn Sink) -> io::Result<SynthSummary> {
    opts.validate()
        .map_err(|e| io::Error::new(io::ErrorKind::InvalidInput, e))?;
    let plan = plan(opts);
    let n_pkg = plan.packages.len();
    let width = n_pkg.saturating_sub(1).to_string().len().max(6);
    let names: Vec<Box<str>> = (0..n_pkg)
        .map(|i| format!("pkg-{i:0width$}").into_boxed_str())
        .collect();
    let runtime_days: Vec<i64> = {
        // Runtimes are released evenly from three years before the timeline to its end.
        let m = opts.runtime_versions.len() as i64;
        let from = FIRST_DAY - 3 * 365;
        (0..m)
            .map(|r| from + (LAST_DAY - from) * r / m.max(1))
            .collect()
    };
    let mut summary = SynthSummary {
        packages: n_pkg as u64,
        ..SynthSummary::default()
    };
    let edges = opts.edges as f64;
    let mut weight_so_far = 0.0f64;
    let mut edges_so_far = 0usize;
    let mut pool: Vec<u32> = Vec::new();
    let (mut version_text, mut released, mut runtime) =
        (String::new(), String::new(), String::new());
    let mut deps: Vec<(usize, String, DepKind)> = Vec::new();
    let mut counts: Vec<usize> = Vec::new();
    for (i, p) in plan.packages.iter().enumerate() {
        // Dependencies per version by cumulative rounding of the weights: exactly `edges`
        // in total unless the graph is too small.
        counts.clear();
        for k in 0..p.count {
            weight_so_far += plan.weights[p.first + k];
            let upto = if plan.total_weight > 0.0 {
                ((weight_so_far * edges / plan.total_weight) as usize).min(opts.edges)
            } else {
                0
            };
            counts.push(upto.saturating_sub(edges_so_far).min(n_pkg - 1));
            edges_so_far = edges_so_far.max(upto);
        }
        let wanted = counts.iter().copied().max().unwrap_or(0);
        let targets = choose_targets(opts.seed, i, wanted, n_pkg, p, &mut pool);
        let libraries: Vec<&'static str> = (0..LIBRARIES.len())
            .filter(|b| p.libraries & (1 << b) != 0)
            .map(|b| LIBRARIES[b])
            .collect();
        let files: Vec<&'static str> = (0..NATIVE_FILES.len())
            .filter(|b| p.files & (1 << b) != 0)
            .map(|b| NATIVE_FILES[b])
            .collect();
        let summary_text = format!("Synthetic package number {i}");
        sink.package(&names[i], &summary_text, p.helper)?;
        let mut late_rng = SplitMix64::new(opts.seed, STREAM_LATE, i as u64);
        for k in 0..p.count {
            let v = &plan.versions[p.first + k];
            v.write_text(&mut version_text);
            civil(v.day, &mut released);
            runtime_requirement(opts, &runtime_days, p, v.day, k, &mut runtime);
            deps.clear();
            for &(target, kind) in &targets[..counts[k].min(targets.len())] {
                let req = requirement(opts.seed, &plan, i, target, v.day);
                deps.push((target, req, kind));
            }
            let native = p.libraries != 0;
            // Every twentieth prebuilt version ships no source build.
            let builds = (native && v.day >= PREBUILT_FROM)
                .then(|| (k % 20 != 19, &PLATFORMS[..p.platforms]));
            let record = Record {
                package: &names[i],
                version: &version_text,
                released: &released,
                runtime: &runtime,
                yanked: v.yanked,
                builds,
                libraries: &libraries,
                files: &files,
                summary: (k == 0).then_some(summary_text.as_str()),
                helper: (k == 0).then_some(p.helper),
                deps: &deps,
                names: &names,
                late: late_rng.chance(0.01),
            };
            sink.version(&record)?;
            summary.versions += 1;
            summary.dependencies += deps.len() as u64;
            if !v.form.readable() {
                summary.unreadable += 1;
                summary.unreadable_dependencies += deps.len() as u64;
            } else if v.form != Form::Strict {
                summary.normalised += 1;
            }
            summary.prereleases += u64::from(v.rc > 0);
            summary.yanked += u64::from(v.yanked);
            summary.native += u64::from(native);
        }
    }
    Ok(summary)
}

/// Picks `wanted` distinct dependency targets for package `i`, most from earlier packages and
/// weighted towards popular ones, a few from anywhere (which makes the few cycles; from the
/// oldest, most depended-on packages those are development dependencies).
fn choose_targets(
    seed: u64,
    i: usize,
    wanted: usize,
    n_pkg: usize,
    p: &PackagePlan,
    pool: &mut Vec<u32>,
) -> Vec<(usize, DepKind)> {
    let mut rng = SplitMix64::new(seed, STREAM_TARGETS, i as u64);
    let mut chosen: Vec<usize> = Vec::with_capacity(wanted);
    let helpers = (n_pkg / 2000).max(1);
    if wanted > 0 && p.libraries != 0 && i >= helpers {
        // Native packages usually depend on a build helper.
        chosen.push(rng.below(helpers as u64) as usize);
    }
    while chosen.len() < wanted {
        let mut pick = None;
        for _ in 0..8 {
            let j = if i == 0 || rng.chance(0.01) {
                rng.below(n_pkg as u64) as usize
            } else if !pool.is_empty() && rng.chance(0.5) {
                // Preferential attachment: a package already depended on is picked again in
                // proportion to how often it was picked.
                pool[rng.below(pool.len() as u64) as usize] as usize
            } else {
                // Older packages are likelier targets: u³ leans hard towards 0.
                let u = rng.unit();
                (i as f64 * u * u * u) as usize
            };
            if j != i && j < n_pkg && !chosen.contains(&j) {
                pick = Some(j);
                break;
            }
        }
        let j = match pick {
            Some(j) => j,
            None => {
                // Crowded: probe forward from a random package for one not taken yet.
                let start = rng.below(n_pkg as u64) as usize;
                match (0..n_pkg)
                    .map(|d| (start + d) % n_pkg)
                    .find(|j| *j != i && !chosen.contains(j))
                {
                    Some(j) => j,
                    None => break,
                }
            }
        };
        chosen.push(j);
    }
    pool.extend(chosen.iter().map(|&j| j as u32));
    // The oldest packages are the ones most others depend on. A runtime dependency of one of
    // them (the oldest tenth) on a newer package would put it, and with it much of the
    // registry, in one cycle; real popular packages depend on newer ones for their tests, if
    // at all.
    let hub = i < (n_pkg / 10).max(1);
    chosen
        .into_iter()
        .map(|j| {
            let kind = if rng.chance(0.08) || (hub && j > i) {
                DepKind::Development
            } else {
                DepKind::Runtime
            };
            (j, kind)
        })
        .collect()
}

/// The requirement a version released on `day` places on `target`: mostly `^major.minor` of
/// the target's newest version at that time, so most resolve.
fn requirement(seed: u64, plan: &Plan, from: usize, target: usize, day: i64) -> String {
    let tp = &plan.packages[target];
    let vs = &plan.versions[tp.first..tp.first + tp.count];
    let at = vs.partition_point(|v| v.day <= day);
    let aim = (0..at.min(32))
        .map(|d| at - 1 - d)
        .find(|&x| vs[x].aimable())
        .or_else(|| (0..vs.len().min(32)).find(|&x| vs[x].aimable()))
        .unwrap_or(0);
    let v = &vs[aim];
    let (ma, mi, pa) = (v.major, v.minor, v.patch);
    // The style is a habit of the depending package towards this target, not a per-version
    // whim.
    let style =
        SplitMix64::new(seed, STREAM_STYLE, ((from as u64) << 32) ^ target as u64).below(100);
    match style {
        0..=72 => format!("^{ma}.{mi}"),
        73..=84 => format!(">={ma}.{mi}"),
        85..=89 => format!("~{ma}.{mi}.{pa}"),
        90..=92 => match vs[..aim].iter().rev().find(|o| o.aimable() && o.major < ma) {
            Some(o) => format!("^{}.{} || ^{ma}.{mi}", o.major, o.minor),
            None => format!("^{ma}.{mi}"),
        },
        93..=97 => format!(">={ma}.{mi}, <{}", ma + 1),
        _ => String::new(),
    }
}

/// `>=X.Y` of the oldest runtime still supported on `day`; tightens as runtimes come out.
fn runtime_requirement(
    opts: &SynthOptions,
    runtime_days: &[i64],
    p: &PackagePlan,
    day: i64,
    k: usize,
    out: &mut String,
) {
    out.clear();
    if opts.runtime_versions.is_empty() || (p.old_style && day < 16_436) {
        return; // 16_436: 2015-01-01
    }
    let newest = runtime_days
        .partition_point(|&d| d <= day)
        .saturating_sub(1);
    let lo = &opts.runtime_versions[newest.saturating_sub(p.runtime_window)];
    let _ = write!(out, ">={}.{}", lo.major, lo.minor);
    // A few versions also cap the runtime at the next one not yet released.
    if k % 31 == 30
        && let Some(hi) = opts.runtime_versions.get(newest + 1)
    {
        let _ = write!(out, ", <{}.{}", hi.major, hi.minor);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn civil_dates() {
        let mut s = String::new();
        civil(0, &mut s);
        assert_eq!(s, "1970-01-01");
        civil(FIRST_DAY, &mut s);
        assert_eq!(s, "2012-01-01");
        civil(LAST_DAY, &mut s);
        assert_eq!(s, "2025-12-31");
        civil(PREBUILT_FROM, &mut s);
        assert_eq!(s, "2018-01-01");
        civil(16_436, &mut s);
        assert_eq!(s, "2015-01-01");
    }

    #[test]
    fn rng_is_fixed() {
        // splitmix64's published first output for state 0 after one step.
        let mut r = SplitMix64(0);
        assert_eq!(r.next(), 0xE220_A839_7B1D_CDAF);
    }

    #[test]
    fn messy_forms_read_as_intended() {
        use crate::load::lenient::{VersionRead, read_version};
        let mut s = String::new();
        let plan = |form, rc, patch| VersionPlan {
            major: 2,
            minor: 1,
            patch,
            rc,
            day: 0,
            form,
            yanked: false,
        };
        for (form, rc, patch, want) in [
            (Form::LeadingV, 0, 3, Some("2.1.3")),
            (Form::LeadingZero, 0, 3, Some("2.1.3")),
            (Form::Short, 0, 0, Some("2.1.0")),
            (Form::NoHyphen, 2, 0, Some("2.1.0-rc2")),
            (Form::Prefixed, 0, 0, None),
            (Form::TrailingDash, 0, 3, None),
        ] {
            plan(form, rc, patch).write_text(&mut s);
            match (read_version(&s), want) {
                (VersionRead::Normalised(v, _), Some(w)) => assert_eq!(v.to_string(), w, "{s}"),
                (VersionRead::Refused(_), None) => {}
                (other, _) => panic!("{s}: {other:?}"),
            }
        }
    }
}
