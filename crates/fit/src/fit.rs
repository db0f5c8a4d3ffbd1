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

use crate::least_squares::{self, Solution};
use crate::stats::{chi_square_upper_tail, normal_quantile, student_t_quantile};
use crate::{
    FitOptions, Model, ParameterMatrix, RateData, RateFit, RateFitError, ReferenceForm, Residual,
    Scatter,
};
use nalgebra::{DMatrix, DVector};

/// Fits `data` with `options`.
///
/// Errors: a confidence outside (0, 1) or a non-positive reference temperature
/// ([`RateFitError::BadOption`]); uncertainties on some points but not on others, or a point
/// with a non-positive or non-finite T, k or uncertainty ([`RateFitError::BadOption`]); fewer
/// points than parameters, or no more points than parameters without uncertainties
/// ([`RateFitError::TooFewPoints`]); fewer distinct temperatures than parameters
/// ([`RateFitError::TooFewTemperatures`]); a rank-deficient design, or values so extreme that
/// the design is not finite ([`RateFitError::Degenerate`]).
pub fn fit_rate_constants(data: &RateData, options: &FitOptions) -> Result<RateFit, RateFitError> {
    let model = options.model;
    check_options(options)?;
    check_values(data)?;
    let weighted = uncertainties_given(data)?;
    check_point_count(data, model, weighted)?;
    check_distinct_temperatures(data, model)?;

    let weights: Vec<f64> = data
        .points
        .iter()
        .map(|q| q.ln_uncertainty.map_or(1.0, |s| 1.0 / (s * s)))
        .collect();
    let (x, y) = design(data, model);
    let sqrt_w = DVector::from_iterator(weights.len(), weights.iter().map(|w| w.sqrt()));
    let solution = least_squares::solve(&x, &y, &sqrt_w)?;

    let dof = data.points.len() - model.parameter_count();
    let (scatter, covariance, quantile) = scatter(&solution, weighted, dof, options.confidence);
    let residuals = residuals(data, &solution, weighted, dof);
    let t_ref = options
        .reference_temperature_k
        .unwrap_or_else(|| default_reference_temperature(data, &weights));
    let reference = reference_form(model, t_ref, &solution.beta, &covariance);
    let mut fit = RateFit {
        model,
        source: data.source.clone(),
        rate_constant_unit: data.rate_constant_unit.clone(),
        confidence: options.confidence,
        quantile,
        degrees_of_freedom: dof,
        parameters: solution.beta,
        covariance: ParameterMatrix::from_nalgebra(&covariance),
        scatter,
        residuals,
        reference,
        temperature_range_k: data.temperature_range_k(),
        warnings: Vec::new(),
    };
    fit.warnings = crate::warnings::warnings(&fit, data, weighted);
    Ok(fit)
}

/// Valid confidence levels of intervals and bands, (lowest, highest), both included: below
/// 0.5 an interval says less than the standard error; above 0.9999 the Student t quantile of
/// few degrees of freedom grows without bound (and is infinite at 1 in double precision).
pub const CONFIDENCE_RANGE: (f64, f64) = (0.5, 0.9999);

/// Valid reference temperatures of the decorrelated form, (lowest, highest) in K, both
/// included (the temperature range of the scenario file).
pub const REFERENCE_TEMPERATURE_RANGE_K: (f64, f64) = (1.0, 1.0e5);

/// Valid temperatures of rate-data points, (lowest, highest) in K, both included: the same
/// span as the reference temperature. Outside it 1/T or ln T of the design matrix reaches
/// magnitudes (1/T above 1 or ln T beyond 11.5) that no measured rate constant calls for.
pub const DATA_TEMPERATURE_RANGE_K: (f64, f64) = REFERENCE_TEMPERATURE_RANGE_K;

/// Valid standard uncertainties of ln k (the relative uncertainty of k), (lowest, highest),
/// both included: 1e-6 (0.0001 %, far below any measured rate constant) to 10 (a factor of
/// e^10). Outside this range the weights 1/u^2 of the points differ by more than 1e14, which
/// the least-squares solution cannot resolve in double precision.
pub const LN_UNCERTAINTY_RANGE: (f64, f64) = (1.0e-6, 10.0);

/// The confidence and the reference temperature lie in their documented ranges.
fn check_options(options: &FitOptions) -> Result<(), RateFitError> {
    let (low, high) = CONFIDENCE_RANGE;
    if !(options.confidence >= low && options.confidence <= high) {
        return Err(RateFitError::BadOption(format!(
            "confidence level {} is not between {low} and {high} (e.g. 0.95)",
            options.confidence
        )));
    }
    if let Some(t) = options.reference_temperature_k {
        let (low, high) = REFERENCE_TEMPERATURE_RANGE_K;
        if !(t >= low && t <= high) {
            return Err(RateFitError::BadOption(format!(
                "reference temperature {t:e} K is not between {low} and {high:e} K"
            )));
        }
    }
    Ok(())
}

/// Every point has a positive, finite T, k and (if given) uncertainty.
fn check_values(data: &RateData) -> Result<(), RateFitError> {
    let usable = |v: f64| v > 0.0 && v.is_finite();
    match data.points.iter().find(|q| {
        !usable(q.temperature_k)
            || !usable(q.rate_constant_si)
            || q.ln_uncertainty.is_some_and(|u| !usable(u))
    }) {
        Some(q) => Err(RateFitError::BadOption(format!(
            "the point of line {} needs T > 0 K, k > 0 and an uncertainty > 0, all finite (T = {} K, k = {}, uncertainty of ln k = {:?})",
            q.line, q.temperature_k, q.rate_constant_si, q.ln_uncertainty
        ))),
        None => check_uncertainties(data),
    }
}

/// Every uncertainty of ln k lies in [`LN_UNCERTAINTY_RANGE`].
fn check_uncertainties(data: &RateData) -> Result<(), RateFitError> {
    let (low, high) = LN_UNCERTAINTY_RANGE;
    match data.points.iter().find_map(|q| {
        q.ln_uncertainty
            .filter(|u| !(*u >= low && *u <= high))
            .map(|u| (q, u))
    }) {
        Some((q, u)) => Err(RateFitError::BadOption(format!(
            "{}, line {}: the relative uncertainty of k (uncertainty of ln k) is {u:e}; it must be between {low:e} and {high} (0.0001 % to a factor of e^10)",
            data.source, q.line
        ))),
        None => Ok(()),
    }
}

/// Whether the fit is weighted: all points have an uncertainty (`true`) or none (`false`).
fn uncertainties_given(data: &RateData) -> Result<bool, RateFitError> {
    let n = data.points.len();
    let with_uncertainty = data
        .points
        .iter()
        .filter(|q| q.ln_uncertainty.is_some())
        .count();
    if with_uncertainty != 0 && with_uncertainty != n {
        return Err(RateFitError::BadOption(format!(
            "{with_uncertainty} of {n} points have an uncertainty: give all or none"
        )));
    }
    Ok(with_uncertainty == n && n > 0)
}

/// At least as many points as parameters, one more without uncertainties.
fn check_point_count(data: &RateData, model: Model, weighted: bool) -> Result<(), RateFitError> {
    let (n, p) = (data.points.len(), model.parameter_count());
    let needed = if weighted { p } else { p + 1 };
    if n < needed {
        return Err(RateFitError::TooFewPoints {
            points: n,
            lines: data.points.iter().map(|q| q.line).collect(),
            needed,
            parameters: p,
            weighted,
        });
    }
    Ok(())
}

/// At least as many distinct temperatures as parameters.
fn check_distinct_temperatures(data: &RateData, model: Model) -> Result<(), RateFitError> {
    let p = model.parameter_count();
    let mut temperatures: Vec<f64> = data.points.iter().map(|q| q.temperature_k).collect();
    temperatures.sort_by(f64::total_cmp);
    temperatures.dedup();
    if temperatures.len() < p {
        return Err(RateFitError::TooFewTemperatures {
            lines: data.points.iter().map(|q| q.line).collect(),
            distinct: temperatures.len(),
            parameters: p,
            temperatures_k: temperatures,
        });
    }
    Ok(())
}

/// The design matrix (one [`Model::design_row`] per point) and the observations ln k.
fn design(data: &RateData, model: Model) -> (DMatrix<f64>, DVector<f64>) {
    let n = data.points.len();
    let y = DVector::from_iterator(n, data.points.iter().map(|q| q.rate_constant_si.ln()));
    let mut x = DMatrix::zeros(n, model.parameter_count());
    for (i, q) in data.points.iter().enumerate() {
        x.set_row(i, &model.design_row(q.temperature_k).transpose());
    }
    (x, y)
}

/// Where the scatter comes from, the covariance of the parameters and the quantile of the
/// intervals.
fn scatter(
    solution: &Solution,
    weighted: bool,
    dof: usize,
    confidence: f64,
) -> (Scatter, DMatrix<f64>, f64) {
    let ssr = solution.weighted_residuals.norm_squared();
    let alpha = 1.0 - confidence;
    if weighted {
        let p_value = if dof > 0 {
            chi_square_upper_tail(ssr, dof as f64)
        } else {
            f64::NAN
        };
        (
            Scatter::FromUncertainties {
                chi_square: ssr,
                p_value,
            },
            solution.unscaled_covariance.clone(),
            normal_quantile(1.0 - alpha / 2.0),
        )
    } else {
        let s2 = ssr / dof as f64;
        (
            Scatter::FromResiduals {
                residual_standard_deviation: s2.sqrt(),
            },
            &solution.unscaled_covariance * s2,
            student_t_quantile(1.0 - alpha / 2.0, dof as f64),
        )
    }
}

/// Each point against the fit, with its leverage and studentized residual.
fn residuals(data: &RateData, solution: &Solution, weighted: bool, dof: usize) -> Vec<Residual> {
    let e = &solution.weighted_residuals;
    let ssr = e.norm_squared();
    data.points
        .iter()
        .enumerate()
        .map(|(i, q)| {
            let leverage = solution.leverage[i];
            Residual {
                line: q.line,
                temperature_k: q.temperature_k,
                measured_si: q.rate_constant_si,
                fitted_si: solution.fitted[i].exp(),
                ln_residual: solution.residuals[i],
                ln_uncertainty: q.ln_uncertainty,
                leverage,
                studentized: studentized(e[i], leverage, ssr, weighted, dof),
            }
        })
        .collect()
}

/// The externally studentized residual of weighted residual `e` with leverage `h` (known
/// uncertainties: the standardized residual); NaN when it cannot be formed.
fn studentized(e: f64, h: f64, ssr: f64, weighted: bool, dof: usize) -> f64 {
    let one_minus_h = 1.0 - h;
    if one_minus_h < 1e-10 {
        return f64::NAN;
    }
    if weighted {
        e / one_minus_h.sqrt()
    } else if dof >= 2 {
        let s2_i = (ssr - e * e / one_minus_h) / (dof - 1) as f64;
        e / (s2_i.max(0.0).sqrt() * one_minus_h.sqrt())
    } else {
        f64::NAN
    }
}

/// The weighted harmonic mean of the temperatures, rounded to 1 K.
fn default_reference_temperature(data: &RateData, weights: &[f64]) -> f64 {
    let sw: f64 = weights.iter().sum();
    let mean_inv: f64 = data
        .points
        .iter()
        .zip(weights)
        .map(|(q, w)| w / q.temperature_k)
        .sum::<f64>()
        / sw;
    (1.0 / mean_inv).round()
}

/// The parameters and covariance rewritten about `t_ref` (K): ln A becomes ln k(T_ref).
fn reference_form(
    model: Model,
    t_ref: f64,
    beta: &DVector<f64>,
    covariance: &DMatrix<f64>,
) -> ReferenceForm {
    let p = model.parameter_count();
    let mut m = DMatrix::identity(p, p);
    m.set_row(0, &model.design_row(t_ref).transpose());
    let parameters = &m * beta;
    ReferenceForm {
        temperature_k: t_ref,
        parameters: parameters.as_slice().to_vec(),
        covariance: ParameterMatrix::from_nalgebra(&(&m * covariance * m.transpose())),
    }
}
