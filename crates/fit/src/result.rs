//! What a fit returns.

use crate::{FitWarning, Model, ParameterMatrix, RateConstantUnit};
use nalgebra::DVector;

/// Most temperatures [`RateFit::band`] evaluates the band at.
pub const MAX_BAND_POINTS: usize = 100_000;

/// Where the scatter of ln k comes from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Scatter {
    /// No uncertainties given: estimated from the residuals.
    FromResiduals {
        /// Residual standard deviation of ln k (dimensionless), s = sqrt(SSR/(N - p)).
        residual_standard_deviation: f64,
    },
    /// Per-point uncertainties given and taken as known.
    FromUncertainties {
        /// Sum of squared weighted residuals (dimensionless).
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
    /// Measured rate constant in SI, (m3/mol)^(m-1)/s.
    pub measured_si: f64,
    /// Fitted rate constant in SI, (m3/mol)^(m-1)/s.
    pub fitted_si: f64,
    /// ln(measured) - ln(fitted), dimensionless.
    pub ln_residual: f64,
    /// Standard uncertainty of ln k of the point (dimensionless), when the data has
    /// uncertainties.
    pub ln_uncertainty: Option<f64>,
    /// Diagonal element of the hat matrix (leverage), dimensionless, in [0, 1].
    pub leverage: f64,
    /// Externally studentized residual (residuals known: standardized residual),
    /// dimensionless; NaN when it cannot be formed (leverage 1, or fewer than 2 degrees of
    /// freedom).
    pub studentized: f64,
}

/// The fit rewritten about a reference temperature:
/// k = k_ref (T/T_ref)^n exp(-(Ea/R)(1/T - 1/T_ref)).
#[derive(Debug, Clone, PartialEq)]
pub struct ReferenceForm {
    pub(crate) temperature_k: f64,
    pub(crate) parameters: Vec<f64>,
    pub(crate) covariance: ParameterMatrix,
}

impl ReferenceForm {
    /// Reference temperature T_ref in K.
    pub fn temperature_k(&self) -> f64 {
        self.temperature_k
    }

    /// Parameters: ln(k_ref in SI), (n,) Ea in J/mol (the order of
    /// [`Model::parameter_names`], with ln k_ref in place of ln A).
    pub fn parameters(&self) -> &[f64] {
        &self.parameters
    }

    /// Covariance matrix of [`ReferenceForm::parameters`] (units: see [`ParameterMatrix`]).
    pub fn covariance(&self) -> &ParameterMatrix {
        &self.covariance
    }

    /// Standard errors of [`ReferenceForm::parameters`], in their units.
    pub fn standard_errors(&self) -> Vec<f64> {
        standard_errors(&self.covariance)
    }
}

/// One point of the confidence band of the fitted curve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BandPoint {
    /// Temperature in K.
    pub temperature_k: f64,
    /// Fitted rate constant in SI, (m3/mol)^(m-1)/s.
    pub fitted_si: f64,
    /// Lower limit of the confidence band in SI.
    pub lower_si: f64,
    /// Upper limit of the confidence band in SI.
    pub upper_si: f64,
}

/// The result of a fit, made by [`crate::fit_rate_constants`]. Rate constants are SI:
/// (m3/mol)^(m-1)/s; Ea in J/mol; T in K.
#[derive(Debug, Clone, PartialEq)]
pub struct RateFit {
    pub(crate) model: Model,
    pub(crate) source: String,
    pub(crate) rate_constant_unit: RateConstantUnit,
    pub(crate) confidence: f64,
    pub(crate) quantile: f64,
    pub(crate) degrees_of_freedom: usize,
    pub(crate) parameters: DVector<f64>,
    pub(crate) covariance: ParameterMatrix,
    pub(crate) scatter: Scatter,
    pub(crate) residuals: Vec<Residual>,
    pub(crate) reference: ReferenceForm,
    pub(crate) temperature_range_k: (f64, f64),
    pub(crate) warnings: Vec<FitWarning>,
}

/// Square roots of the diagonal (negative variances count as 0).
fn standard_errors(covariance: &ParameterMatrix) -> Vec<f64> {
    covariance
        .diagonal()
        .into_iter()
        .map(|v| v.max(0.0).sqrt())
        .collect()
}

impl RateFit {
    /// The form fitted.
    pub fn model(&self) -> Model {
        self.model
    }

    /// The data's file as the user named it.
    pub fn source(&self) -> &str {
        &self.source
    }

    /// The unit of the data's rate constants.
    pub fn rate_constant_unit(&self) -> &RateConstantUnit {
        &self.rate_constant_unit
    }

    /// Overall reaction order m (from the data's unit), dimensionless.
    pub fn order(&self) -> u32 {
        self.rate_constant_unit.order()
    }

    /// Number of data points fitted.
    pub fn point_count(&self) -> usize {
        self.residuals.len()
    }

    /// Confidence level of intervals and bands, a fraction in (0, 1).
    pub fn confidence(&self) -> f64 {
        self.confidence
    }

    /// Multiplier of standard errors for the intervals (dimensionless): Student t or normal
    /// quantile at (1 + confidence)/2.
    pub fn quantile(&self) -> f64 {
        self.quantile
    }

    /// Degrees of freedom, N - p.
    pub fn degrees_of_freedom(&self) -> usize {
        self.degrees_of_freedom
    }

    /// The parameters in the order of [`Model::parameter_names`]: ln(A in SI units, per K^n)
    /// (dimensionless), (n, dimensionless,) Ea in J/mol.
    pub fn parameters(&self) -> &[f64] {
        self.parameters.as_slice()
    }

    /// Covariance matrix of [`RateFit::parameters`] (units: see [`ParameterMatrix`]).
    pub fn covariance(&self) -> &ParameterMatrix {
        &self.covariance
    }

    /// Where the scatter comes from.
    pub fn scatter(&self) -> Scatter {
        self.scatter
    }

    /// Each point against the fit, in file order.
    pub fn residuals(&self) -> &[Residual] {
        &self.residuals
    }

    /// The decorrelated form about a reference temperature.
    pub fn reference(&self) -> &ReferenceForm {
        &self.reference
    }

    /// Lowest and highest data temperature, K.
    pub fn temperature_range_k(&self) -> (f64, f64) {
        self.temperature_range_k
    }

    /// Warnings, each with its numbers.
    pub fn warnings(&self) -> &[FitWarning] {
        &self.warnings
    }

    /// Pre-exponential factor A in SI ((m3/mol)^(m-1)/s per K^n).
    pub fn prefactor_si(&self) -> f64 {
        self.parameters[0].exp()
    }

    /// Temperature exponent n, dimensionless (0 for the two-parameter form).
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

    /// Standard errors of [`RateFit::parameters`], in their units.
    pub fn standard_errors(&self) -> Vec<f64> {
        standard_errors(&self.covariance)
    }

    /// Correlation matrix of [`RateFit::parameters`] (dimensionless).
    pub fn correlation(&self) -> ParameterMatrix {
        self.covariance.correlation()
    }

    /// Confidence interval (lower, upper) of parameter `index` at [`RateFit::confidence`], in
    /// the parameter's unit; `None` for an index past the last parameter.
    pub fn interval(&self, index: usize) -> Option<(f64, f64)> {
        let value = *self.parameters.get(index)?;
        let half = self.quantile * *self.standard_errors().get(index)?;
        Some((value - half, value + half))
    }

    /// ln of the fitted rate constant in SI at `t_k` K (NaN for a NaN temperature).
    pub fn ln_rate_constant_si(&self, t_k: f64) -> f64 {
        self.model.design_row(t_k).dot(&self.parameters)
    }

    /// Fitted rate constant in SI ((m3/mol)^(m-1)/s) at `t_k` K.
    pub fn rate_constant_si(&self, t_k: f64) -> f64 {
        self.ln_rate_constant_si(t_k).exp()
    }

    /// Standard error of ln k(T) of the fitted curve at `t_k` K (dimensionless).
    pub fn ln_rate_constant_standard_error(&self, t_k: f64) -> f64 {
        let x = self.model.design_row(t_k);
        (x.transpose() * self.covariance.to_nalgebra() * &x)[0]
            .max(0.0)
            .sqrt()
    }

    /// The confidence band of the fitted curve at `count` temperatures (clamped to
    /// 2..=[`MAX_BAND_POINTS`]) spaced evenly in 1/T over the data's range.
    pub fn band(&self, count: usize) -> Vec<BandPoint> {
        self.ln_band(count)
            .into_iter()
            .map(|(t, ln_k, half)| BandPoint {
                temperature_k: t,
                fitted_si: ln_k.exp(),
                lower_si: (ln_k - half).exp(),
                upper_si: (ln_k + half).exp(),
            })
            .collect()
    }

    /// The band in logarithms: (T in K, fitted ln k in SI, half-width of the band in ln k)
    /// at `count` temperatures as in [`RateFit::band`].
    pub(crate) fn ln_band(&self, count: usize) -> Vec<(f64, f64, f64)> {
        let (lo, hi) = self.temperature_range_k;
        let count = count.clamp(2, MAX_BAND_POINTS);
        (0..count)
            .map(|i| {
                let f = i as f64 / (count - 1) as f64;
                let t = 1.0 / (1.0 / lo + f * (1.0 / hi - 1.0 / lo));
                let ln_k = self.ln_rate_constant_si(t);
                let half = self.quantile * self.ln_rate_constant_standard_error(t);
                (t, ln_k, half)
            })
            .collect()
    }
}
