//! Box-model conditions: species held at fixed concentration, constant emissions,
//! first-order deposition, and photolysis rate coefficients prescribed as functions of time
//! (tabulated, or following the sun).

use crate::ReactorError;

/// A photolysis rate coefficient J(t) as a function of run time.
#[derive(Debug, Clone, PartialEq)]
pub enum PhotolysisForm {
    /// J linear between points (times in s from the start of the run, J in 1/s).
    Table {
        /// Times in s, strictly increasing.
        times_s: Vec<f64>,
        /// J in 1/s.
        rates_per_s: Vec<f64>,
    },
    /// J = scale cos(chi)^cos_power exp(-sec_factor / cos(chi)) in daylight, 0 at night
    /// (needs a [`Sun`]).
    Diurnal {
        /// Scale in 1/s.
        scale_per_s: f64,
        /// Exponent of cos(chi) (dimensionless).
        cos_power: f64,
        /// Factor of sec(chi) in the exponential (dimensionless).
        sec_factor: f64,
    },
}

/// Where and when the sun is.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sun {
    /// Latitude in degrees north (-90 to 90).
    pub latitude_deg: f64,
    /// Day of the year at the start (1 to 366).
    pub day_of_year: f64,
    /// Local solar time at the start, in s after midnight.
    pub start_solar_time_s: f64,
}

/// Seconds per day.
const DAY_S: f64 = 86_400.0;

/// Solar declination (radians) on day `day` of the year: the approximation of Cooper (1969),
/// delta = 23.45 deg sin(360 deg (284 + day) / 365), as given in atmospheric chemistry
/// textbooks (e.g. Seinfeld & Pandis, *Atmospheric Chemistry and Physics*).
pub fn solar_declination_rad(day: f64) -> f64 {
    (23.45f64).to_radians() * (2.0 * std::f64::consts::PI * (284.0 + day) / 365.0).sin()
}

/// Cosine of the solar zenith angle for `sun` at run time `t_s` (s):
/// cos(chi) = sin(phi) sin(delta) + cos(phi) cos(delta) cos(h), with latitude phi,
/// declination delta ([`solar_declination_rad`] of the day reached) and hour angle h = 15 deg
/// per hour from local solar noon (spherical astronomy; e.g. Seinfeld & Pandis). Negative at
/// night.
pub fn cos_solar_zenith(sun: &Sun, t_s: f64) -> f64 {
    let clock = sun.start_solar_time_s + t_s;
    let day = sun.day_of_year + (clock / DAY_S).floor();
    let time_of_day = clock.rem_euclid(DAY_S);
    let hour_angle = 2.0 * std::f64::consts::PI * (time_of_day - 0.5 * DAY_S) / DAY_S;
    let phi = sun.latitude_deg.to_radians();
    let delta = solar_declination_rad(day);
    phi.sin() * delta.sin() + phi.cos() * delta.cos() * hour_angle.cos()
}

/// A photolysis rate coefficient J(t) (1/s) that replaces a step's forward rate constant:
/// the scenario's form ([`PhotolysisForm`]: a table in run time, or the zenith-angle form
/// J = scale cos(chi)^cos_power exp(-sec_factor / cos(chi)) of Jenkin et al. (1997),
/// Atmos. Environ. 31, 81, and Saunders et al. (2003), Atmos. Chem. Phys. 3, 161, zero at
/// night) with the sun it needs.
#[derive(Debug, Clone, PartialEq)]
pub struct PhotolysisRate {
    /// Table or zenith-angle form.
    pub form: PhotolysisForm,
    /// Where and when the sun is (needed by the zenith-angle form).
    pub sun: Option<Sun>,
}

impl PhotolysisRate {
    /// J (1/s) at run time `t_s` (s), after checking the rate (see
    /// [`PhotolysisRate::validate`]; a zenith-angle form needs a sun).
    pub fn rate_at(&self, t_s: f64) -> Result<f64, ReactorError> {
        self.validate().map_err(ReactorError::BadBoxConditions)?;
        Ok(self.evaluate(t_s))
    }

    /// J (1/s) at run time `t_s` (s) of a validated rate (0 where an unchecked one has no
    /// value).
    pub(crate) fn evaluate(&self, t_s: f64) -> f64 {
        match &self.form {
            PhotolysisForm::Table {
                times_s,
                rates_per_s,
            } => {
                let n = times_s.len().min(rates_per_s.len());
                let (times_s, rates_per_s) = (&times_s[..n], &rates_per_s[..n]);
                let (Some(&first), Some(&last)) = (times_s.first(), times_s.last()) else {
                    return 0.0;
                };
                if t_s <= first {
                    return rates_per_s[0];
                }
                if t_s >= last {
                    return rates_per_s[n - 1];
                }
                let i = times_s.partition_point(|&x| x <= t_s).clamp(1, n - 1) - 1;
                let f = (t_s - times_s[i]) / (times_s[i + 1] - times_s[i]);
                rates_per_s[i] + f * (rates_per_s[i + 1] - rates_per_s[i])
            }
            PhotolysisForm::Diurnal {
                scale_per_s,
                cos_power,
                sec_factor,
            } => {
                let Some(sun) = &self.sun else {
                    return 0.0;
                };
                let mu = cos_solar_zenith(sun, t_s);
                if mu <= 0.0 {
                    0.0
                } else {
                    scale_per_s * mu.powf(*cos_power) * (-sec_factor / mu).exp()
                }
            }
        }
    }

    /// Checks the rate: a table needs as many finite rates >= 0 (1/s) as finite, strictly
    /// increasing times (s), at least one; the zenith-angle form needs a sun (latitude
    /// within +-90 deg, finite day and start time), a finite scale >= 0 (1/s) and finite
    /// exponents. The error says what is wrong.
    pub fn validate(&self) -> Result<(), String> {
        match &self.form {
            PhotolysisForm::Table {
                times_s,
                rates_per_s,
            } => {
                if times_s.is_empty() || times_s.len() != rates_per_s.len() {
                    return Err(format!(
                        "a photolysis table needs as many rates as times (at least one), got {} and {}",
                        times_s.len(),
                        rates_per_s.len()
                    ));
                }
                let increasing = times_s.iter().all(|t| t.is_finite())
                    && times_s.windows(2).all(|w| w[1] > w[0]);
                if !increasing {
                    return Err("photolysis table times must be finite and increasing".into());
                }
                if rates_per_s.iter().any(|r| !(r.is_finite() && *r >= 0.0)) {
                    return Err("photolysis rates must be finite and >= 0".into());
                }
                Ok(())
            }
            PhotolysisForm::Diurnal {
                scale_per_s,
                cos_power,
                sec_factor,
            } => {
                let sun_ok = self.sun.is_some_and(|s| {
                    s.latitude_deg.abs() <= 90.0
                        && s.day_of_year.is_finite()
                        && s.start_solar_time_s.is_finite()
                });
                if sun_ok
                    && scale_per_s.is_finite()
                    && *scale_per_s >= 0.0
                    && cos_power.is_finite()
                    && sec_factor.is_finite()
                {
                    Ok(())
                } else {
                    Err("zenith-angle photolysis needs a sun (latitude within +-90 deg, finite day and start time), a finite scale >= 0 and finite exponents".into())
                }
            }
        }
    }
}

/// Box-model conditions of a constant-volume reactor. Empty by default.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct BoxConditions {
    /// Species (indices) held at their initial concentration: they enter the rates but their
    /// concentration does not change (dc/dt = 0).
    pub fixed_species: Vec<usize>,
    /// Constant emissions as (species, rate in mol/(m3 s)), added to dc/dt.
    pub emissions: Vec<(usize, f64)>,
    /// First-order losses as (species, rate constant in 1/s): dc/dt -= k c.
    pub deposition: Vec<(usize, f64)>,
    /// Steps (indices) whose forward rate constant is the photolysis rate J(t) (1/s) instead
    /// of their Arrhenius expression; the steps must be irreversible and first order.
    pub photolysis: Vec<(usize, PhotolysisRate)>,
}

impl BoxConditions {
    /// Whether there is nothing to apply.
    pub fn is_empty(&self) -> bool {
        self.fixed_species.is_empty()
            && self.emissions.is_empty()
            && self.deposition.is_empty()
            && self.photolysis.is_empty()
    }

    /// Checks indices (against `n_species` and `n_steps`) and values.
    pub(crate) fn validate(&self, n_species: usize, n_steps: usize) -> Result<(), ReactorError> {
        let bad = |m: String| Err(ReactorError::BadBoxConditions(m));
        if let Some(&i) = self.fixed_species.iter().find(|&&i| i >= n_species) {
            return bad(format!("fixed species index {i} is out of range"));
        }
        for &(i, e) in &self.emissions {
            if i >= n_species || !e.is_finite() {
                return bad(format!("emission ({i}, {e} mol/(m3 s)) is invalid"));
            }
        }
        for &(i, d) in &self.deposition {
            if i >= n_species || !(d.is_finite() && d >= 0.0) {
                return bad(format!("deposition ({i}, {d} 1/s) is invalid"));
            }
        }
        for (j, rate) in &self.photolysis {
            if *j >= n_steps {
                return bad(format!("photolysis step index {j} is out of range"));
            }
            rate.validate().or_else(bad)?;
        }
        Ok(())
    }

    /// Overwrites the forward rate constants (1/s for a photolysis step) of the photolysis
    /// steps with J(`t_s`) at time `t_s` (s); `forward` holds one entry per step, as
    /// `RateConstants::forward`. What the reactor does before every evaluation, for callers
    /// that evaluate rates of progress from a profile.
    pub fn apply_photolysis(&self, t_s: f64, forward: &mut [f64]) {
        for (j, rate) in &self.photolysis {
            forward[*j] = rate.evaluate(t_s);
        }
    }

    /// Adds emissions and deposition to `f` (mol/(m3 s)) at concentrations `c` and zeroes
    /// the derivative of fixed species.
    pub(crate) fn apply_to_rhs(&self, c: &[f64], f: &mut [f64]) {
        for &(i, e) in &self.emissions {
            f[i] += e;
        }
        for &(i, d) in &self.deposition {
            f[i] -= d * c[i];
        }
        for &i in &self.fixed_species {
            f[i] = 0.0;
        }
    }
}
