//! Sensitivities to formation enthalpies and to each falloff limit alone, against outside
//! references:
//! - equilibrium thermodynamics (van 't Hoff; P. Atkins and J. de Paula, *Atkins' Physical
//!   Chemistry*, chapter on chemical equilibrium): for an isomerization A <=> B at equilibrium
//!   `c_B/c_A = Kc = exp(-dG/(R T))`, so `d ln(c_B/c_A)/d H_f(B) = -1/(R T)`,
//!   `d ln(c_B/c_A)/d H_f(A) = +1/(R T)`, and the equilibrium ratio does not depend on the
//!   rate constant when the reverse one follows `kf/Kc`;
//! - central finite differences of full reruns (the definition of the derivative) with the
//!   enthalpy shifted (`Kinetics::shift_formation_enthalpy`) or one falloff limit's
//!   pre-exponential factor scaled (`Kinetics::scale_falloff_limit`), adiabatic reactors
//!   included (the heat-release term);
//! - the identity `d/d ln k0 + d/d ln kinf = d/d ln k` (both limits scaled together leave
//!   `Pr` unchanged: the rate-constant parameter);
//! - adjoint against forward (two integrations of the same derivative).

use stoik_kinetics::{FalloffLimit, Kinetics};
use stoik_mechanism::{parse_mechanism, Mechanism, GAS_CONSTANT as R};
use stoik_reactor::{
    adjoint_parameter_sensitivity, forward_parameter_sensitivities, simulate, Constraint, Energy,
    IntegrationOptions, Parameter, ReactorModel, SensitivityError, Target,
};

fn options(n: usize, rtol: f64, atol: f64) -> IntegrationOptions {
    let mut o = IntegrationOptions::new(n);
    o.relative_tolerance = rtol;
    o.absolute_tolerances_mol_per_m3 = vec![atol; n];
    o
}

fn model(constraint: Constraint, energy: Energy) -> ReactorModel {
    ReactorModel {
        constraint,
        energy,
        ..Default::default()
    }
}

/// A <=> B (reverse from thermochemistry), constant heat capacities cp/R = 3.5 (A) and 4.5
/// (B), B 6000 K * R below A in enthalpy and 13.4 R below in entropy; kf = `prefactor` exp(-`ea_k`/T) (SI).
fn isomerization(prefactor: f64, ea_k: f64) -> Mechanism {
    let text = format!(
        r#"stoik_mechanism = 1
[units]
activation_energy = "K"
[[species]]
name = "A"
thermo = {{ temperature_ranges_k = [100, 1000, 5000], coefficients_low = [3.5, 0, 0, 0, 0, 0, 0], coefficients_high = [3.5, 0, 0, 0, 0, 0, 0] }}
[[species]]
name = "B"
thermo = {{ temperature_ranges_k = [100, 1000, 5000], coefficients_low = [4.5, 0, 0, 0, 0, -6000, -13.4], coefficients_high = [4.5, 0, 0, 0, 0, -6000, -13.4] }}
[[step]]
equation = "A <=> B"
forward = {{ prefactor = {prefactor}, activation_energy = {ea_k} }}
"#
    );
    parse_mechanism(&text, "isomerization.toml")
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism
}

/// A -> B, a falloff step (collider M) with Troe broadening, inert N2 as the bath, SI units
/// (Pr = k0 [M]/kinf about 1 at the start); with `reversible`, the
/// step is A <=> B with the reverse from thermochemistry.
fn falloff(reversible: bool) -> Mechanism {
    let arrow = if reversible { "<=>" } else { "->" };
    let text = format!(
        r#"stoik_mechanism = 1
[units]
length = "m"
activation_energy = "K"
[[species]]
name = "A"
thermo = {{ temperature_ranges_k = [100, 1000, 5000], coefficients_low = [3.5, 0, 0, 0, 0, 0, 0], coefficients_high = [3.5, 0, 0, 0, 0, 0, 0] }}
[[species]]
name = "B"
thermo = {{ temperature_ranges_k = [100, 1000, 5000], coefficients_low = [3.5, 0, 0, 0, 0, -300, 0], coefficients_high = [3.5, 0, 0, 0, 0, -300, 0] }}
[[species]]
name = "N2"
thermo = {{ temperature_ranges_k = [100, 1000, 5000], coefficients_low = [3.5, 0, 0, 0, 0, 0, 0], coefficients_high = [3.5, 0, 0, 0, 0, 0, 0] }}
[[step]]
equation = "A {arrow} B"
forward = {{ prefactor = 10.0 }}
falloff = {{ low_pressure = {{ prefactor = 0.25 }}, broadening = "troe", troe = {{ a = 0.6, t3 = 200, t1 = 2000 }} }}
third_body = {{ efficiency = {{ B = 2.0 }} }}
"#
    );
    parse_mechanism(&text, "falloff.toml")
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism
}

#[track_caller]
fn assert_rel(what: &str, actual: f64, expected: f64, rel: f64, scale: f64) {
    let err = (actual - expected).abs();
    assert!(
        err <= rel * scale,
        "{what}: got {actual:e}, expected {expected:e} (error {err:e} against {:e})",
        rel * scale
    );
}

#[test]
fn isomerization_equilibrium_moves_with_the_formation_enthalpies_as_van_t_hoff_says() {
    let kinetics = Kinetics::compile(&isomerization(10.0, 0.0)).unwrap();
    let t = 600.0;
    let m = model(Constraint::ConstantVolume, Energy::Isothermal);
    let opts = options(2, 1e-10, 1e-14);
    // kf = 10/s and Kc = exp(-dG/(R T)) = e^2 at 600 K (dH/(R T) = -9, dS/R = 6.4 - 13.4):
    // the relaxation time 1/(kf + kr) is under 0.1 s, so 20 s is equilibrium.
    let end = 20.0;
    let parameters = [
        Parameter::FormationEnthalpy(1),
        Parameter::FormationEnthalpy(0),
        Parameter::RateConstant(0),
    ];
    let r = forward_parameter_sensitivities(
        &kinetics,
        &m,
        t,
        &[1.0, 0.0],
        &[0.0, end],
        &opts,
        &parameters,
        &[],
    )
    .unwrap_or_else(|e| panic!("{e}"));
    let (a, b) = (r.states[1][0], r.states[1][1]);
    let rt = R * t;
    let dln_ratio = |p: usize| r.sensitivities[1][p][1] / b - r.sensitivities[1][p][0] / a;
    assert_rel("d ln(B/A)/dH_B", dln_ratio(0), -1.0 / rt, 1e-6, 1.0 / rt);
    assert_rel("d ln(B/A)/dH_A", dln_ratio(1), 1.0 / rt, 1e-6, 1.0 / rt);
    assert_rel("d ln(B/A)/d ln kf", dln_ratio(2), 0.0, 1e-6, 1.0);
    for (state, value) in [(0, a), (1, b)] {
        let adj = adjoint_parameter_sensitivity(
            &kinetics,
            &m,
            t,
            &[1.0, 0.0],
            &opts,
            &parameters,
            Target::Value { state, time_s: end },
        )
        .unwrap_or_else(|e| panic!("{e}"));
        for (p, g) in adj.target.gradient.iter().enumerate() {
            let forward = r.sensitivities[1][p][state];
            // The floor of the scale in the parameter's units: c per J/mol for an enthalpy,
            // c per unit of ln k for the rate constant (whose sensitivity here is zero, the
            // equilibrium not depending on kf: both methods give it to rounding, ~1e-16 c).
            let unit = match parameters[p] {
                Parameter::FormationEnthalpy(_) => rt,
                _ => 1.0,
            };
            assert_rel(
                &format!("adjoint d c_{state}/dp_{p}"),
                *g,
                forward,
                1e-6,
                forward.abs().max(1e-6 * value / unit),
            );
        }
    }
}

/// A rerun's state at `times` (concentrations, then the temperature when solved).
fn rerun(
    kinetics: &Kinetics,
    m: &ReactorModel,
    t0: f64,
    c0: &[f64],
    times: &[f64],
) -> Vec<Vec<f64>> {
    let opts = options(c0.len(), 1e-11, 1e-14);
    let p = simulate(kinetics, m, t0, c0, times, &opts).unwrap_or_else(|e| panic!("{e}"));
    (0..times.len())
        .map(|row| {
            let mut y = p.concentrations_mol_per_m3[row].clone();
            if m.solves_energy() {
                y.push(p.temperatures_k[row]);
            }
            y
        })
        .collect()
}

#[test]
fn enthalpy_sensitivities_of_adiabatic_reactors_match_central_differences() {
    // Activation temperature 8000 K: the heat release feeds back on the rates.
    let mechanism = isomerization(1e6, 8000.0);
    let kinetics = Kinetics::compile(&mechanism).unwrap();
    let (t0, c0) = (600.0, [40.0, 0.0]);
    let times = [0.0, 0.2, 0.5, 1.0, 3.0];
    let h = 5.0; // J/mol
    for constraint in [Constraint::ConstantVolume, Constraint::ConstantPressure] {
        let m = model(constraint, Energy::Adiabatic);
        let parameters = [
            Parameter::FormationEnthalpy(0),
            Parameter::FormationEnthalpy(1),
        ];
        let opts = options(2, 1e-10, 1e-14);
        let r = forward_parameter_sensitivities(
            &kinetics,
            &m,
            t0,
            &c0,
            &times,
            &opts,
            &parameters,
            &[],
        )
        .unwrap_or_else(|e| panic!("{e}"));
        for (p, &parameter) in parameters.iter().enumerate() {
            let Parameter::FormationEnthalpy(i) = parameter else {
                unreachable!()
            };
            let mut up = kinetics.clone();
            assert!(up.shift_formation_enthalpy(i, h));
            let mut down = kinetics.clone();
            assert!(down.shift_formation_enthalpy(i, -h));
            let (yu, yd) = (
                rerun(&up, &m, t0, &c0, &times),
                rerun(&down, &m, t0, &c0, &times),
            );
            for row in 1..times.len() {
                for k in 0..3 {
                    let fd = (yu[row][k] - yd[row][k]) / (2.0 * h);
                    let scale = (0..3)
                        .map(|q| ((yu[row][q] - yd[row][q]) / (2.0 * h)).abs())
                        .fold(0.0, f64::max)
                        .max(if k == 2 { 1e-6 } else { 1e-9 });
                    assert_rel(
                        &format!("{constraint:?} d y_{k}/dH_{i} at {}", times[row]),
                        r.sensitivities[row][p][k],
                        fd,
                        1e-4,
                        scale,
                    );
                }
            }
        }
        // Adjoint against forward: the final temperature.
        let adj = adjoint_parameter_sensitivity(
            &kinetics,
            &m,
            t0,
            &c0,
            &opts,
            &parameters,
            Target::Value {
                state: 2,
                time_s: 3.0,
            },
        )
        .unwrap_or_else(|e| panic!("{e}"));
        for (p, g) in adj.target.gradient.iter().enumerate() {
            let forward = r.sensitivities[4][p][2];
            assert_rel(
                &format!("{constraint:?} adjoint dT/dH_{p}"),
                *g,
                forward,
                1e-6,
                forward.abs(),
            );
        }
    }
}

#[test]
fn falloff_limit_sensitivities_match_central_differences_and_sum_to_the_rate_constant() {
    let times = [0.0, 0.05, 0.1, 0.3];
    let c0 = [20.0, 0.0, 21.0];
    let h: f64 = 1e-3;
    for (reversible, energy) in [
        (false, Energy::Isothermal),
        (true, Energy::Isothermal),
        (true, Energy::Adiabatic),
    ] {
        let kinetics = Kinetics::compile(&falloff(reversible)).unwrap();
        let m = model(Constraint::ConstantVolume, energy);
        let t0 = 800.0;
        let parameters = [
            Parameter::LowPressureLimit(0),
            Parameter::HighPressureLimit(0),
            Parameter::RateConstant(0),
        ];
        let opts = options(3, 1e-10, 1e-14);
        let r = forward_parameter_sensitivities(
            &kinetics,
            &m,
            t0,
            &c0,
            &times,
            &opts,
            &parameters,
            &[],
        )
        .unwrap_or_else(|e| panic!("{e}"));
        let n_state = r.states[0].len();
        for (p, limit) in [(0, FalloffLimit::Low), (1, FalloffLimit::High)] {
            let mut up = kinetics.clone();
            assert!(up.scale_falloff_limit(0, limit, h.exp()));
            let mut down = kinetics.clone();
            assert!(down.scale_falloff_limit(0, limit, (-h).exp()));
            let (yu, yd) = (
                rerun(&up, &m, t0, &c0, &times),
                rerun(&down, &m, t0, &c0, &times),
            );
            for row in 1..times.len() {
                for k in 0..n_state {
                    let fd = (yu[row][k] - yd[row][k]) / (2.0 * h);
                    let scale = (0..n_state.min(2))
                        .map(|q| ((yu[row][q] - yd[row][q]) / (2.0 * h)).abs())
                        .fold(0.0, f64::max);
                    let scale = if k == 3 { fd.abs().max(1e-6) } else { scale };
                    assert_rel(
                        &format!(
                            "reversible {reversible}, {limit:?}: d y_{k}/d ln k at {}",
                            times[row]
                        ),
                        r.sensitivities[row][p][k],
                        fd,
                        1e-5,
                        scale,
                    );
                }
            }
        }
        for row in 1..times.len() {
            for k in 0..n_state {
                let sum = r.sensitivities[row][0][k] + r.sensitivities[row][1][k];
                let both = r.sensitivities[row][2][k];
                assert_rel("low + high = both", sum, both, 1e-8, both.abs().max(1e-12));
            }
        }
        let adj = adjoint_parameter_sensitivity(
            &kinetics,
            &m,
            t0,
            &c0,
            &opts,
            &parameters,
            Target::Value {
                state: 1,
                time_s: 0.3,
            },
        )
        .unwrap_or_else(|e| panic!("{e}"));
        for (p, g) in adj.target.gradient.iter().enumerate() {
            let forward = r.sensitivities[3][p][1];
            assert_rel("adjoint against forward", *g, forward, 1e-6, forward.abs());
        }
    }
}

#[test]
fn parameters_that_do_not_exist_are_refused() {
    let kinetics = Kinetics::compile(&isomerization(10.0, 0.0)).unwrap();
    let m = ReactorModel::default();
    let opts = options(2, 1e-8, 1e-12);
    let run = |p: Parameter| {
        forward_parameter_sensitivities(
            &kinetics,
            &m,
            600.0,
            &[1.0, 0.0],
            &[0.0, 1.0],
            &opts,
            &[p],
            &[],
        )
        .unwrap_err()
    };
    assert!(matches!(
        run(Parameter::LowPressureLimit(0)),
        SensitivityError::NotFalloff { step: 0 }
    ));
    assert!(matches!(
        run(Parameter::HighPressureLimit(3)),
        SensitivityError::StepOutOfRange { step: 3, .. }
    ));
    assert!(matches!(
        run(Parameter::FormationEnthalpy(2)),
        SensitivityError::SpeciesOutOfRange { species: 2, .. }
    ));
}
