//! Native needs against images, through the binary: what counts as a toolchain, how a declared
//! library name is looked up, what an image's development packages imply, and what `syslibs`
//! and `check` say about a library the catalog does not know.

mod common;

use common::{run_basefit, write};
use std::path::Path;

/// Writes a registry, images and priorities into `dir`; returns the input flags.
fn inputs(dir: &Path, registry: &str, images: &str, priorities: &[&str]) -> Vec<String> {
    let priorities = format!(
        "priorities:\n{}",
        priorities
            .iter()
            .map(|p| format!("  - {p}\n"))
            .collect::<String>()
    );
    let flags = [
        ("--registry", write(dir, "registry.yaml", registry)),
        ("--images", write(dir, "images.yaml", images)),
        ("--priorities", write(dir, "priorities.yaml", priorities)),
    ];
    flags
        .into_iter()
        .flat_map(|(f, p)| [f.to_string(), p.to_str().unwrap().to_string()])
        .collect()
}

/// `args` with a results file holding `yaml` written into `dir`.
fn with_results(dir: &Path, mut args: Vec<String>, yaml: &str) -> Vec<String> {
    let path = write(dir, "results.yaml", yaml);
    args.extend(["--results".to_string(), path.to_str().unwrap().to_string()]);
    args
}

/// Runs `command` quietly on `args`; returns (exit code, stdout, stderr).
fn run(command: &[&str], args: &[String]) -> (i32, String, String) {
    let mut all: Vec<String> = command.iter().map(|c| c.to_string()).collect();
    all.push("--quiet".into());
    all.extend(args.iter().cloned());
    run_basefit(&all)
}

/// One package with one source-built release shipping `files` and declaring `libraries`.
fn package(name: &str, libraries: &str, files: &str) -> String {
    format!(
        "  - name: {name}\n    versions:\n      - version: \"1.0.0\"\n        native:\n          libraries: [{libraries}]\n          files: [{files}]\n"
    )
}

/// A release that has only a prebuilt build for linux/glibc/x86_64, declaring `libraries`.
fn prebuilt(name: &str, libraries: &str) -> String {
    format!(
        "  - name: {name}\n    versions:\n      - version: \"1.0.0\"\n        builds:\n          prebuilt: [linux/glibc/x86_64]\n        native:\n          libraries: [{libraries}]\n"
    )
}

fn image(id: &str, family: &str, extra: &str) -> String {
    let platform = match family {
        "alpine" => "linux/musl/x86_64",
        _ => "linux/glibc/x86_64",
    };
    format!(
        "  - id: {id}\n    runtime: 3.2.0\n    family: {family}\n    platform: {platform}\n{extra}"
    )
}

/// C++ sources and C++ libraries need g++: on RHEL that is `gcc-c++`, a package apart from
/// `gcc`, so `gcc` and `make` alone are no toolchain, and the advice names `gcc-c++` too.
#[test]
fn a_rhel_toolchain_includes_the_cxx_compiler() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}",
        package("cpp-proto", "protobuf", "src/ext/codec.cc"),
        package("cpp-ext", "", "src/ext/hash.cpp"),
    );
    let images = format!(
        "images:\n{}{}{}{}",
        image(
            "el-c",
            "rhel",
            "    packages: [gcc, make, protobuf-devel]\n"
        ),
        image(
            "el-cxx",
            "rhel",
            "    packages: [gcc, gcc-c++, make, protobuf-devel]\n"
        ),
        image(
            "el-flagged",
            "rhel",
            "    toolchain: true\n    packages: [gcc, gcc-c++, make, protobuf-devel]\n"
        ),
        "  - id: el-dropped\n    extends: el-flagged\n    remove: [gcc-c++]\n",
    );
    let args = inputs(dir.path(), &registry, &images, &["cpp-proto", "cpp-ext"]);

    let (code, stdout, _) = run(&["explain", "cpp-proto", "el-c"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("missing-toolchain"), "{stdout}");
    assert!(
        stdout.contains("has no C toolchain; add: gcc-c++"),
        "{stdout}"
    );
    let (code, stdout, _) = run(&["explain", "cpp-ext", "el-c"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("at-risk"), "{stdout}");
    for (package, img) in [("cpp-proto", "el-cxx"), ("cpp-ext", "el-cxx")] {
        let (code, stdout, stderr) = run(&["explain", package, img], &args);
        assert_eq!(code, 0, "{package} on {img}: {stdout}{stderr}");
        assert!(stdout.contains("installs"), "{stdout}");
    }
    let (code, stdout, _) = run(&["syslibs"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("dnf install -y gcc-c++"), "{stdout}");

    // Removing the C++ compiler from a base that says it has a toolchain drops it, as
    // removing build-essential does on debian.
    let (_, stdout, _) = run(&["check"], &args);
    assert!(
        stdout
            .contains("el-dropped: inherits toolchain: true from `el-flagged` but removes gcc-c++"),
        "{stdout}"
    );
    let (code, stdout, _) = run(&["explain", "cpp-proto", "el-dropped"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("missing-toolchain"), "{stdout}");
}

/// A declared library may be written as the catalog's id or alias, or as a pkg-config module
/// or link name: all four find the catalog entry, so the image is told what to add.
#[test]
fn a_declared_library_is_found_by_pkg_config_module_and_link_name() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}{}{}",
        package("by-module", "libxml-2.0", "src/ext/a.c"),
        package("by-link-z", "z", "src/ext/b.c"),
        package("by-link-pq", "pq", "src/ext/c.c"),
        package("by-link-ssl", "ssl", "src/ext/d.c"),
    );
    let images = format!(
        "images:\n{}",
        image("d", "debian", "    packages: [build-essential]\n")
    );
    let args = inputs(
        dir.path(),
        &registry,
        &images,
        &["by-module", "by-link-z", "by-link-pq", "by-link-ssl"],
    );
    for (package, dev) in [
        ("by-module", "libxml2-dev"),
        ("by-link-z", "zlib1g-dev"),
        ("by-link-pq", "libpq-dev"),
        ("by-link-ssl", "libssl-dev"),
    ] {
        let (code, stdout, _) = run(&["explain", package, "d"], &args);
        assert_eq!(code, 1, "{stdout}");
        assert!(
            stdout.contains("missing-system-library"),
            "{package}: {stdout}"
        );
        assert!(
            stdout.contains(&format!("add: {dev}")),
            "{package}: {stdout}"
        );
    }
    let (code, stdout, _) = run(&["syslibs"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(
        !stdout.contains("still at risk whatever is added"),
        "{stdout}"
    );
    // Every name is known: nothing for check to say about them.
    let (_, stdout, _) = run(&["check"], &args);
    assert!(!stdout.contains("unknown-library"), "{stdout}");
}

/// A declared library the catalog does not know at all must not read better than one it
/// knows: `check` notes it at the release's record, and `syslibs` names it and exits 1
/// rather than saying "nothing missing".
#[test]
fn a_declared_library_the_catalog_does_not_know_is_reported() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}",
        package("pg-bind", "postgresql-client-lib", "src/ext/pg.c")
    );
    let images = format!(
        "images:\n{}",
        image("d", "debian", "    packages: [build-essential]\n")
    );
    let args = inputs(dir.path(), &registry, &images, &["pg-bind"]);

    let (code, stdout, _) = run(&["check"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("(unknown-library): 1"), "{stdout}");
    assert!(
        stdout.contains(
            "registry.yaml:4  pg-bind@1.0.0: declares native library `postgresql-client-lib`, which the catalog knows by no id"
        ),
        "{stdout}"
    );

    let (code, stdout, _) = run(&["syslibs"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(!stdout.contains("nothing missing"), "{stdout}");
    assert!(
        stdout.contains("no debian package known for (check the image by hand, or give them with --catalog): postgresql-client-lib [certain] (pg-bind)"),
        "{stdout}"
    );
    let (code, json, _) = run(&["syslibs", "--format", "json"], &args);
    assert_eq!(code, 1, "{json}");
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let unmapped = &v["images"][0]["unmapped_libraries"][0];
    assert_eq!(unmapped["library"], "postgresql-client-lib", "{json}");
    assert_eq!(unmapped["strongest"], "certain", "{json}");
    assert_eq!(unmapped["needed_by"][0], "pg-bind", "{json}");

    // The cell itself stays at risk, naming the library.
    let (code, stdout, _) = run(&["explain", "pg-bind", "d"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("at-risk"), "{stdout}");
    assert!(stdout.contains("postgresql-client-lib"), "{stdout}");

    // Where the cell fails for a package that can be named, the explanation says that adding
    // it alone would not do.
    let images = format!("images:\n{}", image("slim", "debian", "    packages: []\n"));
    let args = inputs(dir.path(), &registry, &images, &["pg-bind"]);
    let (code, stdout, _) = run(&["explain", "pg-bind", "slim"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(
        stdout.contains("has no C toolchain; add: build-essential; it also needs libraries the catalog has no package for on this image: postgresql-client-lib"),
        "{stdout}"
    );
}

/// A development package depends on its library's runtime package (`apt-cache depends
/// libxml2-dev`: Depends libxml2, on Debian 12; alpine and rhel from memory), so an image that
/// declares the one has the other: a prebuilt build needing only the runtime package installs.
#[test]
fn a_declared_dev_package_brings_its_runtime_package() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!("packages:\n{}", prebuilt("prebuilt-xml", "libxml2"));
    let images = format!(
        "images:\n{}{}{}{}",
        image("deb-dev", "debian", "    packages: [libxml2-dev]\n"),
        image("deb-none", "debian", "    packages: [zlib1g-dev]\n"),
        image("el-dev", "rhel", "    packages: [libxml2-devel]\n"),
        image("alp-dev", "alpine", "    packages: [libxml2-dev]\n"),
    );
    let images = images.replace(
        "  - id: alp-dev\n    runtime: 3.2.0\n    family: alpine\n    platform: linux/musl/x86_64\n",
        // The prebuilt build is for glibc; an alpine image here is made glibc to reach it.
        "  - id: alp-dev\n    runtime: 3.2.0\n    family: alpine\n    platform: linux/glibc/x86_64\n",
    );
    let args = inputs(dir.path(), &registry, &images, &["prebuilt-xml"]);
    for img in ["deb-dev", "el-dev", "alp-dev"] {
        let (code, stdout, stderr) = run(&["explain", "prebuilt-xml", img], &args);
        assert_eq!(code, 0, "{img}: {stdout}{stderr}");
        assert!(stdout.contains("installs"), "{img}: {stdout}");
    }
    // Another library's dev package brings nothing for this one.
    let (code, stdout, _) = run(&["explain", "prebuilt-xml", "deb-none"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("add: libxml2"), "{stdout}");
}

/// Debian library package names carry sonames, which change between releases: `syslibs` says
/// which release the catalog's names are for, in text and JSON, and `imageplan` carries it too.
#[test]
fn syslibs_names_the_debian_release_of_the_catalog() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}",
        package("xml-bind", "libxml2", "src/ext/x.c")
    );
    let images = format!(
        "images:\n{}",
        image("d", "debian", "    packages: [build-essential]\n")
    );
    let args = inputs(dir.path(), &registry, &images, &["xml-bind"]);
    let (code, stdout, _) = run(&["syslibs"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(
        stdout.contains("debian package names are those of Debian 12 (bookworm)"),
        "{stdout}"
    );
    let (_, json, _) = run(&["syslibs", "--format", "json"], &args);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    assert_eq!(v["debian_release"], "12 (bookworm)", "{json}");
    let (_, json, stderr) = run(&["imageplan", "--format", "json"], &args);
    let v: serde_json::Value =
        serde_json::from_str(&json).unwrap_or_else(|e| panic!("{e}: {json}{stderr}"));
    assert_eq!(v["system"]["debian_release"], "12 (bookworm)", "{json}");

    // With no debian image the line would only distract.
    let images = format!(
        "images:\n{}",
        image("a", "alpine", "    packages: [build-base]\n")
    );
    let args = inputs(dir.path(), &registry, &images, &["xml-bind"]);
    let (_, stdout, _) = run(&["syslibs"], &args);
    assert!(!stdout.contains("debian package names"), "{stdout}");
}

/// Fortran sources build only with a Fortran compiler, which no C toolchain package brings
/// (`apt-cache depends build-essential` on Debian 12 lists no gfortran; `apt-cache depends
/// gfortran-12` leads to libgfortran5): an image with `build-essential` alone is told to add
/// `gfortran`, and a review of a log whose shell could not find gfortran advises the same,
/// not a C toolchain the image already has.
#[test]
fn fortran_sources_need_a_fortran_compiler() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}",
        package("lattice-solve", "", "src/ext/solve.f90, src/ext/glue.c"),
        package("lattice-c", "", "src/ext/glue.c"),
    );
    let images = format!(
        "images:\n{}{}{}",
        image("d", "debian", "    packages: [build-essential]\n"),
        image(
            "d-fortran",
            "debian",
            "    packages: [build-essential, gfortran]\n"
        ),
        image("el", "rhel", "    packages: [gcc, gcc-c++, make]\n"),
    );
    let args = inputs(
        dir.path(),
        &registry,
        &images,
        &["lattice-solve", "lattice-c"],
    );

    let (code, stdout, _) = run(&["explain", "lattice-solve", "d"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(
        stdout.contains("ships Fortran source src/ext/solve.f90"),
        "{stdout}"
    );
    assert!(
        stdout.contains("missing system packages: gfortran\n"),
        "{stdout}"
    );
    let (code, stdout, _) = run(&["explain", "lattice-solve", "el"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(
        stdout.contains("missing system packages: gcc-gfortran\n"),
        "{stdout}"
    );
    for (package, img) in [("lattice-solve", "d-fortran"), ("lattice-c", "d")] {
        let (code, stdout, stderr) = run(&["explain", package, img], &args);
        assert_eq!(code, 0, "{package} on {img}: {stdout}{stderr}");
    }

    // The shell's own words when gfortran is not installed (bash on this machine, which has
    // no gfortran); the test makes them when it can, and otherwise uses bash's wording.
    let shell = std::process::Command::new("bash")
        .args(["-c", "gfortran -c src/ext/solve.f90"])
        .env("PATH", "/nonexistent")
        .output()
        .ok()
        .map(|o| String::from_utf8_lossy(&o.stderr).trim().to_string())
        .filter(|s| s.contains("gfortran"))
        .unwrap_or_else(|| "bash: line 1: gfortran: command not found".into());
    let results = format!(
        "results:\n  - package: lattice-solve\n    image: d\n    outcome: failed\n    log: {:?}\n",
        shell
    );
    let args = with_results(dir.path(), args, &results);
    let (_, stdout, stderr) = run(&["review"], &args);
    assert!(stdout.contains("add gfortran to d"), "{stdout}{stderr}");
    assert!(!stdout.contains("C toolchain"), "{stdout}");
    assert!(!stdout.contains("SURPRISE"), "{stdout}");
}

/// Another build of a library's development package (`libcurl4-gnutls-dev` for curl) gives a
/// source build what it needs, but not the runtime package a prebuilt build links (it links
/// another shared object); a package that pulls the development package in (`libjpeg-dev`,
/// which depends on `libjpeg62-turbo-dev`) brings both. `review` of a log missing curl's
/// header on the GnuTLS image does not advise adding the OpenSSL build, which conflicts with
/// it, but says what the image declares.
#[test]
fn packages_standing_in_for_a_dev_package_meet_what_they_bring() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}{}{}",
        package("fetch-src", "curl", "src/ext/fetch.c"),
        package("thumb-src", "libjpeg", "src/ext/thumb.c"),
        prebuilt("fetch-bin", "curl"),
        prebuilt("thumb-bin", "libjpeg"),
    );
    let images = format!(
        "images:\n{}",
        image(
            "d",
            "debian",
            "    packages: [build-essential, libcurl4-gnutls-dev, libjpeg-dev]\n"
        ),
    );
    let args = inputs(
        dir.path(),
        &registry,
        &images,
        &["fetch-src", "thumb-src", "fetch-bin", "thumb-bin"],
    );
    for package in ["fetch-src", "thumb-src", "thumb-bin"] {
        let (code, stdout, stderr) = run(&["explain", package, "d"], &args);
        assert_eq!(code, 0, "{package}: {stdout}{stderr}");
    }
    let (code, stdout, _) = run(&["explain", "fetch-bin", "d"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("add: libcurl4"), "{stdout}");

    // gcc's words for a missing header (the form the log tests take from real gcc).
    let results = "results:\n  - package: fetch-src\n    image: d\n    outcome: failed\n    log: \"src/ext/fetch.c:1:10: fatal error: curl/curl.h: No such file or directory\"\n";
    let args = with_results(dir.path(), args, results);
    let (_, stdout, stderr) = run(&["review"], &args);
    assert!(
        !stdout.contains("add libcurl4-openssl-dev"),
        "{stdout}{stderr}"
    );
    assert!(
        stdout.contains("d declares libcurl4-gnutls-dev (for libcurl4-openssl-dev)"),
        "{stdout}{stderr}"
    );
}
