//! Install-log classification against messages from real tools.
//!
//! Where the machine has the tool, the test makes it fail for real and classifies what it
//! printed; the wording is then the tool's own, not our memory of it. A missing tool skips its
//! test with a message. Lines written from memory are marked so.

use basefit::verify::logs::{LogCause, LogFinding, SCAN_TAIL_BYTES, classify, primary};
use std::io::ErrorKind;
use std::net::TcpListener;
use std::path::Path;
use std::process::{Command, Output};

/// Runs `tool` in `dir` in the C locale, because classification matches English wording.
/// `None` when the tool is not installed.
fn run(tool: &str, args: &[&str], dir: &Path) -> Option<Output> {
    run_with_path(tool, args, dir, None)
}

fn run_with_path(tool: &str, args: &[&str], dir: &Path, path: Option<&str>) -> Option<Output> {
    let mut cmd = Command::new(tool);
    cmd.args(args)
        .current_dir(dir)
        .env("LC_ALL", "C")
        .env("LANG", "C")
        .env_remove("LANGUAGE");
    if let Some(path) = path {
        cmd.env("PATH", path);
    }
    match cmd.output() {
        Ok(out) => Some(out),
        Err(e) if e.kind() == ErrorKind::NotFound => None,
        Err(e) => panic!("cannot run {tool}: {e}"),
    }
}

fn skip(test: &str, why: &str) {
    eprintln!("SKIP {test}: {why}");
}

fn stderr(out: &Output) -> String {
    String::from_utf8_lossy(&out.stderr).into_owned()
}

fn causes(findings: &[LogFinding]) -> Vec<&LogCause> {
    findings.iter().map(|f| &f.cause).collect()
}

fn header(h: &str) -> LogCause {
    LogCause::MissingHeader {
        header: h.to_owned(),
    }
}

fn library(l: &str) -> LogCause {
    LogCause::MissingLibrary { link: l.to_owned() }
}

fn compiler(t: &str) -> LogCause {
    LogCause::NoCompiler { tool: t.to_owned() }
}

/// A C file that includes `hdr`, in a fresh directory.
fn c_file_including(hdr: &str) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(
        dir.path().join("probe.c"),
        format!("#include <{hdr}>\nint main(void) {{ return 0; }}\n"),
    )
    .unwrap();
    dir
}

const ABSENT_HEADER: &str = "basefit_absent_hdr/absent.h";

#[test]
fn gcc_missing_header() {
    let dir = c_file_including(ABSENT_HEADER);
    let Some(out) = run("gcc", &["-c", "probe.c", "-o", "probe.o"], dir.path()) else {
        return skip("gcc_missing_header", "gcc is not installed");
    };
    assert!(!out.status.success());
    let log = stderr(&out);
    let findings = classify(&log);
    // source: GNU gcc on this machine, its message for a missing header
    assert_eq!(causes(&findings), [&header(ABSENT_HEADER)], "{log}");
    assert_eq!(findings[0].line, 1);
    assert!(findings[0].evidence.contains("fatal error"));
}

/// A header forced in with `-include` (build systems force config headers so) is missing from
/// the command line, not from a source line: gcc gives `<command-line>` as its location.
#[test]
fn gcc_missing_forced_include() {
    let dir = c_file_including("stddef.h");
    let Some(out) = run(
        "gcc",
        &["-include", ABSENT_HEADER, "-c", "probe.c", "-o", "probe.o"],
        dir.path(),
    ) else {
        return skip("gcc_missing_forced_include", "gcc is not installed");
    };
    assert!(!out.status.success());
    let log = stderr(&out);
    // source: GNU gcc on this machine (12.2.0 printed `<command-line>: fatal error: ...`)
    assert!(log.contains("<command-line>: fatal error:"), "{log}");
    assert_eq!(causes(&classify(&log)), [&header(ABSENT_HEADER)], "{log}");
}

/// The same without gcc installed, where the test above skips: the line as gcc printed it.
#[test]
fn gcc_missing_forced_include_as_printed() {
    // source: GNU gcc 12.2.0 (Debian 12.2.0-14+deb12u1), `gcc -include absent_zz.h -c p.c`
    let log = "<command-line>: fatal error: absent_zz.h: No such file or directory\n\
               compilation terminated.\n";
    assert_eq!(causes(&classify(log)), [&header("absent_zz.h")], "{log}");
}

#[test]
fn gcc_missing_header_in_colour_with_crlf() {
    let dir = c_file_including(ABSENT_HEADER);
    let args = [
        "-fdiagnostics-color=always",
        "-c",
        "probe.c",
        "-o",
        "probe.o",
    ];
    let Some(out) = run("gcc", &args, dir.path()) else {
        return skip(
            "gcc_missing_header_in_colour_with_crlf",
            "gcc is not installed",
        );
    };
    let log = stderr(&out).replace('\n', "\r\n");
    // source: GNU gcc on this machine, coloured diagnostics (ESC[...m and ESC[K) as a
    // terminal would get them, with the line ends turned to CRLF
    assert!(log.contains("\u{1b}["), "gcc printed no colour: {log:?}");
    let findings = classify(&log);
    assert_eq!(causes(&findings), [&header(ABSENT_HEADER)], "{log:?}");
    assert!(!findings[0].evidence.contains('\u{1b}'));
    assert!(!findings[0].evidence.contains('\r'));
}

#[test]
fn gcc_missing_library() {
    let dir = c_file_including("stddef.h");
    let args = ["probe.c", "-lbasefit_absent_lib", "-o", "probe"];
    let Some(out) = run("gcc", &args, dir.path()) else {
        return skip("gcc_missing_library", "gcc is not installed");
    };
    assert!(!out.status.success());
    let log = stderr(&out);
    let findings = classify(&log);
    // source: GNU ld (binutils) via gcc on this machine, message for a missing -l library
    assert_eq!(causes(&findings), [&library("basefit_absent_lib")], "{log}");
}

#[test]
fn pkg_config_missing_module() {
    let dir = tempfile::tempdir().unwrap();
    let args = ["--print-errors", "--cflags", "basefit-absent-module"];
    let Some(out) = run("pkg-config", &args, dir.path()) else {
        return skip("pkg_config_missing_module", "pkg-config is not installed");
    };
    assert!(!out.status.success());
    let log = stderr(&out);
    let findings = classify(&log);
    // source: pkg-config on this machine; it may word the failure twice, which is one finding
    assert_eq!(
        causes(&findings),
        [&LogCause::MissingPkgConfig {
            module: "basefit-absent-module".into()
        }],
        "{log}"
    );
}

/// pkgconf's `Package 'foo', required by 'bar', not found` names a missing module only with
/// its "not found": a line of the same shape that says the module was found names nothing
/// missing. Guards the "not found" check (mutation testing: without it the found module was
/// reported missing).
#[test]
fn a_pkgconf_required_by_line_needs_its_not_found() {
    // source: from memory, pkgconf's wording; the second line is invented, of the same shape
    assert_eq!(
        causes(&classify(
            "Package 'zlib', required by 'libpng16', not found"
        )),
        [&LogCause::MissingPkgConfig {
            module: "zlib".into()
        }]
    );
    assert!(
        classify("Package 'zlib', required by 'libpng16', found in /usr/lib/pkgconfig").is_empty()
    );
}

/// A compiler's version suffix may hold points (`clang-15.0`, `gcc-12.2`, as the module docs
/// of `verify::logs` allow): the shell's "not found" for such a name is a missing compiler.
/// Guards the `.` in version suffixes (mutation testing: digits alone left these lines
/// unrecognised).
#[test]
fn a_compiler_version_suffix_may_hold_points() {
    // source: dash's wording (see shells_without_compiler_or_make), with invented versions
    for tool in ["clang-15.0", "x86_64-linux-gnu-gcc-12.2"] {
        let log = format!("/bin/sh: 1: {tool}: not found");
        assert_eq!(causes(&classify(&log)), [&compiler(tool)], "{log}");
    }
}

/// Header paths as the system-library catalog lists them (libcurl, libpq, libxml2). libxml2
/// keeps its headers under `/usr/include/libxml2`, so even with its dev package installed gcc
/// misses `libxml/parser.h` unless given pkg-config's `-I`; either way the message is gcc's.
#[test]
fn gcc_missing_catalog_headers() {
    let mut tried = 0;
    for hdr in ["curl/curl.h", "libpq-fe.h", "libxml/parser.h"] {
        let dir = c_file_including(hdr);
        let Some(out) = run("gcc", &["-fsyntax-only", "probe.c"], dir.path()) else {
            return skip("gcc_missing_catalog_headers", "gcc is not installed");
        };
        // The preflight and the probe are one run: if gcc finds the header, there is no
        // message to classify.
        if out.status.success() {
            skip(
                "gcc_missing_catalog_headers",
                &format!("<{hdr}> is installed here"),
            );
            continue;
        }
        tried += 1;
        let log = stderr(&out);
        // source: GNU gcc on this machine, missing header named in the catalog
        assert_eq!(causes(&classify(&log)), [&header(hdr)], "{log}");
    }
    if tried == 0 {
        skip(
            "gcc_missing_catalog_headers",
            "every catalog header is installed",
        );
    }
}

#[test]
fn clang_missing_header() {
    let dir = c_file_including(ABSENT_HEADER);
    if let Some(out) = run("clang", &["-fsyntax-only", "probe.c"], dir.path()) {
        let log = stderr(&out);
        // source: clang on this machine, its message for a missing header
        assert_eq!(causes(&classify(&log)), [&header(ABSENT_HEADER)], "{log}");
        return;
    }
    skip(
        "clang_missing_header",
        "clang is not installed; checking its wording from memory instead",
    );
    let log = "probe.c:1:10: fatal error: 'basefit_absent_hdr/absent.h' file not found\n\
               #include <basefit_absent_hdr/absent.h>\n         ^~~~~~~~~~~~~~~~~~~~~~~~~~~~~\n\
               1 error generated.\n";
    // source: from memory, clang's missing-header diagnostic
    assert_eq!(causes(&classify(log)), [&header(ABSENT_HEADER)]);
}

#[test]
fn lld_missing_library() {
    let lld_here = run("ld.lld", &["--version"], Path::new(".")).is_some();
    let dir = c_file_including("stddef.h");
    let args = [
        "-fuse-ld=lld",
        "probe.c",
        "-lbasefit_absent_lib",
        "-o",
        "probe",
    ];
    if lld_here && let Some(out) = run("gcc", &args, dir.path()) {
        let log = stderr(&out);
        // source: ld.lld on this machine (driven by gcc), message for a missing -l library
        assert_eq!(
            causes(&classify(&log)),
            [&library("basefit_absent_lib")],
            "{log}"
        );
        return;
    }
    skip(
        "lld_missing_library",
        "ld.lld (or gcc to drive it) is not installed; checking its wording from memory instead",
    );
    let log = "ld.lld: error: unable to find library -lbasefit_absent_lib\n\
               collect2: error: ld returned 1 exit status\n";
    // source: from memory, LLVM lld's missing-library error
    assert_eq!(causes(&classify(log)), [&library("basefit_absent_lib")]);
}

/// The shells' own "not found" messages, got by running them with a PATH that holds nothing.
#[test]
fn shells_without_compiler_or_make() {
    let dir = tempfile::tempdir().unwrap();
    let empty = dir.path().join("empty-bin");
    std::fs::create_dir(&empty).unwrap();
    let empty = empty.to_str().unwrap();
    let mut ran = false;
    for shell in ["/bin/bash", "/bin/sh"] {
        let Some(out) = run_with_path(shell, &["-c", "cc --version"], dir.path(), Some(empty))
        else {
            skip(
                "shells_without_compiler_or_make",
                &format!("{shell} is missing"),
            );
            continue;
        };
        ran = true;
        let log = stderr(&out);
        // source: the shell at this path on this machine, failing to find cc
        assert_eq!(causes(&classify(&log)), [&compiler("cc")], "{shell}: {log}");

        let out = run_with_path(shell, &["-c", "gcc -c x.c"], dir.path(), Some(empty)).unwrap();
        let log = stderr(&out);
        // source: the shell at this path on this machine, failing to find gcc
        assert_eq!(
            causes(&classify(&log)),
            [&compiler("gcc")],
            "{shell}: {log}"
        );

        let out = run_with_path(shell, &["-c", "g++ -c x.cpp"], dir.path(), Some(empty)).unwrap();
        let log = stderr(&out);
        // source: the shell at this path on this machine, failing to find g++; a C++ compiler,
        // which a C-only image is told to add
        assert_eq!(
            causes(&classify(&log)),
            [&compiler("g++")],
            "{shell}: {log}"
        );
        assert!(basefit::verify::logs::is_cxx_compiler("g++"));

        let out = run_with_path(shell, &["-c", "make all"], dir.path(), Some(empty)).unwrap();
        let log = stderr(&out);
        // source: the shell at this path on this machine, failing to find make
        assert_eq!(
            causes(&classify(&log)),
            [&LogCause::NoMake],
            "{shell}: {log}"
        );
    }
    if !ran {
        skip("shells_without_compiler_or_make", "no shell to run");
    }
}

/// The gcc driver compiling a C++ (or C) source whose compiler proper is not installed, as on
/// an image with gcc and no g++: made for real by hiding gcc's compiler directory in a private
/// mount namespace (`unshare -m`, needs root), in the C locale and in a UTF-8 one, whose
/// typographic quotes differ.
#[test]
fn gcc_without_its_compiler_proper() {
    let Some(dir_of) = run("gcc", &["-print-prog-name=cc1plus"], Path::new("."))
        .map(|o| String::from_utf8_lossy(&o.stdout).trim().to_string())
        .filter(|p| p.starts_with('/'))
        .and_then(|p| Path::new(&p).parent().map(|d| d.display().to_string()))
    else {
        return skip(
            "gcc_without_its_compiler_proper",
            "gcc with cc1plus is not installed",
        );
    };
    let work = tempfile::tempdir().unwrap();
    let empty = work.path().join("empty");
    std::fs::create_dir(&empty).unwrap();
    std::fs::write(work.path().join("x.cpp"), "int main() { return 0; }\n").unwrap();
    std::fs::write(work.path().join("x.c"), "int main(void) { return 0; }\n").unwrap();
    for (source, tool) in [("x.cpp", "cc1plus"), ("x.c", "cc")] {
        for locale in ["C", "C.UTF-8"] {
            let script = format!(
                "mount --bind {} {dir_of} && gcc -c {source}",
                empty.display()
            );
            let Ok(out) = Command::new("unshare")
                .args(["-m", "sh", "-c", &script])
                .current_dir(work.path())
                .env("LC_ALL", locale)
                .output()
            else {
                return skip(
                    "gcc_without_its_compiler_proper",
                    "unshare is not installed",
                );
            };
            let log = stderr(&out);
            if !log.contains("cannot execute") {
                return skip(
                    "gcc_without_its_compiler_proper",
                    &format!("no private mount namespace here: {log}"),
                );
            }
            // source: gcc on this machine with its compiler directory hidden
            assert_eq!(
                causes(&classify(&log)),
                [&compiler(tool)],
                "{locale}: {log}"
            );
        }
    }
    assert!(basefit::verify::logs::is_cxx_compiler("cc1plus"));
}

/// GNU make runs a recipe of one simple command without a shell, so a missing compiler is
/// make's own message: made for real with the C++ compiler off the PATH.
#[test]
fn make_without_the_recipes_compiler() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("Makefile"), "all:\n\tg++ -c x.cpp\n").unwrap();
    std::fs::write(dir.path().join("x.cpp"), "int main() { return 0; }\n").unwrap();
    let empty = dir.path().join("empty-bin");
    std::fs::create_dir(&empty).unwrap();
    let Some(out) = run_with_path("/usr/bin/make", &[], dir.path(), empty.to_str()) else {
        return skip(
            "make_without_the_recipes_compiler",
            "/usr/bin/make is missing",
        );
    };
    let log = stderr(&out);
    // source: GNU make on this machine, failing to find g++
    assert_eq!(causes(&classify(&log)), [&compiler("g++")], "{log}");
    // Behind a builder's prefix (docker buildkit's step and time, git's `remote: `), make is
    // not the line's first word; it was read as no finding.
    for prefix in ["#8 1.234 ", "remote: ", "[build] "] {
        let wrapped: String = log.lines().map(|l| format!("{prefix}{l}\n")).collect();
        assert_eq!(causes(&classify(&wrapped)), [&compiler("g++")], "{wrapped}");
    }
}

#[test]
fn bash_reports_a_killed_job() {
    let dir = tempfile::tempdir().unwrap();
    let script = r#"/bin/sh -c 'kill -9 $$'; true"#;
    let Some(out) = run("/bin/bash", &["-c", script], dir.path()) else {
        return skip("bash_reports_a_killed_job", "/bin/bash is missing");
    };
    let log = stderr(&out);
    // source: GNU bash on this machine, its report of a child killed by SIGKILL
    assert_eq!(causes(&classify(&log)), [&LogCause::Killed], "{log}");
}

/// gcc under a small address-space limit. How it fails depends on the machine (at some limits
/// it cannot even load, at others cc1 crashes), so the test only holds the classifier to runs
/// whose raw output mentions memory.
#[test]
fn gcc_out_of_memory() {
    let dir = tempfile::tempdir().unwrap();
    if run("gcc", &["--version"], dir.path()).is_none() {
        return skip("gcc_out_of_memory", "gcc is not installed");
    }
    let mut src = String::from("int f(int x) { int a = 0;\n");
    for i in 0..20_000 {
        src.push_str(&format!("a += x * {i};\n"));
    }
    src.push_str("return a; }\n");
    std::fs::write(dir.path().join("big.c"), src).unwrap();
    let mut checked = 0;
    for limit_kib in [60_000, 120_000] {
        let script = format!("ulimit -v {limit_kib}; exec gcc -O1 -c big.c -o big.o");
        let Some(out) = run("/bin/bash", &["-c", &script], dir.path()) else {
            return skip("gcc_out_of_memory", "/bin/bash is missing");
        };
        let log = stderr(&out);
        let raw = log.to_ascii_lowercase();
        if !(raw.contains("out of memory")
            || raw.contains("cannot allocate memory")
            || raw.contains("memory exhausted"))
        {
            continue;
        }
        checked += 1;
        let findings = classify(&log);
        // source: GNU gcc on this machine under `ulimit -v`, its memory-exhaustion message
        assert_eq!(
            primary(&findings).map(|f| &f.cause),
            Some(&LogCause::OutOfMemory),
            "{log}"
        );
    }
    if checked == 0 {
        skip(
            "gcc_out_of_memory",
            "gcc did not run out of memory at the limits tried",
        );
    }
}

/// A port nobody listens on: bind one, note it, let it go.
fn closed_port() -> u16 {
    let listener = TcpListener::bind("127.0.0.1:0").unwrap();
    listener.local_addr().unwrap().port()
}

#[test]
fn curl_and_wget_connection_refused() {
    let dir = tempfile::tempdir().unwrap();
    let url = format!("http://127.0.0.1:{}/", closed_port());
    let mut ran = false;
    if let Some(out) = run("curl", &["-sS", "--max-time", "10", &url], dir.path()) {
        ran = true;
        let log = stderr(&out);
        let findings = classify(&log);
        // source: curl on this machine, connecting to a closed local port
        assert_eq!(causes(&findings), [&LogCause::Network], "{log}");
        assert!(findings[0].cause.likely_flaky());
    }
    if let Some(out) = run("wget", &["-O", "-", "--tries=1", &url], dir.path()) {
        ran = true;
        let log = stderr(&out);
        // source: GNU wget on this machine, connecting to a closed local port
        assert_eq!(causes(&classify(&log)), [&LogCause::Network], "{log}");
    }
    if !ran {
        skip(
            "curl_and_wget_connection_refused",
            "neither curl nor wget is installed",
        );
    }
}

#[test]
fn curl_times_out_on_a_silent_server() {
    // The kernel completes the handshake from the backlog; nobody ever answers.
    let listener = TcpListener::bind("127.0.0.1:0").unwrap();
    let url = format!(
        "http://127.0.0.1:{}/",
        listener.local_addr().unwrap().port()
    );
    let dir = tempfile::tempdir().unwrap();
    let Some(out) = run("curl", &["-sS", "--max-time", "1", &url], dir.path()) else {
        return skip("curl_times_out_on_a_silent_server", "curl is not installed");
    };
    let log = stderr(&out);
    let findings = classify(&log);
    // source: curl on this machine, giving up on a server that accepts and never replies
    assert_eq!(causes(&findings), [&LogCause::Timeout], "{log}");
    assert!(findings[0].cause.likely_flaky());
    drop(listener);
}

#[test]
fn sample_lines_for_each_cause() {
    let rr = |required: &str, found: &str| LogCause::RuntimeRefused {
        required: required.into(),
        found: found.into(),
    };
    let pc = |m: &str| LogCause::MissingPkgConfig { module: m.into() };
    let cases: Vec<(&str, LogCause)> = vec![
        // source: from memory, MSVC C1083
        (
            r"C:\src\z.c(1): fatal error C1083: Cannot open include file: 'zlib.h': No such file or directory",
            header("zlib.h"),
        ),
        // source: from memory, GNU ld before it added the errno text
        ("/usr/bin/ld: cannot find -lssl", library("ssl")),
        // source: from memory, GNU gold
        ("/usr/bin/ld.gold: error: cannot find -lz", library("z")),
        // source: from memory, GNU ld with an exact file name
        (
            "ld: cannot find -l:libfoo.so.1: No such file or directory",
            library(":libfoo.so.1"),
        ),
        // source: from memory, Apple ld64 and the newer Apple linker
        ("ld: library not found for -liconv", library("iconv")),
        ("ld: library 'iconv' not found", library("iconv")),
        // source: from memory, freedesktop pkg-config before pkgconf
        ("No package 'libffi' found", pc("libffi")),
        // source: from memory, setuptools / distutils without a compiler
        (
            "error: command 'gcc' failed: No such file or directory",
            compiler("gcc"),
        ),
        (
            "error: command 'x86_64-linux-gnu-gcc' failed: No such file or directory",
            compiler("x86_64-linux-gnu-gcc"),
        ),
        (
            "unable to execute 'cc': No such file or directory",
            compiler("cc"),
        ),
        // source: from memory, autoconf
        (
            "configure: error: C compiler cannot create executables",
            compiler("cc"),
        ),
        (
            "configure: error: C++ compiler cannot create executables",
            compiler("c++"),
        ),
        (
            "configure: error: no acceptable C compiler found in $PATH",
            compiler("cc"),
        ),
        // source: from memory, CMake
        ("No CMAKE_CXX_COMPILER could be found.", compiler("c++")),
        (
            "No CMAKE_Fortran_COMPILER could be found.",
            compiler("gfortran"),
        ),
        ("No CMAKE_OBJC_COMPILER could be found.", compiler("cc1obj")),
        // source: gcc 12 on this project's machine, which has no gobjc: `gcc -c x.m` and
        // `gcc -c x.mm` in a UTF-8 locale (typographic quotes) and in the C locale.
        (
            "gcc: fatal error: cannot execute \u{2018}cc1obj\u{2019}: execvp: No such file or directory",
            compiler("cc1obj"),
        ),
        (
            "gcc: fatal error: cannot execute 'cc1objplus': execvp: No such file or directory",
            compiler("cc1objplus"),
        ),
        (
            "No CMAKE_OBJCXX_COMPILER could be found.",
            compiler("cc1objplus"),
        ),
        // source: from memory, zsh, Go's cgo and rustc
        ("zsh: command not found: clang", compiler("clang")),
        (
            r#"cgo: C compiler "gcc" not found: exec: "gcc": executable file not found in $PATH"#,
            compiler("gcc"),
        ),
        ("error: linker `cc` not found", compiler("cc")),
        // source: from memory, bash/dash/GNU make and CMake without make
        ("make: command not found", LogCause::NoMake),
        ("sh: 1: make: not found", LogCause::NoMake),
        (
            r#"CMake Error: CMake was unable to find a build program corresponding to "Unix Makefiles"."#,
            LogCause::NoMake,
        ),
        // source: the form basefit defines for recorders (module docs of verify::logs)
        (
            "runtime refused: requires >=3.10, found 3.9.18",
            rr(">=3.10", "3.9.18"),
        ),
        // source: from memory, curl, glibc resolver, Go net/http, Python sockets, npm
        (
            "curl: (6) Could not resolve host: files.example.invalid",
            LogCause::Network,
        ),
        ("Temporary failure in name resolution", LogCause::Network),
        ("net/http: TLS handshake timeout", LogCause::Network),
        (
            "ConnectionResetError: [Errno 104] Connection reset by peer",
            LogCause::Network,
        ),
        ("npm ERR! code ECONNREFUSED", LogCause::Network),
        // source: from memory, npm, Node, curl and package managers' wordings a review of the
        // gate found unread (each turned a network flake into a gating surprise)
        ("npm ERR! code ETIMEDOUT", LogCause::Network),
        ("Error: ESOCKETTIMEDOUT", LogCause::Network),
        ("Error: socket hang up", LogCause::Network),
        ("curl: (28) Timeout was reached", LogCause::Network),
        ("error: network timeout", LogCause::Network),
        (
            "ReadTimeoutError: Read timeout on endpoint",
            LogCause::Network,
        ),
        // source: from memory, older gcc drivers' wording for a missing compiler proper
        (
            "gcc: error trying to exec 'cc1plus': execvp: No such file or directory",
            compiler("cc1plus"),
        ),
        ("HTTP error 503 Service Unavailable", LogCause::Network),
        // source: from memory, Go contexts and Python ssl
        ("error: context deadline exceeded", LogCause::Timeout),
        (
            "TimeoutError: The read operation timed out",
            LogCause::Timeout,
        ),
        // source: GNU gcc on this machine under `ulimit -v` (seen while writing these tests)
        (
            "cc1: out of memory allocating 65536 bytes after a total of 11128832 bytes",
            LogCause::OutOfMemory,
        ),
        (
            "virtual memory exhausted: Cannot allocate memory",
            LogCause::OutOfMemory,
        ),
        // source: from memory, bash fork failure and libstdc++
        ("bash: fork: Cannot allocate memory", LogCause::OutOfMemory),
        (
            "terminate called after throwing an instance of 'std::bad_alloc'",
            LogCause::OutOfMemory,
        ),
        // source: from memory, the shell, gcc's driver, Docker and Python subprocess
        ("Killed", LogCause::Killed),
        (
            "g++: fatal error: Killed signal terminated program cc1plus",
            LogCause::Killed,
        ),
        (
            "The command '/bin/sh -c make' returned a non-zero code: 137",
            LogCause::Killed,
        ),
        ("process exited with signal 9 (SIGKILL)", LogCause::Killed),
        ("error: exit code: 137", LogCause::Killed),
    ];
    for (line, want) in cases {
        let findings = classify(line);
        assert_eq!(causes(&findings), [&want], "{line}");
        assert_eq!(findings[0].line, 1);
        assert_eq!(findings[0].evidence, line);
    }
}

#[test]
fn several_causes_primary_is_the_specific_one() {
    // source: from memory, the shape of a setuptools build log that retried a download
    let log = "\
Collecting foo
  WARNING: Retrying after connection broken by 'NewConnectionError(\"[Errno 111] Connection refused\")'
  Building wheel for foo
  gcc -c foo.c -o foo.o
  foo.c:3:10: fatal error: zlib.h: No such file or directory
  compilation terminated.
  bar.c:1:10: fatal error: zlib.h: No such file or directory
  error: command '/usr/bin/gcc' failed with exit code 1
Killed
";
    let findings = classify(log);
    assert_eq!(
        causes(&findings),
        [&LogCause::Network, &header("zlib.h"), &LogCause::Killed]
    );
    assert_eq!(
        findings.iter().map(|f| f.line).collect::<Vec<_>>(),
        [2, 5, 9]
    );
    let first = primary(&findings).unwrap();
    assert_eq!(first.cause, header("zlib.h"));
    assert_eq!(first.line, 5);
    assert!(!first.cause.likely_flaky());
}

#[test]
fn primary_ranks_and_breaks_ties_by_order() {
    // source: from memory, typical lines (see sample_lines_for_each_cause)
    let log = "\
connection reset by peer
Killed
sh: 1: cc: not found
runtime refused: requires >=2, found 1.4
";
    let findings = classify(log);
    assert_eq!(
        primary(&findings).unwrap().cause,
        LogCause::RuntimeRefused {
            required: ">=2".into(),
            found: "1.4".into()
        }
    );
    let findings = classify(&log.replace("runtime refused", "runtime"));
    assert_eq!(primary(&findings).unwrap().cause, compiler("cc"));
    let log =
        "/usr/bin/ld: cannot find -lz\nfoo.c:1:10: fatal error: x.h: No such file or directory\n";
    assert_eq!(primary(&classify(log)).unwrap().cause, library("z"));
    assert!(primary(&[]).is_none());
}

#[test]
fn ansi_codes_and_crlf() {
    // source: from memory, a coloured clang diagnostic and coloured pip output, CRLF-ended
    let log = "\u{1b}[1m\u{1b}[31mERROR:\u{1b}[0m downloading\r\n\
               \u{1b}[1mprobe.c:1:10: \u{1b}[0m\u{1b}[0;1;31mfatal error: \u{1b}[0m\u{1b}[1m'ffi.h' file not found\u{1b}[0m\r\n\
               \u{1b}[31mConnection timed out\u{1b}[0m\r\n";
    let findings = classify(log);
    assert_eq!(causes(&findings), [&header("ffi.h"), &LogCause::Network]);
    assert_eq!(findings[0].line, 2);
    assert_eq!(
        findings[0].evidence,
        "probe.c:1:10: fatal error: 'ffi.h' file not found"
    );
    assert_eq!(findings[1].evidence, "Connection timed out");
}

#[test]
fn empty_and_binary_input() {
    assert!(classify("").is_empty());
    assert!(classify("\n\n\r\n\r\r   \t\n").is_empty());
    // Every byte value, decoded the lossy way a reader of a binary log would.
    let bytes: Vec<u8> = (0..=255u8).cycle().take(64 * 1024).collect();
    let text = String::from_utf8_lossy(&bytes);
    let _ = classify(&text);
    // Deterministic pseudo-random bytes with newlines, lossily decoded.
    let mut state: u64 = 0x2545_f491_4f6c_dd1d;
    let noise: Vec<u8> = (0..256 * 1024)
        .map(|_| {
            state = state
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1_442_695_040_888_963_407);
            (state >> 56) as u8
        })
        .collect();
    let _ = classify(&String::from_utf8_lossy(&noise));
    // A real message among NULs and replacement characters still counts.
    let log = "\u{0}\u{0}\u{fffd}\u{fffd}\nbash: gcc: command not found\u{0}\n\u{fffd}";
    let findings = classify(log);
    assert_eq!(causes(&findings), [&compiler("gcc")]);
    assert_eq!(findings[0].line, 2);
}

#[test]
fn fifty_megabyte_log() {
    let filler = "compiling module 12345 of 99999: ok, 0 warnings, nothing to see here\n";
    let mut log = String::with_capacity(50 * 1024 * 1024 + 200);
    let mut lines = 0;
    while log.len() < 50 * 1024 * 1024 {
        log.push_str(filler);
        lines += 1;
    }
    log.push_str("x.c:2:10: fatal error: sqlite3.h: No such file or directory\n");
    let findings = classify(&log);
    // source: GNU gcc wording, as in gcc_missing_header
    assert_eq!(causes(&findings), [&header("sqlite3.h")]);
    assert_eq!(findings[0].line, lines + 1);

    // One 50 MB line with no newline at all, and one made of carriage returns.
    let long = "137 Killed signal 9 ".repeat(50 * 1024 * 1024 / 20);
    let _ = classify(&long);
    let _ = classify(&"\r".repeat(50 * 1024 * 1024));
}

#[test]
fn a_runtime_refusal_outranks_a_configure_probe() {
    // source: GNU gcc wording (see gcc_missing_header) as an autoconf probe prints it, and the
    // tool-neutral refusal line of README, "Recorded install results"
    let log = "\
checking for zlib.h... no
conftest.c:1:10: fatal error: zlib.h: No such file or directory
compilation terminated.
error: runtime refused: requires >=3.8, <4, found 3.7.2
";
    let findings = classify(log);
    let refusal = LogCause::RuntimeRefused {
        required: ">=3.8, <4".into(),
        found: "3.7.2".into(),
    };
    assert_eq!(causes(&findings), [&header("zlib.h"), &refusal]);
    let first = primary(&findings).unwrap();
    assert_eq!((&first.cause, first.line), (&refusal, 4));
    // A finding serialises as its cause's fields beside its line and evidence.
    let json = serde_json::to_value(&findings[0]).unwrap();
    assert_eq!(
        json,
        serde_json::json!({
            "cause": "missing-header",
            "header": "zlib.h",
            "line": 2,
            "evidence": "conftest.c:1:10: fatal error: zlib.h: No such file or directory"
        })
    );
}

/// A header missing in an autoconf probe comes after every other finding, a later missing
/// header and a missing `make` included: configure expects its probes to fail, so the build
/// stopped for what follows (the module docs of `verify::logs`, `primary`). Guards the probe
/// demotion in `primary` (mutation testing: without it the probe's header, earlier and of the
/// same rank, was the primary cause).
#[test]
fn a_configure_probe_header_comes_after_every_other_finding() {
    // source: GNU gcc wording (see gcc_missing_header) as an autoconf probe prints it, and
    // dash's "not found" (see shells_without_compiler_or_make)
    let log = "\
conftest.c:1:10: fatal error: ndbm.h: No such file or directory
src/ext/inflate.c:3:10: fatal error: zlib.h: No such file or directory
";
    let findings = classify(log);
    assert_eq!(causes(&findings), [&header("ndbm.h"), &header("zlib.h")]);
    let first = primary(&findings).unwrap();
    assert_eq!((&first.cause, first.line), (&header("zlib.h"), 2));
    let log = "\
conftest.c:1:10: fatal error: ndbm.h: No such file or directory
/bin/sh: 1: make: not found
";
    assert_eq!(primary(&classify(log)).unwrap().cause, LogCause::NoMake);
}

/// Reads a results file naming `log` as the log file of one failure, the way `review` does.
fn read_one_log_file(log: &str) -> basefit::model::RecordedResult {
    use basefit::load::diag::Ledger;
    use basefit::load::results::{Known, read_results};
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("install.log"), log).unwrap();
    let path = dir.path().join("results.yaml");
    std::fs::write(
        &path,
        "results:\n  - {package: a, image: i, outcome: failed, log_file: install.log}\n",
    )
    .unwrap();
    let known = Known {
        registry: None,
        images: None,
    };
    let mut results = read_results(&path, &known, &mut Ledger::default()).unwrap();
    results.remove(0)
}

#[test]
fn a_last_line_longer_than_the_window_is_still_read() {
    // source: from memory, a progress bar that redraws with carriage returns and never ends
    // its line, then the gcc wording of gcc_missing_header on the same physical line
    let mut log = String::from("Killed\n");
    while log.len() <= SCAN_TAIL_BYTES + 1024 {
        log.push_str("Downloading foo-1.0.tar.gz  42%\r");
    }
    log.push_str("foo.c:1:10: fatal error: zlib.h: No such file or directory");
    let record = read_one_log_file(&log);
    assert!(record.log_skipped > 1024, "{}", record.log_skipped);
    let findings = classify(record.log.as_deref().unwrap());
    // The Killed line lies before the window; the error at the end of line 2 is read, on the
    // first line of the part read.
    assert_eq!(causes(&findings), [&header("zlib.h")]);
    assert_eq!(findings[0].line, 1);
}

/// A source file in a fresh directory.
fn source_file(name: &str, text: &str) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join(name), text).unwrap();
    dir
}

/// gcc's output for a C file using an undeclared identifier.
fn gcc_undeclared_identifier() -> Option<String> {
    let dir = source_file(
        "u.c",
        "int f(int);\nint main(void) { int x = 1; return y + f(x); }\n",
    );
    let out = run("gcc", &["-c", "u.c", "-o", "u.o"], dir.path())?;
    assert!(!out.status.success());
    Some(stderr(&out))
}

const BUILD_ERROR: LogCause = LogCause::BuildError;

#[test]
fn gcc_and_gxx_compiler_errors() {
    let Some(log) = gcc_undeclared_identifier() else {
        return skip("gcc_and_gxx_compiler_errors", "gcc is not installed");
    };
    let findings = classify(&log);
    // source: GNU gcc on this machine, `u.c:2:36: error: 'y' undeclared (first use in this
    // function)` after an `In function` line, with its source excerpt and note
    assert_eq!(causes(&findings), [&BUILD_ERROR], "{log}");
    assert_eq!(findings[0].line, 2, "{log}");
    assert!(findings[0].evidence.starts_with("u.c:2:"), "{log}");
    assert!(
        findings[0].evidence.contains("error: 'y' undeclared"),
        "{log}"
    );
    assert_eq!(BUILD_ERROR.label(), "build-error");
    assert!(!BUILD_ERROR.likely_flaky());

    let dir = source_file(
        "t.cpp",
        "#include <string>\nint main() { int x = std::string(\"a\"); return x; }\n",
    );
    let Some(out) = run("g++", &["-c", "t.cpp", "-o", "t.o"], dir.path()) else {
        return skip("gcc_and_gxx_compiler_errors", "g++ is not installed");
    };
    assert!(!out.status.success());
    let log = stderr(&out);
    let findings = classify(&log);
    // source: GNU g++ on this machine, a type error (`cannot convert 'std::string' ... to
    // 'int'`) at t.cpp:2
    assert_eq!(causes(&findings), [&BUILD_ERROR], "{log}");
    assert!(findings[0].evidence.starts_with("t.cpp:2:"), "{log}");
}

#[test]
fn a_compiler_error_quoting_a_network_word_is_a_build_error() {
    let dir = source_file("e.c", "int main(void) { return ECONNREFUSED; }\n");
    let Some(out) = run("gcc", &["-c", "e.c", "-o", "e.o"], dir.path()) else {
        return skip(
            "a_compiler_error_quoting_a_network_word_is_a_build_error",
            "gcc is not installed",
        );
    };
    let log = stderr(&out);
    let findings = classify(&log);
    // source: GNU gcc on this machine, `e.c:1:25: error: 'ECONNREFUSED' undeclared`, with the
    // source quoted below it (`1 | int main(void) { return ECONNREFUSED; }`): that quote is
    // the program's text and is no finding of its own.
    assert!(
        findings.iter().all(|f| f.cause != LogCause::Network),
        "{findings:?} from {log}"
    );
    let error = findings
        .iter()
        .find(|f| f.evidence.contains("error: 'ECONNREFUSED'"))
        .unwrap_or_else(|| panic!("{findings:?} from {log}"));
    assert_eq!(error.cause, BUILD_ERROR, "{log}");
    assert_eq!(primary(&findings).unwrap().cause, BUILD_ERROR, "{log}");
}

#[test]
fn undefined_references_stay_unrecognised() {
    let dir = source_file("l.c", "int foo(void);\nint main(void) { return foo(); }\n");
    let Some(out) = run("gcc", &["l.c", "-o", "l"], dir.path()) else {
        return skip(
            "undefined_references_stay_unrecognised",
            "gcc is not installed",
        );
    };
    assert!(!out.status.success());
    let log = stderr(&out);
    // source: GNU ld (binutils) via gcc on this machine: `l.c:(.text+0x..): undefined
    // reference to `foo'` and `collect2: error: ld returned 1 exit status`. Neither is a
    // compiler error at a source location, and neither names a missing package.
    assert!(log.contains("undefined reference"), "{log}");
    assert_eq!(causes(&classify(&log)), Vec::<&LogCause>::new(), "{log}");
}

/// The head of a pip build log whose first download attempt was refused and retried.
// source: from memory, pip's retry warning (as in several_causes_primary_is_the_specific_one)
const PIP_RETRIED: &str = "\
Collecting tidewater-http
WARNING: Retrying (Retry(total=4, connect=None, read=None, redirect=None, status=None)) after connection broken by 'NewConnectionError('<pip._vendor.urllib3.connection.HTTPSConnection object at 0x7f>: Failed to establish a new connection: [Errno 111] Connection refused')': /simple/tidewater-http/
Downloading tidewater-http-2.9.4.tar.gz (40 kB)
";

#[test]
fn a_compiler_error_after_a_retried_download_is_the_cause() {
    let Some(gcc) = gcc_undeclared_identifier() else {
        return skip(
            "a_compiler_error_after_a_retried_download_is_the_cause",
            "gcc is not installed",
        );
    };
    // source: GNU gcc on this machine (see gcc_and_gxx_compiler_errors) after the pip lines
    let log = format!(
        "{PIP_RETRIED}Building tidewater-http 2.9.4 from source\n{gcc}error: building tidewater-http 2.9.4 failed: command 'cc' exited with status 1\n"
    );
    let findings = classify(&log);
    assert_eq!(
        causes(&findings),
        [&LogCause::Network, &BUILD_ERROR],
        "{log}"
    );
    let first = primary(&findings).unwrap();
    assert_eq!((&first.cause, first.line), (&BUILD_ERROR, 6), "{log}");
    assert!(!first.cause.likely_flaky());

    // The same download retried, then given up: nothing but the network is shown.
    let log = format!(
        "{PIP_RETRIED}ERROR: Connection broken: Connection refused, giving up on tidewater-http\n"
    );
    let findings = classify(&log);
    assert_eq!(causes(&findings), [&LogCause::Network], "{log}");
    assert!(primary(&findings).unwrap().cause.likely_flaky());
}

#[test]
fn compiler_errors_outrank_kills_but_not_what_names_a_package() {
    // source: GNU gcc wording (see gcc_and_gxx_compiler_errors and gcc_missing_header), GNU ld
    // (gcc_missing_library), the shell's Killed report (bash_reports_a_killed_job)
    let error = "x.c:3:12: error: 'y' undeclared (first use in this function)\n";
    let log = format!("Killed\n{error}");
    assert_eq!(primary(&classify(&log)).unwrap().cause, BUILD_ERROR);
    let log = format!("{error}/usr/bin/ld: cannot find -lz: No such file or directory\n");
    assert_eq!(primary(&classify(&log)).unwrap().cause, library("z"));
    let log = format!("{error}x.c:1:10: fatal error: zlib.h: No such file or directory\n");
    assert_eq!(primary(&classify(&log)).unwrap().cause, header("zlib.h"));
    // A fatal error that is no missing header is a compiler error; one without a source
    // location (gcc's driver about its own input) is not.
    // source: from memory, gcc's wording for an unreadable header and a missing input file
    assert_eq!(
        causes(&classify(
            "x.c:1:10: fatal error: secret.h: Permission denied\n"
        )),
        [&BUILD_ERROR]
    );
    assert!(classify("cc1: fatal error: nosuch.c: No such file or directory\n").is_empty());
}

#[test]
fn autoconf_preprocessor_probe_is_no_finding() {
    // Named as configure names it, and otherwise: the header alone marks the probe.
    for file in ["conftest.c", "probe.c"] {
        let dir = source_file(file, "#include <ac_nonexistent.h>\n");
        let Some(out) = run("gcc", &["-E", file], dir.path()) else {
            return skip(
                "autoconf_preprocessor_probe_is_no_finding",
                "gcc is not installed",
            );
        };
        assert!(!out.status.success());
        let probe = stderr(&out);
        // source: GNU gcc on this machine preprocessing autoconf's probe, `conftest.c:1:10:
        // fatal error: ac_nonexistent.h: No such file or directory`, as configure prints it in
        // config.log; then freedesktop pkg-config's wording (from memory, as in
        // sample_lines_for_each_cause) for the check that really failed
        assert!(probe.contains("fatal error: ac_nonexistent.h"), "{probe}");
        assert!(classify(&probe).is_empty(), "{probe}");
        let log = format!(
            "checking how to run the C preprocessor... gcc -E\nconfigure:4321: gcc -E  {file}\n{probe}configure:4321: $? = 1\nconfigure: error: Package requirements (libfoo >= 1.2) were not met:\n\nNo package 'libfoo' found\n"
        );
        let findings = classify(&log);
        let libfoo = LogCause::MissingPkgConfig {
            module: "libfoo".into(),
        };
        assert_eq!(causes(&findings), [&libfoo], "{log}");
        assert_eq!(primary(&findings).unwrap().cause, libfoo);
    }
    // source: from memory, clang's wording for the same probe
    let clang = "conftest.c:11:10: fatal error: 'ac_nonexistent.h' file not found\n";
    assert!(classify(clang).is_empty());
}

#[test]
fn compiler_warnings_and_notes_quoting_network_words_are_no_findings() {
    let dir = source_file(
        "w.c",
        "#include <errno.h>\n#define ECONNREFUSED 1111\nint missing_fn(void);\nint main(void) { return missing_fn() + ECONNREFUSED; }\n",
    );
    let Some(out) = run("gcc", &["w.c", "-o", "w"], dir.path()) else {
        return skip(
            "compiler_warnings_and_notes_quoting_network_words_are_no_findings",
            "gcc is not installed",
        );
    };
    assert!(!out.status.success());
    let log = stderr(&out);
    // source: GNU gcc on this machine: `w.c:2: warning: "ECONNREFUSED" redefined`, a note
    // at errno.h's `#define ECONNREFUSED 111 /* Connection refused */` quoting it, then ld's
    // undefined reference. The quoted words are the program's, not a failed connection.
    assert!(log.contains("warning: \"ECONNREFUSED\" redefined"), "{log}");
    let findings = classify(&log);
    assert!(
        findings.iter().all(|f| f.cause != LogCause::Network),
        "{findings:?} from {log}"
    );
}

/// A runtime refusal is acted on even when a missing header (not a configure probe's) comes
/// earlier in the log: the refusal is definitive, the header often a probe of an optional
/// feature. With equal rank, the earlier header would win.
#[test]
fn a_runtime_refusal_outranks_an_earlier_missing_header() {
    let log = "src/ext/parse.c:3:10: fatal error: zstd.h: No such file or directory\nruntime refused: requires >=4.0, found 3.2.0\n";
    let findings = classify(log);
    assert_eq!(findings.len(), 2, "{findings:?}");
    let p = primary(&findings).unwrap();
    assert_eq!(
        p.cause,
        LogCause::RuntimeRefused {
            required: ">=4.0".into(),
            found: "3.2.0".into()
        }
    );
    assert_eq!(p.line, 2);
}

/// A shared object's stem loses only a trailing version of dot-separated numbers after its
/// last dash (the doc of `unversioned_stem`; Debian 12 names such as `libyaml-0.so.2`, in the
/// archive extract, and `libdbus-glib-1.so.2` of libdbus-glib-1-2, whose name has a dash of its
/// own, from memory): nothing is
/// taken for a version that is not one, and no empty link name is left (from a mutation review
/// of src/verify/compare.rs).
#[test]
fn an_unversioned_stem_drops_only_a_whole_trailing_version() {
    use basefit::verify::logs::unversioned_stem;
    assert_eq!(unversioned_stem("dbus-glib-1"), Some("dbus-glib"));
    assert_eq!(unversioned_stem("event_core-2.1"), Some("event_core"));
    for not_versioned in ["yaml-", "glib-2.", "glib-.0", "glib-2..0", "-2", "-2.0"] {
        assert_eq!(unversioned_stem(not_versioned), None, "{not_versioned}");
    }
}

/// The pkg-config program missing, in the shells' words (run for real with a PATH that holds
/// nothing) and in autoconf's (the message of `PKG_CHECK_MODULES` in the pkg.m4 this machine
/// has, as configure prints it after `configure: error: `).
#[test]
fn pkg_config_program_missing() {
    let dir = tempfile::tempdir().unwrap();
    let empty = dir.path().join("empty-bin");
    std::fs::create_dir(&empty).unwrap();
    for shell in ["/bin/bash", "/bin/sh"] {
        let Some(out) = run_with_path(
            shell,
            &["-c", "pkg-config --cflags libxml-2.0"],
            dir.path(),
            Some(empty.to_str().unwrap()),
        ) else {
            skip("pkg_config_program_missing", &format!("{shell} is missing"));
            continue;
        };
        let log = stderr(&out);
        // source: the shell at this path on this machine, failing to find pkg-config
        assert_eq!(
            causes(&classify(&log)),
            [&LogCause::NoPkgConfig],
            "{shell}: {log}"
        );
    }
    let Ok(m4) = std::fs::read_to_string("/usr/share/aclocal/pkg.m4") else {
        skip("pkg_config_program_missing", "no /usr/share/aclocal/pkg.m4");
        return;
    };
    let line = m4
        .lines()
        .find(|l| l.contains("could not be found or is too old"))
        .expect("pkg.m4 words the missing program so");
    // source: pkg.m4 on this machine (Debian 12's pkgconf)
    let log = format!("configure: error: {}", line.trim_start_matches('['));
    assert_eq!(causes(&classify(&log)), [&LogCause::NoPkgConfig], "{log}");
}

/// gcc with `-Werror` turns a `#warning` into an error at a source location; the words it
/// quotes are the source's, not the linker's, pkg-config's or the loader's.
#[test]
fn a_werror_warning_quoting_other_tools_is_a_build_error() {
    let dir = source_file(
        "w.c",
        "#warning \"ld: cannot find -lzz\"\n\
         #warning \"Package zz was not found in the pkg-config search path.\"\n\
         #warning \"libzz.so.1: cannot open shared object file: No such file or directory\"\n\
         int main(void) { return 0; }\n",
    );
    let Some(out) = run("gcc", &["-Werror", "-c", "w.c"], dir.path()) else {
        return skip(
            "a_werror_warning_quoting_other_tools_is_a_build_error",
            "gcc is not installed",
        );
    };
    assert!(!out.status.success());
    let log = stderr(&out);
    // source: gcc on this machine, `w.c:1:2: error: #warning "ld: cannot find -lzz"
    // [-Werror=cpp]` and the like
    assert!(
        log.contains("error: #warning \"ld: cannot find -lzz\""),
        "{log}"
    );
    assert_eq!(causes(&classify(&log)), [&LogCause::BuildError], "{log}");
}

/// Launchers that exec their argument report a missing compiler, make or pkg-config in their
/// own words, as does Python's `subprocess`: made for real with an empty `PATH`.
#[test]
fn launchers_and_python_without_the_program() {
    let dir = tempfile::tempdir().unwrap();
    let empty = dir.path().join("empty-bin");
    std::fs::create_dir(&empty).unwrap();
    let empty = empty.to_str().unwrap();
    let mut ran = 0;
    for (launcher, args) in [
        ("/usr/bin/env", &["cc"][..]),
        ("/usr/bin/nice", &["cc"]),
        ("/usr/bin/nohup", &["cc"]),
        ("/usr/bin/timeout", &["5", "cc"]),
    ] {
        let Some(out) = run_with_path(launcher, args, dir.path(), Some(empty)) else {
            skip("launchers_and_python_without_the_program", launcher);
            continue;
        };
        ran += 1;
        let log = stderr(&out);
        // source: coreutils at this path on this machine, failing to exec cc (`/usr/bin/env:
        // 'cc': No such file or directory`, `... failed to run command 'cc': ...`)
        assert_eq!(
            causes(&classify(&log)),
            [&compiler("cc")],
            "{launcher}: {log}"
        );
    }
    let xargs = Command::new("/usr/bin/xargs")
        .env("PATH", empty)
        .env("LC_ALL", "C")
        .stdin(std::process::Stdio::null())
        .arg("make")
        .output();
    if let Ok(out) = xargs {
        ran += 1;
        let log = stderr(&out);
        // source: findutils' xargs on this machine, `/usr/bin/xargs: make: No such file or
        // directory`
        assert_eq!(causes(&classify(&log)), [&LogCause::NoMake], "{log}");
    }
    for (program, cause) in [
        ("gcc", compiler("gcc")),
        ("make", LogCause::NoMake),
        ("pkg-config", LogCause::NoPkgConfig),
    ] {
        let script = format!("import subprocess; subprocess.run(['{program}', '--version'])");
        let Some(out) = run_with_path(
            "/usr/bin/python3",
            &["-c", &script],
            dir.path(),
            Some(empty),
        ) else {
            skip("launchers_and_python_without_the_program", "no python3");
            break;
        };
        ran += 1;
        let log = stderr(&out);
        // source: Python 3 on this machine, `FileNotFoundError: [Errno 2] No such file or
        // directory: 'gcc'` at the end of its traceback
        assert_eq!(causes(&classify(&log)), [&cause], "{log}");
    }
    if ran == 0 {
        skip("launchers_and_python_without_the_program", "nothing to run");
    }
    // A launcher that found the program, and Python missing a data file, are no findings,
    // a data path whose last part is named like a compiler included.
    assert_eq!(
        causes(&classify(
            "FileNotFoundError: [Errno 2] No such file or directory: 'setup.cfg'\n\
             FileNotFoundError: [Errno 2] No such file or directory: 'src/cpp'\n\
             /usr/bin/env: 'python9': No such file or directory\n"
        )),
        Vec::<&LogCause>::new()
    );
}

/// autoconf's `config.log`, often printed when configure fails, records configure's own errors
/// at the script's line: they are configure's words, read as such, and no compiler error.
// source: from memory, autoconf's AC_MSG_ERROR writes `configure:LINENO: error: MESSAGE` to
// config.log; the messages are those of the README's autoconf rows.
#[test]
fn configure_errors_in_config_log_are_configures_words() {
    let log = "configure:4321: error: C compiler cannot create executables\n";
    assert_eq!(causes(&classify(log)), [&compiler("cc")]);
    let log = "configure:5012: error: The pkg-config script could not be found or is too old.\n";
    assert_eq!(causes(&classify(log)), [&LogCause::NoPkgConfig]);
    let log = "configure:6100: error: cannot find required auxiliary files: install-sh\n";
    assert_eq!(causes(&classify(log)), Vec::<&LogCause>::new());
}

/// gcc's source quote under a warning, behind the prefix a builder puts before every line:
/// the quoted code's words (`ECONNREFUSED`, `timed_out`) are no network failure, which would
/// make a failed install read as flaky and leave it out of the counts.
#[test]
fn source_quotes_behind_builder_prefixes_are_no_findings() {
    let dir = source_file(
        "nw.c",
        "#include <errno.h>\n#undef ECONNREFUSED\n#define ECONNREFUSED 1\n\
         int main(void) { int connection_refused; return ECONNREFUSED; }\n",
    );
    let Some(out) = run("gcc", &["-Wall", "-c", "nw.c"], dir.path()) else {
        return skip(
            "source_quotes_behind_builder_prefixes_are_no_findings",
            "gcc is not installed",
        );
    };
    let log = stderr(&out);
    // source: gcc on this machine, `nw.c:4:...: warning: unused variable
    // 'connection_refused'`, then `    4 | int main(void) { int connection_refused; ...` and
    // the caret line
    assert!(log.contains("    4 | int main"), "{log}");
    // Prefixes: docker buildkit's step and time, git's `remote: `, a bracketed job name and
    // CI time stamps (common practice, no source).
    for prefix in ["#8 1.234 ", "remote: ", "[build] ", "[12:00:01] ", "  "] {
        let wrapped: String = log.lines().map(|l| format!("{prefix}{l}\n")).collect();
        assert_eq!(
            causes(&classify(&wrapped)),
            Vec::<&LogCause>::new(),
            "{wrapped}"
        );
    }
    // A builder's own `| ` separator still lets the error behind it through.
    let dir = c_file_including(ABSENT_HEADER);
    let out = run("gcc", &["-c", "probe.c"], dir.path()).unwrap();
    let wrapped: String = stderr(&out)
        .lines()
        .map(|l| format!("[build] | {l}\n"))
        .collect();
    assert_eq!(
        causes(&classify(&wrapped)),
        [&header(ABSENT_HEADER)],
        "{wrapped}"
    );
}

/// GNU make reporting a recipe killed by SIGKILL (the kernel's OOM killer sends that signal),
/// made for real: the recipe's shell kills itself.
#[test]
fn make_reports_a_killed_recipe() {
    let dir = source_file("Makefile", "all:\n\tsh -c 'kill -9 $$$$'\n");
    let Some(out) = run("make", &[], dir.path()) else {
        return skip("make_reports_a_killed_recipe", "make is not installed");
    };
    let log = stderr(&out);
    // source: GNU make on this machine, `make: *** [Makefile:2: all] Killed`
    assert!(log.contains("] Killed"), "{log}");
    assert_eq!(causes(&classify(&log)), [&LogCause::Killed], "{log}");
}

/// docker compose pads a short service name with blanks up to its `| ` so that the columns of
/// all services align (`db-1            | ...`; common practice, no source): the line behind
/// such padding is the service's own, not a gcc caret line, and a missing header or library
/// there was read as no finding at all. gcc's caret and fix-it lines behind a builder's
/// prefix, which start with blanks after their `| `, stay quotes.
#[test]
fn errors_behind_compose_padding_are_read() {
    let dir = c_file_including(ABSENT_HEADER);
    let Some(out) = run("gcc", &["-c", "probe.c"], dir.path()) else {
        return skip(
            "errors_behind_compose_padding_are_read",
            "gcc is not installed",
        );
    };
    let compose = |log: &str| -> String {
        log.lines()
            .map(|l| format!("db-1              | {l}\n"))
            .collect()
    };
    let wrapped = compose(&stderr(&out));
    assert_eq!(
        causes(&classify(&wrapped)),
        [&header(ABSENT_HEADER)],
        "{wrapped}"
    );
    let dir = c_file_including("stddef.h");
    let args = ["probe.c", "-lbasefit_absent_lib", "-o", "probe"];
    let out = run("gcc", &args, dir.path()).unwrap();
    let wrapped = compose(&stderr(&out));
    // source: GNU ld via gcc on this machine, `/usr/bin/ld: cannot find -lbasefit_absent_lib:
    // No such file or directory`
    assert_eq!(
        causes(&classify(&wrapped)),
        [&library("basefit_absent_lib")],
        "{wrapped}"
    );
    // gcc's fix-it line under the caret spells the identifier it suggests.
    let dir = source_file(
        "fx.c",
        "#include <errno.h>\nint main(void) { return ECONREFUSED; }\n",
    );
    let out = run("gcc", &["-c", "fx.c"], dir.path()).unwrap();
    let log = stderr(&out);
    // source: gcc on this machine, `did you mean 'ECONNREFUSED'?`, then the quote, the caret
    // line and `      |                         ECONNREFUSED`
    assert!(
        log.contains("|                         ECONNREFUSED"),
        "{log}"
    );
    let wrapped: String = log.lines().map(|l| format!("#8 1.234 {l}\n")).collect();
    assert_eq!(
        causes(&classify(&wrapped)),
        [&LogCause::BuildError],
        "{wrapped}"
    );
}

/// Launchers in a UTF-8 locale (C.UTF-8, which many images set) quote the program with
/// typographic quotes, and behind a builder's prefix the launcher is not the line's first
/// word: both were read as no finding. Made for real with an empty `PATH`.
#[test]
fn launchers_in_utf8_and_behind_prefixes() {
    let dir = tempfile::tempdir().unwrap();
    let empty = dir.path().join("empty-bin");
    std::fs::create_dir(&empty).unwrap();
    for (launcher, args) in [
        ("/usr/bin/env", &["cc"][..]),
        ("/usr/bin/timeout", &["5", "cc"]),
    ] {
        let Ok(out) = Command::new(launcher)
            .args(args)
            .env("PATH", &empty)
            .env("LC_ALL", "C.UTF-8")
            .env_remove("LANGUAGE")
            .output()
        else {
            skip("launchers_in_utf8_and_behind_prefixes", launcher);
            continue;
        };
        let log = stderr(&out);
        if !log.contains('\u{2018}') {
            skip("launchers_in_utf8_and_behind_prefixes", "no C.UTF-8 locale");
            continue;
        }
        // source: coreutils on this machine in C.UTF-8, `/usr/bin/env: ‘cc’: No such file or
        // directory`, `/usr/bin/timeout: failed to run command ‘cc’: ...`
        assert_eq!(causes(&classify(&log)), [&compiler("cc")], "{log}");
    }
    // Run as plain `env`, as a shell finds it on PATH: `env: 'cc': No such file or directory`.
    let Ok(out) = Command::new("bash")
        .args(["-c", "exec -a env /usr/bin/env PATH=/nonexistent cc"])
        .env("LC_ALL", "C")
        .output()
    else {
        return skip("launchers_in_utf8_and_behind_prefixes", "no bash");
    };
    let log = stderr(&out);
    // source: coreutils' env on this machine, run under the name `env`
    assert!(log.starts_with("env: 'cc': "), "{log}");
    for prefix in ["#8 1.234 ", "remote: ", "[build] "] {
        let wrapped: String = log.lines().map(|l| format!("{prefix}{l}\n")).collect();
        assert_eq!(causes(&classify(&wrapped)), [&compiler("cc")], "{wrapped}");
    }
}
