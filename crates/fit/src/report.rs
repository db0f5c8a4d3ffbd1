//! The printed report of a fit, one function per section.

use crate::text::sci;
use crate::{Model, ParameterMatrix, RateFit, Scatter};
use std::fmt::Write as _;
use stoik_mechanism::GAS_CONSTANT;

/// Number of temperatures in the printed band table.
const BAND_ROWS: usize = 7;

/// The printed report: model, data summary, parameters with standard errors and intervals,
/// covariance and correlation matrices, the decorrelated form about T_ref, residuals, the
/// fitted k with its confidence band over the data's range, and warnings. Rate constants are
/// shown in the data's unit, Ea in kJ/mol, Ea/R in K, temperatures in K.
pub fn report_text(fit: &RateFit) -> String {
    let view = View::new(fit);
    let mut s = String::new();
    summary(&mut s, &view);
    let _ = writeln!(s);
    parameter_table(&mut s, &view);
    let _ = writeln!(s);
    matrices(&mut s, &view);
    let _ = writeln!(s);
    reference_form(&mut s, &view);
    let _ = writeln!(s);
    residual_table(&mut s, &view);
    let _ = writeln!(s);
    band_table(&mut s, &view);
    let _ = writeln!(s);
    warning_lines(&mut s, fit);
    s
}

/// The fit with the numbers every section shows.
struct View<'a> {
    fit: &'a RateFit,
    /// The data's rate-constant unit.
    unit: &'a str,
    /// Data unit per SI unit of k.
    to_data: f64,
    /// Confidence level in percent.
    conf: f64,
    /// Standard errors of the parameters.
    se: Vec<f64>,
}

impl<'a> View<'a> {
    fn new(fit: &'a RateFit) -> Self {
        View {
            fit,
            unit: fit.rate_constant_unit.label(),
            to_data: 1.0 / fit.rate_constant_unit.to_si_factor(),
            conf: fit.confidence * 100.0,
            se: fit.standard_errors(),
        }
    }

    /// The interval of parameter `index` (NaN past the last parameter).
    fn interval(&self, index: usize) -> (f64, f64) {
        self.fit.interval(index).unwrap_or((f64::NAN, f64::NAN))
    }
}

/// Model, data summary and where the scatter comes from.
fn summary(s: &mut String, v: &View) {
    let fit = v.fit;
    let (t_min, t_max) = fit.temperature_range_k;
    let conf = v.conf;
    let _ = writeln!(s, "Fit of ln k: {}", fit.model.describe());
    let _ = writeln!(
        s,
        "data: {}, {} points, {t_min:.2}-{t_max:.2} K, k in {} (reaction order {})",
        fit.source,
        fit.point_count(),
        v.unit,
        fit.order()
    );
    match fit.scatter {
        Scatter::FromResiduals {
            residual_standard_deviation,
        } => {
            let _ = writeln!(
                s,
                "scatter: from the residuals, s(ln k) = {residual_standard_deviation:.4}; {conf:.0}% intervals use Student t with {} degrees of freedom (t = {:.4})",
                fit.degrees_of_freedom, fit.quantile
            );
        }
        Scatter::FromUncertainties { .. } if fit.degrees_of_freedom == 0 => {
            let _ = writeln!(
                s,
                "scatter: the stated uncertainties, taken as known; as many points as parameters, so nothing is left to test them; {conf:.0}% intervals use the normal quantile z = {:.4}",
                fit.quantile
            );
        }
        Scatter::FromUncertainties {
            chi_square,
            p_value,
        } => {
            let _ = writeln!(
                s,
                "scatter: the stated uncertainties, taken as known (covariance not rescaled); chi-square {chi_square:.3} for {} degrees of freedom (probability of a larger one {p_value:.3}); {conf:.0}% intervals use the normal quantile z = {:.4}",
                fit.degrees_of_freedom, fit.quantile
            );
        }
    }
}

/// One row of the parameter table.
fn parameter_row(s: &mut String, name: &str, value: &str, error: &str, interval: &str) {
    let _ = writeln!(s, "{name:<28} {value:>14} {error:>12} {interval:>30}");
}

/// A, ln A, (n,) Ea and Ea/R with standard errors and intervals.
fn parameter_table(s: &mut String, v: &View) {
    let fit = v.fit;
    let ln_to_data = v.to_data.ln();
    parameter_row(
        s,
        "parameter",
        "value",
        "std. error",
        &format!("{:.0}% interval", v.conf),
    );
    let ln_a_data = fit.parameters[0] + ln_to_data;
    let (lo, hi) = v.interval(0);
    let factor = v.se[0].exp();
    parameter_row(
        s,
        &format!("A [{}]", unit_with_exponent(v.unit, fit.model)),
        &sci(ln_a_data.exp(), 6),
        &if factor < 1e4 {
            format!("x/ {factor:.4}")
        } else {
            format!("x/ {}", sci(factor, 3))
        },
        &format!(
            "[{}, {}]",
            sci((lo + ln_to_data).exp(), 4),
            sci((hi + ln_to_data).exp(), 4)
        ),
    );
    parameter_row(
        s,
        "ln A",
        &format!("{ln_a_data:.6}"),
        &format!("{:.6}", v.se[0]),
        &format!("[{:.6}, {:.6}]", lo + ln_to_data, hi + ln_to_data),
    );
    if fit.model == Model::ModifiedArrhenius {
        let (lo, hi) = v.interval(1);
        parameter_row(
            s,
            "n",
            &format!("{:.6}", fit.parameters[1]),
            &format!("{:.6}", v.se[1]),
            &format!("[{lo:.6}, {hi:.6}]"),
        );
    }
    let last = fit.parameters.len() - 1;
    let (lo, hi) = v.interval(last);
    let ea = fit.parameters[last];
    parameter_row(
        s,
        "Ea [kJ/mol]",
        &format!("{:.6}", ea / 1e3),
        &format!("{:.6}", v.se[last] / 1e3),
        &format!("[{:.6}, {:.6}]", lo / 1e3, hi / 1e3),
    );
    let r = GAS_CONSTANT;
    parameter_row(
        s,
        "Ea/R [K]",
        &format!("{:.3}", ea / r),
        &format!("{:.3}", v.se[last] / r),
        &format!("[{:.3}, {:.3}]", lo / r, hi / r),
    );
}

/// The rate-constant unit of A: the data's, per K^n for the modified form.
fn unit_with_exponent(unit: &str, model: Model) -> String {
    match model {
        Model::Arrhenius => unit.to_string(),
        Model::ModifiedArrhenius => format!("{unit} K-n"),
    }
}

/// Covariance and correlation of the parameters.
fn matrices(s: &mut String, v: &View) {
    let names = v.fit.model.parameter_names();
    let _ = writeln!(s, "covariance ({}; Ea in J/mol):", names.join(", "));
    write_matrix(s, names, v.fit.covariance(), |x| {
        format!("{:>14}", sci(x, 6))
    });
    let _ = writeln!(s, "correlation:");
    write_matrix(s, names, &v.fit.correlation(), correlation_cell);
}

/// The form about T_ref: k_ref with its interval, and the correlation of its parameters.
fn reference_form(s: &mut String, v: &View) {
    let r = &v.fit.reference;
    let _ = writeln!(
        s,
        "about T_ref = {:.2} K: k = k_ref (T/T_ref)^n exp(-(Ea/R)(1/T - 1/T_ref))",
        r.temperature_k
    );
    let r_se = r.standard_errors();
    let ln_k_ref = r.parameters[0] + v.to_data.ln();
    let half = v.fit.quantile * r_se[0];
    let _ = writeln!(
        s,
        "  k_ref = {} {} (ln k_ref std. error {:.6}, {:.0}% interval [{}, {}])",
        sci(ln_k_ref.exp(), 6),
        v.unit,
        r_se[0],
        v.conf,
        sci((ln_k_ref - half).exp(), 4),
        sci((ln_k_ref + half).exp(), 4),
    );
    let mut ref_names: Vec<&str> = v.fit.model.parameter_names().to_vec();
    ref_names[0] = "ln k_ref";
    let _ = writeln!(s, "  correlation:");
    write_matrix(s, &ref_names, &r.covariance.correlation(), correlation_cell);
}

/// A correlation coefficient, or `undefined` in words when a standard error is 0 (data
/// exactly on the fitted curve, unweighted: the correlation is then 0/0).
pub(crate) fn correlation_cell(x: f64) -> String {
    if x.is_finite() {
        format!("{x:>14.6}")
    } else {
        format!("{:>14}", "undefined")
    }
}

/// Each point: measured and fitted k, ln residual, leverage, studentized residual.
fn residual_table(s: &mut String, v: &View) {
    let _ = writeln!(s, "residuals (k in {}):", v.unit);
    let _ = writeln!(
        s,
        "{:>6} {:>10} {:>14} {:>14} {:>12} {:>10} {:>12}",
        "line", "T/K", "k measured", "k fitted", "ln residual", "leverage", "studentized"
    );
    for q in &v.fit.residuals {
        let _ = writeln!(
            s,
            "{:>6} {:>10.2} {:>14} {:>14} {:>12.6} {:>10.4} {:>12}",
            q.line,
            q.temperature_k,
            sci(q.measured_si * v.to_data, 6),
            sci(q.fitted_si * v.to_data, 6),
            q.ln_residual,
            q.leverage,
            if q.studentized.is_finite() {
                format!("{:.3}", q.studentized)
            } else {
                "-".to_string()
            }
        );
    }
}

/// The fitted k and its confidence band at [`BAND_ROWS`] temperatures.
fn band_table(s: &mut String, v: &View) {
    let _ = writeln!(
        s,
        "fitted k with its {:.0}% confidence band (k in {}):",
        v.conf, v.unit
    );
    let _ = writeln!(
        s,
        "{:>10} {:>14} {:>14} {:>14}",
        "T/K", "lower", "fitted", "upper"
    );
    for b in v.fit.band(BAND_ROWS) {
        let _ = writeln!(
            s,
            "{:>10.2} {:>14} {:>14} {:>14}",
            b.temperature_k,
            sci(b.lower_si * v.to_data, 6),
            sci(b.fitted_si * v.to_data, 6),
            sci(b.upper_si * v.to_data, 6)
        );
    }
}

/// One line per warning, or `no warnings`.
fn warning_lines(s: &mut String, fit: &RateFit) {
    if fit.warnings.is_empty() {
        let _ = writeln!(s, "no warnings");
    }
    for w in &fit.warnings {
        let _ = writeln!(s, "warning: {w}");
    }
}

/// A matrix with the parameter names along both sides.
fn write_matrix(s: &mut String, names: &[&str], m: &ParameterMatrix, cell: impl Fn(f64) -> String) {
    let _ = write!(s, "{:>10}", "");
    for name in names {
        let _ = write!(s, " {name:>14}");
    }
    let _ = writeln!(s);
    for (i, name) in names.iter().enumerate() {
        let _ = write!(s, "{name:>10}");
        for j in 0..names.len() {
            let _ = write!(s, " {}", cell(m.get(i, j).unwrap_or(f64::NAN)));
        }
        let _ = writeln!(s);
    }
}
