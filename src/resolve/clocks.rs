//! The clock graph: every derived clock points at its source. Rates are exact
//! rationals (root frequency × multiplies ÷ divides); loops are `clock-cycle` findings.

use super::RClock;
use crate::declared;
use crate::finding::Finding;
use crate::model::quantity::Exact;
use crate::model::{Clock, ClockDef, Sp};
use num_traits::{CheckedDiv, CheckedMul};
use petgraph::algo::{tarjan_scc, toposort};
use petgraph::graph::{DiGraph, NodeIndex};

type Lookup<'a> = dyn Fn(&Sp<String>, &mut Vec<Finding>) -> Option<usize> + 'a;

/// Resolve sources, detect loops, and compute exact rates.
pub(super) fn resolve_clocks(
    defs: &[Clock],
    lookup: &Lookup<'_>,
    out: &mut Vec<Finding>,
) -> Vec<RClock> {
    let mut clocks: Vec<RClock> = defs
        .iter()
        .map(|c| RClock {
            def: c.clone(),
            parent: None,
            rate: None,
            root: None,
            in_cycle: false,
        })
        .collect();

    // Graph: edge source → derived.
    let mut graph: DiGraph<usize, ()> = DiGraph::with_capacity(defs.len(), defs.len());
    let nodes: Vec<NodeIndex> = (0..defs.len()).map(|i| graph.add_node(i)).collect();
    for (i, c) in defs.iter().enumerate() {
        if let ClockDef::Derived { source, .. }
        | ClockDef::Invalid {
            source: Some(source),
        } = &c.def
            && let Some(p) = lookup(source, out)
        {
            clocks[i].parent = Some(p);
            graph.add_edge(nodes[p], nodes[i], ());
        }
    }

    // Loops: strongly connected components with more than one clock, or a clock that
    // is its own source.
    for scc in tarjan_scc(&graph) {
        let members: Vec<usize> = scc.iter().map(|n| graph[*n]).collect();
        let is_loop = members.len() > 1 || clocks[members[0]].parent == Some(members[0]);
        if !is_loop {
            continue;
        }
        // List the loop in order: start at the member defined first and follow sources.
        let start = *members.iter().min().expect("non-empty component");
        let mut order = vec![start];
        let mut at = start;
        while let Some(p) = clocks[at].parent {
            if p == start || order.contains(&p) {
                break;
            }
            order.push(p);
            at = p;
        }
        for &m in &members {
            clocks[m].in_cycle = true;
        }
        let names: Vec<&str> = order.iter().map(|&i| defs[i].name.value.as_str()).collect();
        let mut chain = names.join(" → ");
        chain.push_str(&format!(" → {}", names[0]));
        let mut f = declared::CLOCK_CYCLE.finding(
source_span(&defs[start]), format!("`{}` takes its rate from `{}`", names[0], defs[order.get(1).copied().unwrap_or(start)].name.value),
            format!("clocks depend on each other in a loop: {chain}"),
        )
        .with_help("give one clock of the loop a `frequency` (a root oscillator) or point its `source` outside the loop");
        for w in order.iter().skip(1) {
            let src = clocks[*w]
                .parent
                .map(|p| defs[p].name.value.as_str())
                .unwrap_or("?");
            f = f.with_label(
                source_span(&defs[*w]),
                format!("`{}` takes its rate from `{src}`", defs[*w].name.value),
            );
        }
        out.push(f);
    }

    // Rates in topological order (the graph without loop members is a forest).
    let mut acyclic = graph.clone();
    acyclic.retain_nodes(|g, n| !clocks[g[n]].in_cycle);
    let order = toposort(&acyclic, None).unwrap_or_default();
    for n in order {
        let i = acyclic[n];
        let (rate, root) = match &defs[i].def {
            ClockDef::Root { frequency } => (Some(frequency.value), Some(i)),
            ClockDef::Derived {
                divide, multiply, ..
            } => match clocks[i].parent {
                Some(p) if !clocks[p].in_cycle => {
                    let m = Exact::from_integer(multiply.as_ref().map_or(1, |m| m.value) as i128);
                    let d = Exact::from_integer(divide.as_ref().map_or(1, |d| d.value) as i128);
                    let rate = clocks[p]
                        .rate
                        .and_then(|r| r.checked_mul(&m))
                        .and_then(|r| r.checked_div(&d));
                    if clocks[p].rate.is_some() && rate.is_none() {
                        out.push(declared::QUANTITY.finding(
defs[i].name.span, "rate out of range",
                            format!(
                                "the rate of clock `{}` cannot be represented exactly: its fraction outgrows 128 bits",
                                defs[i].name.value
                            ),
                        ));
                    }
                    (rate, clocks[p].root)
                }
                _ => (None, None),
            },
            ClockDef::Invalid { .. } => (None, None),
        };
        clocks[i].rate = rate;
        clocks[i].root = root;
    }
    clocks
}

fn source_span(c: &Clock) -> crate::source::Span {
    match &c.def {
        ClockDef::Derived { source, .. } => source.span,
        _ => c.name.span,
    }
}
