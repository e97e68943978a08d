//! Greedy weighted set cover, and the system-package advice built on the same greedy idea.
//!
//! An image lacks system packages that some priority packages need. Adding every missing
//! package makes the image large; adding none leaves important packages uninstallable.
//! [`advise`] orders the additions so each one unblocks as much priority weight as it can,
//! and lists the gain and running total of each step. Gains need not fall from step to step:
//! a package that helps only beside another unblocks nothing until both are in.
//!
//! [`greedy_set_cover`] is the classic algorithm the advice generalises: when every blocked
//! package misses exactly one system package, choosing system packages is a covering problem
//! and [`advise`] makes the greedy choices of maximum coverage.

use std::collections::{BTreeMap, BTreeSet};
use std::ops::Range;

/// A candidate set of a set-cover instance: what choosing it costs and which elements (by
/// index) it covers.
#[derive(Debug, Clone, PartialEq)]
pub struct CoverSet {
    pub cost: f64,
    pub elements: Vec<usize>,
}

/// The outcome of [`greedy_set_cover`].
#[derive(Debug, Clone, PartialEq)]
pub struct CoverResult {
    /// Indices of the chosen sets, in the order the greedy chose them.
    pub chosen: Vec<usize>,
    /// Total cost of the chosen sets.
    pub cost: f64,
    /// Elements of `0..element_count` that no usable set contains, as ascending ranges; kept
    /// as ranges so a huge, mostly empty universe costs no memory.
    pub uncoverable: Vec<Range<usize>>,
    /// Sets whose cost is not a finite number of at least 0; never chosen, since the cost
    /// ratio of such a set means nothing.
    pub unusable_sets: Vec<usize>,
    /// Element indices of `element_count` or more found in some set (ascending, each once);
    /// they lie outside the universe and are ignored.
    pub out_of_range: Vec<usize>,
}

impl CoverResult {
    /// How many elements of the universe cannot be covered.
    pub fn uncoverable_count(&self) -> usize {
        self.uncoverable.iter().map(|r| r.len()).sum()
    }
}

/// Chvátal's greedy for weighted set cover (1979): repeatedly choose the set with the least
/// cost per element it newly covers, until every coverable element is covered.
///
/// Ties go to the lowest set index. Elements no usable set contains are reported in
/// [`CoverResult::uncoverable`] rather than waited for. The greedy's cost is at most H(d)
/// times the optimum, with d the size of the largest set and H(d) = 1 + 1/2 + ... + 1/d
/// (Chvátal's bound); the tests check this against exhaustive search.
///
/// Each round scans every set, so the running time is O(rounds × total set size): meant for
/// the hundreds of sets of one image's advice, not for millions.
///
/// ```
/// use basefit::plan::cover::{greedy_set_cover, CoverSet};
/// let sets = [
///     CoverSet { cost: 1.0, elements: vec![0, 1] },
///     CoverSet { cost: 1.0, elements: vec![1, 2, 3] },
///     CoverSet { cost: 5.0, elements: vec![0, 1, 2, 3] },
/// ];
/// let result = greedy_set_cover(5, &sets);
/// assert_eq!(result.chosen, [1, 0]); // 1/3 per element first, then 1/1 for element 0
/// assert_eq!(result.cost, 2.0);
/// assert_eq!(result.uncoverable, [4..5]);
/// ```
pub fn greedy_set_cover(element_count: usize, sets: &[CoverSet]) -> CoverResult {
    let mut unusable_sets = Vec::new();
    let mut out_of_range = BTreeSet::new();
    let mut universe = Vec::new();
    for (i, set) in sets.iter().enumerate() {
        let usable = set.cost.is_finite() && set.cost >= 0.0;
        if !usable {
            unusable_sets.push(i);
        }
        for &e in &set.elements {
            if e >= element_count {
                out_of_range.insert(e);
            } else if usable {
                universe.push(e);
            }
        }
    }
    universe.sort_unstable();
    universe.dedup();
    // Dense indices into `universe`, so bookkeeping is sized by the input, not by
    // `element_count`.
    let members: Vec<Vec<usize>> = sets
        .iter()
        .map(|set| {
            if !(set.cost.is_finite() && set.cost >= 0.0) {
                return Vec::new();
            }
            let mut ids: Vec<usize> = set
                .elements
                .iter()
                .filter_map(|e| universe.binary_search(e).ok())
                .collect();
            ids.sort_unstable();
            ids.dedup();
            ids
        })
        .collect();
    let mut covered = vec![false; universe.len()];
    let mut left = universe.len();
    let mut chosen = Vec::new();
    let mut cost = 0.0;
    while left > 0 {
        let mut best: Option<(usize, f64)> = None;
        for (i, ids) in members.iter().enumerate() {
            let new = ids.iter().filter(|&&e| !covered[e]).count();
            if new == 0 {
                continue;
            }
            let ratio = sets[i].cost / new as f64;
            // Strictly less keeps the lowest index on ties. Division is correctly rounded,
            // so two equal ratios of exact inputs compare equal.
            if best.is_none_or(|(_, r)| ratio < r) {
                best = Some((i, ratio));
            }
        }
        // Every element of `universe` is in some usable set, so a set with new elements
        // exists while any is left; the guard only keeps a logic error from looping.
        let Some((i, _)) = best else { break };
        for &e in &members[i] {
            if !covered[e] {
                covered[e] = true;
                left -= 1;
            }
        }
        chosen.push(i);
        cost += sets[i].cost;
    }
    CoverResult {
        chosen,
        cost,
        uncoverable: gaps(&universe, element_count),
        unusable_sets,
        out_of_range: out_of_range.into_iter().collect(),
    }
}

/// The ranges of `0..end` not in `present` (ascending, distinct, all below `end`).
fn gaps(present: &[usize], end: usize) -> Vec<Range<usize>> {
    let mut out = Vec::new();
    let mut next = 0;
    for &e in present {
        if e > next {
            out.push(next..e);
        }
        next = e + 1;
    }
    if next < end {
        out.push(next..end);
    }
    out
}

/// A package that cannot install on an image until the image gains system packages.
#[derive(Debug, Clone, PartialEq)]
pub struct Blocked {
    /// Its priority weight. A weight that is not a finite number of at least 0 counts as 0.
    pub weight: f64,
    /// The system packages it needs and the image lacks; all of them are needed.
    pub missing: BTreeSet<String>,
}

/// One step of the advice: the system packages to add and what adding them unblocks.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct AdviceStep {
    /// The packages added in this step, in name order.
    pub add: Vec<String>,
    /// The weight newly unblocked by this step (its marginal gain).
    pub gain: f64,
    /// Indices into the `blocked` slice of the items this step unblocks, ascending. Left out
    /// of serialized output, where an index into the caller's slice means nothing; callers
    /// name the items instead (as `syslibs` does).
    #[serde(skip)]
    pub unblocked: Vec<usize>,
    /// The weight unblocked by this and all earlier steps.
    pub cumulative: f64,
}

/// Orders system-package additions so that each unblocks the most priority weight.
///
/// An item is unblocked only once *all* of its missing packages are added. Each step:
///
/// 1. If some single package would unblock positive weight, add the one that unblocks the
///    most (ties: the first name).
/// 2. Otherwise (every remaining item lacks two or more packages, or only weightless items
///    are one package away), add one remaining item's whole missing bundle: the bundle with
///    the most weight unblocked per package added, counting every item the bundle completes
///    (ties: the smaller bundle, then the one whose sorted names come first).
///
/// Every step unblocks at least one item, so the advice ends after at most one step per item.
/// Items with nothing missing are not blocked and appear in no step.
///
/// When every item misses exactly one package, only rule 1 applies and this is the greedy
/// for weighted maximum coverage with the system packages as sets; with equal weights it
/// makes exactly the choices of [`greedy_set_cover`] with unit costs (a test checks this).
/// With several missing packages per item the problem is harder than set cover, and no bound
/// on the greedy's distance from the best order is claimed.
///
/// ```
/// use basefit::plan::cover::{advise, Blocked};
/// use std::collections::BTreeSet;
/// let needs = |names: &[&str]| names.iter().map(|s| s.to_string()).collect::<BTreeSet<_>>();
/// let blocked = [
///     Blocked { weight: 5.0, missing: needs(&["libssl", "libz"]) },
///     Blocked { weight: 3.0, missing: needs(&["libz"]) },
/// ];
/// let steps = advise(&blocked);
/// assert_eq!(steps[0].add, ["libz"]);   // unblocks item 1 (weight 3); item 0 still lacks libssl
/// assert_eq!(steps[1].add, ["libssl"]); // unblocks item 0
/// assert_eq!(steps[1].cumulative, 8.0);
/// ```
pub fn advise(blocked: &[Blocked]) -> Vec<AdviceStep> {
    let weight = |i: usize| {
        let w = blocked[i].weight;
        if w.is_finite() && w >= 0.0 { w } else { 0.0 }
    };
    let mut chosen: BTreeSet<&str> = BTreeSet::new();
    let mut remaining: Vec<usize> = (0..blocked.len())
        .filter(|&i| !blocked[i].missing.is_empty())
        .collect();
    let mut steps = Vec::new();
    let mut cumulative = 0.0;
    while !remaining.is_empty() {
        // What each remaining item still lacks, in name order (BTreeSet iteration order).
        let residual: Vec<(usize, Vec<&str>)> = remaining
            .iter()
            .map(|&i| {
                let lacks = blocked[i]
                    .missing
                    .iter()
                    .map(String::as_str)
                    .filter(|p| !chosen.contains(p))
                    .collect();
                (i, lacks)
            })
            .collect();
        let add = best_single(&residual, &weight)
            .map(|p| vec![p])
            .or_else(|| best_bundle(&residual, &weight))
            .unwrap_or_default();
        chosen.extend(add.iter().copied());
        let (done, rest): (Vec<usize>, Vec<usize>) = remaining.iter().copied().partition(|&i| {
            blocked[i]
                .missing
                .iter()
                .all(|p| chosen.contains(p.as_str()))
        });
        // A step that unblocks nothing would repeat forever; by construction it cannot
        // happen, and stopping keeps a logic error from hanging the caller.
        if done.is_empty() {
            break;
        }
        let gain: f64 = done.iter().map(|&i| weight(i)).sum();
        cumulative += gain;
        steps.push(AdviceStep {
            add: add.iter().map(|p| p.to_string()).collect(),
            gain,
            unblocked: done,
            cumulative,
        });
        remaining = rest;
    }
    steps
}

/// The package that alone completes the most positive weight; `None` when none does.
fn best_single<'a>(
    residual: &[(usize, Vec<&'a str>)],
    weight: &dyn Fn(usize) -> f64,
) -> Option<&'a str> {
    let mut gains: BTreeMap<&str, f64> = BTreeMap::new();
    for (i, lacks) in residual {
        if let [only] = lacks.as_slice() {
            *gains.entry(*only).or_insert(0.0) += weight(*i);
        }
    }
    let mut best: Option<(&str, f64)> = None;
    // Name order plus strict comparison gives ties (up to rounding) to the first name.
    for (p, g) in gains {
        if g > 0.0 && best.is_none_or(|(_, b)| g > b && !same_rate(g, b)) {
            best = Some((p, g));
        }
    }
    best.map(|(p, _)| p)
}

/// The remaining item's bundle with the most weight completed per package added.
fn best_bundle<'a>(
    residual: &[(usize, Vec<&'a str>)],
    weight: &dyn Fn(usize) -> f64,
) -> Option<Vec<&'a str>> {
    let bundles: BTreeSet<&Vec<&str>> = residual.iter().map(|(_, lacks)| lacks).collect();
    let mut best: Option<(&Vec<&str>, f64)> = None;
    // Bundles come in name order, and strict comparison gives ties to the first. A tie goes
    // to the smaller bundle before that: on weightless items every bundle ties at zero, and
    // the first name then took a bundle of two where one package completed an item.
    for bundle in bundles {
        if bundle.is_empty() {
            continue;
        }
        let gain: f64 = residual
            .iter()
            .filter(|(_, lacks)| lacks.iter().all(|p| bundle.binary_search(p).is_ok()))
            .map(|(i, _)| weight(*i))
            .sum();
        let per_package = gain / bundle.len() as f64;
        if best.is_none_or(|(b, rate)| {
            let tie = same_rate(per_package, rate);
            (!tie && per_package > rate) || (tie && bundle.len() < b.len())
        }) {
            best = Some((bundle, per_package));
        }
    }
    best.map(|(b, _)| b.clone())
}

/// Whether two rates of weight per package are the same but for rounding: sums of the same
/// weights taken in another order (0.1 + 0.2 against 0.3) differ in their last bits, and a
/// tie must not turn on that.
fn same_rate(a: f64, b: f64) -> bool {
    // Relative, so that weights of any scale order alike.
    (a - b).abs() <= 1e-9 * a.abs().max(b.abs())
}

#[cfg(test)]
mod tests {
    use super::*;

    // The project's own seeded generator, so the random instances are the same on every
    // machine.
    use crate::synth::SplitMix64 as Rng;

    fn harmonic(n: usize) -> f64 {
        (1..=n).map(|i| 1.0 / i as f64).sum()
    }

    /// The cheapest cover of every coverable element, by trying every subset of sets.
    fn exhaustive_optimum(element_count: usize, sets: &[CoverSet]) -> f64 {
        let coverable: BTreeSet<usize> = sets
            .iter()
            .flat_map(|s| s.elements.iter().copied())
            .filter(|&e| e < element_count)
            .collect();
        let mut best = f64::INFINITY;
        for mask in 0u32..(1 << sets.len()) {
            let mut got = BTreeSet::new();
            let mut cost = 0.0;
            for (i, s) in sets.iter().enumerate() {
                if mask & (1 << i) != 0 {
                    got.extend(s.elements.iter().copied());
                    cost += s.cost;
                }
            }
            if coverable.is_subset(&got) && cost < best {
                best = cost;
            }
        }
        best
    }

    #[test]
    fn greedy_within_harmonic_bound_of_exhaustive_optimum() {
        let mut rng = Rng::new(0x5EED_2024, 0, 0);
        let mut checked = 0;
        let mut suboptimal = 0;
        for _ in 0..300 {
            let element_count = 1 + rng.below(8) as usize;
            let set_count = 1 + rng.below(8) as usize;
            let sets: Vec<CoverSet> = (0..set_count)
                .map(|_| {
                    let elements = (0..element_count).filter(|_| rng.below(100) < 40).collect();
                    // Costs in quarters from 0.25 to 10, exact in binary.
                    let cost = (1 + rng.below(40)) as f64 / 4.0;
                    CoverSet { cost, elements }
                })
                .collect();
            let result = greedy_set_cover(element_count, &sets);
            let optimum = exhaustive_optimum(element_count, &sets);
            let largest = sets.iter().map(|s| s.elements.len()).max().unwrap_or(0);
            // Chvátal (1979), "A greedy heuristic for the set-covering problem", Mathematics
            // of Operations Research 4(3): the greedy costs at most H(d) times the optimum,
            // d the largest set size (citation from memory). Levin, "Approximating the
            // unweighted k-set cover problem: greedy meets local search", states the
            // unweighted case as well known.
            assert!(
                result.cost <= harmonic(largest) * optimum + 1e-9,
                "greedy {} > H({largest}) x {optimum} for {sets:?}",
                result.cost
            );
            // The chosen sets cover every coverable element, and the rest are reported.
            let mut got: BTreeSet<usize> = BTreeSet::new();
            for &i in &result.chosen {
                got.extend(sets[i].elements.iter().copied());
            }
            assert_eq!(got.len() + result.uncoverable_count(), element_count);
            checked += 1;
            if result.cost > optimum + 1e-9 {
                suboptimal += 1;
            }
        }
        assert!(checked >= 200);
        // The instances are hard enough that the greedy is sometimes beaten, so the bound
        // is exercised rather than trivially met.
        assert!(suboptimal > 0);
    }

    #[test]
    fn greedy_picks_the_big_set_first_on_the_two_rows_instance() {
        // From memory: the standard illustration (found in approximation-algorithm texts)
        // that greedy set cover is not optimal. Fourteen elements in two rows of seven; the
        // rows are the optimum (2 sets), but columns of 8, 4 and 2 elements each straddle
        // both rows, and the greedy, always taking the most new elements, takes the columns.
        let row_a: Vec<usize> = (0..7).collect();
        let row_b: Vec<usize> = (7..14).collect();
        let sets = [
            CoverSet {
                cost: 1.0,
                elements: row_a,
            },
            CoverSet {
                cost: 1.0,
                elements: row_b,
            },
            CoverSet {
                cost: 1.0,
                elements: vec![0, 1, 2, 3, 7, 8, 9, 10],
            },
            CoverSet {
                cost: 1.0,
                elements: vec![4, 5, 11, 12],
            },
            CoverSet {
                cost: 1.0,
                elements: vec![6, 13],
            },
        ];
        let result = greedy_set_cover(14, &sets);
        // By hand: 8 new beats 7; then 4 beats 3 and 3; then 2 beats 1 and 1.
        assert_eq!(result.chosen, [2, 3, 4]);
        assert_eq!(result.cost, 3.0);
        assert_eq!(exhaustive_optimum(14, &sets), 2.0);
        assert!(result.uncoverable.is_empty());
    }

    #[test]
    fn greedy_reaches_the_harmonic_bound_on_its_tight_instance() {
        // From memory: the standard tight instance for Chvátal's bound. Element i (1-based)
        // has a singleton set of cost 1/i, and one set of cost 1 + eps holds all n. At each
        // step the cheapest singleton left, 1/i, beats (1 + eps)/i, so the greedy pays
        // H(n) while the optimum pays 1 + eps.
        let n = 6;
        let eps = 0.01;
        let mut sets: Vec<CoverSet> = (1..=n)
            .map(|i| CoverSet {
                cost: 1.0 / i as f64,
                elements: vec![i - 1],
            })
            .collect();
        sets.push(CoverSet {
            cost: 1.0 + eps,
            elements: (0..n).collect(),
        });
        let result = greedy_set_cover(n, &sets);
        assert_eq!(result.chosen, [5, 4, 3, 2, 1, 0]);
        // H(6) = 49/20 by hand.
        assert!((result.cost - 49.0 / 20.0).abs() < 1e-12);
        assert_eq!(exhaustive_optimum(n, &sets), 1.0 + eps);
    }

    #[test]
    fn greedy_ties_go_to_the_lowest_index() {
        let sets = [
            CoverSet {
                cost: 2.0,
                elements: vec![0, 1],
            },
            CoverSet {
                cost: 1.0,
                elements: vec![0],
            },
            CoverSet {
                cost: 2.0,
                elements: vec![0, 1],
            },
        ];
        // Ratios 1, 1, 1: set 0 wins, and covers everything.
        assert_eq!(greedy_set_cover(2, &sets).chosen, [0]);
    }

    #[test]
    fn greedy_reports_what_it_cannot_use() {
        let sets = [
            CoverSet {
                cost: f64::NAN,
                elements: vec![0],
            },
            CoverSet {
                cost: -1.0,
                elements: vec![1],
            },
            CoverSet {
                cost: 1.0,
                elements: vec![2, 2, 9, 3],
            },
            CoverSet {
                cost: 0.0,
                elements: vec![],
            },
        ];
        let result = greedy_set_cover(6, &sets);
        assert_eq!(result.chosen, [2]);
        assert_eq!(result.unusable_sets, [0, 1]);
        assert_eq!(result.out_of_range, [9]);
        assert_eq!(result.uncoverable, [0..2, 4..6]);
        assert_eq!(result.uncoverable_count(), 4);
        // A universe far larger than memory costs nothing: only ranges are kept.
        let huge = greedy_set_cover(usize::MAX, &sets);
        // Element 9 is inside this universe, so set 2 covers it.
        assert_eq!(huge.uncoverable, [0..2, 4..9, 10..usize::MAX]);
        assert!(huge.out_of_range.is_empty());
        let empty = greedy_set_cover(0, &[]);
        assert!(empty.chosen.is_empty() && empty.uncoverable.is_empty());
    }

    fn needs(names: &[&str]) -> BTreeSet<String> {
        names.iter().map(|s| s.to_string()).collect()
    }

    fn adds(steps: &[AdviceStep]) -> Vec<Vec<&str>> {
        steps
            .iter()
            .map(|s| s.add.iter().map(String::as_str).collect())
            .collect()
    }

    #[test]
    fn advise_needs_every_missing_package() {
        let blocked = [
            Blocked {
                weight: 5.0,
                missing: needs(&["a", "b"]),
            },
            Blocked {
                weight: 3.0,
                missing: needs(&["a"]),
            },
            Blocked {
                weight: 1.0,
                missing: needs(&["b"]),
            },
        ];
        let steps = advise(&blocked);
        // By hand: alone, a completes item 1 (3) and b item 2 (1); item 0 needs both. After a,
        // b completes items 0 and 2 (6).
        assert_eq!(adds(&steps), [vec!["a"], vec!["b"]]);
        assert_eq!(steps[0].unblocked, [1]);
        assert_eq!(steps[0].gain, 3.0);
        assert_eq!(steps[1].unblocked, [0, 2]);
        assert_eq!(steps[1].gain, 6.0);
        assert_eq!(steps[1].cumulative, 9.0);
    }

    #[test]
    fn advise_falls_back_to_bundles() {
        let blocked = [
            Blocked {
                weight: 4.0,
                missing: needs(&["x", "y"]),
            },
            Blocked {
                weight: 3.0,
                missing: needs(&["p", "q", "r"]),
            },
            Blocked {
                weight: 1.0,
                missing: needs(&["x", "y", "z"]),
            },
        ];
        let steps = advise(&blocked);
        // By hand: no single package completes anything. Bundles: {x, y} completes item 0,
        // 4 / 2 = 2 per package; {x, y, z} completes items 0 and 2, 5 / 3; {p, q, r} 3 / 3.
        // Then z alone completes item 2 (1), and last {p, q, r} (3).
        assert_eq!(
            adds(&steps),
            [vec!["x", "y"], vec!["z"], vec!["p", "q", "r"]]
        );
        let gains: Vec<f64> = steps.iter().map(|s| s.gain).collect();
        assert_eq!(gains, [4.0, 1.0, 3.0]);
        assert_eq!(steps[2].cumulative, 8.0);
    }

    #[test]
    fn advise_ties_and_odd_weights() {
        let blocked = [
            Blocked {
                weight: 2.0,
                missing: needs(&["b"]),
            },
            Blocked {
                weight: 2.0,
                missing: needs(&["a"]),
            },
            Blocked {
                weight: 2.0,
                missing: needs(&["d", "e"]),
            },
            Blocked {
                weight: 2.0,
                missing: needs(&["c", "f"]),
            },
            Blocked {
                weight: 9.0,
                missing: needs(&[]),
            },
            Blocked {
                weight: f64::NAN,
                missing: needs(&["g"]),
            },
        ];
        let steps = advise(&blocked);
        // Single ties go to the first name; then bundle ties to the first sorted names;
        // the NaN-weighted item counts as 0, so it comes last, through the bundle rule; the
        // item missing nothing is in no step.
        assert_eq!(
            adds(&steps),
            [
                vec!["a"],
                vec!["b"],
                vec!["c", "f"],
                vec!["d", "e"],
                vec!["g"]
            ]
        );
        assert_eq!(steps[4].gain, 0.0);
        assert_eq!(steps[4].cumulative, 8.0);
        assert!(steps.iter().all(|s| !s.unblocked.contains(&4)));
        assert!(advise(&[]).is_empty());
    }

    /// On weightless items (a priority list whose weights are all zero) every bundle ties at
    /// zero per package; the smaller one goes first, so a package that completes an item on
    /// its own is one step (an end-to-end review saw `libssl-dev zlib1g-dev` added together
    /// where `zlib1g-dev` alone completed one item). With weights, a tie in weight per
    /// package goes to the smaller bundle as well.
    #[test]
    fn bundle_ties_go_to_the_smaller_bundle() {
        let zero = |missing: &[&str]| Blocked {
            weight: 0.0,
            missing: needs(missing),
        };
        let blocked = [
            zero(&["libssl-dev", "zlib1g-dev"]),
            zero(&["zlib1g-dev"]),
            zero(&["libxml2-dev"]),
        ];
        assert_eq!(
            adds(&advise(&blocked)),
            [vec!["libxml2-dev"], vec!["zlib1g-dev"], vec!["libssl-dev"]]
        );
        // Rates equal but for rounding tie too.
        let smaller = [
            Blocked {
                weight: 0.1,
                missing: needs(&["a", "b", "c"]),
            },
            Blocked {
                weight: 0.2,
                missing: needs(&["a", "b", "c"]),
            },
            Blocked {
                weight: 0.2,
                missing: needs(&["x", "y"]),
            },
        ];
        // {a, b, c}: (0.1 + 0.2) / 3, a hair above 0.1; {x, y}: 0.2 / 2 = 0.1. A tie but for
        // rounding, so the smaller bundle goes first.
        assert_eq!(
            adds(&advise(&smaller)),
            [vec!["x", "y"], vec!["a", "b", "c"]]
        );
        // With weights: after {a, b} (2 per package), {c, d, e} completes three items of
        // weight 1 and {f, g} one of weight 2, both 1 per package: the smaller bundle goes
        // first, though {c, d, e} comes first by name.
        let one = |missing: &[&str]| Blocked {
            weight: 1.0,
            missing: needs(missing),
        };
        let tie = [
            Blocked {
                weight: 4.0,
                missing: needs(&["a", "b"]),
            },
            one(&["c", "d", "e"]),
            one(&["c", "d", "e"]),
            one(&["c", "d", "e"]),
            Blocked {
                weight: 2.0,
                missing: needs(&["f", "g"]),
            },
        ];
        assert_eq!(
            adds(&advise(&tie)),
            [vec!["a", "b"], vec!["f", "g"], vec!["c", "d", "e"]]
        );
    }

    /// Ties up to rounding go to the first name for single packages too, and the order does
    /// not depend on the weights' scale: 0.1 + 0.2 behind package `b` against 0.3 behind `a`
    /// tie (the sum is 0.30000000000000004), and so do the same weights times 1e-12, which
    /// an absolute tolerance would have tied whatever they were (a review of the change).
    #[test]
    fn ties_up_to_rounding_and_at_any_scale_go_to_the_first_name() {
        for scale in [1.0, 1e-12, 1e12] {
            let blocked = [
                Blocked {
                    weight: 0.1 * scale,
                    missing: needs(&["b"]),
                },
                Blocked {
                    weight: 0.2 * scale,
                    missing: needs(&["b"]),
                },
                Blocked {
                    weight: 0.3 * scale,
                    missing: needs(&["a"]),
                },
            ];
            assert_eq!(adds(&advise(&blocked)), [vec!["a"], vec!["b"]], "{scale}");
            // Not a tie: 0.3 against 0.31, at every scale.
            let apart = [
                Blocked {
                    weight: 0.31 * scale,
                    missing: needs(&["b"]),
                },
                Blocked {
                    weight: 0.3 * scale,
                    missing: needs(&["a"]),
                },
            ];
            assert_eq!(adds(&advise(&apart)), [vec!["b"], vec!["a"]], "{scale}");
        }
    }

    #[test]
    fn advise_with_one_missing_package_each_is_greedy_set_cover() {
        let mut rng = Rng::new(0xC0FFEE, 0, 0);
        let names = ["a", "b", "c", "d", "e", "f"];
        for _ in 0..200 {
            let count = 1 + rng.below(12) as usize;
            let blocked: Vec<Blocked> = (0..count)
                .map(|_| Blocked {
                    weight: 1.0,
                    missing: needs(&[names[rng.below(names.len() as u64) as usize]]),
                })
                .collect();
            // One set per system package, in name order so the lowest index is the first
            // name, each covering the items that miss it.
            let sets: Vec<CoverSet> = names
                .iter()
                .map(|n| CoverSet {
                    cost: 1.0,
                    elements: (0..count)
                        .filter(|&i| blocked[i].missing.contains(*n))
                        .collect(),
                })
                .collect();
            let cover = greedy_set_cover(count, &sets);
            let from_cover: Vec<Vec<&str>> = cover.chosen.iter().map(|&i| vec![names[i]]).collect();
            assert_eq!(adds(&advise(&blocked)), from_cover);
        }
    }

    /// A bundle's gain counts only the items it completes, not items it merely shares a
    /// package with: counting partial overlaps (mutation review, c8) made {a, b} look worth
    /// 11 / 2 and put the weight-1 item's packages first. Common practice, no source: a
    /// greedy step is scored by what it finishes.
    #[test]
    fn a_bundle_gains_only_the_items_it_completes() {
        let blocked = [
            Blocked {
                weight: 1.0,
                missing: needs(&["a", "b"]),
            },
            Blocked {
                weight: 10.0,
                missing: needs(&["a", "c", "d"]),
            },
        ];
        let steps = advise(&blocked);
        // By hand: no single package completes anything. {a, b} completes item 0: 1 / 2;
        // {a, c, d} completes item 1: 10 / 3. Then b alone completes item 0.
        assert_eq!(adds(&steps), [vec!["a", "c", "d"], vec!["b"]]);
        let gains: Vec<f64> = steps.iter().map(|s| s.gain).collect();
        assert_eq!(gains, [10.0, 1.0]);
        assert_eq!(steps[0].unblocked, [1]);
        assert_eq!(steps[1].unblocked, [0]);
        assert_eq!(steps[1].cumulative, 11.0);
    }

    /// `advise`'s documented contract: a weight that is not a finite number of at least 0
    /// counts as 0. Only NaN was tested; a negative weight kept as is (mutation review, c11)
    /// gave a step a gain of -5 and a falling running total. The CLI never passes one (the
    /// priority reader leaves out negative weights), but `advise` and `Blocked` are public.
    #[test]
    fn a_negative_weight_counts_as_zero() {
        let blocked = [
            Blocked {
                weight: -5.0,
                missing: needs(&["a"]),
            },
            Blocked {
                weight: 1.0,
                missing: needs(&["b"]),
            },
        ];
        let steps = advise(&blocked);
        // b gains 1; a gains nothing, so it comes last, through the bundle rule.
        assert_eq!(adds(&steps), [vec!["b"], vec!["a"]]);
        assert_eq!(steps[0].gain, 1.0);
        assert_eq!(steps[1].gain, 0.0);
        assert_eq!(steps[1].cumulative, 1.0);
        // Every weight below zero or not finite reads the same.
        for w in [-0.5, f64::NEG_INFINITY, f64::INFINITY] {
            let odd = [Blocked {
                weight: w,
                missing: needs(&["a"]),
            }];
            let steps = advise(&odd);
            assert_eq!(adds(&steps), [vec!["a"]], "{w}");
            assert_eq!((steps[0].gain, steps[0].cumulative), (0.0, 0.0), "{w}");
        }
    }

    /// `out_of_range`'s doc: indices of `element_count` or more lie outside the universe.
    /// Mutation review: `e > element_count` let the index equal to the count in unnoticed.
    #[test]
    fn an_element_equal_to_the_count_is_out_of_range() {
        let sets = [CoverSet {
            cost: 1.0,
            elements: vec![0, 3],
        }];
        let result = greedy_set_cover(3, &sets);
        assert_eq!(result.out_of_range, [3]);
        assert_eq!(result.uncoverable.len(), 1);
        assert_eq!(result.uncoverable[0], 1..3);
        assert_eq!(result.chosen, [0]);
    }

    /// A set whose cost is not a finite number of at least 0 is never chosen, even when a
    /// usable set covers its elements. Mutation review: keeping its members let a cost of -1
    /// win every ratio and gave a cover of negative cost.
    #[test]
    fn an_unusable_set_is_never_chosen() {
        let sets = [
            CoverSet {
                cost: -1.0,
                elements: vec![0, 1],
            },
            CoverSet {
                cost: f64::NAN,
                elements: vec![0],
            },
            CoverSet {
                cost: 2.0,
                elements: vec![0, 1],
            },
        ];
        let result = greedy_set_cover(2, &sets);
        assert_eq!(result.chosen, [2]);
        assert_eq!(result.cost, 2.0);
        assert_eq!(result.unusable_sets, [0, 1]);
        assert!(result.uncoverable.is_empty());
    }
}
