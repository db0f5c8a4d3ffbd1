//! A plot of ln k against 1000 K/T, drawn by `plotters` into an SVG document.

use crate::text::file_name;
use crate::{RateFit, RateFitError};
use plotters::coord::Shift;
use plotters::prelude::*;

/// Size of the plot in pixels.
const SIZE: (u32, u32) = (720, 480);
/// Temperatures at which the fitted line and band are drawn.
const CURVE_POINTS: usize = 120;
/// Radius of a data marker in pixels.
const MARKER_RADIUS: i32 = 4;
/// Data markers.
const DATA_COLOR: RGBColor = RGBColor(0xde, 0x2d, 0x26);
/// The fitted line.
const FIT_COLOR: RGBColor = RGBColor(0x08, 0x51, 0x9c);
/// The confidence band (drawn half transparent).
const BAND_COLOR: RGBColor = RGBColor(0x9e, 0xca, 0xe1);
/// Error bars.
const ERROR_BAR_COLOR: RGBColor = RGBColor(0x25, 0x25, 0x25);

/// A plot of ln k against 1000 K/T as a standalone SVG document, drawn with `plotters`: the
/// data points (filled circles, with one-standard-uncertainty error bars when the data has
/// uncertainties), the fitted line, its confidence band at [`RateFit::confidence`], axes
/// with ticks and labels (x: 1000 K / T; y: ln of k in the data's unit) and a legend.
///
/// Errors: [`RateFitError::Plot`] when a value to plot is not finite or drawing fails.
pub fn svg_plot(fit: &RateFit) -> Result<String, RateFitError> {
    let series = Series::new(fit)?;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        draw(&root, fit, &series).map_err(|e| RateFitError::Plot(e.to_string()))?;
        root.present()
            .map_err(|e| RateFitError::Plot(e.to_string()))?;
    }
    Ok(svg)
}

/// One data point in plot coordinates: 1000 K/T, ln(k / data unit), standard uncertainty of
/// ln k.
struct DataPoint {
    x: f64,
    y: f64,
    uncertainty: Option<f64>,
}

/// What is drawn, in plot coordinates (x = 1000 K/T, y = ln(k / data unit)).
struct Series {
    points: Vec<DataPoint>,
    /// The fitted line, (x, y).
    line: Vec<(f64, f64)>,
    /// The band: upper edge left to right, then the lower edge back.
    band: Vec<(f64, f64)>,
    x_range: (f64, f64),
    y_range: (f64, f64),
}

impl Series {
    fn new(fit: &RateFit) -> Result<Self, RateFitError> {
        let ln_to_data = -fit.rate_constant_unit.to_si_factor().ln();
        let points: Vec<DataPoint> = fit
            .residuals
            .iter()
            .map(|r| DataPoint {
                x: 1000.0 / r.temperature_k,
                y: r.measured_si.ln() + ln_to_data,
                uncertainty: r.ln_uncertainty,
            })
            .collect();
        let curve = fit.ln_band(CURVE_POINTS);
        let line = curve
            .iter()
            .map(|&(t, ln_k, _)| (1000.0 / t, ln_k + ln_to_data))
            .collect();
        let upper = curve
            .iter()
            .map(|&(t, ln_k, half)| (1000.0 / t, ln_k + ln_to_data + half));
        let lower = curve
            .iter()
            .rev()
            .map(|&(t, ln_k, half)| (1000.0 / t, ln_k + ln_to_data - half));
        let band: Vec<(f64, f64)> = upper.chain(lower).collect();
        let finite = points.iter().all(|p| {
            p.x.is_finite() && p.y.is_finite() && p.uncertainty.into_iter().all(f64::is_finite)
        }) && band.iter().all(|(x, y)| x.is_finite() && y.is_finite());
        if !finite {
            return Err(RateFitError::Plot(
                "a data point or the fitted band is not finite in 1000 K/T and ln k".to_string(),
            ));
        }
        let (x_range, y_range) = ranges(&points, &band);
        Ok(Series {
            points,
            line,
            band,
            x_range,
            y_range,
        })
    }
}

/// The axis ranges: the data with error bars and the band, padded by 5% on each side.
fn ranges(points: &[DataPoint], band: &[(f64, f64)]) -> ((f64, f64), (f64, f64)) {
    let (mut x_lo, mut x_hi) = (f64::INFINITY, f64::NEG_INFINITY);
    let (mut y_lo, mut y_hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for p in points {
        let u = p.uncertainty.unwrap_or(0.0);
        x_lo = x_lo.min(p.x);
        x_hi = x_hi.max(p.x);
        y_lo = y_lo.min(p.y - u);
        y_hi = y_hi.max(p.y + u);
    }
    for &(_, y) in band {
        y_lo = y_lo.min(y);
        y_hi = y_hi.max(y);
    }
    let pad_x = 0.05 * (x_hi - x_lo).max(1e-6);
    let pad_y = 0.05 * (y_hi - y_lo).max(1e-6);
    ((x_lo - pad_x, x_hi + pad_x), (y_lo - pad_y, y_hi + pad_y))
}

type DrawResult = Result<(), DrawingAreaErrorKind<std::io::Error>>;

/// Draws the chart: title, axes, band, line, error bars, markers, legend.
fn draw(root: &DrawingArea<SVGBackend, Shift>, fit: &RateFit, series: &Series) -> DrawResult {
    root.fill(&WHITE)?;
    let title = format!(
        "{}: Ea = {:.2} kJ/mol ({}, {:.0}% band)",
        file_name(&fit.source),
        fit.activation_energy_j_per_mol() / 1e3,
        fit.model.short_name(),
        fit.confidence * 100.0
    );
    let (x_lo, x_hi) = series.x_range;
    let (y_lo, y_hi) = series.y_range;
    let mut chart = ChartBuilder::on(root)
        .caption(title, ("sans-serif", 18))
        .margin(16)
        .x_label_area_size(48)
        .y_label_area_size(64)
        .build_cartesian_2d(x_lo..x_hi, y_lo..y_hi)?;
    chart
        .configure_mesh()
        .disable_mesh()
        .x_desc("1000 K / T")
        .y_desc(format!("ln(k / ({}))", fit.rate_constant_unit.label()))
        .label_style(("sans-serif", 14))
        .axis_desc_style(("sans-serif", 16))
        .draw()?;
    let band_style = BAND_COLOR.mix(0.5).filled();
    chart
        .draw_series(std::iter::once(Polygon::new(
            series.band.clone(),
            band_style,
        )))?
        .label(format!("{:.0}% confidence band", fit.confidence * 100.0))
        .legend(move |(x, y)| Rectangle::new([(x, y - 5), (x + 16, y + 5)], band_style));
    chart
        .draw_series(LineSeries::new(
            series.line.iter().copied(),
            FIT_COLOR.stroke_width(2),
        ))?
        .label("fit")
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 16, y)], FIT_COLOR.stroke_width(2)));
    chart.draw_series(series.points.iter().filter_map(|p| {
        let u = p.uncertainty?;
        Some(ErrorBar::new_vertical(
            p.x,
            p.y - u,
            p.y,
            p.y + u,
            ERROR_BAR_COLOR.stroke_width(1),
            8,
        ))
    }))?;
    chart
        .draw_series(
            series
                .points
                .iter()
                .map(|p| Circle::new((p.x, p.y), MARKER_RADIUS, DATA_COLOR.filled())),
        )?
        .label("data")
        .legend(|(x, y)| Circle::new((x + 8, y), MARKER_RADIUS, DATA_COLOR.filled()));
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::UpperRight)
        .background_style(WHITE)
        .border_style(RGBColor(0x99, 0x99, 0x99))
        .draw()?;
    Ok(())
}
