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
    /// Reasons the failing cells give for it, deduplicated, the one given by the most priority
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
                reasons: reasons.get(name).map(by_weight).unwrap_or_default(),
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

/// Reasons with the most weight first; equal weights keep the text order, so output does not
/// depend on the order cells were read in.
fn by_weight(reasons: &BTreeMap<&str, f64>) -> Vec<String> {
    let mut list: Vec<(&str, f64)> = reasons.iter().map(|(r, w)| (*r, *w)).collect();
    list.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(b.0)));
    list.into_iter().map(|(r, _)| r.to_string()).collect()
}
