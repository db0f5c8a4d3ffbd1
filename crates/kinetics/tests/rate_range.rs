//! Rate constants that are not finite over the checked temperature range are errors of the
//! mechanism, located at the step (issue 12, section 4).

use stoik_kinetics::{rate_constant_range_errors, RATE_CHECK_RANGE_K};
use stoik_mechanism::parse_mechanism;

fn mechanism(forward: &str) -> stoik_mechanism::Mechanism {
    let text = format!(
        "stoik_mechanism = 1\n[units]\nactivation_energy = \"K\"\n[[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n[[step]]\nequation = \"A -> B\"\nforward = {{ {forward} }}\n[[step]]\nequation = \"B -> A\"\nforward = {{ prefactor = 1, temperature_exponent = 0, activation_energy = 1000 }}\n"
    );
    parse_mechanism(&text, "m.toml")
        .expect("the mechanism loads")
        .mechanism
}

#[test]
fn a_negative_activation_temperature_of_a_million_kelvin_overflows_below_1409_k() {
    // k = exp(1e6 K / T) overflows a double when 1e6 / T > ln(DBL_MAX) = 709.78 (IEEE 754
    // binary64: DBL_MAX = 1.7976931348623157e308), that is below T = 1408.9 K, which lies
    // inside the default range 200 K to 3500 K.
    assert_eq!(RATE_CHECK_RANGE_K, (200.0, 3500.0));
    let m = mechanism("prefactor = 1, temperature_exponent = 0, activation_energy = -1e6");
    let errors = rate_constant_range_errors(&m, "m.toml", RATE_CHECK_RANGE_K);
    assert_eq!(errors.len(), 1, "{errors:?}");
    let at = errors[0].location.expect("located at the step");
    // The first [[step]] header is on line 8.
    assert_eq!((at.line, at.column), (8, 1));
    assert!(errors[0]
        .message
        .contains("forward rate constant of step `A -> B` is inf"));
    // The reported temperature is the first grid point (from the hot end) past the limit.
    let limit = 1e6 / f64::MAX.ln();
    assert!((limit - 1408.9).abs() < 0.1);
    let t: f64 = errors[0]
        .message
        .split(" at ")
        .nth(1)
        .and_then(|rest| rest.split(' ').next())
        .and_then(|x| x.parse().ok())
        .expect("a temperature in the message");
    assert!(t < limit && t > 1300.0, "{t}");
    // The same step over 1500 K to 3500 K (above the limit) is clean.
    assert!(rate_constant_range_errors(&m, "m.toml", (1500.0, 3500.0)).is_empty());
}

#[test]
fn a_temperature_exponent_of_100_overflows_at_the_hot_end() {
    // k = 1e10 T^100: at 3500 K, log10 k = 10 + 100 log10(3500) = 364 > log10(DBL_MAX) =
    // 308.25; at 200 K, 10 + 230.1 = 240 (finite). The loader takes the step (its prefactor
    // is finite); the range check refuses it at the hot end, 3500 K.
    let m = mechanism("prefactor = 1e10, temperature_exponent = 100, activation_energy = 0");
    let errors = rate_constant_range_errors(&m, "m.toml", RATE_CHECK_RANGE_K);
    assert_eq!(errors.len(), 1, "{errors:?}");
    assert!(
        errors[0].message.contains("is inf at 3500 K"),
        "{}",
        errors[0].message
    );
    // A well-behaved step (the second one: k = exp(-1000 K / T)) gives no error anywhere.
    let fine = mechanism("prefactor = 1, temperature_exponent = 0, activation_energy = 0");
    assert!(rate_constant_range_errors(&fine, "m.toml", RATE_CHECK_RANGE_K).is_empty());
}

#[test]
fn a_tiny_prefactor_times_a_huge_temperature_factor_stays_finite() {
    // k = 1e-50 T^100 at 3500 K: log10 k = -50 + 100 log10(3500) = 304.4068 (finite), although
    // 3500^100 = 10^354.4 alone overflows a double (IEEE 754: DBL_MAX about 10^308.25). The
    // evaluation must not overflow on the way: ln k = ln(1e-50) + 100 ln(3500), exact calculus.
    let m = mechanism("prefactor = 1e-50, temperature_exponent = 100, activation_energy = 0");
    assert!(rate_constant_range_errors(&m, "m.toml", RATE_CHECK_RANGE_K).is_empty());
    let expected = (1e-50f64.ln() + 100.0 * 3500f64.ln()).exp();
    assert!((expected.log10() - 304.4068).abs() < 1e-4, "{expected:e}");
    let by_mechanism = m.steps[0].forward.rate_constant(3500.0);
    let kinetics = stoik_kinetics::Kinetics::compile(&m).expect("compiles");
    let by_kinetics = kinetics.rate_constants(3500.0).forward[0];
    for k in [by_mechanism, by_kinetics] {
        assert!(
            ((k - expected) / expected).abs() < 1e-12,
            "{k:e} vs {expected:e}"
        );
    }
    // The same the other way: 1e250 T^-100 at 3500 K is 10^-104.4, though 3500^-100 = 10^-354
    // underflows alone.
    let m = mechanism("prefactor = 1e250, temperature_exponent = -100, activation_energy = 0");
    let expected = (1e250f64.ln() - 100.0 * 3500f64.ln()).exp();
    let kinetics = stoik_kinetics::Kinetics::compile(&m).expect("compiles");
    for k in [
        m.steps[0].forward.rate_constant(3500.0),
        kinetics.rate_constants(3500.0).forward[0],
    ] {
        assert!(
            ((k - expected) / expected).abs() < 1e-12,
            "{k:e} vs {expected:e}"
        );
    }
}
