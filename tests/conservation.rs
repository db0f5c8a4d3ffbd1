//! Conservation laws: the left null space of the stoichiometric matrix on mechanisms whose
//! laws are published or follow by hand, and their drift along real runs.
//!
//! Known laws:
//! - Robertson: y1 + y2 + y3 = 1 (Hairer & Wanner, Solving ODEs II, section IV.10; Mazzia &
//!   Magherini, Test Set for IVP Solvers, release 2.4, "Bari");
//! - HIRES: y7 + y8 = 0.0057 (Bari, HIRES problem description);
//! - E5: y2 - y3 - y4 = 0 (Enright, Hull & Lindberg, BIT 15, 10, 1975; Hairer & Wanner,
//!   section IV.10);
//! - Oregonator: none (every species has an open source or sink: Field & Noyes 1974, in the
//!   form of Hairer & Wanner, section IV.1);
//! - hydrogen-oxygen: the H, O, Ar (and inert N2's N) atom totals (common practice: a
//!   balanced mechanism conserves its elements);
//! - Michaelis-Menten E + S <=> ES -> E + P: total enzyme E + ES and total substrate
//!   S + ES + P (common practice, any biochemistry text);
//! - element totals of the ozone flask over a long run (conservation of atoms).

#[path = "../benches/common/mod.rs"]
mod synthetic;

use std::path::Path;
use stoik::kinetics::{conservation_laws, ConservationLaw, Kinetics, LawKind};
use stoik::mechanism::{load_mechanism, parse_mechanism, Mechanism};
use stoik::reactor::{
    integrate, simulate, BoxConditions, ConservationBasis, ConservationCheckError, Constraint,
    Energy, IntegrationOptions, Profiles, ReactorConservation, ReactorModel,
};
use stoik::scenario::RunPlan;

fn mechanisms() -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("mechanisms")
}

fn bundled(name: &str) -> Mechanism {
    load_mechanism(&mechanisms().join(format!("{name}.toml")))
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism
}

fn inline(text: &str) -> Mechanism {
    let header = "stoik_mechanism = 1\n[units]\namount = \"mol\"\nlength = \"m\"\n";
    parse_mechanism(&format!("{header}{text}"), "<inline>")
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism
}

/// The net stoichiometric matrix N (species x steps) as f64.
fn net_matrix(m: &Mechanism) -> Vec<Vec<f64>> {
    let mut n = vec![vec![0.0; m.steps.len()]; m.species.len()];
    for (j, step) in m.steps.iter().enumerate() {
        for t in &step.products {
            n[t.species][j] += t.coefficient;
        }
        for t in &step.reactants {
            n[t.species][j] -= t.coefficient;
        }
    }
    n
}

/// Rank by floating-point Gaussian elimination with partial pivoting (independent of the
/// library's exact integer elimination; exact here, the entries being small integers).
fn rank(mut a: Vec<Vec<f64>>) -> usize {
    let rows = a.len();
    let cols = a.first().map_or(0, Vec::len);
    let mut r = 0;
    for c in 0..cols {
        let Some(p) = (r..rows).max_by(|&x, &y| a[x][c].abs().total_cmp(&a[y][c].abs())) else {
            break;
        };
        if a[p][c].abs() < 1e-9 {
            continue;
        }
        a.swap(r, p);
        let pivot = a[r].clone();
        for row in &mut a[r + 1..rows] {
            let f = row[c] / pivot[c];
            for (x, p) in row[c..cols].iter_mut().zip(&pivot[c..cols]) {
                *x -= f * p;
            }
        }
        r += 1;
    }
    r
}

/// Checks that every law satisfies l^T N = 0 exactly (f64 sums of small integers) and that
/// the number of laws is n_species - rank(N).
fn check_null_space(m: &Mechanism, laws: &[ConservationLaw]) {
    let n = net_matrix(m);
    for law in laws {
        assert_eq!(law.coefficients.len(), m.species.len());
        for j in 0..m.steps.len() {
            let sum: f64 = law
                .coefficients
                .iter()
                .zip(&n)
                .map(|(l, row)| l * row[j])
                .sum();
            assert_eq!(sum, 0.0, "law `{}` changes in step {}", law.name, j + 1);
        }
    }
    assert_eq!(
        laws.len(),
        m.species.len() - rank(n),
        "dimension of the left null space"
    );
}

fn names(laws: &[ConservationLaw]) -> Vec<&str> {
    laws.iter().map(|l| l.name.as_str()).collect()
}

#[test]
fn robertson_conserves_a_plus_b_plus_c() {
    let m = bundled("robertson");
    let laws = conservation_laws(&m, &[]).unwrap();
    check_null_space(&m, &laws);
    assert_eq!(names(&laws), ["A + B + C"]);
    assert_eq!(laws[0].coefficients, [1.0, 1.0, 1.0]);
    assert_eq!(laws[0].kind, LawKind::Moiety);
}

#[test]
fn hires_conserves_p7_plus_p8() {
    let m = bundled("hires");
    let laws = conservation_laws(&m, &[]).unwrap();
    check_null_space(&m, &laws);
    assert_eq!(names(&laws), ["P7 + P8"]);
    assert_eq!(
        laws[0].coefficients,
        [0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0, 1.0]
    );
}

/// E5 (Enright, Hull & Lindberg 1975) in mass-action form, rate constants of the published
/// problem (Hairer & Wanner, section IV.10).
const E5: &str = r#"
[[species]]
name = "Y1"
[[species]]
name = "Y2"
[[species]]
name = "Y3"
[[species]]
name = "Y4"
[[step]]
equation = "Y1 -> Y2 + Y3"
forward = { prefactor = 7.89e-10 }
[[step]]
equation = "Y1 + Y3 -> Y4"
forward = { prefactor = 1.1e7 }
[[step]]
equation = "Y2 + Y3 -> "
forward = { prefactor = 1.13e9 }
[[step]]
equation = "Y4 -> Y3"
forward = { prefactor = 1.13e3 }
"#;

#[test]
fn e5_conserves_y2_minus_y3_minus_y4() {
    let m = inline(E5);
    let laws = conservation_laws(&m, &[]).unwrap();
    check_null_space(&m, &laws);
    assert_eq!(names(&laws), ["Y2 - Y3 - Y4"]);
    assert_eq!(laws[0].coefficients, [0.0, 1.0, -1.0, -1.0]);
}

#[test]
fn oregonator_conserves_nothing() {
    let m = bundled("oregonator");
    let laws = conservation_laws(&m, &[]).unwrap();
    check_null_space(&m, &laws);
    assert!(laws.is_empty());
    assert_eq!(rank(net_matrix(&m)), 3);
}

#[test]
fn hydrogen_oxygen_conserves_its_element_totals() {
    let m = bundled("hydrogen-oxygen");
    let laws = conservation_laws(&m, &[]).unwrap();
    check_null_space(&m, &laws);
    let mut got = names(&laws);
    got.sort_unstable();
    assert_eq!(got, ["Ar atoms", "H atoms", "N atoms", "O atoms"]);
    for law in &laws {
        let LawKind::Element(e) = law.kind else {
            panic!("`{}` should be an element total", law.name)
        };
        // The coefficients are the atom counts of the file's compositions.
        for (i, s) in m.species.iter().enumerate() {
            let atoms: f64 = s
                .composition
                .iter()
                .flatten()
                .filter(|(el, _)| *el == e)
                .map(|(_, n)| n)
                .sum();
            assert_eq!(law.coefficients[i], atoms, "{} in {}", law.name, s.name);
        }
    }
    // H atoms: 2 H2 + 2 H2O + OH + H + HO2.
    let h = laws.iter().find(|l| l.name == "H atoms").unwrap();
    let h2o = m.species_index("H2O").unwrap();
    assert_eq!(h.coefficients[h2o], 2.0);
}

#[test]
fn law_count_matches_the_rank_on_a_synthetic_mechanism() {
    // 300 species, 900 random hub-shaped steps (the benchmarks' generator): no published
    // laws, but the count must be n - rank(N) with rank from the floating-point elimination
    // above, and every law exact.
    let m = synthetic::synthetic_mechanism(300, 11);
    let laws = conservation_laws(&m, &[]).unwrap();
    check_null_space(&m, &laws);
    assert!(!laws.is_empty());
}

#[test]
fn dependent_element_totals_are_listed_once() {
    // N2O4 <=> 2 NO2 alone: the O total (2 NO2 + 4 N2O4) is twice the N total (NO2 + 2 N2O4);
    // the null space has dimension 2 - 1 = 1 (by hand).
    let m = inline(
        r#"
[[species]]
name = "NO2"
atoms = { N = 1, O = 2 }
[[species]]
name = "N2O4"
atoms = { N = 2, O = 4 }
[[step]]
equation = "N2O4 <=> 2 NO2"
forward = { prefactor = 1.0e5 }
reverse = { prefactor = 1.0e3 }
"#,
    );
    let laws = conservation_laws(&m, &[]).unwrap();
    check_null_space(&m, &laws);
    assert_eq!(names(&laws), ["N atoms"]);
    assert_eq!(laws[0].coefficients, [1.0, 2.0]);
    assert_eq!(laws[0].kind, LawKind::Element(0));
}

#[test]
fn michaelis_menten_conserves_enzyme_and_substrate() {
    let m = inline(
        r#"
[[species]]
name = "E"
[[species]]
name = "S"
[[species]]
name = "ES"
[[species]]
name = "P"
[[step]]
equation = "E + S <=> ES"
forward = { prefactor = 1.0e3 }
reverse = { prefactor = 1.0 }
[[step]]
equation = "ES -> E + P"
forward = { prefactor = 2.0 }
"#,
    );
    let laws = conservation_laws(&m, &[]).unwrap();
    check_null_space(&m, &laws);
    assert_eq!(names(&laws), ["E + ES", "S + ES + P"]);
    assert_eq!(laws[0].coefficients, [1.0, 0.0, 1.0, 0.0]);
    assert_eq!(laws[1].coefficients, [0.0, 1.0, 1.0, 1.0]);
}

#[test]
fn fractional_coefficients_give_integer_laws() {
    // A -> 0.5 B: -l_A + 0.5 l_B = 0, so l = (1, 2): A + 2 B (by hand).
    let m = inline(
        r#"
[[species]]
name = "A"
[[species]]
name = "B"
[[step]]
equation = "A -> 0.5 B"
forward = { prefactor = 1.0 }
"#,
    );
    let laws = conservation_laws(&m, &[]).unwrap();
    check_null_space(&m, &laws);
    assert_eq!(names(&laws), ["A + 2 B"]);
    // A -> 0.62 B + 0.38 C: the extreme semi-positive laws are 31 A + 50 B (l_C = 0) and
    // 19 A + 50 C (l_B = 0), by hand from -l_A + 0.62 l_B + 0.38 l_C = 0.
    let m = inline(
        r#"
[[species]]
name = "A"
[[species]]
name = "B"
[[species]]
name = "C"
[[step]]
equation = "A -> 0.62 B + 0.38 C"
forward = { prefactor = 1.0 }
"#,
    );
    let laws = conservation_laws(&m, &[]).unwrap();
    assert_eq!(names(&laws), ["19 A + 50 C", "31 A + 50 B"]);
    assert_eq!(laws[1].coefficients, [31.0, 50.0, 0.0]);
}

#[test]
fn open_species_are_left_out_of_the_laws() {
    // A <=> B and C <=> D conserve A + B and C + D; emitting or fixing C leaves A + B.
    let m = inline(
        r#"
[[species]]
name = "A"
[[species]]
name = "B"
[[species]]
name = "C"
[[species]]
name = "D"
[[step]]
equation = "A <=> B"
forward = { prefactor = 2.0 }
reverse = { prefactor = 1.0 }
[[step]]
equation = "C <=> D"
forward = { prefactor = 3.0 }
reverse = { prefactor = 1.0 }
"#,
    );
    assert_eq!(
        names(&conservation_laws(&m, &[]).unwrap()),
        ["A + B", "C + D"]
    );
    assert_eq!(names(&conservation_laws(&m, &[2]).unwrap()), ["A + B"]);
    assert_eq!(
        names(&conservation_laws(&m, &[3, 0]).unwrap()),
        Vec::<&str>::new()
    );

    // A run with C emitted at 0.5 mol/(m3 s): A + B stays, C + D grows by 0.5 t.
    let kinetics = Kinetics::compile(&m).unwrap();
    let model = ReactorModel {
        conditions: BoxConditions {
            emissions: vec![(2, 0.5)],
            ..BoxConditions::default()
        },
        ..ReactorModel::default()
    };
    // Fixing D and depositing A leave nothing: A + B loses A, C + D loses D.
    let closed_off = ReactorModel {
        conditions: BoxConditions {
            fixed_species: vec![3],
            deposition: vec![(0, 0.1)],
            ..BoxConditions::default()
        },
        ..ReactorModel::default()
    };
    let conservation = ReactorConservation::new(&m, &closed_off).unwrap();
    assert_eq!(conservation.open_species, [0, 3]);
    assert!(conservation.laws.is_empty());

    let conservation = ReactorConservation::new(&m, &model).unwrap();
    assert_eq!(conservation.open_species, [2]);
    assert_eq!(names(&conservation.laws), ["A + B"]);
    let options = IntegrationOptions::new(4);
    let times: Vec<f64> = (0..=20).map(|i| 0.1 * i as f64).collect();
    let p = simulate(
        &kinetics,
        &model,
        300.0,
        &[1.0, 0.0, 0.2, 0.0],
        &times,
        &options,
    )
    .unwrap();
    let drifts = conservation.drifts(&p, &options);
    assert_eq!(drifts.len(), 1);
    assert!(!drifts[0].exceeded, "{drifts:?}");
    assert_eq!(drifts[0].initial_value, 1.0);
    let last = p.concentrations_mol_per_m3.last().unwrap();
    // C + D = 0.2 + 0.5 t exactly (the emission is its only change).
    assert!((last[2] + last[3] - 1.2).abs() < 1e-9, "{last:?}");
}

/// Integrates a bundled scenario in `model` with the scenario's tolerances.
fn run_scenario(name: &str, model: &ReactorModel) -> (Mechanism, Profiles, IntegrationOptions) {
    let plan = RunPlan::load(&mechanisms().join(format!("{name}.scenario.toml")))
        .unwrap_or_else(|e| panic!("{e}"));
    let m = plan.mechanism().clone();
    let kinetics = Kinetics::compile(&m).unwrap_or_else(|e| panic!("{e}"));
    let mut options = IntegrationOptions::new(m.species.len());
    options.relative_tolerance = plan.scenario().relative_tolerance;
    options.absolute_tolerances_mol_per_m3 = plan.options().absolute_tolerances_mol_per_m3.clone();
    let p = simulate(
        &kinetics,
        model,
        plan.temperature_k(),
        plan.initial_mol_per_m3(),
        plan.output_times_s(),
        &options,
    )
    .unwrap_or_else(|e| panic!("{e}"));
    (m, p, options)
}

#[test]
fn drifts_of_published_problems_stay_within_the_allowance() {
    for (name, law, initial) in [
        // Robertson from y = (1, 0, 0): A + B + C = 1 (Hairer & Wanner).
        ("robertson", "A + B + C", 1.0),
        // HIRES: y7 + y8 = 0.0057 (Bari).
        ("hires", "P7 + P8", 0.0057),
    ] {
        let model = ReactorModel::default();
        let (m, p, options) = run_scenario(name, &model);
        let conservation = ReactorConservation::new(&m, &model).unwrap();
        assert_eq!(conservation.basis, ConservationBasis::PerVolume);
        let drifts = conservation.drifts(&p, &options);
        assert_eq!(drifts.len(), 1);
        let d = &drifts[0];
        eprintln!("{name}: {d:?}");
        assert_eq!(d.name, law);
        assert_eq!(d.initial_value, initial);
        assert!(!d.exceeded && d.max_drift <= d.allowed, "{d:?}");
        // The invariant holds to rounding, far below the tolerances.
        assert!(d.relative_drift < 1e-13, "{d:?}");
    }
}

#[test]
fn hydrogen_ignition_keeps_its_atoms_per_volume_and_per_mass() {
    let cv = ReactorModel {
        energy: Energy::Adiabatic,
        ..ReactorModel::default()
    };
    let (m, p, options) = run_scenario("hydrogen-oxygen", &cv);
    let conservation = ReactorConservation::new(&m, &cv).unwrap();
    let drifts = conservation.drifts(&p, &options);
    assert_eq!(drifts.len(), 4);
    for d in &drifts {
        eprintln!("hydrogen, constant volume: {d:?}");
        assert!(!d.exceeded, "{d:?}");
        assert!(d.relative_drift < 1e-12, "{d:?}");
    }
    // Initial H atoms: 2 x_H2 P/(R T) = 2 * 0.1 * 101325 / (8.314462618 * 1100) mol/m3.
    let h = drifts.iter().find(|d| d.name == "H atoms").unwrap();
    let expected = 2.0 * 0.1 * 101_325.0 / (8.314_462_618 * 1100.0);
    assert!(
        (h.initial_value - expected).abs() < 1e-12 * expected,
        "{h:?}"
    );

    // At constant pressure the gas expands: atoms per m3 fall, atoms per kg stay.
    let cp = ReactorModel {
        constraint: Constraint::ConstantPressure,
        energy: Energy::Adiabatic,
        ..ReactorModel::default()
    };
    let (m, p, options) = run_scenario("hydrogen-oxygen", &cp);
    let conservation = ReactorConservation::new(&m, &cp).unwrap();
    assert!(matches!(
        conservation.basis,
        ConservationBasis::PerMass { .. }
    ));
    assert_eq!(conservation.basis.unit(), "mol/kg");
    let drifts = conservation.drifts(&p, &options);
    for d in &drifts {
        eprintln!("hydrogen, constant pressure: {d:?}");
        assert!(!d.exceeded, "{d:?}");
        assert!(d.relative_drift < 1e-12, "{d:?}");
    }
    let per_volume = ReactorConservation::new(&m, &ReactorModel::default()).unwrap();
    let h = per_volume
        .drifts(&p, &options)
        .into_iter()
        .find(|d| d.name == "H atoms")
        .unwrap();
    // The temperature more than doubles at fixed pressure: H atoms per m3 drop by > 40 %.
    assert!(h.max_drift > 0.4 * h.initial_value, "{h:?}");
}

#[test]
fn constant_pressure_without_molar_masses_is_not_checked() {
    let m = bundled("robertson");
    let cp = ReactorModel {
        constraint: Constraint::ConstantPressure,
        ..ReactorModel::default()
    };
    assert_eq!(
        ReactorConservation::new(&m, &cp),
        Err(ConservationCheckError::NoMolarMass {
            species: "A".to_string()
        })
    );
}

#[test]
fn a_law_broken_by_hand_is_flagged() {
    let cv = ReactorModel {
        energy: Energy::Adiabatic,
        ..ReactorModel::default()
    };
    let (m, mut p, options) = run_scenario("hydrogen-oxygen", &cv);
    let conservation = ReactorConservation::new(&m, &cv).unwrap();
    // Add 1e-6 mol/m3 of argon to row 1000: the Ar total moves by exactly that much, far
    // above its allowance (rtol 1e-8 times ~9.4 mol/m3 plus atol 1e-14 mol/m3).
    let ar = m.species_index("AR").unwrap();
    p.concentrations_mol_per_m3[1000][ar] += 1e-6;
    let drifts = conservation.drifts(&p, &options);
    let ar_law = drifts.iter().find(|d| d.name == "Ar atoms").unwrap();
    assert!(ar_law.exceeded, "{ar_law:?}");
    assert!((ar_law.max_drift - 1e-6).abs() < 1e-14, "{ar_law:?}");
    assert_eq!(ar_law.time_of_max_drift_s, p.times_s[1000]);
    assert!(ar_law.allowed < 1e-6 && ar_law.allowed > 9e-8, "{ar_law:?}");
    for d in drifts.iter().filter(|d| d.name != "Ar atoms") {
        assert!(!d.exceeded, "{d:?}");
    }
}

#[test]
fn element_totals_are_conserved_over_a_long_run() {
    // The bundled ozone demo, integrated far past its relaxation, keeps its O and Ar totals
    // to 1e-10 relative.
    let root = mechanisms();
    let plan = RunPlan::load(&root.join("ozone-flask.scenario.toml")).unwrap();
    let mechanism = plan.mechanism();
    let kinetics = Kinetics::compile(mechanism).unwrap_or_else(|e| panic!("{e}"));
    let mut options = IntegrationOptions::new(kinetics.n_species());
    options.relative_tolerance = 1e-8;
    options.absolute_tolerances_mol_per_m3 = vec![1e-18; kinetics.n_species()];
    let times: Vec<f64> = (0..=40)
        .map(|i| {
            if i == 0 {
                0.0
            } else {
                10f64.powf(-6.0 + 0.25 * i as f64)
            }
        })
        .collect();
    let profiles = integrate(
        &kinetics,
        plan.temperature_k(),
        plan.initial_mol_per_m3(),
        &times,
        &options,
    )
    .unwrap();
    let start = mechanism.element_totals(&profiles.concentrations_mol_per_m3[0]);
    assert_eq!(start.len(), 2, "elements O and Ar");
    for row in &profiles.concentrations_mol_per_m3 {
        let totals = mechanism.element_totals(row);
        for (s, t) in start.iter().zip(&totals) {
            assert!(
                ((t - s) / s).abs() < 1e-10,
                "element total moved: {s} -> {t}"
            );
        }
    }
    // The same through the conservation laws: O atoms and Ar atoms, within the allowance.
    let conservation = ReactorConservation::new(mechanism, &ReactorModel::default()).unwrap();
    let drifts = conservation.drifts(&profiles, &options);
    assert_eq!(names(&conservation.laws), ["O atoms", "Ar atoms"]);
    assert!(drifts.iter().all(|d| !d.exceeded), "{drifts:?}");
    // And the run really did something: most ozone is gone after 1e4 s at 600 K.
    let o3 = mechanism.species_index("O3").unwrap();
    let last = profiles.concentrations_mol_per_m3.last().unwrap();
    assert!(last[o3] < 1e-3 * profiles.concentrations_mol_per_m3[0][o3]);
}

/// The `stoik run` summary lists each law with its drift and allowance (Robertson: A + B + C
/// = 1, Hairer & Wanner) and says which species an open box leaves out.
#[test]
fn run_summary_lists_the_laws_with_their_drift() {
    let dir = std::env::temp_dir().join(format!("stoik-conservation-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let run = |scenario: &str| {
        let out = std::process::Command::new(env!("CARGO_BIN_EXE_stoik"))
            .args(["run", mechanisms().join(scenario).to_str().unwrap()])
            .args(["--output", dir.join("out.csv").to_str().unwrap()])
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(0));
        let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
        assert!(!stderr.contains("conserved quantity"), "{stderr}");
        String::from_utf8_lossy(&out.stdout).into_owned()
    };

    let stdout = run("robertson.scenario.toml");
    assert!(!stdout.contains("element balance"), "{stdout}");
    let line = stdout
        .lines()
        .find(|l| l.trim_start().starts_with("A + B + C"))
        .unwrap_or_else(|| panic!("{stdout}"));
    // "  A + B + C     1.000000e0  drift 7.8e-15 (allowed 1.0e-8)"
    let fields: Vec<&str> = line.split_whitespace().collect();
    assert_eq!(fields[5].parse::<f64>().unwrap(), 1.0);
    assert_eq!(fields[6], "drift");
    let drift: f64 = fields[7].parse().unwrap();
    let allowed: f64 = fields[9].trim_end_matches(')').parse().unwrap();
    // Scenario rtol 1e-8 with atol 1e-14 on a law of size 1.
    assert!((1e-8..1.01e-8).contains(&allowed), "{line}");
    assert!(drift < 1e-13, "{line}");

    // The urban box exchanges every species but O, O1D, OH, HO2, RO2 and CARB; by hand, its
    // steps force l = 0 on those: O + O2 -> O3 gives l_O = 0, O1D -> O then l_O1D = 0,
    // O1D + H2O -> 2 OH l_OH = 0, RH + OH + O2 -> RO2 + H2O l_RO2 = 0, HO2 + HO2 -> H2O2 + O2
    // l_HO2 = 0, and RO2 + NO + O2 -> NO2 + CARB + HO2 l_CARB = 0.
    let stdout = run("urban-box.scenario.toml");
    assert!(
        stdout.contains("conserved quantities: none (no combination of the other species is unchanged by every step)"),
        "{stdout}"
    );
    assert!(
        stdout.contains("(open box: NO, NO2, O3, RH, HNO3, H2O2, N2, O2, H2O exchange matter"),
        "{stdout}"
    );
}
