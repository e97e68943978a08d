//! The support matrix as one self-contained HTML page: a colour grid of packages × images
//! with filters by image family, outcome and package name, a detail panel per cell, a legend
//! and a summary per image.
//!
//! The page fetches nothing: styles and script are inline, the fonts are the reader's own,
//! and a Content-Security-Policy forbids every network load. The grid itself is plain HTML
//! and reads without script; the script adds filters, keyboard navigation and the detail
//! panel, which it fills from the matrix embedded as JSON, using text nodes only.

use super::layout::{self, ColumnCounts, Mark, grid, mark_of, one_line};
use crate::model::OsFamily;
use crate::native::install_command;
use crate::plan::matrix::{Cell, Matrix, NATIVE_SKIPPED_NOTICE, NOTICE, Outcome};
use crate::solve::Cause;
use serde::Serialize;
use std::collections::BTreeMap;
use std::fmt::Write;

const STYLE: &str = include_str!("html/page.css");
const SCRIPT: &str = include_str!("html/page.js");

/// The `id` of the `<script type="application/json">` element that holds the data.
pub const DATA_ID: &str = "basefit-data";

/// Cell colours as (background, text), checked for contrast in the tests. The hues follow
/// Paul Tol's colour-blind-safe schemes: blue and amber sit on the axis that red-green colour
/// blindness keeps, and the failing colour is darker than both by a contrast of at least 3:1,
/// so failures stand out even in greyscale. Every cell also shows a symbol, so colour is
/// never the only cue.
pub const PALETTE: [(Outcome, &str, &str); 4] = [
    (Outcome::Installs, "#88bbee", "#14181d"),
    (Outcome::AtRisk, "#ddaa33", "#14181d"),
    (Outcome::Fails, "#882d45", "#ffffff"),
    (Outcome::Undecided, "#e3e6ea", "#14181d"),
];

/// Escapes text for HTML element content and quoted attribute values.
///
/// Line breaks and tabs become character references too: a parser turns a raw CR LF into LF
/// before it reads attributes, which would make a `data-` hook differ from the value.
///
/// ```
/// use basefit::report::html::escape_html;
/// assert_eq!(escape_html("<b title='x'>&"), "&lt;b title=&#39;x&#39;&gt;&amp;");
/// ```
pub fn escape_html(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 8);
    for ch in s.chars() {
        match ch {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            '\r' => out.push_str("&#13;"),
            '\n' => out.push_str("&#10;"),
            '\t' => out.push_str("&#9;"),
            _ => out.push(ch),
        }
    }
    out
}

/// Escapes serialized JSON for a `<script type="application/json">` element: no input can
/// close the element, open a comment, or break the script when a browser treats U+2028/2029
/// as line ends. These characters occur only inside JSON strings, where `\uXXXX` means the
/// same, so the text still parses to the same value.
pub fn escape_json_for_script(json: &str) -> String {
    let mut out = String::with_capacity(json.len());
    for ch in json.chars() {
        match ch {
            '<' => out.push_str("\\u003c"),
            '>' => out.push_str("\\u003e"),
            '&' => out.push_str("\\u0026"),
            '\u{2028}' => out.push_str("\\u2028"),
            '\u{2029}' => out.push_str("\\u2029"),
            _ => out.push(ch),
        }
    }
    out
}

/// What the page embeds: the matrix as it is, plus text the script should not have to know
/// how to make.
#[derive(Serialize)]
struct Payload<'m> {
    notice: &'static str,
    matrix: &'m Matrix,
    /// Command adding a cell's missing system packages, by index into `matrix.cells`.
    install_commands: BTreeMap<usize, String>,
    labels: Labels,
}

/// Words the script shows, kept in Rust so every format says the same thing.
#[derive(Serialize)]
struct Labels {
    outcomes: BTreeMap<&'static str, OutcomeLabel>,
    causes: BTreeMap<&'static str, &'static str>,
    marks: BTreeMap<&'static str, &'static str>,
}

#[derive(Serialize)]
struct OutcomeLabel {
    symbol: &'static str,
    label: &'static str,
    meaning: &'static str,
}

fn labels(native_skipped: bool) -> Labels {
    Labels {
        outcomes: Outcome::ALL
            .into_iter()
            .map(|o| {
                (
                    o.as_str(),
                    OutcomeLabel {
                        symbol: layout::outcome_symbol(o),
                        label: layout::outcome_label(o),
                        meaning: layout::outcome_meaning(o, native_skipped),
                    },
                )
            })
            .collect(),
        causes: Cause::ALL
            .into_iter()
            .map(|c| (c.as_str(), c.label()))
            .collect(),
        marks: [Mark::Agreed, Mark::Surprise, Mark::Unsettled]
            .into_iter()
            .map(|m| (mark_name(m), m.meaning()))
            .collect(),
    }
}

/// A few words for a cell too small for the cause's sentence.
fn short_cause(cause: Cause) -> &'static str {
    match cause {
        Cause::RuntimeTooOld => "runtime too old",
        Cause::RuntimeTooNew => "runtime too new",
        Cause::DependencyConflict => "conflict",
        Cause::MissingFromRegistry => "not in registry",
        Cause::NoBuildForPlatform => "no build",
        Cause::OnlyYankedOrPrerelease => "yanked / pre",
        Cause::BudgetExhausted => "budget",
        Cause::MissingSystemLibrary => "system library",
        Cause::MissingToolchain => "no compiler",
    }
}

fn outcome_class(o: Outcome) -> &'static str {
    match o {
        Outcome::Installs => "o-installs",
        Outcome::AtRisk => "o-at-risk",
        Outcome::Fails => "o-fails",
        Outcome::Undecided => "o-undecided",
    }
}

fn mark_name(m: Mark) -> &'static str {
    match m {
        Mark::Agreed => "agreed",
        Mark::Surprise => "surprise",
        Mark::Unsettled => "unsettled",
    }
}

/// Display text for the page: one line, bidi controls neutralised, then escaped.
fn text(s: &str) -> String {
    escape_html(&one_line(s))
}

/// Pages above this size (64 MiB) load slowly or not at all in common browsers (common
/// practice, no source): the page embeds every cell's detail, 1 to 3 KB a cell (tens of
/// thousands of cells).
pub const LARGE_PAGE_BYTES: usize = 64 << 20;

/// A note for a page of `bytes` above [`LARGE_PAGE_BYTES`], naming `page` and what to read
/// instead (`instead`: the other files written, or the other formats).
///
/// ```
/// use basefit::report::html::{LARGE_PAGE_BYTES, large_page_note};
/// assert!(large_page_note("m.html", LARGE_PAGE_BYTES, "m.md").is_none());
/// let note = large_page_note("m.html", LARGE_PAGE_BYTES + 1, "m.md").unwrap();
/// assert!(note.contains("m.html is 64 MiB") && note.contains("read m.md"));
/// ```
pub fn large_page_note(page: &str, bytes: usize, instead: &str) -> Option<String> {
    (bytes > LARGE_PAGE_BYTES).then(|| {
        format!(
            "note: {page} is {} MiB: browsers load pages this large slowly or not at all; for a list this long read {instead}, or render a shorter priority list",
            bytes >> 20
        )
    })
}

/// Renders the page. Rows keep the matrix's priority order and columns the declared image
/// order; nothing depends on time, locale or hashing order, so the same matrix gives the
/// same bytes.
pub fn html(m: &Matrix) -> String {
    let cells = grid(m);
    let counts = layout::column_counts(m, &cells);
    let families = families(m);
    let mut out = String::with_capacity(16 * 1024 + m.cells.len() * 600);

    let _ = write!(
        out,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
         <meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; \
         style-src 'unsafe-inline'; script-src 'unsafe-inline'; img-src data:; \
         base-uri 'none'; form-action 'none'\">\n\
         <meta name=\"generator\" content=\"basefit {}\">\n\
         <title>Support matrix: {} packages on {} images</title>\n<style>\n{STYLE}</style>\n</head>\n<body>\n",
        env!("CARGO_PKG_VERSION"),
        m.packages.len(),
        m.images.len()
    );

    out.push_str("<header class=\"masthead\">\n<p class=\"eyebrow\">Support matrix</p>\n");
    let _ = writeln!(
        out,
        "<h1>Which packages install on which images</h1>\n<p class=\"lede\">{} packages in \
         priority order, predicted on {} images.</p>\n</header>",
        m.packages.len(),
        m.images.len()
    );
    let _ = writeln!(
        out,
        "<aside class=\"notice\" id=\"notice\" role=\"note\"><div class=\"notice-box\"><span class=\"notice-icon\" \
         aria-hidden=\"true\">!</span><p><strong>Prediction, not a test result.</strong> {}</p></div></aside>",
        escape_html(NOTICE)
    );
    if m.native_skipped {
        let _ = writeln!(
            out,
            "<aside class=\"notice\" id=\"notice-native\" role=\"note\"><div class=\"notice-box\"><span class=\"notice-icon\" \
             aria-hidden=\"true\">!</span><p><strong>Version solving only.</strong> {}</p></div></aside>",
            escape_html(NATIVE_SKIPPED_NOTICE)
        );
    }

    out.push_str("<main>\n");
    controls(&mut out, m, &families, &counts);

    out.push_str("<div class=\"workspace\">\n<section class=\"grid-section\" aria-labelledby=\"grid-title\">\n");
    out.push_str("<div class=\"grid-top\"><h2 id=\"grid-title\">Matrix</h2>\n");
    out.push_str(
        "<p class=\"hint\" data-needs-script hidden>Highest priority first. Select a cell, or move with the arrow keys \
         and press Enter, for its resolved versions or why it fails.</p></div>\n",
    );
    legend(&mut out, m.native_skipped);
    out.push_str("<div class=\"grid-wrap\">\n<table class=\"grid\" id=\"grid\" role=\"grid\" aria-labelledby=\"grid-title\">\n<thead>\n<tr>\n");
    out.push_str("<th scope=\"col\" class=\"corner\"><span class=\"corner-main\">Package</span><span class=\"corner-sub\">rank · weight</span></th>\n");
    for (c, img) in m.images.iter().enumerate() {
        let _ = writeln!(
            out,
            "<th scope=\"col\" class=\"col-image\" data-image=\"{}\" data-family=\"{}\" data-col=\"{c}\">\
             <span class=\"img-id\">{}</span><span class=\"img-sub\">{} · {}</span></th>",
            escape_html(&img.id),
            escape_html(&img.family),
            text(&img.id),
            text(&img.runtime),
            text(&img.family),
        );
    }
    out.push_str("</tr>\n</thead>\n<tfoot>\n<tr>\n<th scope=\"row\" class=\"row-head foot-head\">Resolves<span class=\"corner-sub\">share of priority weight</span></th>\n");
    for (c, (img, k)) in m.images.iter().zip(&counts).enumerate() {
        let _ = writeln!(
            out,
            "<td class=\"foot\" data-image=\"{}\" data-family=\"{}\" data-col=\"{c}\"><strong>{}</strong> of {}<span class=\"foot-share\">{}</span></td>",
            escape_html(&img.id),
            escape_html(&img.family),
            k.installs + k.at_risk,
            m.packages.len(),
            at_least_if_undecided(k),
        );
    }
    out.push_str("</tr>\n</tfoot>\n<tbody>\n");
    let mut first = true;
    for (r, (row, slots)) in m.packages.iter().zip(&cells).enumerate() {
        let _ = writeln!(
            out,
            "<tr data-package=\"{}\" data-row=\"{r}\">",
            escape_html(&row.name)
        );
        let _ = write!(
            out,
            "<th scope=\"row\" class=\"row-head\"><span class=\"pkg-line\"><span class=\"rank\">{}</span>\
             <span class=\"pkg\">{}</span><span class=\"weight\">{}</span></span>",
            row.rank,
            text(&row.name),
            escape_html(&weight(row.weight)),
        );
        if let Some(summary) = row.summary.as_deref().filter(|s| !s.trim().is_empty()) {
            let _ = write!(
                out,
                "<span class=\"summary\" title=\"{}\">{}</span>",
                text(summary),
                text(summary)
            );
        }
        out.push_str("</th>\n");
        for (c, (img, slot)) in m.images.iter().zip(slots).enumerate() {
            let hooks = format!(
                "data-package=\"{}\" data-image=\"{}\" data-family=\"{}\" data-row=\"{r}\" data-col=\"{c}\"",
                escape_html(&row.name),
                escape_html(&img.id),
                escape_html(&img.family),
            );
            let tab = if first { "0" } else { "-1" };
            first = false;
            match slot {
                Some((index, cell)) => {
                    grid_cell(&mut out, &hooks, tab, *index, cell, &row.name, &img.id)
                }
                None => {
                    let _ = writeln!(
                        out,
                        "<td class=\"cell o-missing\" {hooks} data-outcome=\"missing\" tabindex=\"{tab}\" \
                         role=\"gridcell\" aria-label=\"{} on {}: not in this matrix\">\
                         <span class=\"sym\" aria-hidden=\"true\">–</span><span class=\"txt\">not planned</span></td>",
                        text(&row.name),
                        text(&img.id)
                    );
                }
            }
        }
        out.push_str("</tr>\n");
    }
    out.push_str("</tbody>\n</table>\n");
    if m.packages.is_empty() || m.images.is_empty() {
        out.push_str(
            "<p class=\"empty\">This matrix has no cells: it lists no packages or no images.</p>\n",
        );
    }
    out.push_str("<p class=\"empty\" id=\"grid-empty\" hidden>No cell matches the filters.</p>\n");
    out.push_str("</div>\n</section>\n");

    out.push_str(
        "<aside class=\"detail\" id=\"detail\" aria-labelledby=\"detail-title\" data-open=\"false\" data-needs-script hidden>\n\
         <div class=\"detail-head\"><h2 id=\"detail-title\" tabindex=\"-1\">Cell detail</h2>\
         <button type=\"button\" id=\"detail-close\" class=\"detail-close\" hidden aria-label=\"Close the detail panel\">Close</button></div>\n\
         <div id=\"detail-body\" class=\"detail-body\"><p class=\"detail-empty\">Select a cell to see \
         the versions it resolves to, or why it fails, with its native needs and any recorded \
         install.</p></div>\n</aside>\n</div>\n",
    );
    images_section(&mut out, m, &counts);
    out.push_str("</main>\n");

    let _ = writeln!(
        out,
        "<footer class=\"footer\"><p>Rendered by basefit {} from declared package metadata. {}</p></footer>",
        env!("CARGO_PKG_VERSION"),
        escape_html(NOTICE)
    );

    let payload = Payload {
        notice: NOTICE,
        matrix: m,
        install_commands: install_commands(m),
        labels: labels(m.native_skipped),
    };
    // Serializing plain data into memory fails only on non-string map keys, which the
    // payload has none of; an empty object keeps the page usable if it ever did.
    let json = serde_json::to_string(&payload).unwrap_or_else(|_| "{}".to_string());
    let _ = writeln!(
        out,
        "<script type=\"application/json\" id=\"{DATA_ID}\">{}</script>",
        escape_json_for_script(&json)
    );
    let _ = write!(out, "<script>\n{SCRIPT}</script>\n</body>\n</html>\n");
    out
}

/// Image families in declared order of first appearance.
fn families(m: &Matrix) -> Vec<&str> {
    let mut seen: Vec<&str> = Vec::new();
    for img in &m.images {
        if !seen.contains(&img.family.as_str()) {
            seen.push(img.family.as_str());
        }
    }
    seen
}

fn weight(w: f64) -> String {
    if w.is_finite() {
        format!("w {w}")
    } else {
        "w n/a".to_string()
    }
}

fn install_commands(m: &Matrix) -> BTreeMap<usize, String> {
    let mut out = BTreeMap::new();
    for (i, cell) in m.cells.iter().enumerate() {
        if cell.missing_system_packages.is_empty() {
            continue;
        }
        let family = m
            .images
            .iter()
            .find(|img| img.id == cell.image)
            .and_then(|img| OsFamily::parse(&img.family));
        if let Some(family) = family {
            out.insert(i, install_command(family, &cell.missing_system_packages));
        }
    }
    out
}

fn grid_cell(
    out: &mut String,
    hooks: &str,
    tab: &str,
    index: usize,
    cell: &Cell,
    package: &str,
    image: &str,
) {
    let mark = mark_of(cell);
    let short = match cell.outcome {
        Outcome::Installs | Outcome::AtRisk => cell.root_version.clone().unwrap_or_default(),
        Outcome::Fails | Outcome::Undecided => cell
            .cause
            .map(short_cause)
            .unwrap_or(layout::outcome_label(cell.outcome))
            .to_string(),
    };
    let mut label = format!(
        "{} on {}: {}",
        one_line(package),
        one_line(image),
        layout::outcome_label(cell.outcome)
    );
    if let Some(v) = cell
        .root_version
        .as_deref()
        .filter(|_| cell.outcome.resolves())
    {
        let _ = write!(label, " {}", one_line(v));
    }
    if let Some(cause) = cell.cause {
        let _ = write!(label, ", {}", cause.label());
    }
    if let Some(m) = mark {
        let _ = write!(label, "; {}", m.meaning());
    }
    let _ = write!(
        out,
        "<td class=\"cell {}\" {hooks} data-outcome=\"{}\" data-index=\"{index}\"",
        outcome_class(cell.outcome),
        cell.outcome.as_str(),
    );
    if let Some(m) = mark {
        let _ = write!(out, " data-mark=\"{}\"", mark_name(m));
    }
    let _ = write!(
        out,
        " tabindex=\"{tab}\" role=\"gridcell\" aria-label=\"{}\"><span class=\"sym\" aria-hidden=\"true\">{}</span><span class=\"txt\">{}</span>",
        escape_html(&label),
        layout::outcome_symbol(cell.outcome),
        text(&short),
    );
    if let Some(m) = mark {
        let title = match m {
            Mark::Agreed => "recorded installs agree",
            _ => m.meaning(),
        };
        let _ = write!(
            out,
            "<span class=\"mark mark-{}\" aria-hidden=\"true\" title=\"{title}\">{}</span>",
            mark_name(m),
            m.symbol()
        );
    }
    out.push_str("</td>\n");
}

/// An image's share of priority weight as the page prints it beside its counts: with
/// undecided cells it is a lower bound (they may yet resolve), said "at least" as the image
/// summary below says it (README, "The weight resolving on an image with undecided cells
/// is a lower bound").
fn at_least_if_undecided(k: &ColumnCounts) -> String {
    let shown = layout::percent(k.weight_share);
    match super::share_is_lower_bound(k.undecided, &shown) {
        true => format!("at least {shown}"),
        false => shown,
    }
}

fn images_section(out: &mut String, m: &Matrix, counts: &[ColumnCounts]) {
    out.push_str("<section class=\"images\" aria-labelledby=\"images-title\">\n<h2 id=\"images-title\">Images</h2>\n<p class=\"hint\">In declared order, with what the matrix predicts on each.</p>\n<ul class=\"image-list\">\n");
    let rows = m.packages.len();
    for (img, k) in m.images.iter().zip(counts) {
        let _ = write!(
            out,
            "<li class=\"image-summary\" data-image=\"{}\" data-family=\"{}\">\n\
             <div class=\"image-top\"><span class=\"image-id\">{}</span><span class=\"tag\">{}</span></div>\n\
             <div class=\"image-meta\">runtime {} · {} · {}</div>\n<div class=\"bar\" aria-hidden=\"true\">",
            escape_html(&img.id),
            escape_html(&img.family),
            text(&img.id),
            text(&img.family),
            text(&img.runtime),
            text(&img.platform),
            match (img.toolchain, img.cxx) {
                (true, Some(false)) => "C compiler only",
                (true, _) => "C toolchain",
                (false, _) => "no C toolchain",
            },
        );
        for o in Outcome::ALL {
            let n = k.of(o);
            if n > 0 {
                let _ = write!(
                    out,
                    "<span class=\"seg {}\" style=\"flex-grow:{n}\"></span>",
                    outcome_class(o)
                );
            }
        }
        if k.missing > 0 {
            let _ = write!(
                out,
                "<span class=\"seg o-missing\" style=\"flex-grow:{}\"></span>",
                k.missing
            );
        }
        out.push_str("</div>\n<p class=\"image-line\">");
        let parts: Vec<String> = Outcome::ALL
            .iter()
            .map(|&o| {
                format!(
                    "<span class=\"count-chip\"><span class=\"sym-inline\" aria-hidden=\"true\">{}</span> {} {}</span>",
                    layout::outcome_symbol(o),
                    k.of(o),
                    layout::outcome_label(o)
                )
            })
            .collect();
        out.push_str(&parts.join(" "));
        out.push_str("</p>\n<p class=\"image-share\">");
        let resolving = k.installs + k.at_risk;
        match k.weight_share {
            // Undecided cells may yet resolve: the share is then a lower bound.
            Some(share) => {
                let shown = layout::percent(Some(share));
                let _ = write!(
                    out,
                    "{}<strong>{shown}</strong> of priority weight resolves ({resolving} of {rows} packages)",
                    match super::share_is_lower_bound(k.undecided, &shown) {
                        true => "at least ",
                        false => "",
                    },
                );
            }
            None => {
                let _ = write!(out, "{resolving} of {rows} packages resolve");
            }
        }
        if k.missing > 0 {
            let _ = write!(out, "; {} not planned", k.missing);
        }
        out.push_str("</p>\n");
        if k.recorded() > 0 {
            let mut parts = Vec::new();
            let neither = format!("neither ({})", layout::UNSETTLED_KINDS);
            for (n, what) in [
                (k.agreed, "agree"),
                (k.surprises, "contradict the prediction"),
                (k.unsettled, neither.as_str()),
            ] {
                if n > 0 {
                    parts.push(format!("{n} {what}"));
                }
            }
            let _ = writeln!(
                out,
                "<p class=\"image-recorded\">Recorded installs: {}</p>",
                parts.join(", ")
            );
        }
        out.push_str("</li>\n");
    }
    out.push_str("</ul>\n</section>\n");
}

fn controls(out: &mut String, m: &Matrix, families: &[&str], counts: &[ColumnCounts]) {
    // Hidden until the script runs: without it the filters could not work.
    out.push_str("<section class=\"controls\" id=\"controls\" aria-label=\"Filters\" data-needs-script hidden>\n");
    out.push_str("<fieldset class=\"filter\" id=\"filter-family\"><legend>Image family</legend>\n");
    for (i, fam) in families.iter().enumerate() {
        let n = m.images.iter().filter(|img| img.family == *fam).count();
        let _ = writeln!(
            out,
            "<label class=\"toggle\"><input type=\"checkbox\" id=\"filter-family-{i}\" data-family=\"{}\" checked>\
             <span class=\"toggle-text\">{}</span><span class=\"count\">{n}</span></label>",
            escape_html(fam),
            text(fam),
        );
    }
    out.push_str(
        "</fieldset>\n<fieldset class=\"filter\" id=\"filter-outcome\"><legend>Outcome</legend>\n",
    );
    for o in Outcome::ALL {
        let n: usize = counts.iter().map(|k| k.of(o)).sum();
        let _ = writeln!(
            out,
            "<label class=\"toggle toggle-outcome {}\"><input type=\"checkbox\" id=\"filter-outcome-{}\" data-outcome=\"{}\" checked>\
             <span class=\"swatch\" aria-hidden=\"true\">{}</span><span class=\"toggle-text\">{}</span><span class=\"count\">{n}</span></label>",
            outcome_class(o),
            o.as_str(),
            o.as_str(),
            layout::outcome_symbol(o),
            layout::outcome_label(o),
        );
    }
    out.push_str("</fieldset>\n<div class=\"filter filter-search\"><label for=\"filter-package\">Package</label>\
                  <input type=\"search\" id=\"filter-package\" placeholder=\"name contains…\" autocomplete=\"off\" spellcheck=\"false\"></div>\n");
    out.push_str("<button type=\"button\" id=\"filter-reset\" class=\"reset\">Show all</button>\n");
    out.push_str("<p class=\"status\" id=\"filter-status\" role=\"status\" aria-live=\"polite\"></p>\n</section>\n");
}

fn legend(out: &mut String, native_skipped: bool) {
    out.push_str("<section class=\"legend\" aria-labelledby=\"legend-title\">\n<h3 id=\"legend-title\" class=\"visually-hidden\">Legend</h3>\n<dl class=\"legend-list\">\n");
    for o in Outcome::ALL {
        let _ = writeln!(
            out,
            "<div class=\"legend-item\"><dt><span class=\"swatch {}\" aria-hidden=\"true\">{}</span>{}</dt><dd>{}</dd></div>",
            outcome_class(o),
            layout::outcome_symbol(o),
            layout::outcome_label(o),
            layout::outcome_meaning(o, native_skipped)
        );
    }
    out.push_str("</dl>\n<p class=\"legend-marks\">Corner marks, where installs were recorded:");
    for mark in [Mark::Surprise, Mark::Unsettled, Mark::Agreed] {
        let _ = write!(
            out,
            " <span class=\"legend-mark\"><span class=\"swatch swatch-mark mark-{}\" aria-hidden=\"true\">{}</span>{}</span>",
            mark_name(mark),
            mark.symbol(),
            mark.meaning()
        );
    }
    out.push_str("</p>\n</section>\n");
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Relative luminance as WCAG 2 defines it, from `#rrggbb`.
    fn luminance(hex: &str) -> f64 {
        let hex = hex.trim_start_matches('#');
        let channel = |i: usize| {
            let v =
                f64::from(u8::from_str_radix(&hex[i..i + 2], 16).expect("a hex colour")) / 255.0;
            if v <= 0.04045 {
                v / 12.92
            } else {
                ((v + 0.055) / 1.055).powf(2.4)
            }
        };
        0.2126 * channel(0) + 0.7152 * channel(2) + 0.0722 * channel(4)
    }

    fn contrast(a: &str, b: &str) -> f64 {
        let (la, lb) = (luminance(a), luminance(b));
        (la.max(lb) + 0.05) / (la.min(lb) + 0.05)
    }

    /// The second colour of the undecided stripes, which text also sits on.
    const UNDECIDED_STRIPE: &str = "#d2d7dd";

    #[test]
    fn cell_text_meets_wcag_aa_contrast() {
        for (outcome, background, ink) in PALETTE {
            let ratio = contrast(background, ink);
            assert!(
                ratio >= 4.5,
                "{outcome:?}: {ink} on {background} is {ratio:.2}:1"
            );
        }
        assert!(contrast(UNDECIDED_STRIPE, "#14181d") >= 4.5);
        // Page text: muted grey on white and on the page background, the notice, the marks.
        for (fg, bg) in [
            ("#565f6b", "#ffffff"),
            ("#565f6b", "#f4f5f7"),
            ("#565f6b", "#f9fafb"),
            ("#3b2f12", "#fff8e6"),
            ("#1d5b99", "#f4f5f7"),
            ("#ffffff", "#14181d"),
            ("#ffffff", "#8a5f00"),
        ] {
            let ratio = contrast(fg, bg);
            assert!(ratio >= 4.5, "{fg} on {bg} is {ratio:.2}:1");
        }
    }

    #[test]
    fn outcome_colours_stay_apart_in_lightness() {
        // Colour-blind and greyscale readers still tell failing cells from the others.
        let l = |o: Outcome| luminance(PALETTE.iter().find(|p| p.0 == o).unwrap().1);
        assert!(contrast_of(l(Outcome::Installs), l(Outcome::Fails)) >= 3.0);
        assert!(contrast_of(l(Outcome::AtRisk), l(Outcome::Fails)) >= 3.0);
    }

    fn contrast_of(a: f64, b: f64) -> f64 {
        (a.max(b) + 0.05) / (a.min(b) + 0.05)
    }

    #[test]
    fn stylesheet_uses_the_checked_palette() {
        for (outcome, background, ink) in PALETTE {
            let var = format!("--{}: {background};", outcome.as_str());
            assert!(STYLE.contains(&var), "page.css lacks `{var}`");
            let rule = format!("td.{} {{ background: ", outcome_class(outcome));
            let at = STYLE
                .find(&rule)
                .unwrap_or_else(|| panic!("page.css lacks `{rule}`"));
            let line = &STYLE[at..at + STYLE[at..].find('}').unwrap()];
            assert!(line.contains(&format!("color: {ink}")), "{line}");
        }
        assert!(STYLE.contains(&format!("--undecided-stripe: {UNDECIDED_STRIPE};")));
    }

    #[test]
    fn json_escaping_keeps_the_value() {
        let raw = "</script><!-- & \u{2028}\u{2029} >";
        let json = serde_json::to_string(raw).unwrap();
        let escaped = escape_json_for_script(&json);
        assert!(!escaped.contains('<') && !escaped.contains('>') && !escaped.contains('&'));
        assert_eq!(serde_json::from_str::<String>(&escaped).unwrap(), raw);
    }
}
