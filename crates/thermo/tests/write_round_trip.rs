//! The thermo-file writer's numbers read back exactly: [`toml_float`] against the `toml`
//! crate's parser (a general-purpose TOML 1.0 reader, outside stoik) for every finite f64, and
//! a fitted NIST-JANAF table (M. W. Chase Jr., NIST-JANAF Thermochemical Tables, 4th ed., 1998;
//! copy in tests/data/janaf) written and parsed back bit for bit.

use proptest::prelude::*;
use stoik_thermo::{
    fit_nasa7, read_janaf_tsv, thermo_file_entry, thermo_file_header, toml_float, toml_string,
    FitError, Nasa7Fit,
};

/// `text` as the value of a TOML key, parsed by the `toml` crate.
fn parse_value(text: &str) -> toml::Value {
    let doc: toml::Table = toml::from_str(&format!("x = {text}"))
        .unwrap_or_else(|e| panic!("`{text}` is not a TOML value: {e}"));
    doc["x"].clone()
}

fn float_round_trips(v: f64) -> Result<(), String> {
    let text = toml_float(v).ok_or("refused a finite value")?;
    match parse_value(&text) {
        toml::Value::Float(back) if back.to_bits() == v.to_bits() => Ok(()),
        other => Err(format!("{v:e} written as `{text}` reads back as {other:?}")),
    }
}

#[test]
fn extremes_and_form_boundaries_round_trip() {
    // IEEE 754 binary64 limits, signed zeros, and both sides of the plain-decimal range.
    for v in [
        f64::MAX,
        f64::MIN,
        f64::MIN_POSITIVE,
        f64::from_bits(1),
        -f64::from_bits(1),
        f64::from_bits((1 << 52) - 1),
        0.0,
        -0.0,
        1e-3,
        f64::from_bits(1e-3f64.to_bits() - 1),
        -1e-3,
        1e6,
        f64::from_bits(1e6f64.to_bits() - 1),
        -999_999.999_999_9,
        200.0,
        0.1,
    ] {
        float_round_trips(v).unwrap();
    }
    assert_eq!(toml_float(200.0).as_deref(), Some("200.0"));
    assert_eq!(toml_float(-0.0).as_deref(), Some("-0.0"));
    assert_eq!(toml_float(0.0020364).as_deref(), Some("0.0020364"));
    assert_eq!(toml_float(1e6).as_deref(), Some("1e6"));
    assert_eq!(toml_float(-3.03e-12).as_deref(), Some("-3.03e-12"));
    assert_eq!(toml_float(f64::NAN), None);
    assert_eq!(toml_float(f64::INFINITY), None);
    assert_eq!(toml_float(f64::NEG_INFINITY), None);
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(5_000))]

    /// Any finite f64 (every bit pattern: negatives, subnormals, extremes).
    #[test]
    fn any_finite_f64_round_trips_through_toml(bits in any::<u64>()) {
        let v = f64::from_bits(bits);
        prop_assume!(v.is_finite());
        prop_assert!(float_round_trips(v).is_ok(), "{:?}", float_round_trips(v));
    }

    /// Subnormals of either sign.
    #[test]
    fn subnormals_round_trip_through_toml(mantissa in 1u64..(1 << 52), negative in any::<bool>()) {
        let v = f64::from_bits(mantissa | (u64::from(negative) << 63));
        prop_assert!(float_round_trips(v).is_ok(), "{:?}", float_round_trips(v));
    }

    /// Strings with quotes, backslashes and control characters come back unchanged.
    #[test]
    fn strings_round_trip_through_toml(s in "\\PC*|[\"\\\\\n\t'#=\\[\\]]{0,8}") {
        prop_assert_eq!(parse_value(&toml_string(&s)), toml::Value::String(s));
    }
}

fn h2o_fit() -> Nasa7Fit {
    let path = format!("{}/tests/data/janaf/H2O.tsv", env!("CARGO_MANIFEST_DIR"));
    let table = read_janaf_tsv(&std::fs::read_to_string(path).expect("test data")).expect("parses");
    fit_nasa7(
        &table.points(200.0, 6000.0),
        1000.0,
        table.h298_formation_j_per_mol,
        None,
    )
    .expect("fit succeeds")
}

fn floats(v: &toml::Value) -> Vec<u64> {
    v.as_array()
        .expect("an array")
        .iter()
        .map(|x| x.as_float().expect("a float").to_bits())
        .collect()
}

#[test]
fn a_written_entry_parses_back_to_the_fitted_bits() {
    let fit = h2o_fit();
    let name = "H2O \"water\"";
    let text = thermo_file_header(&["test\nwith a line break"])
        + &thermo_file_entry(name, "table H2O.tsv\n(copy)", &fit).expect("finite fit");
    let doc: toml::Table = toml::from_str(&text).unwrap_or_else(|e| panic!("{e}\n{text}"));
    assert_eq!(doc["stoik_thermo"].as_integer(), Some(1));
    let entry = &doc["species"].as_array().expect("[[species]]")[0];
    assert_eq!(entry["name"].as_str(), Some(name));
    let p = &fit.polynomial;
    let bits = |a: &[f64]| a.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
    assert_eq!(
        floats(&entry["temperature_ranges_k"]),
        bits(&[p.t_low_k, p.t_mid_k, p.t_high_k])
    );
    assert_eq!(floats(&entry["coefficients_low"]), bits(&p.low));
    assert_eq!(floats(&entry["coefficients_high"]), bits(&p.high));
}

#[test]
fn a_non_finite_coefficient_is_refused_with_its_position() {
    let mut fit = h2o_fit();
    fit.polynomial.high[4] = f64::NAN;
    match thermo_file_entry("H2O", "test", &fit) {
        Err(e @ FitError::NonFiniteOutput { .. }) => {
            let message = e.to_string();
            assert!(
                message.contains("species `H2O`: `coefficients_high` entry 5 is NaN"),
                "{message}"
            );
        }
        other => panic!("expected a refusal, got {other:?}"),
    }
}
