//! Reverse rate constants from thermochemistry, equilibrium constants, step energetics and
//! the collision-limit check, on mechanisms whose species take their polynomials from
//! mechanisms/thermo/janaf-nasa7.toml (fitted to NIST-JANAF, 4th ed.).
//!
//! Every rate parameter below is invented for the test (marked so); the checks are against
//! NIST-JANAF values (M. W. Chase Jr., NIST-JANAF Thermochemical Tables, 4th ed., J. Phys.
//! Chem. Ref. Data Monograph 9, 1998) or
//! against closed forms computed by hand in the test from the polynomials.

use stoik_kinetics::{
    collision_limit_warnings, step_energetics, Kinetics, COLLISION_LIMIT_M3_PER_MOL_S,
};
use stoik_mechanism::{parse_mechanism_in, Mechanism, Severity, AVOGADRO};

const R: f64 = 8.314462618;
const P0: f64 = 1e5;

use stoik_testsupport::mechanisms_dir;

/// Loads mechanism text whose `thermo_files` are relative to `mechanisms/`.
fn load(text: &str) -> Mechanism {
    parse_mechanism_in(text, "test.toml", Some(&mechanisms_dir()))
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism
}

const HEADER: &str = r#"
stoik_mechanism = 1
thermo_files = ["thermo/janaf-nasa7.toml"]
[[species]]
name = "H2"
atoms = { H = 2 }
[[species]]
name = "O2"
atoms = { O = 2 }
[[species]]
name = "H2O"
atoms = { H = 2, O = 1 }
[[species]]
name = "H"
atoms = { H = 1 }
"#;

#[test]
fn water_formation_equilibrium_constant_matches_janaf() {
    // Invented forward parameters; the reverse comes from thermochemistry.
    let m = load(&format!(
        "{HEADER}\n[[step]]\nequation = \"2 H2 + O2 <=> 2 H2O\"\nforward = {{ prefactor = 1e10 }}\n"
    ));
    let kinetics = Kinetics::compile(&m).unwrap();
    let (mut kp, mut kc) = ([0.0], [0.0]);
    // NIST-JANAF 4th ed., H2O(g): log10 Kf = 10.060 at 1000 K and 3.540 at 2000 K; the step is
    // twice the formation reaction, so log10 Kp (pressures in bar) = 2 log10 Kf.
    for (t, log_kf) in [(1000.0, 10.060), (2000.0, 3.540)] {
        kinetics.equilibrium_constants(t, &mut kp, &mut kc);
        let log_kp = kp[0].log10();
        assert!(
            (log_kp - 2.0 * log_kf).abs() < 0.01,
            "T = {t} K: log10 Kp = {log_kp}, JANAF 2 x {log_kf}"
        );
        // Kc = Kp (P0/(R T))^dn with dn = 2 - 3 = -1 (definition, common practice).
        let expected_kc = kp[0] * (P0 / (R * t)).powi(-1);
        assert!(
            (kc[0] / expected_kc - 1.0).abs() < 1e-12,
            "{} vs {expected_kc}",
            kc[0]
        );
    }
}

#[test]
fn hydrogen_dissociation_reverse_rate_is_forward_over_kc() {
    // Invented forward parameters, with a mixture third body (which does not enter Kc).
    let m = load(&format!(
        "{HEADER}\n[[step]]\nequation = \"H2 <=> H + H\"\nforward = {{ prefactor = 4.6e19, temperature_exponent = -1.4, activation_energy = 436000 }}\nthird_body = {{}}\n"
    ));
    let kinetics = Kinetics::compile(&m).unwrap();
    let t = 2000.0;
    let k = kinetics.rate_constants(t);
    let h2 = m.species[0].thermo.expect("H2 thermo");
    let h = m.species[3].thermo.expect("H thermo");
    // By hand: dG0 = 2 G0(H) - G0(H2); Kp = exp(-dG0/(R T)); Kc = Kp (P0/(R T))^(+1).
    let dg = 2.0 * h.gibbs_j_per_mol(t) - h2.gibbs_j_per_mol(t);
    let kp = (-dg / (R * t)).exp();
    let kc = kp * P0 / (R * t);
    // NIST-JANAF 4th ed., H(g): log10 Kf = -2.788 at 2000 K, so log10 Kp = 2 x -2.788.
    assert!(
        (kp.log10() + 5.576).abs() < 0.01,
        "log10 Kp = {}",
        kp.log10()
    );
    let expected = k.forward[0] / kc;
    assert!(
        (k.reverse[0] / expected - 1.0).abs() < 1e-10,
        "kr = {} vs kf/Kc = {expected}",
        k.reverse[0]
    );
}

#[test]
fn explicit_reverse_parameters_win_over_thermochemistry() {
    let m = load(&format!(
        "{HEADER}\n[[step]]\nequation = \"H2 <=> H + H\"\nforward = {{ prefactor = 1e5 }}\nreverse = {{ prefactor = 7 }}\n"
    ));
    let k = Kinetics::compile(&m).unwrap().rate_constants(2000.0);
    // The file's reverse prefactor 7 cm3/(mol s) = 7e-6 m3/(mol s) (docs/file-format.md units).
    assert!(
        (k.reverse[0] / 7e-6 - 1.0).abs() < 1e-12,
        "{}",
        k.reverse[0]
    );
}

#[test]
fn water_formation_enthalpy_and_reverse_activation_energy() {
    // Invented forward parameters: Ea = 150 kJ/mol, n = 0.5.
    let m = load(&format!(
        "{HEADER}\n[[step]]\nequation = \"H2 + 0.5 O2 <=> H2O\"\nforward = {{ prefactor = 1e9, temperature_exponent = 0.5, activation_energy = 150000 }}\n"
    ));
    let e = step_energetics(&m, 298.15)[0].expect("all species have thermo");
    // NIST-JANAF 4th ed., H2O(g): formation enthalpy -241.826 kJ/mol at 298.15 K.
    assert!(
        (e.delta_h_j_per_mol + 241_826.0).abs() < 100.0,
        "{}",
        e.delta_h_j_per_mol
    );
    assert!(e.exothermic);
    // NIST-JANAF 4th ed.: formation Gibbs energy of H2O(g) -228.582 kJ/mol at 298.15 K.
    assert!(
        (e.delta_g_j_per_mol + 228_582.0).abs() < 100.0,
        "{}",
        e.delta_g_j_per_mol
    );

    // The implied reverse activation energy is the Arrhenius-plot slope of kr = kf / Kc:
    // Ea_r = R T^2 d ln kr / dT (definition, common practice), here by central differences
    // on the rate constants the kinetics evaluates, at 1500 K.
    let t = 1500.0;
    let e = step_energetics(&m, t)[0].expect("thermo");
    let kinetics = Kinetics::compile(&m).unwrap();
    let dt = 0.01;
    let kr_plus = kinetics.rate_constants(t + dt).reverse[0];
    let kr_minus = kinetics.rate_constants(t - dt).reverse[0];
    let slope = R * t * t * (kr_plus.ln() - kr_minus.ln()) / (2.0 * dt);
    assert!(
        (e.reverse_activation_energy_j_per_mol - slope).abs() < 5.0,
        "Ea_r = {} vs R T^2 dln kr/dT = {slope}",
        e.reverse_activation_energy_j_per_mol
    );
    // Ea_r = Ea_f - dU with dU = dH - dn R T (van 't Hoff for Kc), dn = -1/2; forward
    // effective Ea = 150 kJ/mol + n R T.
    let ea_f = 150_000.0 + 0.5 * R * t;
    assert!((e.forward_activation_energy_j_per_mol - ea_f).abs() < 1e-6);
    let du = e.delta_h_j_per_mol + 0.5 * R * t;
    assert!((e.reverse_activation_energy_j_per_mol - (ea_f - du)).abs() < 1e-6);
}

#[test]
fn steps_lacking_thermochemistry_give_nan_equilibrium_constants() {
    let m = load(
        r#"
stoik_mechanism = 1
thermo_files = ["thermo/janaf-nasa7.toml"]
[[species]]
name = "H2"
[[species]]
name = "X"
[[step]]
equation = "H2 -> X"
forward = { prefactor = 1 }
"#,
    );
    assert!(step_energetics(&m, 1000.0)[0].is_none());
    let (mut kp, mut kc) = ([0.0], [0.0]);
    Kinetics::compile(&m)
        .unwrap()
        .equilibrium_constants(1000.0, &mut kp, &mut kc);
    assert!(kp[0].is_nan() && kc[0].is_nan());
}

fn collision_mechanism(prefactor_cm3_per_mol_s: f64) -> Mechanism {
    // Invented: a bimolecular step with a temperature-independent rate constant.
    load(&format!(
        r#"
stoik_mechanism = 1
[[species]]
name = "A"
[[species]]
name = "B"
[[species]]
name = "C"
[[step]]
equation = "A + B -> C"
forward = {{ prefactor = {prefactor_cm3_per_mol_s:e} }}
"#
    ))
}

#[test]
fn collision_limit_warning_fires_above_the_limit_only() {
    // Collision limit about 1e-10 cm3/(molecule s) (common practice) = 6.02e13 cm3/(mol s).
    let limit_cm3_per_mol_s = 1e-10 * AVOGADRO;
    assert!((COLLISION_LIMIT_M3_PER_MOL_S / (limit_cm3_per_mol_s * 1e-6) - 1.0).abs() < 1e-12);

    let warnings = collision_limit_warnings(&collision_mechanism(1e15), "c.toml");
    assert_eq!(warnings.len(), 1, "{warnings:?}");
    let w = &warnings[0];
    assert_eq!(w.severity, Severity::Warning);
    let loc = w.location.expect("located");
    // The [[step]] header is on line 9 of the text above (it starts with a blank line).
    assert_eq!((loc.line, loc.column), (9, 1));
    // 1e15 cm3/(mol s) = 1e9 m3/(mol s) = 1.661e-9 cm3/(molecule s).
    assert!(w.message.contains("1.000e9 m3/(mol s)"), "{}", w.message);
    assert!(
        w.message.contains("1.661e-9 cm3/(molecule s)"),
        "{}",
        w.message
    );
    assert!(w.message.contains("6.022e7"), "{}", w.message);
    assert!(w.to_string().starts_with("c.toml:9:1: warning:"));

    assert!(collision_limit_warnings(&collision_mechanism(1e13), "c.toml").is_empty());
}

#[test]
fn collision_limit_checks_thermochemical_reverse_rates() {
    // Invented forward parameters for H2 + O2 <=> H + HO2 (strongly endothermic, dH about
    // +220 kJ/mol): kf = 1e15 cm3/(mol s) exp(-240 kJ/mol / RT) stays below the limit on
    // 300-3000 K (largest 1e15 exp(-9.62) = 6.6e10 cm3/(mol s) at 3000 K), while the implied
    // reverse (Ea_r = 240 - 220 kJ/mol, dS small) exceeds it at the hot end.
    let m = load(&format!(
        "{HEADER}[[species]]\nname = \"HO2\"\natoms = {{ H = 1, O = 2 }}\n[[step]]\nequation = \"H2 + O2 <=> H + HO2\"\nforward = {{ prefactor = 1e15, activation_energy = 240000 }}\n"
    ));
    let warnings = collision_limit_warnings(&m, "r.toml");
    assert_eq!(warnings.len(), 1, "{warnings:?}");
    assert!(
        warnings[0].message.starts_with("reverse rate constant"),
        "{}",
        warnings[0].message
    );
    // Cross-check by hand: kr = kf / Kc at 3000 K from the polynomials (Kc = Kp, dn = 0).
    let t = 3000.0;
    let g = |i: usize| m.species[i].thermo.expect("thermo").gibbs_j_per_mol(t);
    let dg = g(3) + g(4) - g(0) - g(1);
    let kf = 1e15 * 1e-6 * (-240_000.0 / (R * t)).exp();
    let kr = kf / (-dg / (R * t)).exp();
    assert!(kr > COLLISION_LIMIT_M3_PER_MOL_S, "{kr}");
    assert!(
        warnings[0].message.contains("at 3000 K"),
        "{}",
        warnings[0].message
    );
    assert!(
        warnings[0]
            .message
            .contains(&format!("{kr:.3e} m3/(mol s)")),
        "{} vs {kr:.3e}",
        warnings[0].message
    );
}

/// Hard-sphere collision theory (Atkins' *Physical Chemistry* worked example, cross-sections
/// from memory: sigma(H2) = 0.27 nm2, sigma(C2H4) = 0.64 nm2, so d = sqrt(sigma / pi)); the
/// reference value A = 6.971e11 dm3 mol-1 s-1 at 628 K is recomputed from the formula.
#[test]
fn hard_sphere_rate_constant_matches_the_collision_theory_example() {
    let d = |sigma_nm2: f64| (sigma_nm2 / std::f64::consts::PI).sqrt() * 1e-9;
    // Molar masses from IUPAC standard atomic weights (H 1.008, C 12.011).
    let k = stoik_kinetics::hard_sphere_rate_constant(d(0.27), d(0.64), 2.016e-3, 28.054e-3, 628.0);
    let expected = 6.971e11 * 1e-3; // dm3 -> m3
    assert!((k / expected - 1.0).abs() < 1e-3, "{k:e} vs {expected:e}");
}

/// With collision diameters the limit is the hard-sphere rate constant at each temperature:
/// k = 5e13 cm3/(mol s) is below the common-practice constant (6.02e13) but above the hard-
/// sphere value for two H atoms of diameter 0.08 nm at 300 K,
/// N_A pi d^2 sqrt(8 k_B T / (pi mu)) = 4.3e13 cm3/(mol s) (formula evaluated in the test).
#[test]
fn collision_diameters_give_a_temperature_dependent_hard_sphere_limit() {
    let text = |diameters: &str| {
        format!(
            "stoik_mechanism = 1\n[[species]]\nname = \"H\"\natoms = {{ H = 1 }}\n{diameters}\n[[species]]\nname = \"H2\"\natoms = {{ H = 2 }}\n[[step]]\nequation = \"H + H -> H2\"\nforward = {{ prefactor = 5e13 }}\n"
        )
    };
    assert!(collision_limit_warnings(&load(&text("")), "h.toml").is_empty());
    let warnings = collision_limit_warnings(&load(&text("collision_diameter_nm = 0.08")), "h.toml");
    assert_eq!(warnings.len(), 1, "{warnings:?}");
    let mu = 1.008e-3 / 2.0 / AVOGADRO;
    let speed = (8.0 * 1.380649e-23 * 300.0 / (std::f64::consts::PI * mu)).sqrt();
    let limit = AVOGADRO * std::f64::consts::PI * 0.08e-9 * 0.08e-9 * speed;
    let m = &warnings[0].message;
    assert!(m.contains("at 300 K"), "{m}");
    assert!(m.contains("hard-sphere"), "{m}");
    assert!(
        m.contains(&format!("{limit:.3e} m3/(mol s) there")),
        "{m} vs {limit:.3e}"
    );
}
