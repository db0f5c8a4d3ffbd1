//! Measured rate constants, as read from a rate-data CSV or built by hand.

use crate::RateConstantUnit;

/// How the `uncertainty` column is to be read.
#[derive(Debug, Clone, PartialEq)]
pub enum UncertaintyKind {
    /// A multiplicative factor f > 1 (dimensionless): the standard uncertainty of ln k is ln f.
    Factor,
    /// A relative uncertainty in percent: the standard uncertainty of ln k is value/100.
    Percent,
    /// An absolute standard uncertainty of k in the given unit (same order as k): the
    /// standard uncertainty of ln k is u/k (first-order propagation).
    Absolute(RateConstantUnit),
}

/// One measured rate constant.
///
/// Built by hand, its values are checked by [`crate::fit_rate_constants`] (T, k and the
/// uncertainty must be finite and positive).
#[derive(Debug, Clone, PartialEq)]
pub struct RatePoint {
    /// Temperature in K.
    pub temperature_k: f64,
    /// Rate constant in SI, (m3/mol)^(m-1)/s.
    pub rate_constant_si: f64,
    /// Standard uncertainty of ln k (dimensionless), when the file has an `uncertainty`
    /// column.
    pub ln_uncertainty: Option<f64>,
    /// Pressure in Pa, when the file has a `pressure` column.
    pub pressure_pa: Option<f64>,
    /// 1-based line of the row in the file (any number for hand-built points; it names the
    /// point in messages).
    pub line: usize,
}

/// A data set read from a rate-data CSV.
#[derive(Debug, Clone, PartialEq)]
pub struct RateData {
    /// The file as the user named it (or a label such as `<string>`).
    pub source: String,
    /// Unit of the `rate_constant` column (gives the reaction order).
    pub rate_constant_unit: RateConstantUnit,
    /// How the `uncertainty` column is read, if there is one.
    pub uncertainty: Option<UncertaintyKind>,
    /// The rows, in file order.
    pub points: Vec<RatePoint>,
}

impl RateData {
    /// Overall reaction order m from the rate-constant unit (dimensionless).
    pub fn order(&self) -> u32 {
        self.rate_constant_unit.order()
    }

    /// Lowest and highest temperature in K, ignoring NaN (NaN, NaN without points).
    pub fn temperature_range_k(&self) -> (f64, f64) {
        self.points
            .iter()
            .fold((f64::NAN, f64::NAN), |(lo, hi), p| {
                (lo.min(p.temperature_k), hi.max(p.temperature_k))
            })
    }
}
