//! Renders a matrix JSON file (as `basefit plan --out` writes it) as Markdown, CSV and HTML.
//!
//! `cargo run --example render -- MATRIX.json OUTDIR` writes OUTDIR/matrix.md, matrix.csv and
//! matrix.html; the browser check (tests/browser/run.sh) loads the HTML page.

use anyhow::{Context, Result, bail};
use basefit::plan::Matrix;
use basefit::report::{self, write_atomic};
use std::path::PathBuf;

fn main() -> Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let [input, out] = args.as_slice() else {
        bail!("usage: render MATRIX.json OUTDIR");
    };
    let text = std::fs::read_to_string(input).with_context(|| format!("cannot read {input}"))?;
    let m: Matrix =
        serde_json::from_str(&text).with_context(|| format!("{input} is not a matrix"))?;
    let out = PathBuf::from(out);
    write_atomic(&out.join("matrix.md"), report::markdown(&m).as_bytes())?;
    write_atomic(&out.join("matrix.csv"), report::csv(&m).as_bytes())?;
    write_atomic(&out.join("matrix.html"), report::html(&m).as_bytes())?;
    eprintln!(
        "wrote matrix.md, matrix.csv and matrix.html in {}",
        out.display()
    );
    Ok(())
}
