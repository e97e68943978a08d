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
    // `.ci/run` installs python3 where it is missing, so a machine without it fails here
    // rather than passing unchecked.
    let out = std::process::Command::new("python3")
        .args(["-c", script])
        .output()
        .expect("python3, for Unicode's character data");
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
    // And the other way: nothing the list holds is assigned to another category. A code
    // point this Python's Unicode does not assign yet (Cn) may be Cf in a later one.
    let ours: Vec<String> = (0..=0x10ffffu32)
        .filter_map(char::from_u32)
        .filter(|&c| is_invisible_format(c))
        .map(|c| format!("{:x}", c as u32))
        .collect();
    let script = format!(
        "import unicodedata\n\
         print(' '.join(h for h in '{}'.split() \
         if unicodedata.category(chr(int(h, 16))) not in ('Cf', 'Cn')))",
        ours.join(" ")
    );
    let out = std::process::Command::new("python3")
        .args(["-c", &script])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let other = String::from_utf8(out.stdout).unwrap();
    assert_eq!(
        other.trim(),
        "",
        "taken for format characters but not Cf in Unicode {version}"
    );
    // Letters of other scripts, digits and the punctuation names use stay names.
    for name in ["quill-xml", "Foo.Bar", "c++lib", "Ünïcode_pkg", "日本語"] {
        assert_eq!(name_problem(name), None, "{name}");
    }
}
