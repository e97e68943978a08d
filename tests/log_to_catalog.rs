//! Install-failure logs produced for real by the machine's tools, classified and mapped
//! through the catalog to the system package to add.
//!
//! Sources: GNU gcc (missing header), GNU ld through gcc (missing -l library) and pkg-config
//! (missing module) on this machine; Debian's archive extract (tests/data/debian-archive) for
//! which package ships each file. Libraries whose development files happen to be installed
//! here cannot fail, so they are skipped; the test says how many it could provoke.

mod common;

use basefit::model::OsFamily;
use basefit::native::Catalog;
use basefit::verify::compare::library_of;
use basefit::verify::logs::{LogCause, classify, primary};
use std::process::Command;

fn have(tool: &str) -> bool {
    Command::new(tool).arg("--version").output().is_ok()
}

fn run(cmd: &mut Command) -> Option<String> {
    let out = cmd.env("LC_ALL", "C").output().ok()?;
    if out.status.success() {
        return None;
    }
    Some(format!(
        "{}{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    ))
}

fn archive_package(kind: &str, name: &str) -> Option<String> {
    let extract = std::fs::read_to_string("tests/data/debian-archive/extract.tsv").ok()?;
    extract.lines().find_map(|l| {
        let cols: Vec<&str> = l.split('\t').collect();
        (cols.len() == 3 && cols[0] == kind && cols[1] == name).then(|| cols[2].to_string())
    })
}

/// Classifies `log`, maps it through the catalog, and checks the Debian package against the
/// archive extract.
fn check(catalog: &Catalog, log: &str, kind: &str, name: &str) {
    let findings = classify(log);
    let p = primary(&findings).unwrap_or_else(|| panic!("nothing classified in {log}"));
    let named = match &p.cause {
        LogCause::MissingHeader { header } => ("header", header.as_str()),
        LogCause::MissingLibrary { link } => ("link", link.as_str()),
        LogCause::MissingPkgConfig { module } => ("pkgconfig", module.as_str()),
        other => panic!("{kind} {name}: classified as {other:?} from {log}"),
    };
    assert_eq!(named.0, kind, "{log}");
    // An installed header can include one that is not (libxslt's headers include libxml2's,
    // found only through pkg-config's -I): the tool names the missing one, and so must we.
    if named.1 != name {
        assert!(
            log.contains(&format!("{name}:")),
            "{kind} {name}: gcc named {} without mentioning the probe: {log}",
            named.1
        );
    }
    let (kind, name) = named;
    let lib = library_of(catalog, &p.cause)
        .unwrap_or_else(|| panic!("{kind} {name} maps to no catalog library"));
    let dev = lib.families[&OsFamily::Debian].dev.clone().unwrap();
    assert_eq!(
        Some(dev),
        archive_package(kind, name),
        "{kind} {name} ({})",
        lib.id
    );
}

#[test]
fn real_tool_failures_map_to_the_package_that_ships_the_file() {
    if !have("gcc") || !have("pkg-config") {
        eprintln!(
            "skipped: gcc or pkg-config is not installed (apt-get install -y gcc pkg-config)"
        );
        return;
    }
    let catalog = Catalog::builtin();
    let dir = tempfile::tempdir().unwrap();
    let (mut headers, mut links, mut modules) = (0, 0, 0);
    for lib in catalog.libraries.iter().take(40) {
        if let Some(h) = lib.headers.first() {
            let src = dir.path().join("probe.c");
            // Some headers expect the standard ones first (jpeglib.h uses size_t and FILE).
            std::fs::write(&src, format!("#include <stddef.h>\n#include <stdio.h>\n#include <{h}>\nint main(void) {{ return 0; }}\n")).unwrap();
            let log = run(Command::new("gcc")
                .arg("-c")
                .arg(&src)
                .arg("-o")
                .arg(dir.path().join("probe.o")));
            // A present header that fails to compile on its own is not a missing-file case.
            if let Some(log) = log.filter(|l| l.contains("No such file or directory")) {
                check(&catalog, &log, "header", h);
                headers += 1;
            }
        }
        if let Some(l) = lib.link.first() {
            let src = dir.path().join("main.c");
            std::fs::write(&src, "int main(void) { return 0; }\n").unwrap();
            if let Some(log) = run(Command::new("gcc")
                .arg(&src)
                .arg(format!("-l{l}"))
                .arg("-o")
                .arg(dir.path().join("a.out")))
            {
                check(&catalog, &log, "link", l);
                links += 1;
            }
        }
        if let Some(m) = lib.pkg_config.first()
            && let Some(log) = run(Command::new("pkg-config").args(["--cflags", m]))
        {
            check(&catalog, &log, "pkgconfig", m);
            modules += 1;
        }
    }
    eprintln!(
        "provoked for real: {headers} missing headers, {links} missing libraries, {modules} missing pkg-config modules"
    );
    assert!(
        headers + links + modules > 0,
        "every library's development files are installed; nothing could be provoked"
    );
}

/// The `runtime` row of the archive extract for link name `link`: the Debian package holding
/// the shared object `-l{link}` resolves to.
fn archive_runtime(link: &str) -> Option<String> {
    archive_package("runtime", link)
}

/// A prebuilt build fails at load time when the image lacks its runtime package. The loader's
/// message is produced for real: glibc's dynamic loader starting a program whose shared object
/// was removed, and CPython's `ctypes` (dlopen) asking for one that does not exist. The file
/// names carry a version no system has (`.so.77`), so nothing installed here can satisfy them.
/// The catalog library found from the file name must name, for Debian, the runtime package
/// the archive extract says ships the shared object of that link name.
#[test]
fn a_missing_shared_object_maps_to_the_runtime_package_that_ships_it() {
    if !have("gcc") {
        eprintln!("skipped: gcc is not installed (apt-get install -y gcc)");
        return;
    }
    let catalog = Catalog::builtin();
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    std::fs::write(d.join("l.c"), "int bf_probe(void) { return 0; }\n").unwrap();
    std::fs::write(
        d.join("m.c"),
        "int bf_probe(void);\nint main(void) { return bf_probe(); }\n",
    )
    .unwrap();
    let mut checked = 0;
    for lib in &catalog.libraries {
        let Some(link) = lib.link.first() else {
            continue;
        };
        let Some(runtime) = archive_runtime(link) else {
            continue;
        };
        let soname = format!("lib{link}.so.77");
        let built = Command::new("gcc")
            .args(["-shared", "-fPIC", &format!("-Wl,-soname,{soname}"), "-o"])
            .arg(d.join(&soname))
            .arg(d.join("l.c"))
            .status()
            .unwrap();
        assert!(built.success());
        let _ = std::fs::remove_file(d.join(format!("lib{link}.so")));
        std::os::unix::fs::symlink(&soname, d.join(format!("lib{link}.so"))).unwrap();
        let linked = Command::new("gcc")
            .arg(d.join("m.c"))
            .arg(format!("-L{}", d.display()))
            .arg(format!("-l{link}"))
            .arg("-o")
            .arg(d.join("prog"))
            .status()
            .unwrap();
        assert!(linked.success());
        std::fs::remove_file(d.join(&soname)).unwrap();
        let log = run(&mut Command::new(d.join("prog"))).expect("the program cannot start");
        let findings = classify(&log);
        let p = primary(&findings).unwrap_or_else(|| panic!("nothing classified in {log}"));
        assert_eq!(
            p.cause,
            LogCause::MissingSharedObject {
                soname: soname.clone()
            },
            "{log}"
        );
        let found = library_of(&catalog, &p.cause)
            .unwrap_or_else(|| panic!("{soname} maps to no catalog library"));
        assert_eq!(found.id, lib.id, "{soname}");
        let debian = &found.families[&OsFamily::Debian].runtime;
        assert!(
            debian.contains(&runtime),
            "{soname}: the catalog's Debian runtime packages {debian:?} lack {runtime}, which ships -l{link}'s shared object"
        );
        checked += 1;
    }
    eprintln!("provoked for real: {checked} missing shared objects");
    assert!(
        checked > 0,
        "no catalog library has a runtime row in the extract"
    );
    // dlopen's message, as an extension loader reports it.
    if have("python3") {
        let log =
            run(Command::new("python3").args(["-c", "import ctypes; ctypes.CDLL('libz.so.77')"]))
                .expect("dlopen fails");
        let findings = classify(&log);
        let p = primary(&findings).unwrap_or_else(|| panic!("nothing classified in {log}"));
        assert_eq!(
            library_of(&catalog, &p.cause).map(|l| l.id.as_str()),
            Some("zlib"),
            "{log}"
        );
    }
}

/// A compiler error that names no missing file maps to no catalog library, and the review
/// treats it as a definite failure: not flaky for an earlier retried download, confirming no
/// predicted cause but a missing system library (which it leaves undecided), and with advice
/// to read the log line rather than to change the image.
#[test]
fn a_compiler_error_is_a_definite_failure_no_package_fixes() {
    use basefit::plan::{PlanOptions, plan};
    use basefit::verify::Verdict;

    let dir = tempfile::tempdir().unwrap();
    let src = dir.path().join("u.c");
    std::fs::write(&src, "int main(void) { return y; }\n").unwrap();
    // source: GNU gcc on this machine, `u.c:1:25: error: 'y' undeclared ...`
    let Some(gcc) = run(Command::new("gcc")
        .arg("-c")
        .arg(&src)
        .arg("-o")
        .arg(dir.path().join("u.o")))
    else {
        eprintln!("skipped: gcc is not installed (apt-get install -y gcc)");
        return;
    };
    let findings = classify(&gcc);
    let p = primary(&findings).unwrap_or_else(|| panic!("nothing classified in {gcc}"));
    assert_eq!(p.cause, LogCause::BuildError, "{gcc}");
    assert!(library_of(&Catalog::builtin(), &p.cause).is_none());

    // source: from memory, pip's retry warning before the download that then succeeded
    let log = format!(
        "WARNING: Retrying (Retry(total=4)) after connection broken by 'NewConnectionError(\"[Errno 111] Connection refused\")': /simple/x/\n{gcc}"
    );
    std::fs::write(dir.path().join("build.log"), log).unwrap();
    // Cells as demo-data/STORIES.md predicts them: tidewater-http installs on el9-3.0,
    // saltbush fails on deb-2.8 (runtime-too-old), pixelmoss on alpine-2.6
    // (missing-system-library).
    let results = dir.path().join("results.yaml");
    std::fs::write(
        &results,
        "results:\n\
         \x20 - {package: tidewater-http, image: el9-3.0, outcome: failed, log_file: build.log}\n\
         \x20 - {package: saltbush, image: deb-2.8, outcome: failed, log_file: build.log}\n\
         \x20 - {package: pixelmoss, image: alpine-2.6, outcome: failed, log_file: build.log}\n",
    )
    .unwrap();
    let inputs = common::demo_inputs(vec![results]);
    let matrix = plan(&inputs, &PlanOptions::default());
    let review = basefit::verify::compare_inputs(&matrix, &inputs);
    let cell = |package: &str| {
        review
            .cells
            .iter()
            .find(|c| c.package == package)
            .unwrap_or_else(|| panic!("{package} not reviewed"))
    };
    let surprise = cell("tidewater-http");
    assert_eq!(surprise.verdict, Verdict::SurpriseFailure);
    assert_eq!(surprise.log_cause, Some(LogCause::BuildError));
    let advice = surprise.suggestion.as_deref().unwrap();
    assert!(
        advice.contains("compiler error") && advice.contains("read the log line"),
        "{advice}"
    );
    assert!(!advice.contains("retry"), "{advice}");
    let runtime = cell("saltbush");
    assert_eq!(runtime.verdict, Verdict::AgreedFailure);
    assert_eq!(runtime.cause_agrees, Some(false));
    let library = cell("pixelmoss");
    assert_eq!(library.verdict, Verdict::AgreedFailure);
    assert_eq!(library.cause_agrees, None);
}

/// Every shared object a catalog library's Debian runtime package ships under the soname a
/// loader looks for (and the file it names) maps back to that library, so a log missing it
/// gets the library's packages as advice. A soname is not always `lib<link name>.so.N`:
/// libyaml's is `libyaml-0.so.2` (link name `yaml`), and the log was called a library the
/// catalog does not know (from an end-to-end review). Source: Debian's package archive,
/// Debian 12 (bookworm), the `shared` rows of tests/data/debian-archive/extract.tsv (`dpkg -c`
/// of the runtime packages, every `lib*.so.*` name resolving to the file a link name's
/// `lib<name>.so` resolves to; see its README).
#[test]
fn every_debian_shared_object_of_a_catalog_library_maps_to_it() {
    let extract = std::fs::read_to_string("tests/data/debian-archive/extract.tsv").unwrap();
    let catalog = Catalog::builtin();
    let mut checked = 0;
    let mut wrong = Vec::new();
    for line in extract.lines().skip(1) {
        let cols: Vec<&str> = line.split('\t').collect();
        let ["shared", file, package] = cols[..] else {
            continue;
        };
        let cause = LogCause::MissingSharedObject {
            soname: file.to_string(),
        };
        let found = library_of(&catalog, &cause);
        let right = found.is_some_and(|lib| {
            lib.families
                .get(&OsFamily::Debian)
                .is_some_and(|deb| deb.runtime.iter().any(|r| r == package))
        });
        if !right {
            wrong.push(format!("{file} ({package}): {:?}", found.map(|l| &l.id)));
        }
        checked += 1;
    }
    assert!(
        wrong.is_empty(),
        "{} of {checked}:\n{}",
        wrong.len(),
        wrong.join("\n")
    );
    assert!(checked > 150, "only {checked} shared objects");
}
