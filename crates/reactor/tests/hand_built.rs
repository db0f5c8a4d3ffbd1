//! Values built by hand (photolysis rates, profiles, watches, criteria with species indices)
//! give errors through the public API, never panics.

mod common;

use common::{kinetics, options, step, T};
use stoik_reactor::{
    ignition_delay, integrate, simulate, BoxConditions, IgnitionCriterion, IntegrationError,
    LinearAlgebra, PhotolysisForm, PhotolysisRate, Profiles, Quantity, ReactorError, ReactorModel,
    Watch,
};

fn table(times_s: Vec<f64>, rates_per_s: Vec<f64>) -> PhotolysisRate {
    PhotolysisRate {
        form: PhotolysisForm::Table {
            times_s,
            rates_per_s,
        },
        sun: None,
    }
}

#[test]
fn a_photolysis_table_with_unequal_lengths_is_an_error() {
    // Linear interpolation between (0 s, 0.1/s) and (10 s, 0.3/s): 0.2/s at 5 s.
    let good = table(vec![0.0, 10.0], vec![0.1, 0.3]);
    assert!((good.rate_at(5.0).unwrap() - 0.2).abs() < 1e-15);
    let short = table(vec![0.0, 10.0, 20.0], vec![0.1]);
    assert!(matches!(
        short.rate_at(15.0),
        Err(ReactorError::BadBoxConditions(_))
    ));
    assert!(table(Vec::new(), Vec::new()).rate_at(0.0).is_err());
    // In a reactor, the run is refused before it starts.
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 0.5)]);
    let model = ReactorModel {
        conditions: BoxConditions {
            photolysis: vec![(0, short)],
            ..Default::default()
        },
        ..Default::default()
    };
    let result = simulate(
        &kin,
        &model,
        T,
        &[1.0, 0.0],
        &[0.0, 1.0],
        &options(2, 1e-6, 1e-12, LinearAlgebra::Dense),
    );
    assert!(matches!(
        result,
        Err(IntegrationError::InvalidArgument(
            ReactorError::BadBoxConditions(_)
        ))
    ));
}

fn profiles(rows: usize, temperatures: usize) -> Profiles {
    Profiles {
        times_s: (0..rows).map(|i| i as f64).collect(),
        concentrations_mol_per_m3: vec![vec![1.0, 0.0]; rows],
        temperatures_k: vec![1000.0; temperatures],
        ..Default::default()
    }
}

#[test]
fn inconsistent_profiles_are_errors() {
    assert_eq!(profiles(3, 3).validate(), Ok(()));
    assert_eq!(
        profiles(3, 2).validate(),
        Err(ReactorError::InconsistentProfiles {
            what: "temperatures",
            expected: 3,
            found: 2
        })
    );
    let mut ragged = profiles(3, 3);
    ragged.concentrations_mol_per_m3[2].push(4.0);
    assert_eq!(
        ragged.validate(),
        Err(ReactorError::InconsistentProfiles {
            what: "a concentration row",
            expected: 2,
            found: 3
        })
    );
    assert_eq!(
        ignition_delay(&profiles(4, 5), IgnitionCriterion::TemperatureRise(10.0)),
        Err(ReactorError::InconsistentProfiles {
            what: "temperatures",
            expected: 4,
            found: 5
        })
    );
    // A flat temperature never rises by 10 K: no ignition, and no error.
    assert_eq!(
        ignition_delay(&profiles(4, 4), IgnitionCriterion::TemperatureRise(10.0)),
        Ok(None)
    );
}

#[test]
fn species_indices_out_of_range_are_errors() {
    assert_eq!(
        ignition_delay(&profiles(3, 3), IgnitionCriterion::SpeciesMaximum(2)),
        Err(ReactorError::SpeciesOutOfRange {
            what: "ignition criterion",
            species: 2,
            n_species: 2
        })
    );
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 0.5)]);
    let mut opts = options(2, 1e-6, 1e-12, LinearAlgebra::Dense);
    opts.watch = vec![Watch::Maximum(Quantity::Concentration(5))];
    assert_eq!(
        integrate(&kin, T, &[1.0, 0.0], &[0.0, 1.0], &opts),
        Err(IntegrationError::InvalidArgument(
            ReactorError::SpeciesOutOfRange {
                what: "watched concentration",
                species: 5,
                n_species: 2
            }
        ))
    );
    // A watch of an existing species works: A -> B at k = 0.5/s, so B crosses 0.5 mol/m3
    // (half of A0 = 1) at t = ln 2 / k (first-order half-life).
    opts.watch = vec![Watch::Crossing {
        quantity: Quantity::Concentration(1),
        value: 0.5,
    }];
    let p = integrate(&kin, T, &[1.0, 0.0], &[0.0, 3.0], &opts).unwrap();
    let crossing = p.located(opts.watch[0]).expect("crosses");
    assert!((crossing.time_s - 2f64.ln() / 0.5).abs() < 1e-4);
}

#[test]
fn a_step_naming_a_missing_species_is_an_error_of_the_constant_pressure_check() {
    // Species A = H2 and B = 2 H (abstract chemistry, hydrogen weight 1.008e-3 kg/mol, IUPAC
    // abridged value); the step names species index 5, which the mechanism lacks.
    let mut m = common::mechanism(&["A", "B"], vec![step(&[(0, 1.0)], &[(5, 2.0)], 1.0)]);
    m.elements = vec![stoik_mechanism::Element {
        symbol: "H".to_string(),
        atomic_weight_kg_per_mol: 1.008e-3,
    }];
    m.species[0].composition = Some(vec![(0, 2.0)]);
    m.species[1].composition = Some(vec![(0, 1.0)]);
    let model = ReactorModel {
        constraint: stoik_reactor::Constraint::ConstantPressure,
        ..ReactorModel::default()
    };
    assert_eq!(
        stoik_reactor::ReactorConservation::new(&m, &model).err(),
        Some(stoik_reactor::ConservationCheckError::Laws(
            stoik_kinetics::ConservationError::SpeciesOutOfRange(5)
        ))
    );
}
