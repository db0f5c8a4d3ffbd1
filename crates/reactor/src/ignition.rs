//! Ignition delay from a profile, by one of three common-practice criteria: located on the
//! solver's own steps when the run watched for it ([`IgnitionCriterion::watches`]), otherwise
//! interpolated between output points.

use crate::watch::{Quantity, Watch};
use crate::{Profiles, ReactorError};

/// How the moment of ignition is defined (all common practice).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum IgnitionCriterion {
    /// The time of the largest dT/dt. Uses the exact dT/dt of the model at the output
    /// times ([`Profiles::temperature_rates_k_per_s`]) and places the maximum at the vertex of
    /// the parabola through the largest value and its two neighbours.
    MaxTemperatureRate,
    /// The time at which species `.0` (mechanism index) peaks: vertex of the parabola through
    /// the largest concentration and its two neighbours.
    SpeciesMaximum(usize),
    /// The first time the temperature exceeds its initial value by `.0` K, interpolated
    /// linearly between the two output points around the crossing.
    TemperatureRise(f64),
}

impl IgnitionCriterion {
    /// What a run should locate on its solver steps (add to
    /// [`IntegrationOptions::watch`](crate::IntegrationOptions::watch)) so that
    /// [`ignition_delay`] is accurate to the integration tolerance whatever the output grid:
    /// the maximum of dT/dt or of the species, or the crossing of `initial_temperature_k`
    /// (K) plus the rise; the maximum temperature rides along for the rise report.
    pub fn watches(&self, initial_temperature_k: f64) -> Vec<Watch> {
        let main = match *self {
            IgnitionCriterion::MaxTemperatureRate => Watch::Maximum(Quantity::TemperatureRate),
            IgnitionCriterion::SpeciesMaximum(i) => Watch::Maximum(Quantity::Concentration(i)),
            IgnitionCriterion::TemperatureRise(rise_k) => Watch::Crossing {
                quantity: Quantity::Temperature,
                value: initial_temperature_k + rise_k,
            },
        };
        vec![main, Watch::Maximum(Quantity::Temperature)]
    }
}

/// An ignition delay and how it was found.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct IgnitionDelay {
    /// Time from the start of the profile to ignition (s).
    pub delay_s: f64,
    /// The criterion used.
    pub criterion: IgnitionCriterion,
    /// Largest temperature rise over the profile (K): max T - T(t0).
    pub temperature_rise_k: f64,
    /// Whether the delay was located on the solver's own steps (accurate to the integration
    /// tolerance) rather than interpolated between output times.
    pub on_solver_steps: bool,
}

/// Abscissa of the vertex of the parabola through three points (x increasing); the middle
/// point when the three are not concave, clamped to `[x0, x2]`.
fn parabola_vertex(x: [f64; 3], y: [f64; 3]) -> f64 {
    let d1 = (y[1] - y[0]) / (x[1] - x[0]);
    let d2 = (y[2] - y[1]) / (x[2] - x[1]);
    let a = (d2 - d1) / (x[2] - x[0]);
    if a >= 0.0 || a.is_nan() {
        return x[1];
    }
    (0.5 * (x[0] + x[1]) - d1 / (2.0 * a)).clamp(x[0], x[2])
}

/// Time of the maximum of `values` over `times`, refined by a parabola when interior;
/// `None` when the maximum sits at either end (no peak inside the profile).
fn peak_time(times: &[f64], values: &[f64]) -> Option<f64> {
    let (i, _) = values
        .iter()
        .enumerate()
        .filter(|(_, v)| v.is_finite())
        .max_by(|a, b| a.1.total_cmp(b.1))?;
    if i == 0 || i + 1 >= values.len() {
        return None;
    }
    Some(parabola_vertex(
        [times[i - 1], times[i], times[i + 1]],
        [values[i - 1], values[i], values[i + 1]],
    ))
}

/// The ignition delay of `profiles` by `criterion`, or `None` when the profile shows no
/// ignition by that criterion: no temperature rise of at least 1 K with an interior maximum
/// of dT/dt, no interior maximum of the species, or the threshold never crossed. The delay
/// is measured from the first output time. An error when `profiles` is inconsistent
/// ([`Profiles::validate`]) or the criterion's species is not one of its columns.
///
/// When the run located the criterion on its solver steps (the watches of
/// [`IgnitionCriterion::watches`] were in its options), those results are used: accurate to
/// the integration tolerance and independent of the output grid. Otherwise the delay is
/// interpolated between output times, and its accuracy depends on how fine the grid is near
/// ignition.
pub fn ignition_delay(
    profiles: &Profiles,
    criterion: IgnitionCriterion,
) -> Result<Option<IgnitionDelay>, ReactorError> {
    profiles.validate()?;
    if let IgnitionCriterion::SpeciesMaximum(species) = criterion {
        let n_species = profiles
            .concentrations_mol_per_m3
            .first()
            .map_or(0, Vec::len);
        if species >= n_species {
            return Err(ReactorError::SpeciesOutOfRange {
                what: "ignition criterion",
                species,
                n_species,
            });
        }
    }
    Ok(delay_of_consistent(profiles, criterion))
}

/// [`ignition_delay`] of a validated profile.
fn delay_of_consistent(profiles: &Profiles, criterion: IgnitionCriterion) -> Option<IgnitionDelay> {
    let times = &profiles.times_s;
    let temps = &profiles.temperatures_k;
    let (&t0, &temp0) = (times.first()?, temps.first()?);
    let grid_max = temps.iter().fold(f64::NEG_INFINITY, |m, &t| m.max(t));
    let located_max = profiles
        .located(Watch::Maximum(Quantity::Temperature))
        .map_or(f64::NEG_INFINITY, |l| l.value);
    let temperature_rise_k = grid_max.max(located_max) - temp0;
    if let Some(found) = criterion
        .watches(temp0)
        .first()
        .and_then(|w| profiles.located(*w))
    {
        let usable = match criterion {
            IgnitionCriterion::MaxTemperatureRate => temperature_rise_k >= 1.0 && found.interior,
            IgnitionCriterion::SpeciesMaximum(_) => found.interior,
            IgnitionCriterion::TemperatureRise(_) => true,
        };
        return usable.then_some(IgnitionDelay {
            delay_s: found.time_s - t0,
            criterion,
            temperature_rise_k,
            on_solver_steps: true,
        });
    }
    let at = match criterion {
        IgnitionCriterion::MaxTemperatureRate => {
            if temperature_rise_k < 1.0 || temperature_rise_k.is_nan() {
                return None;
            }
            if profiles.temperature_rates_k_per_s.len() == times.len() {
                peak_time(times, &profiles.temperature_rates_k_per_s)?
            } else {
                // Finite differences at interval midpoints.
                let mids: Vec<f64> = times.windows(2).map(|w| 0.5 * (w[0] + w[1])).collect();
                let rates: Vec<f64> = times
                    .windows(2)
                    .zip(temps.windows(2))
                    .map(|(t, x)| (x[1] - x[0]) / (t[1] - t[0]))
                    .collect();
                peak_time(&mids, &rates)?
            }
        }
        IgnitionCriterion::SpeciesMaximum(species) => {
            let values: Vec<f64> = profiles
                .concentrations_mol_per_m3
                .iter()
                .map(|row| row.get(species).copied().unwrap_or(f64::NAN))
                .collect();
            peak_time(times, &values)?
        }
        IgnitionCriterion::TemperatureRise(rise_k) => {
            let target = temp0 + rise_k;
            let i = temps.iter().position(|&t| t >= target)?;
            if i == 0 {
                t0
            } else {
                let (ta, tb) = (times[i - 1], times[i]);
                let (xa, xb) = (temps[i - 1], temps[i]);
                ta + (tb - ta) * (target - xa) / (xb - xa)
            }
        }
    };
    Some(IgnitionDelay {
        delay_s: at - t0,
        criterion,
        temperature_rise_k,
        on_solver_steps: false,
    })
}
