//! The checks [`crate::Kinetics::compile`] makes before compiling: the invariants the
//! mechanism loader guarantees, applied to any [`Mechanism`] (one built by hand included), so
//! that compiling and evaluating cannot index out of range or compute from non-finite
//! parameters.

use stoik_mechanism::{Arrhenius, Broadening, Mechanism, PressureDependence, Step, ThirdBody};

/// Why a [`Mechanism`] cannot be compiled. Steps and species are 0-based indices in
/// mechanism order.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CompileError {
    /// A step names a species index the mechanism does not have.
    #[error("step {step}: {what} names species index {species}, but the mechanism has {n_species} species")]
    SpeciesOutOfRange {
        /// Step index.
        step: usize,
        /// Where the index appears (reactants, products, forward orders, third body).
        what: &'static str,
        /// The offending species index.
        species: usize,
        /// Number of species of the mechanism.
        n_species: usize,
    },
    /// A number breaks its rule (for example a prefactor that is not finite and positive).
    #[error("step {step}: {what} is {value}; it must be {rule}")]
    BadValue {
        /// Step index.
        step: usize,
        /// Which number (for example "prefactor of the forward rate constant").
        what: String,
        /// The offending value (in the SI unit of that number).
        value: f64,
        /// What it must be (for example "finite and positive").
        rule: &'static str,
    },
    /// A pressure table is malformed.
    #[error("step {step}: pressure table {reason}")]
    BadPressureTable {
        /// Step index.
        step: usize,
        /// What is wrong.
        reason: &'static str,
    },
}

const POSITIVE: &str = "finite and positive";
const NON_NEGATIVE: &str = "finite and not negative";
const FINITE: &str = "finite";

/// Checks every step of `mechanism` (see [`CompileError`]).
pub(crate) fn validate(mechanism: &Mechanism) -> Result<(), CompileError> {
    let n_species = mechanism.species.len();
    for (j, step) in mechanism.steps.iter().enumerate() {
        check_species(j, step, n_species)?;
        check_rates(j, step)?;
        check_third_body(j, step.third_body.as_ref())?;
        check_pressure_dependence(j, step.pressure_dependence.as_ref())?;
    }
    Ok(())
}

fn check(
    step: usize,
    ok: bool,
    what: impl FnOnce() -> String,
    value: f64,
    rule: &'static str,
) -> Result<(), CompileError> {
    if ok {
        Ok(())
    } else {
        Err(CompileError::BadValue {
            step,
            what: what(),
            value,
            rule,
        })
    }
}

fn positive(step: usize, value: f64, what: impl FnOnce() -> String) -> Result<(), CompileError> {
    check(
        step,
        value.is_finite() && value > 0.0,
        what,
        value,
        POSITIVE,
    )
}

fn non_negative(
    step: usize,
    value: f64,
    what: impl FnOnce() -> String,
) -> Result<(), CompileError> {
    check(
        step,
        value.is_finite() && value >= 0.0,
        what,
        value,
        NON_NEGATIVE,
    )
}

fn finite(step: usize, value: f64, what: impl FnOnce() -> String) -> Result<(), CompileError> {
    check(step, value.is_finite(), what, value, FINITE)
}

/// Species indices in range; coefficients finite and positive; orders finite, not negative.
fn check_species(j: usize, step: &Step, n_species: usize) -> Result<(), CompileError> {
    let in_range = |what: &'static str, species: usize| {
        if species < n_species {
            Ok(())
        } else {
            Err(CompileError::SpeciesOutOfRange {
                step: j,
                what,
                species,
                n_species,
            })
        }
    };
    for (what, side) in [("reactants", &step.reactants), ("products", &step.products)] {
        for term in side {
            in_range(what, term.species)?;
            positive(j, term.coefficient, || {
                format!("the coefficient of species {} in the {what}", term.species)
            })?;
        }
    }
    for &(species, order) in step.forward_orders.iter().flatten() {
        in_range("forward orders", species)?;
        non_negative(j, order, || {
            format!("the forward order of species {species}")
        })?;
    }
    match &step.third_body {
        Some(ThirdBody::Species(species)) => in_range("third body", *species)?,
        Some(ThirdBody::Mixture { efficiencies, .. }) => {
            for &(species, _) in efficiencies {
                in_range("third-body efficiencies", species)?;
            }
        }
        None => {}
    }
    Ok(())
}

/// Finite, positive prefactor (SI) and finite exponent and activation energy (J/mol).
fn check_arrhenius(j: usize, a: &Arrhenius, which: &str) -> Result<(), CompileError> {
    positive(j, a.pre_exponential_si, || {
        format!("the prefactor of {which}")
    })?;
    finite(j, a.temperature_exponent, || {
        format!("the temperature exponent of {which}")
    })?;
    finite(j, a.activation_energy_j_per_mol, || {
        format!("the activation energy (J/mol) of {which}")
    })
}

fn check_rates(j: usize, step: &Step) -> Result<(), CompileError> {
    check_arrhenius(j, &step.forward, "the forward rate constant")?;
    if let Some(reverse) = &step.reverse {
        check_arrhenius(j, reverse, "the reverse rate constant")?;
    }
    Ok(())
}

fn check_third_body(j: usize, third_body: Option<&ThirdBody>) -> Result<(), CompileError> {
    if let Some(ThirdBody::Mixture {
        default_efficiency,
        efficiencies,
    }) = third_body
    {
        non_negative(j, *default_efficiency, || {
            "the default third-body efficiency".to_string()
        })?;
        for &(species, efficiency) in efficiencies {
            non_negative(j, efficiency, || {
                format!("the third-body efficiency of species {species}")
            })?;
        }
    }
    Ok(())
}

fn check_pressure_dependence(
    j: usize,
    dependence: Option<&PressureDependence>,
) -> Result<(), CompileError> {
    match dependence {
        None => Ok(()),
        Some(PressureDependence::Falloff {
            low_pressure,
            high_pressure,
            broadening,
            ..
        }) => {
            check_arrhenius(j, low_pressure, "the low-pressure limit")?;
            check_arrhenius(j, high_pressure, "the high-pressure limit")?;
            check_broadening(j, broadening)
        }
        Some(PressureDependence::Table { points }) => {
            if points.is_empty() {
                return Err(CompileError::BadPressureTable {
                    step: j,
                    reason: "has no points",
                });
            }
            for (i, point) in points.iter().enumerate() {
                positive(j, point.pressure_pa, || {
                    format!("the pressure (Pa) of table point {i}")
                })?;
                if point.rate_sets.is_empty() {
                    return Err(CompileError::BadPressureTable {
                        step: j,
                        reason: "has a point without rate constants",
                    });
                }
                for a in &point.rate_sets {
                    check_arrhenius(j, a, &format!("a rate constant of table point {i}"))?;
                }
            }
            if points
                .windows(2)
                .any(|w| w[1].pressure_pa <= w[0].pressure_pa)
            {
                return Err(CompileError::BadPressureTable {
                    step: j,
                    reason: "pressures are not strictly increasing",
                });
            }
            Ok(())
        }
    }
}

/// The loader's rules for the broadening parameters (temperatures in K).
fn check_broadening(j: usize, broadening: &Broadening) -> Result<(), CompileError> {
    match *broadening {
        Broadening::Lindemann => Ok(()),
        Broadening::Troe {
            a,
            t3_k,
            t1_k,
            t2_k,
        } => {
            finite(j, a, || "Troe a".to_string())?;
            positive(j, t3_k, || "Troe T3 (K)".to_string())?;
            positive(j, t1_k, || "Troe T1 (K)".to_string())?;
            t2_k.map_or(Ok(()), |t2| finite(j, t2, || "Troe T2 (K)".to_string()))
        }
        Broadening::Sri { a, b_k, c_k, d, e } => {
            finite(j, a, || "SRI a".to_string())?;
            finite(j, b_k, || "SRI b (K)".to_string())?;
            positive(j, c_k, || "SRI c (K)".to_string())?;
            positive(j, d, || "SRI d".to_string())?;
            finite(j, e, || "SRI e".to_string())
        }
        Broadening::FixedCenter { center } => check(
            j,
            center > 0.0 && center <= 1.0,
            || "the broadening centre Fc".to_string(),
            center,
            "in (0, 1]",
        ),
    }
}
