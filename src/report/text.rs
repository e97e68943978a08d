//! Readable text reports.

use crate::load::Ledger;
use crate::load::diag::{RecordKind, Reference, Tally, Unplaced};
use crate::plan::blockers::SharedBlocker;
use crate::plan::explain::{
    Direction, Explanation, NotAdmitted, ReleaseHint, RuntimeHint, TowardCause, Trial,
};
use crate::plan::matrix::{NATIVE_SKIPPED_NOTICE, NOTICE, Summary};
use serde::Serialize;
use std::fmt::Write;
use unicode_width::UnicodeWidthStr;

/// Lays out rows as aligned columns; the first row is the header.
pub fn table(rows: &[Vec<String>]) -> String {
    // Escaped before measuring, so a row with an escaped name still lines up; measured in
    // terminal columns, not characters, since names may hold wide or combining characters.
    let rows: Vec<Vec<std::borrow::Cow<'_, str>>> = rows
        .iter()
        .map(|r| r.iter().map(|c| super::visible(c)).collect())
        .collect();
    let cols = rows.iter().map(|r| r.len()).max().unwrap_or(0);
    let mut widths = vec![0usize; cols];
    for r in &rows {
        for (i, c) in r.iter().enumerate() {
            widths[i] = widths[i].max(UnicodeWidthStr::width(c.as_ref()));
        }
    }
    let mut out = String::new();
    for (n, r) in rows.iter().enumerate() {
        let mut line = String::new();
        for (i, c) in r.iter().enumerate() {
            if i + 1 == r.len() {
                line.push_str(c);
            } else {
                let pad = widths[i].saturating_sub(UnicodeWidthStr::width(c.as_ref()));
                line.push_str(c);
                line.push_str(&" ".repeat(pad + 2));
            }
        }
        out.push_str(line.trim_end());
        out.push('\n');
        if n == 0 {
            let total: usize = widths.iter().sum::<usize>() + 2 * cols.saturating_sub(1);
            out.push_str(&"-".repeat(total));
            out.push('\n');
        }
    }
    out
}

/// How many examples of each problem kind the text report shows.
const EXAMPLES: usize = 5;

/// The data-quality report as JSON-ready data.
#[derive(Debug, Serialize)]
pub struct CheckReport<'a> {
    pub clean: bool,
    pub records: Vec<(&'static str, &'a Tally)>,
    /// Cross-checks not made for want of an input, so `clean` is not read as names verified.
    pub skipped_checks: Vec<SkippedCheck>,
    /// Problems shown at a stand-in place, so their `origin` is not read as their own.
    pub unplaced: &'a [Unplaced],
    pub problems: Vec<ProblemGroup<'a>>,
}

/// The cross-checks one absent input would have made.
#[derive(Debug, Serialize)]
pub struct SkippedCheck {
    pub missing: Reference,
    /// The flags that give it.
    pub flags: &'static str,
    /// The kinds of record whose names were not checked against it.
    pub records: Vec<RecordKind>,
}

fn skipped_checks(ledger: &Ledger) -> Vec<SkippedCheck> {
    ledger
        .skipped
        .iter()
        .map(|(&missing, kinds)| SkippedCheck {
            missing,
            flags: missing.flags(),
            records: kinds.iter().copied().collect(),
        })
        .collect()
}

#[derive(Debug, Serialize)]
pub struct ProblemGroup<'a> {
    pub kind: crate::load::diag::ProblemKind,
    pub label: &'static str,
    pub total: usize,
    pub left_out: usize,
    pub items: Vec<&'a crate::load::diag::Problem>,
}

pub fn check_report(ledger: &Ledger) -> CheckReport<'_> {
    CheckReport {
        clean: ledger.is_clean(),
        records: ledger.tallies.iter().map(|(k, t)| (k.label(), t)).collect(),
        skipped_checks: skipped_checks(ledger),
        unplaced: &ledger.unplaced,
        problems: ledger
            .by_kind()
            .into_iter()
            .map(|(kind, items)| ProblemGroup {
                kind,
                label: kind.label(),
                total: items.len(),
                left_out: items.iter().filter(|p| p.left_out).count(),
                items,
            })
            .collect(),
    }
}

/// The data-quality report for people: records read and used, then each problem kind with
/// its total and a few examples. `unusable`: why the registry leaves nothing to plan with,
/// when it does (no problem record says so, and "no problems found" would pass it).
pub fn check_text(ledger: &Ledger, unusable: Option<&str>) -> String {
    let mut out = String::new();
    let mut rows = vec![vec![
        "records".to_string(),
        "read".into(),
        "used".into(),
        "left out".into(),
    ]];
    for (kind, t) in &ledger.tallies {
        rows.push(vec![
            kind.label().to_string(),
            t.read.to_string(),
            t.used.to_string(),
            t.left_out.to_string(),
        ]);
    }
    out.push_str(&table(&rows));
    // Records left out with their owner have no problem of their own (listing each would
    // bury the owner's): say where the count comes from, or the table reads as records lost.
    for (kind, t) in &ledger.tallies {
        if t.left_out_with_owner > 0 {
            let _ = writeln!(
                out,
                "  {} of the {} left out went with the record they belong to (a version or package left out below)",
                t.left_out_with_owner,
                kind.label()
            );
        }
    }
    let skipped = skipped_checks(ledger);
    if !skipped.is_empty() {
        out.push_str("\nnot checked, for want of an input (these names were not verified):\n");
        for s in &skipped {
            let records: Vec<&str> = s.records.iter().map(|k| k.label()).collect();
            let _ = writeln!(
                out,
                "  {} {}: no {} given ({})",
                s.missing.names(),
                records.join(" and "),
                kebab(s.missing),
                s.flags
            );
        }
    }
    if !ledger.unplaced.is_empty() {
        out.push_str("\nnot at their own place:\n");
        for u in &ledger.unplaced {
            let _ = writeln!(out, "  {}", u.sentence());
        }
    }
    if let Some(line) = unusable {
        let _ = writeln!(out, "\n{line}");
    }
    let groups = ledger.by_kind();
    if groups.is_empty() {
        out.push_str(match (unusable, skipped.is_empty()) {
            (Some(_), _) => "\nno problem in the records read\n",
            (None, true) => "\nno problems found\n",
            (None, false) => "\nno problems found in what could be checked\n",
        });
        return out;
    }
    let (problems, categories) = (ledger.problems.len(), groups.len());
    let _ = writeln!(
        out,
        "\n{problems} {} in {categories} {}",
        if problems == 1 { "problem" } else { "problems" },
        if categories == 1 {
            "category"
        } else {
            "categories"
        }
    );
    for (kind, items) in groups {
        let _ = writeln!(out, "\n{} ({}): {}", kind.label(), kebab(kind), items.len());
        for p in items.iter().take(EXAMPLES) {
            let _ = writeln!(out, "  {}  {}: {}", p.origin, p.subject, p.detail);
        }
        if items.len() > EXAMPLES {
            let _ = writeln!(
                out,
                "  ... and {} more (see --format json)",
                items.len() - EXAMPLES
            );
        }
    }
    out
}

fn kebab<T: Serialize>(v: T) -> String {
    serde_json::to_value(v)
        .ok()
        .and_then(|v| v.as_str().map(str::to_owned))
        .unwrap_or_default()
}

/// The plan summary: per image how many install, per package on how many images, and the
/// shared blockers.
pub fn plan_text(summary: &Summary, blockers: &[SharedBlocker]) -> String {
    let mut out = String::new();
    if summary.native_skipped {
        let _ = writeln!(out, "{NATIVE_SKIPPED_NOTICE}\n");
    }
    let mut rows = vec![vec![
        "image".to_string(),
        "installs".into(),
        "at-risk".into(),
        "fails".into(),
        "undecided".into(),
        "weight resolving".into(),
    ]];
    for i in &summary.images {
        rows.push(vec![
            i.image.clone(),
            i.installs.to_string(),
            i.at_risk.to_string(),
            i.fails.to_string(),
            i.undecided.to_string(),
            // Undecided cells may yet resolve: the share is then a lower bound, marked as
            // `imageplan` marks its coverage.
            super::at_least_if_undecided(i.undecided, super::percent_or_na(i.weight_share, 1)),
        ]);
    }
    out.push_str(&table(&rows));
    out.push('\n');
    let mut rows = vec![vec![
        "package".to_string(),
        "installs on".into(),
        "at-risk on".into(),
    ]];
    for p in &summary.packages {
        rows.push(vec![
            p.package.clone(),
            format!("{}/{}", p.installs_on, p.images),
            p.at_risk_on.to_string(),
        ]);
    }
    out.push_str(&table(&rows));
    if !summary.causes.is_empty() {
        out.push_str("\nfailure causes: ");
        let parts: Vec<String> = summary
            .causes
            .iter()
            .map(|(c, n)| format!("{c} {n}"))
            .collect();
        out.push_str(&parts.join(", "));
        out.push('\n');
    }
    if !blockers.is_empty() {
        // Only registry packages are ranked here: a missing compiler or library blocks weight
        // too, and reading this list as all that blocks an image would hide it.
        out.push_str(
            "\nshared blockers (the registry packages that block the most priority weight per image; for system packages an image lacks, see `basefit syslibs`):\n",
        );
        let n_entries = summary.packages.len();
        for b in blockers {
            let _ = writeln!(
                out,
                "  {}: {} blocks {} of the {} entries ({} of the weight): {}",
                b.image,
                b.package,
                b.blocks.len(),
                n_entries,
                super::percent_or_na(b.blocked_share, 1),
                shown_reasons(&b.reasons)
            );
        }
    }
    let _ = writeln!(out, "\n{NOTICE}");
    out
}

/// Closure-tree depth past which `explain_text` stops indenting further.
const MAX_INDENT: usize = 30;

/// One cell explained for people.
pub fn explain_text(e: &Explanation) -> String {
    let c = &e.cell;
    let mut out = String::new();
    let _ = write!(out, "{} on {}: {}", c.package, c.image, c.outcome.as_str());
    if let Some(v) = &c.root_version {
        let _ = write!(out, " ({v})");
    }
    if let Some(cause) = c.cause {
        let _ = write!(out, ", {}", cause.as_str());
    }
    if e.native_skipped {
        out.push_str(" (version solving only: --no-native)");
    }
    out.push('\n');
    if !e.tree.is_empty() {
        out.push_str("\nresolved closure:\n");
        let builds: std::collections::HashMap<&str, String> = c
            .closure
            .iter()
            .map(|p| (p.name.as_str(), format!(" [{}]", p.build.as_str())))
            .collect();
        for line in &e.tree {
            // Indentation stops growing at a depth no reader follows by eye; deeper lines say
            // their depth instead. Unbounded, a chain of 50,000 packages wrote gigabytes of
            // spaces.
            let indent = "  ".repeat(line.depth.min(MAX_INDENT) + 1);
            let deep = if line.depth > MAX_INDENT {
                format!("(depth {}) ", line.depth)
            } else {
                String::new()
            };
            let req = line
                .requirement
                .as_deref()
                .map(|r| format!(" (wants {r})"))
                .unwrap_or_default();
            let rep = if line.repeated { " (shown above)" } else { "" };
            let build = builds.get(line.name.as_str()).map_or("", String::as_str);
            let _ = writeln!(
                out,
                "{indent}{deep}{} {}{build}{req}{rep}",
                line.name, line.version
            );
        }
    }
    if !c.explanation.is_empty() {
        out.push_str("\nwhy:\n");
        for l in &c.explanation {
            let _ = writeln!(out, "  {l}");
        }
    }
    if !c.native_needs.is_empty() {
        out.push_str("\nnative needs:\n");
        for n in &c.native_needs {
            let lib = n.library.as_deref().unwrap_or("(unnamed native build)");
            let _ = writeln!(
                out,
                "  {lib} [{}] via {}: {}",
                n.confidence.as_str(),
                n.via,
                n.evidence.join("; ")
            );
        }
    }
    if !c.missing_system_packages.is_empty() {
        let _ = writeln!(
            out,
            "\nmissing system packages: {}",
            c.missing_system_packages.join(" ")
        );
    }
    let mut hints = Vec::new();
    if let Some(h) = &e.runtime_hint {
        hints.extend(runtime_hint_lines(h));
    }
    if let Some(h) = &e.release_hint {
        hints.extend(release_hint_lines(h));
    }
    if !hints.is_empty() {
        out.push_str("\nhints:\n");
        for l in hints {
            let _ = writeln!(out, "  {l}");
        }
    }
    let _ = writeln!(out, "\n{}", e.notice);
    out
}

/// `runtime 3.1.2` or `runtimes 3.1.2, 3.2.0`.
fn runtimes(trials: &[&Trial]) -> String {
    let noun = if trials.len() == 1 {
        "runtime"
    } else {
        "runtimes"
    };
    format!("{noun} {}", versions(trials))
}

/// Versions for a sentence: the first few, then how many more.
fn versions(trials: &[&Trial]) -> String {
    const SHOWN: usize = 6;
    let mut s: Vec<&str> = trials
        .iter()
        .take(SHOWN)
        .map(|t| t.version.as_str())
        .collect();
    let more = trials.len().saturating_sub(SHOWN);
    let more = format!("and {more} more");
    if trials.len() > SHOWN {
        s.push(&more);
    }
    s.join(", ")
}

/// The distinct causes of `trials`, for a sentence.
fn causes(trials: &[&Trial]) -> String {
    let mut c: Vec<&str> = trials
        .iter()
        .filter_map(|t| t.cause.map(|c| c.as_str()))
        .collect();
    c.sort_unstable();
    c.dedup();
    c.join(", ")
}

/// The three ways a tried runtime or release can fail to resolve: its version constraints
/// resolve but the native step fails it; the solver ran out of budget; its version
/// constraints do not resolve.
fn failed_trials(trials: &[Trial]) -> [Vec<&Trial>; 3] {
    let mut out: [Vec<&Trial>; 3] = Default::default();
    for t in trials.iter().filter(|t| !t.resolves()) {
        out[failure_kind(t)].push(t);
    }
    out
}

/// Which of [`failed_trials`]' three ways a failed trial failed, as its index there.
fn failure_kind(t: &Trial) -> usize {
    if t.fails_natively() {
        0
    } else if t.undecided() {
        1
    } else {
        2
    }
}

/// What the declared runtimes in the cause's direction gave, saying only what their trials
/// found, as the other hints do: a runtime where the solver ran out of budget is unknown, and
/// one where the version constraints resolve but a native need fails is not said not to
/// resolve.
fn toward_cause_line(t: &TowardCause) -> String {
    let (way, a_way) = match t.direction {
        Direction::Newer => ("newer", "a newer"),
        Direction::Older => ("older", "an older"),
    };
    let Some(found) = t.resolves_at() else {
        if t.trials.is_empty() {
            return format!(
                "the cause points to {a_way} runtime, but no declared image's runtime is {way} than this one"
            );
        }
        let noun = if t.trials.len() == 1 {
            "runtime"
        } else {
            "runtimes"
        };
        return format!(
            "{way} declared {noun}, as the cause points: {}",
            failures(&t.trials)
        );
    };
    let nearer = &t.trials[..t.trials.len() - 1];
    // A nearer runtime the solver gave up on may resolve too: then this one is not known
    // to be the nearest.
    let nearest = if nearer.iter().any(Trial::undecided) {
        ""
    } else {
        "nearest "
    };
    let at = if nearer.is_empty() {
        ""
    } else {
        " at which it resolves"
    };
    let mut line = format!(
        "{nearest}{way} declared runtime{at}, as the cause points: {} ({})",
        found.version,
        found.outcome.as_str()
    );
    if !nearer.is_empty() {
        line.push_str(&format!("; nearer: {}", failures(nearer)));
    }
    line
}

/// Failed trials for a sentence, each with what is known of it.
fn failures(trials: &[Trial]) -> String {
    trials
        .iter()
        .map(|t| {
            let what = match failure_kind(t) {
                0 => format!(
                    "its version constraints resolve, but it fails: {}",
                    t.cause.map_or("", |c| c.as_str())
                ),
                1 => "the solver ran out of budget (raise --budget)".to_string(),
                _ => "its version constraints do not resolve".to_string(),
            };
            format!("{} ({what})", t.version)
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// The runtime hint, saying only what its trials found: a runtime where the solver ran out
/// of budget is unknown, and one where the version constraints resolve but a native need
/// fails is not said not to resolve.
fn runtime_hint_lines(h: &RuntimeHint) -> Vec<String> {
    let [native, undecided, unresolved] = failed_trials(&h.trials);
    let mut out = Vec::new();
    if let Some(t) = h.resolves_at() {
        out.push(format!(
            "lowest declared runtime at which it resolves here: {} ({})",
            t.version,
            t.outcome.as_str()
        ));
        if !native.is_empty() {
            out.push(format!(
                "at the lower {} its version constraints resolve, but it fails: {}",
                runtimes(&native),
                causes(&native)
            ));
        }
        if !undecided.is_empty() {
            out.push(format!(
                "at the lower {} the solver ran out of budget, so it may resolve lower (raise --budget)",
                runtimes(&undecided)
            ));
        }
        if let Some(toward) = &h.toward_cause {
            out.push(toward_cause_line(toward));
        }
        return out;
    }
    if !native.is_empty() {
        out.push(format!(
            "at {} its version constraints resolve, but it fails: {}",
            runtimes(&native),
            causes(&native)
        ));
    }
    if !undecided.is_empty() {
        out.push(format!(
            "at {} the solver ran out of budget, so whether it resolves there is unknown (raise --budget)",
            runtimes(&undecided)
        ));
        if !unresolved.is_empty() {
            out.push(format!(
                "at {} its version constraints do not resolve",
                runtimes(&unresolved)
            ));
        }
    } else if !native.is_empty() {
        if !unresolved.is_empty() {
            out.push(format!(
                "at {} its version constraints do not resolve",
                runtimes(&unresolved)
            ));
        }
        out.push("no declared image's runtime makes it install here".into());
    } else {
        out.push(format!(
            "it resolves at none of the declared images' runtimes ({})",
            versions(&unresolved)
        ));
    }
    out
}

/// The release hint, saying only what its trials found (see [`runtime_hint_lines`]).
fn release_hint_lines(h: &ReleaseHint) -> Vec<String> {
    let [native, undecided, unresolved] = failed_trials(&h.trials);
    let mut out = Vec::new();
    if let Some(t) = h.resolves() {
        let mut line = format!(
            "newest release that resolves on this image: {} ({})",
            t.version,
            t.outcome.as_str()
        );
        match &h.not_admitted {
            Some(NotAdmitted::Prerelease) => line.push_str(
                "; a pre-release, which the entry does not ask for (set `prerelease: true` on it)",
            ),
            Some(NotAdmitted::Requirement(req)) => {
                let pre = semver::Version::parse(&t.version).is_ok_and(|v| !v.pre.is_empty());
                let what = if pre { "a pre-release " } else { "" };
                let _ = write!(line, "; {what}outside the entry's requirement `{req}`");
            }
            None => {}
        }
        out.push(line);
        if !undecided.is_empty() {
            out.push(format!(
                "on the newer {} the solver ran out of budget, so a newer one may resolve too (raise --budget)",
                versions(&undecided)
            ));
        }
        return out;
    }
    if h.trials.is_empty() {
        out.push("it has no release to try on this image".into());
        return out;
    }
    let only = h.trials.len() == 1 && h.untried == 0;
    let scope = match (h.trials.len(), h.untried) {
        (_, 0) => "its releases".to_string(),
        (n, _) => format!("its {n} newest releases"),
    };
    if !native.is_empty() {
        out.push(format!(
            "pinned to {}, its version constraints resolve, but it fails: {}",
            versions(&native),
            causes(&native)
        ));
    }
    if !undecided.is_empty() {
        out.push(format!(
            "pinned to {}, the solver ran out of budget (raise --budget)",
            versions(&undecided)
        ));
    }
    if !unresolved.is_empty() && (!native.is_empty() || !undecided.is_empty()) {
        out.push(format!(
            "pinned to {}, its version constraints do not resolve",
            versions(&unresolved)
        ));
    }
    // Releases whose constraints resolve may not be said not to resolve.
    let verb = if native.is_empty() {
        "resolve"
    } else {
        "install"
    };
    if !h.not_asked_for.is_empty() {
        out.push(format!(
            "the entry as written does not ask for {} (its requirement or pre-release setting rules {} out)",
            h.not_asked_for.join(", "),
            super::it_or_them(h.not_asked_for.len())
        ));
    }
    out.push(match (undecided.is_empty(), only) {
        (true, true) if h.yanked > 0 => {
            format!("its only release that is not yanked does not {verb} on this image")
        }
        (true, true) => format!("its only release does not {verb} on this image"),
        // One release tried with older ones left untried: "none of its 1 newest releases"
        // would read as a miscount.
        (true, false) if h.trials.len() == 1 => {
            format!("its newest release does not {verb} on this image (older ones were not tried)")
        }
        (true, false) => format!("none of {scope} {verb}s on this image"),
        (false, true) if h.yanked > 0 => {
            "whether its only release that is not yanked resolves on this image is unknown".into()
        }
        (false, true) => "whether its only release resolves on this image is unknown".into(),
        (false, false) if h.trials.len() == 1 => {
            "whether its newest release resolves on this image is unknown (older ones were not tried)"
                .into()
        }
        (false, false) => format!("whether any of {scope} resolves on this image is unknown"),
    });
    out
}

/// The review for people: summary, then surprises by probable cause, then agreed failures.
pub fn review_text(r: &crate::verify::Review) -> String {
    use crate::verify::Verdict;
    let mut out = String::new();
    let n = r.cells.len();
    let _ = writeln!(
        out,
        "{n} {} with recorded results",
        super::one_or_many(n, "cell", "cells")
    );
    for (k, n) in &r.counts {
        let _ = writeln!(out, "  {k}: {n}");
    }
    let c = &r.confusion;
    out.push_str("\npredicted \\ recorded   failed  installed\n");
    let _ = writeln!(
        out,
        "fails                  {:<7} {}",
        c.true_failures, c.false_failures
    );
    let _ = writeln!(
        out,
        "installs or at-risk    {:<7} {}",
        c.missed_failures, c.true_installs
    );
    let pct = |v: Option<f64>| super::percent_or_na(v, 1);
    let _ = writeln!(
        out,
        "failure predictions: precision {}, recall {}",
        pct(c.precision),
        pct(c.recall)
    );
    // At-risk cells sit with the installs above, so a risk that came true lowers the recall:
    // say how many there are, or the recall reads as warnings the plan never gave.
    if c.at_risk_failed + c.at_risk_installed > 0 {
        let _ = writeln!(
            out,
            "at-risk predictions (counted with the installs above): {} failed, {} installed",
            c.at_risk_failed, c.at_risk_installed
        );
    }
    let mut groups: std::collections::BTreeMap<String, Vec<&crate::verify::compare::CellReview>> =
        Default::default();
    for cell in r.cells.iter().filter(|c| c.verdict.is_surprise()) {
        let key = match (&cell.log_cause, cell.verdict) {
            (_, Verdict::SurpriseInstall) => "installed although predicted to fail".to_string(),
            (_, Verdict::SurpriseVersion) => {
                "installed a release the image cannot take, by the snapshot".to_string()
            }
            (Some(lc), _) => lc.label().to_string(),
            (None, _) if cell.log_unread.is_some() && cell.log_inline_lines > 0 => {
                "failed, log file could not be read, no known cause in the record's `log` text"
                    .to_string()
            }
            (None, _) if cell.log_unread.is_some() => {
                "failed, log file could not be read".to_string()
            }
            (None, _) if !cell.log_recorded => "failed, no log recorded".to_string(),
            (None, _) => "failed, cause not recognised in the log".to_string(),
        };
        groups.entry(key).or_default().push(cell);
    }
    if groups.is_empty() {
        out.push_str("\nno surprises\n");
    } else {
        let _ = writeln!(out, "\nsurprises ({}), by probable cause:", r.surprises());
        for (k, cells) in &groups {
            let _ = writeln!(out, "\n  {k}:");
            for cell in cells {
                review_cell(&mut out, cell);
            }
        }
    }
    let agreed: Vec<_> = r
        .cells
        .iter()
        .filter(|c| matches!(c.verdict, Verdict::AgreedFailure | Verdict::RiskConfirmed))
        .collect();
    if !agreed.is_empty() {
        out.push_str("\nagreed failures:\n");
        for cell in agreed {
            review_cell(&mut out, cell);
        }
    }
    let other: Vec<_> = r
        .cells
        .iter()
        .filter(|c| {
            matches!(
                c.verdict,
                Verdict::Flaky | Verdict::Drift | Verdict::Undecided | Verdict::RiskUnconfirmed
            )
        })
        .collect();
    if !other.is_empty() {
        out.push_str("\nflaky, drifted, undecided, or at risk and failed without showing why:\n");
        for cell in other {
            review_cell(&mut out, cell);
        }
    }
    for o in &r.outside_matrix {
        let _ = writeln!(out, "not compared: {o}");
    }
    if !r.results_left_out.is_empty() {
        let _ = writeln!(
            out,
            "\n{} recorded {} left out and not compared; {} may be a surprise, so this review is incomplete (exit 1):",
            r.results_left_out.len(),
            super::one_or_many(r.results_left_out.len(), "result was", "results were"),
            super::one_or_many(r.results_left_out.len(), "it", "any of them")
        );
        for line in &r.results_left_out {
            let _ = writeln!(out, "  {line}");
        }
    }
    let _ = writeln!(out, "\n{NOTICE}");
    out
}

fn review_cell(out: &mut String, c: &crate::verify::compare::CellReview) {
    let cause = c
        .predicted_cause
        .map(|c| format!(", {}", c.as_str()))
        .unwrap_or_default();
    let attempts: Vec<&str> = c
        .attempts
        .iter()
        .map(|a| match a {
            crate::model::RecordedOutcome::Installed => "installed",
            crate::model::RecordedOutcome::Failed => "failed",
        })
        .collect();
    let _ = writeln!(
        out,
        "    {} on {}: {} (predicted {}{cause}; recorded {})",
        c.package,
        c.image,
        c.verdict.as_str(),
        c.predicted.as_str(),
        attempts.join(", ")
    );
    if let (Some(e), Some(at)) = (&c.evidence, &c.evidence_at) {
        let _ = writeln!(out, "      log ({at}): {e}");
    }
    if let Some(why) = &c.log_unread {
        let _ = writeln!(
            out,
            "      log file could not be read: {}",
            crate::load::diag::on_one_line(why)
        );
    }
    // Surprises are grouped under this already; elsewhere silence would read as "no log".
    let failed = c.attempts.contains(&crate::model::RecordedOutcome::Failed);
    if failed
        && c.log_cause.is_none()
        && c.log_recorded
        && c.log_unread.is_none()
        && !c.verdict.is_surprise()
    {
        out.push_str("      no known cause in the log\n");
    }
    // The other causes the log shows, so none is hidden behind the one acted on.
    let others: Vec<String> = c
        .findings
        .iter()
        .filter(|f| Some(&f.cause) != c.log_cause.as_ref())
        .map(|f| {
            let place = crate::verify::compare::log_line_place(
                c.log_inline_lines,
                c.log_skipped,
                c.log_file.as_deref(),
                f.line,
            );
            match crate::verify::logs::is_probe_finding(f) {
                true => format!(
                    "{} ({place}, in a configure probe, which may fail by design)",
                    f.cause
                ),
                false => format!("{} ({place})", f.cause),
            }
        })
        .collect();
    if !others.is_empty() {
        let _ = writeln!(out, "      also in the log: {}", others.join("; "));
    }
    if c.evidence.is_none() && c.log_skipped > 0 {
        let _ = writeln!(
            out,
            "      only the log file's tail was read: its first {} bytes were skipped",
            c.log_skipped
        );
    }
    if let Some(agree) = c.cause_agrees {
        let _ = writeln!(
            out,
            "      cause {}",
            if agree {
                "agrees"
            } else {
                "differs from the prediction"
            }
        );
    }
    if let Some(s) = &c.suggestion {
        let _ = writeln!(out, "      suggestion: {s}");
    }
}

/// The subject of a sentence about the sides of a diff a flag holds for.
fn which_sides(before: bool, after: bool) -> Option<&'static str> {
    match (before, after) {
        (false, false) => None,
        (true, false) => Some("BEFORE was"),
        (false, true) => Some("AFTER was"),
        (true, true) => Some("both were"),
    }
}

/// A matrix diff for people.
pub fn diff_text(d: &crate::verify::diff::MatrixDiff) -> String {
    let mut out = String::new();
    let skipped = d.native_skipped;
    if let Some(side) = which_sides(skipped.before, skipped.after) {
        let _ = writeln!(
            out,
            "{side} planned with --no-native: an installs verdict there means only that the version requirements resolve, since native needs were not checked"
        );
        if skipped.before != skipped.after && !d.changes.is_empty() {
            out.push_str(
                "cells changing between installs and a native failure may reflect that, not a change in the inputs\n",
            );
        }
        out.push('\n');
    }
    let closures = d.closures_left_out;
    if let Some(side) = which_sides(closures.before, closures.after) {
        let _ = writeln!(
            out,
            "{side} planned with --no-closures: closures are not compared, so a change in the versions of dependencies does not show\n"
        );
    }
    if d.changes.is_empty() {
        if !d.any() {
            out.push_str("the matrices agree\n");
        } else if d.unified.is_empty() {
            out.push_str(
                "no cell's outcome, cause, version or dependencies changed and the Markdown renderings are equal, but the matrices differ (a summary, an image's packages, a closure's order or size where a side lists no closures, or a weight below the rounding shown)\n",
            );
        } else {
            // A new runtime, weight or explanation changes what the support matrix says
            // even where no cell's outcome moved.
            out.push_str(
                "no cell's outcome, cause, version or dependencies changed, but the renderings differ (images, weights, explanations or notes):\n\n",
            );
            out.push_str(&d.unified);
        }
        let _ = writeln!(out, "\n{NOTICE}");
        return out;
    }
    let n = d.changes.len();
    let _ = writeln!(
        out,
        "{n} {} changed",
        super::one_or_many(n, "cell", "cells")
    );
    let brief = |b: &Option<crate::verify::diff::CellBrief>| match b {
        None => "(absent)".to_string(),
        Some(b) => {
            let mut s = b.outcome.as_str().to_string();
            if let Some(v) = &b.version {
                s.push_str(&format!(" {v}"));
            }
            if let Some(c) = b.cause {
                s.push_str(&format!(" ({})", c.as_str()));
            }
            s
        }
    };
    let pinned = |p: &Option<crate::plan::matrix::Pinned>,
                  other: &Option<crate::plan::matrix::Pinned>| match p {
        None => "(absent)".to_string(),
        // The build is named only where it is what changed.
        Some(p) if other.as_ref().is_some_and(|o| o.version == p.version) => {
            format!("{} ({})", p.version, p.build.as_str())
        }
        Some(p) => p.version.clone(),
    };
    for c in &d.changes {
        let (mut before, mut after) = (brief(&c.before), brief(&c.after));
        // The rest of a brief is named on both sides where it differs: a cell whose outcome
        // stayed would otherwise be listed as changed with the same text twice. The entry's
        // own build only where it is all that changed.
        if before == after {
            name_difference(c, (&mut before, &mut after), |b| {
                b.build
                    .map_or(String::new(), |k| format!(" [{}]", k.as_str()))
            });
        }
        // A side planned with --no-native checked no system package, so it lacks none only
        // as far as nobody looked: say so rather than that it lacks nothing.
        let lacks = |b: &crate::verify::diff::CellBrief, skipped: bool| match (
            skipped,
            b.missing_system_packages.is_empty(),
        ) {
            (true, _) => " [system packages not checked]".to_string(),
            (false, true) => " [lacks no system package]".to_string(),
            (false, false) => format!(" [lacks {}]", b.missing_system_packages.join(" ")),
        };
        if let (Some(b), Some(a)) = (&c.before, &c.after) {
            let shown = (
                lacks(b, d.native_skipped.before),
                lacks(a, d.native_skipped.after),
            );
            if shown.0 != shown.1 {
                before.push_str(&shown.0);
                after.push_str(&shown.1);
            }
        }
        name_difference(c, (&mut before, &mut after), |b| match &b.recorded {
            Some(r) => format!(" [recorded {r}]"),
            None => " [no recorded install]".to_string(),
        });
        let _ = match before == after {
            true => writeln!(out, "  {} on {}: {after}", c.package, c.image),
            false => writeln!(out, "  {} on {}: {before} -> {after}", c.package, c.image),
        };
        if !c.dependencies.is_empty() {
            let moved: Vec<String> = c
                .dependencies
                .iter()
                .map(|d| {
                    format!(
                        "{} {} -> {}",
                        d.name,
                        pinned(&d.before, &d.after),
                        pinned(&d.after, &d.before)
                    )
                })
                .collect();
            let _ = writeln!(out, "    dependencies: {}", moved.join(", "));
        }
    }
    if !d.unified.is_empty() {
        out.push('\n');
        out.push_str(&d.unified);
    }
    let _ = writeln!(out, "\n{NOTICE}");
    out
}

/// The system-package report for people.
pub fn system_text(r: &crate::plan::system::SystemReport) -> String {
    let mut out = system_body(r);
    let _ = writeln!(out, "\n{NOTICE}");
    out
}

/// [`system_text`] without the closing notice, for a report that goes on after it
/// (`imageplan` ends with its pre-install manifests, and the notice belongs after those).
pub fn system_body(r: &crate::plan::system::SystemReport) -> String {
    let mut out = String::new();
    out.push_str(
        "native evidence per package (the newest release chosen on any image; an image that chooses an older one may see other evidence):\n",
    );
    if r.packages.is_empty() {
        out.push_str("  none\n");
    }
    for p in &r.packages {
        let conf = p.confidence.map(|c| c.as_str()).unwrap_or_default();
        let _ = writeln!(out, "  {} {} [{conf}]", p.package, p.version);
        // One line per library, at its strongest confidence, with every piece of evidence.
        let mut by_library: Vec<(Option<&str>, crate::native::Confidence, Vec<&str>)> = Vec::new();
        for e in &p.own {
            let lib = e.library.as_deref();
            match by_library.iter_mut().find(|(l, _, _)| *l == lib) {
                Some((_, c, details)) => {
                    *c = (*c).max(e.confidence);
                    details.push(&e.detail);
                }
                None => by_library.push((lib, e.confidence, vec![&e.detail])),
            }
        }
        for (lib, c, details) in by_library {
            let lib = lib.unwrap_or("(unnamed native build)");
            let _ = writeln!(out, "    {lib} [{}]: {}", c.as_str(), details.join("; "));
        }
        for (lib, c, via) in &p.through {
            let _ = writeln!(
                out,
                "    {} [{}] through {via}",
                lib.as_deref().unwrap_or("(unnamed native build)"),
                c.as_str()
            );
        }
    }
    out.push_str(
        "\nmissing system packages per image (weight = priority weight of the cells that lack it and that additions can unblock):\n",
    );
    if r.images
        .iter()
        .any(|i| i.family == crate::model::OsFamily::Debian)
    {
        let _ = writeln!(
            out,
            "  (debian package names are those of Debian {}, the release the catalog was checked against: on another release check them, since library package names carry sonames that change)",
            r.debian_release
        );
    }
    for i in &r.images {
        if !i.undecided.is_empty() {
            let _ = writeln!(
                out,
                "  {}: {} undecided (the solver ran out of budget), so what they lack is unknown; raise --budget: {}",
                i.image,
                i.undecided.len(),
                i.undecided.join(", ")
            );
        }
        let among = match i.undecided.is_empty() {
            true => "",
            false => " among the decided cells",
        };
        if !i.lacks_anything() {
            let _ = writeln!(out, "  {}: nothing missing{among}", i.image);
            continue;
        } else if i.missing.is_empty() {
            // A cell at risk for a library no package provides lacks no package, yet no
            // addition helps it: "nothing missing" would pass it off as fine.
            let _ = writeln!(
                out,
                "  {} ({}): no package to add that the catalog can name{among}, but needed libraries are unmapped:",
                i.image, i.family
            );
        } else {
            let _ = writeln!(out, "  {} ({}):", i.image, i.family);
        }
        for m in &i.missing {
            // Beyond-advice cells need the package too, so they are named, but their weight
            // is shown apart: no addition unblocks them, and the weight column must not
            // promise more than the advice can gain.
            let beyond = if m.beyond_advice.is_empty() {
                String::new()
            } else {
                format!(" (+{:.2} beyond advice)", m.weight_beyond_advice)
            };
            let needed_by: Vec<String> = m
                .needed_by
                .iter()
                .map(|name| {
                    if m.beyond_advice.contains(name) {
                        format!("{name}*")
                    } else if i.at_risk_after_advice.contains(name) {
                        format!("{name}?")
                    } else {
                        name.clone()
                    }
                })
                .collect();
            let _ = writeln!(
                out,
                "    {} [{}] weight {:.2}{beyond}: {}",
                m.package,
                m.strongest.as_str(),
                m.weight,
                needed_by.join(", ")
            );
        }
        if !i.advice.is_empty() {
            // A package that only helps beside another gains nothing until both are in, so
            // gains can rise from one step to the next: the advice must not invite stopping
            // at the first small one.
            out.push_str(
                "    add in this order (greedy; a step can gain more than the one before when packages help only together, so judge by the total):\n",
            );
            for (n, s) in i.advice.iter().enumerate() {
                let _ = writeln!(
                    out,
                    "      {}. {}  +{:.2} (total {:.2}){}{}",
                    n + 1,
                    s.step.add.join(" "),
                    s.step.gain,
                    s.step.cumulative,
                    if s.unblocks.is_empty() { "" } else { ": " },
                    s.unblocks.join(", ")
                );
            }
        }
        let family = i.family;
        for (cells, why) in [
            (
                &i.beyond_advice,
                format!(
                    "* still at risk whatever is added (needs a library the catalog has no {family} package for; not counted in weights or gains)"
                ),
            ),
            (
                &i.at_risk_after_advice,
                format!(
                    "? counted above but may stay at risk after the additions (a name or summary mentions a library the catalog has no {family} package for)"
                ),
            ),
        ] {
            if !cells.is_empty() {
                let _ = writeln!(out, "    {why}: {}", cells.join(", "));
            }
        }
        if !i.unmapped_libraries.is_empty() {
            let libs: Vec<String> = i
                .unmapped_libraries
                .iter()
                .map(|u| {
                    format!(
                        "{} [{}] ({})",
                        u.library,
                        u.strongest.as_str(),
                        u.needed_by.join(", ")
                    )
                })
                .collect();
            let _ = writeln!(
                out,
                "    no {} package known for (check the image by hand, or give them with --catalog): {}",
                i.family,
                libs.join("; ")
            );
        }
        if let Some(c) = &i.command {
            let _ = writeln!(out, "    {c}");
        }
    }
    if !r.families.is_empty() {
        out.push_str("\nper OS family, everything missing on any of its images:\n");
        for f in &r.families {
            let _ = writeln!(out, "  {}: {}", f.family, f.command);
        }
    }
    out
}

/// Appends `show` of each side of a changed cell to that side's text when the two differ and
/// the cell is on both sides.
fn name_difference(
    c: &crate::verify::diff::CellChange,
    (before, after): (&mut String, &mut String),
    show: impl Fn(&crate::verify::diff::CellBrief) -> String,
) {
    if let (Some(b), Some(a)) = (&c.before, &c.after) {
        let (shown_before, shown_after) = (show(b), show(a));
        if shown_before != shown_after {
            before.push_str(&shown_before);
            after.push_str(&shown_after);
        }
    }
}

/// A shared blocker's reasons for one line: a hub blocks entries through many version ranges,
/// and listing each would bury the next blocker (JSON keeps them all).
fn shown_reasons(reasons: &[String]) -> String {
    const SHOWN: usize = 3;
    let mut line = reasons[..reasons.len().min(SHOWN)].join("; ");
    if reasons.len() > SHOWN {
        let _ = write!(line, "; and {} other reasons", reasons.len() - SHOWN);
    }
    line
}

#[cfg(test)]
mod tests {
    use super::{
        causes, check_text, release_hint_lines, runtime_hint_lines, shown_reasons, table, versions,
    };
    use crate::plan::explain::{ReleaseHint, RuntimeHint};

    /// Columns line up on a terminal when a name holds wide characters: a CJK ideograph takes
    /// two columns (Unicode Standard Annex #11, East Asian Width: U+78A7 is `W`; from memory,
    /// and what `unicode-width` says) and a combining accent none, so counting characters put
    /// every later column off by one per such character.
    #[test]
    fn columns_line_up_by_display_width() {
        let rows = vec![
            vec!["package".to_string(), "installs".to_string()],
            vec!["\u{78a7}\u{78a7}-kp".to_string(), "2/3".to_string()],
            vec!["e\u{301}-kp".to_string(), "1/3".to_string()],
            vec!["plain-kp".to_string(), "0/3".to_string()],
        ];
        let text = table(&rows);
        let starts: Vec<usize> = text
            .lines()
            .filter(|l| !l.starts_with('-'))
            .map(|l| {
                let at = l.rfind(' ').unwrap() + 1;
                unicode_width::UnicodeWidthStr::width(&l[..at])
            })
            .collect();
        assert!(
            starts.windows(2).all(|w| w[0] == w[1]),
            "{starts:?}\n{text}"
        );
    }

    fn trial(version: &str, outcome: Outcome, cause: Cause) -> Trial {
        Trial {
            version: version.into(),
            outcome,
            cause: Some(cause),
        }
    }

    #[test]
    fn a_runtime_hint_with_undecided_runtimes_still_names_those_that_do_not_resolve() {
        let hint = RuntimeHint {
            trials: vec![
                trial("1.0.0", Outcome::Fails, Cause::RuntimeTooOld),
                trial("2.0.0", Outcome::Undecided, Cause::BudgetExhausted),
            ],
            toward_cause: None,
        };
        assert_eq!(
            runtime_hint_lines(&hint),
            [
                "at runtime 2.0.0 the solver ran out of budget, so whether it resolves there is unknown (raise --budget)",
                "at runtime 1.0.0 its version constraints do not resolve",
            ]
        );
    }

    #[test]
    fn a_release_hint_over_one_of_several_releases_says_how_many_it_tried() {
        // One release tried and others left untried is not "its only release".
        let hint = |untried| ReleaseHint {
            trials: vec![trial("2.0.0", Outcome::Fails, Cause::DependencyConflict)],
            untried,
            yanked: 0,
            not_admitted: None,
            not_asked_for: Vec::new(),
        };
        // ... nor "none of its 1 newest releases", which reads as a miscount.
        assert_eq!(
            release_hint_lines(&hint(3)),
            ["its newest release does not resolve on this image (older ones were not tried)"]
        );
        assert_eq!(
            release_hint_lines(&hint(0)),
            ["its only release does not resolve on this image"]
        );
        let undecided = ReleaseHint {
            trials: vec![trial("2.0.0", Outcome::Undecided, Cause::BudgetExhausted)],
            ..hint(3)
        };
        assert_eq!(
            release_hint_lines(&undecided).last().map(String::as_str),
            Some(
                "whether its newest release resolves on this image is unknown (older ones were not tried)"
            )
        );
    }

    #[test]
    fn a_release_whose_constraints_resolve_is_not_said_not_to_resolve() {
        let hint = ReleaseHint {
            trials: vec![trial("2.0.0", Outcome::Fails, Cause::MissingSystemLibrary)],
            untried: 0,
            yanked: 0,
            not_admitted: None,
            not_asked_for: Vec::new(),
        };
        assert_eq!(
            release_hint_lines(&hint),
            [
                "pinned to 2.0.0, its version constraints resolve, but it fails: missing-system-library",
                "its only release does not install on this image",
            ]
        );
    }

    #[test]
    fn causes_in_a_sentence_are_named_once_each_in_order() {
        let trial = |cause| Trial {
            version: "1.0.0".into(),
            outcome: Outcome::Fails,
            cause: Some(cause),
        };
        let trials = [
            trial(Cause::MissingToolchain),
            trial(Cause::MissingSystemLibrary),
            trial(Cause::MissingToolchain),
        ];
        let refs: Vec<&Trial> = trials.iter().collect();
        assert_eq!(causes(&refs), "missing-system-library, missing-toolchain");
    }
    use crate::plan::explain::Trial;
    use crate::plan::matrix::Outcome;
    use crate::solve::Cause;

    #[test]
    fn versions_in_a_sentence_name_six_and_count_only_a_real_rest() {
        let trials: Vec<Trial> = (1..=7)
            .map(|i| Trial {
                version: format!("1.{i}.0"),
                outcome: Outcome::Fails,
                cause: Some(Cause::DependencyConflict),
            })
            .collect();
        let refs: Vec<&Trial> = trials.iter().collect();
        // Six fit whole: "and 0 more" would read as a list cut short.
        assert_eq!(
            versions(&refs[..6]),
            "1.1.0, 1.2.0, 1.3.0, 1.4.0, 1.5.0, 1.6.0"
        );
        assert_eq!(
            versions(&refs),
            "1.1.0, 1.2.0, 1.3.0, 1.4.0, 1.5.0, 1.6.0, and 1 more"
        );
    }
    use crate::load::diag::{Origin, ProblemKind};

    #[test]
    fn the_check_report_counts_one_problem_in_one_category_in_the_singular() {
        let mut ledger = crate::load::Ledger::default();
        let at = |line| Origin {
            file: "r.yaml".into(),
            line,
        };
        ledger.note(
            ProblemKind::NormalisedVersion,
            at(3),
            "kp-a",
            "v1.0 read as 1.0.0",
        );
        assert!(
            check_text(&ledger, None).contains("\n1 problem in 1 category\n"),
            "{}",
            check_text(&ledger, None)
        );
        ledger.note(
            ProblemKind::NormalisedVersion,
            at(4),
            "kp-b",
            "v2 read as 2.0.0",
        );
        assert!(check_text(&ledger, None).contains("\n2 problems in 1 category\n"));
    }

    #[test]
    fn a_table_pads_columns_by_two_spaces_and_rules_the_header_to_its_width() {
        let rows = |r: &[&[&str]]| -> Vec<Vec<String>> {
            r.iter()
                .map(|row| row.iter().map(|c| c.to_string()).collect())
                .collect()
        };
        // Widths count characters, not bytes; the rule spans the columns and the two-space
        // gaps between them, not a gap after the last.
        let got = table(&rows(&[&["image", "n"], &["dëb-1", "12"], &["x", "3"]]));
        assert_eq!(got, "image  n\n---------\ndëb-1  12\nx      3\n");
    }

    #[test]
    fn a_shared_blockers_line_shows_three_reasons_and_counts_the_rest() {
        let reasons: Vec<String> = (1..=5).map(|i| format!("r{i}")).collect();
        assert_eq!(shown_reasons(&reasons[..3]), "r1; r2; r3");
        assert_eq!(shown_reasons(&reasons), "r1; r2; r3; and 2 other reasons");
    }
}
