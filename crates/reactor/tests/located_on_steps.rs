//! Maxima, threshold crossings and ignition delays located on the solver's own steps: checked
//! against closed forms, and shown to be independent of the output grid.

use stoik_kinetics::Kinetics;
use stoik_mechanism::{load_mechanism, parse_mechanism, Mechanism};
use stoik_reactor::{
    ignition_delay, integrate, simulate, Constraint, Energy, IgnitionCriterion, IntegrationOptions,
    Quantity, ReactorModel, Watch,
};

/// A -> B -> C with k1 = 2 /s and k2 = 0.5 /s (invented rates; the closed forms are textbook
/// results for consecutive first-order steps, e.g. Atkins, Physical Chemistry, "consecutive
/// elementary reactions").
fn consecutive() -> Mechanism {
    let text = r#"stoik_mechanism = 1
[units]
amount = "mol"
length = "m"
time = "s"
[[species]]
name = "A"
[[species]]
name = "B"
[[species]]
name = "C"
[[step]]
equation = "A -> B"
forward = { prefactor = 2.0 }
[[step]]
equation = "B -> C"
forward = { prefactor = 0.5 }
"#;
    parse_mechanism(text, "consecutive.toml")
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism
}

#[test]
fn peak_and_crossing_of_consecutive_steps_match_closed_forms_on_a_coarse_grid() {
    let (k1, k2) = (2.0f64, 0.5f64);
    let kinetics = Kinetics::compile(&consecutive()).unwrap();
    let mut options = IntegrationOptions::new(3);
    options.relative_tolerance = 1e-10;
    options.absolute_tolerances_mol_per_m3 = vec![1e-14; 3];
    let half_of_a = Watch::Crossing {
        quantity: Quantity::Concentration(0),
        value: 0.5,
    };
    options.watch = vec![Watch::Maximum(Quantity::Concentration(1)), half_of_a];
    // Three output times only: 0, 5 and 10 s. The grid cannot see the peak.
    let p = integrate(
        &kinetics,
        300.0,
        &[1.0, 0.0, 0.0],
        &[0.0, 5.0, 10.0],
        &options,
    )
    .unwrap_or_else(|e| panic!("{e}"));
    // B peaks at t* = ln(k1/k2)/(k1 - k2) with B(t*) = (k1/k2)^(-k2/(k1-k2)) (closed form).
    let t_star = (k1 / k2).ln() / (k1 - k2);
    let b_star = (k1 / k2).powf(-k2 / (k1 - k2));
    let peak = p
        .located(Watch::Maximum(Quantity::Concentration(1)))
        .expect("B peaks");
    assert!(peak.interior);
    // The peak time is flat to first order: d2B/dt2 at t* sets how well the value pins it.
    assert!(
        (peak.time_s - t_star).abs() / t_star < 1e-5,
        "peak at {} s, closed form {t_star} s",
        peak.time_s
    );
    assert!(
        (peak.value - b_star).abs() / b_star < 1e-9,
        "peak value {} vs {b_star}",
        peak.value
    );
    // A = exp(-k1 t) reaches 0.5 at ln 2 / k1.
    let half = p.located(half_of_a).expect("A halves");
    let expected = std::f64::consts::LN_2 / k1;
    assert!(
        (half.time_s - expected).abs() / expected < 1e-8,
        "A halves at {} s, closed form {expected} s",
        half.time_s
    );
}

fn hydrogen() -> (Kinetics, Vec<f64>) {
    let path = stoik_testsupport::mechanism_path("hydrogen-oxygen.toml");
    let mech = load_mechanism(&path)
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism;
    // 10 % H2, 5 % O2, 85 % Ar at 1100 K and 1 atm, as the bundled demo scenario.
    let total = 101_325.0 / (stoik_mechanism::GAS_CONSTANT * 1100.0);
    let mut c = vec![0.0; mech.species.len()];
    for (name, x) in [("H2", 0.10), ("O2", 0.05), ("AR", 0.85)] {
        let i = mech
            .species
            .iter()
            .position(|s| s.name.eq_ignore_ascii_case(name))
            .unwrap_or_else(|| panic!("no {name}"));
        c[i] = x * total;
    }
    (Kinetics::compile(&mech).unwrap(), c)
}

/// The issue's acceptance test: 101 and 2,001 output points give the same delay within 1e-6
/// relative, for each criterion; and the max-dT/dt delay agrees with an independent scipy
/// Radau solution of the same equations (tests/scipy/ignition_check.py, rtol 1e-11:
/// 2.287163e-4 s) to the integration tolerance.
#[test]
fn ignition_delay_does_not_depend_on_the_output_grid() {
    let (kinetics, c0) = hydrogen();
    let model = ReactorModel {
        constraint: Constraint::ConstantVolume,
        energy: Energy::Adiabatic,
        ..Default::default()
    };
    for criterion in [
        IgnitionCriterion::MaxTemperatureRate,
        IgnitionCriterion::TemperatureRise(400.0),
    ] {
        let mut options = IntegrationOptions::new(kinetics.n_species());
        options.relative_tolerance = 1e-8;
        options.absolute_tolerances_mol_per_m3 = vec![1e-14; kinetics.n_species()];
        options.watch = criterion.watches(1100.0);
        let delay = |points: usize| {
            let times: Vec<f64> = (0..points)
                .map(|i| 1e-3 * i as f64 / (points - 1) as f64)
                .collect();
            let p = simulate(&kinetics, &model, 1100.0, &c0, &times, &options)
                .unwrap_or_else(|e| panic!("{e}"));
            let d = ignition_delay(&p, criterion)
                .expect("a consistent profile")
                .expect("ignites");
            assert!(d.on_solver_steps);
            d.delay_s
        };
        let (coarse, fine) = (delay(101), delay(2001));
        assert!(
            ((coarse - fine) / fine).abs() < 1e-6,
            "{criterion:?}: {coarse} s with 101 points, {fine} s with 2001"
        );
        if criterion == IgnitionCriterion::MaxTemperatureRate {
            let scipy = 2.287163e-4;
            assert!(
                ((fine - scipy) / scipy).abs() < 2e-6,
                "delay {fine} s vs scipy {scipy} s"
            );
        }
    }
}
