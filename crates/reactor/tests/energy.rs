//! Closed reactors with energy: closed forms, conservation of U or H, prescribed
//! temperature histories and the ignition-delay criteria.

use stoik_kinetics::Kinetics;
use stoik_mechanism::{load_mechanism, parse_mechanism, Mechanism, GAS_CONSTANT as R};
use stoik_reactor::{
    ignition_delay, simulate, BatchSystem, Constraint, Energy, IgnitionCriterion,
    IntegrationOptions, Profiles, ReactorModel, SolverStats, TemperatureHistory,
};

fn model(constraint: Constraint, energy: Energy) -> ReactorModel {
    ReactorModel {
        constraint,
        energy,
        ..Default::default()
    }
}

fn options(n: usize, rtol: f64, atol: f64) -> IntegrationOptions {
    let mut o = IntegrationOptions::new(n);
    o.relative_tolerance = rtol;
    o.absolute_tolerances_mol_per_m3 = vec![atol; n];
    o
}

fn run(
    mechanism: &Mechanism,
    model: &ReactorModel,
    temperature_k: f64,
    initial: &[f64],
    times: &[f64],
    opts: &IntegrationOptions,
) -> Profiles {
    let kinetics = Kinetics::compile(mechanism).unwrap();
    simulate(&kinetics, model, temperature_k, initial, times, opts)
        .unwrap_or_else(|e| panic!("{e}"))
}

/// Two species with constant heat capacities: cp/R = 3.5 (A) and 4.5 (B); B lies 6000 K * R
/// below A in enthalpy (a6 = H(0)/R).
fn constant_cp_mechanism(equation: &str, prefactor: f64, exponent: f64, ea_k: f64) -> Mechanism {
    let text = format!(
        r#"stoik_mechanism = 1
[units]
activation_energy = "K"
[[species]]
name = "A"
thermo = {{ temperature_ranges_k = [100, 1000, 5000], coefficients_low = [3.5, 0, 0, 0, 0, 0, 0], coefficients_high = [3.5, 0, 0, 0, 0, 0, 0] }}
[[species]]
name = "B"
thermo = {{ temperature_ranges_k = [100, 1000, 5000], coefficients_low = [4.5, 0, 0, 0, 0, -6000, 0], coefficients_high = [4.5, 0, 0, 0, 0, -6000, 0] }}
[[step]]
equation = "{equation}"
forward = {{ prefactor = {prefactor}, temperature_exponent = {exponent}, activation_energy = {ea_k} }}
"#
    );
    parse_mechanism(&text, "constant-cp.toml")
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism
}

/// Closed form (first law for an adiabatic closed system with constant heat capacities,
/// textbook adiabatic-temperature balance): complete A -> B conserves
/// U = n R ((cp/R - 1) T + a6) at constant volume and H = n R (cp/R T + a6) at constant
/// pressure, so T_final = (2.5 T0 + 6000 K) / 3.5 and (3.5 T0 + 6000 K) / 4.5.
#[test]
fn adiabatic_single_step_reaches_the_temperature_the_heat_of_reaction_predicts() {
    let mech = constant_cp_mechanism("A -> B", 1e6, 0.0, 8000.0);
    let t0 = 600.0;
    let c0 = [40.0, 0.0];
    let times: Vec<f64> = (0..=100).map(|i| i as f64).collect();
    let opts = options(2, 1e-10, 1e-14);
    for (constraint, expected) in [
        (Constraint::ConstantVolume, (2.5 * t0 + 6000.0) / 3.5),
        (Constraint::ConstantPressure, (3.5 * t0 + 6000.0) / 4.5),
    ] {
        let p = run(
            &mech,
            &model(constraint, Energy::Adiabatic),
            t0,
            &c0,
            &times,
            &opts,
        );
        let last = p.temperatures_k.last().copied().unwrap_or(f64::NAN);
        let remaining = p
            .concentrations_mol_per_m3
            .last()
            .map_or(f64::NAN, |c| c[0]);
        eprintln!("{constraint:?}: T_final {last:.9} K vs {expected:.9} K");
        assert!(remaining < 1e-9, "{constraint:?}: A left {remaining}");
        assert!(
            ((last - expected) / expected).abs() < 1e-8,
            "{constraint:?}: T_final {last} K, closed form {expected} K"
        );
    }
}

fn hydrogen() -> Mechanism {
    let path = stoik_testsupport::mechanism_path("hydrogen-oxygen.toml");
    load_mechanism(&path)
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism
}

/// Diluted stoichiometric hydrogen-oxygen at 1100 K and 1 atm (c_i = x_i P/(R T)).
fn hydrogen_initial(mech: &Mechanism) -> Vec<f64> {
    let total = 101325.0 / (R * 1100.0);
    mech.species
        .iter()
        .map(|s| match s.name.as_str() {
            "H2" => 0.10 * total,
            "O2" => 0.05 * total,
            "AR" => 0.85 * total,
            _ => 0.0,
        })
        .collect()
}

fn molar_masses(mech: &Mechanism) -> Vec<f64> {
    mech.species
        .iter()
        .map(|s| {
            s.composition.as_ref().map_or(0.0, |atoms| {
                atoms
                    .iter()
                    .map(|&(e, n)| n * mech.elements[e].atomic_weight_kg_per_mol)
                    .sum()
            })
        })
        .collect()
}

/// First law, closed adiabatic system (textbook): U is conserved at constant volume and H
/// at constant pressure. Checked through a full hydrogen ignition (temperature rise > 1000
/// K) with U per volume = sum c_i u_i and H per mass = sum c_i h_i / rho, to 1e-8 relative;
/// element amounts (per volume, or per mass at constant pressure) to 1e-10.
#[test]
fn adiabatic_ignition_conserves_internal_energy_or_enthalpy_and_elements() {
    let mech = hydrogen();
    let c0 = hydrogen_initial(&mech);
    let n = c0.len();
    let times: Vec<f64> = (0..=400).map(|i| i as f64 * 5e-6).collect();
    let opts = options(n, 1e-10, 1e-16);
    let masses = molar_masses(&mech);
    for constraint in [Constraint::ConstantVolume, Constraint::ConstantPressure] {
        let p = run(
            &mech,
            &model(constraint, Energy::Adiabatic),
            1100.0,
            &c0,
            &times,
            &opts,
        );
        let energy = |c: &[f64], t: f64| -> f64 {
            let sum: f64 = mech
                .species
                .iter()
                .zip(c)
                .map(|(s, ci)| {
                    let h = s
                        .thermo
                        .as_ref()
                        .map_or(f64::NAN, |th| th.enthalpy_j_per_mol(t));
                    ci * match constraint {
                        Constraint::ConstantVolume => h - R * t,
                        Constraint::ConstantPressure => h,
                    }
                })
                .sum();
            match constraint {
                Constraint::ConstantVolume => sum,
                Constraint::ConstantPressure => {
                    sum / c.iter().zip(&masses).map(|(c, m)| c * m).sum::<f64>()
                }
            }
        };
        let per = |c: &[f64]| -> Vec<f64> {
            let mut t = mech.element_totals(c);
            if constraint == Constraint::ConstantPressure {
                let rho: f64 = c.iter().zip(&masses).map(|(c, m)| c * m).sum();
                t.iter_mut().for_each(|x| *x /= rho);
            }
            t
        };
        let rows = &p.concentrations_mol_per_m3;
        let e0 = energy(&rows[0], p.temperatures_k[0]);
        let el0 = per(&rows[0]);
        let (mut energy_drift, mut element_drift): (f64, f64) = (0.0, 0.0);
        for (c, &t) in rows.iter().zip(&p.temperatures_k) {
            energy_drift = energy_drift.max(((energy(c, t) - e0) / e0).abs());
            for (a, b) in per(c).iter().zip(&el0) {
                if *b != 0.0 {
                    element_drift = element_drift.max(((a - b) / b).abs());
                }
            }
        }
        let rise = p.temperatures_k.iter().fold(0.0f64, |m, &t| m.max(t)) - 1100.0;
        eprintln!("{constraint:?}: rise {rise:.1} K, energy drift {energy_drift:.2e}, element drift {element_drift:.2e}");
        assert!(rise > 1000.0, "{constraint:?}: no ignition (rise {rise} K)");
        assert!(
            energy_drift < 1e-8,
            "{constraint:?}: energy drift {energy_drift:e}"
        );
        assert!(
            element_drift < 1e-10,
            "{constraint:?}: element drift {element_drift:e}"
        );
        // At constant pressure the ideal-gas pressure sum(c) R T stays put.
        if constraint == Constraint::ConstantPressure {
            for row in 0..rows.len() {
                let pressure = p.pressure_pa(row).unwrap_or(f64::NAN);
                assert!(
                    ((pressure - 101325.0) / 101325.0).abs() < 1e-8,
                    "P = {pressure}"
                );
            }
        }
    }
}

/// A -> B with k = A T (exponent 1, no activation energy) along T(t) = 300 K + 300 K/s t
/// to t = 1 s, then 600 K: c_A / c_A0 = exp(-A int T dt) with int_0^t T dt = 300 t + 150 t^2
/// (t <= 1 s) and 450 + 600 (t - 1) (t > 1 s) -- exact calculus. At constant pressure,
/// A -> 2 B: n_A = n_A0 e, N = 2 n_A0 - n_A, so x_A = e / (2 - e), and sum(c) = P / (R T(t)).
#[test]
fn prescribed_history_follows_the_exact_integral_of_the_rate_constant() {
    let history = TemperatureHistory::new(vec![0.0, 1.0, 2.0], vec![300.0, 600.0, 600.0])
        .unwrap_or_else(|e| panic!("{e}"));
    let times = [0.0, 0.5, 1.0, 1.5, 2.0];
    let integral = |t: f64| {
        if t <= 1.0 {
            300.0 * t + 150.0 * t * t
        } else {
            450.0 + 600.0 * (t - 1.0)
        }
    };
    let a = 1e-3;
    let opts = options(2, 1e-11, 1e-14);
    // Constant volume, A -> B.
    let mech = constant_cp_mechanism("A -> B", a, 1.0, 0.0);
    let p = run(
        &mech,
        &model(
            Constraint::ConstantVolume,
            Energy::Prescribed(history.clone()),
        ),
        300.0,
        &[10.0, 0.0],
        &times,
        &opts,
    );
    for (row, &t) in times.iter().enumerate() {
        let expected = 10.0 * (-a * integral(t)).exp();
        let got = p.concentrations_mol_per_m3[row][0];
        assert!(
            ((got - expected) / expected).abs() < 1e-8,
            "t {t}: {got} vs {expected}"
        );
        assert_eq!(p.temperatures_k[row], history.temperature_at(t));
    }
    // Constant pressure, A -> 2 B.
    let mech = constant_cp_mechanism("A -> 2 B", a, 1.0, 0.0);
    let c0 = 10.0;
    let pressure = c0 * R * 300.0;
    let p = run(
        &mech,
        &model(
            Constraint::ConstantPressure,
            Energy::Prescribed(history.clone()),
        ),
        300.0,
        &[c0, 0.0],
        &times,
        &opts,
    );
    for (row, &t) in times.iter().enumerate() {
        let e = (-a * integral(t)).exp();
        let x = p.mole_fractions(row).unwrap_or_default();
        assert!(
            (x[0] - e / (2.0 - e)).abs() < 1e-9,
            "t {t}: x_A {} vs {}",
            x[0],
            e / (2.0 - e)
        );
        let total: f64 = p.concentrations_mol_per_m3[row].iter().sum();
        let expected_total = pressure / (R * history.temperature_at(t));
        assert!(((total - expected_total) / expected_total).abs() < 1e-9);
    }
}

/// Isothermal constant pressure, A -> 2 B first order: x_A = e / (2 - e), e = exp(-k t),
/// and the total concentration stays P / (R T) (closed form, as above).
#[test]
fn isothermal_constant_pressure_expands_with_the_mole_change() {
    let mech = constant_cp_mechanism("A -> 2 B", 2.0, 0.0, 0.0);
    let times: Vec<f64> = (0..=10).map(|i| i as f64 * 0.1).collect();
    let p = run(
        &mech,
        &model(Constraint::ConstantPressure, Energy::Isothermal),
        500.0,
        &[5.0, 0.0],
        &times,
        &options(2, 1e-11, 1e-14),
    );
    for (row, &t) in times.iter().enumerate() {
        let e = (-2.0 * t).exp();
        let x = p.mole_fractions(row).unwrap_or_default();
        assert!((x[0] - e / (2.0 - e)).abs() < 1e-9, "t {t}");
        let total: f64 = p.concentrations_mol_per_m3[row].iter().sum();
        assert!((total - 5.0).abs() < 1e-9 * 5.0, "total {total}");
        assert_eq!(p.temperatures_k[row], 500.0);
        assert_eq!(p.temperature_rates_k_per_s[row], 0.0);
    }
}

/// Ignition-delay criteria on a synthetic profile with known answers (exact calculus): the
/// logistic T(t) = 1000 K + 1500 K / (1 + exp(-(t - 1 ms)/w)) has its largest dT/dt at
/// exactly 1 ms and rises by 400 K at 1 ms + w ln(400/1100); a Gaussian species peaks at its
/// centre, 1.2 ms.
#[test]
fn ignition_delay_criteria_recover_known_times() {
    let w = 2e-5;
    let times: Vec<f64> = (0..=400).map(|i| i as f64 * 5e-6 + 1.3e-6).collect();
    let logistic = |t: f64| 1.0 / (1.0 + (-(t - 1e-3) / w).exp());
    let profiles = Profiles {
        times_s: times.clone(),
        concentrations_mol_per_m3: times
            .iter()
            .map(|&t| vec![(-((t - 1.2e-3) / 1e-4).powi(2)).exp(), 1.0])
            .collect(),
        temperatures_k: times
            .iter()
            .map(|&t| 1000.0 + 1500.0 * logistic(t))
            .collect(),
        temperature_rates_k_per_s: times
            .iter()
            .map(|&t| 1500.0 * logistic(t) * (1.0 - logistic(t)) / w)
            .collect(),
        volumes_m3: Vec::new(),
        stats: SolverStats::default(),
        linear_algebra_used: Default::default(),
        located: Vec::new(),
    };
    let delay = |c| {
        ignition_delay(&profiles, c)
            .expect("a consistent profile")
            .map(|d| d.delay_s + times[0])
            .unwrap_or(f64::NAN)
    };
    let max_rate = delay(IgnitionCriterion::MaxTemperatureRate);
    // Grid 5 us, peak width 20 us: the parabola through three points lands within 0.1 us.
    assert!((max_rate - 1e-3).abs() < 1e-7, "max dT/dt at {max_rate}");
    let rise = delay(IgnitionCriterion::TemperatureRise(400.0));
    let expected = 1e-3 + w * (400.0f64 / 1100.0).ln();
    assert!(
        (rise - expected).abs() < 2e-7,
        "rise at {rise} vs {expected}"
    );
    let peak = delay(IgnitionCriterion::SpeciesMaximum(0));
    assert!((peak - 1.2e-3).abs() < 1e-8, "peak at {peak}");
    // A flat species has no interior maximum; a rise that never happens gives none.
    assert_eq!(
        ignition_delay(&profiles, IgnitionCriterion::SpeciesMaximum(1)),
        Ok(None)
    );
    assert_eq!(
        ignition_delay(&profiles, IgnitionCriterion::TemperatureRise(2000.0)),
        Ok(None)
    );
}

/// The stepping session on an adiabatic system: the temperature is a state that the session
/// reports and can set; stepping in two halves gives the one-go result (first law closed
/// form as above: complete A -> B at constant volume ends at (2.5 T0 + 6000 K) / 3.5).
#[test]
fn stepping_session_carries_the_temperature_state() {
    let mech = constant_cp_mechanism("A -> B", 1e6, 0.0, 8000.0);
    let kinetics = Kinetics::compile(&mech).unwrap();
    let m = model(Constraint::ConstantVolume, Energy::Adiabatic);
    let opts = options(2, 1e-10, 1e-14);
    let mut system = stoik_reactor::BatchSystem::with_model(&kinetics, &m, 600.0, &opts)
        .unwrap_or_else(|e| panic!("{e}"));
    let mut session = system
        .integrator(&[40.0, 0.0])
        .unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(session.temperature(), 600.0);
    assert_eq!(session.full_state().len(), 3);
    session.advance_to(50.0).unwrap_or_else(|e| panic!("{e}"));
    session.advance_to(100.0).unwrap_or_else(|e| panic!("{e}"));
    let expected = (2.5 * 600.0 + 6000.0) / 3.5;
    assert!(((session.temperature() - expected) / expected).abs() < 1e-8);
    // Setting the temperature state: all A is gone, so it stays where it is put.
    session
        .set_temperature(1000.0)
        .unwrap_or_else(|e| panic!("{e}"));
    session.advance_to(110.0).unwrap_or_else(|e| panic!("{e}"));
    assert!((session.temperature() - 1000.0).abs() < 1e-6);
    // A prescribed history cannot be overridden.
    let history = TemperatureHistory::new(vec![0.0], vec![500.0]).unwrap_or_else(|e| panic!("{e}"));
    let p = model(Constraint::ConstantVolume, Energy::Prescribed(history));
    let mut system = stoik_reactor::BatchSystem::with_model(&kinetics, &p, 600.0, &opts)
        .unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(system.temperature(), 500.0);
    assert!(system.set_temperature(700.0).is_err());
}

/// The energy balance needs every species' thermochemistry: a clear error, not a panic.
#[test]
fn adiabatic_model_without_thermochemistry_is_refused() {
    let text = "stoik_mechanism = 1\n[[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n[[step]]\nequation = \"A -> B\"\nforward = { prefactor = 1 }\n";
    let mech = parse_mechanism(text, "x.toml")
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism;
    let kinetics = Kinetics::compile(&mech).unwrap();
    let err = simulate(
        &kinetics,
        &model(Constraint::ConstantVolume, Energy::Adiabatic),
        300.0,
        &[1.0, 0.0],
        &[0.0, 1.0],
        &options(2, 1e-6, 1e-12),
    )
    .err()
    .map(|e| e.to_string())
    .unwrap_or_default();
    assert!(err.contains("species 0 has no thermochemistry"), "{err}");
}

/// A failure caused by a rate constant that overflows names the step. k = A T^n exp(-theta/T)
/// with A = 1e165 s-1, n = 50, theta = 200,000 K (exact arithmetic on the exponents):
/// log10 k = 165 + 50 log10 T - 86,859/T is -0.6 at 300 K (k = 0.25 s-1) and 309.9 at
/// 3000 K, past the largest IEEE 754 double (about 1.8e308). Held at 300 K the run proceeds;
/// moved to 3000 K it cannot take a step, and the failure names the step with the infinite k.
#[test]
fn a_failure_from_an_overflowing_rate_constant_names_the_step() {
    let mech = constant_cp_mechanism("A -> B", 1e165, 50.0, 200_000.0);
    let kinetics = Kinetics::compile(&mech).unwrap_or_else(|e| panic!("{e}"));
    let opts = options(2, 1e-6, 1e-12);
    let mut system = BatchSystem::new(&kinetics, 300.0, &opts).unwrap_or_else(|e| panic!("{e}"));
    let mut stepper = system
        .integrator(&[10.0, 0.0])
        .unwrap_or_else(|e| panic!("{e}"));
    let c = stepper.advance_to(1.0).unwrap_or_else(|e| panic!("{e}"))[0];
    let k300 = 1e165 * 300f64.powi(50) * (-200_000.0f64 / 300.0).exp();
    assert!((c / (10.0 * (-k300).exp()) - 1.0).abs() < 1e-4, "{c}");
    stepper
        .set_temperature(3000.0)
        .unwrap_or_else(|e| panic!("{e}"));
    let err = stepper.advance_to(2.0).unwrap_err();
    let failure = err.failure().expect("an integration failure");
    assert_eq!(failure.nonfinite_steps, vec![0]);
    let advice = failure.advice(&["A".into(), "B".into()], &["A -> B".into()]);
    assert!(
        advice
            .contains("rate constant not finite (NaN or infinite) at the failure: step 1 `A -> B`"),
        "{advice}"
    );
}
