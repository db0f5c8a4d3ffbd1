//! The jacketed reactor kind in scenario files: heat exchange U A (T_coolant - T) read from
//! `ua`, `volume` and the coolant temperature, run end to end, and bad input located.

use std::path::{Path, PathBuf};
use stoik_scenario::{parse_scenario, run_scenario};

/// R = 8.314462618 J/(mol K) (CODATA).
const R: f64 = 8.314462618;

fn mechanisms() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../mechanisms")
}

/// Writes `text` as a scenario next to nothing else (the mechanism path is absolute) and
/// runs it.
fn run(text: &str, name: &str) -> stoik_scenario::RunOutcome {
    let dir = std::env::temp_dir().join(format!("stoik-jacketed-{}-{name}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("s.scenario.toml");
    std::fs::write(&path, text).unwrap();
    let outcome = run_scenario(&path).unwrap_or_else(|e| panic!("{e}"));
    let _ = std::fs::remove_dir_all(&dir);
    outcome
}

fn scenario(reactor: &str, initial: &str, end: &str, points: usize) -> String {
    let mechanism = mechanisms().join("hydrogen-oxygen.toml");
    format!(
        "stoik_scenario = 1\nmechanism = {:?}\n[reactor]\n{reactor}\n[initial]\n{initial}\n\
         [output]\nend_time = \"{end}\"\ngrid = {{ spacing = \"linear\", points = {points} }}\n\
         [solver]\nrelative_tolerance = 1e-10\nabsolute_tolerance = \"1e-16 mol/m3\"\n",
        mechanism.display().to_string()
    )
}

#[test]
fn argon_in_a_jacketed_vessel_cools_by_newtons_law() {
    // Argon at 1 atm, 1100 K in a 1 L vessel with U A = 2 W/K and coolant at 300 K. Argon is
    // a monatomic ideal gas, cv = 3/2 R (NIST-JANAF: cp = 20.786 J/(mol K) = 5/2 R), so
    // T = Tc + (T0 - Tc) e^{-t/tau} with tau = c cv / (U A / V), c = P/(R T0) (Newton's law
    // of cooling). The bundled AR polynomial fits cp to 4.4e-6, hence the 1e-4 tolerance
    // on T - Tc.
    let text = scenario(
        "kind = \"jacketed-constant-volume\"\ntemperature = \"1100 K\"\npressure = \"1 atm\"\n\
         ua = \"2 W/K\"\nvolume = \"1 L\"\ncoolant_temperature = \"300 K\"",
        "mole_fractions = { AR = 1.0 }",
        "300 ms",
        31,
    );
    let outcome = run(&text, "argon");
    let p = outcome.profiles();
    let c = 101_325.0 / (R * 1100.0);
    let tau = c * 1.5 * R / (2.0 / 1e-3);
    for (t, temp) in p.times_s.iter().zip(&p.temperatures_k) {
        let expected = 300.0 + 800.0 * (-t / tau).exp();
        assert!(
            (temp - expected).abs() <= 1e-4 * 800.0,
            "T({t}) = {temp}, expected {expected}"
        );
    }
    // At t = 0.3 s (4.3 time constants) the gas has lost 99 % of its excess heat.
    let last = *p.temperatures_k.last().unwrap();
    assert!(last < 300.0 + 0.02 * 800.0, "{last}");
}

#[test]
fn a_jacket_without_exchange_ignites_as_the_adiabatic_vessel() {
    // ua = 0: the jacketed energy balance is the adiabatic one, term for term, so the
    // ignition delay of the bundled hydrogen demo must come out identical.
    let initial = "mole_fractions = { H2 = 0.10, O2 = 0.05, AR = 0.85 }";
    let adiabatic = scenario(
        "kind = \"adiabatic-constant-volume\"\ntemperature = \"1100 K\"\npressure = \"1 atm\"",
        initial,
        "1 ms",
        101,
    );
    let jacketed = scenario(
        "kind = \"jacketed-constant-volume\"\ntemperature = \"1100 K\"\npressure = \"1 atm\"\n\
         ua = \"0 W/K\"\nvolume = \"1 L\"\ncoolant_temperature = \"300 K\"",
        initial,
        "1 ms",
        101,
    );
    let a = run(&adiabatic, "adiabatic")
        .ignition_delay
        .expect("ignites");
    let j = run(&jacketed, "jacket0").ignition_delay.expect("ignites");
    assert_eq!(a.delay_s, j.delay_s);
    // And a strong jacket (U A / V = 1e6 W/(m3 K): a time constant of about 0.25 ms against
    // an ignition delay of about 0.2 ms) must delay it.
    let strong = scenario(
        "kind = \"jacketed-constant-volume\"\ntemperature = \"1100 K\"\npressure = \"1 atm\"\n\
         ua = \"1 kW/K\"\nvolume = \"1 L\"\ncoolant_temperature = \"1100 K\"",
        initial,
        "1 ms",
        101,
    );
    let s = run(&strong, "strong").ignition_delay.expect("ignites");
    assert!(s.delay_s > a.delay_s, "{} vs {}", s.delay_s, a.delay_s);
}

#[test]
fn jacket_mistakes_are_all_reported_at_their_keys() {
    let base = mechanisms();
    let text = "stoik_scenario = 1\nmechanism = \"hydrogen-oxygen.toml\"\n[reactor]\n\
        kind = \"jacketed-constant-volume\"\ntemperature = \"1100 K\"\npressure = \"1 atm\"\n\
        ua = \"2 W/C\"\nvolume = \"-1 L\"\n\
        [initial]\nmole_fractions = { AR = 1.0 }\n[output]\nend_time = \"1 s\"\n";
    let err = parse_scenario(text, "j.toml", &base)
        .unwrap_err()
        .to_string();
    assert!(err.contains("j.toml:7:"), "{err}"); // ua's unit
    assert!(err.contains("W/K"), "{err}");
    assert!(err.contains("j.toml:8:"), "{err}"); // negative volume
    assert!(err.contains("coolant_temperature"), "{err}"); // missing
                                                           // Jacket keys on another kind are refused where they stand.
    let text = "stoik_scenario = 1\nmechanism = \"hydrogen-oxygen.toml\"\n[reactor]\n\
        kind = \"adiabatic-constant-volume\"\ntemperature = \"1100 K\"\npressure = \"1 atm\"\n\
        ua = \"2 W/K\"\n[initial]\nmole_fractions = { AR = 1.0 }\n[output]\nend_time = \"1 s\"\n";
    let err = parse_scenario(text, "k.toml", &base)
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("k.toml:7:") && err.contains("jacketed"),
        "{err}"
    );
}

/// Writes a liquid scenario of the cooled-tank mechanism with the `[reactor]` lines given.
fn liquid_batch(reactor: &str, end: &str, points: usize) -> String {
    let mechanism = mechanisms().join("cooled-tank.toml");
    format!(
        "stoik_scenario = 1\nmechanism = {:?}\n[reactor]\nkind = \"jacketed-constant-volume\"\n\
         temperature = \"360 K\"\nvolume = \"2 m3\"\ncoolant_temperature = \"290 K\"\n{reactor}\n\
         [initial]\nconcentrations = {{ R = 1.0 }}\n\
         [liquid]\nheat_capacity = \"2 MJ/(m3 K)\"\nreaction_enthalpies = {{ \"R -> Q\" = \"0 kJ/mol\" }}\n\
         [output]\nend_time = \"{end}\"\ngrid = {{ spacing = \"linear\", points = {points} }}\n\
         [solver]\nrelative_tolerance = 1e-11\nabsolute_tolerance = \"1e-12 mol/m3\"\n",
        mechanism.display().to_string()
    )
}

#[test]
fn a_failing_jacket_cools_by_newtons_law_with_its_u_a_history() {
    // A liquid with no heat of reaction (dH = 0) in a 2 m3 vessel, rho cp = 2 MJ/(m3 K),
    // coolant at 290 K, U A = 4 kW/K for 10 min, then falling linearly to 1 kW/K over 5 min
    // and held. Newton's law of cooling with a time-dependent coefficient (lumped
    // capacitance, e.g. Incropera & DeWitt, *Fundamentals of Heat and Mass Transfer*, ch. 5;
    // from memory): rho cp V dT/dt = U A(t) (T_c - T), so
    // T(t) = T_c + (T0 - T_c) exp(-integral_0^t U A(s) ds / (rho cp V)), and the integral of a
    // piecewise-linear U A is exact by trapezoids.
    let text = liquid_batch(
        "ua_history = { times = [\"0 min\", \"10 min\", \"15 min\"], values = [\"4 kW/K\", \"4 kW/K\", \"1 kW/K\"] }",
        "1 h",
        61,
    );
    let outcome = run(&text, "ua-history");
    let p = outcome.profiles();
    let (times, ua): ([f64; 3], [f64; 3]) = ([0.0, 600.0, 900.0], [4e3, 4e3, 1e3]);
    let integral = |t: f64| -> f64 {
        let mut sum = 0.0;
        for i in 0..2 {
            let (a, b) = (times[i], times[i + 1].min(t));
            if b > a {
                let ub = ua[i] + (ua[i + 1] - ua[i]) * (b - a) / (times[i + 1] - times[i]);
                sum += 0.5 * (ua[i] + ub) * (b - a);
            }
        }
        sum + ua[2] * (t - 900.0).max(0.0)
    };
    let mut worst: f64 = 0.0;
    for (t, temp) in p.times_s.iter().zip(&p.temperatures_k) {
        let expected = 290.0 + 70.0 * (-integral(*t) / (2e6 * 2.0)).exp();
        let err = (temp - expected).abs() / 70.0;
        worst = worst.max(err);
        assert!(err <= 1e-8, "T({t}) = {temp}, expected {expected}");
    }
    eprintln!("worst error against Newton's law with the U A history: {worst:e} of T0 - Tc");
    // Switched to constant U A = 4 kW/K the vessel is cooler at the end (a check that the
    // history is not ignored): exp(-4e3 * 3600 / 4e6) against the history's larger value.
    let constant = run(&liquid_batch("ua = \"4 kW/K\"", "1 h", 61), "ua-constant");
    let last = p.temperatures_k.len() - 1;
    let expected_constant = 290.0 + 70.0 * (-4e3 * 3600.0 / 4e6f64).exp();
    assert!((constant.profiles().temperatures_k[last] - expected_constant).abs() <= 1e-8 * 70.0);
    assert!(p.temperatures_k[last] > expected_constant + 1.0);
}

#[test]
fn u_a_history_mistakes_are_all_reported_at_their_items() {
    let base = mechanisms();
    let text = liquid_batch(
        "ua_history = { times = [\"1 min\", \"10 min\", \"5 min\"], values = [\"4 kW/K\", \"-1 kW/K\", \"2 kW/K\"] }",
        "1 h",
        11,
    );
    let err = parse_scenario(&text, "u.toml", &base)
        .unwrap_err()
        .to_string();
    // Line 8 holds ua_history: the first time not 0, a time going back, a negative value.
    assert!(err.contains("u.toml:8:"), "{err}");
    assert!(
        err.contains("first time of `ua_history` must be 0 s"),
        "{err}"
    );
    assert!(err.contains("strictly increasing"), "{err}");
    assert!(err.contains("finite and not negative"), "{err}");
    assert_eq!(err.matches("u.toml:8:").count(), 3, "{err}");
    // Both a constant and a history; a history of unequal lengths; a wrong unit.
    let text = liquid_batch(
        "ua = \"4 kW/K\"\nua_history = { times = [\"0 s\"], values = [\"1 kW/K\"] }",
        "1 h",
        11,
    );
    let err = parse_scenario(&text, "v.toml", &base)
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("v.toml:9:") && err.contains("not both"),
        "{err}"
    );
    let text = liquid_batch(
        "ua_history = { times = [\"0 s\", \"1 s\"], values = [\"1 kW/K\"] }",
        "1 h",
        11,
    );
    let err = parse_scenario(&text, "w.toml", &base)
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("w.toml:8:") && err.contains("as many values as times"),
        "{err}"
    );
    let text = liquid_batch(
        "ua_history = { times = [\"0 s\"], values = [\"1 kW/m2\"] }",
        "1 h",
        11,
    );
    let err = parse_scenario(&text, "x.toml", &base)
        .unwrap_err()
        .to_string();
    assert!(err.contains("x.toml:8:") && err.contains("W/K"), "{err}");
}

#[test]
fn a_liquid_stirred_tank_refuses_ideal_gas_feed_settings_at_their_keys() {
    // [liquid] with [flow] is a constant-density tank; inlet mole fractions and a mass flow
    // convert through the ideal gas or the species' molar masses and are refused where
    // they stand (lines 15 and 16 below), the rest of the file being valid.
    let mechanism = mechanisms().join("cooled-tank.toml");
    let text = format!(
        "stoik_scenario = 1\nmechanism = {:?}\n[reactor]\nkind = \"jacketed-constant-volume\"\n\
         temperature = \"300 K\"\nvolume = \"2 m3\"\nua = \"1 kW/K\"\ncoolant_temperature = \"290 K\"\n\
         [initial]\nconcentrations = {{ R = 1.0 }}\n\
         [liquid]\nheat_capacity = \"2 MJ/(m3 K)\"\nreaction_enthalpies = {{ \"R -> Q\" = \"-50 kJ/mol\" }}\n\
         [flow]\ninlet_mole_fractions = {{ R = 1.0 }}\nmass_flow = \"1 kg/s\"\nvolume = \"2 m3\"\n\
         inlet_temperature = \"300 K\"\n\
         [output]\nend_time = \"1 h\"\n",
        mechanism.display().to_string()
    );
    let err = parse_scenario(&text, "l.toml", &mechanisms())
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("l.toml:15:") && err.contains("inlet_concentrations"),
        "{err}"
    );
    assert!(
        err.contains("l.toml:16:") && err.contains("residence_time"),
        "{err}"
    );
}
