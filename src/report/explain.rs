//! `explain` for people: [`super::text::explain_text`] with the runtime hint's line toward the
//! cause. That line is composed here, beside the rest of the text report rather than inside
//! it, so `text.rs` keeps one shape for the hints it has always printed; move it there when
//! the two are next edited together.

use crate::plan::explain::{Direction, Explanation, TowardCause, Trial};

/// The head of the runtime hint's line that [`super::text::explain_text`] prints when the
/// entry resolves at some declared runtime; the line toward the cause goes after it and the
/// lines that qualify it ("at the lower runtimes ...").
const LOWEST_LINE: &str = "  lowest declared runtime at which it resolves here: ";

/// One cell explained for people.
pub fn explain_text(e: &Explanation) -> String {
    let mut out = super::text::explain_text(e);
    let Some(toward) = e
        .runtime_hint
        .as_ref()
        .and_then(|h| h.toward_cause.as_ref())
    else {
        return out;
    };
    let line = format!("  {}\n", toward_cause_line(toward));
    let at = out.find(LOWEST_LINE).map(|start| {
        // After the lowest line and the lines that qualify it, before the release hint.
        let mut end = start + out[start..].find('\n').map_or(out.len() - start, |n| n + 1);
        while out[end..].starts_with("  at the lower ") {
            end += out[end..].find('\n').map_or(out.len() - end, |n| n + 1);
        }
        end
    });
    // Without that line (its wording changed), the hints block still ends before the notice.
    let at = at.or_else(|| out.rfind(&format!("\n{}", e.notice)));
    match at {
        Some(at) => out.insert_str(at, &line),
        None => out.push_str(&line),
    }
    out
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
            let what = if t.fails_natively() {
                format!(
                    "its version constraints resolve, but it fails: {}",
                    t.cause.map_or("", |c| c.as_str())
                )
            } else if t.undecided() {
                "the solver ran out of budget (raise --budget)".to_string()
            } else {
                "its version constraints do not resolve".to_string()
            };
            format!("{} ({what})", t.version)
        })
        .collect::<Vec<_>>()
        .join(", ")
}
