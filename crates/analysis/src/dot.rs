//! A flux graph as Graphviz DOT text (the `digraph` language), written by hand.

use crate::FluxGraph;
use std::fmt::Write;
use stoik_mechanism::Mechanism;

/// `text` as a DOT double-quoted string: `"` and `\` escaped, line breaks as `\n`.
pub(crate) fn quoted(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 2);
    out.push('"');
    for ch in text.chars() {
        match ch {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

/// Step labels of an edge: `R<n>` (1-based step numbers as in the mechanism file order)
/// of its carrying steps, at most `most`, `+k more` after them.
pub fn step_label(steps: &[(usize, f64)], most: usize) -> String {
    let mut names: Vec<String> = steps
        .iter()
        .take(most)
        .map(|(s, _)| format!("R{}", s + 1))
        .collect();
    if steps.len() > most {
        names.push(format!("+{} more", steps.len() - most));
    }
    names.join(", ")
}

/// `graph` as a DOT `digraph`: one node per species on a kept edge (named by the species
/// name), one edge per kept edge with `penwidth` from 1 to 8 by relative flux, a label with
/// the relative flux and the carrying steps (`R<n>`, 1-based step numbers), and
/// `flux` / `relative` attributes in shortest round-trip form (mol of atoms/(m3 s) at an
/// instant, mol of atoms/m3 over a window). `mechanism` must be the graph's.
pub fn to_dot(graph: &FluxGraph, mechanism: &Mechanism) -> String {
    let name = |i: usize| {
        mechanism
            .species
            .get(i)
            .map_or_else(|| format!("#{i}"), |s| s.name.clone())
    };
    let mut out = String::new();
    let title = format!(
        "flux of {} atoms, {} (largest {:e} {}; edges from {} of it)",
        graph.symbol,
        graph.span.describe(),
        graph.largest,
        match graph.span {
            crate::Span::Instant(_) => "mol/(m3 s)",
            crate::Span::Window { .. } => "mol/m3",
        },
        graph.threshold
    );
    let _ = writeln!(
        out,
        "digraph {} {{",
        quoted(&format!("{}_flux", graph.symbol))
    );
    let _ = writeln!(out, "  label={};", quoted(&title));
    let _ = writeln!(out, "  labelloc=t;");
    let _ = writeln!(out, "  node [shape=box];");
    for &n in &graph.nodes {
        let _ = writeln!(out, "  {};", quoted(&name(n)));
    }
    for e in &graph.edges {
        let _ = writeln!(
            out,
            "  {} -> {} [penwidth={:.3}, label={}, flux={}, relative={}];",
            quoted(&name(e.from)),
            quoted(&name(e.to)),
            1.0 + 7.0 * e.relative,
            quoted(&format!("{:.3} {}", e.relative, step_label(&e.steps, 4))),
            quoted(&format!("{:e}", e.flux)),
            quoted(&format!("{:e}", e.relative)),
        );
    }
    out.push_str("}\n");
    out
}
