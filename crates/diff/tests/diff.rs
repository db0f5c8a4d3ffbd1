//! Tests of the mechanism diff against closed forms and hand computations.

use std::path::{Path, PathBuf};
use std::process::Command;
use stoik_diff::{
    canonical_equation, diff_mechanisms, diff_toml, load_mechanism_source, revert, DiffError,
    DiffOptions, Edit, MechanismSource, StepAspect,
};
use stoik_mechanism::{load_mechanism, parse_mechanism, LoadError, Mechanism, Step, ThirdBody};
use stoik_testsupport::mechanism_path;

/// Molar gas constant, J/(mol K): SI 2019 exact value (CODATA 2018), quoted independently of
/// the library's constant.
const R: f64 = 8.314462618;
/// Avogadro constant, 1/mol (SI 2019 exact value).
const N_A: f64 = 6.02214076e23;

fn hydrogen() -> Mechanism {
    load_mechanism(&mechanism_path("hydrogen-oxygen.toml"))
        .expect("bundled mechanism loads")
        .mechanism
}

/// H/(R T) and S/R of the NASA 7-coefficient form (McBride, Gordon & Reno 1993, NASA
/// TM-4513, eqs. 4.6-4.8), written out here: the low range below the common temperature.
fn hand_h_s(c: &stoik_thermo::Nasa7, t: f64) -> (f64, f64) {
    let a = if t < c.t_mid_k { &c.low } else { &c.high };
    let h = a[0]
        + a[1] * t / 2.0
        + a[2] * t * t / 3.0
        + a[3] * t.powi(3) / 4.0
        + a[4] * t.powi(4) / 5.0
        + a[5] / t;
    let s = a[0] * t.ln()
        + a[1] * t
        + a[2] * t * t / 2.0
        + a[3] * t.powi(3) / 3.0
        + a[4] * t.powi(4) / 4.0
        + a[6];
    (h, s)
}

/// G/(R T) = H/(R T) - S/R of species `name` of `m`, by hand.
fn hand_g_over_rt(m: &Mechanism, name: &str, t: f64) -> f64 {
    let i = m.species_index(name).expect("species");
    let (h, s) = hand_h_s(m.species[i].thermo.as_ref().expect("thermo"), t);
    h - s
}

fn step_index(m: &Mechanism, equation: &str) -> usize {
    m.steps
        .iter()
        .position(|s| s.equation == equation)
        .unwrap_or_else(|| panic!("no step {equation}"))
}

/// A fresh, empty temporary folder for one test.
fn temp_dir(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("stoik-diff-test-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temporary folder");
    dir
}

fn changed(edit: &Edit) -> (&[StepAspect], &[stoik_diff::RateRatio]) {
    match edit {
        Edit::StepChanged {
            aspects, ratios, ..
        } => (aspects, ratios),
        other => panic!("expected a changed step, got {other:?}"),
    }
}

#[test]
fn doubling_a_prefactor_gives_a_ratio_of_exactly_two_both_ways() {
    let old = hydrogen();
    let mut new = old.clone();
    // A plain step and a third-body step (reverse rates from thermochemistry, kf/Kc).
    let plain = step_index(&old, "H + O2 <=> O + OH");
    let third = step_index(&old, "H2 <=> H + H");
    new.steps[plain].forward.pre_exponential_si *= 2.0;
    new.steps[third].forward.pre_exponential_si *= 2.0;
    let diff = diff_mechanisms(&old, &new, &DiffOptions::default()).expect("diff");
    assert_eq!(diff.edits.len(), 2, "{:?}", diff.edits);
    for (edit, bath) in diff.edits.iter().zip([false, true]) {
        let (aspects, ratios) = changed(edit);
        assert!(
            matches!(aspects, [StepAspect::Forward { .. }]),
            "{aspects:?}"
        );
        // 3 temperatures; the third-body step at each of the 3 pressures.
        assert_eq!(ratios.len(), if bath { 9 } else { 3 });
        for r in ratios {
            // k = A f(T): doubling A doubles k exactly (a product by 2 is exact in binary
            // floating point), and kr = kf / Kc with it.
            assert_eq!(r.forward, 2.0, "{r:?}");
            assert_eq!(r.reverse, Some(2.0), "{r:?}");
            assert_eq!(r.pressure_pa.is_some(), bath);
        }
    }
    assert_eq!(diff.unchanged_steps.len(), old.steps.len() - 2);
}

#[test]
fn an_activation_energy_change_gives_the_closed_form_ratio() {
    let old = hydrogen();
    let mut new = old.clone();
    let j = step_index(&old, "O + H2 <=> H + OH");
    let de = 4184.0; // 1 kcal/mol, J/mol
    new.steps[j].forward.activation_energy_j_per_mol += de;
    let options = DiffOptions {
        temperatures_k: vec![300.0, 700.0, 1000.0, 2000.0],
        ..DiffOptions::default()
    };
    let diff = diff_mechanisms(&old, &new, &options).expect("diff");
    assert_eq!(diff.edits.len(), 1);
    let (_, ratios) = changed(&diff.edits[0]);
    assert_eq!(ratios.len(), 4);
    for r in ratios {
        // k_new/k_old = exp(-dE/(R T)) (Arrhenius form).
        let expected = (-de / (R * r.temperature_k)).exp();
        assert!(
            ((r.forward - expected) / expected).abs() < 1e-12,
            "{} K: {} vs {expected}",
            r.temperature_k,
            r.forward
        );
        let reverse = r.reverse.expect("reversible");
        assert!(((reverse - expected) / expected).abs() < 1e-12);
    }
}

/// The Arrhenius parameters `a` (SI) in the file units molecule, cm, ms and kJ/mol for a rate
/// constant of overall order `order`: A_SI = A c^(1-m) / t with c = (1/N_A)/1e-6 mol/m3 per
/// molecule/cm3 and t = 1e-3 s (docs/file-format.md, `[units]`), inverted.
fn rate_in_file_units(a: &stoik_mechanism::Arrhenius, order: f64) -> String {
    let c = (1.0 / N_A) / 1e-6;
    let prefactor = a.pre_exponential_si * 1e-3 / c.powf(1.0 - order);
    format!(
        "{{ prefactor = {prefactor:e}, temperature_exponent = {:e}, activation_energy = {:e} }}",
        a.temperature_exponent,
        a.activation_energy_j_per_mol / 1000.0
    )
}

/// The hydrogen mechanism rewritten: species and steps in reverse order, the terms of every
/// side in reverse order, other units (molecule, cm, ms, kJ/mol) with converted values, new
/// comments; its thermo file by absolute path.
fn rewritten_hydrogen(m: &Mechanism) -> String {
    let thermo = mechanism_path("thermo/janaf-nasa7.toml");
    let mut text = format!(
        "# The hydrogen mechanism rewritten for the diff tests.\nstoik_mechanism = 1\nthermo_files = [{:?}]\n\n[units]\namount = \"molecule\"\nlength = \"cm\"\ntime = \"ms\"\nactivation_energy = \"kJ/mol\"\n",
        thermo.display().to_string()
    );
    for s in m.species.iter().rev() {
        text.push_str(&format!(
            "\n[[species]] # {}\nname = \"{}\"\n",
            s.name, s.name
        ));
        let atoms: Vec<String> = s
            .composition
            .iter()
            .flatten()
            .map(|(e, n)| format!("{} = {n}", m.elements[*e].symbol))
            .collect();
        text.push_str(&format!("atoms = {{ {} }}\n", atoms.join(", ")));
    }
    let side = |terms: &[stoik_mechanism::StoichTerm]| -> String {
        terms
            .iter()
            .rev()
            .map(|t| format!("{} {}", t.coefficient, m.species[t.species].name))
            .collect::<Vec<_>>()
            .join(" + ")
    };
    for s in m.steps.iter().rev() {
        let order: f64 = s.reactants.iter().map(|t| t.coefficient).sum();
        text.push_str(&format!(
            "\n[[step]]   # comment edited\nequation = \"{}  {}  {}\"\n",
            side(&s.reactants),
            if s.reversible { "⇌" } else { "→" },
            side(&s.products)
        ));
        match &s.pressure_dependence {
            None => {
                let m_order = order + if s.third_body.is_some() { 1.0 } else { 0.0 };
                text.push_str(&format!(
                    "forward = {}\n",
                    rate_in_file_units(&s.forward, m_order)
                ));
            }
            Some(stoik_mechanism::PressureDependence::Falloff {
                low_pressure,
                high_pressure,
                broadening:
                    stoik_mechanism::Broadening::Troe {
                        a,
                        t3_k,
                        t1_k,
                        t2_k,
                    },
                chemically_activated: false,
            }) => {
                assert!(t2_k.is_none());
                text.push_str(&format!(
                    "forward = {}\nfalloff = {{ low_pressure = {}, broadening = \"troe\", troe = {{ a = {a:e}, t3 = {t3_k:e}, t1 = {t1_k:e} }} }}\n",
                    rate_in_file_units(high_pressure, order),
                    rate_in_file_units(low_pressure, order + 1.0)
                ));
            }
            Some(other) => panic!("the rewrite does not handle {other:?}"),
        }
        if let Some(ThirdBody::Mixture {
            default_efficiency,
            efficiencies,
        }) = &s.third_body
        {
            let list: Vec<String> = efficiencies
                .iter()
                .rev()
                .map(|(sp, e)| format!("{} = {e:e}", m.species[*sp].name))
                .collect();
            text.push_str(&format!(
                "third_body = {{ efficiency = {{ {} }}, default_efficiency = {default_efficiency:e} }}\n",
                list.join(", ")
            ));
        }
    }
    text
}

#[test]
fn a_rewrite_of_the_hydrogen_mechanism_is_no_kinetic_change() {
    let old = hydrogen();
    let text = rewritten_hydrogen(&old);
    let new = parse_mechanism(&text, "rewritten.toml")
        .unwrap_or_else(|e| panic!("{e}\n{text}"))
        .mechanism;
    // The rewrite really changed the file's numbers and order: the first step's prefactor
    // is another number in the file, the first step of the copy is the last of the original.
    assert!(
        new.steps[0].equation.starts_with("1 OH + 1 HO2"),
        "{}",
        new.steps[0].equation
    );
    let diff = diff_mechanisms(&old, &new, &DiffOptions::default()).expect("diff");
    assert!(diff.edits.is_empty(), "{:#?}", diff.edits);
    assert_eq!(diff.unchanged_steps.len(), 13);
    // Old step i is new step 12 - i (the steps were written in reverse order).
    for &(i, j) in &diff.unchanged_steps {
        assert_eq!(i + j, 12);
    }
    // At zero tolerance the unit conversions' rounding shows (they are not all exact).
    let strict = DiffOptions {
        relative_tolerance: 0.0,
        ..DiffOptions::default()
    };
    let exact = diff_mechanisms(&old, &new, &strict).expect("diff");
    assert!(
        exact.has_kinetic_change(),
        "no rounding at all in the rewrite"
    );
    for e in &exact.edits {
        for r in changed(e).1 {
            assert!((r.forward - 1.0).abs() < 1e-14, "{r:?}");
        }
    }
}

#[test]
fn a_reversible_step_written_the_other_way_round_is_a_change_unless_both_ways_are_explicit() {
    let old = hydrogen();
    let mut new = old.clone();
    let j = step_index(&old, "H + O2 <=> O + OH");
    let s = &mut new.steps[j];
    std::mem::swap(&mut s.reactants, &mut s.products);
    let diff = diff_mechanisms(&old, &new, &DiffOptions::default()).expect("diff");
    assert_eq!(diff.edits.len(), 1);
    let (aspects, ratios) = changed(&diff.edits[0]);
    assert!(aspects.contains(&StepAspect::Orientation), "{aspects:?}");
    // Old: kf and kr = kf/Kc. New, written O + OH <=> H + O2 with the same parameters: its
    // forward (O + OH) is kf, its reverse (H + O2) kf/Kc' with Kc' = 1/Kc. In the old
    // direction both ratios are therefore Kc(T) (dn = 0 here, so Kc = Kp = exp(-dG0/(R T))),
    // computed here from the NASA-7 polynomials by hand.
    let g = |name: &str, t: f64| hand_g_over_rt(&old, name, t);
    for r in ratios {
        let t = r.temperature_k;
        let dg = g("O", t) + g("OH", t) - g("H", t) - g("O2", t);
        let kc = (-dg).exp();
        assert!(
            ((r.forward - kc) / kc).abs() < 1e-9,
            "{t} K: {} vs {kc}",
            r.forward
        );
        let reverse = r.reverse.expect("both ways");
        assert!(
            ((reverse - kc) / kc).abs() < 1e-9,
            "{t} K: {reverse} vs {kc}"
        );
    }
    // With explicit parameters both ways, swapped, nothing changes.
    let mut old2 = old.clone();
    old2.steps[j].reverse = Some(stoik_mechanism::Arrhenius {
        pre_exponential_si: 1.5e7,
        temperature_exponent: 0.3,
        activation_energy_j_per_mol: 2000.0,
    });
    let mut new2 = old2.clone();
    let s = &mut new2.steps[j];
    std::mem::swap(&mut s.reactants, &mut s.products);
    let (f, r) = (s.forward, s.reverse.expect("set above"));
    s.forward = r;
    s.reverse = Some(f);
    let diff = diff_mechanisms(&old2, &new2, &DiffOptions::default()).expect("diff");
    assert!(diff.edits.is_empty(), "{:?}", diff.edits);
}

#[test]
fn a_thermochemistry_change_reports_the_hand_computed_enthalpy_and_gibbs_energy() {
    let old = hydrogen();
    let mut new = old.clone();
    let ho2 = new.species_index("HO2").expect("HO2");
    // Raise a6 (H/R offset, K) of both ranges by 1200 K: H rises by R x 1200 K at every
    // temperature and S stays, so G rises by the same amount (about the 10 kJ/mol by which
    // later evaluations put HO2 above JANAF).
    let thermo = new.species[ho2].thermo.as_mut().expect("HO2 thermo");
    thermo.low[5] += 1200.0;
    thermo.high[5] += 1200.0;
    let new_thermo = *thermo;
    let diff = diff_mechanisms(&old, &new, &DiffOptions::default()).expect("diff");
    assert_eq!(diff.edits.len(), 1, "{:?}", diff.edits);
    let Edit::SpeciesThermo {
        name,
        change,
        reverse_rates_affected,
        ..
    } = &diff.edits[0]
    else {
        panic!("{:?}", diff.edits[0]);
    };
    assert_eq!(name, "HO2");
    let old_thermo = old.species[ho2].thermo.expect("HO2 thermo");
    // H(298.15 K) = R T (H/(R T)) by the polynomial, by hand.
    let t = 298.15;
    let h_old = R * t * hand_h_s(&old_thermo, t).0;
    let h_new = R * t * hand_h_s(&new_thermo, t).0;
    let got_old = change.old_h298_j_per_mol.expect("old H");
    let got_new = change.new_h298_j_per_mol.expect("new H");
    assert!(
        (got_old - h_old).abs() < 1e-9 * h_old.abs().max(1.0),
        "{got_old} vs {h_old}"
    );
    assert!((got_new - h_new).abs() < 1e-9 * h_new.abs().max(1.0));
    // The fit reproduces JANAF's formation enthalpy of HO2, 2.092 kJ/mol (NIST-JANAF
    // Thermochemical Tables, 4th ed., 1998), within its stated 30 J/mol.
    assert!((got_old - 2092.0).abs() < 30.0, "{got_old}");
    let dh = change.delta_h298_j_per_mol().expect("both");
    assert!((dh - R * 1200.0).abs() < 1e-6, "{dh}");
    let t = 1000.0;
    let (h, s) = hand_h_s(&old_thermo, t);
    let g_old = R * t * (h - s);
    let got = change.old_g1000_j_per_mol.expect("old G");
    assert!((got - g_old).abs() < 1e-9 * g_old.abs(), "{got} vs {g_old}");
    let dg = change.delta_g1000_j_per_mol().expect("both");
    assert!((dg - R * 1200.0).abs() < 1e-6, "{dg}");
    // Every step with HO2 takes its reverse rate constant from thermochemistry: 5 of them.
    let with_ho2 = old
        .steps
        .iter()
        .filter(|s| {
            s.reactants
                .iter()
                .chain(&s.products)
                .any(|t| t.species == ho2)
        })
        .count();
    assert_eq!(with_ho2, 5);
    assert_eq!(reverse_rates_affected.len(), 5);
}

#[test]
fn an_efficiency_change_gives_the_ratio_of_the_bath_gas_concentrations() {
    let old = hydrogen();
    let mut new = old.clone();
    let j = step_index(&old, "H2 <=> H + H");
    let h2o = old.species_index("H2O").expect("H2O");
    let Some(ThirdBody::Mixture { efficiencies, .. }) = &mut new.steps[j].third_body else {
        panic!("mixture");
    };
    for (s, e) in efficiencies.iter_mut() {
        if *s == h2o {
            assert_eq!(*e, 12.0);
            *e = 11.0;
        }
    }
    let diff = diff_mechanisms(&old, &new, &DiffOptions::default()).expect("diff");
    assert_eq!(diff.edits.len(), 1);
    let (aspects, ratios) = changed(&diff.edits[0]);
    let [StepAspect::Efficiencies(changes)] = aspects else {
        panic!("{aspects:?}");
    };
    assert_eq!(changes.len(), 1);
    assert_eq!(changes[0].species.as_deref(), Some("H2O"));
    assert_eq!((changes[0].old, changes[0].new), (12.0, 11.0));
    // The bath gas: the 9 shared species in equal mole fractions, so [M] is proportional to
    // the sum of the efficiencies: H2 2.5, H2O 12 (then 11), 7 others at 1.
    let expected = (2.5 + 11.0 + 7.0) / (2.5 + 12.0 + 7.0);
    assert_eq!(ratios.len(), 9);
    for r in ratios {
        assert!(((r.forward - expected) / expected).abs() < 1e-13, "{r:?}");
        let reverse = r.reverse.expect("both ways");
        assert!(((reverse - expected) / expected).abs() < 1e-13);
    }
}

const DUPLICATES: &str = r#"
stoik_mechanism = 1
[units]
length = "m"
[[species]]
name = "A"
[[species]]
name = "B"
[[step]]
equation = "A -> B"
forward = { prefactor = 1.0 }
allow_duplicate = true
[[step]]
equation = "A -> B"
forward = { prefactor = 5.0, activation_energy = 1000.0 }
allow_duplicate = true
[[step]]
equation = "B -> A"
forward = { prefactor = 2.0 }
"#;

#[test]
fn duplicates_match_by_closest_parameters_and_reordering_them_changes_nothing() {
    let old = parse_mechanism(DUPLICATES, "dup.toml")
        .expect("loads")
        .mechanism;
    // Reordered duplicates: no change.
    let mut new = old.clone();
    new.steps.swap(0, 1);
    let diff = diff_mechanisms(&old, &new, &DiffOptions::default()).expect("diff");
    assert!(diff.edits.is_empty(), "{:?}", diff.edits);
    assert_eq!(diff.unchanged_steps, vec![(0, 1), (1, 0), (2, 2)]);
    // The second duplicate (now first) scaled by 3: matched to old step 1, the closer one.
    new.steps[0].forward.pre_exponential_si *= 3.0;
    let diff = diff_mechanisms(&old, &new, &DiffOptions::default()).expect("diff");
    assert_eq!(diff.edits.len(), 1);
    let Edit::StepChanged {
        old_index,
        new_index,
        ratios,
        ..
    } = &diff.edits[0]
    else {
        panic!("{:?}", diff.edits);
    };
    assert_eq!((*old_index, *new_index), (1, 0));
    for r in ratios {
        assert_eq!(r.forward, 3.0);
        assert_eq!(r.reverse, None);
    }
    // B -> A never matches A -> B: reversing the one-way step is a removal and an addition.
    let mut flipped = old.clone();
    let s = &mut flipped.steps[2];
    std::mem::swap(&mut s.reactants, &mut s.products);
    let diff = diff_mechanisms(&old, &flipped, &DiffOptions::default()).expect("diff");
    let kinds: Vec<String> = diff.edits.iter().map(Edit::describe).collect();
    assert_eq!(kinds, vec!["step removed: B -> A", "step added: A -> B"]);
}

#[test]
fn canonical_equations_ignore_term_order_spacing_and_arrow_spelling() {
    let text = r#"
stoik_mechanism = 1
[[species]]
name = "A"
[[species]]
name = "B"
[[species]]
name = "C"
[[step]]
equation = "B  +  A ⇌ 2 C"
forward = { prefactor = 1.0 }
reverse = { prefactor = 1.0 }
[[step]]
equation = "C + C -> A + B"
forward = { prefactor = 1.0 }
"#;
    let m = parse_mechanism(text, "c.toml").expect("loads").mechanism;
    assert_eq!(canonical_equation(&m, 0).as_deref(), Some("2 C <=> A + B"));
    assert_eq!(canonical_equation(&m, 1).as_deref(), Some("2 C -> A + B"));
    assert_eq!(canonical_equation(&m, 2), None);
}

/// A copy of `m` with edits of every kind, and the descriptions of those edits.
fn edited_hydrogen(m: &Mechanism) -> Mechanism {
    let mut new = m.clone();
    let plain = step_index(m, "H + O2 <=> O + OH");
    new.steps[plain].forward.pre_exponential_si *= 2.0;
    let ho2 = new.species_index("HO2").expect("HO2");
    if let Some(t) = new.species[ho2].thermo.as_mut() {
        t.low[5] += 1200.0;
        t.high[5] += 1200.0;
    }
    // Remove "O + H2O <=> OH + OH", add a one-way step and an unused species.
    let removed = step_index(m, "O + H2O <=> OH + OH");
    new.steps.remove(removed);
    let mut added: Step = new.steps[0].clone();
    let h = new.species_index("H").expect("H");
    let h2o = new.species_index("H2O").expect("H2O");
    let o = new.species_index("O").expect("O");
    added.equation = "H + HO2 -> H2O + O".to_string();
    added.reactants = vec![
        stoik_mechanism::StoichTerm {
            species: h,
            coefficient: 1.0,
        },
        stoik_mechanism::StoichTerm {
            species: ho2,
            coefficient: 1.0,
        },
    ];
    added.products = vec![
        stoik_mechanism::StoichTerm {
            species: h2o,
            coefficient: 1.0,
        },
        stoik_mechanism::StoichTerm {
            species: o,
            coefficient: 1.0,
        },
    ];
    added.reversible = false;
    added.forward.pre_exponential_si = 1e6;
    new.steps.push(added);
    let mut he = new.species[0].clone();
    he.name = "XE".to_string();
    he.composition = None;
    he.thermo = None;
    new.species.push(he);
    new
}

#[test]
fn reverting_one_edit_removes_it_and_only_it_from_the_diff() {
    let old = hydrogen();
    let new = edited_hydrogen(&old);
    let options = DiffOptions::default();
    let diff = diff_mechanisms(&old, &new, &options).expect("diff");
    let all: Vec<String> = diff.edits.iter().map(Edit::describe).collect();
    assert_eq!(
        all,
        vec![
            "species thermochemistry: HO2",
            "species added: XE",
            "step changed: H + O2 <=> O + OH",
            "step removed: 2 OH <=> H2O + O",
            "step added: H + HO2 -> H2O + O",
        ]
    );
    for edit in &diff.edits {
        let reverted = revert(&old, &new, edit).unwrap_or_else(|e| panic!("{e}"));
        let again = diff_mechanisms(&old, &reverted, &options).expect("diff");
        let left: Vec<String> = again.edits.iter().map(Edit::describe).collect();
        let expected: Vec<String> = all
            .iter()
            .filter(|d| **d != edit.describe())
            .cloned()
            .collect();
        assert_eq!(left, expected, "after reverting {}", edit.describe());
    }
    // Reverting everything, one edit after the other, gives back the old kinetics.
    let mut current = new.clone();
    loop {
        let d = diff_mechanisms(&old, &current, &options).expect("diff");
        let Some(edit) = d.edits.first() else { break };
        current = revert(&old, &current, edit).expect("revert");
    }
    assert!(!diff_mechanisms(&old, &current, &options)
        .expect("diff")
        .has_kinetic_change());
}

#[test]
fn reverting_a_species_addition_that_a_step_uses_is_refused() {
    let old = parse_mechanism(DUPLICATES, "dup.toml")
        .expect("loads")
        .mechanism;
    let mut new = old.clone();
    let mut c = new.species[0].clone();
    c.name = "C".to_string();
    new.species.push(c);
    let mut step = new.steps[2].clone();
    step.products[0].species = 2;
    step.equation = "B -> C".to_string();
    new.steps.push(step);
    let diff = diff_mechanisms(&old, &new, &DiffOptions::default()).expect("diff");
    let added = diff
        .edits
        .iter()
        .find(|e| matches!(e, Edit::SpeciesAdded { .. }))
        .expect("species added");
    let err = revert(&old, &new, added).expect_err("conflict");
    assert!(matches!(err, DiffError::RevertConflict { .. }), "{err}");
    assert!(err.to_string().contains("step 4 (B -> C)"), "{err}");
    // An edit of another pair of mechanisms is refused too.
    let foreign = Edit::SpeciesAdded {
        name: "Q".to_string(),
        new_index: 0,
    };
    assert!(matches!(
        revert(&old, &new, &foreign),
        Err(DiffError::EditMismatch { .. })
    ));
}

#[test]
fn the_toml_form_reads_back_to_the_same_numbers() {
    let old = hydrogen();
    let mut new = old.clone();
    let j = step_index(&old, "H + O2 <=> HO2");
    // The falloff step's high-pressure limit (`forward` is its copy).
    new.steps[j].forward.activation_energy_j_per_mol += 1234.5;
    let Some(stoik_mechanism::PressureDependence::Falloff { high_pressure, .. }) =
        &mut new.steps[j].pressure_dependence
    else {
        panic!("falloff");
    };
    high_pressure.activation_energy_j_per_mol += 1234.5;
    let diff = diff_mechanisms(&old, &new, &DiffOptions::default()).expect("diff");
    let (text, warnings) = diff_toml(&diff, "old.toml", "new.toml");
    assert!(warnings.is_empty());
    let doc: toml::Table = text.parse().unwrap_or_else(|e| panic!("{e}\n{text}"));
    assert_eq!(doc["stoik_diff"].as_integer(), Some(1));
    assert_eq!(doc["kinetic_change"].as_bool(), Some(true));
    let steps = doc["step"].as_array().expect("steps");
    let (_, ratios) = changed(&diff.edits[0]);
    let written = steps[0]["ratio"].as_array().expect("ratios");
    assert_eq!(written.len(), ratios.len());
    assert_eq!(ratios.len(), 9);
    for (w, r) in written.iter().zip(ratios) {
        let f = w["forward"].as_float().expect("forward");
        assert_eq!(f.to_bits(), r.forward.to_bits());
        let rev = w["reverse"].as_float().expect("reverse");
        assert_eq!(Some(rev.to_bits()), r.reverse.map(f64::to_bits));
        assert_eq!(w["pressure_pa"].as_float(), r.pressure_pa);
        // The falloff step's k changes by a factor between exp(-dE/(R T)) (high-pressure
        // limit changed alone, reached at high pressure) and 1 (low-pressure limit).
        let low = (-1234.5 / (R * r.temperature_k)).exp();
        assert!(r.forward < 1.0 && r.forward >= low * (1.0 - 1e-12), "{r:?}");
    }
}

#[test]
fn bad_options_and_bad_files_are_refused_with_their_place() {
    let m = hydrogen();
    let bad = DiffOptions {
        temperatures_k: vec![300.0, -5.0],
        ..DiffOptions::default()
    };
    let err = diff_mechanisms(&m, &m, &bad).expect_err("negative temperature");
    assert!(err.to_string().contains("temperatures_k: -5"), "{err}");
    let dir = temp_dir("bad");
    let path = dir.join("broken.toml");
    std::fs::write(&path, "stoik_mechanism = 1\n[[species]]\nname = \"A\"\n[[step]]\nequation = \"A -> Q\"\nforward = { prefactor = 1.0 }\n").expect("write");
    let err = load_mechanism_source(&MechanismSource::File(path.clone()), Path::new(""))
        .expect_err("unknown species");
    let text = err.to_string();
    // The unknown species Q is on line 5, column 13 (1-based, where `Q` stands in the string).
    assert!(text.contains("broken.toml:5:"), "{text}");
    assert!(text.contains("`Q`"), "{text}");
    let missing = dir.join("missing.toml");
    let err =
        load_mechanism_source(&MechanismSource::File(missing), Path::new("")).expect_err("missing");
    assert!(
        matches!(err, DiffError::Load(LoadError::Io { .. })),
        "{err}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

fn git(dir: &Path, args: &[&str]) -> bool {
    Command::new("git")
        .args([
            "-c",
            "user.name=stoik test",
            "-c",
            "user.email=test@example.invalid",
        ])
        .args(args)
        .current_dir(dir)
        .output()
        .map(|o| o.status.success())
        .unwrap_or(false)
}

#[test]
fn a_git_revision_is_read_with_its_thermo_files() {
    if Command::new("git").arg("--version").output().is_err() {
        eprintln!("SKIPPED: the `git` program is not installed");
        return;
    }
    let dir = temp_dir("git");
    std::fs::create_dir_all(dir.join("mech/thermo")).expect("folders");
    let original = std::fs::read_to_string(mechanism_path("hydrogen-oxygen.toml")).expect("read");
    std::fs::write(dir.join("mech/h2.toml"), &original).expect("write");
    std::fs::copy(
        mechanism_path("thermo/janaf-nasa7.toml"),
        dir.join("mech/thermo/janaf-nasa7.toml"),
    )
    .expect("copy");
    assert!(git(&dir, &["init", "-q"]));
    assert!(git(&dir, &["add", "."]));
    assert!(git(&dir, &["commit", "-q", "-m", "first"]));
    // The working copy: the first step's prefactor doubled (3.547e15 -> 7.094e15), and HO2's
    // a6 raised by 1200 K in the working tree's thermo file only (the revision keeps its own).
    let edited = original.replacen("prefactor = 3.547e15", "prefactor = 7.094e15", 1);
    assert_ne!(edited, original);
    std::fs::write(dir.join("mech/h2.toml"), &edited).expect("write");
    let thermo_path = dir.join("mech/thermo/janaf-nasa7.toml");
    let thermo = std::fs::read_to_string(&thermo_path).expect("read");
    let raised = thermo
        .replacen("-944.9216462548724", "255.0783537451276", 1)
        .replacen("-1134.1569380439087", "65.8430619560913", 1);
    assert_ne!(raised, thermo);
    std::fs::write(&thermo_path, raised).expect("write");
    let old_source = MechanismSource::from_argument("HEAD:mech/h2.toml", &dir);
    assert_eq!(
        old_source,
        MechanismSource::Git {
            revision: "HEAD".to_string(),
            path: "mech/h2.toml".to_string()
        }
    );
    let old = load_mechanism_source(&old_source, &dir).unwrap_or_else(|e| panic!("{e}"));
    let new = load_mechanism_source(&MechanismSource::File("mech/h2.toml".into()), &dir)
        .unwrap_or_else(|e| panic!("{e}"));
    let diff =
        diff_mechanisms(&old.mechanism, &new.mechanism, &DiffOptions::default()).expect("diff");
    assert_eq!(diff.edits.len(), 2, "{:?}", diff.edits);
    let Edit::SpeciesThermo { change, .. } = &diff.edits[0] else {
        panic!("{:?}", diff.edits[0]);
    };
    // H rises by R x 1200 K (a6 is H/R's offset in K).
    let dh = change.delta_h298_j_per_mol().expect("both");
    assert!((dh - R * 1200.0).abs() < 1e-6, "{dh}");
    for r in changed(&diff.edits[1]).1 {
        // 7.094e15 / 3.547e15 = 2 exactly in decimal; both convert with the same unit factor.
        assert!((r.forward - 2.0).abs() < 1e-15, "{r:?}");
    }
    // `./` paths are relative to the working folder, as in git.
    let sub = dir.join("mech");
    let relative = load_mechanism_source(
        &MechanismSource::from_argument("HEAD:./h2.toml", &sub),
        &sub,
    )
    .unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(relative.mechanism, old.mechanism);
    // A revision or a path that does not exist: located errors naming the argument.
    for (arg, needle) in [
        ("nosuchrev:mech/h2.toml", "nosuchrev:mech/h2.toml"),
        ("HEAD:mech/nosuch.toml", "HEAD:mech/nosuch.toml"),
        ("HEAD:", "no path after the `:`"),
    ] {
        let err =
            load_mechanism_source(&MechanismSource::from_argument(arg, &dir), &dir).expect_err(arg);
        assert!(matches!(err, DiffError::Git { .. }), "{err}");
        assert!(err.to_string().contains(needle), "{err}");
    }
    // A plain file whose name holds a `:` is read as a file.
    std::fs::write(
        dir.join("v1:h2.toml"),
        edited.replace("thermo/", "mech/thermo/"),
    )
    .expect("write");
    let source = MechanismSource::from_argument("v1:h2.toml", &dir);
    assert_eq!(source, MechanismSource::File("v1:h2.toml".into()));
    let colon = load_mechanism_source(&source, &dir).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(colon.mechanism, new.mechanism);
    let _ = std::fs::remove_dir_all(&dir);
}

const TABLE: &str = r#"
stoik_mechanism = 1
[units]
length = "m"
[[species]]
name = "A"
[[species]]
name = "B"
[[species]]
name = "C"
[[step]]
equation = "A + B -> C"
pressure_table = [
  { pressure = "0.1 atm", prefactor = 1e3, activation_energy = 1000 },
  { pressure = "10 atm", prefactor = 5e4, temperature_exponent = 0.5 },
]
"#;

#[test]
fn a_pressure_table_change_follows_the_log_pressure_interpolation() {
    let old = parse_mechanism(TABLE, "table.toml")
        .expect("loads")
        .mechanism;
    let mut new = old.clone();
    let Some(stoik_mechanism::PressureDependence::Table { points }) =
        &mut new.steps[0].pressure_dependence
    else {
        panic!("table");
    };
    points[0].rate_sets[0].pre_exponential_si *= 2.0;
    let diff = diff_mechanisms(&old, &new, &DiffOptions::default()).expect("diff");
    assert_eq!(diff.edits.len(), 1);
    let (aspects, ratios) = changed(&diff.edits[0]);
    assert!(
        matches!(aspects, [StepAspect::PressureDependence { .. }]),
        "{aspects:?}"
    );
    assert_eq!(ratios.len(), 9);
    // ln k is linear in ln P between the points (docs/file-format.md) and held outside: the
    // point at 0.1 atm doubled gives 2 at 0.01 atm (held), 2^(1/2) at 1 atm (half way in
    // ln P between 0.1 and 10 atm) and 1 at 100 atm (held at the 10 atm point).
    for r in ratios {
        let p = r.pressure_pa.expect("a pressure-dependent step");
        let expected = match p {
            1013.25 => 2.0,
            101_325.0 => 2f64.sqrt(),
            10_132_500.0 => 1.0,
            other => panic!("pressure {other}"),
        };
        assert!(((r.forward - expected) / expected).abs() < 1e-12, "{r:?}");
    }
}
