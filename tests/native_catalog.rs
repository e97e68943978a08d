//! The shipped system-library catalog against Debian's package archive, and user catalog
//! files.

use basefit::model::OsFamily;
use basefit::native::Catalog;
use basefit::native::catalog::FactSource;

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
