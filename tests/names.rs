//! What counts as a name, checked against Unicode's own character data as Python's
//! `unicodedata` module on this machine has it (a real tool, not a list kept here).

use basefit::load::diag::name_problem;
use basefit::model::is_invisible_format;

/// Every character of general category Cf (format: invisible, yet changes how the text
/// around it reads) is taken for one, so no name can hide one and pass for another name.
/// Source: Python's `unicodedata.category`, whatever Unicode version it carries.
#[test]
fn every_format_character_python_knows_is_refused_in_a_name() {
    let script = "import sys, unicodedata\n\
        print(unicodedata.unidata_version)\n\
        print(' '.join('%x' % c for c in range(sys.maxunicode + 1) \
        if unicodedata.category(chr(c)) == 'Cf'))";
    let Ok(out) = std::process::Command::new("python3")
        .args(["-c", script])
        .output()
    else {
        eprintln!("skipped: python3 is not available");
        return;
    };
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    let mut lines = text.lines();
    let version = lines.next().unwrap();
    let format: Vec<char> = lines
        .next()
        .unwrap()
        .split_whitespace()
        .map(|h| char::from_u32(u32::from_str_radix(h, 16).unwrap()).unwrap())
        .collect();
    // Unicode has had more than 150 of them since version 6; fewer means a broken read.
    assert!(
        format.len() > 150,
        "Unicode {version}: {} read",
        format.len()
    );
    for c in format {
        assert!(
            is_invisible_format(c),
            "U+{:04X} is Cf in Unicode {version}",
            c as u32
        );
        let name = format!("pkg{c}name");
        assert!(
            name_problem(&name).is_some(),
            "U+{:04X} passed in a name",
            c as u32
        );
    }
    // Letters of other scripts, digits and the punctuation names use stay names.
    for name in ["quill-xml", "Foo.Bar", "c++lib", "Ünïcode_pkg", "日本語"] {
        assert_eq!(name_problem(name), None, "{name}");
    }
}
