//! Shared blockers: the few packages whose state makes the most priority weight fail.

use super::matrix::{Matrix, Outcome};
use petgraph::Direction;
use petgraph::graph::{DiGraph, NodeIndex};
use petgraph::visit::Dfs;
use serde::Serialize;
use std::collections::BTreeMap;

/// One package that blocks priority entries on one image.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SharedBlocker {
    pub image: String,
    pub package: String,
    /// Reasons the failing cells give for it, deduplicated (one that says the same as another of
    /// a narrower range of its releases is folded into it), the one given by the most priority
    /// weight first (text shows only the first few).
    pub reasons: Vec<String>,
    /// Priority entries that fail through it, in priority order.
    pub blocks: Vec<String>,
    pub blocked_weight: f64,
    /// Share of the list's total weight; `None` (JSON `null`) when every weight is zero.
    pub blocked_share: Option<f64>,
}

/// Per image, the `top` packages that block the most priority weight.
///
/// For each image a graph is built from the failing cells: an edge from a failing entry to
/// each package its explanation names as a blocker. A blocker that is itself a failing entry
/// passes its own blockers on, so a low-level package is credited with everything that fails
/// through it, directly or not.
pub fn shared_blockers(m: &Matrix, top: usize) -> Vec<SharedBlocker> {
    let weight: BTreeMap<&str, (usize, f64)> = m
        .packages
        .iter()
        .map(|p| (p.name.as_str(), (p.rank, p.weight)))
        .collect();
    let total: f64 = m.packages.iter().map(|p| p.weight).sum();
    let mut out = Vec::new();
    for (col, image) in m.images.iter().enumerate() {
        let mut graph: DiGraph<&str, ()> = DiGraph::new();
        let mut nodes: BTreeMap<&str, NodeIndex> = BTreeMap::new();
        // Per blocker, the weight of the entries that give each reason.
        let mut reasons: BTreeMap<&str, BTreeMap<&str, f64>> = BTreeMap::new();
        for r in 0..m.packages.len() {
            let cell = &m.cells[r * m.images.len() + col];
            if cell.outcome != Outcome::Fails && cell.outcome != Outcome::Undecided {
                continue;
            }
            let from = *nodes
                .entry(&cell.package)
                .or_insert_with(|| graph.add_node(&cell.package));
            let cell_weight = weight.get(cell.package.as_str()).map_or(0.0, |w| w.1);
            for b in &cell.blockers {
                let to = *nodes
                    .entry(&b.package)
                    .or_insert_with(|| graph.add_node(&b.package));
                graph.update_edge(from, to, ());
                *reasons
                    .entry(&b.package)
                    .or_default()
                    .entry(b.reason.as_str())
                    .or_default() += cell_weight;
            }
        }
        let mut ranked: Vec<SharedBlocker> = Vec::new();
        for (&name, &idx) in &nodes {
            if graph
                .neighbors_directed(idx, Direction::Incoming)
                .next()
                .is_none()
            {
                continue;
            }
            // Everything that reaches this blocker fails through it.
            let reversed = petgraph::visit::Reversed(&graph);
            let mut dfs = Dfs::new(reversed, idx);
            let mut blocked: Vec<(usize, &str, f64)> = Vec::new();
            while let Some(n) = dfs.next(reversed) {
                if n == idx {
                    continue;
                }
                if let Some(&(rank, w)) = weight.get(graph[n]) {
                    blocked.push((rank, graph[n], w));
                }
            }
            if blocked.is_empty() {
                continue;
            }
            blocked.sort_by_key(|b| b.0);
            let blocked_weight: f64 = blocked.iter().map(|b| b.2).sum();
            // The difference is exact enough unless nearly all weight is blocked; then it can
            // round a small remainder away, and only then is the remainder summed itself
            // (summing it for every blocker made a plan of many blockers several times slower).
            let mut rest = total - blocked_weight;
            if rest <= total * 1e-9 {
                let blocked_names: std::collections::BTreeSet<&str> =
                    blocked.iter().map(|b| b.1).collect();
                rest = m
                    .packages
                    .iter()
                    .filter(|p| !blocked_names.contains(p.name.as_str()))
                    .map(|p| p.weight)
                    .sum();
            }
            ranked.push(SharedBlocker {
                image: image.id.clone(),
                package: name.to_string(),
                reasons: reasons
                    .get(name)
                    .map(|r| by_weight(&merge_wanted(name, &fold_narrower(name, r))))
                    .unwrap_or_default(),
                blocks: blocked.iter().map(|b| b.1.to_string()).collect(),
                blocked_weight,
                blocked_share: super::matrix::weight_share(blocked_weight, rest),
            });
        }
        ranked.sort_by(|a, b| {
            b.blocked_weight
                .total_cmp(&a.blocked_weight)
                .then(b.blocks.len().cmp(&a.blocks.len()))
                .then(a.package.cmp(&b.package))
        });
        ranked.truncate(top);
        out.extend(ranked);
    }
    out
}

/// Folds each reason into another that says the same of a wider range of the blocker's
/// releases, with its weight. Entries asking for different ranges of one package give it
/// reasons such as `core 2.0.0 to 2.2.1 needs a newer runtime` and `core 2.1.0 to 2.2.1 needs
/// a newer runtime`; the second says nothing the first does not. A range is a run of
/// consecutive releases (`solve::sets::describe`), so a run whose ends lie within another's
/// holds only releases of it. Reasons of other shapes are kept as they are.
fn fold_narrower<'a>(package: &str, reasons: &BTreeMap<&'a str, f64>) -> BTreeMap<&'a str, f64> {
    let parsed: Vec<(&'a str, f64, Option<Ranged<'a>>)> = reasons
        .iter()
        .map(|(r, w)| (*r, *w, Ranged::read(package, r)))
        .collect();
    let held_by = |k: usize, j: usize| {
        j != k
            && matches!((&parsed[j].2, &parsed[k].2), (Some(wide), Some(narrow)) if wide.holds(narrow))
    };
    // Containment is an order, so every reason held by another is held by a widest one (held
    // by none); equal ranges cannot occur, since equal texts were merged already.
    let widest: Vec<bool> = (0..parsed.len())
        .map(|k| !(0..parsed.len()).any(|j| held_by(k, j)))
        .collect();
    let mut out: BTreeMap<&'a str, f64> = BTreeMap::new();
    for (k, (text, weight, _)) in parsed.iter().enumerate() {
        // The first widest holder in text order, so the result does not depend on weights.
        let into = (0..parsed.len())
            .find(|&j| widest[j] && held_by(k, j))
            .map_or(*text, |j| parsed[j].0);
        *out.entry(into).or_default() += weight;
    }
    out
}

/// A reason of the shape `{package} {runs} {why}`, runs as `solve::sets::describe` writes
/// them (`1.2.0`, `1.0.0 to 1.4.2, 2.0.1`).
struct Ranged<'r> {
    runs: Vec<(semver::Version, semver::Version)>,
    why: &'r str,
}

impl<'r> Ranged<'r> {
    fn read(package: &str, reason: &'r str) -> Option<Ranged<'r>> {
        fn word<'s>(rest: &mut &'s str) -> Option<&'s str> {
            let (w, after) = rest.split_once(' ')?;
            *rest = after;
            Some(w)
        }
        // A version, and whether a comma after it says another run follows.
        fn version(w: &str) -> Option<(semver::Version, bool)> {
            let (w, more) = match w.strip_suffix(',') {
                Some(w) => (w, true),
                None => (w, false),
            };
            Some((semver::Version::parse(w).ok()?, more))
        }
        let mut rest = reason.strip_prefix(package)?.strip_prefix(' ')?;
        let mut runs = Vec::new();
        loop {
            let (low, mut more) = version(word(&mut rest)?)?;
            let mut high = low.clone();
            if !more && rest.starts_with("to ") {
                word(&mut rest);
                (high, more) = version(word(&mut rest)?)?;
            }
            runs.push((low, high));
            if !more {
                break;
            }
        }
        (!rest.is_empty()).then_some(Ranged { runs, why: rest })
    }

    /// Whether every run of `narrow` lies within a run of `self`, for the same cause.
    fn holds(&self, narrow: &Ranged<'_>) -> bool {
        self.why == narrow.why
            && narrow
                .runs
                .iter()
                .all(|(a, b)| self.runs.iter().any(|(lo, hi)| lo <= a && b <= hi))
    }
}

/// Merges reasons that differ only in the requirement the entries asked the blocker with,
/// `core (wanted ^1) needs a newer runtime` and `core (wanted ^1, <2) needs a newer runtime`,
/// into one naming each requirement once (`core (wanted ^1 or ^1, <2) needs ...`), with
/// their weights: side by side they read as two problems. Other reasons are kept as they are.
fn merge_wanted(package: &str, reasons: &BTreeMap<&str, f64>) -> BTreeMap<String, f64> {
    let head = format!("{package} (wanted ");
    // Per cause, the requirements and their summed weight; requirements hold no `) `.
    let mut wanted: BTreeMap<&str, (Vec<&str>, f64)> = BTreeMap::new();
    let mut out: BTreeMap<String, f64> = BTreeMap::new();
    for (&reason, &weight) in reasons {
        match reason
            .strip_prefix(head.as_str())
            .and_then(|rest| rest.split_once(") "))
        {
            Some((req, why)) => {
                let entry = wanted.entry(why).or_default();
                entry.0.push(req);
                entry.1 += weight;
            }
            None => *out.entry(reason.to_string()).or_default() += weight,
        }
    }
    for (why, (reqs, weight)) in wanted {
        *out.entry(format!("{head}{}) {why}", reqs.join(" or ")))
            .or_default() += weight;
    }
    out
}

/// Reasons with the most weight first; equal weights keep the text order, so output does not
/// depend on the order cells were read in.
fn by_weight(reasons: &BTreeMap<String, f64>) -> Vec<String> {
    let mut list: Vec<(&str, f64)> = reasons.iter().map(|(r, w)| (r.as_str(), *w)).collect();
    list.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(b.0)));
    list.into_iter().map(|(r, _)| r.to_string()).collect()
}

#[cfg(test)]
mod tests {
    use super::{fold_narrower, merge_wanted};
    use std::collections::BTreeMap;

    #[test]
    fn reasons_differing_only_in_the_requirement_merge() {
        let map: BTreeMap<&str, f64> = [
            ("core (wanted ^1) needs a newer runtime", 1.0),
            ("core (wanted ^1, <2) needs a newer runtime", 2.0),
            ("core (wanted ^3) needs an older runtime", 4.0),
            ("core 1.0.0 needs a newer runtime", 8.0),
        ]
        .into_iter()
        .collect();
        let merged: Vec<(String, f64)> = merge_wanted("core", &map).into_iter().collect();
        assert_eq!(
            merged,
            [
                (
                    "core (wanted ^1 or ^1, <2) needs a newer runtime".to_string(),
                    3.0
                ),
                ("core (wanted ^3) needs an older runtime".to_string(), 4.0),
                ("core 1.0.0 needs a newer runtime".to_string(), 8.0),
            ]
        );
    }

    fn folded(reasons: &[(&'static str, f64)]) -> Vec<(&'static str, f64)> {
        let map: BTreeMap<&str, f64> = reasons.iter().copied().collect();
        fold_narrower("core", &map).into_iter().collect()
    }

    #[test]
    fn a_reason_on_a_narrower_range_folds_into_the_wider_one() {
        let old = "core 2.0.0 to 2.2.1 needs a newer runtime";
        assert_eq!(
            folded(&[
                (old, 2.0),
                ("core 2.1.0 to 2.2.1 needs a newer runtime", 3.0)
            ]),
            [(old, 5.0)]
        );
        // A chain folds into its widest, and a single release into a run holding it.
        assert_eq!(
            folded(&[
                ("core 1.0.0 to 3.0.0 needs a newer runtime", 1.0),
                ("core 2.0.0 to 2.5.0 needs a newer runtime", 1.0),
                ("core 2.1.0 needs a newer runtime", 1.0),
                (
                    "core 2.0.0-beta.1, 2.1.0 to 2.2.0 needs a newer runtime",
                    1.0
                ),
            ]),
            [("core 1.0.0 to 3.0.0 needs a newer runtime", 4.0)]
        );
        // Several runs must each lie within one.
        assert_eq!(
            folded(&[
                (
                    "core 1.0.0 to 1.2.0, 2.0.0 to 2.3.0 needs a newer runtime",
                    1.0
                ),
                ("core 1.1.0, 2.2.0 to 2.3.0 needs a newer runtime", 1.0),
            ]),
            [(
                "core 1.0.0 to 1.2.0, 2.0.0 to 2.3.0 needs a newer runtime",
                2.0
            )]
        );
    }

    /// A narrower range that starts or ends at the same release as the wider one folds into
    /// it too (from a mutation review: only strictly wider low ends were tested).
    #[test]
    fn a_narrower_range_sharing_an_end_folds() {
        let wide = "core 2.0.0 to 2.2.1 needs a newer runtime";
        for narrow in [
            "core 2.0.0 to 2.1.0 needs a newer runtime",
            "core 2.1.0 to 2.2.1 needs a newer runtime",
            "core 2.0.0 needs a newer runtime",
            "core 2.2.1 needs a newer runtime",
        ] {
            assert_eq!(
                folded(&[(wide, 1.0), (narrow, 1.0)]),
                [(wide, 2.0)],
                "{narrow}"
            );
        }
    }

    #[test]
    fn reasons_that_differ_otherwise_are_kept() {
        let kept = [
            // Another cause.
            ("core 2.0.0 to 2.2.1 needs a newer runtime", 1.0),
            ("core 2.1.0 to 2.2.1 has no build for this platform", 1.0),
            // Overlapping, neither holding the other.
            ("core 1.0.0 to 2.1.0 needs an older runtime", 1.0),
            ("core 2.0.0 to 3.0.0 needs an older runtime", 1.0),
            // Shapes that are not runs of versions.
            ("core (wanted ^3.0) needs a newer runtime", 1.0),
            ("conflicting requirements on core", 1.0),
            (
                "core 1.0.0, 1.2.0, 1.4.0, and 2 more runs needs a newer runtime",
                1.0,
            ),
            ("core 1.2.0 needs a newer runtime", 1.0),
        ];
        let mut want = kept.to_vec();
        want.sort_by(|a, b| a.0.cmp(b.0));
        // The list ending in "and 2 more runs" does not read as runs, so it holds nothing:
        // `core 1.2.0` stays apart although its first runs name 1.2.0.
        assert_eq!(folded(&kept), want);
    }
}
