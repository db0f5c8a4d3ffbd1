//! The fitted step as a `[[step]]` table of the mechanism format.

use crate::error::Driver;
use crate::{Model, RateFit, RateFitError, Residual};
use std::fmt::Write as _;
use stoik_mechanism::parse_equation;
use stoik_mechanism::{AmountUnit, EnergyUnit, LengthUnit, RateUnits, TimeUnit};
use stoik_thermo::{toml_comment_text, toml_float, toml_string};

/// The fitted step as a `[[step]]` table of the mechanism format, ready to paste.
///
/// The prefactor, temperature exponent and activation energy are written with the shortest
/// digits that read back as exactly the computed `f64` values ([`toml_float`]); strings and the
/// `reaction_orders` key are quoted by the `toml` crate's serializer. The comments and the
/// standard errors in the note are short forms for people.
///
/// The rate constant keeps the data's amount and time units (`dm`/`L` volumes are written in
/// cm, which mechanism files accept), Ea is in kJ/mol, and the note names the data file, its
/// temperature range (K) and the standard errors. `equation` is the step's equation (one way,
/// `->`); without it a placeholder `R1 + R2 -> P` with as many reactants as the order is
/// written and marked for editing. When the equation's reactant coefficients do not add up to
/// the data's order and it has a single reactant species, `reaction_orders` gives that species
/// the data's order.
///
/// Errors: [`RateFitError::Equation`] for an unreadable or reversible equation, or reactant
/// coefficients that do not match the order with several reactant species;
/// [`RateFitError::NonFinite`] when a fitted value to be written is NaN or infinite.
pub fn mechanism_snippet(fit: &RateFit, equation: Option<&str>) -> Result<String, RateFitError> {
    let order = fit.order();
    let step = match equation {
        Some(eq) => given_equation(eq, order, fit.rate_constant_unit.label())?,
        None => placeholder_equation(order),
    };
    let units = fit.rate_constant_unit.mechanism_units(EnergyUnit::KjPerMol);
    let prefactor = fit.prefactor_si() / units.prefactor_to_si(1.0, order as f64);
    let forward = format!(
        "forward = {{ prefactor = {}, temperature_exponent = {}, activation_energy = {} }}",
        number(fit, "prefactor", positive(fit, "prefactor", prefactor)?)?,
        number(fit, "temperature_exponent", fit.temperature_exponent())?,
        number(
            fit,
            "activation_energy",
            fit.activation_energy_j_per_mol() / 1e3
        )?
    );
    let (amount, length, time) = unit_names(&units);
    let (t_min, t_max) = fit.temperature_range_k;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "# Fitted by `stoik fit-rate` to {}: {} points, {t_min:.1}-{t_max:.1} K; valid in that range.",
        toml_comment_text(&fit.source),
        fit.point_count()
    );
    let _ = writeln!(
        s,
        "# Reaction order {order} from the data's unit `{}`; prefactor in {amount}, {length}, {time}.",
        fit.rate_constant_unit.label()
    );
    if step.placeholder {
        let _ = writeln!(
            s,
            "# EDIT the placeholder equation: name the step's species (reactant coefficients adding up to {order})."
        );
    }
    let _ = writeln!(s, "[[step]]");
    let _ = writeln!(s, "equation = {}", toml_string(&step.equation));
    let _ = writeln!(s, "{forward}");
    if let Some(line) = step.orders_line {
        let _ = writeln!(s, "{line}");
    }
    let _ = writeln!(
        s,
        "units = {{ amount = \"{amount}\", length = \"{length}\", time = \"{time}\", activation_energy = \"kJ/mol\" }}"
    );
    let _ = writeln!(s, "note = {}", toml_string(&note(fit)));
    Ok(s)
}

/// The equation line of the snippet and what goes with it.
struct StepEquation {
    equation: String,
    /// Whether the equation is a placeholder to edit.
    placeholder: bool,
    /// A `reaction_orders = { ... }` line, when the coefficients do not give the order.
    orders_line: Option<String>,
}

/// Checks a given equation against the data's `order`.
fn given_equation(eq: &str, order: u32, unit_label: &str) -> Result<StepEquation, RateFitError> {
    let bad = |message: String| RateFitError::Equation {
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
    let mut orders_line = None;
    if (sum - order as f64).abs() > 1e-12 {
        let first = parsed.reactants.first().map(|t| t.name);
        let single = first.filter(|f| parsed.reactants.iter().all(|t| t.name == *f));
        let Some(name) = single else {
            return Err(bad(format!(
                "its reactant coefficients add up to {sum} but the rate constant's unit `{unit_label}` is of order {order}"
            )));
        };
        // The serializer quotes names that are not bare TOML keys (`O(1D)`).
        let mut orders = toml::Table::new();
        orders.insert(name.to_string(), toml::Value::Integer(i64::from(order)));
        orders_line = Some(format!("reaction_orders = {}", toml::Value::Table(orders)));
    }
    Ok(StepEquation {
        equation: eq.to_string(),
        placeholder: false,
        orders_line,
    })
}

/// `R1 + R2 + ... -> P` with as many reactants as the order.
fn placeholder_equation(order: u32) -> StepEquation {
    let reactants: Vec<String> = (1..=order).map(|i| format!("R{i}")).collect();
    StepEquation {
        equation: if order == 0 {
            "-> P".to_string()
        } else {
            format!("{} -> P", reactants.join(" + "))
        },
        placeholder: true,
        orders_line: None,
    }
}

/// The names of the amount, length and time units in the mechanism format.
fn unit_names(units: &RateUnits) -> (&'static str, &'static str, &'static str) {
    let amount = match units.amount {
        AmountUnit::Mol => "mol",
        AmountUnit::Molecule => "molecule",
    };
    let length = match units.length {
        LengthUnit::Cm => "cm",
        LengthUnit::M => "m",
    };
    let time = match units.time {
        TimeUnit::S => "s",
        TimeUnit::Ms => "ms",
        TimeUnit::Min => "min",
        TimeUnit::H => "h",
    };
    (amount, length, time)
}

/// The step's note: data file, points, range, form and standard errors.
fn note(fit: &RateFit) -> String {
    let se = fit.standard_errors();
    let last = se.len() - 1;
    let mut uncertainty = format!(
        "standard errors: ln A {:.4}, Ea {:.4} kJ/mol",
        se[0],
        se[last] / 1e3
    );
    if fit.model == Model::ModifiedArrhenius {
        let _ = write!(uncertainty, ", n {:.4}", se[1]);
    }
    let (t_min, t_max) = fit.temperature_range_k;
    format!(
        "Fitted by stoik fit-rate to {} ({} points, {t_min:.1}-{t_max:.1} K, {}); {uncertainty}",
        fit.source,
        fit.point_count(),
        fit.model.short_name()
    )
}

/// `value` when it is positive; [`RateFitError::NotPositive`] otherwise (a prefactor that
/// underflows to 0 in the snippet's units would not load back).
fn positive(fit: &RateFit, quantity: &str, value: f64) -> Result<f64, RateFitError> {
    if value > 0.0 || value.is_nan() {
        Ok(value)
    } else {
        Err(RateFitError::NotPositive {
            quantity: quantity.to_string(),
            driver: extreme_point(fit, false),
            value,
        })
    }
}

/// The point with the largest (`largest`) or smallest measured rate constant: the one that
/// pushes a fitted prefactor furthest up or down.
fn extreme_point(fit: &RateFit, largest: bool) -> Option<Driver> {
    let by_k = |a: &&Residual, b: &&Residual| a.measured_si.total_cmp(&b.measured_si);
    let point = if largest {
        fit.residuals.iter().max_by(by_k)
    } else {
        fit.residuals.iter().min_by(by_k)
    };
    point.map(|r| Driver {
        line: r.line,
        rate_constant_si: r.measured_si,
    })
}

/// `value` in the snippet's number form ([`toml_float`]: the shortest digits that read back
/// as the same `f64`); [`RateFitError::NonFinite`] for NaN and infinities.
fn number(fit: &RateFit, quantity: &str, value: f64) -> Result<String, RateFitError> {
    toml_float(value).ok_or_else(|| RateFitError::NonFinite {
        quantity: quantity.to_string(),
        // An overflow (+inf) comes from the largest rate constants, -inf from the smallest.
        driver: extreme_point(fit, value > 0.0 || value.is_nan()),
        value,
    })
}
