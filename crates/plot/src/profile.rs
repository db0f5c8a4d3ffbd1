//! Profiles against time: concentrations (or mole fractions) of chosen species, or the
//! temperature, as lines on linear or logarithmic axes.

use crate::axis::{clean_label, Axis, AxisScale};
use crate::{PlotError, PALETTE};
use plotters::coord::ranged1d::Ranged;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// Size of a profile plot in pixels (width, height).
pub const PROFILE_SIZE: (u32, u32) = (960, 480);
/// Width of the legend column at the right of a profile plot, px.
const LEGEND_WIDTH: u32 = 190;
/// On a logarithmic value axis, values below this fraction of the largest plotted value are
/// not drawn (1e-12: twelve decades), so that a species starting at round-off level does not
/// squash the rest of the plot.
pub const LOG_FLOOR: f64 = 1e-12;

/// Colour of the note on points left out.
const NOTE_COLOR: RGBColor = RGBColor(0x55, 0x55, 0x55);

/// One line of a profile plot.
#[derive(Debug, Clone, Copy)]
pub struct Series<'a> {
    /// Legend text (e.g. a species name).
    pub label: &'a str,
    /// One value per time, in the unit named by [`ProfilePlot::value_axis_label`].
    pub values: &'a [f64],
}

/// What a profile plot shows.
#[derive(Debug, Clone)]
pub struct ProfilePlot<'a> {
    /// Caption above the plot.
    pub title: &'a str,
    /// Times, s (the horizontal axis), increasing.
    pub times_s: &'a [f64],
    /// The lines, drawn in order with the colours of [`PALETTE`] (cycled after ten).
    pub series: Vec<Series<'a>>,
    /// Title of the vertical axis with its unit, e.g. `concentration [mol/m3]`.
    pub value_axis_label: &'a str,
    /// Scale of the time axis.
    pub time_scale: AxisScale,
    /// Scale of the value axis.
    pub value_scale: AxisScale,
}

/// A profile plot as a standalone SVG document ([`PROFILE_SIZE`]), drawn with plotters: one
/// line per series against time, a legend at the right, axis titles with units (time in s),
/// ticks at round numbers (decades on a logarithmic axis, see [`AxisScale::Auto`]).
///
/// Long series are thinned to at most four points per 1/1500 of the time axis (first,
/// lowest, highest, last), which looks the same at the plot's size; the legend lists the
/// first 20 series.
///
/// On a logarithmic axis, points that cannot be drawn (time or value not positive; a value
/// below [`LOG_FLOOR`] times the largest value) are left out and the line is broken there;
/// a note under the plot says how many points were left out.
///
/// Errors: [`PlotError::Empty`] (no series or no time), [`PlotError::LengthMismatch`],
/// [`PlotError::NonFinite`] (a NaN or infinite time or value: nothing is drawn),
/// [`PlotError::NoPositiveValue`] (a forced logarithmic axis with no positive value),
/// [`PlotError::Draw`].
pub fn profile_svg(plot: &ProfilePlot) -> Result<String, PlotError> {
    let prepared = Prepared::new(plot)?;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, PROFILE_SIZE).into_drawing_area();
        draw(&root, plot, &prepared).map_err(PlotError::draw)?;
        root.present().map_err(PlotError::draw)?;
    }
    Ok(svg)
}

/// The checked data in chart coordinates.
struct Prepared {
    x: Axis,
    y: Axis,
    /// Per series: runs of consecutive drawable points, (chart x, chart y).
    runs: Vec<Vec<Vec<(f64, f64)>>>,
    /// Points left out on a logarithmic axis.
    left_out: usize,
}

/// Smallest positive and largest value of `values` (`None`, -inf when none positive).
fn positive_range(values: impl Iterator<Item = f64>) -> (Option<f64>, f64) {
    values.fold((None, f64::NEG_INFINITY), |(lo, hi), v| {
        let lo = if v > 0.0 {
            Some(lo.map_or(v, |l: f64| l.min(v)))
        } else {
            lo
        };
        (lo, hi.max(v))
    })
}

impl Prepared {
    fn new(plot: &ProfilePlot) -> Result<Self, PlotError> {
        if plot.series.is_empty() {
            return Err(PlotError::Empty("no series".into()));
        }
        if plot.times_s.is_empty() {
            return Err(PlotError::Empty("no time".into()));
        }
        for (index, &value) in plot.times_s.iter().enumerate() {
            if !value.is_finite() {
                return Err(PlotError::NonFinite {
                    what: "time",
                    series: "time".into(),
                    index,
                    value,
                });
            }
        }
        for s in &plot.series {
            if s.values.len() != plot.times_s.len() {
                return Err(PlotError::LengthMismatch {
                    series: s.label.to_string(),
                    values: s.values.len(),
                    times: plot.times_s.len(),
                });
            }
            if let Some((index, &value)) = s.values.iter().enumerate().find(|(_, v)| !v.is_finite())
            {
                return Err(PlotError::NonFinite {
                    what: "value",
                    series: s.label.to_string(),
                    index,
                    value,
                });
            }
        }
        let (t_min_pos, t_max) = positive_range(plot.times_s.iter().copied());
        let x_log = plot.time_scale.is_log(t_min_pos, t_max);
        let t_min = plot.times_s.iter().copied().fold(f64::INFINITY, f64::min);
        let x = if x_log {
            let lo = t_min_pos.ok_or(PlotError::NoPositiveValue { axis: "time" })?;
            Axis::log(lo, t_max, 0.0)
        } else {
            Axis::linear(t_min, t_max, 0.0)
        };
        let all = || plot.series.iter().flat_map(|s| s.values.iter().copied());
        let (v_min_pos, v_max) = positive_range(all());
        let y_log = plot.value_scale.is_log(v_min_pos, v_max);
        let y = if y_log {
            let lo = v_min_pos.ok_or(PlotError::NoPositiveValue { axis: "value" })?;
            Axis::log(lo.max(v_max * LOG_FLOOR), v_max, 0.03)
        } else {
            let v_min = all().fold(f64::INFINITY, f64::min);
            Axis::linear(v_min, v_max, 0.05)
        };
        let floor = if y_log {
            v_max * LOG_FLOOR
        } else {
            f64::NEG_INFINITY
        };
        let mut left_out = 0;
        let mut runs = Vec::with_capacity(plot.series.len());
        for s in &plot.series {
            let mut series_runs: Vec<Vec<(f64, f64)>> = vec![Vec::new()];
            for (&t, &v) in plot.times_s.iter().zip(s.values) {
                let point = match (x.to_chart(t), y.to_chart(v)) {
                    (Some(cx), Some(cy)) if v >= floor => Some((cx, cy)),
                    _ => None,
                };
                match point {
                    Some(p) => series_runs.last_mut().map_or((), |r| r.push(p)),
                    None => {
                        left_out += 1;
                        if series_runs.last().is_some_and(|r| !r.is_empty()) {
                            series_runs.push(Vec::new());
                        }
                    }
                }
            }
            series_runs.retain(|r| !r.is_empty());
            runs.push(series_runs.into_iter().map(|r| thin(r, &x)).collect());
        }
        Ok(Prepared {
            x,
            y,
            runs,
            left_out,
        })
    }
}

/// Runs longer than this are thinned before drawing ([`thin`]).
const THIN_ABOVE: usize = 4 * THIN_BUCKETS;
/// Buckets across the time axis when thinning: about two per pixel column.
const THIN_BUCKETS: usize = 1500;

/// `run` (chart coordinates, x increasing) with at most four points per bucket of
/// 1/[`THIN_BUCKETS`] of the x axis: the first, lowest, highest and last point of the bucket,
/// in their order. Lines drawn through them look the same at the plot's resolution, and a
/// run of 100,000 output rows does not write 100,000 points into the page. Shorter runs are
/// returned as they are.
fn thin(run: Vec<(f64, f64)>, x: &Axis) -> Vec<(f64, f64)> {
    if run.len() <= THIN_ABOVE {
        return run;
    }
    let (lo, hi) = (x.range().start, x.range().end);
    let bucket = |cx: f64| (((cx - lo) / (hi - lo)) * THIN_BUCKETS as f64).floor() as i64;
    let mut out = Vec::with_capacity(4 * THIN_BUCKETS + 4);
    let mut start = 0;
    while start < run.len() {
        let b = bucket(run[start].0);
        let mut end = start + 1;
        while end < run.len() && bucket(run[end].0) == b {
            end += 1;
        }
        let part = &run[start..end];
        let low = (0..part.len()).fold(0, |m, k| if part[k].1 < part[m].1 { k } else { m });
        let high = (0..part.len()).fold(0, |m, k| if part[k].1 > part[m].1 { k } else { m });
        let mut keep = vec![0, low, high, part.len() - 1];
        keep.sort_unstable();
        keep.dedup();
        out.extend(keep.into_iter().map(|k| part[k]));
        start = end;
    }
    out
}

/// The colour of series `i`.
pub(crate) fn series_color(i: usize) -> RGBColor {
    PALETTE[i % PALETTE.len()]
}

type DrawResult = Result<(), DrawingAreaErrorKind<std::io::Error>>;

fn draw(root: &DrawingArea<SVGBackend, Shift>, plot: &ProfilePlot, p: &Prepared) -> DrawResult {
    root.fill(&WHITE)?;
    let (plot_area, legend) = root.split_horizontally(PROFILE_SIZE.0 - LEGEND_WIDTH);
    let x_label = if p.x.log {
        "time [s] (log scale)"
    } else {
        "time [s]"
    };
    let y_label = if p.y.log {
        format!("{} (log scale)", clean_label(plot.value_axis_label, 60))
    } else {
        clean_label(plot.value_axis_label, 60)
    };
    let x_fmt = |v: &f64| p.x.label(*v);
    let y_fmt = |v: &f64| p.y.label(*v);
    let mut chart = ChartBuilder::on(&plot_area)
        .caption(clean_label(plot.title, 90), ("sans-serif", 18))
        .margin(12)
        .x_label_area_size(56)
        .y_label_area_size(76)
        .build_cartesian_2d(p.x.clone(), p.y.clone())?;
    chart
        .configure_mesh()
        .bold_line_style(RGBColor(0xe4, 0xe4, 0xe4))
        .light_line_style(TRANSPARENT)
        .x_desc(x_label)
        .y_desc(y_label)
        .x_label_formatter(&x_fmt)
        .y_label_formatter(&y_fmt)
        .label_style(("sans-serif", 13))
        .axis_desc_style(("sans-serif", 15))
        .draw()?;
    for (i, runs) in p.runs.iter().enumerate() {
        let style = series_color(i).stroke_width(2);
        chart.draw_series(
            runs.iter()
                .map(move |run| PathElement::new(run.clone(), style)),
        )?;
        // An isolated point is a dot, so that it is seen.
        chart.draw_series(
            runs.iter()
                .filter(|run| run.len() == 1)
                .map(move |run| Circle::new(run[0], 3, series_color(i).filled())),
        )?;
    }
    // The legend: a line sample and the label per series, in a column of its own.
    let font = ("sans-serif", 13).into_font();
    let left = TextStyle::from(font).pos(Pos::new(HPos::Left, VPos::Center));
    for (i, s) in plot.series.iter().enumerate() {
        let y = 52 + 20 * i as i32;
        if y > PROFILE_SIZE.1 as i32 - 20 {
            break;
        }
        legend.draw(&PathElement::new(
            vec![(6, y), (30, y)],
            series_color(i).stroke_width(3),
        ))?;
        legend.draw(&Text::new(clean_label(s.label, 22), (36, y), left.clone()))?;
    }
    if p.left_out > 0 {
        // Said on the plot itself, so the gaps are not read as missing data.
        let small = TextStyle::from(("sans-serif", 13).into_font())
            .pos(Pos::new(HPos::Left, VPos::Center))
            .color(&NOTE_COLOR);
        let lines = [
            format!("{} point(s) not drawn on", p.left_out),
            "the log axis: not positive,".to_string(),
            format!("or below {LOG_FLOOR:e} of the largest"),
        ];
        for (k, line) in lines.into_iter().enumerate() {
            let y = PROFILE_SIZE.1 as i32 - 66 + 17 * k as i32;
            legend.draw(&Text::new(line, (6, y), small.clone()))?;
        }
    }
    Ok(())
}
