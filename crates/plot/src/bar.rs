//! Horizontal bar charts of signed values with labels: rates-of-production contributions,
//! local sensitivities, any ranked list of signed numbers.

use crate::axis::{clean_label, Axis};
use crate::PlotError;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// Colour of a bar of a positive value.
pub const POSITIVE_COLOR: RGBColor = RGBColor(0x1f, 0x77, 0xb4);
/// Colour of a bar of a negative value.
pub const NEGATIVE_COLOR: RGBColor = RGBColor(0xd6, 0x27, 0x28);
/// Width of a bar chart, px.
pub const BAR_CHART_WIDTH: u32 = 960;
/// Height of one bar's row, px.
const ROW_HEIGHT: u32 = 26;
/// Labels longer than this many characters are cut (an ellipsis marks the cut); give the
/// full text beside the chart (the report's tables do).
pub const MAX_LABEL_CHARS: usize = 48;

/// A horizontal bar chart as a standalone SVG document, drawn with plotters: one bar per
/// `(label, value)` pair, top to bottom in the order given, from zero to the value
/// ([`POSITIVE_COLOR`] to the right, [`NEGATIVE_COLOR`] to the left), each labelled with
/// its text at the left and its value (4 significant digits) at the bar's end; the value
/// axis starts or ends at zero, has ticks at round numbers and the title
/// `value_axis_label` (give the unit, e.g. `contribution [mol/(m3 s)]` or
/// `normalized sensitivity [-]`). The height grows with the number of bars.
///
/// Errors: [`PlotError::Empty`] (no bar), [`PlotError::NonFinite`] (a NaN or infinite
/// value, named by its label: nothing is drawn), [`PlotError::Draw`].
pub fn bar_chart_svg(
    title: &str,
    value_axis_label: &str,
    bars: &[(String, f64)],
) -> Result<String, PlotError> {
    if bars.is_empty() {
        return Err(PlotError::Empty("no bar".into()));
    }
    if let Some((index, (label, value))) = bars.iter().enumerate().find(|(_, b)| !b.1.is_finite()) {
        return Err(PlotError::NonFinite {
            what: "bar value",
            series: label.clone(),
            index,
            value: *value,
        });
    }
    let lo = bars.iter().fold(0.0f64, |m, b| m.min(b.1));
    let hi = bars.iter().fold(0.0f64, |m, b| m.max(b.1));
    // Room for the value texts beyond the bars' ends.
    let span = if hi > lo { hi - lo } else { 1.0 };
    let x = Axis::linear(
        if lo < 0.0 { lo - 0.22 * span } else { 0.0 },
        if hi > 0.0 || lo == 0.0 {
            hi + 0.22 * span
        } else {
            0.0
        },
        0.0,
    );
    let labels: Vec<String> = bars
        .iter()
        .map(|(l, _)| clean_label(l, MAX_LABEL_CHARS))
        .collect();
    let longest = labels.iter().map(|l| l.chars().count()).max().unwrap_or(1);
    let label_width = (longest as u32 * 7 + 16).clamp(60, 380);
    let height = 110 + ROW_HEIGHT * bars.len() as u32;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (BAR_CHART_WIDTH, height)).into_drawing_area();
        draw(
            &root,
            title,
            value_axis_label,
            bars,
            &labels,
            x,
            label_width,
        )
        .map_err(PlotError::draw)?;
        root.present().map_err(PlotError::draw)?;
    }
    Ok(svg)
}

type DrawResult = Result<(), DrawingAreaErrorKind<std::io::Error>>;

fn draw(
    root: &DrawingArea<SVGBackend, Shift>,
    title: &str,
    value_axis_label: &str,
    bars: &[(String, f64)],
    labels: &[String],
    x: Axis,
    label_width: u32,
) -> DrawResult {
    root.fill(&WHITE)?;
    let n = bars.len();
    // Bar i is centred at n - i - 0.5, so the first bar is at the top.
    let centre = |i: usize| n as f64 - i as f64 - 0.5;
    let mut y = Axis::linear(0.0, n as f64, 0.0);
    y.ticks = (0..n).map(centre).collect();
    let x_fmt = |v: &f64| x.label(*v);
    let y_fmt = |v: &f64| {
        let i = (n as f64 - 0.5 - v).round();
        if i >= 0.0 && (i as usize) < n {
            labels[i as usize].clone()
        } else {
            String::new()
        }
    };
    let mut chart = ChartBuilder::on(root)
        .caption(clean_label(title, 100), ("sans-serif", 17))
        .margin(12)
        .x_label_area_size(50)
        .y_label_area_size(label_width)
        .build_cartesian_2d(x.clone(), y)?;
    chart
        .configure_mesh()
        .disable_y_mesh()
        .bold_line_style(RGBColor(0xe4, 0xe4, 0xe4))
        .light_line_style(TRANSPARENT)
        .x_desc(clean_label(value_axis_label, 80))
        .x_label_formatter(&x_fmt)
        .y_label_formatter(&y_fmt)
        .label_style(("sans-serif", 13))
        .axis_desc_style(("sans-serif", 14))
        .draw()?;
    chart.draw_series(bars.iter().enumerate().map(|(i, &(_, v))| {
        let color = if v < 0.0 {
            NEGATIVE_COLOR
        } else {
            POSITIVE_COLOR
        };
        Rectangle::new(
            [(0.0, centre(i) - 0.35), (v, centre(i) + 0.35)],
            color.filled(),
        )
    }))?;
    // The zero line.
    chart.draw_series(std::iter::once(PathElement::new(
        vec![(0.0, 0.0), (0.0, n as f64)],
        BLACK.stroke_width(1),
    )))?;
    let font = ("sans-serif", 12).into_font();
    chart.draw_series(bars.iter().enumerate().map(|(i, &(_, v))| {
        let anchor = if v < 0.0 { HPos::Right } else { HPos::Left };
        let style = TextStyle::from(font.clone()).pos(Pos::new(anchor, VPos::Center));
        let offset = if v < 0.0 { -4 } else { 4 };
        EmptyElement::at((v, centre(i))) + Text::new(format!("{v:.3e}"), (offset, 0), style)
    }))?;
    Ok(())
}
