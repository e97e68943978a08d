//! Names why an install failed, from its log.
//!
//! A recorded failure is only useful to verification once we know *why* it failed: a missing
//! header confirms (or contradicts) a predicted missing library, while a dropped connection says
//! nothing about the image. [`classify`] reads a log line by line and reports every recognised
//! cause with the line that shows it; [`primary`] picks the one verification should act on.
//!
//! # Recognised messages
//!
//! Matching is on the English (C locale) wording of the tools, so recorders should run installs
//! with `LC_ALL=C`; a localised compiler message is simply not recognised.
//!
//! - [`LogCause::MissingHeader`]: gcc `a.c:1:10: fatal error: foo/bar.h: No such file or
//!   directory` (`<command-line>: fatal error: ...` for one forced in with `-include`), clang
//!   `fatal error: 'foo/bar.h' file not found`, MSVC `Cannot open include file: 'foo.h'`.
//!   autoconf's deliberate probe for `ac_nonexistent.h` is not a finding.
//! - [`LogCause::MissingLibrary`]: GNU ld / gold `ld: cannot find -lfoo` (with or without the
//!   trailing `: No such file or directory`), lld `ld.lld: error: unable to find library -lfoo`,
//!   Apple ld `library not found for -lfoo` and `ld: library 'foo' not found`.
//! - [`LogCause::MissingPkgConfig`]: `Package foo was not found in the pkg-config search path.`,
//!   `No package 'foo' found` and pkgconf's `Package 'foo', required by 'bar', not found`.
//! - [`LogCause::MissingSharedObject`]: the dynamic loader or `dlopen` finding no shared object
//!   when a program or extension starts, glibc's `error while loading shared libraries:
//!   libfoo.so.1: cannot open shared object file: No such file or directory` (and the same
//!   text after `ImportError:` or `OSError:`, which carry `dlerror`'s message), and musl's
//!   `Error loading shared library libfoo.so.1: No such file or directory` (musl's wording from
//!   memory). This is how a prebuilt build fails on an image that lacks its runtime package.
//! - [`LogCause::NoCompiler`] and [`LogCause::NoMake`]: a shell that cannot find the program
//!   (`gcc: command not found`, `sh: 1: cc: not found`, `command not found: cc`), setuptools
//!   (`command 'gcc' failed: No such file or directory`, `unable to execute 'cc': No such file or
//!   directory`), Go (`exec: "gcc": executable file not found in $PATH`), rustc (``linker `cc`
//!   not found``), autoconf (`C compiler cannot create executables`, `no acceptable C compiler
//!   found`) and CMake (`No CMAKE_C_COMPILER could be found`, `CMake was unable to find a build
//!   program corresponding to "Unix Makefiles"`). Compiler names may carry a directory, a target
//!   prefix and a version suffix (`/usr/bin/x86_64-linux-gnu-gcc-12`). Launchers that exec
//!   the program say so in their words (`/usr/bin/env: 'cc': No such file or directory`,
//!   `timeout: failed to run command 'cc': ...`; `env`, `nice`, `nohup`, `timeout`, `xargs`),
//!   and Python's `subprocess` as `FileNotFoundError: [Errno 2] No such file or directory: 'gcc'`.
//! - [`LogCause::NoPkgConfig`]: the `pkg-config` program itself is missing (not a module): the
//!   shell's `pkg-config: not found` as above (`pkgconf` and target-prefixed names too), Go's
//!   `exec: "pkg-config": executable file not found`, autoconf's `The pkg-config script could
//!   not be found or is too old` (pkg.m4, as shipped by Debian 12's pkgconf) and CMake's `Could
//!   NOT find PkgConfig (missing: PKG_CONFIG_EXECUTABLE)` (from memory). Other programs a shell
//!   cannot find are not findings: builds run `git` and the like where failing is harmless.
//! - [`LogCause::RuntimeRefused`]: the form defined below.
//! - [`LogCause::BuildError`]: any other GCC or Clang error at a source location,
//!   `FILE:LINE[:COL]: error: MESSAGE` or `FILE:LINE[:COL]: fatal error: MESSAGE` (gcc `x.c:3:12:
//!   error: 'y' undeclared (first use in this function)`). The missing-header messages above are
//!   such lines too and stay missing headers. Such a line is the compiler's verdict on the
//!   source, so the identifiers and text it quotes are not read as other causes (`'ECONNREFUSED'
//!   undeclared` is no network failure, a `#warning "ld: cannot find -lzz"` made an error by
//!   `-Werror` no missing library). `configure:LINE: error:` lines, which `config.log` holds,
//!   are configure's own words and no compiler error. Errors in autoconf's probe files
//!   (`conftest.c` and the like) are not findings: configure compiles them expecting many to
//!   fail. The linker's
//!   `undefined reference` lines and `collect2: error: ld returned 1 exit status` carry no
//!   source location and are not recognised.
//! - [`LogCause::OutOfMemory`]: `out of memory` (including `cc1: out of memory allocating`),
//!   `Cannot allocate memory`, `virtual memory exhausted`, `std::bad_alloc`, OOM-killer notes.
//! - [`LogCause::Killed`]: the shell's `Killed` job report, make's `make: *** [Makefile:2: all]
//!   Killed`, gcc's `Killed signal terminated program`, `SIGKILL`, `signal 9`, `signal:
//!   killed`, and exit code or status 137.
//! - [`LogCause::Network`]: refused, reset, aborted or timed-out connections, DNS failures
//!   (`Could not resolve host`, `Temporary failure in name resolution`, `EAI_AGAIN`), TLS
//!   handshake timeouts, unreachable networks and gateway errors (502, 503, 504).
//! - [`LogCause::Timeout`]: `timed out`, `deadline exceeded`, `timeout expired`.
//!
//! # The runtime-refused form
//!
//! Runtimes and installers word "this package needs a newer runtime" in many ways, so recorders
//! are asked to write one tool-neutral line of their own when an install is refused for the
//! runtime version:
//!
//! ```text
//! runtime refused: requires <REQUIREMENT>, found <VERSION>
//! ```
//!
//! The marker `runtime refused: requires ` is matched without regard to case and may follow a
//! prefix on the same line (`error: runtime refused: ...`). `<REQUIREMENT>` runs up to the
//! *last* `, found ` on the line, so it may itself contain commas (`>=3.8, <4`); `<VERSION>` is
//! the rest of the line. Both are trimmed and must be non-empty.
//!
//! # Limits
//!
//! [`classify`] reads all of the text it is given; bounding it is the caller's part. Log files
//! can be very large, so the results reader passes only the last [`SCAN_TAIL_BYTES`] of one
//! (installers print the failure at the end), from the first whole line in them, or when they
//! hold no line end from the first whole `\r` segment ([`first_whole_segment`]), and the review
//! says how much of the file it skipped. A record's own `log` text, already read whole with its
//! results file, comes before that part and is never cut: the text classified is the record's
//! text, then the file's part, and line numbers count from its start
//! ([`crate::verify::compare::log_line_place`] says which of the two a line is in). A bare
//! carriage return splits a line into segments that share its
//! number, because progress bars redraw a line with `\r` and the error often lands on the same
//! physical line; this also makes CRLF harmless.
//! Only the first 16 KiB of a segment are examined, since tools print their errors on short lines.
//! ANSI escape sequences and other control characters are removed first. Each segment yields at
//! most one cause: the most specific that matches.

use memchr::memmem::Finder;
use serde::Serialize;
use std::collections::HashSet;
use std::fmt;
use std::sync::LazyLock;

/// How much of the end of a log file the results reader passes to [`classify`].
pub const SCAN_TAIL_BYTES: usize = 16 << 20;

/// The longest [`LogFinding::evidence`] in characters, before the closing ellipsis.
pub const EVIDENCE_CHARS: usize = 300;

/// Longer segments are minified code or binary noise; their tails are not worth the time.
const SEGMENT_BYTES: usize = 16 << 10;

/// Why an install failed, as far as its log shows.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize)]
#[serde(tag = "cause", rename_all = "kebab-case")]
pub enum LogCause {
    /// The compiler could not find a header, named as written in `#include <...>`.
    MissingHeader { header: String },
    /// The linker could not find a library, named as given to `-l` (without the `-l`).
    MissingLibrary { link: String },
    /// pkg-config has no `.pc` file for a module.
    MissingPkgConfig { module: String },
    /// The dynamic loader found no shared object, named by its file name (`libfoo.so.1`).
    MissingSharedObject { soname: String },
    /// A compiler is not installed or cannot build anything. `tool` is the program the log
    /// names, or `cc` / `c++` when it only says "C compiler" / "C++ compiler".
    NoCompiler { tool: String },
    /// `make` is not installed.
    NoMake,
    /// The `pkg-config` program is not installed (a module it cannot find is
    /// [`LogCause::MissingPkgConfig`]).
    NoPkgConfig,
    /// The installer refused the runtime version; see the module docs for the line format.
    RuntimeRefused { required: String, found: String },
    /// The compiler rejected the source for a reason that names no missing header: a GCC or
    /// Clang `FILE:LINE[:COL]: error:` line. Only the log line says what is wrong.
    BuildError,
    /// The network failed (connection, DNS, TLS, gateway).
    Network,
    /// Something gave up waiting.
    Timeout,
    /// Memory ran out.
    OutOfMemory,
    /// A process was killed (SIGKILL, exit code 137).
    Killed,
    /// Nothing recognised. [`classify`] never reports this; it is the answer of
    /// [`primary_cause`] for a log without findings.
    Unknown,
}

impl LogCause {
    /// Whether a rerun may well succeed: network trouble and timeouts depend on the moment,
    /// not the image. Memory exhaustion and kills are not counted, since they usually repeat on
    /// an image of the same size.
    pub fn likely_flaky(&self) -> bool {
        matches!(self, LogCause::Network | LogCause::Timeout)
    }

    /// A stable kebab-case name, the same as the `cause` tag in serialised output.
    pub fn label(&self) -> &'static str {
        match self {
            LogCause::MissingHeader { .. } => "missing-header",
            LogCause::MissingLibrary { .. } => "missing-library",
            LogCause::MissingPkgConfig { .. } => "missing-pkg-config",
            LogCause::MissingSharedObject { .. } => "missing-shared-object",
            LogCause::NoCompiler { .. } => "no-compiler",
            LogCause::NoMake => "no-make",
            LogCause::NoPkgConfig => "no-pkg-config",
            LogCause::RuntimeRefused { .. } => "runtime-refused",
            LogCause::BuildError => "build-error",
            LogCause::Network => "network",
            LogCause::Timeout => "timeout",
            LogCause::OutOfMemory => "out-of-memory",
            LogCause::Killed => "killed",
            LogCause::Unknown => "unknown",
        }
    }

    /// Lower is acted on first. A runtime refusal comes first: recorders write that line only
    /// when the installer stopped for the runtime, while a missing header or library is often a
    /// configure probe failing by design on the way to the real error. Among the rest, a
    /// missing header names what to install; a kill or a timeout is often only the consequence
    /// of something printed earlier. A compiler error comes after the causes that name what
    /// to install (it is often their fallout) and before kills, memory and the network: a
    /// download retried early in a log does not make the compiler's rejection of the source
    /// transient.
    pub(crate) fn rank(&self) -> u8 {
        match self {
            LogCause::RuntimeRefused { .. } => 0,
            LogCause::MissingHeader { .. }
            | LogCause::MissingLibrary { .. }
            | LogCause::MissingPkgConfig { .. }
            | LogCause::MissingSharedObject { .. } => 1,
            LogCause::NoCompiler { .. } | LogCause::NoMake | LogCause::NoPkgConfig => 2,
            LogCause::BuildError => 3,
            LogCause::OutOfMemory | LogCause::Killed => 4,
            LogCause::Network | LogCause::Timeout => 5,
            LogCause::Unknown => 6,
        }
    }
}

impl fmt::Display for LogCause {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            LogCause::MissingHeader { header } => write!(f, "missing header {header}"),
            LogCause::MissingLibrary { link } => write!(f, "missing library -l{link}"),
            LogCause::MissingPkgConfig { module } => {
                write!(f, "missing pkg-config module {module}")
            }
            LogCause::MissingSharedObject { soname } => {
                write!(f, "missing shared object {soname}")
            }
            LogCause::NoCompiler { tool } => write!(f, "no compiler ({tool})"),
            LogCause::NoMake => f.write_str("no make"),
            LogCause::NoPkgConfig => f.write_str("no pkg-config program"),
            LogCause::RuntimeRefused { required, found } => {
                write!(f, "runtime refused: requires {required}, found {found}")
            }
            LogCause::BuildError => f.write_str("compiler error"),
            LogCause::Network => f.write_str("network failure"),
            LogCause::Timeout => f.write_str("timed out"),
            LogCause::OutOfMemory => f.write_str("out of memory"),
            LogCause::Killed => f.write_str("killed"),
            LogCause::Unknown => f.write_str("unknown cause"),
        }
    }
}

/// One recognised cause and where the log shows it.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct LogFinding {
    /// What the line says went wrong. Flattened, so a finding serialises as its cause's
    /// fields (`cause`, and `header` or the like) beside `line` and `evidence`.
    #[serde(flatten)]
    pub cause: LogCause,
    /// 1-based line number in the log as classified: a record's own `log` text, then the
    /// part of its log file that was read ([`crate::verify::compare::log_line_place`] says
    /// which).
    pub line: usize,
    /// The line as shown, without escape codes, trimmed and cut to [`EVIDENCE_CHARS`].
    pub evidence: String,
}

/// Every cause the log shows, in log order. A cause seen again (same kind and same name) is
/// reported only at its first line, so a header missing from ten files is one finding. All of
/// `log` is read, line 1 being its first: a caller holding a huge log passes its tail (see the
/// module docs, "Limits").
pub fn classify(log: &str) -> Vec<LogFinding> {
    let mut seen = HashSet::new();
    let mut findings = Vec::new();
    // Reused across lines: a big log has millions of them.
    let mut clean = String::new();
    let mut lower = String::new();
    for (i, line) in log.split('\n').enumerate() {
        for segment in line.split('\r') {
            strip_controls(prefix(segment, SEGMENT_BYTES), &mut clean);
            let text = clean.trim();
            if text.is_empty() || quotes_source(text) {
                continue;
            }
            lower.clear();
            lower.push_str(text);
            lower.make_ascii_lowercase();
            if !may_match(&lower) {
                continue;
            }
            if let Some(cause) = match_segment(text, &lower)
                && seen.insert(cause.clone())
            {
                findings.push(LogFinding {
                    cause,
                    line: i + 1,
                    evidence: evidence(text),
                });
            }
        }
    }
    findings
}

/// Whether `text` (trimmed) is a line where GCC or Clang quote the source under a diagnostic,
/// `2 |   return ECONNREFUSED;`, or mark it, `|          ^~~~`: its words are the program's, not
/// a report of what went wrong (gcc on this machine prints both forms).
fn quotes_source(text: &str) -> bool {
    let text = without_timestamp(text);
    let digits = text.bytes().take_while(u8::is_ascii_digit).count();
    let rest = text[digits..].trim_start_matches(' ');
    (rest.starts_with('|') && (digits > 0 || text.starts_with('|'))) || prefixed_quote(text)
}

/// Whether `text` holds gcc's source quote behind a prefix a builder put before every line
/// (docker's `#8 1.234 `, git's `remote: `): gcc writes the line number right-aligned in five
/// columns, then ` | ` (`    4 | return ECONNREFUSED;`), and the caret line with blanks in
/// place of the number (`      |      ^~~`; gcc 12 on this project's machine). A builder's own
/// `] | ` separator has neither the number nor the blanks.
fn prefixed_quote(text: &str) -> bool {
    text.match_indices("| ").any(|(p, _)| {
        let before = &text[..p];
        let Some(head) = before.strip_suffix(' ') else {
            return false;
        };
        let number = head.trim_end_matches(|c: char| c.is_ascii_digit());
        let digits = head.len() - number.len();
        if digits == 0 {
            // The caret line: five columns of blanks, then the one before `|`. What gcc puts
            // after it starts in the source's column, so with a blank unless that is the
            // first; docker compose pads a short service name with blanks as wide before
            // its own `| ` (`db-1        | x.c:1:10: fatal error: ...`), then the line as is.
            let after = &text[p + "| ".len()..];
            return before.len() - before.trim_end_matches(' ').len() >= 6
                && after.starts_with([' ', '^', '~', '|', '+']);
        }
        let blanks = number.len() - number.trim_end_matches(' ').len();
        blanks >= 1 && blanks + digits >= 5
    })
}

/// `text` without a leading time stamp, as CI systems put before every log line
/// (`2026-12-05T09:00:00.123Z`, `[12:00:01]`; common practice, no source): the first word
/// when it holds a `:` and only digits, `-`, `:`, `.`, `T`, `Z` and brackets, with a digit
/// first (after a bracket).
fn without_timestamp(text: &str) -> &str {
    let Some((first, rest)) = text.split_once(char::is_whitespace) else {
        return text;
    };
    let bare = first.trim_start_matches('[').trim_end_matches(']');
    let stamp = bare.starts_with(|c: char| c.is_ascii_digit())
        && bare.contains(':')
        && bare
            .chars()
            .all(|c| c.is_ascii_digit() || matches!(c, '-' | ':' | '.' | 'T' | 'Z' | '+'));
    if stamp { rest.trim_start() } else { text }
}

/// The finding verification should act on: a runtime refusal, else the most specific kind, and
/// the earliest of those, since later errors are often fallout from the first. A header
/// missing in one of autoconf's probe files comes after every other finding: configure
/// probes for optional features and expects many probes to fail, so a build that stopped
/// for something else found later in the log stopped for that.
pub fn primary(findings: &[LogFinding]) -> Option<&LogFinding> {
    findings
        .iter()
        .min_by_key(|f| (is_probe_finding(f), f.cause.rank()))
}

/// A missing header reported from a configure probe (`conftest.c:3:10: fatal error: ...`):
/// configure expects many probes to fail, so such a finding says little on its own.
///
/// ```
/// use basefit::verify::logs::{classify, is_probe_finding};
/// let found = classify("conftest.c:3:10: fatal error: foo.h: No such file or directory");
/// assert!(is_probe_finding(&found[0]));
/// ```
pub fn is_probe_finding(f: &LogFinding) -> bool {
    matches!(f.cause, LogCause::MissingHeader { .. })
        && f.evidence
            .trim_start()
            .split(':')
            .next()
            .is_some_and(is_configure_probe)
}

/// The cause of [`primary`] for a whole log, or [`LogCause::Unknown`] when nothing is recognised.
pub fn primary_cause(log: &str) -> LogCause {
    primary(&classify(log)).map_or(LogCause::Unknown, |f| f.cause.clone())
}

/// Where the first whole segment of `piece` starts, `piece` being the end of a longer log cut
/// at an arbitrary byte: after its first line end, else after its first carriage return, else
/// at its first character. A window that holds no line end is still read: progress bars write
/// one endless line of `\r`-separated segments, and the error often lands at its very end.
pub fn first_whole_segment(piece: &[u8]) -> usize {
    if let Some(i) = memchr::memchr(b'\n', piece) {
        return i + 1;
    }
    if let Some(i) = memchr::memchr(b'\r', piece) {
        return i + 1;
    }
    // A cut through one huge segment: skip the rest of a character split by the cut.
    piece
        .iter()
        .position(|&b| b & 0xc0 != 0x80)
        .unwrap_or(piece.len())
}

/// The longest prefix of `s` of at most `max` bytes that ends on a character boundary.
fn prefix(s: &str, max: usize) -> &str {
    if s.len() <= max {
        return s;
    }
    let mut end = max;
    while !s.is_char_boundary(end) {
        end -= 1;
    }
    &s[..end]
}

/// Copies `s` into `out` without ANSI escape sequences and control characters; tabs become
/// spaces so that words stay apart.
fn strip_controls(s: &str, out: &mut String) {
    out.clear();
    // 0xC2 leads every UTF-8 encoded C1 control, including the one-character CSI U+009B.
    if !s.bytes().any(|b| b < 0x20 || b == 0x7f || b == 0xc2) {
        out.push_str(s);
        return;
    }
    let mut chars = s.chars().peekable();
    while let Some(c) = chars.next() {
        match c {
            '\u{1b}' => match chars.next() {
                Some('[') => skip_csi(&mut chars),
                Some(']') => skip_osc(&mut chars),
                // Charset designations like `ESC ( B` take one more character.
                Some('\u{20}'..='\u{2f}') => {
                    chars.next();
                }
                _ => {}
            },
            '\u{9b}' => skip_csi(&mut chars),
            '\t' => out.push(' '),
            c if c.is_control() => {}
            c => out.push(c),
        }
    }
}

/// Skips the rest of a control sequence: parameter and intermediate bytes, then one final byte.
fn skip_csi(chars: &mut std::iter::Peekable<std::str::Chars<'_>>) {
    while let Some(&c) = chars.peek() {
        match c {
            '\u{20}'..='\u{3f}' => {
                chars.next();
            }
            '\u{40}'..='\u{7e}' => {
                chars.next();
                return;
            }
            // Malformed: keep the character, it is probably text.
            _ => return,
        }
    }
}

/// Skips an operating system command (window titles, hyperlinks) up to BEL or `ESC \`.
fn skip_osc(chars: &mut std::iter::Peekable<std::str::Chars<'_>>) {
    while let Some(c) = chars.next() {
        match c {
            '\u{7}' => return,
            '\u{1b}' => {
                if chars.peek() == Some(&'\\') {
                    chars.next();
                }
                return;
            }
            _ => {}
        }
    }
}

fn evidence(text: &str) -> String {
    match text.char_indices().nth(EVIDENCE_CHARS) {
        None => text.to_owned(),
        Some((end, _)) => format!("{}…", &text[..end]),
    }
}

/// Lowercase words at least one of which every matcher in [`match_segment`] needs in its line.
/// Most of a big log is chatter that contains none of them, and testing these few with
/// prebuilt searchers costs far less than running every matcher; a new matcher must add its
/// word here (the unit tests check the phrase lists).
const ANCHORS: [&str; 30] = [
    "found",
    "shared ",
    "error: ",
    "find",
    "no such file",
    "include file",
    "compiler",
    "make_program",
    "refused",
    "memory",
    "bad_alloc",
    "kill",
    "signal 9",
    "137",
    "connect",
    "resol",
    "not known",
    "address associated",
    "eai_again",
    "econn",
    "handshake",
    "unreachable",
    "route to host",
    "gateway",
    "unavailable",
    "timed out",
    "deadline",
    "timeout",
    "timedout",
    "hang up",
];

static ANCHOR_FINDERS: LazyLock<Vec<Finder<'static>>> =
    LazyLock::new(|| ANCHORS.iter().map(Finder::new).collect());

fn may_match(lower: &str) -> bool {
    ANCHOR_FINDERS
        .iter()
        .any(|f| f.find(lower.as_bytes()).is_some())
}

/// The most specific cause in one cleaned segment. `lower` is `text` with ASCII lowercased, so
/// byte offsets agree between the two.
fn match_segment(text: &str, lower: &str) -> Option<LogCause> {
    if compiler_remark(text, &["warning: ", "note: "]) {
        return None;
    }
    // A compiler error at a source location is the compiler's verdict on the source, so the
    // words it quotes are not the loader's, the linker's, pkg-config's or a shell's: gcc
    // -Werror turns `#warning "ld: cannot find -lzz"` into `w.c:1:2: error: #warning "ld:
    // cannot find -lzz" [-Werror=cpp]` (gcc 12 on this project's machine). Only a missing
    // header, itself such a line, is read from it.
    let verdict = compiler_error(text);
    if !verdict && let Some(soname) = missing_shared_object(text) {
        return Some(LogCause::MissingSharedObject {
            soname: soname.to_owned(),
        });
    }
    if let Some(header) = missing_header(text) {
        // A probe that must fail says nothing about the image, nor is it a compiler error.
        if header == AUTOCONF_PROBE_HEADER {
            return None;
        }
        return Some(LogCause::MissingHeader {
            header: header.to_owned(),
        });
    }
    if !verdict {
        if let Some(link) = missing_library(text) {
            return Some(LogCause::MissingLibrary {
                link: link.to_owned(),
            });
        }
        if let Some(module) = missing_pkg_config(text) {
            return Some(LogCause::MissingPkgConfig {
                module: module.to_owned(),
            });
        }
        if let Some(program) = missing_program(text) {
            match program_kind(program) {
                Some(Program::Compiler) => {
                    return Some(LogCause::NoCompiler {
                        tool: program.to_owned(),
                    });
                }
                Some(Program::Make) => return Some(LogCause::NoMake),
                Some(Program::PkgConfig) => return Some(LogCause::NoPkgConfig),
                None => {}
            }
        }
        if let Some(tool) = compiler_phrase(lower) {
            return Some(LogCause::NoCompiler {
                tool: tool.to_owned(),
            });
        }
        if MAKE_PHRASES.iter().any(|p| lower.contains(p)) {
            return Some(LogCause::NoMake);
        }
        if PKG_CONFIG_PHRASES.iter().any(|p| lower.contains(p)) {
            return Some(LogCause::NoPkgConfig);
        }
    }
    if let Some((required, found)) = runtime_refused(text, lower) {
        return Some(LogCause::RuntimeRefused {
            required: required.to_owned(),
            found: found.to_owned(),
        });
    }
    // Before memory, kills and the network: words quoted from the source are not theirs.
    if verdict {
        return Some(LogCause::BuildError);
    }
    if OOM_PHRASES.iter().any(|p| lower.contains(p)) {
        return Some(LogCause::OutOfMemory);
    }
    if killed(text, lower) {
        return Some(LogCause::Killed);
    }
    // Before timeouts: "connection timed out" is a network failure first.
    if NETWORK_PHRASES.iter().any(|p| lower.contains(p)) {
        return Some(LogCause::Network);
    }
    if TIMEOUT_PHRASES.iter().any(|p| lower.contains(p)) {
        return Some(LogCause::Timeout);
    }
    None
}

/// The header autoconf includes to check that the preprocessor fails on a missing one. Common
/// practice, no source: from memory, autoconf's preprocessor check (AC_PROG_CPP) preprocesses
/// `#include <ac_nonexistent.h>` and expects it to fail, so its error, printed with
/// `config.log`, is no missing header.
const AUTOCONF_PROBE_HEADER: &str = "ac_nonexistent.h";

fn missing_header(t: &str) -> Option<&str> {
    // gcc. The location prefix tells a header apart from a missing source file, which gcc
    // reports as `cc1: fatal error: x.c: No such file or directory`.
    if let Some(p) = t.find("fatal error: ") {
        let rest = &t[p + "fatal error: ".len()..];
        if let Some(q) = rest.find(": No such file or directory")
            && (location_file(&t[..p]).is_some() || forced_include(&t[..p]))
            && let Some(name) = plausible_name(&rest[..q])
        {
            return Some(name);
        }
    }
    // clang, as a fatal error or (in some modes) a plain one.
    if let Some(p) = t.find("error: '") {
        let rest = &t[p + "error: '".len()..];
        if let Some(q) = rest.find("' file not found")
            && let Some(name) = plausible_name(&rest[..q])
        {
            return Some(name);
        }
    }
    if let Some(p) = t.find("Cannot open include file: '") {
        let rest = &t[p + "Cannot open include file: '".len()..];
        if let Some(q) = rest.find('\'') {
            return plausible_name(&rest[..q]);
        }
    }
    None
}

/// Whether `prefix` ends in gcc's location for a file forced in with `-include`
/// (`<command-line>: `), which is a header as much as one a source line includes.
fn forced_include(prefix: &str) -> bool {
    prefix
        .trim_end()
        .rsplit(char::is_whitespace)
        .next()
        .is_some_and(|w| w == "<command-line>:")
}

/// The file of the compiler location that is the last word of `prefix`, `file:line:` or
/// `file:line:col:`, without its numbers; `None` when that word is no such location.
fn location_file(prefix: &str) -> Option<&str> {
    let word = prefix
        .trim_end()
        .rsplit(char::is_whitespace)
        .next()
        .unwrap_or("");
    let is_number = |s: &str| !s.is_empty() && s.bytes().all(|b| b.is_ascii_digit());
    let (rest, line) = word.strip_suffix(':')?.rsplit_once(':')?;
    if !is_number(line) {
        return None;
    }
    let file = match rest.rsplit_once(':') {
        Some((file, column)) if is_number(column) => file,
        // `12:34:` is a time or a line and column, with no file.
        _ if is_number(rest) => return None,
        _ => rest,
    };
    // `10:00:01:` is a time of day, not line 0 of a file named `10`.
    (!file.is_empty() && !is_number(file)).then_some(file)
}

/// Whether `t` is a GCC or Clang diagnostic at a source location of one of `kinds`
/// (`"warning: "`, `"note: "`): the words it quotes are the program's, not a report of what
/// went wrong (gcc's `w.c:2: warning: "ECONNREFUSED" redefined` is no network failure).
fn compiler_remark(t: &str, kinds: &[&str]) -> bool {
    kinds.iter().any(|kind| {
        t.match_indices(kind)
            .any(|(p, _)| location_file(&t[..p]).is_some())
    })
}

/// Whether `t` is a GCC or Clang error at a source location: `FILE:LINE[:COL]: error: MESSAGE`
/// or `... fatal error: MESSAGE`, with a message, in a file that is not an autoconf probe.
fn compiler_error(t: &str) -> bool {
    t.match_indices("error: ").any(|(p, m)| {
        let before = &t[..p];
        let before = before.strip_suffix("fatal ").unwrap_or(before);
        !t[p + m.len()..].trim().is_empty()
            && location_file(before)
                .is_some_and(|file| !is_configure_probe(file) && !is_configure_script(file))
    })
}

/// Whether `file` is autoconf's `configure` script, whose errors `config.log` records at the
/// script's line (`configure:4321: error: C compiler cannot create executables`; from memory,
/// autoconf's `AC_MSG_ERROR` writes `$as_me:$LINENO: error: MESSAGE` there): configure's own
/// verdict, not the compiler's, so its words are read as any other line's.
fn is_configure_script(file: &str) -> bool {
    file.rsplit(['/', '\\']).next() == Some("configure")
}

/// Whether `file` is one of autoconf's probe sources. Common practice, no source: from memory,
/// autoconf writes each test program to `conftest.c` (`conftest.cpp` and the like for other
/// languages) and expects many of them not to compile; `config.log`, often printed when
/// configure fails, shows their errors.
fn is_configure_probe(file: &str) -> bool {
    let base = file.rsplit(['/', '\\']).next().unwrap_or(file);
    base.split('.').next() == Some("conftest") && base.contains('.')
}

/// A header path or similar name, unless it carries quoting that shows we cut in the wrong place.
fn plausible_name(s: &str) -> Option<&str> {
    let s = s.trim();
    let ok = !s.is_empty() && s.len() <= 400 && !s.contains(['\'', '"', '<', '>', '`']);
    ok.then_some(s)
}

const LINK_MARKERS: [&str; 3] = [
    "cannot find -l",
    "unable to find library -l",
    "library not found for -l",
];

fn missing_library(t: &str) -> Option<&str> {
    for marker in LINK_MARKERS {
        if let Some(p) = t.find(marker)
            && let Some(name) = link_name(&t[p + marker.len()..])
        {
            return Some(name);
        }
    }
    // Apple's newer linker.
    if let Some(p) = t.find("ld: library '") {
        let rest = &t[p + "ld: library '".len()..];
        if let Some(q) = rest.find("' not found") {
            return link_name(&rest[..q]);
        }
    }
    None
}

/// The `-l` argument at the start of `rest`, up to white space and without trailing punctuation.
/// A leading `:` (`-l:libfoo.so.1`, an exact file name) is kept.
fn link_name(rest: &str) -> Option<&str> {
    let word = rest.split(char::is_whitespace).next().unwrap_or("");
    let word = word.trim_end_matches([':', ',', ';', '\'', '"', '`', ')']);
    let ok = !word.is_empty()
        && word.len() <= 200
        && word
            .chars()
            .all(|c| c.is_alphanumeric() || "._+-:/@".contains(c));
    ok.then_some(word)
}

/// The shared object the loader or `dlopen` could not find: the word before glibc's
/// `: cannot open shared object file`, or after musl's `Error loading shared library `, without
/// a directory (`dlopen` of a path names the path).
fn missing_shared_object(t: &str) -> Option<&str> {
    // Only a file that is not there: one the loader may not read or cannot use (`Permission
    // denied`, `Exec format error`, `wrong ELF class`) is no missing package.
    const ABSENT: &str = ": No such file or directory";
    let named = if let Some(p) = t.find(": cannot open shared object file") {
        if !t[p + ": cannot open shared object file".len()..].starts_with(ABSENT) {
            return None;
        }
        t[..p].rsplit([' ', '\'', '"', '(']).next()?
    } else if let Some(p) = t.find("Error loading shared library ") {
        let rest = &t[p + "Error loading shared library ".len()..];
        let name = rest.split(|c: char| c == ':' || c.is_whitespace()).next()?;
        if !rest[name.len()..].starts_with(ABSENT) {
            return None;
        }
        name
    } else {
        return None;
    };
    let file = named.rsplit('/').next()?;
    let ok = file.contains(".so")
        && file.len() <= 200
        && file
            .chars()
            .all(|c| c.is_alphanumeric() || "._+-@".contains(c));
    ok.then_some(file)
}

/// The `-l` name a shared object's file name stands for: `libssl.so.3` is linked as `-lssl`
/// (the `lib` prefix and the `.so` suffix with its version numbers are the usual naming of
/// shared objects on Linux; common practice, no source). `None` for other shapes.
///
/// ```
/// use basefit::verify::logs::link_name_of_shared_object;
/// assert_eq!(link_name_of_shared_object("libssl.so.3"), Some("ssl"));
/// assert_eq!(link_name_of_shared_object("libxml2.so"), Some("xml2"));
/// assert_eq!(link_name_of_shared_object("ld-linux.so.2"), None);
/// ```
pub fn link_name_of_shared_object(file: &str) -> Option<&str> {
    let stem = file.strip_prefix("lib")?;
    let (name, version) = stem.split_once(".so")?;
    let version_ok = version.is_empty()
        || (version.starts_with('.')
            && version[1..]
                .split('.')
                .all(|n| !n.is_empty() && n.bytes().all(|b| b.is_ascii_digit())));
    (!name.is_empty() && version_ok).then_some(name)
}

/// A shared object's stem without the version some libraries put in their file name
/// (`yaml-0` of `libyaml-0.so.2`, `event_core-2.1` of `libevent_core-2.1.so.7`): their link
/// name is the rest (`yaml`, `event_core`; Debian 12's archive, where each `lib<link>.so`
/// resolves to such a file).
///
/// ```
/// use basefit::verify::logs::unversioned_stem;
/// assert_eq!(unversioned_stem("yaml-0"), Some("yaml"));
/// assert_eq!(unversioned_stem("event_core-2.1"), Some("event_core"));
/// assert_eq!(unversioned_stem("png16"), None);
/// assert_eq!(unversioned_stem("glib-2.0x"), None);
/// ```
pub fn unversioned_stem(stem: &str) -> Option<&str> {
    let (name, version) = stem.rsplit_once('-')?;
    let numeric = version
        .split('.')
        .all(|n| !n.is_empty() && n.bytes().all(|b| b.is_ascii_digit()));
    (!name.is_empty() && numeric).then_some(name)
}

fn missing_pkg_config(t: &str) -> Option<&str> {
    if let Some(p) = t.find(" was not found in the pkg-config search path")
        && let Some(q) = t[..p].rfind("Package ")
    {
        return module_name(&t[q + "Package ".len()..p]);
    }
    if let Some(p) = t.find("No package '") {
        let rest = &t[p + "No package '".len()..];
        if let Some(q) = rest.find("' found") {
            return module_name(&rest[..q]);
        }
    }
    if let Some(p) = t.find("Package '") {
        let rest = &t[p + "Package '".len()..];
        if let Some(q) = rest.find("', required by '")
            && rest[q..].contains("not found")
        {
            return module_name(&rest[..q]);
        }
    }
    None
}

fn module_name(s: &str) -> Option<&str> {
    let s = s.trim().trim_matches(['\'', '"']);
    let ok = !s.is_empty() && s.len() <= 200 && !s.contains(char::is_whitespace);
    ok.then_some(s)
}

/// The program a line says could not be run, whatever kind of program it is.
fn missing_program(t: &str) -> Option<&str> {
    // bash `bash: line 1: gcc: command not found`, dash `sh: 1: cc: not found`.
    for suffix in [": command not found", ": not found"] {
        if let Some(rest) = t.strip_suffix(suffix) {
            return quoted_or_word(rest.rsplit(": ").next().unwrap_or(rest));
        }
    }
    // GNU make running a recipe without a shell: `make: g++: No such file or directory`
    // (make 4.3, made for real on this project's machine), `make[2]: g++: Command not found`
    // (older makes, from memory).
    // From the right, as for launchers below: a builder's prefix may come before `make`.
    if let Some(rest) = t
        .strip_suffix(": No such file or directory")
        .or_else(|| t.strip_suffix(": Command not found"))
        && let Some((tool, program)) = rest.rsplit_once(": ")
        && let Some(tool) = tool.rsplit(' ').next()
        && matches!(tool.split('[').next().unwrap_or(tool), "make" | "gmake")
    {
        return quoted_or_word(program);
    }
    // Launchers that exec their argument and report its absence themselves (coreutils and
    // findutils on this project's machine): `/usr/bin/env: 'cc': No such file or directory`,
    // `nice: 'cc': ...`, `timeout: failed to run command 'cc': ...`, `nohup: failed to run
    // command 'cc': ...`, `xargs: cc: ...`.
    if let Some(program) = launcher_missing(t) {
        return quoted_or_word(program);
    }
    // Python's subprocess, whose execvp failed: `FileNotFoundError: [Errno 2] No such file or
    // directory: 'gcc'` (Python 3.11 on this project's machine). Only the program kinds the
    // caller keeps count, so a data file of another name is no finding.
    // A relative path with a directory (`src/cpp`) is a file the script opened, not a
    // program looked up on PATH, whatever its last part is called.
    if let Some(p) = t.find("[Errno 2] No such file or directory: '")
        && let Some(program) =
            t[p + "[Errno 2] No such file or directory: '".len()..].strip_suffix('\'')
        && (program.starts_with('/') || !program.contains('/'))
    {
        return quoted_or_word(program);
    }
    // zsh.
    if let Some(p) = t.find("command not found: ") {
        return quoted_or_word(&t[p + "command not found: ".len()..]);
    }
    // setuptools / distutils. Without "No such file" the compiler ran and failed, which is
    // a different story.
    if let Some(p) = t.find("command '") {
        let rest = &t[p + "command '".len()..];
        if let Some(q) = rest.find("' failed")
            && rest[q..].contains("No such file or directory")
        {
            return quoted_or_word(&rest[..q]);
        }
    }
    if let Some(p) = t.find("unable to execute '") {
        let rest = &t[p + "unable to execute '".len()..];
        if let Some(q) = rest.find("': No such file or directory") {
            return quoted_or_word(&rest[..q]);
        }
    }
    // Go's os/exec, as seen from cgo builds.
    if let Some(p) = t.find("exec: \"") {
        let rest = &t[p + "exec: \"".len()..];
        if let Some(q) = rest.find("\": executable file not found") {
            return quoted_or_word(&rest[..q]);
        }
    }
    if let Some(p) = t.find("linker `") {
        let rest = &t[p + "linker `".len()..];
        if let Some(q) = rest.find("` not found") {
            return quoted_or_word(&rest[..q]);
        }
    }
    None
}

/// The program a launcher (`env`, `nice`, `nohup`, `timeout`, `xargs`) could not exec, from
/// its own message: `LAUNCHER: PROGRAM: No such file or directory` or `LAUNCHER: failed to
/// run command PROGRAM: No such file or directory`, the launcher possibly with a directory.
fn launcher_missing(t: &str) -> Option<&str> {
    let rest = t.strip_suffix(": No such file or directory")?;
    // From the right: a builder's prefix (`#8 1.234 `, `remote: `) may come before the launcher.
    let (tool, rest) = rest.rsplit_once(": ")?;
    let tool = tool.rsplit([' ', '/']).next().unwrap_or(tool);
    if !matches!(tool, "env" | "nice" | "nohup" | "timeout" | "xargs") {
        return None;
    }
    Some(rest.strip_prefix("failed to run command ").unwrap_or(rest))
}

/// A single program name: one word, quotes removed. Anything with spaces is prose such as
/// `checking for clang: not found`, not a program the shell tried.
fn quoted_or_word(s: &str) -> Option<&str> {
    // Typographic quotes too: coreutils quotes so in a UTF-8 locale, C.UTF-8 included
    // (`/usr/bin/env: ‘cc’: No such file or directory`, coreutils on this project's machine).
    let s = s
        .trim()
        .trim_matches(['\'', '"', '`', '\u{2018}', '\u{2019}']);
    let ok = !s.is_empty() && s.len() <= 200 && !s.contains(char::is_whitespace);
    ok.then_some(s)
}

enum Program {
    Compiler,
    Make,
    PkgConfig,
}

const COMPILERS: [&str; 8] = [
    "cc", "c++", "gcc", "g++", "clang", "clang++", "cpp", "gfortran",
];

/// Whether a compiler named in a log is a C++ compiler: `c++`, `g++`, `clang++`, a versioned
/// or target-prefixed one (`x86_64-linux-gnu-g++-12`), the `c++` a message names when it
/// says only "C++ compiler", or `cc1plus`, the C++ compiler proper that the `gcc` driver runs
/// for a C++ source and that only the C++ compiler package ships.
///
/// ```
/// use basefit::verify::logs::is_cxx_compiler;
/// assert!(is_cxx_compiler("/usr/bin/x86_64-linux-gnu-g++-12"));
/// assert!(is_cxx_compiler("c++"));
/// assert!(is_cxx_compiler("cc1plus"));
/// assert!(!is_cxx_compiler("gcc"));
/// ```
pub fn is_cxx_compiler(tool: &str) -> bool {
    let base = tool.rsplit(['/', '\\']).next().unwrap_or(tool);
    let base = without_version(base);
    base.ends_with("++") || base == "cc1plus"
}

/// The compiler of the catalog (see [`crate::native::CATALOG_COMPILERS`]) a log could not find,
/// by its own program (`gfortran`, `gfortran-12`, `x86_64-linux-gnu-gfortran`) or by the
/// compiler proper the gcc driver could not run (`cc1obj`): no C toolchain package brings it.
///
/// ```
/// use basefit::verify::logs::catalog_compiler;
/// assert_eq!(catalog_compiler("/usr/bin/x86_64-linux-gnu-gfortran-12").unwrap().library, "gfortran");
/// assert_eq!(catalog_compiler("cc1objplus").unwrap().language, "Objective-C++");
/// assert!(catalog_compiler("gcc").is_none());
/// ```
pub fn catalog_compiler(tool: &str) -> Option<&'static crate::native::CatalogCompiler> {
    let base = tool.rsplit(['/', '\\']).next().unwrap_or(tool);
    let base = without_version(base);
    crate::native::CATALOG_COMPILERS
        .iter()
        .find(|c| c.driver.is_some_and(|d| base.ends_with(d)) || base == c.proper)
}

fn program_kind(name: &str) -> Option<Program> {
    let base = name.rsplit(['/', '\\']).next().unwrap_or(name);
    let base = without_version(base);
    if matches!(base, "make" | "gmake") {
        return Some(Program::Make);
    }
    // pkgconf installs its program under both names; cross builds prefix the target.
    if ["pkg-config", "pkgconf"].iter().any(|p| {
        base.strip_suffix(p)
            .is_some_and(|head| head.is_empty() || head.ends_with('-'))
    }) {
        return Some(Program::PkgConfig);
    }
    // A target prefix (`x86_64-linux-gnu-gcc`) still means gcc.
    let compiler = COMPILERS.iter().any(|c| {
        base.strip_suffix(c)
            .is_some_and(|head| head.is_empty() || head.ends_with('-'))
    });
    compiler.then_some(Program::Compiler)
}

/// `gcc-12` -> `gcc`, `clang-15.0` -> `clang`.
fn without_version(base: &str) -> &str {
    match base.rsplit_once('-') {
        Some((head, v))
            if !head.is_empty()
                && !v.is_empty()
                && v.bytes().all(|b| b.is_ascii_digit() || b == b'.') =>
        {
            head
        }
        _ => base,
    }
}

/// Lowercased phrases from build systems that name no program, with the tool they stand for.
/// C++ comes first: its phrases would otherwise read as C ones in a looser list.
/// CMake's Objective-C phrases are from memory.
const COMPILER_PHRASES: [(&str, &str); 8] = [
    ("c++ compiler cannot create executables", "c++"),
    ("no cmake_fortran_compiler could be found", "gfortran"),
    ("no cmake_objc_compiler could be found", "cc1obj"),
    ("no cmake_objcxx_compiler could be found", "cc1objplus"),
    ("c compiler cannot create executables", "cc"),
    ("no acceptable c compiler found", "cc"),
    ("no cmake_cxx_compiler could be found", "c++"),
    ("no cmake_c_compiler could be found", "cc"),
];

fn compiler_phrase(lower: &str) -> Option<&'static str> {
    COMPILER_PHRASES
        .iter()
        .find(|(phrase, _)| lower.contains(phrase))
        .map(|&(_, tool)| tool)
        .or_else(|| missing_compiler_proper(lower))
}

/// The gcc driver given a source whose compiler proper is not installed: `gcc: fatal error:
/// cannot execute 'cc1plus': execvp: No such file or directory` for a C++ source on an image
/// without g++ (`cc1plus` ships in g++-12 on Debian 12: `dpkg -S` on this project's machine),
/// likewise Fortran's `f951` and C's `cc1`. The quotes are typographic in a UTF-8 locale.
fn missing_compiler_proper(lower: &str) -> Option<&'static str> {
    // Older gcc drivers said `error trying to exec 'cc1plus': execvp: ...` (from memory).
    let rest = ["cannot execute ", "error trying to exec "]
        .iter()
        .find_map(|marker| Some(&lower[lower.find(marker)? + marker.len()..]))?;
    let name = rest
        .trim_start_matches(['\'', '\u{2018}', '`'])
        .split(['\'', '\u{2019}', '`', ':'])
        .next()?;
    match name {
        "cc1plus" => Some("cc1plus"),
        "cc1" => Some("cc"),
        _ => crate::native::CATALOG_COMPILERS
            .iter()
            .find(|c| c.proper == name)
            .map(|c| c.driver.unwrap_or(c.proper)),
    }
}

const MAKE_PHRASES: [&str; 2] = [
    "unable to find a build program corresponding to \"unix makefiles\"",
    "cmake_make_program is not set",
];

/// The build systems' words for a missing `pkg-config` program, lower case: autoconf's
/// `PKG_CHECK_MODULES` (pkg.m4 as Debian 12's pkgconf ships it, read on this project's machine)
/// and CMake's `find_package(PkgConfig REQUIRED)` (from memory).
const PKG_CONFIG_PHRASES: [&str; 2] = [
    "the pkg-config script could not be found",
    "could not find pkgconfig (missing: pkg_config_executable)",
];

const RUNTIME_MARKER: &str = "runtime refused: requires ";

fn runtime_refused<'a>(text: &'a str, lower: &str) -> Option<(&'a str, &'a str)> {
    let p = lower.find(RUNTIME_MARKER)?;
    // `get`, not indexing: offsets come from `lower`, and a mismatch must not panic.
    let rest = text.get(p + RUNTIME_MARKER.len()..)?;
    let q = rest.rfind(", found ")?;
    let required = rest[..q].trim();
    let found = rest[q + ", found ".len()..].trim();
    (!required.is_empty() && !found.is_empty()).then_some((required, found))
}

const OOM_PHRASES: [&str; 7] = [
    "out of memory",
    "cannot allocate memory",
    "virtual memory exhausted",
    "std::bad_alloc",
    "oomkilled",
    "oom-kill",
    "oom killer",
];

fn killed(text: &str, lower: &str) -> bool {
    lower == "killed"
        || shell_killed(text)
        || lower.contains("killed signal terminated program")
        || lower.contains("sigkill")
        || lower.contains("signal: killed")
        || lower
            .match_indices("signal 9")
            .any(|(i, m)| !next_is_digit(lower, i + m.len()))
        || exit_137(lower)
        || make_killed(text)
}

/// GNU make's report of a recipe killed by SIGKILL, `make: *** [Makefile:2: all] Killed`
/// (make 4.3 on this project's machine; `make[2]: ***` in a sub-make): the signal's name
/// follows the target's brackets.
fn make_killed(text: &str) -> bool {
    text.strip_suffix("] Killed")
        .is_some_and(|head| head.contains(": *** ["))
}

/// The shell's job report: `bash: line 1:  4242 Killed   cc ...`, or `Killed` opening a line.
fn shell_killed(text: &str) -> bool {
    text.match_indices("Killed").any(|(i, m)| {
        let end = i + m.len();
        if text[end..].starts_with(|c: char| c.is_alphanumeric()) {
            return false;
        }
        let before = &text[..i];
        if before.trim().is_empty() {
            return true;
        }
        before.ends_with(char::is_whitespace)
            && before
                .trim_end()
                .rsplit(char::is_whitespace)
                .next()
                .is_some_and(|pid| !pid.is_empty() && pid.bytes().all(|b| b.is_ascii_digit()))
    })
}

/// Exit code 137 is 128 + SIGKILL, however the tool words it: `exit code 137`, `exit status:
/// 137`, `returned a non-zero code: 137`, `code=137`.
fn exit_137(lower: &str) -> bool {
    lower.match_indices("137").any(|(i, m)| {
        if next_is_digit(lower, i + m.len()) || lower[..i].ends_with(|c: char| c.is_ascii_digit()) {
            return false;
        }
        let before = lower[..i].trim_end_matches([' ', ':', '=']);
        before.ends_with("code") || before.ends_with("status")
    })
}

fn next_is_digit(s: &str, at: usize) -> bool {
    s.as_bytes().get(at).is_some_and(u8::is_ascii_digit)
}

/// Node's `ETIMEDOUT`/`ESOCKETTIMEDOUT` and `socket hang up`, curl's `(28) Timeout was
/// reached` and package managers' `network timeout`/`read timeout` are from memory.
const NETWORK_PHRASES: [&str; 28] = [
    "connection refused",
    "connection reset",
    "connection aborted",
    "connection timed out",
    "couldn't connect to server",
    "failed to connect to",
    "failed to establish a new connection",
    "remote end closed connection",
    "could not resolve host",
    "could not resolve proxy",
    "temporary failure in name resolution",
    "name or service not known",
    "no address associated with hostname",
    "eai_again",
    "econnrefused",
    "econnreset",
    "tls handshake timeout",
    "network is unreachable",
    "no route to host",
    "502 bad gateway",
    "503 service unavailable",
    "504 gateway time",
    "etimedout",
    "esockettimedout",
    "socket hang up",
    "timeout was reached",
    "network timeout",
    "read timeout",
];

const TIMEOUT_PHRASES: [&str; 4] = [
    "timed out",
    "deadline exceeded",
    "timeout expired",
    "timeout exceeded",
];

#[cfg(test)]
mod tests {
    use super::*;

    fn causes(log: &str) -> Vec<LogCause> {
        classify(log).into_iter().map(|f| f.cause).collect()
    }

    fn one(log: &str) -> LogCause {
        let found = causes(log);
        assert_eq!(found.len(), 1, "{log:?} gave {found:?}");
        found.into_iter().next().unwrap()
    }

    #[test]
    fn missing_shared_objects() {
        let so = |name: &str| LogCause::MissingSharedObject {
            soname: name.to_string(),
        };
        // source: glibc's loader and CPython's ctypes on this machine (produced for real in
        // tests/log_to_catalog.rs); dlopen of a path names the path.
        assert_eq!(
            one(
                "./prog: error while loading shared libraries: libxml2.so.2: cannot open shared object file: No such file or directory"
            ),
            so("libxml2.so.2")
        );
        assert_eq!(
            one(
                "ImportError: /usr/lib/x86_64-linux-gnu/libpq.so.5: cannot open shared object file: No such file or directory"
            ),
            so("libpq.so.5")
        );
        // source: from memory, musl's loader.
        assert_eq!(
            one(
                "Error loading shared library libcrypto.so.3: No such file or directory (needed by /usr/lib/ext.so)"
            ),
            so("libcrypto.so.3")
        );
        // A file that is there but unusable is no missing package (glibc's and musl's wording
        // for these from memory).
        assert!(causes("./prog: error while loading shared libraries: libz.so.1: cannot open shared object file: Permission denied").is_empty());
        assert!(
            causes("Error loading shared library libz.so.1: Exec format error (needed by /x)")
                .is_empty()
        );
        // Not a shared object's name: nothing to map, and not misread as a missing header.
        assert!(
            causes("error while loading shared libraries: cannot open shared object file")
                .is_empty()
        );
        assert_eq!(
            link_name_of_shared_object("libpng16.so.16.43.0"),
            Some("png16")
        );
        assert_eq!(link_name_of_shared_object("libfoo.so.x"), None);
        assert_eq!(link_name_of_shared_object("lib.so.1"), None);
    }

    #[test]
    fn gcc_missing_source_is_not_a_missing_header() {
        // source: GNU gcc 12 wording for a source file that does not exist (no location prefix)
        assert!(causes("cc1: fatal error: nosuch.c: No such file or directory").is_empty());
    }

    #[test]
    fn location_prefixes() {
        assert!(location_file("a.c:1:10: ").is_some());
        assert!(location_file("  src/x.c:3: ").is_some());
        assert!(location_file(r"C:\src\a.c:1:10: ").is_some());
        assert!(location_file("cc1: ").is_none());
        assert!(location_file("gcc: ").is_none());
        assert!(location_file("").is_none());
        assert!(location_file("12:34: ").is_none());
    }

    #[test]
    fn a_time_of_day_is_no_location() {
        assert_eq!(location_file("10:00:01: "), None);
        assert!(!compiler_error(
            "10:00:01: error: Could not resolve host: index"
        ));
        assert_eq!(
            match_segment(
                "10:00:01: error: Could not resolve host: index",
                "10:00:01: error: could not resolve host: index"
            ),
            Some(LogCause::Network)
        );
        assert_eq!(location_file("src/10.c:3:4: "), Some("src/10.c"));
    }

    #[test]
    fn quoted_source_is_seen_behind_a_time_stamp() {
        assert!(quotes_source("2 |   return ECONNREFUSED;"));
        assert!(quotes_source("|          ^~~~"));
        assert!(quotes_source(
            "2026-12-05T09:00:00.1234567Z     2 |   return ECONNREFUSED;"
        ));
        assert!(quotes_source("[12:00:01]       |          ^~~~"));
        assert!(!quotes_source(
            "2026-12-05T09:00:00Z curl: (7) Connection refused"
        ));
        assert!(!quotes_source("a | b"));
        // A location is no time stamp: `x.c:2:` keeps the line whole.
        assert_eq!(without_timestamp("x.c:2: warning: w"), "x.c:2: warning: w");
        assert_eq!(without_timestamp("12:00:01 | x"), "| x");
    }

    #[test]
    fn compiler_errors_need_a_location_and_a_message() {
        // source: from memory, clang's wording for an undeclared identifier
        assert!(compiler_error(
            "x.c:3:12: error: use of undeclared identifier 'y'"
        ));
        assert!(compiler_error(
            r"C:\src\a.c:1: fatal error: too many errors"
        ));
        assert!(!compiler_error("x.c:3:12: error: "));
        assert!(!compiler_error(
            "collect2: error: ld returned 1 exit status"
        ));
        assert!(!compiler_error("error: command 'cc' exited with status 1"));
        assert!(!compiler_error("x.c:3:12: warning: unused variable 'x'"));
        assert!(may_match("x.c:3:12: error: 'y' undeclared"));
        assert_eq!(location_file("  src/x.c:3:12: "), Some("src/x.c"));
        assert_eq!(location_file("x.c:3: "), Some("x.c"));
        assert_eq!(location_file(r"C:\src\a.c:1:10: "), Some(r"C:\src\a.c"));
    }

    #[test]
    fn configure_probe_files() {
        for file in ["conftest.c", "conftest.cpp", "build/conftest.cc"] {
            assert!(is_configure_probe(file), "{file}");
        }
        for file in ["conftest", "conftests.c", "myconftest.c", "src/x.c"] {
            assert!(!is_configure_probe(file), "{file}");
        }
        assert!(!compiler_error(
            "conftest.c:12:3: error: 'strlcpy' undeclared (first use in this function)"
        ));
    }

    #[test]
    fn compiler_names_with_prefix_path_and_version() {
        for name in [
            "cc",
            "gcc",
            "/usr/bin/gcc",
            "x86_64-linux-gnu-gcc-12",
            "clang-15",
            "c++",
            "aarch64-linux-gnu-g++",
        ] {
            assert!(
                matches!(program_kind(name), Some(Program::Compiler)),
                "{name}"
            );
        }
        for name in ["ccache", "gcc-ar-x", "ninja", "cmake", "python3", "occ"] {
            assert!(program_kind(name).is_none(), "{name}");
        }
        assert!(matches!(program_kind("gmake"), Some(Program::Make)));
    }

    #[test]
    fn other_missing_programs_are_not_findings() {
        // source: dash wording, as for any other program
        assert!(causes("sh: 1: ninja: not found").is_empty());
        // common practice, no source: version scripts run git and go on when it is missing
        assert!(causes("/bin/sh: 1: git: not found").is_empty());
        // source: waf-style configure chatter; prose before the colon is no program name
        assert!(causes("Checking for program 'clang': not found").is_empty());
    }

    #[test]
    fn compiler_that_ran_and_failed_is_not_missing() {
        // source: setuptools wording when gcc exits 1 (it exists)
        assert!(causes("error: command '/usr/bin/gcc' failed with exit code 1").is_empty());
    }

    #[test]
    fn runtime_refused_form() {
        assert_eq!(
            one("runtime refused: requires >=3.8, <4, found 3.7.2"),
            LogCause::RuntimeRefused {
                required: ">=3.8, <4".into(),
                found: "3.7.2".into()
            }
        );
        assert_eq!(
            one("ERROR: Runtime Refused: requires ^2.1, found 1.9"),
            LogCause::RuntimeRefused {
                required: "^2.1".into(),
                found: "1.9".into()
            }
        );
        assert!(causes("runtime refused: requires , found 1.0").is_empty());
        assert!(causes("runtime refused: requires 2.0").is_empty());
    }

    /// The requirement runs up to the last `, found ` of the line (module docs, "The
    /// runtime-refused form"), so one holding those words keeps them. Guards `rfind`
    /// (mutation testing: the first `, found ` cut the requirement short).
    #[test]
    fn a_runtime_requirement_runs_to_the_last_found() {
        assert_eq!(
            one("runtime refused: requires ^2 (pinned, found in lock), found 1.9"),
            LogCause::RuntimeRefused {
                required: "^2 (pinned, found in lock)".into(),
                found: "1.9".into()
            }
        );
    }

    /// Older GNU makes report a recipe's missing program as `make[2]: g++: Command not found`
    /// (from memory, as the comment in `missing_program` says): a missing C++ compiler.
    /// Guards that wording (mutation testing: without it the line was not recognised).
    #[test]
    fn an_older_make_s_command_not_found() {
        assert_eq!(
            one("make[2]: g++: Command not found"),
            LogCause::NoCompiler { tool: "g++".into() }
        );
    }

    #[test]
    fn exit_code_137_needs_a_code_word_and_digit_bounds() {
        assert!(exit_137("exit code: 137"));
        assert!(exit_137("returned non-zero exit status 137."));
        assert!(exit_137("code=137"));
        assert!(!exit_137("exit code 1370"));
        assert!(!exit_137("exit code 2137"));
        assert!(!exit_137("downloaded 137 files"));
    }

    /// `signal 9` is SIGKILL only as a whole number: `signal 95` (an invented line) is another
    /// signal. Guards the digit check after it (mutation testing: without it the line read as
    /// a kill).
    #[test]
    fn signal_9_is_a_whole_number() {
        assert_eq!(one("worker 3 terminated by signal 9"), LogCause::Killed);
        assert!(causes("worker 3 terminated by signal 95").is_empty());
    }

    #[test]
    fn killed_word_positions() {
        assert!(shell_killed("Killed"));
        assert!(shell_killed("bash: line 1:  4242 Killed     cc1 x.c"));
        assert!(!shell_killed("process was Killedx"));
        assert!(!shell_killed("tests: Killed 3 mutants"));
    }

    #[test]
    fn escape_sequences_are_removed() {
        let mut out = String::new();
        strip_controls("\u{1b}[01;31m\u{1b}[Kfatal\u{1b}[m\u{1b}[K x", &mut out);
        assert_eq!(out, "fatal x");
        strip_controls("\u{1b}]0;title\u{7}a\u{1b}(Bb\u{9b}1mc\u{0}\td", &mut out);
        assert_eq!(out, "abc d");
        // An escape at the very end, or a sequence cut short, must not panic.
        strip_controls("x\u{1b}", &mut out);
        assert_eq!(out, "x");
        strip_controls("x\u{1b}[12", &mut out);
        assert_eq!(out, "x");
    }

    #[test]
    fn evidence_is_capped_on_a_char_boundary() {
        let long = "é".repeat(1000);
        let e = evidence(&long);
        assert_eq!(e.chars().count(), EVIDENCE_CHARS + 1);
        assert!(e.ends_with('…'));
        assert_eq!(evidence("short"), "short");
    }

    #[test]
    fn first_whole_segments_of_a_cut_piece() {
        // After the first line end, else the first carriage return, else the first character.
        assert_eq!(first_whole_segment(b"ler\nmore\n"), 4);
        assert_eq!(first_whole_segment(b"0%\rDownloading 20%\rtimed out"), 3);
        assert_eq!(first_whole_segment(b"timed out"), 0);
        // A cut inside a character skips the rest of it.
        assert_eq!(
            first_whole_segment("é timed out".as_bytes()[1..].as_ref()),
            1
        );
    }

    #[test]
    fn all_of_the_text_given_is_read() {
        // Nothing before the end of a long text is skipped: bounding it is the caller's part.
        let log = format!("Killed\n{}Connection refused\n", ".\n".repeat(1 << 20));
        let found = classify(&log);
        assert_eq!(
            found.iter().map(|f| (&f.cause, f.line)).collect::<Vec<_>>(),
            [(&LogCause::Killed, 1), (&LogCause::Network, (1 << 20) + 2)]
        );
    }

    #[test]
    fn long_segments_are_cut_on_a_char_boundary() {
        let s = format!("a{}", "é".repeat(SEGMENT_BYTES));
        let p = prefix(&s, SEGMENT_BYTES);
        assert!(p.len() <= SEGMENT_BYTES);
        assert!(s.is_char_boundary(p.len()));
    }

    #[test]
    fn carriage_returns_split_progress_lines() {
        let found = classify("Downloading 10%\rDownloading 20%\rerror: Connection reset by peer\n");
        assert_eq!(found.len(), 1);
        assert_eq!(found[0].line, 1);
        assert_eq!(found[0].evidence, "error: Connection reset by peer");
    }

    #[test]
    fn every_phrase_passes_the_anchor_gate() {
        let lists: [&[&str]; 7] = [
            &LINK_MARKERS,
            &MAKE_PHRASES,
            &PKG_CONFIG_PHRASES,
            &OOM_PHRASES,
            &NETWORK_PHRASES,
            &TIMEOUT_PHRASES,
            &[RUNTIME_MARKER],
        ];
        for phrase in lists.iter().flat_map(|l| l.iter()) {
            assert!(may_match(&phrase.to_ascii_lowercase()), "{phrase}");
        }
        for (phrase, _) in COMPILER_PHRASES {
            assert!(may_match(phrase), "{phrase}");
        }
        assert!(!may_match("compiling module 12 of 99: ok"));
    }

    #[test]
    fn missing_pkg_config_program() {
        for log in [
            // source: dash wording, as for any other program
            "/bin/sh: 1: pkg-config: not found",
            // source: bash wording
            "bash: line 3: x86_64-linux-gnu-pkg-config: command not found",
            "make: pkgconf: No such file or directory",
            // source: Go's os/exec wording, as cgo prints it
            "pkg-config: exec: \"pkg-config\": executable file not found in $PATH",
            // source: pkg.m4's PKG_CHECK_MODULES, as configure prints it
            "configure: error: The pkg-config script could not be found or is too old.  Make sure it",
            // source: CMake's FindPkgConfig (from memory)
            "  Could NOT find PkgConfig (missing: PKG_CONFIG_EXECUTABLE)",
        ] {
            assert_eq!(one(log), LogCause::NoPkgConfig, "{log}");
        }
        // A module pkg-config cannot find is no missing program.
        assert_eq!(
            one("Package libfoo was not found in the pkg-config search path."),
            LogCause::MissingPkgConfig {
                module: "libfoo".into()
            }
        );
        assert!(causes("checking for pkg-config... no").is_empty());
    }

    #[test]
    fn labels_and_flakiness() {
        assert_eq!(LogCause::NoMake.label(), "no-make");
        assert_eq!(LogCause::NoPkgConfig.label(), "no-pkg-config");
        assert!(LogCause::Network.likely_flaky());
        assert!(LogCause::Timeout.likely_flaky());
        assert!(!LogCause::OutOfMemory.likely_flaky());
        assert!(
            !LogCause::MissingHeader {
                header: "x.h".into()
            }
            .likely_flaky()
        );
        assert_eq!(primary_cause(""), LogCause::Unknown);
        let json = serde_json::to_string(&LogCause::MissingLibrary { link: "z".into() }).unwrap();
        assert_eq!(json, r#"{"cause":"missing-library","link":"z"}"#);
    }
}
