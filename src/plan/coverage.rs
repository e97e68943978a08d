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
    /// Priority-weighted share of entries that resolve, in `[0, 1]`; `None` (JSON `null`)
    /// when every priority weight is zero.
    pub share: Option<f64>,
    /// The share that does not resolve, divided from its own weight: `1 - share` would lose
    /// a small remainder to rounding, and [`reaches`] must see it.
    #[serde(skip)]
    pub short_share: Option<f64>,
    /// Entries that resolve here, in priority order.
    pub resolves: Vec<String>,
}

/// What changes between two neighbouring runtime versions.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RuntimeStep {
    pub older: String,
    pub newer: String,
    /// Resolve at the newer runtime but not at the older one.
    pub drop_out: Vec<String>,
    /// Resolve at the older runtime but not at the newer one.
    pub come_in: Vec<String>,
}

/// Coverage of one base image over candidate runtimes, oldest first.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Coverage {
    pub base_image: String,
    pub family: String,
    pub platform: String,
    pub target: f64,
    pub points: Vec<CoveragePoint>,
    /// The oldest runtime whose share reaches `target`, if any does.
    pub oldest_reaching_target: Option<String>,
    pub steps: Vec<RuntimeStep>,
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
    let resolved: Vec<bool> = (0..views.len() * n)
        .into_par_iter()
        .map(|i| {
            let resolves = plan_cell(inputs, &views[i / n], &entries[i % n], options)
                .outcome
                .resolves();
            if let Some(pb) = &options.progress {
                pb.inc(1);
            }
            resolves
        })
        .collect();
    let points: Vec<CoveragePoint> = runtimes
        .iter()
        .enumerate()
        .map(|(r, v)| {
            let row = &resolved[r * n..(r + 1) * n];
            // A fold from zero, not `sum`: a sum of nothing is negative zero, which the
            // YAML and JSON documents would print as `-0.0` when nothing resolves.
            let (weight, rest) =
                entries
                    .iter()
                    .zip(row)
                    .fold((0.0, 0.0), |(weight, rest), (e, ok)| match ok {
                        true => (weight + e.weight, rest),
                        false => (weight, rest + e.weight),
                    });
            CoveragePoint {
                runtime: v.to_string(),
                share: super::matrix::weight_share(weight, rest),
                short_share: super::matrix::weight_share(rest, weight),
                resolves: entries
                    .iter()
                    .zip(row)
                    .filter(|(_, ok)| **ok)
                    .map(|(e, _)| e.name.clone())
                    .collect(),
            }
        })
        .collect();
    let steps = (1..runtimes.len())
        .map(|r| {
            let older = &resolved[(r - 1) * n..r * n];
            let newer = &resolved[r * n..(r + 1) * n];
            let pick = |want_old: bool| -> Vec<String> {
                entries
                    .iter()
                    .enumerate()
                    .filter(|(i, _)| older[*i] == want_old && newer[*i] != want_old)
                    .map(|(_, e)| e.name.clone())
                    .collect()
            };
            RuntimeStep {
                older: runtimes[r - 1].to_string(),
                newer: runtimes[r].to_string(),
                drop_out: pick(false),
                come_in: pick(true),
            }
        })
        .collect();
    let oldest_reaching_target = points
        .iter()
        .find(|p| p.short_share.is_some_and(|short| reaches(short, target)))
        .map(|p| p.runtime.clone());
    Coverage {
        base_image: base.id.clone(),
        family: base.family.to_string(),
        platform: base.platform.to_string(),
        target,
        points,
        oldest_reaching_target,
        steps,
    }
}

/// Whether a coverage whose unresolved share is `short` reaches `target`: whether `short` is
/// at most `1 - target`, give or take a relative 1e-12 of it, so a share that is exactly the
/// target in decimal is not missed by floating-point rounding of the weight sums. Judged on
/// the unresolved side, so a target of 100% is reached only when nothing with weight fails,
/// however heavy the rest.
///
/// ```
/// use basefit::plan::coverage::reaches;
/// assert!(reaches(5.0 / 100.0, 0.95)); // 95 of 100 in decimal: exactly the target
/// assert!(!reaches(500000001.0 / 1e10, 0.95)); // 94.99999999%
/// assert!(!reaches(1.0 / (1e17 + 1.0), 1.0));
/// assert!(reaches(0.0, 1.0));
/// ```
pub fn reaches(short: f64, target: f64) -> bool {
    short <= (1.0 - target) * (1.0 + 1e-12)
}

/// A coverage as printed beside its target: with the places the target needs, and never
/// looking equal to a target it misses.
fn shown(point: &CoveragePoint, target: f64) -> String {
    match (point.share, point.short_share) {
        (Some(share), Some(short)) => percent_beside(share, target, !reaches(short, target)),
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

/// A readable table of coverage per runtime, with drop-outs and come-ins per step.
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
    let mut rows = vec![vec![
        "runtime".to_string(),
        "coverage".to_string(),
        "drop out (vs next newer)".to_string(),
        "come in (vs next newer)".to_string(),
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
            list(step.map(|s| &s.drop_out)),
            list(step.map(|s| &s.come_in)),
        ]);
    }
    s.push_str(&crate::report::text::table(&rows));
    match &c.oldest_reaching_target {
        Some(v) => {
            let _ = writeln!(s, "oldest runtime reaching the target: {v}");
        }
        None if undefined(c) => {
            let _ = writeln!(s, "{UNDEFINED}");
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
    const H: f64 = 360.0;
    const L: f64 = 60.0;
    const R: f64 = 20.0;
    const T: f64 = 40.0;
    const B: f64 = 60.0;
    let pw = W - L - R;
    let ph = H - T - B;
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
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{W}\" height=\"{H}\" viewBox=\"0 0 {W} {H}\" font-family=\"sans-serif\" font-size=\"12\">"
    );
    let _ = writeln!(
        s,
        "<title>Runtime coverage of {}</title>",
        crate::report::html::escape_html(&c.base_image)
    );
    let _ = writeln!(s, "<rect width=\"{W}\" height=\"{H}\" fill=\"#ffffff\"/>");
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
            shown(&c.points[i], c.target)
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
        H - 15.0
    );
    let _ = writeln!(
        s,
        "<text x=\"15\" y=\"{:.1}\" text-anchor=\"middle\" transform=\"rotate(-90 15 {:.1})\">priority weight that resolves</text>",
        T + ph / 2.0,
        T + ph / 2.0
    );
    s.push_str("</svg>\n");
    s
}
