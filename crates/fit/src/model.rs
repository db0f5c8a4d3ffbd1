//! The fitted forms and the settings of a fit.

use nalgebra::DVector;
use stoik_mechanism::GAS_CONSTANT;

/// Which Arrhenius form is fitted.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Model {
    /// k = A exp(-Ea/(R T)): parameters ln A (A in SI, (m3/mol)^(m-1)/s), Ea (J/mol).
    Arrhenius,
    /// k = A T^n exp(-Ea/(R T)) (T in K): parameters ln A (A in SI per K^n), n
    /// (dimensionless), Ea (J/mol).
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

    /// Names of the parameters in the order of [`crate::RateFit::parameters`].
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

    /// A short name (`two-parameter Arrhenius`, `modified Arrhenius`).
    pub(crate) fn short_name(self) -> &'static str {
        match self {
            Model::Arrhenius => "two-parameter Arrhenius",
            Model::ModifiedArrhenius => "modified Arrhenius",
        }
    }

    /// The design-matrix row at temperature `t_k` (K): 1, [ln T,] -1/(R T).
    pub(crate) fn design_row(self, t_k: f64) -> DVector<f64> {
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
    /// Confidence level of intervals and bands, a fraction in (0, 1); default 0.95.
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
