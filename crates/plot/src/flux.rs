//! The element-flux graph drawn as SVG with plotters.
//!
//! Why plotters and not a graph-layout crate: plotters is already the workspace's drawing
//! library (the Arrhenius plot uses it), renders in-process with no external program, and
//! a flux graph of a kinetic mechanism is small (the species on kept edges, rarely more
//! than a few dozen), so a deterministic circle layout reads well and keeps the same
//! species in the same place from one span to the next; a layered layout from a further
//! dependency would move nodes whenever one edge crosses the threshold.

use crate::axis::clean_label;
use crate::PlotError;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use stoik_analysis::{step_label, FluxGraph};
use stoik_mechanism::Mechanism;

/// Size of a flux-graph drawing in pixels (width, height).
pub const FLUX_SIZE: (u32, u32) = (760, 820);
/// Colour of the edges and their arrow heads.
pub const EDGE_COLOR: RGBColor = RGBColor(0x33, 0x33, 0x55);
/// Colour of the edge labels.
const LABEL_COLOR: RGBColor = RGBColor(0x22, 0x22, 0x44);
/// Half-height of a node box, px.
const BOX_HALF_HEIGHT: f64 = 14.0;
/// Width of an edge, px: from 1 (at the threshold) to `1 + WIDTH_RANGE` (the largest).
const WIDTH_RANGE: f64 = 8.0;

/// Half-width of the box of a species name, px (about 7 px a character at 12 px).
fn half_width(name: &str) -> f64 {
    (3.6 * name.chars().count() as f64 + 10.0).max(30.0)
}

/// `graph` drawn as a standalone SVG document ([`FLUX_SIZE`]) with plotters: the species of
/// the kept edges evenly on a circle in mechanism order (boxes with their names), each edge
/// a straight arrow from giver to receiver whose width grows from 1 px to 9 px with its
/// relative flux, labelled at its middle (on its left, so opposite edges do not meet) with
/// its relative flux and its carrying steps (`R<n>`, 1-based step numbers; three at most,
/// then `+k more`). A title gives the element, the span, the threshold and the largest
/// flux. `mechanism` must be the graph's. A graph without edges draws its title and `no
/// flux of this element`.
///
/// Errors: [`PlotError::NonFinite`] when the graph's largest flux or an edge's relative
/// flux is not finite (nothing is drawn); [`PlotError::Draw`].
pub fn flux_graph_svg(graph: &FluxGraph, mechanism: &Mechanism) -> Result<String, PlotError> {
    if !graph.largest.is_finite() {
        return Err(PlotError::NonFinite {
            what: "largest flux",
            series: graph.symbol.clone(),
            index: 0,
            value: graph.largest,
        });
    }
    if let Some((index, e)) = graph
        .edges
        .iter()
        .enumerate()
        .find(|(_, e)| !e.relative.is_finite() || !e.flux.is_finite())
    {
        return Err(PlotError::NonFinite {
            what: "edge flux",
            series: graph.symbol.clone(),
            index,
            value: if e.flux.is_finite() {
                e.relative
            } else {
                e.flux
            },
        });
    }
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, FLUX_SIZE).into_drawing_area();
        draw(&root, graph, mechanism).map_err(PlotError::draw)?;
        root.present().map_err(PlotError::draw)?;
    }
    Ok(svg)
}

type DrawResult = Result<(), DrawingAreaErrorKind<std::io::Error>>;

fn draw(
    root: &DrawingArea<SVGBackend, Shift>,
    graph: &FluxGraph,
    mechanism: &Mechanism,
) -> DrawResult {
    root.fill(&WHITE)?;
    let name = |i: usize| {
        clean_label(
            &mechanism
                .species
                .get(i)
                .map_or_else(|| format!("#{i}"), |s| s.name.clone()),
            24,
        )
    };
    let (w, h) = (f64::from(FLUX_SIZE.0), f64::from(FLUX_SIZE.1));
    let centre = (w / 2.0, 60.0 + (h - 60.0) / 2.0);
    let radius = (w.min(h - 60.0)) / 2.0 - 80.0;
    let n = graph.nodes.len().max(1) as f64;
    let position = |species: usize| -> (f64, f64) {
        let k = graph.nodes.iter().position(|&s| s == species).unwrap_or(0) as f64;
        let angle = -std::f64::consts::FRAC_PI_2 + std::f64::consts::TAU * k / n;
        (
            centre.0 + radius * angle.cos(),
            centre.1 + radius * angle.sin(),
        )
    };
    let px = |(x, y): (f64, f64)| (x.round() as i32, y.round() as i32);
    let centred = |size: u32| {
        TextStyle::from(("sans-serif", size).into_font()).pos(Pos::new(HPos::Center, VPos::Center))
    };
    root.draw(&Text::new(
        clean_label(
            &format!("Flux of {} atoms, {}", graph.symbol, graph.span.describe()),
            90,
        ),
        (FLUX_SIZE.0 as i32 / 2, 20),
        centred(17),
    ))?;
    root.draw(&Text::new(
        format!(
            "edges from {} of the largest ({:.3e} mol of atoms{}); width by flux",
            graph.threshold,
            graph.largest,
            graph.span.rate_unit().trim_start_matches("mol")
        ),
        (FLUX_SIZE.0 as i32 / 2, 42),
        centred(13),
    ))?;
    if graph.edges.is_empty() {
        root.draw(&Text::new(
            "no flux of this element",
            px(centre),
            centred(14),
        ))?;
    }
    let edge_label = TextStyle::from(("sans-serif", 12).into_font())
        .pos(Pos::new(HPos::Center, VPos::Center))
        .color(&LABEL_COLOR);
    for e in &graph.edges {
        let (x1, y1) = position(e.from);
        let (x2, y2) = position(e.to);
        let (dx, dy) = (x2 - x1, y2 - y1);
        let length = (dx * dx + dy * dy).sqrt().max(1e-9);
        let (ux, uy) = (dx / length, dy / length);
        // Leave each box: distance from its centre to its edge along the direction.
        let clear =
            |half: f64| (half / ux.abs().max(1e-9)).min(BOX_HALF_HEIGHT / uy.abs().max(1e-9)) + 3.0;
        let (c1, c2) = (
            clear(half_width(&name(e.from))),
            clear(half_width(&name(e.to))),
        );
        let start = (x1 + ux * c1, y1 + uy * c1);
        let tip = (x2 - ux * c2, y2 - uy * c2);
        let width = 1.0 + WIDTH_RANGE * e.relative.clamp(0.0, 1.0);
        let head_length = 8.0 + 1.5 * width;
        let head_half = 4.0 + 0.8 * width;
        let base = (tip.0 - ux * head_length, tip.1 - uy * head_length);
        root.draw(&PathElement::new(
            vec![px(start), px(base)],
            EDGE_COLOR.mix(0.75).stroke_width(width.round() as u32),
        ))?;
        root.draw(&Polygon::new(
            vec![
                px(tip),
                px((base.0 - uy * head_half, base.1 + ux * head_half)),
                px((base.0 + uy * head_half, base.1 - ux * head_half)),
            ],
            EDGE_COLOR.filled(),
        ))?;
        // The label's box (about 6.5 px a character, 14 px high) beside the line, on its
        // left, far enough along the normal (-uy, ux) that the box does not cross the line.
        let label = format!("{:.2} {}", e.relative, step_label(&e.steps, 3));
        let half_text = (3.3 * label.chars().count() as f64, 7.0);
        let away = width / 2.0 + 4.0 + half_text.0 * uy.abs() + half_text.1 * ux.abs();
        let middle = (
            0.5 * (start.0 + tip.0) - uy * away,
            0.5 * (start.1 + tip.1) + ux * away,
        );
        root.draw(&Text::new(label, px(middle), edge_label.clone()))?;
    }
    for &s in &graph.nodes {
        let (x, y) = position(s);
        let label = name(s);
        let half = half_width(&label);
        root.draw(&Rectangle::new(
            [
                px((x - half, y - BOX_HALF_HEIGHT)),
                px((x + half, y + BOX_HALF_HEIGHT)),
            ],
            RGBColor(0xee, 0xee, 0xff).filled(),
        ))?;
        root.draw(&Rectangle::new(
            [
                px((x - half, y - BOX_HALF_HEIGHT)),
                px((x + half, y + BOX_HALF_HEIGHT)),
            ],
            EDGE_COLOR.stroke_width(1),
        ))?;
        root.draw(&Text::new(label, px((x, y)), centred(13)))?;
    }
    Ok(())
}
