//! A fit as text: the printed report, a mechanism-file snippet and an SVG plot.

use crate::data::RateData;
use crate::fit::{Model, RateFit, Scatter};
use crate::FitError;
use std::fmt::Write as _;
use stoik_mechanism::{parse_equation, EnergyUnit, GAS_CONSTANT};
use stoik_thermo::{toml_float, toml_string};

/// `value` in scientific notation with `decimals` decimals and a signed two-digit exponent,
/// e.g. `1.079063e+12`.
pub(crate) fn sci(value: f64, decimals: usize) -> String {
    let text = format!("{value:.decimals$e}");
    match text.split_once('e') {
        Some((mantissa, exponent)) => {
            let (sign, digits) = match exponent.strip_prefix('-') {
                Some(d) => ('-', d),
                None => ('+', exponent),
            };
            format!("{mantissa}e{sign}{digits:0>2}")
        }
        None => text,
    }
}

/// Number of temperatures in the printed band table.
const BAND_ROWS: usize = 7;

fn unit_with_exponent(data: &RateData, model: Model) -> String {
    match model {
        Model::Arrhenius => data.rate_constant_unit.label.clone(),
        Model::ModifiedArrhenius => format!("{} K-n", data.rate_constant_unit.label),
    }
}

/// The printed report: model, data summary, parameters with standard errors and intervals,
/// correlation matrix, the decorrelated form about T_ref, residuals, the fitted k with its
/// confidence band over the data's range, and warnings. Rate constants are shown in the
/// data's unit, Ea in kJ/mol.
pub fn report_text(fit: &RateFit, data: &RateData) -> String {
    let mut s = String::new();
    let unit = &data.rate_constant_unit;
    let to_data = 1.0 / unit.to_si_factor();
    let (t_min, t_max) = fit.temperature_range_k;
    let conf = fit.confidence * 100.0;
    let names = fit.model.parameter_names();
    let se = fit.standard_errors();
    let _ = writeln!(s, "Fit of ln k: {}", fit.model.describe());
    let _ = writeln!(
        s,
        "data: {}, {} points, {t_min:.2}-{t_max:.2} K, k in {} (reaction order {})",
        data.source,
        data.points.len(),
        unit.label,
        unit.order
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
    let _ = writeln!(s);
    let _ = writeln!(
        s,
        "{:<28} {:>14} {:>12} {:>30}",
        "parameter",
        "value",
        "std. error",
        format!("{conf:.0}% interval")
    );
    let ln_a_data = fit.parameters[0] + to_data.ln();
    let (lo, hi) = fit.interval(0);
    let _ = writeln!(
        s,
        "{:<28} {:>14} {:>12} {:>30}",
        format!("A [{}]", unit_with_exponent(data, fit.model)),
        sci(ln_a_data.exp(), 6),
        {
            let factor = se[0].exp();
            if factor < 1e4 {
                format!("x/ {factor:.4}")
            } else {
                format!("x/ {}", sci(factor, 3))
            }
        },
        format!(
            "[{}, {}]",
            sci((lo + to_data.ln()).exp(), 4),
            sci((hi + to_data.ln()).exp(), 4)
        )
    );
    let _ = writeln!(
        s,
        "{:<28} {:>14.6} {:>12.6} {:>30}",
        "ln A",
        ln_a_data,
        se[0],
        format!("[{:.6}, {:.6}]", lo + to_data.ln(), hi + to_data.ln())
    );
    if fit.model == Model::ModifiedArrhenius {
        let (lo, hi) = fit.interval(1);
        let _ = writeln!(
            s,
            "{:<28} {:>14.6} {:>12.6} {:>30}",
            "n",
            fit.parameters[1],
            se[1],
            format!("[{lo:.6}, {hi:.6}]")
        );
    }
    let last = fit.parameters.len() - 1;
    let (lo, hi) = fit.interval(last);
    let _ = writeln!(
        s,
        "{:<28} {:>14.6} {:>12.6} {:>30}",
        "Ea [kJ/mol]",
        fit.parameters[last] / 1e3,
        se[last] / 1e3,
        format!("[{:.6}, {:.6}]", lo / 1e3, hi / 1e3)
    );
    let _ = writeln!(
        s,
        "{:<28} {:>14.3} {:>12.3} {:>30}",
        "Ea/R [K]",
        fit.parameters[last] / GAS_CONSTANT,
        se[last] / GAS_CONSTANT,
        format!("[{:.3}, {:.3}]", lo / GAS_CONSTANT, hi / GAS_CONSTANT)
    );

    let _ = writeln!(s);
    let _ = writeln!(s, "covariance ({}; Ea in J/mol):", names.join(", "));
    write_matrix(&mut s, names, &fit.covariance, |v| {
        format!("{:>14}", sci(v, 6))
    });
    let _ = writeln!(s, "correlation:");
    write_matrix(&mut s, names, &fit.correlation(), |v| format!("{v:>14.6}"));

    let r = &fit.reference;
    let _ = writeln!(s);
    let _ = writeln!(
        s,
        "about T_ref = {:.2} K: k = k_ref (T/T_ref)^n exp(-(Ea/R)(1/T - 1/T_ref))",
        r.temperature_k
    );
    let r_se = r.covariance.diagonal().map(|v| v.max(0.0).sqrt());
    let _ = writeln!(
        s,
        "  k_ref = {} {} (ln k_ref std. error {:.6}, {conf:.0}% interval [{}, {}])",
        sci((r.parameters[0] + to_data.ln()).exp(), 6),
        unit.label,
        r_se[0],
        sci(
            (r.parameters[0] + to_data.ln() - fit.quantile * r_se[0]).exp(),
            4
        ),
        sci(
            (r.parameters[0] + to_data.ln() + fit.quantile * r_se[0]).exp(),
            4
        ),
    );
    let mut ref_names: Vec<&str> = names.to_vec();
    ref_names[0] = "ln k_ref";
    let _ = writeln!(s, "  correlation:");
    write_matrix(
        &mut s,
        &ref_names,
        &crate::fit::correlation(&r.covariance),
        |v| format!("{v:>14.6}"),
    );

    let _ = writeln!(s);
    let _ = writeln!(s, "residuals (k in {}):", unit.label);
    let _ = writeln!(
        s,
        "{:>6} {:>10} {:>14} {:>14} {:>12} {:>10} {:>12}",
        "line", "T/K", "k measured", "k fitted", "ln residual", "leverage", "studentized"
    );
    for q in &fit.residuals {
        let _ = writeln!(
            s,
            "{:>6} {:>10.2} {:>14} {:>14} {:>12.6} {:>10.4} {:>12}",
            q.line,
            q.temperature_k,
            sci(q.measured_si * to_data, 6),
            sci(q.fitted_si * to_data, 6),
            q.ln_residual,
            q.leverage,
            if q.studentized.is_finite() {
                format!("{:.3}", q.studentized)
            } else {
                "-".to_string()
            }
        );
    }

    let _ = writeln!(s);
    let _ = writeln!(
        s,
        "fitted k with its {conf:.0}% confidence band (k in {}):",
        unit.label
    );
    let _ = writeln!(
        s,
        "{:>10} {:>14} {:>14} {:>14}",
        "T/K", "lower", "fitted", "upper"
    );
    for b in fit.band(BAND_ROWS) {
        let _ = writeln!(
            s,
            "{:>10.2} {:>14} {:>14} {:>14}",
            b.temperature_k,
            sci(b.lower_si * to_data, 6),
            sci(b.fitted_si * to_data, 6),
            sci(b.upper_si * to_data, 6)
        );
    }
    let _ = writeln!(s);
    if fit.warnings.is_empty() {
        let _ = writeln!(s, "no warnings");
    } else {
        for w in &fit.warnings {
            let _ = writeln!(s, "warning: {w}");
        }
    }
    s
}

fn write_matrix(
    s: &mut String,
    names: &[&str],
    m: &nalgebra::DMatrix<f64>,
    cell: impl Fn(f64) -> String,
) {
    let _ = write!(s, "{:>10}", "");
    for name in names {
        let _ = write!(s, " {name:>14}");
    }
    let _ = writeln!(s);
    for (i, name) in names.iter().enumerate() {
        let _ = write!(s, "{name:>10}");
        for j in 0..names.len() {
            let _ = write!(s, " {}", cell(m[(i, j)]));
        }
        let _ = writeln!(s);
    }
}

/// `value` in the snippet's number form ([`toml_float`]: the shortest digits that read back
/// as the same `f64`); [`FitError::NonFinite`] for NaN and infinities.
fn number(quantity: &str, value: f64) -> Result<String, FitError> {
    toml_float(value).ok_or_else(|| FitError::NonFinite {
        quantity: quantity.to_string(),
        value,
    })
}

/// The fitted step as a `[[step]]` table of the mechanism format, ready to paste.
///
/// The prefactor, temperature exponent and activation energy are written with the shortest
/// digits that read back as exactly the computed `f64` values ([`toml_float`]); strings and the
/// `reaction_orders` key are quoted by the `toml` crate's serializer. The comments and the
/// standard errors in the note are short forms for people.
///
/// The rate constant keeps the data's amount and time units (`dm`/`L` volumes are written in
/// cm, which mechanism files accept), Ea is in kJ/mol, and the note names the data file, its
/// temperature range and the standard errors. `equation` is the step's equation (one way,
/// `->`); without it a placeholder `R1 + R2 -> P` with as many reactants as the order is
/// written and marked for editing. When the equation's reactant coefficients do not add up to
/// the data's order and it has a single reactant species, `reaction_orders` gives that species
/// the data's order.
///
/// Errors: [`FitError::Equation`] for an unreadable or reversible equation, or reactant
/// coefficients that do not match the order with several reactant species;
/// [`FitError::NonFinite`] when a fitted value to be written is NaN or infinite.
pub fn mechanism_snippet(
    fit: &RateFit,
    data: &RateData,
    equation: Option<&str>,
) -> Result<String, FitError> {
    let order = data.order();
    let mut orders_line = None;
    let placeholder;
    let equation_text = match equation {
        Some(eq) => {
            let bad = |message: String| FitError::Equation {
                equation: eq.to_string(),
                message,
            };
            let parsed = parse_equation(eq, &|_| false).map_err(|errors| {
                bad(errors
                    .iter()
                    .map(|e| e.message.clone())
                    .collect::<Vec<_>>()
                    .join("; "))
            })?;
            if parsed.reversible {
                return Err(bad(
                    "a fitted rate constant is one-way: write `->`, not `<=>`".to_string(),
                ));
            }
            let sum: f64 = parsed.reactants.iter().map(|t| t.coefficient).sum();
            if (sum - order as f64).abs() > 1e-12 {
                let first = parsed.reactants.first().map(|t| t.name);
                let single = first.filter(|f| parsed.reactants.iter().all(|t| t.name == *f));
                match single {
                    Some(name) => {
                        // The serializer quotes names that are not bare TOML keys (`O(1D)`).
                        let mut orders = toml::Table::new();
                        orders.insert(name.to_string(), toml::Value::Integer(i64::from(order)));
                        orders_line = Some(format!(
                            "reaction_orders = {}",
                            toml::Value::Table(orders)
                        ))
                    }
                    None => {
                        return Err(bad(format!(
                            "its reactant coefficients add up to {sum} but the rate constant's unit `{}` is of order {order}",
                            data.rate_constant_unit.label
                        )))
                    }
                }
            }
            placeholder = false;
            eq.to_string()
        }
        None => {
            placeholder = true;
            let reactants: Vec<String> = (1..=order).map(|i| format!("R{i}")).collect();
            if order == 0 {
                "-> P".to_string()
            } else {
                format!("{} -> P", reactants.join(" + "))
            }
        }
    };
    let units = data
        .rate_constant_unit
        .mechanism_units(EnergyUnit::KjPerMol);
    let prefactor = fit.prefactor_si() / units.prefactor_to_si(1.0, order as f64);
    let ea_kj = fit.activation_energy_j_per_mol() / 1e3;
    let se = fit.standard_errors();
    let last = fit.parameters.len() - 1;
    let (t_min, t_max) = fit.temperature_range_k;
    let amount = match units.amount {
        stoik_mechanism::AmountUnit::Mol => "mol",
        stoik_mechanism::AmountUnit::Molecule => "molecule",
    };
    let length = match units.length {
        stoik_mechanism::LengthUnit::Cm => "cm",
        stoik_mechanism::LengthUnit::M => "m",
    };
    let time = match units.time {
        stoik_mechanism::TimeUnit::S => "s",
        stoik_mechanism::TimeUnit::Ms => "ms",
        stoik_mechanism::TimeUnit::Min => "min",
        stoik_mechanism::TimeUnit::H => "h",
    };
    let mut uncertainty = format!(
        "standard errors: ln A {:.4}, Ea {:.4} kJ/mol",
        se[0],
        se[last] / 1e3
    );
    if fit.model == Model::ModifiedArrhenius {
        let _ = write!(uncertainty, ", n {:.4}", se[1]);
    }
    let note = format!(
        "Fitted by stoik fit-rate to {} ({} points, {t_min:.1}-{t_max:.1} K, {}); {uncertainty}",
        data.source,
        data.points.len(),
        match fit.model {
            Model::Arrhenius => "two-parameter Arrhenius",
            Model::ModifiedArrhenius => "modified Arrhenius",
        }
    );
    let mut s = String::new();
    let _ = writeln!(
        s,
        "# Fitted by `stoik fit-rate` to {}: {} points, {t_min:.1}-{t_max:.1} K; valid in that range.",
        data.source,
        data.points.len()
    );
    let _ = writeln!(
        s,
        "# Reaction order {order} from the data's unit `{}`; prefactor in {amount}, {length}, {time}.",
        data.rate_constant_unit.label
    );
    if placeholder {
        let _ = writeln!(
            s,
            "# EDIT the placeholder equation: name the step's species (reactant coefficients adding up to {order})."
        );
    }
    let _ = writeln!(s, "[[step]]");
    let _ = writeln!(s, "equation = {}", toml_string(&equation_text));
    let _ = writeln!(
        s,
        "forward = {{ prefactor = {}, temperature_exponent = {}, activation_energy = {} }}",
        number("prefactor", prefactor)?,
        number("temperature_exponent", fit.temperature_exponent())?,
        number("activation_energy", ea_kj)?
    );
    if let Some(line) = orders_line {
        let _ = writeln!(s, "{line}");
    }
    let _ = writeln!(
        s,
        "units = {{ amount = \"{amount}\", length = \"{length}\", time = \"{time}\", activation_energy = \"kJ/mol\" }}"
    );
    let _ = writeln!(s, "note = {}", toml_string(&note));
    Ok(s)
}

/// Step between axis ticks: 1, 2 or 5 times a power of ten, giving about `target` ticks.
fn tick_step(span: f64, target: f64) -> f64 {
    let raw = span / target;
    let power = 10f64.powf(raw.log10().floor());
    let m = raw / power;
    let nice = if m < 1.5 {
        1.0
    } else if m < 3.5 {
        2.0
    } else if m < 7.5 {
        5.0
    } else {
        10.0
    };
    nice * power
}

fn xml_escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// A plot of ln k against 1000 K/T as a standalone SVG document: the data points (with
/// one-standard-uncertainty error bars when the data has uncertainties, class `data`), the
/// fitted line (class `fit`), its confidence band (class `band`), axes with ticks and labels,
/// and a legend. k is in the data's unit.
pub fn svg_plot(fit: &RateFit, data: &RateData) -> String {
    const W: f64 = 720.0;
    const H: f64 = 480.0;
    const LEFT: f64 = 80.0;
    const RIGHT: f64 = 24.0;
    const TOP: f64 = 44.0;
    const BOTTOM: f64 = 60.0;
    let ln_to_data = -data.rate_constant_unit.to_si_factor().ln();
    let band = fit.band(120);
    let points: Vec<(f64, f64, Option<f64>)> = data
        .points
        .iter()
        .map(|q| {
            (
                1000.0 / q.temperature_k,
                q.rate_constant_si.ln() + ln_to_data,
                q.ln_uncertainty,
            )
        })
        .collect();
    let (mut x_lo, mut x_hi) = (f64::INFINITY, f64::NEG_INFINITY);
    let (mut y_lo, mut y_hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for &(x, y, u) in &points {
        let u = u.unwrap_or(0.0);
        x_lo = x_lo.min(x);
        x_hi = x_hi.max(x);
        y_lo = y_lo.min(y - u);
        y_hi = y_hi.max(y + u);
    }
    for b in &band {
        y_lo = y_lo.min(b.lower_si.ln() + ln_to_data);
        y_hi = y_hi.max(b.upper_si.ln() + ln_to_data);
    }
    let pad_x = 0.05 * (x_hi - x_lo).max(1e-6);
    let pad_y = 0.05 * (y_hi - y_lo).max(1e-6);
    let (x_lo, x_hi, y_lo, y_hi) = (x_lo - pad_x, x_hi + pad_x, y_lo - pad_y, y_hi + pad_y);
    let px = |x: f64| LEFT + (x - x_lo) / (x_hi - x_lo) * (W - LEFT - RIGHT);
    let py = |y: f64| H - BOTTOM - (y - y_lo) / (y_hi - y_lo) * (H - TOP - BOTTOM);
    let unit = xml_escape(&data.rate_constant_unit.label);
    let mut s = String::new();
    let _ = writeln!(
        s,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{W}\" height=\"{H}\" viewBox=\"0 0 {W} {H}\" font-family=\"sans-serif\" font-size=\"12\">"
    );
    let _ = writeln!(s, "<rect width=\"{W}\" height=\"{H}\" fill=\"white\"/>");
    let _ = writeln!(
        s,
        "<text x=\"{}\" y=\"24\" text-anchor=\"middle\" font-size=\"14\">{}: Ea = {:.2} kJ/mol ({}, {:.0}% band)</text>",
        W / 2.0,
        xml_escape(
            std::path::Path::new(&data.source)
                .file_name()
                .map_or(data.source.clone(), |n| n.to_string_lossy().into_owned())
                .as_str()
        ),
        fit.activation_energy_j_per_mol() / 1e3,
        match fit.model {
            Model::Arrhenius => "two-parameter Arrhenius",
            Model::ModifiedArrhenius => "modified Arrhenius",
        },
        fit.confidence * 100.0
    );
    // Band polygon: upper edge left to right, lower edge back.
    let mut poly = String::new();
    for b in &band {
        let _ = write!(
            poly,
            "{:.2},{:.2} ",
            px(1000.0 / b.temperature_k),
            py(b.upper_si.ln() + ln_to_data)
        );
    }
    for b in band.iter().rev() {
        let _ = write!(
            poly,
            "{:.2},{:.2} ",
            px(1000.0 / b.temperature_k),
            py(b.lower_si.ln() + ln_to_data)
        );
    }
    let _ = writeln!(
        s,
        "<polygon class=\"band\" points=\"{}\" fill=\"#9ecae1\" fill-opacity=\"0.5\" stroke=\"none\"/>",
        poly.trim_end()
    );
    let line: Vec<String> = band
        .iter()
        .map(|b| {
            format!(
                "{:.2},{:.2}",
                px(1000.0 / b.temperature_k),
                py(b.fitted_si.ln() + ln_to_data)
            )
        })
        .collect();
    let _ = writeln!(
        s,
        "<polyline class=\"fit\" points=\"{}\" fill=\"none\" stroke=\"#08519c\" stroke-width=\"2\"/>",
        line.join(" ")
    );
    // Axes, ticks and grid.
    let (x0, x1, y0, y1) = (LEFT, W - RIGHT, TOP, H - BOTTOM);
    let _ = writeln!(
        s,
        "<rect x=\"{x0}\" y=\"{y0}\" width=\"{}\" height=\"{}\" fill=\"none\" stroke=\"black\"/>",
        x1 - x0,
        y1 - y0
    );
    let step = tick_step(x_hi - x_lo, 6.0);
    let mut tick = (x_lo / step).ceil() * step;
    while tick <= x_hi + 1e-12 {
        let x = px(tick);
        let _ = writeln!(
            s,
            "<line x1=\"{x:.2}\" y1=\"{y1}\" x2=\"{x:.2}\" y2=\"{}\" stroke=\"black\"/><text x=\"{x:.2}\" y=\"{}\" text-anchor=\"middle\">{}</text>",
            y1 + 5.0,
            y1 + 19.0,
            trim_number(tick, step)
        );
        tick += step;
    }
    let step = tick_step(y_hi - y_lo, 6.0);
    let mut tick = (y_lo / step).ceil() * step;
    while tick <= y_hi + 1e-12 {
        let y = py(tick);
        let _ = writeln!(
            s,
            "<line x1=\"{}\" y1=\"{y:.2}\" x2=\"{x0}\" y2=\"{y:.2}\" stroke=\"black\"/><text x=\"{}\" y=\"{:.2}\" text-anchor=\"end\">{}</text>",
            x0 - 5.0,
            x0 - 8.0,
            y + 4.0,
            trim_number(tick, step)
        );
        tick += step;
    }
    let _ = writeln!(
        s,
        "<text x=\"{}\" y=\"{}\" text-anchor=\"middle\">1000 K / T</text>",
        (x0 + x1) / 2.0,
        H - 18.0
    );
    let _ = writeln!(
        s,
        "<text x=\"20\" y=\"{}\" text-anchor=\"middle\" transform=\"rotate(-90 20 {})\">ln(k / ({unit}))</text>",
        (y0 + y1) / 2.0,
        (y0 + y1) / 2.0
    );
    // Data with error bars.
    for &(x, y, u) in &points {
        if let Some(u) = u {
            let _ = writeln!(
                s,
                "<line class=\"error-bar\" x1=\"{:.2}\" y1=\"{:.2}\" x2=\"{:.2}\" y2=\"{:.2}\" stroke=\"black\"/>",
                px(x),
                py(y - u),
                px(x),
                py(y + u)
            );
        }
        let _ = writeln!(
            s,
            "<circle class=\"data\" cx=\"{:.2}\" cy=\"{:.2}\" r=\"4\" fill=\"#de2d26\" stroke=\"black\"/>",
            px(x),
            py(y)
        );
    }
    // Legend (top right; ln k falls to the right, so that corner is empty).
    let lx = x1 - 190.0;
    let ly = y0 + 16.0;
    let _ = writeln!(
        s,
        "<g class=\"legend\"><rect x=\"{}\" y=\"{}\" width=\"182\" height=\"62\" fill=\"white\" stroke=\"#999\"/>",
        lx - 6.0,
        ly - 12.0
    );
    let _ = writeln!(
        s,
        "<circle cx=\"{}\" cy=\"{ly}\" r=\"4\" fill=\"#de2d26\" stroke=\"black\"/><text x=\"{}\" y=\"{}\">data</text>",
        lx + 8.0,
        lx + 24.0,
        ly + 4.0
    );
    let _ = writeln!(
        s,
        "<line x1=\"{lx}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"#08519c\" stroke-width=\"2\"/><text x=\"{}\" y=\"{}\">fit</text>",
        ly + 18.0,
        lx + 16.0,
        ly + 18.0,
        lx + 24.0,
        ly + 22.0
    );
    let _ = writeln!(
        s,
        "<rect x=\"{lx}\" y=\"{}\" width=\"16\" height=\"10\" fill=\"#9ecae1\" fill-opacity=\"0.5\"/><text x=\"{}\" y=\"{}\">{:.0}% confidence band</text></g>",
        ly + 31.0,
        lx + 24.0,
        ly + 40.0,
        fit.confidence * 100.0
    );
    let _ = writeln!(s, "</svg>");
    s
}

/// A tick label with as many decimals as the tick step needs.
fn trim_number(value: f64, step: f64) -> String {
    let decimals = if step >= 1.0 {
        0
    } else {
        (-step.log10()).ceil() as usize
    };
    let v = if value.abs() < step * 1e-9 {
        0.0
    } else {
        value
    };
    format!("{v:.decimals$}")
}
