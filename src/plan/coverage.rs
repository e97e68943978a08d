//! Runtime coverage: how much of the priority weight resolves on a base image as its runtime
//! moves through candidate versions, and which packages drop out or come in between them.

use super::matrix::{PlanOptions, plan_cell};
use crate::load::Inputs;
use crate::model::Image;
use crate::report::{percent, percent_beside, target_percent};
use crate::solve::{ImageView, SetCache};
use rayon::prelude::*;
use semver::Version;
use serde::Serialize;
use std::fmt::Write;

/// Coverage at one runtime version.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CoveragePoint {
    pub runtime: String,
    /// Priority-weighted share of entries shown to resolve, in `[0, 1]`; `None` (JSON
    /// `null`) when every priority weight is zero. Undecided entries count as not resolving,
    /// so with any of them this is a lower bound.
    pub share: Option<f64>,
    /// The share not shown to resolve, divided from its own weight: `1 - share` would lose
    /// a small remainder to rounding, and [`reaches`] must see it.
    #[serde(skip)]
    pub short_share: Option<f64>,
    /// The share shown not to resolve (undecided entries left out of it): if this misses
    /// the target, no outcome of the undecided entries can reach it.
    #[serde(skip)]
    pub failing_share: Option<f64>,
    /// Entries that resolve here, in priority order.
    pub resolves: Vec<String>,
    /// How many entries are undecided here: the solver ran out of `--budget` on them.
    pub undecided: usize,
    /// The undecided entries, in priority order.
    pub undecided_entries: Vec<String>,
    /// Whether this runtime reaches the target: `None` (JSON `null`) when the undecided
    /// entries leave it open, or when no share can be computed.
    pub reaches_target: Option<bool>,
}

/// What changes between two neighbouring runtime versions. Named as seen from the older
/// runtime, the row it is printed on: what drops out or comes in there compared with the
/// newer one. Moving up to the newer runtime gains `drop_out` and loses `come_in`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RuntimeStep {
    pub older: String,
    pub newer: String,
    /// Shown to resolve at the newer runtime and shown not to at the older one.
    pub drop_out: Vec<String>,
    /// Shown to resolve at the older runtime and shown not to at the newer one.
    pub come_in: Vec<String>,
    /// Undecided at either runtime, so whether they drop out, come in or neither is
    /// unknown.
    pub unknown: Vec<String>,
}

/// Coverage of one base image over candidate runtimes, oldest first.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Coverage {
    pub base_image: String,
    pub family: String,
    pub platform: String,
    pub target: f64,
    pub points: Vec<CoveragePoint>,
    /// The oldest runtime whose share reaches `target`, when one is shown to and every older
    /// one is shown not to; `None` when none is, or when undecided entries leave an older
    /// runtime open (then `target_unknown_at` names them).
    pub oldest_reaching_target: Option<String>,
    /// Runtimes whose verdict against the target the undecided entries leave open, oldest
    /// first, up to the first one shown to reach it: until they are decided, which runtime
    /// is the oldest to reach the target (or whether any does) is unknown.
    pub target_unknown_at: Vec<String>,
    pub steps: Vec<RuntimeStep>,
    /// Planned with `--no-native`: shares count entries whose versions resolve, with no look
    /// at the system libraries or toolchain the base image lacks, so they can only be higher
    /// than the checked ones.
    pub native_skipped: bool,
}

/// How one priority entry came out at one candidate runtime.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Cell {
    Resolves,
    Fails,
    /// The solver ran out of budget: it may resolve or not.
    Undecided,
}

/// The default candidate runtimes: the distinct runtimes of the declared images, oldest first.
pub fn declared_runtimes(inputs: &Inputs) -> Vec<Version> {
    let mut v: Vec<Version> = inputs
        .images
        .images
        .iter()
        .map(|i| i.runtime.clone())
        .collect();
    distinct_runtimes(&mut v);
    v
}

/// Sorts `runtimes` oldest first and keeps one of each precedence: build metadata does not
/// count in precedence (Semantic Versioning 2.0.0, section 10), so `3.1.2+x` admits exactly
/// what `3.1.2` admits and would only repeat its row. The one kept sorts first (a bare
/// version before any with metadata).
///
/// ```
/// let mut v: Vec<semver::Version> = ["3.1.2+x", "2.8.1", "3.1.2"]
///     .iter()
///     .map(|s| s.parse().unwrap())
///     .collect();
/// basefit::plan::coverage::distinct_runtimes(&mut v);
/// assert_eq!(v, [semver::Version::new(2, 8, 1), semver::Version::new(3, 1, 2)]);
/// ```
pub fn distinct_runtimes(runtimes: &mut Vec<Version>) {
    runtimes.sort();
    runtimes.dedup_by(|later, first| later.cmp_precedence(first).is_eq());
}

/// The default base images: the first image of each (family, platform) among `images`, in
/// declared order.
pub fn default_bases(images: &[Image]) -> Vec<&Image> {
    let mut seen = Vec::new();
    let mut out = Vec::new();
    for img in images {
        let key = (img.family, img.platform.clone());
        if !seen.contains(&key) {
            seen.push(key);
            out.push(img);
        }
    }
    out
}

/// Plans every priority entry on `base` with its runtime replaced by each of `runtimes`
/// (sorted and de-duplicated first). `sets` is shared so requirement sets are computed once
/// across all runtimes. The result does not depend on the thread count.
pub fn coverage(
    inputs: &Inputs,
    base: &Image,
    runtimes: &[Version],
    target: f64,
    options: &PlanOptions,
    sets: &SetCache,
) -> Coverage {
    let mut runtimes = runtimes.to_vec();
    distinct_runtimes(&mut runtimes);
    let images: Vec<Image> = runtimes
        .iter()
        .map(|r| Image {
            runtime: r.clone(),
            ..base.clone()
        })
        .collect();
    let views: Vec<ImageView<'_>> = images
        .iter()
        .map(|img| ImageView::new(&inputs.registry, img, sets))
        .collect();
    let entries = &inputs.priorities.entries;
    let n = entries.len();
    if let Some(pb) = &options.progress {
        // Several bases share one bar, each adding its cells.
        pb.set_length(pb.length().unwrap_or(0) + (views.len() * n) as u64);
    }
    let cells: Vec<Cell> = (0..views.len() * n)
        .into_par_iter()
        .map(|i| {
            let outcome = plan_cell(inputs, &views[i / n], &entries[i % n], options).outcome;
            if let Some(pb) = &options.progress {
                pb.inc(1);
            }
            match outcome {
                o if o.resolves() => Cell::Resolves,
                super::matrix::Outcome::Undecided => Cell::Undecided,
                _ => Cell::Fails,
            }
        })
        .collect();
    let named = |row: &[Cell], want: Cell| -> Vec<String> {
        entries
            .iter()
            .zip(row)
            .filter(|(_, c)| **c == want)
            .map(|(e, _)| e.name.clone())
            .collect()
    };
    let points: Vec<CoveragePoint> = runtimes
        .iter()
        .enumerate()
        .map(|(r, v)| {
            let row = &cells[r * n..(r + 1) * n];
            // A fold from zero, not `sum`: a sum of nothing is negative zero, which the
            // YAML and JSON documents would print as `-0.0` when nothing resolves.
            let (weight, open, failing) =
                entries
                    .iter()
                    .zip(row)
                    .fold((0.0, 0.0, 0.0), |(w, o, f), (e, c)| match c {
                        Cell::Resolves => (w + e.weight, o, f),
                        Cell::Undecided => (w, o + e.weight, f),
                        Cell::Fails => (w, o, f + e.weight),
                    });
            let short_share = super::matrix::weight_share(open + failing, weight);
            let failing_share = super::matrix::weight_share(failing, weight + open);
            let reaches_target = match (short_share, failing_share) {
                (Some(short), _) if reaches(short, target, entries.len()) => Some(true),
                (_, Some(failing)) if !reaches(failing, target, entries.len()) => Some(false),
                _ => None,
            };
            let undecided_entries = named(row, Cell::Undecided);
            CoveragePoint {
                runtime: v.to_string(),
                share: super::matrix::weight_share(weight, open + failing),
                short_share,
                failing_share,
                resolves: named(row, Cell::Resolves),
                undecided: undecided_entries.len(),
                undecided_entries,
                reaches_target,
            }
        })
        .collect();
    let steps = (1..runtimes.len())
        .map(|r| {
            let older = &cells[(r - 1) * n..r * n];
            let newer = &cells[r * n..(r + 1) * n];
            let pick = |keep: &dyn Fn(Cell, Cell) -> bool| -> Vec<String> {
                entries
                    .iter()
                    .enumerate()
                    .filter(|(i, _)| keep(older[*i], newer[*i]))
                    .map(|(_, e)| e.name.clone())
                    .collect()
            };
            RuntimeStep {
                older: runtimes[r - 1].to_string(),
                newer: runtimes[r].to_string(),
                drop_out: pick(&|o, n| o == Cell::Fails && n == Cell::Resolves),
                come_in: pick(&|o, n| o == Cell::Resolves && n == Cell::Fails),
                // Whatever the other side, an undecided side may turn out either way, and
                // one of its two ways makes a drop-out or a come-in.
                unknown: pick(&|o, n| o == Cell::Undecided || n == Cell::Undecided),
            }
        })
        .collect();
    // The oldest shown to reach counts only if no older runtime might reach it too.
    let first_reaching = points.iter().position(|p| p.reaches_target == Some(true));
    let before = &points[..first_reaching.unwrap_or(points.len())];
    let target_unknown_at: Vec<String> = before
        .iter()
        .filter(|p| p.share.is_some() && p.reaches_target.is_none())
        .map(|p| p.runtime.clone())
        .collect();
    let oldest_reaching_target = first_reaching
        .filter(|_| target_unknown_at.is_empty())
        .map(|i| points[i].runtime.clone());
    Coverage {
        base_image: base.id.clone(),
        family: base.family.to_string(),
        platform: base.platform.to_string(),
        target,
        points,
        oldest_reaching_target,
        target_unknown_at,
        steps,
        native_skipped: !options.native,
    }
}

/// Whether a coverage whose unresolved share is `short`, summed from `entries` weights,
/// reaches `target`. Judged on the unresolved side, so a target of 100% is reached only when
/// nothing with weight fails, however heavy the rest. Below 100%, `short` may exceed
/// `1 - target` by the rounding that the target's own binary form and the sums of `entries`
/// weights can make (a few units in the last place per weight summed), so a share that is
/// exactly the target in decimal is not missed. A miss within that rounding (a weight below
/// about 1e-15 of the total failing, or 1e-10 on a list of 100,000 entries) counts as a hit.
///
/// ```
/// use basefit::plan::coverage::reaches;
/// assert!(reaches(5.0 / 100.0, 0.95, 2)); // 95 of 100 in decimal: exactly the target
/// assert!(reaches(1.0 / 100000.0, 0.99999, 2)); // 0.99999 is a little above it in binary
/// assert!(!reaches(500000001.0 / 1e10, 0.95, 2)); // 94.99999999%
/// assert!(!reaches(1.0 / (1e17 + 1.0), 1.0, 2));
/// assert!(reaches(0.0, 1.0, 2));
/// ```
pub fn reaches(short: f64, target: f64, entries: usize) -> bool {
    if target >= 1.0 {
        return short <= 0.0;
    }
    short <= (1.0 - target) + 4.0 * (entries as f64 + 2.0) * f64::EPSILON
}

/// A coverage as printed beside its target: with the places the target needs, and never
/// looking equal to a target it misses. With undecided entries it is a lower bound, and says
/// so: printed bare it would read as the coverage.
fn shown(point: &CoveragePoint, target: f64) -> String {
    match (point.share, point.short_share) {
        (Some(share), Some(_)) => {
            let text = percent_beside(share, target, point.reaches_target != Some(true));
            match point.undecided {
                0 => text,
                _ => format!(">={text}"),
            }
        }
        _ => "n/a".to_string(),
    }
}

/// Whether no coverage of `c` can be computed: every priority weight is zero. Saying that no
/// runtime reaches the target would send the reader to look for a better runtime.
fn undefined(c: &Coverage) -> bool {
    // One total divides every point, so the points are all defined or none is.
    c.points.iter().any(|p| p.share.is_none())
}

/// Why [`undefined`] coverage has no numbers, as the text and the chart say it.
const UNDEFINED: &str = "coverage by weight cannot be computed: every priority weight is zero";

/// A readable table of coverage per runtime, with drop-outs and come-ins per step. Each row
/// compares its runtime with the next newer one, and the headers say in which direction: an
/// upgrade-minded reader took a bare "drop out (vs next newer)" for what upgrading loses,
/// which is the opposite.
pub fn coverage_text(c: &Coverage) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "Runtime coverage of {} ({}, {}), target {}",
        c.base_image,
        c.family,
        c.platform,
        target_percent(c.target)
    );
    if c.native_skipped {
        let _ = writeln!(
            s,
            "version solving only (--no-native): shares leave out what the base image lacks in system libraries and toolchain"
        );
    }
    let mut rows = vec![vec![
        "runtime".to_string(),
        "coverage".to_string(),
        "undecided".to_string(),
        "drop out here (resolve at next newer)".to_string(),
        "come in here (fail at next newer)".to_string(),
    ]];
    for (i, p) in c.points.iter().enumerate() {
        let step = c.steps.get(i);
        let list = |v: Option<&Vec<String>>| match v {
            Some(v) if !v.is_empty() => v.join(" "),
            _ => "-".to_string(),
        };
        rows.push(vec![
            p.runtime.clone(),
            shown(p, c.target),
            p.undecided.to_string(),
            list(step.map(|s| &s.drop_out)),
            list(step.map(|s| &s.come_in)),
        ]);
    }
    s.push_str(&crate::report::text::table(&rows));
    let undecided: usize = c.points.iter().map(|p| p.undecided).sum();
    if undecided > 0 {
        let _ = writeln!(
            s,
            "the solver ran out of --budget on {undecided} cells: they count as not resolving (coverage marked >= is a lower bound), and whether they drop out or come in is unknown, so neither column lists them; raise --budget"
        );
        for p in c.points.iter().filter(|p| p.undecided > 0) {
            let _ = writeln!(
                s,
                "  undecided at {}: {}",
                p.runtime,
                p.undecided_entries.join(" ")
            );
        }
    }
    let open = c.target_unknown_at.join(", ");
    match &c.oldest_reaching_target {
        Some(v) => {
            let _ = writeln!(s, "oldest runtime reaching the target: {v}");
        }
        None if undefined(c) => {
            let _ = writeln!(s, "{UNDEFINED}");
        }
        None if !c.target_unknown_at.is_empty() => {
            match c.points.iter().find(|p| p.reaches_target == Some(true)) {
                Some(p) => {
                    let _ = writeln!(
                        s,
                        "oldest runtime reaching the target: unknown; {} reaches it, but undecided cells leave {open} open; raise --budget",
                        p.runtime
                    );
                }
                None => {
                    let _ = writeln!(
                        s,
                        "whether any candidate runtime reaches the target is unknown: undecided cells leave {open} open; raise --budget"
                    );
                }
            }
        }
        None => s.push_str("no candidate runtime reaches the target\n"),
    }
    s
}

/// A self-contained SVG line chart of coverage against runtime version: one point per
/// runtime, the target as a dashed line. Colours are from the Okabe-Ito palette (safe for
/// the common colour-vision deficiencies) and the font is the generic `sans-serif`, so
/// nothing is fetched.
pub fn coverage_svg(c: &Coverage) -> String {
    const W: f64 = 640.0;
    // A chart is what gets pasted into documentation on its own, so it carries the notice
    // every rendering does, under the axis title.
    const NOTICE_LINE: f64 = 13.0;
    let notice = notice_lines(c.native_skipped);
    let chart_h = 360.0;
    let height = chart_h + NOTICE_LINE * notice.len() as f64 + 6.0;
    const L: f64 = 60.0;
    const R: f64 = 20.0;
    const T: f64 = 40.0;
    const B: f64 = 60.0;
    let pw = W - L - R;
    let ph = chart_h - T - B;
    let n = c.points.len();
    // Runtimes are categories spaced evenly: version numbers have no meaningful distance.
    let x = |i: usize| {
        if n <= 1 {
            L + pw / 2.0
        } else {
            L + pw * i as f64 / (n - 1) as f64
        }
    };
    let y = |share: f64| T + ph * (1.0 - share.clamp(0.0, 1.0));
    let mut s = String::new();
    let _ = writeln!(
        s,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{W}\" height=\"{height}\" viewBox=\"0 0 {W} {height}\" font-family=\"sans-serif\" font-size=\"12\">"
    );
    let _ = writeln!(
        s,
        "<title>Runtime coverage of {}</title>",
        crate::report::html::escape_html(&c.base_image)
    );
    let _ = writeln!(
        s,
        "<rect width=\"{W}\" height=\"{height}\" fill=\"#ffffff\"/>"
    );
    let _ = writeln!(
        s,
        "<text x=\"{}\" y=\"20\" text-anchor=\"middle\" font-size=\"14\">Coverage of {} ({}) by runtime</text>",
        W / 2.0,
        crate::report::html::escape_html(&c.base_image),
        crate::report::html::escape_html(&c.platform)
    );
    for k in 0..=4 {
        let share = k as f64 / 4.0;
        let yy = y(share);
        let _ = writeln!(
            s,
            "<line x1=\"{L}\" y1=\"{yy:.1}\" x2=\"{:.1}\" y2=\"{yy:.1}\" stroke=\"#dddddd\"/>",
            L + pw
        );
        let _ = writeln!(
            s,
            "<text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"end\">{}</text>",
            L - 6.0,
            yy + 4.0,
            percent(share, 0)
        );
    }
    let _ = writeln!(
        s,
        "<line x1=\"{L}\" y1=\"{T}\" x2=\"{L}\" y2=\"{:.1}\" stroke=\"#000000\"/>",
        T + ph
    );
    let _ = writeln!(
        s,
        "<line x1=\"{L}\" y1=\"{:.1}\" x2=\"{:.1}\" y2=\"{:.1}\" stroke=\"#000000\"/>",
        T + ph,
        L + pw,
        T + ph
    );
    let ty = y(c.target);
    let _ = writeln!(
        s,
        "<line class=\"target\" x1=\"{L}\" y1=\"{ty:.1}\" x2=\"{:.1}\" y2=\"{ty:.1}\" stroke=\"#D55E00\" stroke-width=\"1.5\" stroke-dasharray=\"6 4\"/>",
        L + pw
    );
    let _ = writeln!(
        s,
        "<text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"end\" fill=\"#D55E00\">target {}</text>",
        L + pw,
        ty - 4.0,
        target_percent(c.target)
    );
    let undecided: usize = c.points.iter().map(|p| p.undecided).sum();
    if undecided > 0 {
        // A point drawn at its lower bound reads as the coverage; the chart carries no table
        // to say otherwise.
        let _ = writeln!(
            s,
            "<text class=\"undecided\" x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"middle\" fill=\"#D55E00\">{undecided} cells undecided (out of --budget): points are lower bounds</text>",
            W / 2.0,
            T - 6.0
        );
    }
    if undefined(c) {
        let _ = writeln!(
            s,
            "<text class=\"undefined\" x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"middle\">{UNDEFINED}</text>",
            L + pw / 2.0,
            T + ph / 2.0
        );
    }
    let defined: Vec<(usize, f64)> = c
        .points
        .iter()
        .enumerate()
        .filter_map(|(i, p)| Some((i, p.share?)))
        .collect();
    if defined.len() > 1 {
        let pts: Vec<String> = defined
            .iter()
            .map(|&(i, share)| format!("{:.1},{:.1}", x(i), y(share)))
            .collect();
        let _ = writeln!(
            s,
            "<polyline fill=\"none\" stroke=\"#0072B2\" stroke-width=\"2\" points=\"{}\"/>",
            pts.join(" ")
        );
    }
    for &(i, share) in &defined {
        let _ = writeln!(
            s,
            "<circle class=\"point\" cx=\"{:.1}\" cy=\"{:.1}\" r=\"4\" fill=\"#0072B2\"><title>{}: {}</title></circle>",
            x(i),
            y(share),
            crate::report::html::escape_html(&c.points[i].runtime),
            crate::report::html::escape_html(&shown(&c.points[i], c.target))
        );
    }
    for (i, p) in c.points.iter().enumerate() {
        let _ = writeln!(
            s,
            "<text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"middle\">{}</text>",
            x(i),
            T + ph + 18.0,
            crate::report::html::escape_html(&p.runtime)
        );
    }
    let _ = writeln!(
        s,
        "<text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"middle\">runtime version</text>",
        L + pw / 2.0,
        chart_h - 15.0
    );
    for (i, line) in notice.iter().enumerate() {
        let _ = writeln!(
            s,
            "<text class=\"notice\" x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"middle\" font-size=\"10\">{}</text>",
            W / 2.0,
            chart_h + NOTICE_LINE * (i as f64 + 0.5),
            crate::report::html::escape_html(line)
        );
    }
    let _ = writeln!(
        s,
        "<text x=\"15\" y=\"{:.1}\" text-anchor=\"middle\" transform=\"rotate(-90 15 {:.1})\">priority weight that resolves</text>",
        T + ph / 2.0,
        T + ph / 2.0
    );
    s.push_str("</svg>\n");
    s
}

/// The notice every rendering carries (and the `--no-native` one when it applies), in lines
/// short enough for the chart's width at its notice font size.
fn notice_lines(native_skipped: bool) -> Vec<String> {
    const MAX: usize = 105;
    let mut text = super::matrix::NOTICE.to_string();
    if native_skipped {
        text.push(' ');
        text.push_str(super::matrix::NATIVE_SKIPPED_NOTICE);
    }
    let mut lines: Vec<String> = Vec::new();
    for word in text.split(' ') {
        match lines.last_mut() {
            Some(line) if line.chars().count() + 1 + word.chars().count() <= MAX => {
                line.push(' ');
                line.push_str(word);
            }
            _ => lines.push(word.to_string()),
        }
    }
    lines
}

#[cfg(test)]
mod tests {
    use super::reaches;
    use crate::plan::matrix::weight_share;

    /// Lists built to meet a target exactly in decimal (every n-th entry failing, equal
    /// weights) must reach it, summed in order as `coverage` sums them, and one more failing
    /// entry must miss it, for long lists and targets near 100% alike.
    #[test]
    fn exact_targets_are_reached_and_one_entry_more_misses() {
        for (weight, entries, failing_every, target) in [
            (0.3, 62_240, 20, 0.95),
            (0.3, 55_600, 100, 0.99),
            (0.35, 78_460, 20, 0.95),
            (1.0, 100_000, 100_000, 0.99999),
            (0.1, 10_000_000, 10_000_000, 0.9999999),
            (1.0, 10, 10, 0.9),
            (7.0, 1000, 1000, 0.999),
        ] {
            let fails = |extra: usize| {
                let (mut resolved, mut short) = (0.0f64, 0.0f64);
                for i in 0..entries {
                    if i % failing_every == 0 || i < extra {
                        short += weight;
                    } else {
                        resolved += weight;
                    }
                }
                weight_share(short, resolved).unwrap()
            };
            assert!(
                reaches(fails(0), target, entries),
                "{entries} x {weight}, 1 in {failing_every} failing, target {target}"
            );
            // A second failing entry (index 1 is never a multiple of `failing_every` > 1).
            assert!(
                !reaches(fails(2), target, entries),
                "{entries} x {weight}, one more failing, target {target}"
            );
        }
    }
}
