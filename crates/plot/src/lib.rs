//! stoik's plots and report page, drawn in-process (no external program, no network).
//!
//! Plots are standalone SVG documents drawn by `plotters` (SVG backend; text widths
//! estimated, no font file read). Every function checks its numbers first: a NaN or an
//! infinity is refused with [`PlotError::NonFinite`] naming the series and position, never
//! drawn.
//! - [`profile_svg`]: concentrations (or mole fractions) of chosen species, or the
//!   temperature, against time; linear or logarithmic axes ([`AxisScale`], chosen from the
//!   data's decades by default), legend, axis titles with units. On a logarithmic axis,
//!   points that are not positive (or below [`LOG_FLOOR`] of the largest) are left out,
//!   the line broken there, and the plot says so.
//! - [`largest_series`]: the indices of the largest few series by peak value (the default
//!   choice of species).
//! - [`bar_chart_svg`]: a horizontal bar chart of signed values with labels: each step's
//!   contribution to a species' production, or local sensitivities.
//! - [`branch_svg`]: a branch of steady states of a stirred tank, temperature against the
//!   continuation parameter, unstable parts dashed, turning points marked.
//! - [`flux_graph_svg`]: the element-flux graph of `stoik_analysis` (species on a circle,
//!   arrows whose width grows with the flux, labels with the carrying steps).
//! - [`HtmlReport`] and [`Table`]: one self-contained HTML page (inline CSS and SVG, no
//!   script), every text escaped ([`escape`]).

#![warn(missing_docs)]

mod axis;
mod bar;
mod branch;
mod error;
mod flux;
mod html;
mod profile;

pub use axis::{AxisScale, AUTO_LOG_DECADES};
pub use bar::{bar_chart_svg, BAR_CHART_WIDTH, MAX_LABEL_CHARS, NEGATIVE_COLOR, POSITIVE_COLOR};
pub use branch::{
    branch_svg, BranchPlot, BRANCH_SIZE, STABLE_COLOR, TURNING_COLOR, UNSTABLE_COLOR,
};
pub use error::PlotError;
pub use flux::{flux_graph_svg, EDGE_COLOR, FLUX_SIZE};
pub use html::{escape, HtmlReport, Table};
pub use plotters::style::RGBColor;
pub use profile::{profile_svg, ProfilePlot, Series, LOG_FLOOR, PROFILE_SIZE};

/// Line colours of profile plots, in order (the ten-colour qualitative palette of
/// matplotlib's `tab10`, distinguishable by most readers).
pub const PALETTE: [RGBColor; 10] = [
    RGBColor(0x1f, 0x77, 0xb4),
    RGBColor(0xff, 0x7f, 0x0e),
    RGBColor(0x2c, 0xa0, 0x2c),
    RGBColor(0xd6, 0x27, 0x28),
    RGBColor(0x94, 0x67, 0xbd),
    RGBColor(0x8c, 0x56, 0x4b),
    RGBColor(0xe3, 0x77, 0xc2),
    RGBColor(0x7f, 0x7f, 0x7f),
    RGBColor(0xbc, 0xbd, 0x22),
    RGBColor(0x17, 0xbe, 0xcf),
];

/// The indices of the `count` series with the largest peak values (largest first; ties in
/// order), from `peaks` (one peak per series, any unit; NaN sorts last).
pub fn largest_series(peaks: &[f64], count: usize) -> Vec<usize> {
    let mut order: Vec<usize> = (0..peaks.len()).collect();
    order.sort_by(|&a, &b| {
        let key = |v: f64| if v.is_nan() { f64::NEG_INFINITY } else { v };
        key(peaks[b]).total_cmp(&key(peaks[a]))
    });
    order.truncate(count);
    order
}

/// `color` as `#RRGGBB` (upper-case hex), the form plotters writes into SVG attributes.
pub fn color_hex(color: RGBColor) -> String {
    format!("#{:02X}{:02X}{:02X}", color.0, color.1, color.2)
}
