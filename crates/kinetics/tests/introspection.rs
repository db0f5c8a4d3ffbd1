//! Introspection of compiled kinetics for embedding code: names, stoichiometric and element
//! matrices, rate-constant orders and units, checked on the bundled hydrogen mechanism
//! against the numbers written in its file.

use std::path::Path;
use stoik_kinetics::{element_matrix, Kinetics, RateUnits};
use stoik_mechanism::{load_mechanism, Mechanism, AVOGADRO, GAS_CONSTANT};

fn hydrogen() -> Mechanism {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../mechanisms/hydrogen-oxygen.toml");
    load_mechanism(&path)
        .expect("the bundled mechanism loads")
        .mechanism
}

fn step_index(m: &Mechanism, equation: &str) -> usize {
    m.steps
        .iter()
        .position(|s| s.equation == equation)
        .unwrap_or_else(|| panic!("no step {equation}"))
}

/// k = A T^n exp(-Ea/(R T)) with Ea in cal/mol (the file's units; thermochemical calorie
/// 4.184 J exactly, common practice; R = 8.314462618 J/(mol K), CODATA).
fn arrhenius_cal(a: f64, n: f64, ea_cal: f64, t: f64) -> f64 {
    a * t.powf(n) * (-(ea_cal * 4.184) / (GAS_CONSTANT * t)).exp()
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

#[test]
fn names_and_matrices_describe_the_mechanism() {
    let m = hydrogen();
    let kin = Kinetics::compile(&m).unwrap();
    let names: Vec<&str> = m.species.iter().map(|s| s.name.as_str()).collect();
    assert_eq!(kin.species_names(), names.as_slice());
    let nu = kin.stoichiometric_matrix();
    assert_eq!((nu.len(), nu[0].len()), (m.species.len(), m.steps.len()));
    // H + O2 <=> O + OH: H and O2 lose one, O and OH gain one, nothing else changes.
    let j = step_index(&m, "H + O2 <=> O + OH");
    let idx = |name: &str| m.species_index(name).unwrap();
    for (i, name) in names.iter().enumerate() {
        let expected = match *name {
            "H" | "O2" => -1.0,
            "O" | "OH" => 1.0,
            _ => 0.0,
        };
        assert_eq!(nu[i][j], expected, "{name}");
    }
    // Elementary steps conserve atoms (conservation of mass, common practice): every
    // column of (element matrix) x (stoichiometric matrix) is zero.
    let e = element_matrix(&m);
    assert!(e.species_without_composition.is_empty());
    assert_eq!(e.elements.len(), m.elements.len());
    for (row, symbol) in e.atoms.iter().zip(&e.elements) {
        for (step, s) in m.steps.iter().enumerate() {
            let change: f64 = row.iter().zip(&nu).map(|(a, n)| a * n[step]).sum();
            assert_eq!(change, 0.0, "element {symbol} in step {}", s.equation);
        }
    }
    assert_eq!(
        e.atoms[e.elements.iter().position(|s| s == "O").unwrap()][idx("H2O")],
        1.0
    );
    assert_eq!(
        e.atoms[e.elements.iter().position(|s| s == "H").unwrap()][idx("H2O")],
        2.0
    );
}

#[test]
fn rate_constants_come_back_in_the_files_units() {
    // The file gives prefactors in cm3, mol, s and activation energies in cal/mol; at
    // 1100 K the compiled constants, converted back, must equal A T^n exp(-Ea/RT) formed
    // from the file's numbers.
    let m = hydrogen();
    let kin = Kinetics::compile(&m).unwrap();
    let t = 1100.0;
    let k = kin.rate_constants(t);
    let (cm3_mol, _) = kin.rate_constants_in(&k, RateUnits::CubicCentimetresPerMole);
    let (cm3_molecule, _) = kin.rate_constants_in(&k, RateUnits::CubicCentimetresPerMolecule);
    let (si, _) = kin.rate_constants_in(&k, RateUnits::Si);
    let cases = [
        // (equation, A, n, Ea cal/mol, order of the constant)
        ("H + O2 <=> O + OH", 3.547e15, -0.406, 16599.0, 2.0),
        ("H2 <=> H + H", 4.577e19, -1.40, 104380.0, 2.0), // third body: [M] counts
        ("O + O <=> O2", 6.165e15, -0.50, 0.0, 3.0),      // third body: [M] counts
        ("H + O2 <=> HO2", 1.475e12, 0.6, 0.0, 2.0),      // falloff: kinf, no [M]
    ];
    for (equation, a, n, ea, order) in cases {
        let j = step_index(&m, equation);
        assert_eq!(kin.rate_constant_orders(j).unwrap().0, order, "{equation}");
        let expected = arrhenius_cal(a, n, ea, t);
        assert!(
            rel(cm3_mol[j], expected) < 1e-13,
            "{equation}: {} vs {expected}",
            cm3_mol[j]
        );
        // cm3/molecule: divide by N_A per concentration order above one.
        let per_molecule = expected / AVOGADRO.powf(order - 1.0);
        assert!(rel(cm3_molecule[j], per_molecule) < 1e-13, "{equation}");
        // SI: (m3/mol)^(m-1)/s, 1 cm3 = 1e-6 m3.
        assert!(
            rel(si[j], expected * 1e-6f64.powf(order - 1.0)) < 1e-13,
            "{equation}"
        );
    }
    // Reverse constants of reversible steps follow kr = kf / Kc, in the products' order.
    let j = step_index(&m, "H2 <=> H + H");
    let (_, reverse) = kin.rate_constant_orders(j).unwrap();
    assert_eq!(reverse, Some(3.0));
    assert!(kin.rate_constant_orders(m.steps.len()).is_none());
}
