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

/// `explain PACKAGE IMAGE` for each case exits with the code given and prints the text given.
fn expect_explained(args: &[String], cases: &[(&str, &str, i32, &str)]) {
    for &(package, img, code, says) in cases {
        let (got, stdout, stderr) = run(&["explain", package, img], args);
        assert_eq!(got, code, "{package} on {img}: {stdout}{stderr}");
        assert!(stdout.contains(says), "{package} on {img}: {stdout}");
    }
}

/// `explain PACKAGE full` on `registry` with one debian image `full` carrying
/// `build-essential`: asserts the exit code given and returns stdout.
fn explained_on_full(registry: &str, package: &str, code: i32) -> String {
    let dir = tempfile::tempdir().unwrap();
    let images = format!(
        "images:\n{}",
        image("full", "debian", "    packages: [build-essential]\n"),
    );
    let args = inputs(dir.path(), registry, &images, &[package]);
    let (got, stdout, stderr) = run(&["explain", package, "full"], &args);
    assert_eq!(got, code, "{stdout}{stderr}");
    stdout
}

/// Inputs in `dir` for one package shipping an Objective-C++ source (`numbat-objcpp`) and one
/// alpine image `alp` with `build-base`: a risk for a library no alpine package is known for.
fn objcpp_on_alpine(dir: &Path) -> Vec<String> {
    let registry = format!(
        "packages:\n{}",
        package("numbat-objcpp", "", "src/ext/view.mm")
    );
    let images = format!(
        "images:\n{}",
        image("alp", "alpine", "    packages: [build-base]\n")
    );
    inputs(dir, &registry, &images, &["numbat-objcpp"])
}

/// `review --format json` on `args`: a lookup of a reviewed cell by package and image.
fn reviewed_cells(args: &[String]) -> impl Fn(&str, &str) -> serde_json::Value {
    let (_, json, stderr) = run(&["review", "--format", "json"], args);
    let v: serde_json::Value =
        serde_json::from_str(&json).unwrap_or_else(|e| panic!("{e}: {json}{stderr}"));
    move |package: &str, image: &str| {
        v["cells"]
            .as_array()
            .unwrap()
            .iter()
            .find(|c| c["package"] == package && c["image"] == image)
            .unwrap_or_else(|| panic!("{package} on {image}: {v}"))
            .clone()
    }
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

/// C++ sources need g++: on RHEL that is `gcc-c++`, a package apart from `gcc`, so `gcc` and
/// `make` alone are a C compiler only, and the advice names `gcc-c++`. C sources build there;
/// a build whose sources show no language may be C++.
#[test]
fn a_rhel_toolchain_includes_the_cxx_compiler() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}{}{}{}",
        package("cpp-proto", "protobuf", "src/ext/codec.cc"),
        package("cpp-ext", "", "src/ext/hash.cpp"),
        package("c-proto", "protobuf-c", "src/ext/codec.c, src/ext/codec.h"),
        package("unsaid-proto", "protobuf-c", ""),
        package("header-proto", "protobuf-c", "include/codec.h, Makefile"),
    );
    let images = format!(
        "images:\n{}{}{}{}",
        image(
            "el-c",
            "rhel",
            "    packages: [gcc, make, protobuf-devel, protobuf-c-devel]\n"
        ),
        image(
            "el-cxx",
            "rhel",
            "    packages: [gcc, gcc-c++, make, protobuf-devel, protobuf-c-devel]\n"
        ),
        image(
            "el-flagged",
            "rhel",
            "    toolchain: true\n    packages: [gcc, gcc-c++, make, protobuf-devel, protobuf-c-devel]\n"
        ),
        "  - id: el-dropped\n    extends: el-flagged\n    remove: [gcc-c++]\n",
    );
    let args = inputs(
        dir.path(),
        &registry,
        &images,
        &[
            "cpp-proto",
            "cpp-ext",
            "c-proto",
            "unsaid-proto",
            "header-proto",
        ],
    );

    // A declared library built from a shipped C++ source: as certain as the declaration.
    let (code, stdout, _) = run(&["explain", "cpp-proto", "el-c"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("missing-toolchain"), "{stdout}");
    assert!(
        stdout.contains("has a C compiler but no C++ compiler; add: gcc-c++"),
        "{stdout}"
    );
    // A C++ source without a declaration: as likely as the native build itself.
    let (code, stdout, _) = run(&["explain", "cpp-ext", "el-c"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("at-risk"), "{stdout}");
    assert!(stdout.contains("probably needs: gcc-c++"), "{stdout}");
    // C sources build with the C compiler the image has.
    let (code, stdout, stderr) = run(&["explain", "c-proto", "el-c"], &args);
    assert_eq!(code, 0, "{stdout}{stderr}");
    assert!(stdout.contains("installs"), "{stdout}");
    // No shipped source shows the language (a `.h` header is C's and C++'s alike, a build
    // file neither's): C++ stays possible, so the cell is at risk, and the explanation says
    // "may need", as the matrix's `cxx_missing` says possible ("probably" read a guess as a
    // finding beside it; from an end-to-end review).
    for package in ["unsaid-proto", "header-proto"] {
        let (code, stdout, _) = run(&["explain", package, "el-c"], &args);
        assert_eq!(code, 1, "{stdout}");
        assert!(stdout.contains("at-risk"), "{stdout}");
        assert!(stdout.contains("may need: gcc-c++"), "{stdout}");
        assert!(!stdout.contains("probably needs"), "{stdout}");
    }
    for (package, img) in [
        ("cpp-proto", "el-cxx"),
        ("cpp-ext", "el-cxx"),
        ("unsaid-proto", "el-cxx"),
    ] {
        let (code, stdout, stderr) = run(&["explain", package, img], &args);
        assert_eq!(code, 0, "{package} on {img}: {stdout}{stderr}");
        assert!(stdout.contains("installs"), "{stdout}");
    }
    let (code, stdout, _) = run(&["syslibs"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("dnf install -y gcc-c++"), "{stdout}");

    // Removing the C++ compiler from a base that says it has a toolchain drops the C++
    // compiler and keeps the C one.
    let (_, stdout, _) = run(&["check"], &args);
    assert!(
        stdout.contains(
            "el-dropped: inherits toolchain: true from `el-flagged` but removes gcc-c++; planned with a C compiler only"
        ),
        "{stdout}"
    );
    let (code, stdout, stderr) = run(&["explain", "c-proto", "el-dropped"], &args);
    assert_eq!(code, 0, "{stdout}{stderr}");
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

/// An image with its family's C compiler packages but not the C++ compiler builds C sources,
/// is told to add the C++ compiler for C++ sources, and is shown as C-only; `toolchain: false`
/// beside those packages is noted, as beside the whole toolchain. The shell's own words when
/// g++ is not installed lead `review` to the same package.
#[test]
fn an_image_with_a_c_compiler_only_builds_c_and_is_told_to_add_the_cxx_compiler() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}",
        package("zip-c", "zlib", "src/ext/inflate.c"),
        package("zip-cxx", "zlib", "src/ext/inflate.cpp"),
    );
    let images = format!(
        "images:\n{}{}{}{}",
        image(
            "d-c",
            "debian",
            "    toolchain: false\n    packages: [gcc, make, libc6-dev, zlib1g-dev]\n"
        ),
        image(
            "d-cxx",
            "debian",
            "    packages: [gcc, g++, make, libc6-dev, zlib1g-dev]\n"
        ),
        image(
            "a-c",
            "alpine",
            "    packages: [gcc, make, musl-dev, zlib-dev]\n"
        ),
        image("d-none", "debian", "    packages: [gcc, zlib1g-dev]\n"),
    );
    let args = inputs(dir.path(), &registry, &images, &["zip-c", "zip-cxx"]);
    expect_explained(
        &args,
        &[
            ("zip-c", "d-c", 0, "installs"),
            ("zip-c", "a-c", 0, "installs"),
            ("zip-c", "d-cxx", 0, "installs"),
            ("zip-cxx", "d-cxx", 0, "installs"),
            (
                "zip-cxx",
                "d-c",
                1,
                "has a C compiler but no C++ compiler; add: g++",
            ),
            // The explanation names the package that compiles C++ and what shows it.
            (
                "zip-cxx",
                "d-c",
                1,
                "a build in the closure compiles C++ (zip-cxx: ships src/ext/inflate.cpp, a C++ source), and d-c has",
            ),
            (
                "zip-cxx",
                "a-c",
                1,
                "has a C compiler but no C++ compiler; add: g++",
            ),
            // gcc alone (no make, no C library headers) is no toolchain at all.
            (
                "zip-c",
                "d-none",
                1,
                "has no C toolchain; add: build-essential",
            ),
        ],
    );
    let (_, stdout, _) = run(&["check"], &args);
    assert!(
        stdout.contains(
            "d-c: says toolchain: false but carries gcc, make and libc6-dev; planned as having a C compiler only (no C++ compiler)"
        ),
        "{stdout}"
    );
    let (_, stdout, _) = run(&["syslibs"], &args);
    assert!(
        stdout.contains("apt-get install -y --no-install-recommends g++"),
        "{stdout}"
    );
    assert!(stdout.contains("apk add --no-cache g++"), "{stdout}");
    let out = tempfile::tempdir().unwrap();
    let out_dir = out.path().to_str().unwrap().to_string();
    let (code, _, stderr) = run(&["render", "--out", &out_dir], &args);
    assert_eq!(code, 0, "{stderr}");
    let markdown = std::fs::read_to_string(out.path().join("matrix.md")).unwrap();
    assert!(
        markdown.contains("| d-c | 3.2.0 | debian | linux/glibc/x86\\_64 | C only |"),
        "{markdown}"
    );
    assert!(
        markdown.contains("| d-cxx | 3.2.0 | debian | linux/glibc/x86\\_64 | yes |"),
        "{markdown}"
    );
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.path().join("matrix.json")).unwrap())
            .unwrap();
    assert_eq!(json["images"][0]["toolchain"], true, "{json}");
    assert_eq!(json["images"][0]["cxx"], false, "{json}");

    // bash on this machine when g++ is not on the PATH; bash's wording if bash is absent.
    let shell = std::process::Command::new("bash")
        .args(["-c", "g++ -c src/ext/inflate.cpp"])
        .env("PATH", "/nonexistent")
        .output()
        .ok()
        .map(|o| String::from_utf8_lossy(&o.stderr).trim().to_string())
        .filter(|s| s.contains("g++"))
        .unwrap_or_else(|| "bash: line 1: g++: command not found".into());
    let results = format!(
        "results:\n  - package: zip-cxx\n    image: d-c\n    outcome: failed\n    log: {shell:?}\n"
    );
    let args = with_results(dir.path(), args, &results);
    let (_, stdout, stderr) = run(&["review"], &args);
    assert!(
        stdout.contains(
            "d-c has a C compiler only, and the build needs a C++ compiler (g++): add g++"
        ),
        "{stdout}{stderr}"
    );
    assert!(stdout.contains("agreed-failure"), "{stdout}");

    // An install there says the real image has the C++ compiler: the package, not the flag.
    let args = inputs(dir.path(), &registry, &images, &["zip-c", "zip-cxx"]);
    let args = with_results(
        dir.path(),
        args,
        "results:\n  - {package: zip-cxx, image: d-c, outcome: installed, version: \"1.0.0\"}\n",
    );
    let (_, stdout, stderr) = run(&["review"], &args);
    assert!(
        stdout.contains(
            "the declaration of d-c is out of date: the real image has a C++ compiler; add g++ to its packages in the images file"
        ),
        "{stdout}{stderr}"
    );
}

/// The packages named for a C-only Debian image and the one that adds C++ are what Debian's
/// `build-essential` depends on, the C++ compiler package brings the C packages said to come
/// with it, and the C++ compiler proper (`cc1plus`) ships in the package `g++` depends on.
/// Source: Debian's archive through `apt-cache depends` and `dpkg -S` on this machine (Debian
/// 12); skipped with a message where apt or dpkg cannot say.
#[test]
fn debian_compiler_packages_match_build_essential() {
    use basefit::model::OsFamily;
    use basefit::native::{c_toolchain_packages, cxx_compiler_package};
    // The direct dependencies of all `packages` together (one apt-cache run for them all).
    let depends_all = |packages: &[String]| -> Option<Vec<String>> {
        let out = std::process::Command::new("apt-cache")
            .arg("depends")
            .args(packages)
            .output()
            .ok()?;
        let text = String::from_utf8_lossy(&out.stdout).into_owned();
        let deps: Vec<String> = text
            .lines()
            .filter_map(|l| l.trim().trim_start_matches('|').strip_prefix("Depends: "))
            .map(|d| d.trim().to_string())
            .collect();
        (out.status.success() && !deps.is_empty()).then_some(deps)
    };
    let depends = |package: &str| depends_all(&[package.to_string()]);
    let Some(essential) = depends("build-essential") else {
        eprintln!(
            "skipped debian_compiler_packages_match_build_essential: apt-cache knows no build-essential here"
        );
        return;
    };
    for p in c_toolchain_packages(OsFamily::Debian)
        .iter()
        .chain([&cxx_compiler_package(OsFamily::Debian)])
    {
        assert!(essential.iter().any(|d| d == p), "{p} not in {essential:?}");
    }
    assert!(
        !c_toolchain_packages(OsFamily::Debian).contains(&cxx_compiler_package(OsFamily::Debian))
    );
    // What the C++ compiler package brings with it: reached through its dependencies
    // (g++ -> gcc, g++ -> g++-12 -> libstdc++-12-dev -> libc6-dev on Debian 12).
    let mut reached: Vec<String> = vec![cxx_compiler_package(OsFamily::Debian).to_string()];
    let mut frontier = reached.clone();
    let brings = basefit::native::cxx_compiler_brings(OsFamily::Debian);
    for _ in 0..3 {
        if brings.iter().all(|p| reached.iter().any(|r| r == p)) {
            break;
        }
        let mut next = Vec::new();
        for d in depends_all(&frontier).unwrap_or_default() {
            if !d.starts_with('<') && !reached.contains(&d) {
                reached.push(d.clone());
                next.push(d);
            }
        }
        frontier = next;
    }
    for p in basefit::native::cxx_compiler_brings(OsFamily::Debian) {
        assert!(
            reached.iter().any(|r| r == p),
            "{p} not reached from g++: {reached:?}"
        );
    }
    // The C++ compiler proper, where the installed gcc would run it from.
    let cc1plus = std::process::Command::new("gcc")
        .arg("-print-prog-name=cc1plus")
        .output()
        .ok()
        .map(|o| String::from_utf8_lossy(&o.stdout).trim().to_string())
        .filter(|p| p.starts_with('/'));
    let owner = cc1plus.and_then(|path| {
        let out = std::process::Command::new("dpkg")
            .args(["-S", &path])
            .output()
            .ok()?;
        let text = String::from_utf8_lossy(&out.stdout).into_owned();
        out.status
            .success()
            .then(|| text.split(':').next().unwrap_or("").trim().to_string())
    });
    match (owner, depends(cxx_compiler_package(OsFamily::Debian))) {
        (Some(owner), Some(gxx)) => assert!(gxx.contains(&owner), "{owner} not in {gxx:?}"),
        _ => eprintln!(
            "skipped the cc1plus half of debian_compiler_packages_match_build_essential: no installed g++ to ask dpkg about"
        ),
    }
}

/// What an image carries of its compilers, through `extends`, by packages the C++ compiler
/// brings with it, and for builds whose build system wants C++ whatever their sources.
#[test]
fn compilers_follow_packages_bases_and_build_systems() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}{}{}",
        package("zip-c", "zlib", "src/ext/inflate.c"),
        package("zip-cxx", "zlib", "src/ext/inflate.cpp"),
        // CMake's `project()` enables C++ unless told otherwise: C sources alone do not settle
        // it.
        package("zip-cmake", "zlib", "CMakeLists.txt, src/ext/inflate.c"),
        // protobuf's interface is C++ only (the catalog's `cxx: true`): declared, it is certain.
        package("proto-bind", "protobuf", ""),
    );
    let images = format!(
        "images:\n{}{}{}{}",
        // A base that says it has a toolchain without listing every compiler package.
        image(
            "base",
            "debian",
            "    toolchain: true\n    packages: [g++, zlib1g-dev]\n"
        ),
        "  - id: no-gxx\n    extends: base\n    remove: [g++]\n",
        // g++ brings gcc and libc6-dev (apt-cache depends g++, g++-12, libstdc++-12-dev).
        image(
            "gxx-make",
            "debian",
            "    packages: [g++, make, zlib1g-dev]\n"
        ),
        image(
            "c-only",
            "debian",
            "    packages: [gcc, make, libc6-dev, zlib1g-dev]\n"
        ),
    );
    let args = inputs(
        dir.path(),
        &registry,
        &images,
        &["zip-c", "zip-cxx", "zip-cmake", "proto-bind"],
    );
    expect_explained(
        &args,
        &[
            ("zip-c", "no-gxx", 0, "installs"),
            (
                "zip-cxx",
                "no-gxx",
                1,
                "has a C compiler but no C++ compiler; add: g++",
            ),
            ("zip-cxx", "gxx-make", 0, "installs"),
            ("zip-cmake", "c-only", 1, "probably needs: g++"),
            ("zip-cmake", "gxx-make", 0, "installs"),
            (
                "proto-bind",
                "c-only",
                1,
                "has a C compiler but no C++ compiler; add: g++",
            ),
        ],
    );
    let (_, stdout, _) = run(&["check"], &args);
    assert!(
        stdout.contains(
            "no-gxx: inherits toolchain: true from `base` but removes g++; planned with a C compiler only"
        ),
        "{stdout}"
    );

    // review: on a C-only image at risk for C++ alone, a log missing make or the C compiler
    // shows another cause than the risk; a missing C++ compiler (the shell's words, or the gcc
    // driver's without cc1plus, as gcc prints it in the C locale) confirms it.
    let results = "results:
  - {package: zip-cmake, image: c-only, outcome: failed, version: \"1.0.0\", log: \"/bin/sh: 1: make: not found\"}
  - {package: zip-cmake, image: gxx-make, outcome: failed, version: \"1.0.0\", log: \"gcc: fatal error: cannot execute 'cc1plus': execvp: No such file or directory\"}
";
    let args_r = with_results(dir.path(), args.clone(), results);
    let cell = reviewed_cells(&args_r);
    let c = cell("zip-cmake", "c-only");
    assert_eq!(c["verdict"], "risk-unconfirmed", "{c}");
    assert_eq!(c["cause_agrees"], false, "{c}");
    let full = cell("zip-cmake", "gxx-make");
    assert_eq!(full["log_cause"]["tool"], "cc1plus", "{full}");
    let results = "results:
  - {package: zip-cmake, image: c-only, outcome: failed, version: \"1.0.0\", log: \"gcc: fatal error: cannot execute 'cc1plus': execvp: No such file or directory\"}
";
    let args_r = with_results(dir.path(), args, results);
    let (_, stdout, _) = run(&["review"], &args_r);
    assert!(stdout.contains("cause agrees"), "{stdout}");
    assert!(
        stdout.contains(
            "c-only has a C compiler only, and the build needs a C++ compiler (cc1plus): add g++"
        ),
        "{stdout}"
    );
}

/// A `packages` list that leaves out the base's g++ but puts it back with `add` has dropped no
/// compiler: the inherited C and C++ toolchain stays.
#[test]
fn add_keeps_a_compiler_package_a_packages_list_leaves_out() {
    use basefit::load::diag::Ledger;
    use basefit::load::images::read_images_str;
    let text = "images:\n\
  - {id: base, runtime: 3.1.5, family: debian, platform: linux/glibc/x86_64, toolchain: true, packages: [g++]}\n\
  - {id: child, extends: base, packages: [curl], add: [g++]}\n\
  - {id: quiet, extends: base, toolchain: false, remove: [g++]}\n";
    let mut ledger = Ledger::default();
    let set = read_images_str("i.yaml", text, &mut ledger).unwrap();
    let child = set.images.iter().find(|i| i.id == "child").unwrap();
    assert!(child.system_packages.contains("g++"));
    assert_eq!((child.toolchain, child.cxx), (true, true));
    // `toolchain: true` beside packages that give C only is noted: the flag, which means C++
    // too, wins.
    let text = "images:\n  - {id: flagged, runtime: 3.1.5, family: rhel, platform: linux/glibc/x86_64, toolchain: true, packages: [gcc, make]}\n";
    let mut flagged_ledger = Ledger::default();
    let flagged = read_images_str("i.yaml", text, &mut flagged_ledger).unwrap();
    assert_eq!(
        (flagged.images[0].toolchain, flagged.images[0].cxx),
        (true, true)
    );
    assert!(
        flagged_ledger.problems.iter().any(|p| p.subject == "flagged"
            && p.detail.contains("says toolchain: true, which means a C++ compiler too, but its compiler packages (gcc and make) give C only, without gcc-c++")),
        "{:#?}",
        flagged_ledger.problems
    );
    // Its own `toolchain: false` speaks for it: no note that it inherits `true`.
    let quiet = set.images.iter().find(|i| i.id == "quiet").unwrap();
    assert_eq!((quiet.toolchain, quiet.cxx), (false, false));
    assert!(
        ledger.problems.iter().all(|p| p.subject != "quiet"),
        "{:#?}",
        ledger.problems
    );
}

/// What an install or a failure on an image without the C++ compiler tells: an install of a
/// C build on an image declared with no compiler shows a C compiler, not the C++ one that
/// `toolchain: true` or build-essential would claim; on a C-only image, a missing C compiler
/// or make is another cause than the C++ compiler the plan found missing, and a missing C++
/// compiler confirms a failure whose missing packages include it.
#[test]
fn installs_and_failures_tell_c_from_cxx() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}{}",
        package("zip-c", "zlib", "src/ext/inflate.c"),
        package("zip-cxx", "zlib", "src/ext/inflate.cpp"),
        // libpq is declared (certain, and missing), C++ only likely (a CMake build).
        package("pq-cxx", "libpq", "CMakeLists.txt, src/ext/query.c"),
    );
    let images = format!(
        "images:\n{}{}",
        image("bare", "debian", "    packages: [zlib1g-dev]\n"),
        image(
            "c-only",
            "debian",
            "    packages: [gcc, make, libc6-dev, zlib1g-dev]\n"
        ),
    );
    let args = inputs(
        dir.path(),
        &registry,
        &images,
        &["zip-c", "zip-cxx", "pq-cxx"],
    );
    let results = "results:
  - {package: zip-c, image: bare, outcome: installed, version: \"1.0.0\"}
  - {package: zip-cxx, image: bare, outcome: installed, version: \"1.0.0\"}
  - {package: zip-cxx, image: c-only, outcome: failed, version: \"1.0.0\", log: \"/bin/sh: 1: make: not found\"}
  - {package: pq-cxx, image: c-only, outcome: failed, version: \"1.0.0\", log: \"gcc: fatal error: cannot execute 'cc1plus': execvp: No such file or directory\"}
";
    let args = with_results(dir.path(), args, results);
    let cell = reviewed_cells(&args);
    let s = cell("zip-c", "bare")["suggestion"]
        .as_str()
        .unwrap()
        .to_string();
    assert!(
        s.ends_with("the real image has gcc libc6-dev make, a C compiler among them; add them to its packages in the images file (not toolchain: true, which says it compiles C++ too)"),
        "{s}"
    );
    let s = cell("zip-cxx", "bare")["suggestion"]
        .as_str()
        .unwrap()
        .to_string();
    assert!(
        s.ends_with("the real image has a C and C++ toolchain; set toolchain: true on it"),
        "{s}"
    );
    let c = cell("zip-cxx", "c-only");
    assert_eq!(c["verdict"], "agreed-failure", "{c}");
    assert_eq!(c["cause_agrees"], false, "{c}");
    let c = cell("pq-cxx", "c-only");
    assert_eq!(c["predicted_cause"], "missing-system-library", "{c}");
    assert_eq!(c["cause_agrees"], true, "{c}");
}

/// GMP's C++ interface (`gmpxx.h`, `-lgmpxx`) compiles C++, though the same development
/// package ships it beside the C one: a build declaring it is told to add g++ on an image with
/// a C compiler only, and one declaring plain GMP is not. Before, both were one catalog entry
/// without the C++ mark, and the C++ build was predicted to install there. Debian 12 ships
/// `gmpxx.h` in libgmp-dev and `libgmpxx.so.4` in libgmpxx4ldbl (the archive extract under
/// tests/data/debian-archive, which `tests/native_catalog.rs` checks the entries against).
#[test]
fn gmp_s_cxx_interface_needs_the_cxx_compiler() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}{}",
        package("bigfrac", "gmpxx", ""),
        package("bigint-c", "gmp", "src/ext/big.c"),
        package("bigfrac-link", "libgmpxx", "src/ext/frac.c"),
    );
    let images = format!(
        "images:\n{}",
        image(
            "d-c",
            "debian",
            "    packages: [gcc, make, libc6-dev, libgmp-dev]\n"
        ),
    );
    let args = inputs(
        dir.path(),
        &registry,
        &images,
        &["bigfrac", "bigint-c", "bigfrac-link"],
    );
    expect_explained(
        &args,
        &[
            ("bigfrac", "d-c", 1, "g++"),
            ("bigfrac-link", "d-c", 1, "g++"),
            ("bigint-c", "d-c", 0, ""),
        ],
    );
}

/// Objective-C (`.m`) and Objective-C++ (`.mm`) sources build only with compilers that no C or
/// C++ toolchain package brings: the gcc driver runs `cc1obj` and `cc1objplus` for them, and
/// on this project's machine, which has gcc and g++ but not gobjc, `gcc -c x.m` fails for
/// want of `cc1obj` (the test makes those messages for real when gcc lacks them, and skips
/// that part with a message otherwise). Before basefit knew them, an image with
/// `build-essential` was predicted to build both. Debian's package names are checked with
/// `apt-cache depends` where apt knows them (Debian's archive: gobjc -> gobjc-12 ->
/// libobjc-12-dev -> libobjc4; gobjc++-12 -> gobjc-12 and g++-12); rhel's are from memory.
#[test]
fn objective_c_sources_need_the_objective_c_compilers() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}",
        package(
            "glyph-view",
            "",
            "src/ext/view.m, src/ext/draw.m, src/ext/glue.c"
        ),
        package("glyph-bridge", "", "src/ext/bridge.mm"),
    );
    let images = format!(
        "images:\n{}{}{}{}",
        image("d", "debian", "    packages: [build-essential]\n"),
        image(
            "d-objc",
            "debian",
            "    packages: [build-essential, gobjc, gobjc++]\n"
        ),
        image("el", "rhel", "    packages: [gcc, gcc-c++, make]\n"),
        image("al", "alpine", "    packages: [build-base]\n"),
    );
    let args = inputs(
        dir.path(),
        &registry,
        &images,
        &["glyph-view", "glyph-bridge"],
    );
    expect_explained(
        &args,
        &[
            (
                "glyph-view",
                "d",
                1,
                "ships Objective-C source src/ext/view.m and 1 more",
            ),
            ("glyph-view", "d", 1, "missing system packages: gobjc\n"),
            (
                "glyph-bridge",
                "d",
                1,
                "ships Objective-C++ source src/ext/bridge.mm",
            ),
            ("glyph-bridge", "d", 1, "missing system packages: gobjc++\n"),
            ("glyph-view", "el", 1, "missing system packages: gcc-objc\n"),
            (
                "glyph-bridge",
                "el",
                1,
                "missing system packages: gcc-objc++\n",
            ),
            ("glyph-view", "d-objc", 0, ""),
            ("glyph-bridge", "d-objc", 0, ""),
        ],
    );
    // No Alpine package for Objective-C++ is known: the cell is not called installing.
    let (code, stdout, _) = run(&["explain", "glyph-bridge", "al"], &args);
    assert_ne!(code, 0, "{stdout}");
    assert!(stdout.contains("gobjc++"), "{stdout}");

    // The gcc driver's own words, in this machine's locale, for each source.
    let src = dir.path().join("src");
    std::fs::create_dir_all(&src).unwrap();
    let mut logs: Vec<(&str, String)> = Vec::new();
    for (package, file, proper) in [
        ("glyph-view", "view.m", "cc1obj"),
        ("glyph-bridge", "bridge.mm", "cc1objplus"),
    ] {
        std::fs::write(src.join(file), "int main(void) { return 0; }\n").unwrap();
        let out = std::process::Command::new("gcc")
            .args(["-c", file])
            .current_dir(&src)
            .output();
        match out {
            Ok(o) if !o.status.success() => {
                let text = String::from_utf8_lossy(&o.stderr).trim().to_string();
                assert!(text.contains(proper), "gcc -c {file}: {text}");
                logs.push((package, text));
            }
            _ => eprintln!("skipped gcc -c {file}: gcc is missing or has {proper} here"),
        }
    }
    if !logs.is_empty() {
        let results: String = logs
            .iter()
            .map(|(package, log)| {
                format!(
                    "  - package: {package}\n    image: d\n    outcome: failed\n    log: {log:?}\n"
                )
            })
            .collect();
        let args = with_results(dir.path(), args.clone(), &format!("results:\n{results}"));
        let (_, stdout, stderr) = run(&["review"], &args);
        for (package, _) in &logs {
            let add = if *package == "glyph-view" {
                "add gobjc to d (missing Objective-C compiler cc1obj)"
            } else {
                "add gobjc++ to d (missing Objective-C++ compiler cc1objplus)"
            };
            assert!(stdout.contains(add), "{stdout}{stderr}");
        }
        assert!(!stdout.contains("C toolchain"), "{stdout}");
        assert!(!stdout.contains("SURPRISE"), "{stdout}");
        let cell = reviewed_cells(&args);
        // Shipped sources make the need likely, not certain: the log confirms the risk.
        for (package, _) in &logs {
            let c = cell(package, "d");
            assert_eq!(c["verdict"], "risk-confirmed", "{c}");
        }
    }

    // Debian's chain, where apt knows it.
    let depends = |package: &str| -> Option<String> {
        let out = std::process::Command::new("apt-cache")
            .args(["depends", package])
            .output()
            .ok()?;
        let text = String::from_utf8_lossy(&out.stdout).to_string();
        (out.status.success() && text.contains("Depends:")).then_some(text)
    };
    match depends("gobjc") {
        None => eprintln!("skipped the Debian chain: apt-cache knows no gobjc here"),
        Some(gobjc) => {
            let versioned = gobjc
                .lines()
                .filter_map(|l| l.trim().strip_prefix("Depends: "))
                .find(|d| d.starts_with("gobjc-"))
                .unwrap_or_else(|| panic!("gobjc depends on no gobjc-N: {gobjc}"))
                .to_string();
            let compiler = depends(&versioned).unwrap();
            let dev = compiler
                .lines()
                .filter_map(|l| l.trim().strip_prefix("Depends: "))
                .find(|d| d.starts_with("libobjc-"))
                .unwrap_or_else(|| panic!("{versioned} depends on no libobjc-N-dev: {compiler}"))
                .to_string();
            assert!(
                depends(&dev).unwrap().contains("Depends: libobjc4"),
                "{dev}"
            );
            let plus = depends(&format!("gobjc++-{}", &versioned["gobjc-".len()..])).unwrap();
            assert!(plus.contains(&format!("Depends: {versioned}")), "{plus}");
            assert!(plus.contains("Depends: g++-"), "{plus}");
        }
    }
}

/// An image that extends a base with a C compiler only, giving no flag and no packages of its
/// own, has a C compiler only too: a C++ build is at risk on it as on its base (from a
/// mutation review, where passing the base's toolchain flag on for C++ as well survived).
#[test]
fn an_image_extending_a_c_only_base_stays_c_only() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}",
        package("hashcraft", "", "src/ext/hash.cpp")
    );
    let images = format!(
        "images:\n{}  - id: el-child\n    extends: el-c\n",
        image("el-c", "rhel", "    packages: [gcc, make]\n"),
    );
    let args = inputs(dir.path(), &registry, &images, &["hashcraft"]);
    for img in ["el-c", "el-child"] {
        let (code, stdout, stderr) = run(&["explain", "hashcraft", img], &args);
        assert_eq!(code, 1, "{img}: {stdout}{stderr}");
        assert!(stdout.contains("gcc-c++"), "{img}: {stdout}");
    }
}

/// An at-risk cell that may need the C++ compiler says which closure package and why, so the
/// reader need not search the closure: a dependency shipping a `CMakeLists.txt` (whose build
/// likely enables C++) below an entry that ships nothing native.
#[test]
fn a_cxx_need_names_the_package_that_has_it() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n  - name: meshview\n    versions:\n      - version: \"1.0.0\"\n        depends: [{{name: meshcore}}]\n{}",
        package("meshcore", "", "CMakeLists.txt, src/mesh.c"),
    );
    let images = format!(
        "images:\n{}",
        image("d-c", "debian", "    packages: [gcc, make, libc6-dev]\n"),
    );
    let args = inputs(dir.path(), &registry, &images, &["meshview"]);
    let (code, stdout, _) = run(&["explain", "meshview", "d-c"], &args);
    assert_eq!(code, 1, "{stdout}");
    assert!(
        stdout.contains(
            "probably needs: g++; the C++ compiler for meshcore: ships CMakeLists.txt, whose build enables C++"
        ),
        "{stdout}"
    );
}

/// A cell predicted to fail for want of the C++ compiler whose log misses the Fortran compiler
/// agrees only when the image lacks gfortran: where the image declares it, the missing
/// gfortran is another cause (the image is not as declared), and calling it "cause agrees"
/// would hide a wrong image declaration behind a confirmed prediction (from a mutation review,
/// where every missing compiler on such a cell was judged another cause).
#[test]
fn a_missing_fortran_compiler_on_a_cxx_cell_agrees_only_where_the_image_lacks_it() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}",
        package("bilby-num", "zlib", "src/ext/solve.cpp, src/ext/solve.f90")
    );
    let images = format!(
        "images:\n{}{}",
        image(
            "c-fort",
            "debian",
            "    packages: [gcc, make, libc6-dev, zlib1g-dev, gfortran]\n"
        ),
        image(
            "c-only",
            "debian",
            "    packages: [gcc, make, libc6-dev, zlib1g-dev]\n"
        ),
    );
    let args = inputs(dir.path(), &registry, &images, &["bilby-num"]);
    let args = with_results(
        dir.path(),
        args,
        "results:
  - {package: bilby-num, image: c-fort, outcome: failed, log: \"bash: line 1: gfortran: command not found\"}
  - {package: bilby-num, image: c-only, outcome: failed, log: \"bash: line 1: gfortran: command not found\"}
",
    );
    let cells = reviewed_cells(&args);
    for img in ["c-fort", "c-only"] {
        let cell = cells("bilby-num", img);
        assert_eq!(cell["verdict"], "agreed-failure", "{cell}");
        assert_eq!(cell["predicted_cause"], "missing-toolchain", "{cell}");
    }
    let declared = cells("bilby-num", "c-fort");
    assert_eq!(declared["cause_agrees"], false, "{declared}");
    let lacking = cells("bilby-num", "c-only");
    assert_eq!(lacking["cause_agrees"], true, "{lacking}");
}

/// A `.m` file beside another native file (a `.c` source) is Objective-C, not a MATLAB script:
/// its gobjc need is likely, as for any catalog compiler whose release ships more native
/// files. Lowered to "possible", the need reads as a guess and the cell as a coin toss (from a
/// mutation review, where only a lone `.m` file was tested).
#[test]
fn a_m_file_beside_a_c_source_is_a_likely_objective_c_need() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}",
        package("lyrebird-view", "", "src/ext/view.m, src/ext/glue.c")
    );
    let images = format!(
        "images:\n{}",
        image("d-c", "debian", "    packages: [gcc, make, libc6-dev]\n"),
    );
    let args = inputs(dir.path(), &registry, &images, &["lyrebird-view"]);
    let (_, stdout, stderr) = run(&["explain", "lyrebird-view", "d-c"], &args);
    assert!(
        stdout
            .contains("gobjc [likely] via lyrebird-view: ships Objective-C source src/ext/view.m"),
        "{stdout}{stderr}"
    );
    assert!(!stdout.contains("gobjc [possible]"), "{stdout}");
}

/// A release shipping only Fortran (or only Objective-C) sources shows its language: on a
/// C-only image that has the compiler it needs it installs, and no C++ compiler is asked for.
/// Read as "shows no source", it was predicted at risk with advice to add g++ it does not need
/// (from a mutation review).
#[test]
fn fortran_or_objective_c_sources_alone_ask_for_no_cxx_compiler() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}",
        package("bandicoot-fort", "zlib", "src/ext/solve.f90"),
        package("bandicoot-objc", "zlib", "src/ext/view.m"),
    );
    let images = format!(
        "images:\n{}",
        image(
            "d-c",
            "debian",
            "    packages: [gcc, make, libc6-dev, zlib1g-dev, gfortran, gobjc]\n"
        ),
    );
    let args = inputs(
        dir.path(),
        &registry,
        &images,
        &["bandicoot-fort", "bandicoot-objc"],
    );
    for package in ["bandicoot-fort", "bandicoot-objc"] {
        let (code, stdout, stderr) = run(&["explain", package, "d-c"], &args);
        assert_eq!(code, 0, "{package}: {stdout}{stderr}");
        assert!(
            stdout.contains(&format!("{package} on d-c: installs (1.0.0)")),
            "{stdout}"
        );
        assert!(!stdout.contains("g++"), "{package}: {stdout}");
    }
}

/// When several closure packages may need the C++ compiler, the explanation names the
/// strongest need first: here `zzz-cpp` ships a `.cpp` (certain) while `aaa-bind`, which sorts
/// first by name, only shows no source (possible). Naming the weaker one explains a certain
/// failure by a guess (from a mutation review: both sorting weakest first and naming the last
/// need survived).
#[test]
fn a_cxx_explanation_names_the_strongest_need_first() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n  - name: possum-app\n    versions:\n      - version: \"1.0.0\"\n        depends: [{{name: aaa-bind}}, {{name: zzz-cpp}}]\n{}{}",
        package("aaa-bind", "zlib", ""),
        package("zzz-cpp", "zlib", "src/ext/x.cpp"),
    );
    let images = format!(
        "images:\n{}",
        image(
            "d-c",
            "debian",
            "    packages: [gcc, make, libc6-dev, zlib1g-dev]\n"
        ),
    );
    let args = inputs(dir.path(), &registry, &images, &["possum-app"]);
    let (code, stdout, stderr) = run(&["explain", "possum-app", "d-c"], &args);
    assert_eq!(code, 1, "{stdout}{stderr}");
    assert!(
        stdout.contains(
            "a build in the closure compiles C++ (zzz-cpp: ships src/ext/x.cpp, a C++ source; and 1 more)"
        ),
        "{stdout}"
    );
    assert!(!stdout.contains("(aaa-bind:"), "{stdout}");
}

/// A release needing two libraries whose interface is C++ is judged by the stronger need:
/// `gmpxx` declared (certain) beats protobuf seen from a header (likely), so on a C-only image
/// it fails for want of the C++ compiler and says so by gmpxx. Taking the weaker need turns a
/// certain failure into "at-risk" and names the guess (from a mutation review).
#[test]
fn the_strongest_cxx_interface_library_decides_the_cxx_need() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}",
        package(
            "cassowary-math",
            "gmpxx",
            "include/google/protobuf/message.h"
        )
    );
    let images = format!(
        "images:\n{}",
        image(
            "d-c",
            "debian",
            "    packages: [gcc, make, libc6-dev, libgmp-dev, libgmpxx4ldbl, libprotobuf-dev]\n"
        ),
    );
    let args = inputs(dir.path(), &registry, &images, &["cassowary-math"]);
    let (code, stdout, stderr) = run(&["explain", "cassowary-math", "d-c"], &args);
    assert_eq!(code, 1, "{stdout}{stderr}");
    assert!(
        stdout.contains("cassowary-math on d-c: fails (1.0.0), missing-toolchain"),
        "{stdout}"
    );
    assert!(
        stdout.contains("(cassowary-math: needs gmpxx, whose interface is C++)"),
        "{stdout}"
    );
}

/// gcc reads `.M` as Objective-C++ and `.mi`/`.mii` as preprocessed Objective-C and C++
/// (`gcc -c x.M` on this project's machine names `cc1objplus`, `x.mi` names `cc1obj`): such a
/// release is a native build needing those compilers, where `.M` once gave no evidence at all
/// and was predicted to install on an image without a compiler. A release whose only native
/// files are `.m` ones may be shipping MATLAB or Octave scripts: its Objective-C need is only
/// possible (both from a review of this session's changes).
#[test]
fn objective_c_endings_and_lone_m_files() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}{}",
        package("numbat-upper", "", "src/ext/view.M"),
        package("numbat-pre", "", "src/ext/view.mi"),
        package("bandicoot-plot", "", "lib/plot.ql, examples/octave/plot.m"),
    );
    let images = format!(
        "images:\n{}{}",
        image(
            "slim",
            "debian",
            "    toolchain: false\n    packages: [ca-certificates]\n"
        ),
        image("full", "debian", "    packages: [build-essential]\n"),
    );
    let args = inputs(
        dir.path(),
        &registry,
        &images,
        &["numbat-upper", "numbat-pre", "bandicoot-plot"],
    );
    expect_explained(
        &args,
        &[
            ("numbat-upper", "slim", 1, "build-essential"),
            ("numbat-upper", "full", 1, "probably needs: gobjc++"),
            ("numbat-pre", "full", 1, "probably needs: gobjc"),
            (
                "bandicoot-plot",
                "full",
                1,
                "gobjc [possible] via bandicoot-plot: ships Objective-C source examples/octave/plot.m",
            ),
        ],
    );
    // The real gcc driver agrees on which compiler proper each ending needs.
    let src = dir.path().join("src");
    std::fs::create_dir_all(&src).unwrap();
    for (file, proper) in [("y.M", "cc1objplus"), ("w.mi", "cc1obj")] {
        std::fs::write(src.join(file), "int main(void) { return 0; }\n").unwrap();
        match std::process::Command::new("gcc")
            .args(["-c", file])
            .current_dir(&src)
            .output()
        {
            Ok(o) if !o.status.success() => {
                let text = String::from_utf8_lossy(&o.stderr).to_string();
                assert!(text.contains(proper), "gcc -c {file}: {text}");
            }
            _ => eprintln!("skipped gcc -c {file}: gcc is missing or has {proper} here"),
        }
    }
}

/// Debian's multiarch form of the image's own architecture names the same package:
/// `libxml2-dev:amd64` and `gcc:amd64` on an x86_64 image meet the needs `libxml2-dev` and
/// `gcc` meet (they once met none, and the image was told to add what it had); another
/// architecture's package (`libxml2-dev:i386`) is another package; and `:arch` on a family
/// that has no such form leaves the image out (from a review of this session's changes).
#[test]
fn multiarch_names_of_the_image_s_architecture_count() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}",
        package("dingo-xml", "libxml2", "src/ext/a.c")
    );
    let images = format!(
        "images:\n{}{}{}{}",
        image(
            "deb",
            "debian",
            "    packages: [build-essential, \"libxml2-dev:amd64\"]\n"
        ),
        image(
            "deb-tc",
            "debian",
            "    packages: [\"gcc:amd64\", \"g++:amd64\", \"make:any\", \"libc6-dev:amd64\", libxml2-dev]\n"
        ),
        image(
            "deb-foreign",
            "debian",
            "    packages: [build-essential, \"libxml2-dev:i386\"]\n"
        ),
        image(
            "alp",
            "alpine",
            "    packages: [build-base, \"libxml2-dev:x86_64\"]\n"
        ),
    );
    let args = inputs(dir.path(), &registry, &images, &["dingo-xml"]);
    expect_explained(
        &args,
        &[
            ("dingo-xml", "deb", 0, "installs"),
            ("dingo-xml", "deb-tc", 0, "installs"),
            ("dingo-xml", "deb-foreign", 1, "add: libxml2-dev"),
        ],
    );
    let (_, stdout, _) = run(&["check"], &args);
    assert!(
        stdout.contains(
            "alp: package `libxml2-dev:x86_64`: `:arch` qualifies Debian package names only"
        ),
        "{stdout}"
    );
}

/// An extending image may remove a package by the multiarch name of its own architecture
/// (`libxml2-dev:amd64`, `libxml2-dev:any`): it then lacks that package, while removing another
/// architecture's package it never had is refused. Matching the raw `name:arch` left such a
/// valid image out, and every prediction for it with it (from a mutation review).
#[test]
fn removing_a_package_by_its_multiarch_name_removes_it() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}",
        package("dingo-xml", "libxml2", "src/ext/a.c")
    );
    let images = format!(
        "images:\n{}  - id: child\n    extends: base\n    remove: [\"libxml2-dev:amd64\"]\n  - id: child-any\n    extends: base\n    remove: [\"libxml2-dev:any\"]\n  - id: child-arm\n    extends: base\n    remove: [\"libxml2-dev:arm64\"]\n",
        image(
            "base",
            "debian",
            "    packages: [build-essential, libxml2-dev]\n"
        ),
    );
    let args = inputs(dir.path(), &registry, &images, &["dingo-xml"]);
    expect_explained(
        &args,
        &[
            ("dingo-xml", "base", 0, "installs"),
            ("dingo-xml", "child", 1, "add: libxml2-dev"),
            ("dingo-xml", "child-any", 1, "add: libxml2-dev"),
        ],
    );
    let (_, stdout, stderr) = run(&["check"], &args);
    assert!(
        stdout.contains("child-arm: removes `libxml2-dev:arm64`, which it does not have"),
        "{stdout}{stderr}"
    );
    assert!(!stdout.contains("child: removes"), "{stdout}");
    assert!(!stdout.contains("child-any: removes"), "{stdout}");
}

/// The `:arch` part of a package name is validated like the name: `libfoo:amd 64` (a list
/// written as one text, or a typo) is refused with the reason, not taken as one more package
/// the image lacks, which would silently skew every prediction for it (from a mutation review).
#[test]
fn a_package_with_a_malformed_arch_part_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}",
        package("dingo-xml", "libxml2", "src/ext/a.c")
    );
    let images = format!(
        "images:\n{}  - id: odd\n    extends: base\n    add: [\"libfoo:amd 64\"]\n",
        image("base", "debian", "    packages: [build-essential]\n"),
    );
    let args = inputs(dir.path(), &registry, &images, &["dingo-xml"]);
    let (code, stdout, stderr) = run(&["check"], &args);
    assert_eq!(code, 2, "{stdout}{stderr}");
    assert!(
        stderr.contains("`libfoo:amd 64` is not a system package name"),
        "{stderr}"
    );
}

/// A risk for a library the catalog names no package for on the image's family is confirmed
/// by a log missing that library: Objective-C++ on alpine, for which no package is known,
/// and CMake's missing Objective-C++ compiler (from a review of this session's changes,
/// where the cause was left unsettled).
#[test]
fn a_risk_for_an_unmapped_library_is_confirmed_by_its_log() {
    let dir = tempfile::tempdir().unwrap();
    let args = objcpp_on_alpine(dir.path());
    let args = with_results(
        dir.path(),
        args,
        "results:\n  - {package: numbat-objcpp, image: alp, outcome: failed, log: \"No CMAKE_OBJCXX_COMPILER could be found.\"}\n",
    );
    let cell = reviewed_cells(&args)("numbat-objcpp", "alp");
    assert_eq!(cell["verdict"], "risk-confirmed", "{cell}");
    assert_eq!(cell["cause_agrees"], true, "{cell}");
}

/// A cell at risk for a library no package of its family ships (Objective-C++ on alpine)
/// that failed without a log says what it was at risk for all the same: its native build,
/// not an empty list (from a mutation review of src/verify/compare.rs, where the empty list
/// survived).
#[test]
fn an_unconfirmed_risk_with_no_package_to_name_names_the_native_build() {
    let dir = tempfile::tempdir().unwrap();
    let args = objcpp_on_alpine(dir.path());
    let args = with_results(
        dir.path(),
        args,
        "results:\n  - {package: numbat-objcpp, image: alp, outcome: failed}\n",
    );
    let cell = reviewed_cells(&args)("numbat-objcpp", "alp");
    assert_eq!(cell["verdict"], "risk-unconfirmed", "{cell}");
    assert_eq!(cell["missing_system_packages"], serde_json::Value::Null);
    assert_eq!(
        cell["suggestion"],
        "no log was recorded, so nothing shows whether it failed for what it was at risk for (its native build): record the install's log",
        "{cell}"
    );
}

/// A surprise install on an image declared without (enough of) a compiler proves the real image
/// has the libraries the release certainly needs too: the advice names them beside the
/// compiler, or the next plan predicts the failure again for the library (an end-to-end review
/// of the gate found `libprotobuf-dev` left out when the missing compiler was C++).
#[test]
fn surprise_install_advice_names_the_libraries_beside_the_compiler() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}",
        package("wire-proto", "protobuf", "src/ext/wire.c")
    );
    let images = format!(
        "images:\n{}{}",
        image("d-c", "debian", "    packages: [gcc, make, libc6-dev]\n"),
        image(
            "bare",
            "debian",
            "    toolchain: false\n    packages: [ca-certificates]\n"
        ),
    );
    let args = inputs(dir.path(), &registry, &images, &["wire-proto"]);
    let args = with_results(
        dir.path(),
        args,
        "results:\n  - {package: wire-proto, image: d-c, outcome: installed, version: \"1.0.0\"}\n  - {package: wire-proto, image: bare, outcome: installed, version: \"1.0.0\"}\n",
    );
    let cells = reviewed_cells(&args);
    let on_c = cells("wire-proto", "d-c");
    assert_eq!(on_c["verdict"], "surprise-install", "{on_c}");
    assert!(
        on_c["suggestion"]
            .as_str()
            .unwrap()
            .contains("the real image has a C++ compiler; add g++ libprotobuf-dev to its packages"),
        "{on_c}"
    );
    let bare = cells("wire-proto", "bare");
    assert!(
        bare["suggestion"]
            .as_str()
            .unwrap()
            .contains("set toolchain: true on it, and add libprotobuf-dev to its packages"),
        "{bare}"
    );
}

/// An install of a C++ build that the plan found missing both the toolchain and a library
/// proves the real image has a C and C++ toolchain and the library: the advice sets
/// `toolchain: true` and adds the library, and does not call it a C compiler only (which is
/// advice for builds that compile no C++).
#[test]
fn an_install_of_a_cxx_build_needing_a_library_asks_for_the_toolchain_and_the_library() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}",
        package("zip-cxx", "zlib", "src/ext/inflate.cpp")
    );
    let images = format!("images:\n{}", image("bare", "debian", ""));
    let args = inputs(dir.path(), &registry, &images, &["zip-cxx"]);
    let results =
        "results:\n  - {package: zip-cxx, image: bare, outcome: installed, version: \"1.0.0\"}\n";
    let args = with_results(dir.path(), args, results);
    let cell = reviewed_cells(&args);
    let c = cell("zip-cxx", "bare");
    assert_eq!(c["verdict"], "surprise-install", "{c}");
    let s = c["suggestion"].as_str().unwrap();
    assert!(
        s.ends_with("the real image has a C and C++ toolchain; set toolchain: true on it, and add zlib1g-dev to its packages"),
        "{s}"
    );
}
/// Assembly sources (`.s`, and `.S`, which gcc preprocesses) and C++ sources ending in `.cxx`
/// are native sources (common practice, no source): a source build shipping only one of them
/// likely needs a toolchain, so an image without one is told to add it. Guards the endings
/// `.cxx`, `.s` and `.S` of the native source list (mutation testing: dropping any of them
/// let such a release install on an image without a compiler).
#[test]
fn cxx_and_assembly_sources_alone_show_a_native_build() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}{}",
        package("quoll-cxx", "", "src/ext/core.cxx"),
        package("quoll-asm", "", "src/ext/crc.s"),
        package("quoll-cpp-asm", "", "src/ext/crc.S"),
    );
    let images = format!(
        "images:\n{}{}",
        image(
            "slim",
            "debian",
            "    toolchain: false\n    packages: [ca-certificates]\n"
        ),
        image("full", "debian", "    packages: [build-essential]\n"),
    );
    let args = inputs(
        dir.path(),
        &registry,
        &images,
        &["quoll-cxx", "quoll-asm", "quoll-cpp-asm"],
    );
    expect_explained(
        &args,
        &[
            ("quoll-cxx", "slim", 1, "build-essential"),
            ("quoll-asm", "slim", 1, "build-essential"),
            ("quoll-cpp-asm", "slim", 1, "build-essential"),
            ("quoll-cxx", "full", 0, "installs"),
            ("quoll-asm", "full", 0, "installs"),
        ],
    );
    let (_, stdout, _) = run(&["explain", "quoll-cpp-asm", "slim"], &args);
    assert!(stdout.contains("ships src/ext/crc.S"), "{stdout}");
}

/// A `.hpp` header is C++'s (common practice, no source): a source build declaring zlib and
/// shipping only `include/core.hpp` needs a C++ compiler, so an image with a C compiler only is
/// told to add `g++` (Debian's C++ compiler package, as in the tests above), naming the header.
/// Guards `.hpp` in the C++ endings (mutation testing: without it the header read as a known
/// non-C++ source, and the C-only image was told it lacked nothing).
#[test]
fn an_hpp_header_alone_needs_the_cxx_compiler() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}",
        package("wombat-hpp", "zlib", "include/core.hpp")
    );
    let images = format!(
        "images:\n{}",
        image(
            "d-c",
            "debian",
            "    toolchain: false\n    packages: [gcc, make, libc6-dev, zlib1g-dev]\n"
        ),
    );
    let args = inputs(dir.path(), &registry, &images, &["wombat-hpp"]);
    let (code, stdout, stderr) = run(&["explain", "wombat-hpp", "d-c"], &args);
    assert_eq!(code, 1, "{stdout}{stderr}");
    assert!(
        stdout.contains("has a C compiler but no C++ compiler; add: g++"),
        "{stdout}"
    );
    assert!(
        stdout.contains("ships include/core.hpp, a C++ source"),
        "{stdout}"
    );
}

/// A shipped pkg-config file of a catalog module (`lib/pkgconfig/libzstd.pc`, module
/// `libzstd` of the catalog's libzstd entry, Debian's `libzstd-dev` as in the catalog's
/// archive extract) is likely evidence of that library: with no other native file, the release
/// still needs `libzstd-dev` on an image with a toolchain. Guards the `.pc` lookup (mutation
/// testing: skipping it let the release install).
#[test]
fn a_shipped_pkg_config_file_names_its_library() {
    let registry = format!(
        "packages:\n{}",
        package("numbat-zst", "", "lib/pkgconfig/libzstd.pc")
    );
    let stdout = explained_on_full(&registry, "numbat-zst", 1);
    assert!(stdout.contains("libzstd-dev"), "{stdout}");
    assert!(
        stdout.contains("naming pkg-config module libzstd"),
        "{stdout}"
    );
}

/// A dependency on a package a user catalog lists under `native_helpers` (not marked
/// `native_helper` in the registry) is likely evidence of a native build: on an image without
/// a toolchain the dependent is told to add `build-essential`, naming the helper. Guards the
/// catalog's helper list (mutation testing: reading only the registry's flag let it install).
#[test]
fn a_dependency_on_a_catalog_native_helper_needs_a_toolchain() {
    let dir = tempfile::tempdir().unwrap();
    let registry = "packages:\n  - name: forgewright\n    versions:\n      - version: \"1.0.0\"\n  - name: kettle-ext\n    versions:\n      - version: \"1.0.0\"\n        depends:\n          - {name: forgewright, req: \"^1\"}\n";
    let images = format!(
        "images:\n{}",
        image(
            "slim",
            "debian",
            "    toolchain: false\n    packages: [ca-certificates]\n"
        ),
    );
    let mut args = inputs(dir.path(), registry, &images, &["kettle-ext"]);
    let catalog = write(
        dir.path(),
        "catalog.yaml",
        "native_helpers: [forgewright]\nlibraries: []\n",
    );
    args.extend([
        "--catalog".to_string(),
        catalog.to_str().unwrap().to_string(),
    ]);
    let (code, stdout, stderr) = run(&["explain", "kettle-ext", "slim"], &args);
    assert_eq!(code, 1, "{stdout}{stderr}");
    assert!(stdout.contains("build-essential"), "{stdout}");
    assert!(
        stdout.contains("depends on native-build helper forgewright"),
        "{stdout}"
    );
}

/// A library named in a summary is found whatever the case it is written in: "LibXML2"
/// mentions the catalog's libxml2, a possible need. Guards the lower-casing of name and
/// summary words (mutation testing: without it the mention was missed and nothing was needed).
#[test]
fn a_summary_mentions_a_library_in_any_case() {
    let registry = "packages:\n  - name: bilby-docs\n    summary: Readers for LibXML2 documents\n    versions:\n      - version: \"1.0.0\"\n";
    let stdout = explained_on_full(registry, "bilby-docs", 1);
    assert!(stdout.contains("libxml2-dev"), "{stdout}");
    assert!(stdout.contains("mentions `libxml2`"), "{stdout}");
}

/// A prebuilt build compiles nothing: on an image with a C compiler only, a prebuilt release
/// shipping a C++ source and declaring zlib installs when the image has zlib's runtime package
/// (`zlib1g`, as in the catalog's Debian extract), and is not told to add `g++`. Guards that
/// only source builds are asked for the C++ compiler (mutation testing: asking prebuilt ones
/// too made the cell fail).
#[test]
fn a_prebuilt_build_on_a_c_only_image_needs_no_cxx_compiler() {
    let dir = tempfile::tempdir().unwrap();
    let registry = "packages:\n  - name: potoroo-bin\n    versions:\n      - version: \"1.0.0\"\n        builds:\n          prebuilt: [linux/glibc/x86_64]\n        native:\n          libraries: [zlib]\n          files: [src/ext/core.cpp]\n";
    let images = format!(
        "images:\n{}",
        image(
            "d-c",
            "debian",
            "    toolchain: false\n    packages: [gcc, make, libc6-dev, zlib1g]\n"
        ),
    );
    let args = inputs(dir.path(), registry, &images, &["potoroo-bin"]);
    let (code, stdout, stderr) = run(&["explain", "potoroo-bin", "d-c"], &args);
    assert_eq!(code, 0, "{stdout}{stderr}");
    assert!(stdout.contains("installs"), "{stdout}");
    assert!(!stdout.contains("g++"), "{stdout}");
}

/// A cell at risk for a library the catalog does not know is confirmed by a log missing that
/// library under the name it was declared by (`frobnitz` or `libfrobnitz`, the log missing
/// `-lfrobnitz`, `frobnitz.pc` or `libfrobnitz.so.1`); it was `risk-unconfirmed`, though the
/// log showed exactly what the cell was at risk for (README, the verdict table; from an
/// end-to-end review). A library it did not declare confirms nothing.
#[test]
fn a_log_missing_an_uncatalogued_library_the_cell_needed_confirms_the_risk() {
    let dir = tempfile::tempdir().unwrap();
    let registry = "packages:
  - name: frob-native
    versions: [{version: 1.0.0, native: {libraries: [libfrobnitz]}}]
";
    let images = format!(
        "images:\n{}",
        image("deb", "debian", "    toolchain: true\n")
    );
    let args = inputs(dir.path(), registry, &images, &["frob-native"]);
    for (log, verdict) in [
        (
            "/usr/bin/ld: cannot find -lfrobnitz: No such file or directory",
            "risk-confirmed",
        ),
        (
            "Package frobnitz was not found in the pkg-config search path.",
            "risk-confirmed",
        ),
        (
            "ImportError: libfrobnitz.so.1: cannot open shared object file: No such file or directory",
            "risk-confirmed",
        ),
        (
            "/usr/bin/ld: cannot find -lquux: No such file or directory",
            "risk-unconfirmed",
        ),
    ] {
        let args = with_results(
            dir.path(),
            args.clone(),
            &format!(
                "results:\n  - {{package: frob-native, image: deb, outcome: failed, log: \"{log}\"}}\n"
            ),
        );
        let c = reviewed_cells(&args)("frob-native", "deb");
        assert_eq!(c["predicted"], "at-risk", "{c}");
        assert_eq!(c["verdict"], verdict, "{log}: {c}");
    }
}

/// A cell at risk for the whole toolchain (C++ sources, an image declaring no compiler) is
/// confirmed by a log missing the C++ compiler: the toolchain package brings it, so the log
/// shows a compiler the cell was at risk for (README, "Reviewing recorded installs":
/// `risk-confirmed`, "its log showing a library or compiler the cell was at risk for"). The
/// log line is dash's (Debian's /bin/sh) own, from `sh -c 'g++ -c x.cc'` with no g++ on the
/// path (from a mutation review of src/verify/compare.rs: a C++-compiler risk read only as a
/// risk for the C++ compiler package called it unconfirmed).
#[test]
fn a_missing_cxx_compiler_confirms_a_risk_for_the_whole_toolchain() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!("packages:\n{}", package("hash-cpp", "", "src/ext/hash.cpp"));
    for (family, toolchain) in [("debian", "build-essential"), ("alpine", "build-base")] {
        let images = format!("images:\n{}", image("bare", family, ""));
        let args = inputs(dir.path(), &registry, &images, &["hash-cpp"]);
        let (_, stdout, _) = run(&["explain", "hash-cpp", "bare"], &args);
        assert!(
            stdout.starts_with("hash-cpp on bare: at-risk")
                && stdout.contains(&format!("missing system packages: {toolchain}\n")),
            "{stdout}"
        );
        let args = with_results(
            dir.path(),
            args,
            "results:\n  - {package: hash-cpp, image: bare, outcome: failed, log: \"/bin/sh: 1: g++: not found\"}\n",
        );
        let cell = reviewed_cells(&args)("hash-cpp", "bare");
        assert_eq!(cell["verdict"], "risk-confirmed", "{family}: {cell}");
        assert_eq!(cell["cause_agrees"], true, "{family}: {cell}");
    }
}

/// An image that lacks no package the catalog can name, yet has a cell at risk for a library
/// with no package of its family, is not "nothing missing": `syslibs` says so, names the
/// library, and exits 1 (README, "What `syslibs` counts": "the text says no package the
/// catalog can name is missing but needed libraries are unmapped"). Objective-C++ on alpine,
/// for which no package is known (from a mutation review of src/report/text.rs).
#[test]
fn syslibs_says_an_image_lacking_only_unmapped_libraries_lacks_something() {
    let dir = tempfile::tempdir().unwrap();
    let args = objcpp_on_alpine(dir.path());
    let (code, stdout, stderr) = run(&["syslibs"], &args);
    assert_eq!(code, 1, "{stdout}{stderr}");
    assert!(
        stdout.contains(
            "\n  alp (alpine): no package to add that the catalog can name, but needed libraries are unmapped:\n"
        ) && stdout.contains("no alpine package known for (check the image by hand, or give them with --catalog): gobjc++ [likely] (numbat-objcpp)"),
        "{stdout}"
    );
    assert!(!stdout.contains("nothing missing"), "{stdout}");
}

/// A build that cannot run the pkg-config program: `review` names the package that ships it,
/// and where the image declares it, says the declaration may be out of date instead. Neither
/// confirms the predicted missing library (the build stopped before it), nor a risk.
#[test]
fn a_missing_pkg_config_program_names_its_package() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}",
        package("perch-xml", "libxml2", "src/ext/parse.c"),
        package("perch-plain", "", "src/ext/fast.c")
    );
    let images = format!(
        "images:\n{}{}{}",
        image("d-bare", "debian", "    packages: [build-essential]\n"),
        image(
            "d-pc",
            "debian",
            "    packages: [build-essential, pkg-config, libxml2-dev]\n"
        ),
        image("r-bare", "rhel", "    packages: [gcc, gcc-c++, make]\n"),
    );
    let args = inputs(
        dir.path(),
        &registry,
        &images,
        &["perch-xml", "perch-plain"],
    );
    // dash on this machine when pkg-config is not on the PATH; its wording if sh is absent.
    let shell = std::process::Command::new("/bin/sh")
        .args(["-c", "pkg-config --cflags libxml-2.0"])
        .env("PATH", "/nonexistent")
        .output()
        .ok()
        .map(|o| String::from_utf8_lossy(&o.stderr).trim().to_string())
        .filter(|s| s.contains("pkg-config"))
        .unwrap_or_else(|| "/bin/sh: 1: pkg-config: not found".into());
    let results = ["d-bare", "d-pc", "r-bare"]
        .iter()
        .flat_map(|img| {
            ["perch-xml", "perch-plain"].map(|p| {
                format!(
                    "  - package: {p}\n    image: {img}\n    outcome: failed\n    log: {shell:?}\n"
                )
            })
        })
        .collect::<String>();
    let args = with_results(dir.path(), args, &format!("results:\n{results}"));
    let cells = reviewed_cells(&args);

    let xml_bare = cells("perch-xml", "d-bare");
    assert_eq!(
        xml_bare["log_cause"]["cause"], "no-pkg-config",
        "{xml_bare}"
    );
    assert_eq!(xml_bare["verdict"], "agreed-failure", "{xml_bare}");
    assert_eq!(
        xml_bare["cause_agrees"],
        serde_json::Value::Null,
        "{xml_bare}"
    );
    assert_eq!(
        xml_bare["suggestion"],
        "the build runs the pkg-config program, which d-bare lacks (basefit does not predict this need): add pkgconf; the plan finds libxml2-dev missing too, which the build had not reached",
        "{xml_bare}"
    );
    // A cell predicted to install that failed so: the advice is the same, with nothing else
    // missing.
    let plain_bare = cells("perch-plain", "d-bare");
    assert_eq!(plain_bare["verdict"], "surprise-failure", "{plain_bare}");
    assert_eq!(
        plain_bare["suggestion"],
        "the build runs the pkg-config program, which d-bare lacks (basefit does not predict this need): add pkgconf",
        "{plain_bare}"
    );
    let declared = cells("perch-xml", "d-pc");
    assert!(
        declared["suggestion"].as_str().unwrap().starts_with(
            "d-pc declares pkg-config, yet the build found no usable pkg-config program: check that the real image installs it"
        ),
        "{declared}"
    );
    // source: from memory, rhel's package of /usr/bin/pkg-config
    assert!(
        cells("perch-plain", "r-bare")["suggestion"]
            .as_str()
            .unwrap()
            .ends_with("add pkgconf-pkg-config"),
    );
}

/// The Debian package named for the pkg-config program ships it, and the other name counted
/// as declaring it depends on that one. Source: Debian's archive through `dpkg -S` and
/// `apt-cache show` on this machine (Debian 12); skipped with a message where they cannot say.
#[test]
fn debian_pkg_config_packages_ship_the_program() {
    use basefit::model::OsFamily;
    let packages = basefit::native::pkg_config_packages(OsFamily::Debian);
    let owner = std::process::Command::new("dpkg")
        .args(["-S", "/usr/bin/pkg-config"])
        .output()
        .ok()
        .filter(|o| o.status.success())
        .map(|o| String::from_utf8_lossy(&o.stdout).into_owned());
    let Some(owner) = owner else {
        eprintln!("skipped debian_pkg_config_packages_ship_the_program: dpkg cannot say");
        return;
    };
    // `pkgconf:amd64: /usr/bin/pkg-config`
    let shipped_by = owner.split(':').next().unwrap_or_default().trim();
    assert_eq!(shipped_by, packages[0], "{owner}");
    let show = std::process::Command::new("apt-cache")
        .args(["show", packages[1]])
        .output()
        .ok()
        .map(|o| String::from_utf8_lossy(&o.stdout).into_owned())
        .unwrap_or_default();
    let depends = show
        .lines()
        .find_map(|l| l.strip_prefix("Depends: "))
        .unwrap_or_else(|| panic!("apt-cache show {} gave no Depends: {show}", packages[1]));
    assert!(
        depends
            .split(',')
            .any(|d| d.split_whitespace().next() == Some(packages[0])),
        "{depends}"
    );
}

/// A release shipping one native file names it alone, "ships src/ext/glue.c", with no
/// "and 0 more native source or build files"; with two it counts the other one. Guards the
/// count of further native files (mutation testing: counting from one file appended "and 0
/// more" to every single-file release, unnoticed).
#[test]
fn one_native_file_is_named_without_a_count_of_more() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}",
        package("quoll-glue", "", "src/ext/glue.c"),
        package("quoll-pair", "", "src/ext/glue.c, Makefile"),
    );
    let images = format!(
        "images:\n{}",
        image(
            "slim",
            "debian",
            "    toolchain: false\n    packages: [ca-certificates]\n"
        ),
    );
    let args = inputs(
        dir.path(),
        &registry,
        &images,
        &["quoll-glue", "quoll-pair"],
    );
    let (code, stdout, stderr) = run(&["explain", "quoll-glue", "slim"], &args);
    assert_eq!(code, 1, "{stdout}{stderr}");
    assert!(
        stdout.contains("via quoll-glue: ships src/ext/glue.c\n"),
        "{stdout}"
    );
    assert!(!stdout.contains("more"), "{stdout}");
    let (_, stdout, _) = run(&["explain", "quoll-pair", "slim"], &args);
    assert!(
        stdout.contains("ships src/ext/glue.c and 1 more native source or build files"),
        "{stdout}"
    );
}

/// A shipped header is a catalog header only when its whole file name is one: `myzlib.h`
/// ends with zlib's `zlib.h` but is no copy of it, so a release shipping it builds natively
/// (it installs on an image with a toolchain) without needing `zlib1g-dev`, while one shipping
/// `include/zlib.h` does (Debian's zlib development package, as in the catalog's archive
/// extract). Guards the `/` before the header in the path match (mutation testing: a bare
/// suffix match made the first release need zlib).
#[test]
fn a_header_name_ending_in_a_catalog_header_is_not_that_header() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}{}",
        package("quoll-myz", "", "src/ext/myzlib.h"),
        package("quoll-z", "", "include/zlib.h"),
    );
    let images = format!(
        "images:\n{}",
        image("full", "debian", "    packages: [build-essential]\n"),
    );
    let args = inputs(dir.path(), &registry, &images, &["quoll-myz", "quoll-z"]);
    expect_explained(
        &args,
        &[
            ("quoll-myz", "full", 0, "installs"),
            ("quoll-z", "full", 1, "zlib1g-dev"),
        ],
    );
}

/// A word of a summary keeps its `+` signs: "gobjc++" mentions the catalog's Objective-C++
/// compiler entry (`gobjc++`, Debian's package of that name), not the Objective-C one
/// (`gobjc`), so the cell may need `gobjc++`. Guards `+` as a word character (mutation
/// testing: splitting at it read the mention as `gobjc`).
#[test]
fn a_summary_word_keeps_its_plus_signs() {
    let registry = "packages:\n  - name: numbat-views\n    summary: Views compiled with gobjc++\n    versions:\n      - version: \"1.0.0\"\n";
    let stdout = explained_on_full(registry, "numbat-views", 1);
    assert!(stdout.contains("mentions `gobjc++`"), "{stdout}");
    assert!(stdout.contains("may need: gobjc++\n"), "{stdout}");
}

/// An unnamed native build is subsumed by a named need of the same confidence: a release
/// shipping `include/zlib.h` (a likely zlib need) and `src/ext/glue.c` (a likely native build)
/// lists one need, zlib's; no "(unnamed native build)" line repeats the build. Guards the strict comparison in the subsumption (mutation testing:
/// keeping an unnamed build of equal confidence listed it beside zlib).
#[test]
fn an_unnamed_build_beside_a_named_need_of_equal_confidence_is_not_listed() {
    let registry = format!(
        "packages:\n{}",
        package("quoll-zglue", "", "include/zlib.h, src/ext/glue.c")
    );
    let stdout = explained_on_full(&registry, "quoll-zglue", 1);
    assert!(stdout.contains("zlib [likely] via quoll-zglue"), "{stdout}");
    assert!(!stdout.contains("unnamed native build"), "{stdout}");
}

/// An image that adds back the C++ compiler package its base removed compiles C++ again: its
/// C compiler comes from the inherited flag, and the flag with the C++ compiler package is a
/// C and C++ toolchain (from a mutation review of src/native: it stayed C-only, and a C++
/// build there read "probably needs a C toolchain" with no package to add).
#[test]
fn an_image_adding_back_the_cxx_compiler_compiles_cxx_again() {
    let dir = tempfile::tempdir().unwrap();
    let registry = format!(
        "packages:\n{}",
        package("quoll-cpp", "", "src/ext/core.cpp")
    );
    let images = "images:\n  - {id: base, runtime: 3.2.0, family: debian, platform: linux/glibc/x86_64, toolchain: true, packages: [g++]}\n  - {id: mid, extends: base, remove: [g++]}\n  - {id: child, extends: mid, add: [g++]}\n";
    let args = inputs(dir.path(), &registry, images, &["quoll-cpp"]);
    expect_explained(
        &args,
        &[
            (
                "quoll-cpp",
                "base",
                0,
                "quoll-cpp on base: installs (1.0.0)",
            ),
            (
                "quoll-cpp",
                "mid",
                1,
                "probably needs: g++; the C++ compiler for quoll-cpp",
            ),
            (
                "quoll-cpp",
                "child",
                0,
                "quoll-cpp on child: installs (1.0.0)",
            ),
        ],
    );
}
