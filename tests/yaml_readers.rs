//! The YAML basefit writes, read by a YAML 1.1 reader: PyYAML stands for the readers most
//! consumers use (PyYAML, Ruby's Psych, Go's yaml.v2), which take plain `no`, `on`, `1_000`,
//! `1:20` or `2026-01-01` for booleans, numbers and dates, refuse `<<` and `=`, and read `1e-7`
//! as a string. Every value must come back as the JSON document holds it, and basefit must
//! still read its own YAML back.

mod common;

use common::{run_basefit, write};
use std::path::Path;
use std::process::Command;

// Fictional packages whose names, summaries and image ids are words and forms YAML 1.1 reads
// as something else when they are written plain.
const REGISTRY: &str = r#"packages:
  - name: "no"
    summary: "yes"
    versions:
      - version: "1.0.0"
        depends:
          - {name: "on", req: "^1"}
  - name: "on"
    summary: "1:20"
    versions:
      - version: "1.2.0"
        runtime: ">=3.0"
  - name: "off"
    summary: "2026-01-01"
    versions:
      - version: "2.0.0"
        runtime: ">=9.0"
  - name: "1_000"
    summary: "<<"
    versions:
      - version: "0.1.0"
        native:
          libraries: [libxml2]
  - name: "y"
    summary: " - x #c a: b 'q' \"q\" "
    versions:
      - version: "3.0.0"
  - name: "0o17"
    summary: "="
    versions:
      - version: "1.0.0"
  - name: ".5"
    summary: "~"
    versions:
      - version: "1.0.0"
  - name: "NULL"
    summary: "NO"
    versions:
      - version: "1.0.0"
        depends:
          - {name: "off", req: "*"}
"#;

const IMAGES: &str = r#"images:
  - id: "off"
    runtime: 3.1.2
    family: debian
    platform: linux/glibc/x86_64
    toolchain: true
    packages: ["yes", "on", "1:20", "0x1F"]
  - id: "1:20"
    runtime: 2.8.1
    family: alpine
    platform: linux/musl/x86_64
    toolchain: false
    packages: []
"#;

// Weights whose shortest forms have an exponent (1e-7, 1e20): YAML 1.1 reads a float only with
// a point and a signed exponent.
const PRIORITIES: &str = r#"priorities:
  - {name: "no", weight: 0.0000001}
  - {name: "on", weight: 1e20}
  - {name: "off", weight: 2.5}
  - {name: "1_000", weight: 1}
  - {name: "y", weight: 3}
  - {name: "0o17", weight: 1}
  - {name: ".5", weight: 1}
  - {name: "NULL", weight: 1}
"#;

fn inputs(dir: &Path) -> Vec<String> {
    let mut args = Vec::new();
    for (flag, name, text) in [
        ("--registry", "registry.yaml", REGISTRY),
        ("--images", "images.yaml", IMAGES),
        ("--priorities", "priorities.yaml", PRIORITIES),
    ] {
        args.push(flag.to_string());
        args.push(write(dir, name, text).to_str().unwrap().to_string());
    }
    args
}

fn basefit(args: &[&str], inputs: &[String]) -> String {
    let all: Vec<&str> = args
        .iter()
        .copied()
        .chain(inputs.iter().map(String::as_str))
        .collect();
    let (code, stdout, stderr) = run_basefit(&all);
    assert_eq!(code, 0, "basefit {all:?}: {stderr}");
    stdout
}

/// Whether PyYAML can be run; if not, says why the test is skipped. CI installs python3 and
/// PyYAML, so there the comparison always runs.
fn pyyaml_available() -> bool {
    match Command::new("python3").args(["-c", "import yaml"]).output() {
        Ok(out) if out.status.success() => true,
        Ok(out) => {
            println!(
                "skipped: python3 has no yaml module (PyYAML): {}",
                String::from_utf8_lossy(&out.stderr)
            );
            false
        }
        Err(e) => {
            println!("skipped: python3 cannot be run: {e}");
            false
        }
    }
}

/// The YAML file at `path` as PyYAML reads it (YAML 1.1, its safe loader), turned into JSON.
/// The file is opened in binary so PyYAML decodes the UTF-8 itself, whatever the locale.
fn pyyaml(path: &Path) -> serde_json::Value {
    let script = "import yaml,json,sys; print(json.dumps(yaml.safe_load(open(sys.argv[1], 'rb'))))";
    let out = Command::new("python3")
        .args(["-c", script])
        .arg(path)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "PyYAML refused {}: {}",
        path.display(),
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

fn json(text: &str) -> serde_json::Value {
    serde_json::from_str(text).unwrap()
}

#[test]
fn a_yaml_1_1_reader_reads_the_matrix_as_the_json_holds_it() {
    if !pyyaml_available() {
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let inputs = inputs(dir.path());
    let yaml = basefit(&["render", "--format", "yaml"], &inputs);
    let matrix_json = basefit(&["render", "--format", "json"], &inputs);
    let expected = json(&matrix_json);
    // The data is what it claims to be: the words arrive in the matrix as strings.
    assert_eq!(expected["packages"][0]["name"], "no");
    assert_eq!(expected["packages"][0]["summary"], "yes");
    assert_eq!(expected["images"][1]["id"], "1:20");

    let stdout_yaml = write(dir.path(), "m.yaml", &yaml);
    assert_eq!(pyyaml(&stdout_yaml), expected, "{yaml}");
    assert!(yaml.contains("weight: 1.0e-7\n"), "{yaml}");

    // The files `render --out` and `plan --out` write go through the same writer.
    let rendered = dir.path().join("rendered");
    basefit(&["render", "--out", rendered.to_str().unwrap()], &inputs);
    assert_eq!(
        std::fs::read_to_string(rendered.join("matrix.yaml")).unwrap(),
        yaml
    );
    let planned = dir.path().join("planned");
    basefit(&["plan", "--out", planned.to_str().unwrap()], &inputs);
    let planned_json = std::fs::read_to_string(planned.join("matrix.json")).unwrap();
    assert_eq!(pyyaml(&planned.join("matrix.yaml")), json(&planned_json));

    // basefit reads its YAML back (serde_yaml, YAML 1.2) to the same matrix.
    let again = basefit(
        &[
            "render",
            "--matrix",
            stdout_yaml.to_str().unwrap(),
            "--format",
            "json",
        ],
        &inputs,
    );
    assert_eq!(again, matrix_json);
}

#[test]
fn a_yaml_1_1_reader_reads_the_imageplan_as_the_json_holds_it() {
    if !pyyaml_available() {
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let inputs = inputs(dir.path());
    let out = dir.path().join("out");
    let plan_json = basefit(
        &[
            "imageplan",
            "--format",
            "json",
            "--out",
            out.to_str().unwrap(),
        ],
        &inputs,
    );
    let expected = json(&plan_json);
    assert_eq!(expected["coverage"][0]["base_image"], "off");
    assert_eq!(pyyaml(&out.join("imageplan.yaml")), expected);
}

/// `matrix.yaml` is written a cell at a time (`report::matrix_yaml`) to keep large plans from
/// holding the whole document as one tree; it must be exactly what the whole-tree writer gives,
/// for this file's hostile names, the demo (recorded results included), an empty matrix and a
/// shard.
#[test]
fn the_matrix_written_cell_by_cell_is_the_whole_tree_writers_bytes() {
    use basefit::load::{InputPaths, load_inputs};
    use basefit::plan::{PlanOptions, plan};
    use basefit::report::{matrix_yaml, to_yaml};
    let dir = tempfile::tempdir().unwrap();
    let hostile = [
        write(dir.path(), "r.yaml", REGISTRY),
        write(dir.path(), "i.yaml", IMAGES),
        write(dir.path(), "p.yaml", PRIORITIES),
    ];
    let demo = [
        "demo-data/registry.yaml".into(),
        "matrices/demo-images.yaml".into(),
        "demo-data/priorities.yaml".into(),
    ];
    for [registry, images, priorities] in [hostile, demo] {
        let inputs = load_inputs(&InputPaths {
            registry: vec![registry],
            images: Some(images),
            priorities: Some(priorities),
            results: vec!["demo-data/results.yaml".into()],
            ..Default::default()
        })
        .unwrap();
        let mut matrix = plan(&inputs, &PlanOptions::default());
        let review = basefit::verify::compare_inputs(&matrix, &inputs);
        basefit::verify::compare::annotate(&mut matrix, &review);
        assert_eq!(matrix_yaml(&matrix), to_yaml(&matrix));
        let (cache, _) = basefit::plan::replan::replan(
            &inputs,
            &PlanOptions::default(),
            None,
            basefit::plan::replan::Shard::parse("2/3").ok(),
        );
        assert_eq!(matrix_yaml(&cache.matrix), to_yaml(&cache.matrix));
        matrix.cells.clear();
        assert_eq!(matrix_yaml(&matrix), to_yaml(&matrix));
    }
}
