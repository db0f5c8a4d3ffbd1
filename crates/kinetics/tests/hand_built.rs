//! A `Mechanism` built by hand goes through the same checks as a loaded one:
//! `Kinetics::compile` returns an error instead of panicking or compiling NaN rates.

use stoik_kinetics::{CompileError, JacobianPattern, Kinetics, PatternError};
use stoik_mechanism::{
    Arrhenius, Broadening, Mechanism, MechanismItem, MechanismProblem, PressureDependence,
    PressurePoint, Species, Step, StoichTerm, ThirdBody,
};

fn species(name: &str) -> Species {
    Species {
        name: name.to_string(),
        composition: None,
        note: None,
        location: None,
        thermo: None,
        collision_diameter_m: None,
    }
}

fn arrhenius(a: f64) -> Arrhenius {
    Arrhenius {
        pre_exponential_si: a,
        temperature_exponent: 0.0,
        activation_energy_j_per_mol: 0.0,
    }
}

fn term(species: usize) -> StoichTerm {
    StoichTerm {
        species,
        coefficient: 1.0,
    }
}

/// A + B -> C with k = 2 m3/(mol s), species A, B, C.
fn mechanism() -> Mechanism {
    Mechanism {
        title: None,
        elements: Vec::new(),
        species: vec![species("A"), species("B"), species("C")],
        steps: vec![Step {
            equation: "A + B -> C".to_string(),
            reactants: vec![term(0), term(1)],
            products: vec![term(2)],
            reversible: false,
            forward: arrhenius(2.0),
            reverse: None,
            third_body: None,
            pressure_dependence: None,
            forward_orders: None,
            allow_duplicate: false,
            note: None,
            location: None,
        }],
    }
}

fn compile_with(change: impl FnOnce(&mut Step)) -> Result<Kinetics, CompileError> {
    let mut m = mechanism();
    change(&mut m.steps[0]);
    Kinetics::compile(&m)
}

/// The one problem of a refused mechanism.
fn only_problem(result: Result<Kinetics, CompileError>) -> MechanismProblem {
    match result {
        Err(CompileError { mut problems }) if problems.len() == 1 => problems.remove(0),
        other => panic!("expected one problem, got {other:?}"),
    }
}

/// The step index and value of a refused number.
fn bad_value(result: Result<Kinetics, CompileError>) -> (usize, f64) {
    match only_problem(result) {
        MechanismProblem::ValueOutOfRange {
            item: MechanismItem::Step(step),
            value,
            ..
        } => (step, value),
        other => panic!("expected a bad value, got {other:?}"),
    }
}

/// Whether the mechanism was refused for contradicting fields of step 0.
fn inconsistent_step_0(result: Result<Kinetics, CompileError>) -> bool {
    matches!(
        only_problem(result),
        MechanismProblem::Inconsistent {
            item: MechanismItem::Step(0),
            ..
        }
    )
}

#[test]
fn a_valid_hand_built_mechanism_compiles_and_follows_mass_action() {
    // Mass action (law of mass action, Guldberg & Waage): q = k [A][B] = 2 * 0.5 * 3.
    let kinetics = Kinetics::compile(&mechanism()).expect("valid");
    let k = kinetics.rate_constants(300.0);
    let mut q = [0.0];
    kinetics.rates_of_progress(&k, &[0.5, 3.0, 0.0], &mut q);
    assert_eq!(q[0], 3.0);
}

#[test]
fn species_indices_out_of_range_are_errors() {
    let out_of_range = |r: Result<Kinetics, CompileError>| match only_problem(r) {
        MechanismProblem::SpeciesIndexOutOfRange { index, len, .. } => (index, len),
        other => panic!("expected an index error, got {other:?}"),
    };
    assert_eq!(
        out_of_range(compile_with(|s| s.reactants[1] = term(7))),
        (7, 3)
    );
    assert_eq!(
        out_of_range(compile_with(|s| s.products[0] = term(3))),
        (3, 3)
    );
    assert_eq!(
        out_of_range(compile_with(|s| s.forward_orders = Some(vec![(9, 1.0)]))),
        (9, 3)
    );
    assert_eq!(
        out_of_range(compile_with(|s| s.third_body = Some(ThirdBody::Species(4)))),
        (4, 3)
    );
    assert_eq!(
        out_of_range(compile_with(|s| {
            s.third_body = Some(ThirdBody::Mixture {
                default_efficiency: 1.0,
                efficiencies: vec![(5, 2.0)],
            })
        })),
        (5, 3)
    );
}

#[test]
fn non_finite_or_non_positive_numbers_are_errors() {
    assert_eq!(
        bad_value(compile_with(|s| s.forward = arrhenius(-1.0))),
        (0, -1.0)
    );
    assert_eq!(
        bad_value(compile_with(|s| s.forward = arrhenius(0.0))),
        (0, 0.0)
    );
    assert!(bad_value(compile_with(|s| s.forward = arrhenius(f64::NAN)))
        .1
        .is_nan());
    assert_eq!(
        bad_value(compile_with(|s| {
            s.reversible = true;
            s.reverse = Some(arrhenius(f64::INFINITY));
        })),
        (0, f64::INFINITY)
    );
    assert_eq!(
        bad_value(compile_with(
            |s| s.forward.activation_energy_j_per_mol = f64::INFINITY
        )),
        (0, f64::INFINITY)
    );
    assert_eq!(
        bad_value(compile_with(|s| s.reactants[0].coefficient = -2.0)),
        (0, -2.0)
    );
    assert_eq!(
        bad_value(compile_with(|s| s.forward_orders = Some(vec![(0, -0.5)]))),
        (0, -0.5)
    );
    assert_eq!(
        bad_value(compile_with(|s| {
            s.third_body = Some(ThirdBody::Mixture {
                default_efficiency: -1.0,
                efficiencies: Vec::new(),
            })
        })),
        (0, -1.0)
    );
}

#[test]
fn malformed_pressure_dependence_is_an_error() {
    let troe = |t3_k: f64| {
        move |s: &mut Step| {
            s.third_body = Some(ThirdBody::Species(2));
            s.pressure_dependence = Some(PressureDependence::Falloff {
                low_pressure: arrhenius(1.0),
                high_pressure: arrhenius(2.0),
                broadening: Broadening::Troe {
                    a: 0.5,
                    t3_k,
                    t1_k: 1000.0,
                    t2_k: None,
                },
                chemically_activated: false,
            });
        }
    };
    assert!(compile_with(troe(100.0)).is_ok());
    assert_eq!(bad_value(compile_with(troe(0.0))), (0, 0.0));
    let table = |points: Vec<PressurePoint>| {
        move |s: &mut Step| s.pressure_dependence = Some(PressureDependence::Table { points })
    };
    let point = |pressure_pa: f64| PressurePoint {
        pressure_pa,
        rate_sets: vec![arrhenius(1.0)],
    };
    assert!(compile_with(table(vec![point(1e4), point(1e5)])).is_ok());
    assert!(inconsistent_step_0(compile_with(table(Vec::new()))));
    assert!(inconsistent_step_0(compile_with(table(vec![
        point(1e5),
        point(1e4)
    ]))));
    assert_eq!(bad_value(compile_with(table(vec![point(-1.0)]))), (0, -1.0));
}

#[test]
fn a_pattern_entry_outside_the_matrix_is_an_error() {
    assert_eq!(
        JacobianPattern::from_entries(3, vec![(1, 3)]),
        Err(PatternError::OutOfRange {
            row: 1,
            col: 3,
            n: 3
        })
    );
    // A + B -> C: rows A, B, C (net changes) in columns A, B (kinetic dependencies), plus
    // the diagonal: 7 entries of 9.
    let kinetics = Kinetics::compile(&mechanism()).expect("valid");
    assert_eq!(kinetics.jacobian_pattern().nnz(), 7);
}
