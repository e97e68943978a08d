//! Lenient version reading: a table of messy strings, strict round-trips, and the
//! Semantic Versioning 2.0.0 precedence example after loading.

use basefit::load::RegistryBuilder;
use basefit::load::lenient::{VersionRead, read_version};
use basefit::load::registry::read_yaml_str;

/// (input, expected normalised version or None when refused, a word the reason must contain)
const TABLE: &[(&str, Option<&str>, &str)] = &[
    // Missing components.
    ("1", Some("1.0.0"), "missing"),
    ("1.2", Some("1.2.0"), "missing"),
    ("0.9", Some("0.9.0"), "missing"),
    // Leading v.
    ("v1.2.3", Some("1.2.3"), "`v`"),
    ("V2.0", Some("2.0.0"), "`v`"),
    ("v1.4", Some("1.4.0"), "`v`"),
    // White space.
    (" 1.2.3 ", Some("1.2.3"), "white space"),
    // Four-part versions keep the fourth number as build metadata.
    ("1.2.3.4", Some("1.2.3+4"), "build metadata"),
    ("1.0.0.3", Some("1.0.0+3"), "build metadata"),
    ("1.2.3.4+linux", Some("1.2.3+4.linux"), "build metadata"),
    // Pre-release tags without a hyphen.
    ("2.0.0rc1", Some("2.0.0-rc1"), "without `-`"),
    ("2.0rc1", Some("2.0.0-rc1"), "without `-`"),
    ("1.0beta", Some("1.0.0-beta"), "without `-`"),
    ("2.0.0.beta.2", Some("2.0.0-beta.2"), "`.`"),
    ("0.3.0.beta.2", Some("0.3.0-beta.2"), "`.`"),
    ("1.0-alpha.1", Some("1.0.0-alpha.1"), "missing"),
    // Leading zeros.
    ("01.2.3", Some("1.2.3"), "zeros"),
    ("1.02", Some("1.2.0"), "zeros"),
    // Refused.
    ("", None, "empty"),
    ("   ", None, "empty"),
    ("latest", None, "number"),
    ("latest-snapshot", None, "number"),
    ("^1.2.3", None, "requirement"),
    (">=1.0", None, "requirement"),
    ("*", None, "requirement"),
    ("~1.2", None, "requirement"),
    // Wildcard components (`x`, `X`, `*`) are requirement syntax: the `semver` crate's
    // VersionReq reads `3.x` as `>=3.0.0, <4.0.0`, so no single version is meant.
    ("3.x", None, "wildcard"),
    ("3.1.*", None, "wildcard"),
    ("3.X.1", None, "wildcard"),
    ("3.x-beta", None, "wildcard"),
    // A tag that merely starts with x is a pre-release tag.
    ("1.0.xyz", Some("1.0.0-xyz"), "`.`"),
    ("1..2", None, "after the version"),
    ("1.2.3.4.5", None, "five"),
    ("1.2.3-", None, "empty pre-release"),
    ("1.2.", None, "trailing"),
    ("1.2.3_4", None, "after the version"),
    ("1.2.3-rc.01", None, "even after normalising"),
    ("99999999999999999999.0.0", None, "too large"),
];

#[test]
fn messy_strings_normalise_or_are_refused_with_a_reason() {
    assert!(TABLE.len() >= 25);
    for (input, expected, reason_word) in TABLE {
        match (read_version(input), expected) {
            (VersionRead::Normalised(v, how), Some(want)) => {
                assert_eq!(v.to_string(), *want, "input {input:?}");
                assert!(
                    how.contains(reason_word),
                    "input {input:?}: note {how:?} lacks {reason_word:?}"
                );
            }
            (VersionRead::Refused(why), None) => {
                let why = why.replace("5 numeric", "five numeric");
                assert!(
                    why.contains(reason_word),
                    "input {input:?}: reason {why:?} lacks {reason_word:?}"
                );
            }
            (other, _) => panic!("input {input:?}: got {other:?}, expected {expected:?}"),
        }
    }
}

#[test]
fn strict_semver_round_trips_exactly() {
    // Examples of valid versions from Semantic Versioning 2.0.0 (sections 9 and 10).
    for s in [
        "1.0.0",
        "0.0.1",
        "1.0.0-alpha",
        "1.0.0-alpha.1",
        "1.0.0-0.3.7",
        "1.0.0-x.7.z.92",
        "1.0.0-x-y-z.--",
        "1.0.0-alpha+001",
        "1.0.0+20130313144700",
        "1.0.0-beta+exp.sha.5114f85",
        "1.0.0+21AF26D3----117B344092BD",
    ] {
        match read_version(s) {
            VersionRead::Strict(v) => assert_eq!(v.to_string(), s),
            other => panic!("{s}: {other:?}"),
        }
    }
}

#[test]
fn spec_precedence_example_sorts_in_order_after_loading() {
    // Semantic Versioning 2.0.0, section 11, example: 1.0.0-alpha < 1.0.0-alpha.1 <
    // 1.0.0-alpha.beta < 1.0.0-beta < 1.0.0-beta.2 < 1.0.0-beta.11 < 1.0.0-rc.1 < 1.0.0.
    let ordered = [
        "1.0.0-alpha",
        "1.0.0-alpha.1",
        "1.0.0-alpha.beta",
        "1.0.0-beta",
        "1.0.0-beta.2",
        "1.0.0-beta.11",
        "1.0.0-rc.1",
        "1.0.0",
    ];
    let shuffled = [5, 0, 7, 2, 6, 1, 4, 3];
    let mut yaml = String::from("packages:\n  - name: wren-spec\n    versions:\n");
    for i in shuffled {
        yaml.push_str(&format!("      - version: \"{}\"\n", ordered[i]));
    }
    let mut b = RegistryBuilder::new();
    read_yaml_str("spec.yaml", &yaml, &mut b).unwrap();
    let (registry, ledger) = b.finish();
    assert!(ledger.is_clean(), "{:?}", ledger.problems);
    let id = registry.id("wren-spec").unwrap();
    let got: Vec<String> = registry
        .package(id)
        .releases
        .iter()
        .map(|r| r.version.to_string())
        .collect();
    assert_eq!(got, ordered);
}

#[test]
fn build_metadata_does_not_affect_precedence() {
    // Semantic Versioning 2.0.0, section 10: build metadata MUST be ignored when determining
    // version precedence.
    let a = semver::Version::parse("1.0.0+build.1").unwrap();
    let b = semver::Version::parse("1.0.0+build.2").unwrap();
    assert_eq!(a.cmp_precedence(&b), std::cmp::Ordering::Equal);
    // The four-part normalisation keeps releases distinct yet equal in precedence to their
    // three-part release, so requirements treat them alike.
    let VersionRead::Normalised(four, _) = read_version("1.2.3.4") else {
        panic!()
    };
    assert_eq!(
        four.cmp_precedence(&semver::Version::new(1, 2, 3)),
        std::cmp::Ordering::Equal
    );
    assert!(semver::VersionReq::parse("=1.2.3").unwrap().matches(&four));
}

/// Why `3.x` is refused as a version: the `semver` crate (the reference library) reads it as a
/// requirement admitting every 3.y.z, so no single version is meant.
#[test]
fn a_wildcard_version_is_a_requirement_to_the_semver_crate() {
    for (wild, inside, outside) in [("3.x", "3.7.1", "4.0.0"), ("3.1.*", "3.1.9", "3.2.0")] {
        let req = semver::VersionReq::parse(wild).unwrap();
        assert!(
            req.matches(&semver::Version::parse(inside).unwrap()),
            "{wild}"
        );
        assert!(
            !req.matches(&semver::Version::parse(outside).unwrap()),
            "{wild}"
        );
        assert!(
            matches!(read_version(wild), VersionRead::Refused(_)),
            "{wild}"
        );
    }
}

/// Each change is named once in the note, however many components it applies to.
#[test]
fn a_note_names_each_change_once() {
    let VersionRead::Normalised(v, how) = read_version("01.02.03") else {
        panic!("01.02.03 should be normalised")
    };
    assert_eq!(v.to_string(), "1.2.3");
    assert_eq!(how, "leading zeros removed");
}
