//! Jacketed batch reactors: heat exchange U A (T_coolant - T) in the energy balance, checked
//! against Newton's law of cooling and Semenov's thermal-explosion criterion.

mod common;

use common::*;
use stoik_kinetics::Kinetics;
use stoik_mechanism::{Arrhenius, GAS_CONSTANT as R};
use stoik_reactor::{
    BatchSystem, Constraint, Energy, HeatExchange, LinearAlgebra, ReactorError, ReactorModel,
    TemperatureHistory,
};
use stoik_thermo::Nasa7;

/// A species with the constant heat capacity of a monatomic ideal gas, cp = 5/2 R, so
/// cv = 3/2 R (kinetic theory of gases, any physical-chemistry text), and the enthalpy
/// offset `h0_over_r` (K): H = R (5/2 T + h0_over_r).
fn monatomic(h0_over_r: f64) -> Nasa7 {
    let a = [2.5, 0.0, 0.0, 0.0, 0.0, h0_over_r, 4.0];
    Nasa7::new(200.0, 1000.0, 6000.0, a, a).unwrap()
}

/// A -> B (Arrhenius) in a diluent D, every species monatomic; B lies `q_j_per_mol` below A
/// (an exothermic step releasing q per mole; no change in moles, so dU = dH).
fn exothermic(pre: f64, ea: f64, q_j_per_mol: f64) -> Kinetics {
    let mut m = mechanism(
        &["A", "B", "D"],
        vec![arrhenius_step(
            &[(0, 1.0)],
            &[(1, 1.0)],
            Arrhenius {
                pre_exponential_si: pre,
                temperature_exponent: 0.0,
                activation_energy_j_per_mol: ea,
            },
        )],
    );
    for (species, h0) in m.species.iter_mut().zip([q_j_per_mol / R, 0.0, 0.0]) {
        species.thermo = Some(monatomic(h0));
    }
    Kinetics::compile(&m).unwrap()
}

fn jacketed(ua_per_volume: f64, times: Vec<f64>, coolant: Vec<f64>) -> ReactorModel {
    let history = TemperatureHistory::new(times, coolant).unwrap();
    ReactorModel {
        energy: Energy::HeatExchange(HeatExchange::new(ua_per_volume, history).unwrap()),
        ..Default::default()
    }
}

#[test]
fn an_inert_gas_cools_by_newtons_law() {
    // No reaction to speak of (k = 1e-30 1/s): C dT/dt = h (Tc(t) - T) with
    // C = c_total 3/2 R. Fixed coolant: T = Tc + (T0 - Tc) e^{-t/tau}, tau = C/h (Newton's
    // law of cooling). Coolant ramp Tc = a + b t: T = a + b (t - tau) + (T0 - a + b tau)
    // e^{-t/tau} (the linear first-order ODE's closed form).
    // Tolerance 1e-7 of T: the global error of rtol 1e-10 steps over five time constants.
    let kin = exothermic(1e-30, 0.0, 0.0);
    let c = [0.0, 0.0, 40.0];
    let capacity = 40.0 * 1.5 * R;
    let h = 500.0;
    let tau = capacity / h;
    let t0 = 400.0;
    let times = [0.0, 0.5, 1.0, 2.0, 5.0];
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let opts = options(3, 1e-10, 1e-14, la);
        // Fixed coolant at 300 K.
        let model = jacketed(h, vec![0.0], vec![300.0]);
        let mut system = BatchSystem::with_model(&kin, &model, t0, &opts).unwrap();
        let p = system.integrate(&c, &times).unwrap();
        for (t, temp) in p.times_s.iter().zip(&p.temperatures_k) {
            let expected = 300.0 + (t0 - 300.0) * (-t / tau).exp();
            assert_close(
                &format!("{la:?} fixed coolant T({t})"),
                *temp,
                expected,
                1e-7,
                1e-9,
            );
        }
        // Coolant ramp from 300 K at 20 K/s (a history: linear between its points).
        let (a, b) = (300.0, 20.0);
        let model = jacketed(h, vec![0.0, 10.0], vec![a, a + 10.0 * b]);
        let mut system = BatchSystem::with_model(&kin, &model, t0, &opts).unwrap();
        let p = system.integrate(&c, &times).unwrap();
        for (t, temp) in p.times_s.iter().zip(&p.temperatures_k) {
            let expected = a + b * (t - tau) + (t0 - a + b * tau) * (-t / tau).exp();
            assert_close(
                &format!("{la:?} coolant ramp T({t})"),
                *temp,
                expected,
                1e-7,
                1e-9,
            );
        }
    }
}

/// Largest temperature rise (K) above the coolant over 0..200 s of the Semenov case with
/// Semenov number `se`.
fn semenov_rise(se: f64, la: LinearAlgebra) -> f64 {
    // Tc = T0 = 400 K, E/(R Tc) = 40, so R Tc^2/E = 10 K; k(Tc) = 0.01 1/s; c_A0 = 4,
    // diluent 36 mol/m3, C = 40 x 3/2 R; adiabatic rise 2000 K (B = 200 in units of
    // R Tc^2/E). Se = Q k(Tc) c_A0 E / (h R Tc^2), so h = C k(Tc) B / Se.
    let tc = 400.0;
    let ea = 40.0 * R * tc;
    let k_tc = 0.01;
    let pre = k_tc * 40f64.exp();
    let capacity = 40.0 * 1.5 * R;
    let q = 2000.0 * capacity / 4.0;
    let kin = exothermic(pre, ea, q);
    let h = capacity * k_tc * 200.0 / se;
    let model = jacketed(h, vec![0.0], vec![tc]);
    let opts = options(3, 1e-8, 1e-12, la);
    let mut system = BatchSystem::with_model(&kin, &model, tc, &opts).unwrap();
    let times: Vec<f64> = (0..=2000).map(|i| i as f64 * 0.1).collect();
    let p = system.integrate(&[4.0, 0.0, 36.0], &times).unwrap();
    p.temperatures_k.iter().fold(0.0f64, |m, t| m.max(t - tc))
}

#[test]
fn semenovs_criterion_separates_slow_reaction_from_runaway() {
    // Semenov's theory of thermal explosion (N. N. Semenov, Z. Phys. 48, 571 (1928);
    // D. A. Frank-Kamenetskii, Diffusion and Heat Exchange in Chemical Kinetics, ch. VI):
    // without reactant consumption the critical Semenov number is 1/e = 0.368, with a
    // temperature rise at criticality of R Tc^2 / E. Reactant consumption raises the
    // critical value, by a factor of about 1 + 2.52 B^(-2/3) (B = adiabatic rise in units of
    // R Tc^2/E; from memory) = 1.07 at B = 200, to about 0.395. Below it (Se = 0.30) the
    // rise must stay under R Tc^2/E = 10 K; above it (Se = 0.55) the reactor runs away, to
    // more than half the adiabatic rise of 2000 K.
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let slow = semenov_rise(0.30, la);
        let runaway = semenov_rise(0.55, la);
        println!("{la:?}: largest rise {slow:.2} K at Se = 0.30, {runaway:.1} K at Se = 0.55");
        assert!(slow < 10.0, "{la:?}: {slow} K at Se = 0.30");
        assert!(
            slow > 1.0,
            "{la:?}: the reaction must heat at all ({slow} K)"
        );
        assert!(runaway > 1000.0, "{la:?}: {runaway} K at Se = 0.55");
    }
}

#[test]
fn heat_exchange_needs_constant_volume_and_a_sane_coefficient() {
    let kin = exothermic(1.0, 0.0, 1e4);
    let mut model = jacketed(10.0, vec![0.0], vec![300.0]);
    model.constraint = Constraint::ConstantPressure;
    let err = integrate_model(&kin, &model);
    assert!(
        matches!(err, Err(ReactorError::BadHeatExchange(_))),
        "{err:?}"
    );
    let coolant = TemperatureHistory::new(vec![0.0], vec![300.0]).unwrap();
    for bad in [-1.0, f64::NAN, f64::INFINITY] {
        assert!(matches!(
            HeatExchange::new(bad, coolant.clone()),
            Err(ReactorError::BadHeatExchange(_))
        ));
    }
}

fn integrate_model(kin: &Kinetics, model: &ReactorModel) -> Result<(), ReactorError> {
    BatchSystem::with_model(
        kin,
        model,
        300.0,
        &options(3, 1e-8, 1e-12, LinearAlgebra::Dense),
    )
    .map(|_| ())
}

#[test]
fn without_exchange_an_inert_gas_keeps_its_temperature() {
    // With U A / V = 0 the jacketed model is adiabatic: an inert gas (k = 1e-30 1/s, no
    // heat of reaction) keeps its temperature whatever the coolant's.
    let kin = exothermic(1e-30, 0.0, 0.0);
    let model = jacketed(0.0, vec![0.0], vec![300.0]);
    let opts = options(3, 1e-10, 1e-14, LinearAlgebra::Dense);
    let mut system = BatchSystem::with_model(&kin, &model, 450.0, &opts).unwrap();
    let p = system
        .integrate(&[0.0, 0.0, 40.0], &[0.0, 1.0, 10.0])
        .unwrap();
    for temp in &p.temperatures_k {
        assert_close("T with h = 0", *temp, 450.0, 1e-12, 1e-12);
    }
}
