//! Weighted linear least squares of ln k on 1, (ln T), -1/(R T).
//!
//! The model is ln k = ln A + n ln(T / 1 K) - Ea/(R T) (n fixed at 0 in the two-parameter
//! form). The columns of the design matrix are scaled to unit length and the problem is solved
//! by singular value decomposition, which copes with the near-collinearity of 1, ln T and 1/T
//! over narrow temperature ranges.
//!
//! **Scatter and intervals.** Without per-point uncertainties every point has weight 1, the
//! scatter of ln k is estimated from the residuals (s^2 = SSR/(N - p)), the covariance is
//! s^2 (X^T X)^-1 and intervals use Student's t with N - p degrees of freedom. With
//! uncertainties, point i has weight 1/sigma_i^2 (sigma_i: standard uncertainty of ln k), the
//! uncertainties are taken as known: the covariance is (X^T W X)^-1, not rescaled by the
//! reduced chi-square, and intervals use the normal quantile; the chi-square of the fit and
//! its probability are reported and a warning is given when the probability is below 1% or
//! above 99% (scatter inconsistent with the stated uncertainties).

use crate::data::{RateData, COLLISION_LIMIT_M3_PER_MOL_S};
use crate::output::sci;
use crate::stats::{chi_square_cdf, normal_quantile, student_t_quantile};
use crate::FitError;
use nalgebra::{DMatrix, DVector};
use std::fmt;
use stoik_mechanism::{AVOGADRO, GAS_CONSTANT};

/// Which Arrhenius form is fitted.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Model {
    /// k = A exp(-Ea/(R T)): parameters ln A, Ea.
    Arrhenius,
    /// k = A T^n exp(-Ea/(R T)) (T in K): parameters ln A, n, Ea.
    ModifiedArrhenius,
}

impl Model {
    /// Number of fitted parameters (2 or 3).
    pub fn parameter_count(self) -> usize {
        match self {
            Model::Arrhenius => 2,
            Model::ModifiedArrhenius => 3,
        }
    }

    /// Names of the parameters in the order of [`RateFit::parameters`].
    pub fn parameter_names(self) -> &'static [&'static str] {
        match self {
            Model::Arrhenius => &["ln A", "Ea"],
            Model::ModifiedArrhenius => &["ln A", "n", "Ea"],
        }
    }

    /// A one-line description with the formula.
    pub fn describe(self) -> &'static str {
        match self {
            Model::Arrhenius => "two-parameter Arrhenius, k = A exp(-Ea/(R T))",
            Model::ModifiedArrhenius => "modified Arrhenius, k = A T^n exp(-Ea/(R T)) (T in K)",
        }
    }

    /// The design-matrix row at temperature `t_k` (K): 1, [ln T,] -1/(R T).
    pub fn design_row(self, t_k: f64) -> DVector<f64> {
        match self {
            Model::Arrhenius => DVector::from_vec(vec![1.0, -1.0 / (GAS_CONSTANT * t_k)]),
            Model::ModifiedArrhenius => {
                DVector::from_vec(vec![1.0, t_k.ln(), -1.0 / (GAS_CONSTANT * t_k)])
            }
        }
    }
}

/// Settings of a fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FitOptions {
    /// The form fitted.
    pub model: Model,
    /// Confidence level of intervals and bands, in (0, 1); default 0.95.
    pub confidence: f64,
    /// Reference temperature of the decorrelated form, in K; default: the weighted harmonic
    /// mean of the data's temperatures, rounded to 1 K.
    pub reference_temperature_k: Option<f64>,
}

impl Default for FitOptions {
    fn default() -> Self {
        FitOptions {
            model: Model::Arrhenius,
            confidence: 0.95,
            reference_temperature_k: None,
        }
    }
}

/// Where the scatter of ln k comes from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Scatter {
    /// No uncertainties given: estimated from the residuals.
    FromResiduals {
        /// Residual standard deviation of ln k, s = sqrt(SSR/(N - p)).
        residual_standard_deviation: f64,
    },
    /// Per-point uncertainties given and taken as known.
    FromUncertainties {
        /// Sum of squared weighted residuals.
        chi_square: f64,
        /// Probability of a chi-square at least this large with N - p degrees of freedom (NaN
        /// when N = p).
        p_value: f64,
    },
}

/// One data point against the fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Residual {
    /// 1-based line of the point in the data file.
    pub line: usize,
    /// Temperature in K.
    pub temperature_k: f64,
    /// Measured rate constant in SI.
    pub measured_si: f64,
    /// Fitted rate constant in SI.
    pub fitted_si: f64,
    /// ln(measured) - ln(fitted).
    pub ln_residual: f64,
    /// Diagonal element of the hat matrix (leverage), in [0, 1].
    pub leverage: f64,
    /// Externally studentized residual (residuals known: standardized residual); NaN when
    /// it cannot be formed (leverage 1, or fewer than 2 degrees of freedom).
    pub studentized: f64,
}

/// The fit rewritten about a reference temperature:
/// k = k_ref (T/T_ref)^n exp(-(Ea/R)(1/T - 1/T_ref)).
#[derive(Debug, Clone, PartialEq)]
pub struct ReferenceForm {
    /// Reference temperature T_ref in K.
    pub temperature_k: f64,
    /// Parameters: ln(k_ref in SI), (n,) Ea in J/mol (same order as [`Model::parameter_names`],
    /// with ln k_ref in place of ln A).
    pub parameters: DVector<f64>,
    /// Their covariance matrix.
    pub covariance: DMatrix<f64>,
}

/// One point of the confidence band of the fitted curve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BandPoint {
    /// Temperature in K.
    pub temperature_k: f64,
    /// Fitted rate constant in SI.
    pub fitted_si: f64,
    /// Lower limit of the confidence band (SI).
    pub lower_si: f64,
    /// Upper limit of the confidence band (SI).
    pub upper_si: f64,
}

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
        /// Fitted n.
        exponent: f64,
        /// Half-width of n's confidence interval.
        half_width: f64,
        /// Confidence level of that interval.
        confidence: f64,
    },
    /// A point whose studentized residual exceeds the Bonferroni critical value.
    Outlier {
        /// 1-based line in the data file.
        line: usize,
        /// Its temperature, K.
        temperature_k: f64,
        /// Its studentized residual.
        studentized: f64,
        /// Critical value: two-sided 5% level divided by the number of points.
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
        /// Chi-square of the fit.
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

/// The result of a fit. Rate constants are SI: (m3/mol)^(m-1)/s.
#[derive(Debug, Clone, PartialEq)]
pub struct RateFit {
    /// The form fitted.
    pub model: Model,
    /// Overall reaction order m (from the data's unit).
    pub order: u32,
    /// Confidence level of intervals and bands.
    pub confidence: f64,
    /// Multiplier of standard errors for the intervals: Student t or normal quantile at
    /// (1 + confidence)/2.
    pub quantile: f64,
    /// Degrees of freedom, N - p.
    pub degrees_of_freedom: usize,
    /// ln(A in SI units, per K^n), (n,) Ea in J/mol.
    pub parameters: DVector<f64>,
    /// Covariance matrix of [`RateFit::parameters`].
    pub covariance: DMatrix<f64>,
    /// Where the scatter comes from.
    pub scatter: Scatter,
    /// Each point against the fit, in file order.
    pub residuals: Vec<Residual>,
    /// The decorrelated form about a reference temperature.
    pub reference: ReferenceForm,
    /// Lowest and highest data temperature, K.
    pub temperature_range_k: (f64, f64),
    /// Warnings, each with its numbers.
    pub warnings: Vec<FitWarning>,
}

impl RateFit {
    /// Pre-exponential factor A in SI ((m3/mol)^(m-1)/s per K^n).
    pub fn prefactor_si(&self) -> f64 {
        self.parameters[0].exp()
    }

    /// Temperature exponent n (0 for the two-parameter form).
    pub fn temperature_exponent(&self) -> f64 {
        match self.model {
            Model::Arrhenius => 0.0,
            Model::ModifiedArrhenius => self.parameters[1],
        }
    }

    /// Activation energy Ea in J/mol.
    pub fn activation_energy_j_per_mol(&self) -> f64 {
        self.parameters[self.parameters.len() - 1]
    }

    /// Standard errors of [`RateFit::parameters`].
    pub fn standard_errors(&self) -> DVector<f64> {
        self.covariance.diagonal().map(|v| v.max(0.0).sqrt())
    }

    /// Correlation matrix of [`RateFit::parameters`].
    pub fn correlation(&self) -> DMatrix<f64> {
        correlation(&self.covariance)
    }

    /// Confidence interval (lower, upper) of parameter `index` at [`RateFit::confidence`].
    pub fn interval(&self, index: usize) -> (f64, f64) {
        let half = self.quantile * self.standard_errors()[index];
        (self.parameters[index] - half, self.parameters[index] + half)
    }

    /// ln of the fitted rate constant (SI) at `t_k` K.
    pub fn ln_rate_constant_si(&self, t_k: f64) -> f64 {
        self.model.design_row(t_k).dot(&self.parameters)
    }

    /// Fitted rate constant (SI) at `t_k` K.
    pub fn rate_constant_si(&self, t_k: f64) -> f64 {
        self.ln_rate_constant_si(t_k).exp()
    }

    /// Standard error of ln k(T) of the fitted curve at `t_k` K.
    pub fn ln_rate_constant_standard_error(&self, t_k: f64) -> f64 {
        let x = self.model.design_row(t_k);
        (x.transpose() * &self.covariance * &x)[0].max(0.0).sqrt()
    }

    /// The confidence band of the fitted curve at `count` temperatures (at least 2) spaced
    /// evenly in 1/T over the data's range.
    pub fn band(&self, count: usize) -> Vec<BandPoint> {
        let (lo, hi) = self.temperature_range_k;
        let count = count.max(2);
        (0..count)
            .map(|i| {
                let f = i as f64 / (count - 1) as f64;
                let t = 1.0 / (1.0 / lo + f * (1.0 / hi - 1.0 / lo));
                let ln_k = self.ln_rate_constant_si(t);
                let half = self.quantile * self.ln_rate_constant_standard_error(t);
                BandPoint {
                    temperature_k: t,
                    fitted_si: ln_k.exp(),
                    lower_si: (ln_k - half).exp(),
                    upper_si: (ln_k + half).exp(),
                }
            })
            .collect()
    }
}

/// Correlation matrix of a covariance matrix.
pub fn correlation(covariance: &DMatrix<f64>) -> DMatrix<f64> {
    let sd = covariance.diagonal().map(|v| v.max(0.0).sqrt());
    DMatrix::from_fn(covariance.nrows(), covariance.ncols(), |i, j| {
        covariance[(i, j)] / (sd[i] * sd[j])
    })
}

/// Fits `data` with `options`.
///
/// Errors: a confidence outside (0, 1) or a non-positive reference temperature
/// ([`FitError::BadOption`]); uncertainties on some points but not on others, or a point
/// with a non-positive or non-finite T, k or uncertainty ([`FitError::BadOption`]); fewer points than parameters, or no more points than parameters
/// without uncertainties ([`FitError::TooFewPoints`]); fewer distinct temperatures than
/// parameters ([`FitError::TooFewTemperatures`]); a rank-deficient design
/// ([`FitError::Degenerate`]).
pub fn fit_rate_constants(data: &RateData, options: &FitOptions) -> Result<RateFit, FitError> {
    let model = options.model;
    let p = model.parameter_count();
    let n = data.points.len();
    if !(options.confidence > 0.0 && options.confidence < 1.0) {
        return Err(FitError::BadOption(format!(
            "confidence level {} is not between 0 and 1 (e.g. 0.95)",
            options.confidence
        )));
    }
    if let Some(t) = options.reference_temperature_k {
        if !(t > 0.0 && t.is_finite()) {
            return Err(FitError::BadOption(format!(
                "reference temperature {t} K is not positive"
            )));
        }
    }
    let usable = |v: f64| v > 0.0 && v.is_finite();
    if let Some(q) = data.points.iter().find(|q| {
        !usable(q.temperature_k)
            || !usable(q.rate_constant_si)
            || q.ln_uncertainty.is_some_and(|u| !usable(u))
    }) {
        return Err(FitError::BadOption(format!(
            "the point of line {} needs T > 0 K, k > 0 and an uncertainty > 0, all finite (T = {} K, k = {}, uncertainty of ln k = {:?})",
            q.line, q.temperature_k, q.rate_constant_si, q.ln_uncertainty
        )));
    }
    let with_uncertainty = data
        .points
        .iter()
        .filter(|q| q.ln_uncertainty.is_some())
        .count();
    if with_uncertainty != 0 && with_uncertainty != n {
        return Err(FitError::BadOption(format!(
            "{with_uncertainty} of {n} points have an uncertainty: give all or none"
        )));
    }
    let weighted = with_uncertainty == n && n > 0;
    let needed = if weighted { p } else { p + 1 };
    if n < needed {
        return Err(FitError::TooFewPoints {
            points: n,
            needed,
            parameters: p,
            weighted,
        });
    }
    let mut temperatures: Vec<f64> = data.points.iter().map(|q| q.temperature_k).collect();
    temperatures.sort_by(f64::total_cmp);
    temperatures.dedup();
    if temperatures.len() < p {
        return Err(FitError::TooFewTemperatures {
            distinct: temperatures.len(),
            parameters: p,
            temperatures_k: temperatures,
        });
    }

    // Weighted, column-scaled design.
    let weights: Vec<f64> = data
        .points
        .iter()
        .map(|q| q.ln_uncertainty.map_or(1.0, |s| 1.0 / (s * s)))
        .collect();
    let y: DVector<f64> =
        DVector::from_iterator(n, data.points.iter().map(|q| q.rate_constant_si.ln()));
    let mut x = DMatrix::zeros(n, p);
    for (i, q) in data.points.iter().enumerate() {
        x.set_row(i, &model.design_row(q.temperature_k).transpose());
    }
    let sqrt_w = DVector::from_iterator(n, weights.iter().map(|w| w.sqrt()));
    let mut z = x.clone();
    for i in 0..n {
        for j in 0..p {
            z[(i, j)] *= sqrt_w[i];
        }
    }
    let y_w = y.component_mul(&sqrt_w);
    let scale: Vec<f64> = (0..p).map(|j| z.column(j).norm()).collect();
    for (j, s) in scale.iter().enumerate() {
        z.column_mut(j).scale_mut(1.0 / s);
    }
    let svd = z.svd(true, true);
    let (Some(u), Some(v_t)) = (svd.u.as_ref(), svd.v_t.as_ref()) else {
        return Err(FitError::Degenerate);
    };
    let s = &svd.singular_values;
    let s_max = s.max();
    if s.min().is_nan() || s.min() <= s_max * 1e-13 {
        return Err(FitError::Degenerate);
    }
    let s_inv = s.map(|v| 1.0 / v);
    let v = v_t.transpose();
    let beta_scaled = &v * DMatrix::from_diagonal(&s_inv) * u.transpose() * &y_w;
    let cov_scaled = &v * DMatrix::from_diagonal(&s_inv.component_mul(&s_inv)) * v.transpose();
    let d_inv = DMatrix::from_diagonal(&DVector::from_iterator(p, scale.iter().map(|s| 1.0 / s)));
    let beta = &d_inv * beta_scaled;
    let unscaled_cov = &d_inv * cov_scaled * &d_inv;

    // Residuals and scatter.
    let fitted = &x * &beta;
    let r = &y - &fitted;
    let e = r.component_mul(&sqrt_w);
    let ssr = e.norm_squared();
    let dof = n - p;
    let leverage: Vec<f64> = (0..n).map(|i| u.row(i).norm_squared()).collect();
    let alpha = 1.0 - options.confidence;
    let (scatter, covariance, quantile) = if weighted {
        let p_value = if dof > 0 {
            1.0 - chi_square_cdf(ssr, dof as f64)
        } else {
            f64::NAN
        };
        (
            Scatter::FromUncertainties {
                chi_square: ssr,
                p_value,
            },
            unscaled_cov,
            normal_quantile(1.0 - alpha / 2.0),
        )
    } else {
        let s2 = ssr / dof as f64;
        (
            Scatter::FromResiduals {
                residual_standard_deviation: s2.sqrt(),
            },
            unscaled_cov * s2,
            student_t_quantile(1.0 - alpha / 2.0, dof as f64),
        )
    };
    let studentized: Vec<f64> = (0..n)
        .map(|i| {
            let one_minus_h = 1.0 - leverage[i];
            if one_minus_h < 1e-10 {
                return f64::NAN;
            }
            if weighted {
                e[i] / one_minus_h.sqrt()
            } else if dof >= 2 {
                let s2_i = (ssr - e[i] * e[i] / one_minus_h) / (dof - 1) as f64;
                e[i] / (s2_i.max(0.0).sqrt() * one_minus_h.sqrt())
            } else {
                f64::NAN
            }
        })
        .collect();
    let residuals: Vec<Residual> = data
        .points
        .iter()
        .enumerate()
        .map(|(i, q)| Residual {
            line: q.line,
            temperature_k: q.temperature_k,
            measured_si: q.rate_constant_si,
            fitted_si: fitted[i].exp(),
            ln_residual: r[i],
            leverage: leverage[i],
            studentized: studentized[i],
        })
        .collect();

    // Decorrelated form about T_ref.
    let t_ref = options.reference_temperature_k.unwrap_or_else(|| {
        let sw: f64 = weights.iter().sum();
        let mean_inv: f64 = data
            .points
            .iter()
            .zip(&weights)
            .map(|(q, w)| w / q.temperature_k)
            .sum::<f64>()
            / sw;
        (1.0 / mean_inv).round()
    });
    let mut m = DMatrix::identity(p, p);
    m.set_row(0, &model.design_row(t_ref).transpose());
    let reference = ReferenceForm {
        temperature_k: t_ref,
        parameters: &m * &beta,
        covariance: &m * &covariance * m.transpose(),
    };

    let (t_min, t_max) = data.temperature_range_k();
    let mut fit = RateFit {
        model,
        order: data.order(),
        confidence: options.confidence,
        quantile,
        degrees_of_freedom: dof,
        parameters: beta,
        covariance,
        scatter,
        residuals,
        reference,
        temperature_range_k: (t_min, t_max),
        warnings: Vec::new(),
    };
    fit.warnings = warnings(&fit, data, weighted);
    Ok(fit)
}

fn warnings(fit: &RateFit, data: &RateData, weighted: bool) -> Vec<FitWarning> {
    let mut out = Vec::new();
    let n = data.points.len();
    let p = fit.model.parameter_count();
    if n < p + 2 {
        out.push(FitWarning::FewPoints {
            points: n,
            parameters: p,
        });
    }
    let (t_min, t_max) = fit.temperature_range_k;
    if fit.model == Model::ModifiedArrhenius {
        let half_width = fit.quantile * fit.standard_errors()[1];
        if half_width.is_nan() || half_width > 1.0 {
            out.push(FitWarning::NarrowRangeForExponent {
                t_min_k: t_min,
                t_max_k: t_max,
                exponent: fit.parameters[1],
                half_width,
                confidence: fit.confidence,
            });
        }
    }
    // Outliers: Bonferroni-corrected two-sided 5% critical value.
    let level = 1.0 - 0.05 / (2.0 * n as f64);
    let critical = if weighted {
        normal_quantile(level)
    } else if fit.degrees_of_freedom >= 2 {
        student_t_quantile(level, (fit.degrees_of_freedom - 1) as f64)
    } else {
        f64::NAN
    };
    for r in &fit.residuals {
        if r.studentized.abs() > critical {
            out.push(FitWarning::Outlier {
                line: r.line,
                temperature_k: r.temperature_k,
                studentized: r.studentized,
                critical,
            });
        }
    }
    if fit.order == 2 {
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
        if k_peak > COLLISION_LIMIT_M3_PER_MOL_S {
            out.push(FitWarning::AboveCollisionLimit {
                temperature_k: t_peak,
                rate_constant_cm3_per_molecule_s: k_peak * 1e6 / AVOGADRO,
                limit_cm3_per_molecule_s: COLLISION_LIMIT_M3_PER_MOL_S * 1e6 / AVOGADRO,
            });
        }
    }
    if let Scatter::FromUncertainties {
        chi_square,
        p_value,
    } = fit.scatter
    {
        if !(0.01..=0.99).contains(&p_value) && !p_value.is_nan() {
            out.push(FitWarning::ChiSquare {
                chi_square,
                degrees_of_freedom: fit.degrees_of_freedom,
                p_value,
            });
        }
    }
    let pressures: Vec<f64> = data.points.iter().filter_map(|q| q.pressure_pa).collect();
    if let (Some(lo), Some(hi)) = (
        pressures.iter().copied().reduce(f64::min),
        pressures.iter().copied().reduce(f64::max),
    ) {
        if hi > 1.5 * lo {
            out.push(FitWarning::PressuresDiffer {
                min_pa: lo,
                max_pa: hi,
            });
        }
    }
    out
}
