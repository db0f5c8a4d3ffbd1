//! The cooled-tank demo (mechanisms/cooled-tank.scenario.toml): a continuous, jacketed,
//! liquid-phase stirred tank with one first-order exothermic step, R -> Q. Its steady states
//! and the turning points of its S-curve against the coolant temperature are checked against
//! the textbook heat-generation / heat-removal construction, solved independently here.
//!
//! Source: H. S. Fogler, *Elements of Chemical Reaction Engineering*, the chapter on
//! multiple steady states of a stirred tank with heat exchange (cited from memory): with the
//! mole balance substituted, the conversion of a first-order step is X = k tau / (1 + k tau),
//! and the energy balance reads G(T) = R(T) with the heat generated per volume of feed
//! G(T) = (-dH) c_in X(T) and the heat removed R(T) = rho cp [(T - T_in) + kappa (T - T_c)],
//! kappa = U A tau / (V rho cp). Steady states are the intersections; ignition and
//! extinction are the tangencies G = R, G' = R'. Since R' = rho cp (1 + kappa) does not
//! depend on the coolant temperature, the tangency temperatures solve G'(T) = rho cp
//! (1 + kappa), and the coolant temperature follows from G = R.

use std::path::Path;
use stoik_kinetics::Kinetics;
use stoik_reactor::{
    continuation, steady_state, ContinuationOptions, ContinuationParameter, Energy, ReactorModel,
    SteadyOptions,
};
use stoik_scenario::RunPlan;

/// R = 8.314462618 J/(mol K) (CODATA 2018, exact since the 2019 SI).
const GAS_CONSTANT: f64 = 8.314462618;

/// The tank's numbers, read from the scenario as the library resolved them (the inputs of
/// the independent construction, not its results).
struct Tank {
    /// Arrhenius prefactor (1/s) and activation energy (J/mol) of R -> Q.
    prefactor: f64,
    activation: f64,
    /// Residence time (s), inlet concentration of R (mol/m3), feed temperature (K).
    tau: f64,
    c_in: f64,
    t_in: f64,
    /// rho cp (J/(m3 K)), reaction enthalpy (J/mol), U A / V (W/(m3 K)).
    rho_cp: f64,
    dh: f64,
    ua_v: f64,
}

impl Tank {
    fn k(&self, t: f64) -> f64 {
        self.prefactor * (-self.activation / (GAS_CONSTANT * t)).exp()
    }
    fn kappa(&self) -> f64 {
        self.ua_v * self.tau / self.rho_cp
    }
    /// X(T) = k tau / (1 + k tau).
    fn conversion(&self, t: f64) -> f64 {
        let kt = self.k(t) * self.tau;
        kt / (1.0 + kt)
    }
    /// G(T) - R(T) (J/m3) at coolant temperature `tc`.
    fn balance(&self, t: f64, tc: f64) -> f64 {
        -self.dh * self.c_in * self.conversion(t)
            - self.rho_cp * ((t - self.t_in) + self.kappa() * (t - tc))
    }
    /// G'(T) - R'(T) (J/(m3 K)): dX/dT = tau k E/(R T^2) / (1 + k tau)^2.
    fn balance_slope(&self, t: f64) -> f64 {
        let kt = self.k(t) * self.tau;
        let dx = kt * self.activation / (GAS_CONSTANT * t * t) / ((1.0 + kt) * (1.0 + kt));
        -self.dh * self.c_in * dx - self.rho_cp * (1.0 + self.kappa())
    }
    /// The coolant temperature at which `t` is a steady state (G = R solved for T_c).
    fn coolant_for(&self, t: f64) -> f64 {
        ((1.0 + self.kappa()) * t - self.t_in
            + self.dh * self.c_in * self.conversion(t) / self.rho_cp)
            / self.kappa()
    }
}

/// Bisection of `f` on `[a, b]` (a sign change) to 1e-13 K.
fn bisect(f: impl Fn(f64) -> f64, mut a: f64, mut b: f64) -> f64 {
    let fa = f(a);
    assert!(fa * f(b) < 0.0, "no sign change on [{a}, {b}]");
    while b - a > 1e-13 {
        let m = 0.5 * (a + b);
        if (f(m) > 0.0) == (fa > 0.0) {
            a = m;
        } else {
            b = m;
        }
    }
    0.5 * (a + b)
}

/// The roots of `f` on `[lo, hi]`, bracketed on a 0.01 K grid and bisected.
fn roots(f: impl Fn(f64) -> f64, lo: f64, hi: f64) -> Vec<f64> {
    let mut out = Vec::new();
    let steps = ((hi - lo) / 0.01) as usize;
    for i in 0..steps {
        let (a, b) = (lo + 0.01 * i as f64, lo + 0.01 * (i + 1) as f64);
        if f(a) * f(b) < 0.0 {
            out.push(bisect(&f, a, b));
        }
    }
    out
}

fn load() -> (RunPlan, Kinetics, Tank) {
    let path =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("../../mechanisms/cooled-tank.scenario.toml");
    let plan = RunPlan::load(&path).unwrap_or_else(|e| panic!("{e}"));
    let kinetics = Kinetics::compile(plan.mechanism()).unwrap_or_else(|e| panic!("{e}"));
    let model = plan.model();
    let flow = model.flow.as_ref().expect("a stirred tank");
    let liquid = model.liquid.as_ref().expect("a liquid phase");
    let Energy::HeatExchange(jacket) = &model.energy else {
        panic!("a jacketed tank")
    };
    let step = &plan.mechanism().steps[0];
    let r = plan
        .mechanism()
        .species
        .iter()
        .position(|s| s.name == "R")
        .expect("species R");
    let tank = Tank {
        prefactor: step.forward.pre_exponential_si,
        activation: step.forward.activation_energy_j_per_mol,
        tau: flow.residence_time_s(),
        c_in: flow.inlet_mol_per_m3()[r],
        t_in: flow.inlet_temperature_k(),
        rho_cp: liquid.heat_capacity_j_per_m3_k(),
        dh: liquid.step_enthalpies_j_per_mol()[0],
        ua_v: jacket.ua_per_volume_w_per_m3_k(),
    };
    (plan, kinetics, tank)
}

fn with_coolant(model: &ReactorModel, tc: f64) -> ReactorModel {
    let mut model = model.clone();
    if let Energy::HeatExchange(x) = &mut model.energy {
        x.set_coolant_temperature_k(tc)
            .unwrap_or_else(|e| panic!("{e}"));
    }
    model
}

#[test]
fn three_steady_states_match_the_heat_generation_and_removal_construction() {
    let (plan, kinetics, tank) = load();
    let r = 0; // R is the first species of mechanisms/cooled-tank.toml
    assert_eq!(plan.mechanism().species[r].name, "R");
    // The scenario's own coolant temperature (290 K) lies inside the multiplicity window.
    for tc in [270.0, 290.0, 300.0] {
        let expected = roots(|t| tank.balance(t, tc), 250.0, 500.0);
        assert_eq!(expected.len(), 3, "T_c = {tc} K: {expected:?}");
        let model = with_coolant(plan.model(), tc);
        for (which, &t_star) in expected.iter().enumerate() {
            // Newton from 0.3 K and 0.1 % off the state (the library's default path).
            let mut guess = plan.initial_mol_per_m3().to_vec();
            guess[r] = tank.c_in / (1.0 + tank.k(t_star) * tank.tau) * 1.001;
            let s = steady_state(
                &kinetics,
                &model,
                t_star + 0.3,
                &guess,
                &SteadyOptions {
                    transient_first: false,
                    ..SteadyOptions::from_integration(plan.options())
                },
            )
            .unwrap_or_else(|e| panic!("T_c = {tc} K, state {which}: {e}"));
            let c_expected = tank.c_in / (1.0 + tank.k(t_star) * tank.tau);
            let c = s.concentrations_mol_per_m3[r];
            eprintln!(
                "T_c = {tc} K, state {which}: T = {} K (construction {t_star} K), c_R = {c} ({c_expected}) mol/m3, stable {}",
                s.temperature_k, s.stability.stable
            );
            assert!(
                (s.temperature_k - t_star).abs() <= 1e-9 * t_star,
                "T_c = {tc} K: T = {} K, expected {t_star} K",
                s.temperature_k
            );
            assert!(
                (c - c_expected).abs() <= 1e-8 * c_expected,
                "T_c = {tc} K: c_R = {c}, expected {c_expected}"
            );
            // The slope condition (same source): where G crosses R from below (G' > R'),
            // the state is unstable; the outer two, where G' < R', are stable.
            let slope_stable = tank.balance_slope(t_star) < 0.0;
            assert_eq!(slope_stable, which != 1);
            assert_eq!(
                s.stability.stable, slope_stable,
                "T_c = {tc} K, state {which}"
            );
        }
    }
}

#[test]
fn s_curve_turning_points_match_the_tangency_conditions() {
    let (plan, kinetics, tank) = load();
    // Tangency: G'(T) = R'(T) has two roots (the middle branch lies between them).
    let tangent = roots(|t| tank.balance_slope(t), 250.0, 500.0);
    assert_eq!(tangent.len(), 2, "{tangent:?}");
    let ignition = (tank.coolant_for(tangent[0]), tangent[0]);
    let extinction = (tank.coolant_for(tangent[1]), tangent[1]);
    eprintln!(
        "construction: ignition T_c = {} K at T = {} K, extinction T_c = {} K at T = {} K",
        ignition.0, ignition.1, extinction.0, extinction.1
    );
    let branch = continuation(
        &kinetics,
        &with_coolant(plan.model(), 240.0),
        plan.temperature_k(),
        plan.initial_mol_per_m3(),
        ContinuationParameter::CoolantTemperature,
        240.0,
        320.0,
        &ContinuationOptions::new(SteadyOptions::from_integration(plan.options())),
    )
    .unwrap_or_else(|e| panic!("{e}"));
    let turns: Vec<(f64, f64)> = branch
        .turning_points
        .iter()
        .map(|p| (p.parameter, p.temperature_k))
        .collect();
    eprintln!(
        "continuation: {} points, turning points {turns:?}",
        branch.points.len()
    );
    assert_eq!(turns.len(), 2, "{turns:?}");
    for ((tc, t), (tc_expected, t_expected)) in turns.iter().zip([ignition, extinction]) {
        // The fold is located by a secant on the tangent's parameter component and
        // corrected onto the steady states (measured: both agree to about 1e-15).
        assert!(
            (tc - tc_expected).abs() <= 1e-9 * tc_expected,
            "turning point T_c = {tc} K, expected {tc_expected} K"
        );
        assert!(
            (t - t_expected).abs() <= 1e-8 * t_expected,
            "turning point T = {t} K, expected {t_expected} K"
        );
    }
    // The branch starts stable on the cold branch and ends stable on the hot one.
    let (first, last) = (&branch.points[0], &branch.points[branch.points.len() - 1]);
    assert!(first.stable && last.stable);
    assert!(first.temperature_k < ignition.1 && last.temperature_k > extinction.1);
}
