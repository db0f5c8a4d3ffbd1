//! The annotated example mechanism shipped in `mechanisms/` must load cleanly, and its
//! unit conversions must match hand calculations.

use stoik_mechanism::{
    load_mechanism, Broadening, PressureDependence, ThirdBody, AVOGADRO, GAS_CONSTANT,
};

#[test]
fn annotated_example_loads_without_errors_or_warnings() {
    let path = stoik_testsupport::mechanism_path("annotated-example.toml");
    let file = load_mechanism(&path).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(file.warnings.0.len(), 0, "{}", file.warnings);
    let m = &file.mechanism;
    assert_eq!(m.species.len(), 9);
    assert_eq!(m.steps.len(), 14);
    // Elements in order of first appearance: O, H, N, C, S.
    let symbols: Vec<&str> = m.elements.iter().map(|e| e.symbol.as_str()).collect();
    assert_eq!(symbols, ["O", "H", "N", "C", "S"]);

    // Hand conversions (common practice; SI 2019 exact Avogadro constant):
    // step 1, third-body order 3 forward: 6e13 (mol/cm3)^-2/s * (1e-6 m3/cm3)^2 = 6e1.
    assert!((m.steps[0].forward.pre_exponential_si / 60.0 - 1.0).abs() < 1e-12);
    // reverse order 1 + third body = 2: 4e14 cm3/(mol s) * 1e-6 = 4e8; Ea 95 kJ/mol.
    let reverse = m.steps[0].reverse.expect("reverse");
    assert!((reverse.pre_exponential_si / 4e8 - 1.0).abs() < 1e-12);
    assert_eq!(reverse.activation_energy_j_per_mol, 95_000.0);
    // step 3 in molecule units, order 2: 4.0e-11 cm3/(molecule s) * 1e-6 * N_A; Ea/R = -60 K.
    let k3 = &m.steps[2].forward;
    assert!((k3.pre_exponential_si / (4.0e-17 * AVOGADRO) - 1.0).abs() < 1e-12);
    assert!((k3.activation_energy_j_per_mol / (-60.0 * GAS_CONSTANT) - 1.0).abs() < 1e-12);
    // step 6, orders 0.6 + 1.2 = 1.8: 2e9 (mol/cm3)^-0.8/s * (1e6)^-0.8 = 2e9 * 10^-4.8.
    assert!((m.steps[5].forward_order() - 1.8).abs() < 1e-12);
    assert!((m.steps[5].forward.pre_exponential_si / (2e9 * 10f64.powf(-4.8)) - 1.0).abs() < 1e-12);
    // step 7, first order per minute: 0.05 / 60 per second.
    assert!((m.steps[6].forward.pre_exponential_si / (0.05 / 60.0) - 1.0).abs() < 1e-12);
    // step 9, order 0: 1e-12 mol/(cm3 s) = 1e-6 mol/(m3 s).
    assert!((m.steps[8].forward.pre_exponential_si / 1e-6 - 1.0).abs() < 1e-12);
    // O2 + O2 on a side adds up to 2 O2, so steps 4 and 5 are a declared duplicate pair.
    assert_eq!(m.steps[3].products, m.steps[4].products);
    let n2 = m.species_index("N2").expect("N2");
    assert_eq!(m.steps[1].third_body, Some(ThirdBody::Species(n2)));
    // Thermochemistry: every species but the abstract OXPROD and the invented ODR and
    // O(1D) has some; O3's inline table has cp/R = 4.5 exactly; the last step takes its
    // reverse from thermochemistry.
    let with_thermo: Vec<&str> = m
        .species
        .iter()
        .filter(|s| s.thermo.is_some())
        .map(|s| s.name.as_str())
        .collect();
    assert_eq!(with_thermo, ["O3", "O2", "O", "H2O", "OH", "N2"]);
    assert_eq!(m.species[0].thermo.map(|t| t.cp_over_r(300.0)), Some(4.5));
    assert!(m.steps[10].reverse_from_thermo());

    // Pressure-dependent steps (hand conversions, common practice).
    // Step 12, falloff of order 2: kinf 2e12 cm3/(mol s) * 1e-6 = 2e6 m3/(mol s); k0 one order
    // higher: 4e17 cm6/(mol2 s) * 1e-12 = 4e5 m6/(mol2 s).
    let falloff = &m.steps[11];
    assert!((falloff.forward.pre_exponential_si / 2e6 - 1.0).abs() < 1e-12);
    let Some(PressureDependence::Falloff {
        low_pressure,
        high_pressure,
        broadening,
        chemically_activated: false,
    }) = &falloff.pressure_dependence
    else {
        panic!(
            "step 12 is a falloff step: {:?}",
            falloff.pressure_dependence
        );
    };
    assert!((low_pressure.pre_exponential_si / 4e5 - 1.0).abs() < 1e-12);
    assert_eq!(high_pressure, &falloff.forward);
    assert_eq!(
        *broadening,
        Broadening::Troe {
            a: 0.6,
            t3_k: 200.0,
            t1_k: 2000.0,
            t2_k: Some(5000.0)
        }
    );
    // Step 13, chemically activated of order 2: k0 1e13 cm3/(mol s) -> 1e7; kinf one order
    // lower (1/s): 3e8 unchanged.
    let activated = &m.steps[12];
    let Some(PressureDependence::Falloff {
        high_pressure,
        chemically_activated: true,
        ..
    }) = &activated.pressure_dependence
    else {
        panic!("step 13 is chemically activated");
    };
    assert!((activated.forward.pre_exponential_si / 1e7 - 1.0).abs() < 1e-12);
    assert!((high_pressure.pre_exponential_si / 3e8 - 1.0).abs() < 1e-12);
    // Step 14, termolecular form per molecule: k0(T) = 6e-34 (T/300)^-2.4 cm6/(molecule2 s)
    // = [6e-34 * 300^2.4 * 1e-12 * N_A^2] T^-2.4 in SI; kinf = 3e-12 * 1e-6 * N_A (T^0).
    let termolecular = &m.steps[13];
    let Some(PressureDependence::Falloff {
        low_pressure,
        broadening: Broadening::FixedCenter { center },
        ..
    }) = &termolecular.pressure_dependence
    else {
        panic!("step 14 is in the termolecular form");
    };
    let k0 = 6e-34 * 300f64.powf(2.4) * 1e-12 * AVOGADRO * AVOGADRO;
    assert!((low_pressure.pre_exponential_si / k0 - 1.0).abs() < 1e-12);
    assert_eq!(low_pressure.temperature_exponent, -2.4);
    assert!((termolecular.forward.pre_exponential_si / (3e-18 * AVOGADRO) - 1.0).abs() < 1e-12);
    assert_eq!(*center, 0.6);
}
