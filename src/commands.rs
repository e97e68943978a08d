//! One library call per command: each takes its options struct, does the work and returns
//! what to print and the exit code. `main.rs` only parses arguments into these structs.

use crate::load::{self, BadInput, InputPaths, Inputs};
use crate::plan::{self, Matrix, PlanOptions, blockers};
use crate::report::{self, Format, text};
use anyhow::Result;
use std::path::PathBuf;

/// Exit codes shared by every command.
pub mod exit {
    pub const OK: u8 = 0;
    /// The run worked and found what the user asked to be warned about.
    pub const FOUND: u8 = 1;
    /// Usage error or unusable input.
    pub const BAD_INPUT: u8 = 2;
}

/// What a command prints and how it exits.
#[derive(Debug, Default)]
pub struct Output {
    pub stdout: String,
    /// Lines for stderr (where files went, warnings).
    pub stderr: Vec<String>,
    pub exit: u8,
}

/// Loads inputs, and with `strict` refuses any data-quality problem.
pub fn load(paths: &InputPaths, strict: bool) -> Result<Inputs, BadInput> {
    let inputs = load::load_inputs(paths)?;
    if strict && !inputs.ledger.is_clean() {
        let groups = inputs.ledger.by_kind();
        let parts: Vec<String> = groups
            .iter()
            .map(|(k, v)| format!("{} {}", v.len(), k.label()))
            .collect();
        let first = &inputs.ledger.problems[0];
        return Err(BadInput::at(
            first.origin.file.clone(),
            first.origin.line,
            format!(
                "--strict: {}: {} (in all: {})",
                first.subject,
                first.detail,
                parts.join(", ")
            ),
        ));
    }
    Ok(inputs)
}

pub struct CheckOptions {
    pub inputs: InputPaths,
    pub strict: bool,
    pub format: Format,
}

/// `check`: the data-quality report. Exit 0 when clean, 1 when problems were found.
pub fn check(o: &CheckOptions) -> Result<Output, BadInput> {
    let inputs = load(&o.inputs, o.strict)?;
    let ledger = &inputs.ledger;
    let stdout = match o.format {
        Format::Json => report::to_json(&text::check_report(ledger)),
        _ => text::check_text(ledger),
    };
    Ok(Output {
        stdout,
        stderr: Vec::new(),
        exit: if ledger.is_clean() {
            exit::OK
        } else {
            exit::FOUND
        },
    })
}

pub struct PlanCommand {
    pub inputs: InputPaths,
    pub strict: bool,
    pub plan: PlanOptions,
    /// Folder for matrix.yaml and matrix.json.
    pub out: Option<PathBuf>,
    pub format: Format,
    /// Shared blockers shown per image.
    pub blockers: usize,
}

/// `plan`: the predicted matrix, written as YAML and JSON, and its summary.
pub fn plan(o: &PlanCommand) -> Result<Output> {
    let inputs = load(&o.inputs, o.strict)?;
    if inputs.images.images.is_empty() || inputs.priorities.entries.is_empty() {
        return Err(BadInput::file(
            "command line",
            "plan needs --images and --priorities with at least one entry each",
        )
        .into());
    }
    let matrix = plan::plan(&inputs, &o.plan);
    let mut out = Output::default();
    if let Some(dir) = &o.out {
        write_matrix(&matrix, dir, &mut out)?;
    }
    let summary = plan::summarise(&matrix);
    let shared = blockers::shared_blockers(&matrix, o.blockers);
    out.stdout = match o.format {
        Format::Json => {
            report::to_json(&serde_json::json!({ "summary": summary, "shared_blockers": shared }))
        }
        _ => {
            let mut s = String::new();
            if !inputs.ledger.is_clean() {
                s.push_str(&format!(
                    "note: {} data-quality problems in the inputs (run `basefit check` for the list)\n\n",
                    inputs.ledger.problems.len()
                ));
            }
            s.push_str(&text::plan_text(&summary, &shared));
            s
        }
    };
    Ok(out)
}

/// Writes `matrix.yaml` and `matrix.json` into `dir`.
pub fn write_matrix(matrix: &Matrix, dir: &std::path::Path, out: &mut Output) -> Result<()> {
    let yaml = dir.join("matrix.yaml");
    let json = dir.join("matrix.json");
    report::write_atomic(&yaml, report::to_yaml(matrix).as_bytes())?;
    report::write_atomic(&json, report::to_json(matrix).as_bytes())?;
    out.stderr
        .push(format!("wrote {} and {}", yaml.display(), json.display()));
    Ok(())
}

pub struct ExplainCommand {
    pub inputs: InputPaths,
    pub strict: bool,
    pub plan: PlanOptions,
    pub package: String,
    pub image: String,
    pub format: Format,
}

/// `explain`: one cell in depth. Exit 1 when it does not install cleanly.
pub fn explain(o: &ExplainCommand) -> Result<Output> {
    let inputs = load(&o.inputs, o.strict)?;
    let e = plan::explain::explain(&inputs, &o.package, &o.image, &o.plan)?;
    let stdout = match o.format {
        Format::Json => report::to_json(&e),
        _ => text::explain_text(&e),
    };
    Ok(Output {
        stdout,
        stderr: Vec::new(),
        exit: if plan::explain::needs_attention(e.cell.outcome) {
            exit::FOUND
        } else {
            exit::OK
        },
    })
}
