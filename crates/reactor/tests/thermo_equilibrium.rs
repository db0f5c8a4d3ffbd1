//! A long isothermal run of a reversible H2/O2 mechanism whose reverse rate constants all
//! come from thermochemistry (kr = kf / Kc, species polynomials from
//! mechanisms/thermo/janaf-nasa7.toml) must end at chemical equilibrium: for every step the
//! reaction quotient prod_i c_i^nu_i equals Kc = Kp (P0/(R T))^dn with
//! Kp = exp(-dG0/(R T)) (textbook equilibrium condition of an ideal-gas mixture, common
//! practice), Kc computed here by hand from the polynomials.

use stoik_kinetics::Kinetics;
use stoik_mechanism::parse_mechanism_in;
use stoik_reactor::{integrate, IntegrationOptions};

const R: f64 = 8.314462618;
const P0: f64 = 1e5;

// Invented forward Arrhenius parameters (cm3, mol, s, J/mol); no step has `reverse`.
const MECHANISM: &str = r#"
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
[[species]]
name = "O"
atoms = { O = 1 }
[[species]]
name = "OH"
atoms = { O = 1, H = 1 }
[[species]]
name = "AR"
atoms = { Ar = 1 }

[[step]]
equation = "H2 <=> H + H"
forward = { prefactor = 4.6e19, temperature_exponent = -1.4, activation_energy = 436000 }
third_body = {}
[[step]]
equation = "O2 <=> O + O"
forward = { prefactor = 2e18, temperature_exponent = -1.0, activation_energy = 496000 }
third_body = {}
[[step]]
equation = "H2 + O <=> OH + H"
forward = { prefactor = 5e4, temperature_exponent = 2.67, activation_energy = 26300 }
[[step]]
equation = "O2 + H <=> OH + O"
forward = { prefactor = 2e14, activation_energy = 70000 }
[[step]]
equation = "H2 + OH <=> H2O + H"
forward = { prefactor = 2e8, temperature_exponent = 1.5, activation_energy = 14000 }
[[step]]
equation = "H2O + O <=> OH + OH"
forward = { prefactor = 3e6, temperature_exponent = 2.0, activation_energy = 55000 }
"#;

#[test]
fn long_isothermal_run_ends_at_the_equilibrium_the_constants_demand() {
    let dir = stoik_testsupport::mechanisms_dir();
    let m = parse_mechanism_in(MECHANISM, "eq.toml", Some(&dir))
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism;
    assert!(m.steps.iter().all(|s| s.reverse.is_none() && s.reversible));
    let kinetics = Kinetics::compile(&m).unwrap();

    // 3000 K, 1 atm; 2 H2 + O2 diluted in argon (x = 0.2, 0.1, 0.7): c_i = x_i P/(R T).
    let t = 3000.0;
    let c_total = 101_325.0 / (R * t);
    let mut c0 = vec![0.0; m.species.len()];
    c0[0] = 0.2 * c_total;
    c0[1] = 0.1 * c_total;
    c0[6] = 0.7 * c_total;
    let mut options = IntegrationOptions::new(m.species.len());
    options.relative_tolerance = 1e-10;
    options.absolute_tolerances_mol_per_m3 = vec![1e-18; m.species.len()];
    let profiles = integrate(&kinetics, t, &c0, &[0.0, 1e-3, 100.0], &options)
        .unwrap_or_else(|e| panic!("{e}"));
    let c = profiles
        .concentrations_mol_per_m3
        .last()
        .expect("final row");

    // Kc by hand: dG0 = sum nu_i G0_i(T), Kc = exp(-dG0/(R T)) (P0/(R T))^dn.
    let g: Vec<f64> = m
        .species
        .iter()
        .map(|s| s.thermo.map_or(0.0, |p| p.gibbs_j_per_mol(t)))
        .collect();
    let deviations = |c: &[f64]| -> Vec<f64> {
        m.steps
            .iter()
            .map(|step| {
                let mut dg = 0.0;
                let mut dn = 0.0;
                let mut ln_q = 0.0;
                for (term, sign) in step
                    .reactants
                    .iter()
                    .map(|x| (x, -1.0))
                    .chain(step.products.iter().map(|x| (x, 1.0)))
                {
                    let nu = sign * term.coefficient;
                    dg += nu * g[term.species];
                    dn += nu;
                    ln_q += nu * c[term.species].ln();
                }
                let ln_kc = -dg / (R * t) + dn * (P0 / (R * t)).ln();
                (ln_q - ln_kc).exp() - 1.0
            })
            .collect()
    };
    let final_deviations = deviations(c);
    for (step, deviation) in m.steps.iter().zip(&final_deviations) {
        assert!(
            deviation.abs() < 1e-6,
            "step `{}`: Q/Kc - 1 = {deviation:e}",
            step.equation
        );
    }
    // The run does the work: at 1 ms the mixture is still away from equilibrium.
    let early = deviations(&profiles.concentrations_mol_per_m3[1]);
    assert!(early.iter().any(|d| d.abs() > 1e-2), "{early:?}");
}
