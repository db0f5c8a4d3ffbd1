//! A flux graph drawn as SVG, in-process: species on a circle, straight arrows whose width
//! grows with the flux, each labelled with its carrying steps.

use crate::dot::step_label;
use crate::FluxGraph;
use std::fmt::Write;
use stoik_mechanism::Mechanism;

/// `text` with the five XML special characters escaped.
fn xml(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
        .replace('\'', "&apos;")
}

/// Drawing size in pixels (width = height).
const SIZE: f64 = 720.0;
/// Half-width and half-height of a node box, px.
const BOX: (f64, f64) = (34.0, 14.0);

/// `graph` drawn as a standalone SVG document: the species of the kept edges evenly on a
/// circle (mechanism order), each edge a straight arrow from giver to receiver of width 1
/// to 9 px by relative flux, labelled at its middle with its relative flux and carrying
/// steps (`R<n>`, 1-based step numbers); hovering an edge shows its steps' equations and
/// flux (`<title>`). `mechanism` must be the graph's.
pub fn to_svg(graph: &FluxGraph, mechanism: &Mechanism) -> String {
    let name = |i: usize| {
        mechanism
            .species
            .get(i)
            .map_or_else(|| format!("#{i}"), |s| s.name.clone())
    };
    let n = graph.nodes.len().max(1) as f64;
    let centre = SIZE / 2.0;
    let radius = SIZE / 2.0 - 70.0;
    let position = |species: usize| -> (f64, f64) {
        let k = graph.nodes.iter().position(|&s| s == species).unwrap_or(0) as f64;
        let angle = -std::f64::consts::FRAC_PI_2 + std::f64::consts::TAU * k / n;
        (
            centre + radius * angle.cos(),
            centre + 30.0 + radius * angle.sin(),
        )
    };
    let mut out = String::new();
    let _ = writeln!(
        out,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{SIZE}" height="{h}" viewBox="0 0 {SIZE} {h}" font-family="sans-serif" font-size="12">"#,
        h = SIZE + 60.0
    );
    let _ = writeln!(
        out,
        r##"<defs><marker id="arrow" viewBox="0 0 10 10" refX="9" refY="5" markerWidth="4" markerHeight="4" orient="auto-start-reverse"><path d="M0,0 L10,5 L0,10 z" fill="#335"/></marker></defs>"##
    );
    let _ = writeln!(out, r#"<rect width="100%" height="100%" fill="white"/>"#);
    let _ = writeln!(
        out,
        r#"<text x="{centre}" y="24" text-anchor="middle" font-size="15">{}</text>"#,
        xml(&format!(
            "Flux of {} atoms, {}; edges from {} of the largest ({:.3e})",
            graph.symbol,
            graph.span.describe(),
            graph.threshold,
            graph.largest
        ))
    );
    if graph.edges.is_empty() {
        let _ = writeln!(
            out,
            r#"<text x="{centre}" y="{centre}" text-anchor="middle">no flux of this element</text>"#
        );
    }
    for e in &graph.edges {
        let (x1, y1) = position(e.from);
        let (x2, y2) = position(e.to);
        let (dx, dy) = (x2 - x1, y2 - y1);
        let length = (dx * dx + dy * dy).sqrt().max(1e-9);
        let (ux, uy) = (dx / length, dy / length);
        // Leave the boxes: distance from a box centre to its edge along the direction.
        let clear = (BOX.0 / ux.abs().max(1e-9)).min(BOX.1 / uy.abs().max(1e-9)) + 3.0;
        let (sx, sy) = (x1 + ux * clear, y1 + uy * clear);
        let (ex, ey) = (x2 - ux * clear, y2 - uy * clear);
        let width = 1.0 + 8.0 * e.relative;
        let equations: Vec<String> = e
            .steps
            .iter()
            .map(|&(s, v)| {
                format!(
                    "R{} {}: {v:.3e}",
                    s + 1,
                    mechanism
                        .steps
                        .get(s)
                        .map_or("?", |st| st.equation.as_str())
                )
            })
            .collect();
        let _ = writeln!(
            out,
            r##"<g><title>{}</title><line x1="{sx:.1}" y1="{sy:.1}" x2="{ex:.1}" y2="{ey:.1}" stroke="#335" stroke-opacity="0.7" stroke-width="{width:.2}" marker-end="url(#arrow)"/>"##,
            xml(&format!(
                "{} -> {}: {:.4e} ({:.3} of the largest)\n{}",
                name(e.from),
                name(e.to),
                e.flux,
                e.relative,
                equations.join("\n")
            ))
        );
        // Label a little off the line's middle, on its left, so opposite edges do not meet.
        let (mx, my) = (0.5 * (sx + ex) - uy * 10.0, 0.5 * (sy + ey) + ux * 10.0);
        let _ = writeln!(
            out,
            r##"<text x="{mx:.1}" y="{my:.1}" text-anchor="middle" fill="#224">{}</text></g>"##,
            xml(&format!("{:.2} {}", e.relative, step_label(&e.steps, 3)))
        );
    }
    for &s in &graph.nodes {
        let (x, y) = position(s);
        let _ = writeln!(
            out,
            r##"<g><rect x="{:.1}" y="{:.1}" width="{}" height="{}" rx="4" fill="#eef" stroke="#335"/><text x="{x:.1}" y="{:.1}" text-anchor="middle">{}</text></g>"##,
            x - BOX.0,
            y - BOX.1,
            2.0 * BOX.0,
            2.0 * BOX.1,
            y + 4.0,
            xml(&name(s))
        );
    }
    out.push_str("</svg>\n");
    out
}
