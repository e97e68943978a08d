//! The support matrix as a Markdown page for documentation sites: a packages × images table
//! with one symbol per cell, a legend, numbered notes on every cell that does not simply
//! install, and a table of the images with their counts.
//!
//! The output is GitHub-flavoured Markdown (pipe tables) and avoids HTML, footnote syntax and
//! other extensions, so it reads the same in any renderer and in a plain diff.

use super::layout::{self, Mark, grid, mark_of, one_line, outcome_label, outcome_symbol};
use crate::plan::matrix::{Cell, Matrix, NATIVE_SKIPPED_NOTICE, NOTICE, Outcome};
use std::collections::HashMap;
use std::fmt::Write;

/// Shown in place of a symbol where the matrix holds no cell (a sharded or partial matrix).
pub const NO_CELL: &str = "–";

/// Escapes text from the input for a Markdown table cell or paragraph.
///
/// Line breaks become spaces (a break would end the table row), and every character that
/// Markdown, GitHub's extensions or MDX-based sites give a meaning inside a line is
/// backslash-escaped, so input can neither add a column nor emphasis, links, HTML or maths.
///
/// GitHub also turns bare text into links (its autolink extension: `www.`, `scheme://`,
/// `mailto:`, `xmpp:` and e-mail addresses), so a package named `www.example.test` would be
/// a link in published documentation: the `@`, the `:` of a scheme (one not followed by a
/// space) and the `.` after `www` are escaped too, which the extension does not see through.
///
/// ```
/// use basefit::report::markdown::escape_markdown;
/// assert_eq!(escape_markdown("a|b<script>"), "a\\|b\\<script\\>");
/// assert_eq!(escape_markdown("www.x.test a@b.test"), "www\\.x.test a\\@b.test");
/// assert_eq!(escape_markdown("see: https://x.test"), "see: https\\://x.test");
/// ```
pub fn escape_markdown(s: &str) -> String {
    let line = one_line(s);
    let mut out = String::with_capacity(line.len() + 8);
    let mut chars = line.chars().peekable();
    while let Some(ch) = chars.next() {
        let link_start = match ch {
            '@' => true,
            ':' => chars.peek().is_some_and(|next| !next.is_whitespace()),
            '.' => {
                let b = out.as_bytes();
                b.len() >= 3 && b[b.len() - 3..].eq_ignore_ascii_case(b"www")
            }
            _ => false,
        };
        if link_start
            || matches!(
                ch,
                '\\' | '`'
                    | '*'
                    | '_'
                    | '{'
                    | '}'
                    | '['
                    | ']'
                    | '<'
                    | '>'
                    | '|'
                    | '~'
                    | '&'
                    | '$'
                    | '#'
                    | '!'
            )
        {
            out.push('\\');
        }
        out.push(ch);
    }
    out
}

/// [`escape_markdown`], except that a command basefit's advice quotes between backticks
/// (`` `basefit explain saltbush deb-2.4` ``) becomes a code span, whose content Markdown
/// shows as written: escaped, the backticks showed as text and the command did not read as
/// one. Only where every backtick has a partner and every quoted part is such a command;
/// else (a name or a log line holding backticks) everything is escaped, so no backtick of
/// the input goes missing.
///
/// ```
/// use basefit::report::markdown::escape_markdown_code;
/// assert_eq!(escape_markdown_code("run `basefit check` <now>"), "run `basefit check` \\<now\\>");
/// assert_eq!(escape_markdown_code("a`b"), "a\\`b");
/// assert_eq!(escape_markdown_code("`x` and `basefit check`"), r"\`x\` and \`basefit check\`");
/// ```
pub fn escape_markdown_code(s: &str) -> String {
    let line = one_line(s);
    let parts: Vec<&str> = line.split('`').collect();
    let paired = parts.len() % 2 == 1
        && parts
            .iter()
            .skip(1)
            .step_by(2)
            .all(|code| code.starts_with("basefit "));
    if !paired {
        return escape_markdown(&line);
    }
    let mut out = String::with_capacity(line.len() + 8);
    for (i, part) in parts.iter().enumerate() {
        if i % 2 == 1 {
            out.push('`');
            out.push_str(part);
            out.push('`');
        } else {
            out.push_str(&escape_markdown(part));
        }
    }
    out
}

/// One note under the table; cells of one package that fail the same way share it.
struct Note {
    row: usize,
    images: Vec<usize>,
    text: String,
}

/// How the notes under the table are labelled.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum NoteLabels {
    /// `[1]`, `[2]`, ... in reading order: short, for people reading one matrix.
    Numbered,
    /// `[saltbush on deb-2.4]`: the package and the first image the note is for, so a cell
    /// that changes relabels no note but its own (a note shared with later images of its row
    /// takes the next one's name, on lines that change anyway). Counting notes within a row
    /// would still renumber the row's later notes.
    ByCell,
}

/// Renders the matrix as Markdown. Rows keep the matrix's priority order and columns the
/// declared image order, so re-rendering after a change diffs line by line.
pub fn markdown(m: &Matrix) -> String {
    render(m, NoteLabels::Numbered)
}

/// [`markdown`] with each note labelled by its cell (`[saltbush on deb-2.4]`) instead of numbered,
/// for `diff`: with numbers, a cell that gains or loses a note renumbers every later note,
/// and the unified diff of two renderings is mostly rows whose only change is a number.
pub fn markdown_keyed(m: &Matrix) -> String {
    render(m, NoteLabels::ByCell)
}

fn render(m: &Matrix, labels: NoteLabels) -> String {
    let cells = grid(m);
    let counts = layout::column_counts(m, &cells);
    let mut out = String::new();

    let _ = writeln!(out, "> **Prediction, not a test result.** {NOTICE}\n");
    if m.native_skipped {
        let _ = writeln!(out, "> **Version solving only.** {NATIVE_SKIPPED_NOTICE}\n");
    }

    // Notes are numbered in reading order (row by row) and shared by identical causes of
    // one package, so a package that fails everywhere for one reason carries one note.
    let mut notes: Vec<Note> = Vec::new();
    let mut note_of: HashMap<(usize, String), usize> = HashMap::new();
    let mut refs: Vec<Vec<Option<usize>>> = Vec::with_capacity(cells.len());
    for (r, row) in cells.iter().enumerate() {
        let mut row_refs = Vec::with_capacity(row.len());
        for (c, slot) in row.iter().enumerate() {
            let number = slot
                .filter(|(_, cell)| layout::needs_note(cell))
                .map(|(_, cell)| {
                    let text = note_text(cell);
                    *note_of.entry((r, text.clone())).or_insert_with(|| {
                        notes.push(Note {
                            row: r,
                            images: Vec::new(),
                            text,
                        });
                        notes.len()
                    })
                });
            if let Some(n) = number
                && let Some(note) = notes.get_mut(n - 1)
            {
                note.images.push(c);
            }
            row_refs.push(number);
        }
        refs.push(row_refs);
    }
    // A note's label from its number (1-based).
    let label = |n: usize| match labels {
        NoteLabels::Numbered => n.to_string(),
        NoteLabels::ByCell => {
            let note = notes.get(n - 1);
            let package = note.and_then(|t| m.packages.get(t.row));
            let image = note
                .and_then(|t| t.images.first())
                .and_then(|&c| m.images.get(c));
            format!(
                "{} on {}",
                escape_markdown(package.map_or("", |p| p.name.as_str())),
                escape_markdown(image.map_or("", |i| i.id.as_str()))
            )
        }
    };

    out.push_str("| # | package |");
    for img in &m.images {
        let _ = write!(out, " {} |", escape_markdown(&img.id));
    }
    out.push_str("\n| ---: | :--- |");
    for _ in &m.images {
        out.push_str(" :---: |");
    }
    out.push('\n');
    let mut any_missing = false;
    for ((row, slots), row_refs) in m.packages.iter().zip(&cells).zip(&refs) {
        let _ = write!(out, "| {} | {} |", row.rank, escape_markdown(&row.name));
        for (slot, note) in slots.iter().zip(row_refs) {
            match slot {
                Some((_, cell)) => {
                    out.push(' ');
                    out.push_str(&cell_symbol(cell));
                    if let Some(n) = note {
                        let _ = write!(out, " [{}]", label(*n));
                    }
                    out.push_str(" |");
                }
                None => {
                    any_missing = true;
                    let _ = write!(out, " {NO_CELL} |");
                }
            }
        }
        out.push('\n');
    }

    out.push_str("\n**Legend**\n\n");
    for o in Outcome::ALL {
        let _ = writeln!(
            out,
            "- {} {}: {}",
            outcome_symbol(o),
            outcome_label(o),
            layout::outcome_meaning(o, m.native_skipped)
        );
    }
    for mark in [Mark::Surprise, Mark::Unsettled, Mark::Agreed] {
        let _ = writeln!(
            out,
            "- {} after a symbol: {}",
            mark.symbol(),
            mark.meaning()
        );
    }
    if any_missing {
        let _ = writeln!(out, "- {NO_CELL} not in this matrix (not planned)");
    }
    out.push_str(match labels {
        NoteLabels::Numbered => "- [n] see note n below\n",
        NoteLabels::ByCell => "- [package on image] see the note of that label below\n",
    });

    if !notes.is_empty() {
        out.push_str("\n**Notes**\n\n");
        for (i, note) in notes.iter().enumerate() {
            let package = m.packages.get(note.row).map_or("", |p| p.name.as_str());
            let images: Vec<String> = note
                .images
                .iter()
                .filter_map(|&c| m.images.get(c))
                .map(|img| escape_markdown(&img.id))
                .collect();
            let _ = writeln!(
                out,
                "- **[{}]** {} on {}: {}",
                label(i + 1),
                escape_markdown(package),
                images.join(", "),
                note.text
            );
        }
    }

    out.push_str("\n**Images**\n\n");
    out.push_str(
        "| image | runtime | family | platform | C toolchain | ✓ | △ | ✗ | ? | priority weight resolving |\n",
    );
    out.push_str("| :--- | :--- | :--- | :--- | :---: | ---: | ---: | ---: | ---: | ---: |\n");
    for (img, k) in m.images.iter().zip(&counts) {
        let _ = writeln!(
            out,
            "| {} | {} | {} | {} | {} | {} | {} | {} | {} | {} |",
            escape_markdown(&img.id),
            escape_markdown(&img.runtime),
            escape_markdown(&img.family),
            escape_markdown(&img.platform),
            match (img.toolchain, img.cxx) {
                (true, Some(false)) => "C only",
                (true, _) => "yes",
                (false, _) => "no",
            },
            k.installs,
            k.at_risk,
            k.fails,
            k.undecided,
            // Markdown tables read `>=` as text; undecided cells may yet resolve.
            super::at_least_if_undecided(k.undecided, layout::percent(k.weight_share)),
        );
    }
    let recorded: usize = counts.iter().map(|k| k.recorded()).sum();
    if recorded > 0 {
        let surprises: usize = counts.iter().map(|k| k.surprises).sum();
        let unsettled: usize = counts.iter().map(|k| k.unsettled).sum();
        let _ = writeln!(
            out,
            "\nRecorded installs cover {recorded} {}: {} agree, {surprises} contradict the \
             prediction, {unsettled} neither ({}).",
            if recorded == 1 { "cell" } else { "cells" },
            recorded - surprises - unsettled,
            layout::UNSETTLED_KINDS
        );
    }
    out
}

/// The symbol of a cell with its recorded-install marker.
pub(crate) fn cell_symbol(cell: &Cell) -> String {
    let mut s = outcome_symbol(cell.outcome).to_string();
    if let Some(mark) = mark_of(cell) {
        s.push_str(mark.symbol());
    }
    s
}

/// The escaped text of a note, without the package and image names that head it.
/// Whether `text` names `word` on its own, not inside a longer name or id (`libpq-dev`
/// inside `libpq-dev-extra`, or in an image id that a cut reason still shows).
fn names_word(text: &str, word: &str) -> bool {
    let part_of_name = |c: char| c.is_alphanumeric() || matches!(c, '-' | '+' | '_');
    text.match_indices(word).any(|(at, _)| {
        let before = text[..at].chars().next_back();
        let mut after = text[at + word.len()..].chars();
        // A dot goes on a name (`python3.11-dev`) when more of the name follows it; at a
        // sentence's end it does not.
        let continues = match after.next() {
            Some('.') => after.next().is_some_and(part_of_name),
            next => next.is_some_and(part_of_name),
        };
        !before.is_some_and(|c| part_of_name(c) || c == '.') && !continues
    })
}

fn note_text(cell: &Cell) -> String {
    let mut text = format!(
        "{} {}",
        outcome_symbol(cell.outcome),
        outcome_label(cell.outcome)
    );
    if let Some(cause) = cell.cause {
        let _ = write!(text, ", {} ({})", cause.as_str(), cause.label());
    }
    let reason = layout::reason(cell);
    if !reason.is_empty() {
        let _ = write!(text, " — {}", escape_markdown_code(&reason));
    }
    let unnamed: Vec<&str> = cell
        .missing_system_packages
        .iter()
        .map(String::as_str)
        .filter(|p| !names_word(&reason, p))
        .collect();
    if !unnamed.is_empty() {
        // When the reason named some, these are not the whole list.
        let lead = if unnamed.len() < cell.missing_system_packages.len() {
            "Also to add"
        } else {
            "System packages to add"
        };
        let _ = write!(text, ". {lead}: {}", escape_markdown(&unnamed.join(" ")));
    }
    if let Some(rec) = &cell.recorded {
        // Retries that disagree: say what they recorded; the verdict follows in brackets.
        let recorded = match rec.recorded.as_str() {
            "flaky" => "failed and installed",
            other => other,
        };
        let _ = write!(
            text,
            ". Recorded: {} ({}, {} attempt{})",
            escape_markdown(recorded),
            escape_markdown(&rec.verdict),
            rec.attempts,
            if rec.attempts == 1 { "" } else { "s" }
        );
        if let Some(v) = &rec.version {
            let _ = write!(text, ", version {}", escape_markdown(v));
        }
        let detail = one_line(&rec.detail);
        if !detail.is_empty() {
            let _ = write!(text, ": {}", escape_markdown_code(&detail));
        }
    }
    text
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_system_package_counts_as_named_only_as_a_whole_name() {
        assert!(names_word("needs libpq-dev.", "libpq-dev"));
        assert!(names_word("add libpq-dev libxml2-dev", "libxml2-dev"));
        assert!(!names_word("on image libpq-dev-builder", "libpq-dev"));
        assert!(!names_word("needs xlibpq-dev", "libpq-dev"));
        assert!(!names_word("", "libpq-dev"));
        assert!(!names_word("needs python3.11-dev", "python3"));
        assert!(!names_word("needs lib.python3", "python3"));
        assert!(names_word("needs python3. Then", "python3"));
    }

    #[test]
    fn packages_the_reason_left_unnamed_are_not_called_the_whole_list() {
        let mut cell = Cell::new("plover", "deb", crate::plan::Outcome::Fails);
        cell.explanation = vec!["needs libpng; add: libpng-dev".into()];
        cell.missing_system_packages = vec!["gfortran".into(), "libpng-dev".into()];
        let text = note_text(&cell);
        assert!(
            text.ends_with("add: libpng-dev. Also to add: gfortran"),
            "{text}"
        );
        cell.explanation = vec!["needs a Fortran compiler".into()];
        let text = note_text(&cell);
        assert!(
            text.ends_with(". System packages to add: gfortran libpng-dev"),
            "{text}"
        );
    }

    #[test]
    fn escaping_keeps_table_structure_and_html_out() {
        assert_eq!(escape_markdown("a|b"), "a\\|b");
        assert_eq!(escape_markdown("<script>"), "\\<script\\>");
        assert_eq!(escape_markdown("x\\|y"), "x\\\\\\|y");
        assert_eq!(escape_markdown("line\nbreak"), "line break");
        assert_eq!(escape_markdown("&amp;"), "\\&amp;");
    }
}
