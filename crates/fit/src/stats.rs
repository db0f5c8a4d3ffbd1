//! The distribution functions the fit needs, from `statrs`: quantiles of Student's t and of
//! the standard normal distribution, and the upper tail of the chi-square distribution.
//! Arguments outside the domain give NaN (the `statrs` functions would panic).

use statrs::distribution::{ChiSquared, ContinuousCDF, Normal, StudentsT};

/// Quantile of Student's t with `dof` degrees of freedom: the t with P(T <= t) = `p`,
/// 0 < p < 1 (NaN outside, or for `dof` <= 0).
pub(crate) fn student_t_quantile(p: f64, dof: f64) -> f64 {
    if !(p > 0.0 && p < 1.0) {
        return f64::NAN;
    }
    StudentsT::new(0.0, 1.0, dof).map_or(f64::NAN, |d| d.inverse_cdf(p))
}

/// Quantile of the standard normal distribution: the z with Φ(z) = `p`, 0 < p < 1 (NaN
/// outside).
pub(crate) fn normal_quantile(p: f64) -> f64 {
    if !(p > 0.0 && p < 1.0) {
        return f64::NAN;
    }
    Normal::new(0.0, 1.0).map_or(f64::NAN, |d| d.inverse_cdf(p))
}

/// Probability that a chi-square variable with `dof` degrees of freedom is at least `x`
/// (NaN for `dof` <= 0 or a NaN `x`).
pub(crate) fn chi_square_upper_tail(x: f64, dof: f64) -> f64 {
    ChiSquared::new(dof).map_or(f64::NAN, |d| d.sf(x))
}

#[cfg(test)]
mod tests {
    // Reference values are quoted with every digit their source gives.
    #![allow(clippy::excessive_precision)]

    use super::*;
    use std::f64::consts::PI;

    #[test]
    fn student_t_quantiles_match_the_tables() {
        // NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.6.7.2 "Critical Values
        // of the Student's t Distribution" (three decimals; upper-tail probability 1 - p):
        // within half a unit of the last digit.
        for (p, dof, table) in [
            (0.975, 6.0, 2.447),
            (0.975, 10.0, 2.228),
            (0.975, 1.0, 12.706),
            (0.995, 5.0, 4.032),
            (0.95, 30.0, 1.697),
        ] {
            let t = student_t_quantile(p, dof);
            assert!(
                (t - table).abs() <= 5e-4,
                "t({p}, {dof}) = {t}, table {table}"
            );
        }
        // scipy 1.17.1, scipy.stats.t.ppf(p, dof) (full double precision), relative 1e-12.
        for (p, dof, scipy) in [
            (0.975, 6.0, 2.4469118511449786),
            (0.975, 10.0, 2.228138851986274),
            (0.975, 1.0, 12.706204736174694),
            (0.995, 5.0, 4.032142983555228),
            (0.95, 30.0, 1.697260886593957),
            (1.0 - 0.05 / 20.0, 7.0, 4.0293371776425015),
        ] {
            let t = student_t_quantile(p, dof);
            assert!(
                ((t - scipy) / scipy).abs() < 1e-12,
                "t({p}, {dof}) = {t}, scipy {scipy}"
            );
        }
        // Symmetry of the distribution: t(0.025, 6) = -t(0.975, 6).
        assert!((student_t_quantile(0.025, 6.0) + 2.4469118511449786).abs() < 1e-11);
    }

    #[test]
    fn student_t_quantiles_match_the_closed_forms() {
        // Closed forms: with 1 degree of freedom t is Cauchy, t_p = tan(π (p - 1/2)); with 2,
        // t_p = (2p - 1) / sqrt(2 p (1 - p)).
        for p in [0.6, 0.75, 0.9, 0.975, 0.999] {
            let cauchy = (PI * (p - 0.5)).tan();
            assert!(((student_t_quantile(p, 1.0) - cauchy) / cauchy).abs() < 1e-12);
            let two = (2.0 * p - 1.0) / (2.0 * p * (1.0 - p)).sqrt();
            assert!(((student_t_quantile(p, 2.0) - two) / two).abs() < 1e-12);
        }
    }

    #[test]
    fn normal_quantiles_match_the_tables() {
        // Abramowitz & Stegun, Handbook of Mathematical Functions, Table 26.5 (percentage
        // points of the normal distribution): Q(z) = 0.025 at z = 1.959963985, Q(z) = 0.005 at
        // z = 2.575829304; within half a unit of the ninth decimal.
        assert!((normal_quantile(0.975) - 1.959963985).abs() < 5e-10);
        assert!((normal_quantile(0.995) - 2.575829304).abs() < 5e-10);
        assert!((normal_quantile(0.025) + 1.959963985).abs() < 5e-10);
    }

    #[test]
    fn chi_square_tails_match_the_tables() {
        // NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.6.7.4 "Critical Values
        // of the Chi-Square Distribution": upper-tail 0.05 critical value 11.070 with 5
        // degrees of freedom, upper-tail 0.01 value 20.090 with 8, lower-tail 0.05 value
        // 3.940 with 10. scipy 1.17.1 (scipy.stats.chi2.ppf) gives the same values to full
        // precision: 11.070497693516351, 20.090235029663233, 3.9402991361190605; at those, the
        // upper tail is 0.05, 0.01 and 0.95 (relative 1e-10).
        for (x, dof, tail) in [
            (11.070497693516351, 5.0, 0.05),
            (20.090235029663233, 8.0, 0.01),
            (3.9402991361190605, 10.0, 0.95),
        ] {
            let q = chi_square_upper_tail(x, dof);
            assert!(((q - tail) / tail).abs() < 1e-10, "Q({x}, {dof}) = {q}");
        }
        // At the three-decimal table value the tail is 0.05 to within the rounding (5e-4 in x
        // moves the tail by about 1e-5 there; pdf 0.019).
        assert!((chi_square_upper_tail(11.070, 5.0) - 0.05).abs() < 2e-5);
        // Closed form: chi-square with 2 degrees of freedom is exponential, Q(x) = exp(-x/2).
        assert!((chi_square_upper_tail(3.0, 2.0) - (-1.5f64).exp()).abs() < 1e-15);
        // scipy 1.17.1, scipy.stats.chi2.sf(150, 8) = 1.9607890424131295e-28: the far tail
        // keeps its relative precision.
        let far = chi_square_upper_tail(150.0, 8.0);
        assert!(((far - 1.9607890424131295e-28) / 1.9607890424131295e-28).abs() < 1e-10);
    }

    #[test]
    fn arguments_outside_the_domain_give_nan_not_a_panic() {
        // Definition of a quantile: p must lie in (0, 1); degrees of freedom must be positive.
        for p in [0.0, 1.0, -0.5, 2.0, f64::NAN] {
            assert!(student_t_quantile(p, 5.0).is_nan());
            assert!(normal_quantile(p).is_nan());
        }
        assert!(student_t_quantile(0.9, 0.0).is_nan());
        assert!(student_t_quantile(0.9, f64::NAN).is_nan());
        assert!(chi_square_upper_tail(1.0, -1.0).is_nan());
        assert!(chi_square_upper_tail(f64::NAN, 3.0).is_nan());
    }
}
