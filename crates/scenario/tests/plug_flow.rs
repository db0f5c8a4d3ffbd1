//! `[plug_flow]` scenarios run end to end: the tube's geometry, flow rate, pressure profile
//! and wall read from the file and checked against closed forms on argon (no reaction).

use std::path::{Path, PathBuf};
use stoik_scenario::run_scenario;

/// R = 8.314462618 J/(mol K) (CODATA).
const R: f64 = 8.314462618;
/// Molar mass of argon, kg/mol (IUPAC standard atomic weight 39.95).
const M_AR: f64 = 39.95e-3;

fn mechanisms() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../mechanisms")
}

/// Writes a scenario of `reactor` and `plug` (the `[plug_flow]` keys) for pure argon at 1 atm
/// and runs it.
fn run(reactor: &str, plug: &str, name: &str) -> stoik_scenario::RunOutcome {
    let mechanism = mechanisms().join("hydrogen-oxygen.toml");
    let text = format!(
        "stoik_scenario = 1\nmechanism = {:?}\n[reactor]\n{reactor}\npressure = \"1 atm\"\n\
         [initial]\nmole_fractions = {{ AR = 1.0 }}\n[plug_flow]\n{plug}\n\
         [solver]\nrelative_tolerance = 1e-10\nabsolute_tolerance = \"1e-16 mol/m3\"\n",
        mechanism.display().to_string()
    );
    let dir = std::env::temp_dir().join(format!("stoik-plug-{}-{name}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("s.scenario.toml");
    std::fs::write(&path, text).unwrap();
    let outcome = run_scenario(&path).unwrap_or_else(|e| panic!("{e}"));
    let _ = std::fs::remove_dir_all(&dir);
    outcome
}

#[test]
fn argon_heated_through_the_wall_follows_the_heat_exchanger_closed_form() {
    // Argon (cp = 5/2 R, NIST-JANAF 20.786 J/(mol K); the bundled polynomial fits it to
    // 4.4e-6, hence the 1e-4 tolerance) at 400 K, 1 atm, 5 m/s into a 2 cm tube with U = 50
    // W/(m2 K) at 900 K: T_wall - T = (T_wall - T0) exp(-U pi d z / (mdot cp)) (constant wall
    // temperature, F. P. Incropera, D. P. DeWitt, Fundamentals of Heat and Mass Transfer, 6th
    // ed., eq. 8.42b), mdot = rho0 u0 pi d^2 / 4, cp = 5/2 R / M (J/(kg K)).
    let outcome = run(
        "kind = \"adiabatic-constant-pressure\"\ntemperature = \"400 K\"",
        "length = \"3 m\"\ndiameter = \"2 cm\"\ninlet_velocity = \"5 m/s\"\n\
         wall_heat_transfer_coefficient = \"50 W/m2/K\"\nwall_temperature = \"900 K\"\npoints = 31",
        "wall",
    );
    let p = outcome.profiles();
    let z = outcome
        .distances_m
        .as_ref()
        .expect("a plug flow has distances");
    assert_eq!(z.len(), 31);
    let d = 0.02;
    let rho0 = 101_325.0 / (R * 400.0) * M_AR;
    let mdot = rho0 * 5.0 * std::f64::consts::PI * d * d / 4.0;
    let cp = 2.5 * R / M_AR;
    for (&z, &temp) in z.iter().zip(&p.temperatures_k) {
        let expected = 500.0 * (-50.0 * std::f64::consts::PI * d * z / (mdot * cp)).exp();
        assert!(
            ((900.0 - temp) - expected).abs() <= 1e-4 * expected.max(1.0),
            "T_wall - T at {z} m: {}, expected {expected}",
            900.0 - temp
        );
    }
    assert_eq!(z.last(), Some(&3.0));
}

#[test]
fn argon_along_a_pressure_drop_scales_with_the_pressure() {
    // Isothermal argon: c(z) = P(z) / (R T) (ideal gas at fixed temperature), the profile
    // starting at the inlet's 1 atm; the residence time is the integral of rho A / mdot dz,
    // rho = M P / (R T), over a linear P: trapezoids, exact.
    let outcome = run(
        "kind = \"isothermal-constant-pressure\"\ntemperature = \"600 K\"",
        "length = \"2 m\"\narea = \"3 cm2\"\nmass_flow = \"0.5 g/s\"\n\
         pressure_profile = { distances = [0, 2], pressures = [\"1 atm\", \"0.8 atm\"] }\n\
         distances = [0.5, 1, 1.5]",
        "pressure",
    );
    let p = outcome.profiles();
    let z = outcome
        .distances_m
        .as_ref()
        .expect("a plug flow has distances");
    assert_eq!(z, &[0.0, 0.5, 1.0, 1.5, 2.0]);
    let pressure = |z: f64| 101_325.0 * (1.0 - 0.1 * z);
    for (i, &z) in z.iter().enumerate() {
        let c = p.concentrations_mol_per_m3[i].iter().sum::<f64>();
        let expected = pressure(z) / (R * 600.0);
        assert!(((c - expected) / expected).abs() < 1e-8, "c({z}) = {c}");
        let integral = z * (pressure(0.0) + pressure(z)) / 2.0;
        let t = M_AR * 3e-4 * integral / (R * 600.0 * 0.5e-3);
        assert!(
            (p.times_s[i] - t).abs() <= 1e-8 * t,
            "t({z}) = {}, expected {t}",
            p.times_s[i]
        );
    }
}
