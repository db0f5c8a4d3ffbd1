//! The `[flow]` section: a continuous stirred tank read from a scenario file, run end to end
//! and checked against the steady-flow balances; feed rates converted; bad input located.

use std::path::{Path, PathBuf};
use stoik_scenario::{run_scenario, RunPlan};

/// R = 8.314462618 J/(mol K) (CODATA).
const R: f64 = 8.314462618;

fn mechanisms() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../mechanisms")
}

#[test]
fn the_stirred_tank_demo_settles_on_the_steady_flow_balances() {
    // At a steady state of a tank at constant pressure, mass flows in as fast as it flows out,
    // so the outflow carries the feed's specific enthalpy (adiabatic steady-flow first law:
    // h_out = h_in per unit mass) and the feed's element mass fractions (atoms are neither
    // made nor destroyed); any chemistry text on open systems, e.g. Fogler, Elements of
    // Chemical Reaction Engineering, 4th ed., ch. 8. After 20 residence times the transient
    // is below e^-20.
    let path = mechanisms().join("hydrogen-stirred-tank.scenario.toml");
    let plan = RunPlan::load(&path).unwrap_or_else(|e| panic!("{e}"));
    let mechanism = plan.mechanism().clone();
    let flow = plan.model().flow.clone().expect("a stirred tank");
    let outcome = run_scenario(&path).unwrap_or_else(|e| panic!("{e}"));
    let p = outcome.profiles();
    let last = p.times_s.len() - 1;
    assert!(p.times_s[last] >= 19.9 * flow.residence_time_s());
    let (c_out, t_out) = (&p.concentrations_mol_per_m3[last], p.temperatures_k[last]);
    let c_in = flow.inlet_mol_per_m3();
    let t_in = flow.inlet_temperature_k();
    let n = mechanism.species.len();
    let mass = |c: &[f64]| -> f64 {
        (0..n)
            .map(|i| c[i] * mechanism.molar_mass_kg_per_mol(i).unwrap())
            .sum()
    };
    let enthalpy = |c: &[f64], t: f64| -> f64 {
        (0..n)
            .map(|i| c[i] * R * t * mechanism.species[i].thermo.unwrap().h_over_rt(t))
            .sum()
    };
    let h_in = enthalpy(c_in, t_in) / mass(c_in);
    let h_out = enthalpy(c_out, t_out) / mass(c_out);
    // Scale: the enthalpy of reaction released, about 1e6 J/kg here.
    let released = (enthalpy(c_out, t_in) / mass(c_out) - h_in).abs();
    assert!(
        (h_out - h_in).abs() <= 1e-6 * released,
        "specific enthalpy out {h_out} J/kg, in {h_in} J/kg (released {released})"
    );
    for element in 0..mechanism.elements.len() {
        let atoms = |c: &[f64]| -> f64 {
            mechanism
                .species
                .iter()
                .zip(c)
                .map(|(s, ci)| {
                    let a = s.composition.as_ref().unwrap();
                    a.iter()
                        .filter(|(e, _)| *e == element)
                        .map(|(_, k)| k * ci)
                        .sum::<f64>()
                })
                .sum::<f64>()
        };
        let (x_in, x_out) = (atoms(c_in) / mass(c_in), atoms(c_out) / mass(c_out));
        assert!(
            (x_in - x_out).abs() <= 1e-7 * x_in.abs().max(1e-12),
            "element {element}: {x_out} mol/kg out, {x_in} in"
        );
    }
    // It burns: far hotter than the feed.
    assert!(t_out > t_in + 500.0, "{t_out} K");
    // The pressure is held.
    let total: f64 = c_out.iter().sum();
    assert!((total * R * t_out - 101_325.0).abs() < 1e-6 * 101_325.0);
}

fn tank_text(flow: &str) -> String {
    let mechanism = mechanisms().join("hydrogen-oxygen.toml");
    format!(
        "stoik_scenario = 1\nmechanism = {:?}\n[reactor]\n\
         kind = \"isothermal-constant-pressure\"\ntemperature = \"600 K\"\npressure = \"2 atm\"\n\
         [initial]\nmole_fractions = {{ AR = 1.0 }}\n[flow]\n{flow}\n\
         [output]\nend_time = \"1 s\"\n",
        mechanism.display().to_string()
    )
}

/// Loads `text` as the scenario file `name` in a folder of its own.
fn load(text: &str, name: &str) -> Result<RunPlan, String> {
    let dir = std::env::temp_dir().join(format!("stoik-tank-{}-{name}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    let plan = RunPlan::load(&path).map_err(|e| e.to_string());
    let _ = std::fs::remove_dir_all(&dir);
    plan
}

#[test]
fn feed_rates_become_residence_times() {
    let tau = |flow: &str| -> f64 {
        let plan = load(&tank_text(flow), "t.toml").unwrap_or_else(|e| panic!("{e}"));
        plan.model().flow.as_ref().unwrap().residence_time_s()
    };
    let feed = "inlet_mole_fractions = { H2 = 0.25, AR = 0.75 }";
    assert_eq!(tau(&format!("residence_time = \"40 ms\"\n{feed}")), 0.04);
    // 2 L at 0.5 L/min: 4 min.
    let v = tau(&format!(
        "volumetric_flow = \"0.5 L/min\"\nvolume = \"2 L\"\n{feed}"
    ));
    assert!((v - 240.0).abs() < 1e-12 * 240.0, "{v}");
    // 2 L fed 1 g/s of the mixture: tau = V rho / mdot with the ideal-gas density
    // rho = P M / (R T_in) (M the mean molar mass: 0.25 x 2.016 + 0.75 x 39.948 g/mol, IUPAC
    // standard atomic weights) at the inlet temperature, 500 K here.
    let m = tau(&format!(
        "mass_flow = \"1 g/s\"\nvolume = \"2 L\"\ninlet_temperature = \"500 K\"\n{feed}"
    ));
    let molar_mass = 0.25 * 2.01588e-3 + 0.75 * 39.948e-3;
    let rho = 2.0 * 101_325.0 * molar_mass / (R * 500.0);
    let expected = 2e-3 * rho / 1e-3;
    assert!(
        (m - expected).abs() < 1e-4 * expected,
        "{m} s against {expected} s"
    );
}

#[test]
fn flow_mistakes_are_all_reported_at_their_keys() {
    // Line 9 is [flow], line 10 its first key.
    let err = |flow: &str| -> String {
        match load(&tank_text(flow), "f.toml") {
            Err(e) => e,
            Ok(_) => panic!("accepted: {flow}"),
        }
    };
    let e = err("inlet_mole_fractions = { AR = 1.0 }");
    assert!(e.contains("f.toml:9:") && e.contains("feed rate"), "{e}");
    let e = err("residence_time = \"1 s\"\nvolumetric_flow = \"1 L/s\"\nvolume = \"1 L\"\ninlet_mole_fractions = { AR = 1.0 }");
    assert!(
        e.contains("f.toml:11:") && e.contains("one feed rate"),
        "{e}"
    );
    let e = err("volumetric_flow = \"1 L/s\"\ninlet_mole_fractions = { AR = 1.0 }");
    assert!(e.contains("needs the tank's `volume`"), "{e}");
    // Several problems at once: a bad unit, a negative time and an unknown species.
    let e =
        err("residence_time = \"-2 s\"\ninlet_concentrations = { XE = 1.0, AR = \"3 furlongs\" }");
    assert!(e.contains("f.toml:10:"), "{e}");
    assert!(e.contains("f.toml:11:"), "{e}");
    // The jacketed kind at constant pressure without a tank is a closed batch whose volume
    // is a state (tests/semi_batch.rs): it needs the volume at the start.
    let text = format!(
        "stoik_scenario = 1\nmechanism = {:?}\n[reactor]\n\
        kind = \"jacketed-constant-pressure\"\ntemperature = \"1100 K\"\npressure = \"1 atm\"\n\
        ua = \"2 W/K\"\ncoolant_temperature = \"300 K\"\n\
        [initial]\nmole_fractions = {{ AR = 1.0 }}\n[output]\nend_time = \"1 s\"\n",
        mechanisms()
            .join("hydrogen-oxygen.toml")
            .display()
            .to_string()
    );
    let e = load(&text, "j.toml").err().unwrap();
    assert!(e.contains("j.toml:4:8: error: missing `volume`"), "{e}");
}
