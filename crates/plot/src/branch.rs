//! A branch of steady states: the temperature against the continuation parameter (the
//! S-curve of an exothermic tank), stable parts solid, unstable parts dashed in another
//! colour, turning points marked.

use crate::axis::{clean_label, Axis};
use crate::PlotError;
use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// Size of a branch plot in pixels (width, height).
pub const BRANCH_SIZE: (u32, u32) = (960, 540);
/// Colour of the stable parts of a branch (solid).
pub const STABLE_COLOR: RGBColor = RGBColor(0x1f, 0x77, 0xb4);
/// Colour of the unstable parts of a branch (dashed).
pub const UNSTABLE_COLOR: RGBColor = RGBColor(0xd6, 0x27, 0x28);
/// Colour of the turning-point markers.
pub const TURNING_COLOR: RGBColor = RGBColor(0x22, 0x22, 0x22);

/// What a branch plot shows.
#[derive(Debug, Clone)]
pub struct BranchPlot<'a> {
    /// Caption above the plot.
    pub title: &'a str,
    /// Title of the horizontal axis with its unit, e.g. `residence time [s]`.
    pub parameter_label: &'a str,
    /// The parameter of each point, in order along the branch.
    pub parameters: &'a [f64],
    /// The temperature of each point (K).
    pub temperatures_k: &'a [f64],
    /// Whether each point is stable.
    pub stable: &'a [bool],
    /// Turning points: (parameter, temperature in K).
    pub turning_points: &'a [(f64, f64)],
    /// Logarithmic parameter axis (the residence time).
    pub log_parameter: bool,
}

/// The branch as a standalone SVG document ([`BRANCH_SIZE`]): temperature (K) against the
/// parameter, stable parts solid in [`STABLE_COLOR`], unstable parts dashed in
/// [`UNSTABLE_COLOR`], turning points as open circles, and a legend.
///
/// Errors: [`PlotError::Empty`] (no point), [`PlotError::LengthMismatch`] (the three
/// per-point slices differ in length), [`PlotError::NonFinite`] (a NaN or infinite value, or
/// a parameter that is not positive on the logarithmic axis), [`PlotError::Draw`].
pub fn branch_svg(plot: &BranchPlot) -> Result<String, PlotError> {
    let n = plot.parameters.len();
    if n == 0 {
        return Err(PlotError::Empty("the branch has no point".into()));
    }
    for (label, len) in [
        ("temperature", plot.temperatures_k.len()),
        ("stable", plot.stable.len()),
    ] {
        if len != n {
            return Err(PlotError::LengthMismatch {
                series: label.into(),
                values: len,
                times: n,
            });
        }
    }
    let check = |what: &'static str, values: &mut dyn Iterator<Item = f64>| {
        for (index, value) in values.enumerate() {
            if !value.is_finite() || (what == "parameter" && plot.log_parameter && value <= 0.0) {
                return Err(PlotError::NonFinite {
                    what,
                    series: "branch".into(),
                    index,
                    value,
                });
            }
        }
        Ok(())
    };
    check(
        "parameter",
        &mut plot
            .parameters
            .iter()
            .chain(plot.turning_points.iter().map(|p| &p.0))
            .copied(),
    )?;
    check(
        "temperature",
        &mut plot
            .temperatures_k
            .iter()
            .chain(plot.turning_points.iter().map(|p| &p.1))
            .copied(),
    )?;
    let (plo, phi) = min_max(plot.parameters);
    let (tlo, thi) = min_max(plot.temperatures_k);
    let x = if plot.log_parameter {
        Axis::log(plo, phi, 0.02)
    } else {
        Axis::linear(plo, phi, 0.02)
    };
    let y = Axis::linear(tlo, thi, 0.05);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, BRANCH_SIZE).into_drawing_area();
        draw(&root, plot, &x, &y).map_err(PlotError::draw)?;
        root.present().map_err(PlotError::draw)?;
    }
    Ok(svg)
}

fn min_max(values: &[f64]) -> (f64, f64) {
    values
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        })
}

type DrawResult = Result<(), DrawingAreaErrorKind<std::io::Error>>;

fn draw(
    root: &DrawingArea<SVGBackend, Shift>,
    plot: &BranchPlot,
    x: &Axis,
    y: &Axis,
) -> DrawResult {
    root.fill(&WHITE)?;
    let x_label = if x.log {
        format!("{} (log scale)", clean_label(plot.parameter_label, 60))
    } else {
        clean_label(plot.parameter_label, 60)
    };
    let x_fmt = |v: &f64| x.label(*v);
    let y_fmt = |v: &f64| y.label(*v);
    let mut chart = ChartBuilder::on(root)
        .caption(clean_label(plot.title, 90), ("sans-serif", 18))
        .margin(12)
        .x_label_area_size(56)
        .y_label_area_size(76)
        .build_cartesian_2d(x.clone(), y.clone())?;
    chart
        .configure_mesh()
        .bold_line_style(RGBColor(0xe4, 0xe4, 0xe4))
        .light_line_style(TRANSPARENT)
        .x_desc(x_label)
        .y_desc("temperature [K]")
        .x_label_formatter(&x_fmt)
        .y_label_formatter(&y_fmt)
        .label_style(("sans-serif", 13))
        .axis_desc_style(("sans-serif", 15))
        .draw()?;
    let point = |i: usize| {
        (
            x.to_chart(plot.parameters[i]).unwrap_or(f64::NAN),
            plot.temperatures_k[i],
        )
    };
    // Runs of equal stability; a segment between points of different stability is drawn
    // as unstable.
    let mut start = 0;
    while start + 1 < plot.parameters.len() {
        let stable = plot.stable[start] && plot.stable[start + 1];
        let mut end = start + 1;
        while end + 1 < plot.parameters.len()
            && (plot.stable[end] && plot.stable[end + 1]) == stable
        {
            end += 1;
        }
        let run: Vec<(f64, f64)> = (start..=end).map(point).collect();
        if stable {
            chart.draw_series(std::iter::once(PathElement::new(
                run,
                STABLE_COLOR.stroke_width(2),
            )))?;
        } else {
            chart.draw_series(std::iter::once(DashedPathElement::new(
                run,
                8,
                5,
                UNSTABLE_COLOR.stroke_width(2),
            )))?;
        }
        start = end;
    }
    if plot.parameters.len() == 1 {
        let color = if plot.stable[0] {
            STABLE_COLOR
        } else {
            UNSTABLE_COLOR
        };
        chart.draw_series(std::iter::once(Circle::new(point(0), 3, color.filled())))?;
    }
    chart.draw_series(plot.turning_points.iter().map(|&(p, t)| {
        Circle::new(
            (x.to_chart(p).unwrap_or(f64::NAN), t),
            6,
            TURNING_COLOR.stroke_width(2),
        )
    }))?;
    // Legend, top left inside the plot.
    let font = ("sans-serif", 13).into_font();
    let left = TextStyle::from(font).pos(Pos::new(HPos::Left, VPos::Center));
    let (x0, y0) = (100, 52);
    root.draw(&PathElement::new(
        vec![(x0, y0), (x0 + 24, y0)],
        STABLE_COLOR.stroke_width(3),
    ))?;
    root.draw(&Text::new("stable", (x0 + 30, y0), left.clone()))?;
    root.draw(&DashedPathElement::new(
        vec![(x0, y0 + 20), (x0 + 24, y0 + 20)],
        8,
        5,
        UNSTABLE_COLOR.stroke_width(3),
    ))?;
    root.draw(&Text::new("unstable", (x0 + 30, y0 + 20), left.clone()))?;
    root.draw(&Circle::new(
        (x0 + 12, y0 + 40),
        6,
        TURNING_COLOR.stroke_width(2),
    ))?;
    root.draw(&Text::new("turning point", (x0 + 30, y0 + 40), left))?;
    Ok(())
}
