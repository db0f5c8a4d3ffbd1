//! Unit tests of the mechanism loader.

use super::*;
use crate::{PressureDependence, SourceLocation, AVOGADRO, GAS_CONSTANT};

fn load(text: &str) -> MechanismFile {
    match parse_mechanism(text, "test.toml") {
        Ok(m) => m,
        Err(e) => panic!("expected a clean load, got:\n{e}"),
    }
}

fn errors(text: &str) -> Vec<Diagnostic> {
    match parse_mechanism(text, "test.toml") {
        Ok(_) => panic!("expected errors"),
        Err(LoadError::Invalid { diagnostics }) => diagnostics.0,
        Err(e) => panic!("unexpected {e}"),
    }
}

use crate::Diagnostic;

const SPECIES_AB: &str = r#"
[[species]]
name = "A"
[[species]]
name = "B"
[[species]]
name = "C"
"#;

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

#[test]
fn one_step_in_four_unit_systems_loads_to_one_si_rate_constant() {
    // Independent expectation: k = 1e-11 cm3/(molecule s) * exp(-1000 K / T); in SI,
    // A = 1e-11 * 1e-6 * N_A m3/(mol s) (SI 2019 exact Avogadro constant) and
    // Ea = 1000 K * R. The calorie is the thermochemical 4.184 J (common practice).
    let t: f64 = 1200.0;
    let expected = 1e-11 * 1e-6 * 6.022_140_76e23 * (-1000.0 / t).exp();
    let na = 6.022_140_76e23;
    let r = 8.314_462_618;
    let variants = [
        ("molecule", "cm", "s", "K", 1e-11, 1000.0),
        ("mol", "cm", "s", "kJ/mol", 1e-11 * na, 1000.0 * r / 1e3),
        ("mol", "m", "s", "cal/mol", 1e-17 * na, 1000.0 * r / 4.184),
        (
            "mol",
            "cm",
            "s",
            "kcal/mol",
            1e-11 * na,
            1000.0 * r / 4184.0,
        ),
        ("mol", "m", "h", "J/mol", 3600.0 * 1e-17 * na, 1000.0 * r),
    ];
    for (amount, length, time, energy, a, ea) in variants {
        let text = format!(
            "stoik_mechanism = 1\n[units]\namount = \"{amount}\"\nlength = \"{length}\"\ntime = \"{time}\"\nactivation_energy = \"{energy}\"\n{SPECIES_AB}\n[[step]]\nequation = \"A + B -> C\"\nforward = {{ prefactor = {a:e}, activation_energy = {ea:e} }}\n"
        );
        let m = load(&text).mechanism;
        let k = m.steps[0].forward.rate_constant(t);
        assert!(
            rel(k, expected) < 1e-12,
            "{amount}/{length}/{time}/{energy}: {k} vs {expected}"
        );
    }
    // The same through a per-step override of the file's units.
    let text = format!(
        "stoik_mechanism = 1\n[units]\namount = \"mol\"\n{SPECIES_AB}\n[[step]]\nequation = \"A + B -> C\"\nunits = {{ amount = \"molecule\", activation_energy = \"K\" }}\nforward = {{ prefactor = 1e-11, activation_energy = 1000 }}\n"
    );
    let k = load(&text).mechanism.steps[0].forward.rate_constant(t);
    assert!(rel(k, expected) < 1e-12);
}

#[test]
fn molecule_prefactors_differ_by_avogadro_powers_per_order() {
    // Source: SI 2019 exact Avogadro constant. Same number, amount "molecule" vs "mol":
    // bimolecular differs by N_A, termolecular (third body counts +1) by N_A^2, first order
    // not at all.
    let make = |amount: &str| {
        format!(
            "stoik_mechanism = 1\n[units]\namount = \"{amount}\"\n{SPECIES_AB}\n\
             [[step]]\nequation = \"A -> C\"\nforward = {{ prefactor = 2.5 }}\n\
             [[step]]\nequation = \"A + B -> C\"\nforward = {{ prefactor = 2.5 }}\n\
             [[step]]\nequation = \"A + B -> C\"\nthird_body = {{}}\nforward = {{ prefactor = 2.5 }}\n"
        )
    };
    let mol = load(&make("mol")).mechanism;
    let molecule = load(&make("molecule")).mechanism;
    let ratio = |j: usize| {
        molecule.steps[j].forward.pre_exponential_si / mol.steps[j].forward.pre_exponential_si
    };
    assert!(rel(ratio(0), 1.0) < 1e-15);
    assert!(rel(ratio(1), AVOGADRO) < 1e-12);
    assert!(rel(ratio(2), AVOGADRO * AVOGADRO) < 1e-12);
    // And mol/cm3 -> mol/m3 for a bimolecular step: 1 cm3/(mol s) = 1e-6 m3/(mol s).
    assert!(rel(mol.steps[1].forward.pre_exponential_si, 2.5e-6) < 1e-15);
    // Third-body step of a duplicate stoichiometry is not a duplicate (different partner).
    assert_eq!(mol.steps.len(), 3);
}

#[test]
fn repeated_species_add_up_and_catalysts_stay_on_both_sides() {
    // Source: the equation grammar of docs/file-format.md (B + B = 2 B).
    let text = format!(
        "stoik_mechanism = 1\n{SPECIES_AB}\n[[step]]\nequation = \"B + B -> C\"\nforward = {{ prefactor = 1 }}\n[[step]]\nequation = \"A -> C + A\"\nforward = {{ prefactor = 1 }}\n"
    );
    let m = load(&text).mechanism;
    assert_eq!(
        m.steps[0].reactants,
        vec![StoichTerm {
            species: 1,
            coefficient: 2.0
        }]
    );
    assert_eq!(m.steps[0].forward_order(), 2.0);
    assert_eq!(
        m.steps[1].reactants,
        vec![StoichTerm {
            species: 0,
            coefficient: 1.0
        }]
    );
    assert_eq!(
        m.steps[1].products,
        vec![
            StoichTerm {
                species: 2,
                coefficient: 1.0
            },
            StoichTerm {
                species: 0,
                coefficient: 1.0
            }
        ]
    );
}

#[test]
fn imbalance_is_reported_with_both_sides_counts() {
    // Hand count: H2 + O2 -> H2O has reactants H 2, O 2 and products H 2, O 1.
    let text = r#"stoik_mechanism = 1
[[species]]
name = "H2"
atoms = { H = 2 }
[[species]]
name = "O2"
atoms = { O = 2 }
[[species]]
name = "H2O"
atoms = { H = 2, O = 1 }
[[step]]
equation = "H2 + O2 -> H2O"
forward = { prefactor = 1 }
"#;
    let diags = errors(text);
    assert_eq!(diags.len(), 1, "{diags:?}");
    assert_eq!(
        diags[0].message,
        "step `H2 + O2 -> H2O` is not balanced: reactants {H: 2, O: 2} vs products {H: 2, O: 1}"
    );
    assert_eq!(
        diags[0].location,
        Some(SourceLocation {
            line: 12,
            column: 12
        })
    );
    // With 0.5 O2 it balances and loads; element weights come from the built-in table.
    let fixed = text.replace("H2 + O2 -> H2O", "H2 + 0.5 O2 -> H2O");
    let m = load(&fixed).mechanism;
    assert_eq!(
        m.elements
            .iter()
            .map(|e| e.symbol.as_str())
            .collect::<Vec<_>>(),
        ["H", "O"]
    );
    // Abstract species are not balance-checked.
    let abstract_ok = fixed
        .replace("atoms = { H = 2, O = 1 }\n", "")
        .replace("0.5 O2", "O2");
    assert_eq!(load(&abstract_ok).mechanism.steps.len(), 1);
}

#[test]
fn explicit_orders_set_forward_order_and_prefactor_units() {
    // A global step A + 2 B -> C with orders A 0.5 (B keeps its coefficient 2) has overall
    // order 2.5; A in (mol/cm3)^(-1.5)/s converts by (1e6)^(-1.5) = 1e-9 to (mol/m3)^(-1.5)/s.
    let text = format!(
        "stoik_mechanism = 1\n{SPECIES_AB}\n[[step]]\nequation = \"A + 2 B -> C\"\nreaction_orders = {{ A = 0.5 }}\nforward = {{ prefactor = 4.0 }}\n"
    );
    let m = load(&text).mechanism;
    let step = &m.steps[0];
    assert_eq!(step.forward_orders, Some(vec![(0, 0.5), (1, 2.0)]));
    assert_eq!(step.forward_order(), 2.5);
    assert!(rel(step.forward.pre_exponential_si, 4.0 * 1e6f64.powf(-1.5)) < 1e-14);
}

#[test]
fn reversible_steps_convert_reverse_prefactor_with_product_order() {
    // A <=> 2 B: reverse order 2, so the reverse A in cm3/(mol s) becomes 1e-6 m3/(mol s);
    // Ea 10 kJ/mol = 1e4 J/mol.
    let text = format!(
        "stoik_mechanism = 1\n[units]\nactivation_energy = \"kJ/mol\"\n{SPECIES_AB}\n[[step]]\nequation = \"A <=> 2 B\"\nforward = {{ prefactor = 3.0 }}\nreverse = {{ prefactor = 5.0, activation_energy = 10 }}\n[[step]]\nequation = \"B -> C\"\nforward = {{ prefactor = 1.0 }}\n"
    );
    let m = load(&text).mechanism;
    let reverse = m.steps[0].reverse.expect("reverse parameters");
    assert!(rel(reverse.pre_exponential_si, 5e-6) < 1e-15);
    assert_eq!(reverse.activation_energy_j_per_mol, 1e4);
    assert!(rel(m.steps[0].forward.pre_exponential_si, 3.0) < 1e-15);
    assert!(
        rel(
            reverse.rate_constant(1e4 / GAS_CONSTANT),
            5e-6 * (-1.0f64).exp()
        ) < 1e-14
    );
}

#[test]
fn duplicates_need_allow_duplicate_on_both() {
    // Source: the validation rules of docs/file-format.md.
    let base = format!(
        "stoik_mechanism = 1\n{SPECIES_AB}\n[[step]]\nequation = \"A + B <=> C\"\nforward = {{ prefactor = 1 }}\nreverse = {{ prefactor = 1 }}\nFLAG1\n[[step]]\nequation = \"C <=> B + A\"\nforward = {{ prefactor = 2 }}\nreverse = {{ prefactor = 1 }}\nFLAG2\n"
    );
    let one = base
        .replace("FLAG1", "allow_duplicate = true")
        .replace("FLAG2", "");
    let diags = errors(&one);
    assert_eq!(diags.len(), 1, "{diags:?}");
    // Expected lines counted in the text itself: the first and second `[[step]]` headers.
    let headers: Vec<usize> = one
        .lines()
        .enumerate()
        .filter(|(_, l)| *l == "[[step]]")
        .map(|(i, _)| i + 1)
        .collect();
    assert!(diags[0]
        .message
        .contains(&format!("as the step at line {}", headers[0])));
    assert_eq!(
        diags[0].location,
        Some(SourceLocation {
            line: headers[1],
            column: 1
        })
    );
    let both = base
        .replace("FLAG1", "allow_duplicate = true")
        .replace("FLAG2", "allow_duplicate = true");
    assert_eq!(load(&both).mechanism.steps.len(), 2);
}

#[test]
fn every_problem_is_reported_at_once() {
    // Four independent mistakes; each must be reported, in file order, with its location.
    let text = r#"stoik_mechanism = 1
[[species]]
name = "OH"
atoms = { O = 1, H = 1 }
[[species]]
name = "H2O2"
atoms = { H = 2, O = 2, Xx = 1 }
[[step]]
equation = "2 OH -> H2O3"
forward = { prefactor = -1.0 }
[[step]]
equaton = "OH -> OH"
forward = { prefactor = 1.0 }
"#;
    let mut diags = errors(text);
    // H2O2 also draws an "unused" warning; only the errors are checked here.
    diags.retain(|d| d.severity == Severity::Error);
    let got: Vec<(usize, usize, &str)> = diags
        .iter()
        .map(|d| {
            let l = d.location.unwrap_or_default();
            (l.line, l.column, d.message.as_str())
        })
        .collect();
    assert_eq!(got.len(), 5, "{got:#?}");
    assert_eq!((got[0].0, got[0].1), (7, 25));
    assert!(got[0].2.contains("unknown element symbol `Xx`"));
    assert_eq!((got[1].0, got[1].1), (9, 21));
    assert_eq!(got[1].2, "unknown species `H2O3`");
    assert_eq!(diags[1].help.as_deref(), Some("did you mean `H2O2`?"));
    assert_eq!((got[2].0, got[2].1), (10, 25));
    assert!(got[2].2.contains("`prefactor` is negative"));
    assert_eq!((got[3].0, got[3].1), (11, 1));
    assert_eq!(got[3].2, "step has no `equation`");
    assert_eq!((got[4].0, got[4].1), (12, 1));
    assert_eq!(diags[4].help.as_deref(), Some("did you mean `equation`?"));
}

#[test]
fn unused_species_is_a_warning_not_an_error() {
    let text = format!(
        "stoik_mechanism = 1\n{SPECIES_AB}\n[[step]]\nequation = \"A -> B\"\nthird_body = {{ efficiency = {{ C = 0.0 }} }}\nforward = {{ prefactor = 1 }}\n"
    );
    let file = load(&text);
    assert_eq!(file.warnings.warning_count(), 1);
    let w = &file.warnings.0[0];
    assert!(
        w.message.contains("`C` is declared but never used"),
        "{}",
        w.message
    );
    assert!(w.message.contains("only with zero third-body efficiency"));
    let line_of_c = text
        .lines()
        .position(|l| l == "name = \"C\"")
        .map(|i| i + 1);
    assert_eq!(
        w.location.map(|l| (l.line, l.column)),
        line_of_c.map(|l| (l, 8))
    );
    assert_eq!(
        file.mechanism.steps[0].third_body,
        Some(ThirdBody::Mixture {
            default_efficiency: 1.0,
            efficiencies: vec![(2, 0.0)]
        })
    );
}

/// A simple linear congruential generator (Knuth's MMIX constants), for reproducible input.
struct Lcg(u64);
impl Lcg {
    fn next(&mut self) -> u64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        self.0 >> 33
    }
}

#[test]
fn large_mechanism_loads_with_all_species_and_steps() {
    // 10,000 species and 30,000 steps; counts checked against the generator's parameters
    // (timing is measured by the benchmarks, not asserted here).
    let species = 10_000usize;
    let steps = 30_000usize;
    let mut text = String::with_capacity(4 * 1024 * 1024);
    text.push_str("stoik_mechanism = 1\n[units]\nactivation_energy = \"kJ/mol\"\n");
    for i in 0..species {
        text.push_str(&format!(
            "[[species]]\nname = \"S{i}\"\natoms = {{ C = 1, H = {} }}\n",
            i % 8
        ));
    }
    let mut rng = Lcg(20_240_611);
    for j in 0..steps {
        // Isomerisations S_a -> S_b between species with equal H count (indices equal mod 8,
        // and 10,000 is a multiple of 8), so every step balances; step j uses species
        // j % 10,000 as reactant so every species is used. Random pairs may repeat, so every
        // step is declared a possible duplicate (the duplicate map is still exercised).
        let a = j % species;
        let b = (a + 8 * (1 + rng.next() as usize % (species / 8 - 1))) % species;
        text.push_str(&format!(
            "[[step]]\nequation = \"S{a} -> S{b}\"\nforward = {{ prefactor = {}.5e3, activation_energy = {} }}\nallow_duplicate = true\n",
            1 + rng.next() % 9,
            rng.next() % 200
        ));
    }
    let file = load(&text);
    assert_eq!(file.mechanism.species.len(), species);
    assert_eq!(file.mechanism.steps.len(), steps);
    assert_eq!(file.mechanism.elements.len(), 2);
    assert_eq!(file.warnings.warning_count(), 0);
}

#[test]
fn pressure_table_sorts_groups_and_converts_its_sets() {
    // A + B -> C, order 2, cm3/(mol s) -> m3/(mol s) is x 1e-6 (common practice); 1 atm =
    // 101325 Pa and 1 bar = 1e5 Pa by definition. Entries out of order; two at 1 atm.
    let file = load(&format!(
        "stoik_mechanism = 1\n{SPECIES_AB}\n[[step]]\nequation = \"A + B -> C\"\n\
         pressure_table = [\n\
         {{ pressure = \"1 atm\", prefactor = 2e12 }},\n\
         {{ pressure = \"1 bar\", prefactor = 1e12, temperature_exponent = 0.5 }},\n\
         {{ pressure = \"101325 Pa\", prefactor = 3e12, activation_energy = 1000 }},\n]\n"
    ));
    let step = &file.mechanism.steps[0];
    let Some(PressureDependence::Table { points }) = &step.pressure_dependence else {
        panic!("a pressure table: {:?}", step.pressure_dependence);
    };
    let pressures: Vec<f64> = points.iter().map(|p| p.pressure_pa).collect();
    assert_eq!(pressures, [1e5, 101_325.0]);
    assert_eq!(points[0].rate_sets.len(), 1);
    assert!(rel(points[0].rate_sets[0].pre_exponential_si, 1e6) < 1e-12);
    assert_eq!(points[1].rate_sets.len(), 2);
    assert!(rel(points[1].rate_sets[1].pre_exponential_si, 3e6) < 1e-12);
    // `forward` copies the first set at the highest pressure (for reports).
    assert!(rel(step.forward.pre_exponential_si, 2e6) < 1e-12);
    assert_eq!(step.forward_order(), 2.0);
    // One warning: the clamp outside 1e5 Pa .. 101325 Pa.
    assert_eq!(file.warnings.0.len(), 1, "{}", file.warnings);
}

#[test]
fn falloff_limits_take_orders_one_apart_and_the_bath_gas_does_not_count() {
    // A + B (+M) -> C: kinf order 2 (cm3/(mol s) x 1e-6), k0 order 3 ((cm3/mol)^2/s x 1e-12);
    // chemically activated A + B (+M) -> C + C: k0 order 2, kinf order 1 (1/s, unchanged).
    let file = load(&format!(
        "stoik_mechanism = 1\n{SPECIES_AB}\n\
         [[step]]\nequation = \"A + B -> C\"\nforward = {{ prefactor = 1e13 }}\n\
         falloff = {{ low_pressure = {{ prefactor = 1e18 }}, broadening = \"lindemann\" }}\n\
         third_body = {{ species = \"C\" }}\n\
         [[step]]\nequation = \"A + B -> C + C\"\nforward = {{ prefactor = 1e13 }}\n\
         chemically_activated = {{ high_pressure = {{ prefactor = 1e9 }}, broadening = \"lindemann\" }}\n\
         third_body = {{}}\n"
    ));
    let steps = &file.mechanism.steps;
    for (step, k0, kinf) in [(&steps[0], 1e6, 1e7), (&steps[1], 1e7, 1e9)] {
        assert_eq!(step.forward_order(), 2.0);
        let Some(PressureDependence::Falloff {
            low_pressure,
            high_pressure,
            ..
        }) = &step.pressure_dependence
        else {
            panic!("falloff");
        };
        assert!(
            rel(low_pressure.pre_exponential_si, k0) < 1e-12,
            "{low_pressure:?}"
        );
        assert!(
            rel(high_pressure.pre_exponential_si, kinf) < 1e-12,
            "{high_pressure:?}"
        );
    }
}
