//! What the matrix renderers share: where each cell sits, the symbols that stand for an
//! outcome, how recorded installs are read, per-image counts and one-line reasons.
//!
//! A matrix read from a file may be sharded, truncated or hand-edited, so nothing here
//! trusts `cells` to be the full row-by-row grid that [`Matrix::row`] expects.

use crate::plan::matrix::{Cell, Matrix, Outcome, RecordedCheck};
use std::collections::HashMap;

/// The symbol that stands for an outcome in every rendered matrix, so a reader never
/// depends on colour alone.
pub fn outcome_symbol(outcome: Outcome) -> &'static str {
    match outcome {
        Outcome::Installs => "✓",
        Outcome::AtRisk => "△",
        Outcome::Fails => "✗",
        Outcome::Undecided => "?",
    }
}

/// A short, readable name of an outcome for legends and badges.
pub fn outcome_label(outcome: Outcome) -> &'static str {
    match outcome {
        Outcome::Installs => "installs",
        Outcome::AtRisk => "at risk",
        Outcome::Fails => "fails",
        Outcome::Undecided => "undecided",
    }
}

/// One sentence on what an outcome promises, for legends; `native_skipped` for a matrix
/// planned without the native step, where no outcome says anything about system libraries.
pub fn outcome_meaning(outcome: Outcome, native_skipped: bool) -> &'static str {
    match outcome {
        Outcome::Installs if native_skipped => "resolves; native needs were not checked",
        Outcome::Fails if native_skipped => "does not resolve (native needs were not checked)",
        Outcome::Installs => "resolves, and every native need found is met by the image",
        Outcome::AtRisk => "resolves, but a likely or possible native need is not met by the image",
        Outcome::Fails => "does not resolve, or a declared native need is certainly unmet",
        Outcome::Undecided => "the solver budget ran out before an answer",
    }
}

/// How a recorded install compares with the prediction, as far as a reader should care.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Mark {
    /// Recorded installs agree with the prediction.
    Agreed,
    /// The recorded result contradicts the prediction.
    Surprise,
    /// Neither agreement nor contradiction: flaky retries, version drift, a failure for
    /// another cause than predicted, an undecided prediction, or a verdict this version of
    /// basefit does not know.
    Unsettled,
}

impl Mark {
    /// Reads a recorded check. Verdicts are open strings written by `verify`, so anything
    /// that is not plainly an agreement is flagged rather than silently passed as one.
    pub fn of(check: &RecordedCheck) -> Mark {
        let verdict = check.verdict.trim();
        if verdict.starts_with("surprise") {
            Mark::Surprise
        } else if verdict.starts_with("agreed")
            && check.recorded.trim() != "flaky"
            && check.cause_agrees != Some(false)
        {
            Mark::Agreed
        } else if verdict == crate::verify::Verdict::RiskConfirmed.as_str()
            && check.recorded.trim() != "flaky"
            && check.cause_agrees == Some(true)
        {
            // A risk is confirmed only by a log showing what the cell was at risk for (an
            // earlier basefit also called a failure with no such log so).
            Mark::Agreed
        } else {
            Mark::Unsettled
        }
    }

    /// The mark's name in data outputs (the CSV's `mark` column).
    pub fn as_str(self) -> &'static str {
        match self {
            Mark::Agreed => "agreed",
            Mark::Surprise => "surprise",
            Mark::Unsettled => "unsettled",
        }
    }

    /// The marker appended to a cell's symbol. Agreement has one too: without it, a cell
    /// whose prediction installs confirmed reads exactly as one nobody tested.
    pub fn symbol(self) -> &'static str {
        match self {
            Mark::Agreed => "rec",
            Mark::Surprise => "!",
            Mark::Unsettled => "~",
        }
    }

    /// What the marker means, for legends.
    pub fn meaning(self) -> &'static str {
        match self {
            Mark::Agreed => "recorded installs agree with the prediction",
            Mark::Surprise => "recorded installs contradict the prediction",
            Mark::Unsettled => concat!(
                "recorded installs neither agree nor contradict: ",
                unsettled_kinds!()
            ),
        }
    }
}

/// What makes a recorded install neither agree nor contradict, as every rendering's legend and
/// counts say it: one text, so a new kind (an unconfirmed risk) reaches all of them.
macro_rules! unsettled_kinds {
    () => {
        "flaky, another version or failure cause than predicted, a risk the log does not show, or an undecided prediction"
    };
}
pub(crate) use unsettled_kinds;

/// [`unsettled_kinds`] as a value.
pub(crate) const UNSETTLED_KINDS: &str = unsettled_kinds!();

/// The mark of a cell, when it has recorded installs.
pub(crate) fn mark_of(cell: &Cell) -> Option<Mark> {
    cell.recorded.as_ref().map(Mark::of)
}

/// Cells laid out as rows of packages by columns of images; `None` where the matrix holds
/// no cell for that pair. Each present cell comes with its index in `Matrix::cells`.
pub(crate) fn grid(m: &Matrix) -> Vec<Vec<Option<(usize, &Cell)>>> {
    let n = m.images.len();
    let mut by_pair: HashMap<(&str, &str), usize> = HashMap::new();
    for (i, c) in m.cells.iter().enumerate() {
        by_pair
            .entry((c.package.as_str(), c.image.as_str()))
            .or_insert(i);
    }
    m.packages
        .iter()
        .enumerate()
        .map(|(r, p)| {
            m.images
                .iter()
                .enumerate()
                .map(|(c, img)| {
                    // The declared layout is row by row; fall back to a look-up by name only
                    // when a cell is not where the layout puts it.
                    let at = r
                        .checked_mul(n)
                        .and_then(|x| x.checked_add(c))
                        .filter(|&i| {
                            m.cells
                                .get(i)
                                .is_some_and(|cell| cell.package == p.name && cell.image == img.id)
                        })
                        .or_else(|| by_pair.get(&(p.name.as_str(), img.id.as_str())).copied());
                    at.and_then(|i| m.cells.get(i).map(|cell| (i, cell)))
                })
                .collect()
        })
        .collect()
}

/// Outcome counts of one image column.
#[derive(Debug, Clone, Default, PartialEq)]
pub(crate) struct ColumnCounts {
    pub installs: usize,
    pub at_risk: usize,
    pub fails: usize,
    pub undecided: usize,
    /// Cells the matrix does not hold.
    pub missing: usize,
    pub surprises: usize,
    pub unsettled: usize,
    pub agreed: usize,
    /// Share of the priority weight that resolves (cleanly or at risk); `None` when every
    /// weight is zero.
    pub weight_share: Option<f64>,
}

impl ColumnCounts {
    pub fn of(&self, outcome: Outcome) -> usize {
        match outcome {
            Outcome::Installs => self.installs,
            Outcome::AtRisk => self.at_risk,
            Outcome::Fails => self.fails,
            Outcome::Undecided => self.undecided,
        }
    }

    pub fn recorded(&self) -> usize {
        self.agreed + self.surprises + self.unsettled
    }
}

/// Per-image counts over a grid from [`grid`].
pub(crate) fn column_counts(m: &Matrix, grid: &[Vec<Option<(usize, &Cell)>>]) -> Vec<ColumnCounts> {
    (0..m.images.len())
        .map(|c| {
            let mut k = ColumnCounts::default();
            let (mut resolving, mut rest) = (0.0, 0.0);
            for (r, row) in grid.iter().enumerate() {
                let w = m.packages.get(r).map_or(0.0, |p| p.weight);
                let w = if w.is_finite() && w > 0.0 { w } else { 0.0 };
                let Some((_, cell)) = row.get(c).copied().flatten() else {
                    k.missing += 1;
                    rest += w;
                    continue;
                };
                match cell.outcome {
                    Outcome::Installs => k.installs += 1,
                    Outcome::AtRisk => k.at_risk += 1,
                    Outcome::Fails => k.fails += 1,
                    Outcome::Undecided => k.undecided += 1,
                }
                match mark_of(cell) {
                    Some(Mark::Agreed) => k.agreed += 1,
                    Some(Mark::Surprise) => k.surprises += 1,
                    Some(Mark::Unsettled) => k.unsettled += 1,
                    None => {}
                }
                if cell.outcome.resolves() {
                    resolving += w;
                } else {
                    rest += w;
                }
            }
            k.weight_share = crate::plan::matrix::weight_share(resolving, rest);
            k
        })
        .collect()
}

/// Whether a cell deserves a note under the table: anything a reader must not take as
/// "installs", and any recorded result that is not a plain agreement.
pub(crate) fn needs_note(cell: &Cell) -> bool {
    cell.outcome != Outcome::Installs
        || cell.cause.is_some()
        || mark_of(cell).is_some_and(|m| m != Mark::Agreed)
}

/// The longest one-line reason printed per cell; whole explanations are in the JSON and the
/// HTML detail panel.
const REASON_CHARS: usize = 320;

/// One line on why a cell is what it is: the blockers when the solver named them, otherwise
/// the explanation.
pub(crate) fn reason(cell: &Cell) -> String {
    let parts: Vec<&str> = if cell.blockers.is_empty() {
        cell.explanation.iter().map(String::as_str).collect()
    } else {
        cell.blockers.iter().map(|b| b.reason.as_str()).collect()
    };
    let mut line = one_line(&parts.join("; "));
    if line.chars().count() > REASON_CHARS {
        line = line.chars().take(REASON_CHARS - 1).collect::<String>();
        line.push('…');
    }
    line
}

/// Folds line breaks and other control characters into single spaces, and replaces
/// bidirectional controls, which could make a row read as something it is not. Other
/// invisible formatting characters stay: names holding them are left out at load, and in a
/// summary a zero-width joiner is part of an emoji.
pub(crate) fn one_line(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    let mut space = false;
    for ch in s.chars() {
        if ch.is_control() || matches!(ch, '\u{2028}' | '\u{2029}') {
            if !space && !out.is_empty() {
                out.push(' ');
            }
            space = true;
            continue;
        }
        space = false;
        if is_bidi_control(ch) {
            out.push('\u{FFFD}');
        } else {
            out.push(ch);
        }
    }
    if space {
        out.pop();
    }
    out
}

/// Text for a terminal with every control character but the line break, and every
/// bidirectional control, written out as an escape. Registry summaries and log lines come
/// from outside: raw, an escape sequence in one could clear the screen or hide the lines
/// after it, and a right-to-left override make text read backwards. Other invisible
/// formatting characters are left as they are (a zero-width joiner joins an emoji); names
/// holding them are left out at load ([`crate::model::is_invisible_format`]).
///
/// ```
/// use basefit::report::visible;
/// assert_eq!(visible("a\tb\n"), "a\\tb\n");
/// assert_eq!(visible("x\u{1b}[2Jy"), "x\\u{1b}[2Jy");
/// assert_eq!(visible("rtl\u{202e}gnp"), "rtl\\u{202e}gnp");
/// assert_eq!(visible("plain text"), "plain text");
/// ```
pub fn visible(s: &str) -> std::borrow::Cow<'_, str> {
    let hidden = |ch: char| {
        (ch.is_control() && ch != '\n')
            || is_bidi_control(ch)
            || matches!(ch, '\u{2028}' | '\u{2029}')
    };
    if !s.chars().any(hidden) {
        return std::borrow::Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for ch in s.chars() {
        match ch {
            '\t' => out.push_str("\\t"),
            '\r' => out.push_str("\\r"),
            ch if hidden(ch) => {
                let _ =
                    std::fmt::Write::write_fmt(&mut out, format_args!("\\u{{{:x}}}", ch as u32));
            }
            ch => out.push(ch),
        }
    }
    std::borrow::Cow::Owned(out)
}

use crate::model::is_bidi_control;

/// A share as a whole percentage, the same on every machine; `n/a` when undefined.
pub(crate) fn percent(share: Option<f64>) -> String {
    super::percent_or_na(share.map(|s| s.clamp(0.0, 1.0)), 0)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_line_folds_breaks_and_neutralises_bidi() {
        assert_eq!(one_line("a\r\nb\tc\n"), "a b c");
        assert_eq!(one_line("\nx"), "x");
        assert_eq!(one_line("ab\u{202E}cd"), "ab\u{FFFD}cd");
        // A zero-width joiner in a summary is part of an emoji, not a trick.
        let coder = "tools for \u{1F469}\u{200D}\u{1F4BB}";
        assert_eq!(one_line(coder), coder);
        assert_eq!(visible(coder), coder);
    }

    #[test]
    fn visible_writes_a_carriage_return_as_backslash_r() {
        // README ("Commands"): control characters from the inputs print as escapes; a lone
        // `\r` would move the cursor back and let the text after it overwrite the line.
        assert_eq!(visible("pkg\rfake"), "pkg\\rfake");
        assert_eq!(visible("a\r\nb"), "a\\r\nb");
    }

    #[test]
    fn a_reason_is_cut_only_beyond_its_limit() {
        let cell_saying = |text: String| Cell {
            explanation: vec![text],
            ..Cell::new("kp-a", "img-1", Outcome::Fails)
        };
        // Exactly at the limit the reason is whole; one character more and it ends in `…`
        // within the limit.
        let whole = "r".repeat(REASON_CHARS);
        assert_eq!(reason(&cell_saying(whole.clone())), whole);
        let cut = reason(&cell_saying("r".repeat(REASON_CHARS + 1)));
        assert_eq!(cut.chars().count(), REASON_CHARS);
        assert_eq!(cut, format!("{}…", "r".repeat(REASON_CHARS - 1)));
    }

    #[test]
    fn unknown_verdicts_are_not_taken_as_agreement() {
        let check = |recorded: &str, verdict: &str| RecordedCheck {
            recorded: recorded.into(),
            verdict: verdict.into(),
            version: None,
            detail: String::new(),
            attempts: 1,
            cause_agrees: None,
        };
        assert_eq!(
            Mark::of(&check("installed", "agreed-install")),
            Mark::Agreed
        );
        assert_eq!(
            Mark::of(&check("failed", "surprise-failure")),
            Mark::Surprise
        );
        assert_eq!(Mark::of(&check("installed", "drift")), Mark::Unsettled);
        assert_eq!(Mark::of(&check("flaky", "agreed-install")), Mark::Unsettled);
        assert_eq!(Mark::of(&check("installed", "")), Mark::Unsettled);
        assert_eq!(Mark::of(&check("failed", "undecided")), Mark::Unsettled);
        // Failing as predicted but for another cause: the predicted fix would not help.
        let other_cause = RecordedCheck {
            cause_agrees: Some(false),
            ..check("failed", "agreed-failure")
        };
        assert_eq!(Mark::of(&other_cause), Mark::Unsettled);
        let same_cause = RecordedCheck {
            cause_agrees: Some(true),
            ..check("failed", "agreed-failure")
        };
        assert_eq!(Mark::of(&same_cause), Mark::Agreed);
        // A risk counts as confirmed only where the log showed what the cell was at risk for.
        let risk = |cause_agrees| RecordedCheck {
            cause_agrees,
            ..check("failed", "risk-confirmed")
        };
        assert_eq!(Mark::of(&risk(Some(true))), Mark::Agreed);
        assert_eq!(Mark::of(&risk(None)), Mark::Unsettled);
        assert_eq!(Mark::of(&risk(Some(false))), Mark::Unsettled);
        // A flaky cell is unsettled even when one attempt's log shows the risk: another
        // attempt installed, so the log does not confirm it for the image.
        let flaky_risk = RecordedCheck {
            cause_agrees: Some(true),
            ..check("flaky", "risk-confirmed")
        };
        assert_eq!(Mark::of(&flaky_risk), Mark::Unsettled);
        assert_eq!(
            Mark::of(&check("failed", "risk-unconfirmed")),
            Mark::Unsettled
        );
    }
}
