//! What the data cannot support well: each check gives its warning with the numbers.

use crate::stats::{normal_quantile, student_t_quantile};
use crate::text::sci;
use crate::{Model, RateData, RateFit, Scatter};
use std::fmt;
use stoik_mechanism::AVOGADRO;
pub use stoik_mechanism::COLLISION_LIMIT_M3_PER_MOL_S;

/// Something the data cannot support well; the fit is still returned.
#[derive(Debug, Clone, PartialEq)]
pub enum FitWarning {
    /// Fewer points than parameters + 2.
    FewPoints {
        /// Number of points.
        points: usize,
        /// Number of parameters.
        parameters: usize,
    },
    /// The temperature range does not determine the exponent n.
    NarrowRangeForExponent {
        /// Lowest temperature, K.
        t_min_k: f64,
        /// Highest temperature, K.
        t_max_k: f64,
        /// Fitted n (dimensionless).
        exponent: f64,
        /// Half-width of n's confidence interval (dimensionless).
        half_width: f64,
        /// Confidence level of that interval, a fraction in (0, 1).
        confidence: f64,
    },
    /// A point whose studentized residual exceeds the Bonferroni critical value.
    Outlier {
        /// 1-based line in the data file.
        line: usize,
        /// Its temperature, K.
        temperature_k: f64,
        /// Its studentized residual (dimensionless).
        studentized: f64,
        /// Critical value (dimensionless): two-sided 5% level divided by the number of points.
        critical: f64,
    },
    /// A second-order rate constant above the gas-kinetic collision limit.
    AboveCollisionLimit {
        /// Temperature of the largest fitted k in the data range, K.
        temperature_k: f64,
        /// The largest fitted k, cm3 molecule^-1 s^-1.
        rate_constant_cm3_per_molecule_s: f64,
        /// The limit, cm3 molecule^-1 s^-1.
        limit_cm3_per_molecule_s: f64,
    },
    /// Scatter inconsistent with the stated uncertainties.
    ChiSquare {
        /// Chi-square of the fit (dimensionless).
        chi_square: f64,
        /// Degrees of freedom.
        degrees_of_freedom: usize,
        /// Probability of a chi-square at least this large.
        p_value: f64,
    },
    /// The points were measured at different pressures but are fitted as one
    /// pressure-independent rate constant.
    PressuresDiffer {
        /// Lowest pressure, Pa.
        min_pa: f64,
        /// Highest pressure, Pa.
        max_pa: f64,
    },
}

impl fmt::Display for FitWarning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match *self {
            FitWarning::FewPoints { points, parameters } => write!(
                f,
                "{points} points for {parameters} parameters: fewer than parameters + 2 = {}; only {} degree(s) of freedom are left to check the fit",
                parameters + 2,
                points.saturating_sub(parameters)
            ),
            FitWarning::NarrowRangeForExponent {
                t_min_k,
                t_max_k,
                exponent,
                half_width,
                confidence,
            } => write!(
                f,
                "the temperature range {t_min_k:.1}-{t_max_k:.1} K (ratio {:.3}) is too narrow to determine n: n = {exponent:.3} +- {half_width:.3} ({:.0}% interval, half-width above 1); fit the two-parameter form or add data over a wider range",
                t_max_k / t_min_k,
                confidence * 100.0
            ),
            FitWarning::Outlier {
                line,
                temperature_k,
                studentized,
                critical,
            } => write!(
                f,
                "line {line} (T = {temperature_k:.2} K) looks like an outlier: studentized residual {studentized:.2}, beyond +-{critical:.2} (two-sided 5% divided by the number of points)"
            ),
            FitWarning::AboveCollisionLimit {
                temperature_k,
                rate_constant_cm3_per_molecule_s,
                limit_cm3_per_molecule_s,
            } => write!(
                f,
                "the fitted second-order k reaches {} cm3 molecule-1 s-1 at {temperature_k:.1} K, above the gas-kinetic collision limit of about {} cm3 molecule-1 s-1",
                sci(rate_constant_cm3_per_molecule_s, 3),
                sci(limit_cm3_per_molecule_s, 0)
            ),
            FitWarning::ChiSquare {
                chi_square,
                degrees_of_freedom,
                p_value,
            } => {
                let how = if p_value < 0.5 {
                    "larger than the stated uncertainties allow"
                } else {
                    "smaller than the stated uncertainties suggest"
                };
                write!(
                    f,
                    "chi-square {chi_square:.3} for {degrees_of_freedom} degree(s) of freedom (probability of a larger one {}): the scatter is {how}",
                    sci(p_value, 2)
                )
            }
            FitWarning::PressuresDiffer { min_pa, max_pa } => write!(
                f,
                "pressures range from {} to {} Pa but the fit treats k as pressure-independent (pressure-dependent forms are not fitted)",
                sci(min_pa, 4),
                sci(max_pa, 4)
            ),
        }
    }
}

/// Every warning about `fit` of `data`, in a fixed order.
pub(crate) fn warnings(fit: &RateFit, data: &RateData, weighted: bool) -> Vec<FitWarning> {
    let mut out = Vec::new();
    out.extend(few_points(fit));
    out.extend(narrow_range(fit));
    out.extend(outliers(fit, weighted));
    out.extend(above_collision_limit(fit));
    out.extend(chi_square(fit));
    out.extend(pressures_differ(data));
    out
}

fn few_points(fit: &RateFit) -> Option<FitWarning> {
    let n = fit.residuals.len();
    let p = fit.model.parameter_count();
    (n < p + 2).then_some(FitWarning::FewPoints {
        points: n,
        parameters: p,
    })
}

fn narrow_range(fit: &RateFit) -> Option<FitWarning> {
    if fit.model != Model::ModifiedArrhenius {
        return None;
    }
    let (t_min, t_max) = fit.temperature_range_k;
    let half_width = fit.quantile * fit.standard_errors()[1];
    (half_width.is_nan() || half_width > 1.0).then_some(FitWarning::NarrowRangeForExponent {
        t_min_k: t_min,
        t_max_k: t_max,
        exponent: fit.parameters[1],
        half_width,
        confidence: fit.confidence,
    })
}

/// Points beyond the Bonferroni-corrected two-sided 5% critical value.
fn outliers(fit: &RateFit, weighted: bool) -> Vec<FitWarning> {
    let n = fit.residuals.len();
    let level = 1.0 - 0.05 / (2.0 * n as f64);
    let critical = if weighted {
        normal_quantile(level)
    } else if fit.degrees_of_freedom >= 2 {
        student_t_quantile(level, (fit.degrees_of_freedom - 1) as f64)
    } else {
        f64::NAN
    };
    fit.residuals
        .iter()
        .filter(|r| r.studentized.abs() > critical)
        .map(|r| FitWarning::Outlier {
            line: r.line,
            temperature_k: r.temperature_k,
            studentized: r.studentized,
            critical,
        })
        .collect()
}

/// A second-order fit whose largest k over the data range exceeds the collision limit.
fn above_collision_limit(fit: &RateFit) -> Option<FitWarning> {
    if fit.order() != 2 {
        return None;
    }
    let (t_peak, k_peak) = fit
        .band(201)
        .iter()
        .map(|b| (b.temperature_k, b.fitted_si))
        .fold((f64::NAN, f64::NEG_INFINITY), |best, cur| {
            if cur.1 > best.1 {
                cur
            } else {
                best
            }
        });
    (k_peak > COLLISION_LIMIT_M3_PER_MOL_S).then(|| FitWarning::AboveCollisionLimit {
        temperature_k: t_peak,
        rate_constant_cm3_per_molecule_s: k_peak * 1e6 / AVOGADRO,
        limit_cm3_per_molecule_s: COLLISION_LIMIT_M3_PER_MOL_S * 1e6 / AVOGADRO,
    })
}

/// A chi-square probability below 1% or above 99%.
fn chi_square(fit: &RateFit) -> Option<FitWarning> {
    let Scatter::FromUncertainties {
        chi_square,
        p_value,
    } = fit.scatter
    else {
        return None;
    };
    (!(0.01..=0.99).contains(&p_value) && !p_value.is_nan()).then_some(FitWarning::ChiSquare {
        chi_square,
        degrees_of_freedom: fit.degrees_of_freedom,
        p_value,
    })
}

/// Pressures that differ by more than a factor 1.5.
fn pressures_differ(data: &RateData) -> Option<FitWarning> {
    let pressures = data.points.iter().filter_map(|q| q.pressure_pa);
    let lo = pressures.clone().reduce(f64::min)?;
    let hi = pressures.reduce(f64::max)?;
    (hi > 1.5 * lo).then_some(FitWarning::PressuresDiffer {
        min_pa: lo,
        max_pa: hi,
    })
}
