//! Steady states of stirred tanks and their continuation, checked against the closed forms
//! of the textbook tank: the first-order design equation, and the van Heerden relation of an
//! adiabatic exothermic tank with its turning points and the stability of its three branches.

mod common;

use common::*;
use stoik_kinetics::Kinetics;
use stoik_mechanism::{Arrhenius, GAS_CONSTANT as R};
use stoik_reactor::{
    continuation, steady_state, BranchEnd, Constraint, ContinuationOptions, ContinuationParameter,
    Energy, LinearAlgebra, ReactorModel, SteadyError, SteadyOptions, SteadyPath, StirredFlow,
};
use stoik_thermo::Nasa7;

fn tank(constraint: Constraint, energy: Energy, flow: StirredFlow) -> ReactorModel {
    ReactorModel {
        constraint,
        energy,
        flow: Some(flow),
        ..Default::default()
    }
}

fn steady_options(n: usize) -> SteadyOptions {
    SteadyOptions::from_integration(&options(n, 1e-10, 1e-14, LinearAlgebra::Dense))
}

#[test]
fn first_order_isothermal_tank_meets_the_design_equation() {
    // A -> B, k = 2 1/s: the steady tank holds c_A = c_in / (1 + k tau) (first-order design
    // equation of the stirred tank, O. Levenspiel, Chemical Reaction Engineering, 3rd ed.,
    // ch. 5), c_B = c_in - c_A. The system is linear, J = [[-k - 1/tau, 0], [k, -1/tau]],
    // with eigenvalues -(k + 1/tau) and -1/tau.
    let (k, tau, c_in) = (2.0, 0.5, 3.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let flow = StirredFlow::new(tau, vec![c_in, 0.0], 300.0).unwrap();
    let model = tank(Constraint::ConstantVolume, Energy::Isothermal, flow);
    let s = steady_state(&kin, &model, 300.0, &[0.0, 0.0], &steady_options(2)).unwrap();
    let a = c_in / (1.0 + k * tau);
    assert_close("c_A", s.concentrations_mol_per_m3[0], a, 1e-12, 1e-15);
    assert_close(
        "c_B",
        s.concentrations_mol_per_m3[1],
        c_in - a,
        1e-12,
        1e-15,
    );
    assert_eq!(s.path, SteadyPath::Newton);
    assert!(
        s.newton_iterations <= 3,
        "{} iterations",
        s.newton_iterations
    );
    assert!(
        s.scaled_correction < 1.0 && s.scaled_residual < 1.0,
        "{s:?}"
    );
    eprintln!(
        "isothermal: {} Newton iterations, scaled residual {:e}",
        s.newton_iterations, s.scaled_residual
    );
    let e = &s.stability.eigenvalues_per_s;
    assert_close("eigenvalue 1", e[0].0, -1.0 / tau, 1e-12, 0.0);
    assert_close("eigenvalue 2", e[1].0, -(k + 1.0 / tau), 1e-12, 0.0);
    assert!(s.stability.stable);
    // The branch in tau from 0.01 s to 100 s lies on the design equation; no turning point.
    let branch = continuation(
        &kin,
        &model,
        300.0,
        &[0.0, 0.0],
        ContinuationParameter::ResidenceTime,
        0.01,
        100.0,
        &ContinuationOptions::new(steady_options(2)),
    )
    .unwrap();
    assert_eq!(branch.end, BranchEnd::ReachedEnd);
    assert!(branch.turning_points.is_empty());
    assert!(branch.points.len() > 10);
    assert_close(
        "last tau",
        branch.points.last().unwrap().parameter,
        100.0,
        1e-14,
        0.0,
    );
    for p in &branch.points {
        let a = c_in / (1.0 + k * p.parameter);
        assert_close(
            "c_A on the branch",
            p.concentrations_mol_per_m3[0],
            a,
            1e-9,
            1e-14,
        );
        assert!(p.stable);
    }
}

/// A species with the constant heat capacity of a monatomic ideal gas, cp = 5/2 R (kinetic
/// theory), and enthalpy H = R (5/2 T + h0_over_r).
fn monatomic(h0_over_r: f64) -> Nasa7 {
    let a = [2.5, 0.0, 0.0, 0.0, 0.0, h0_over_r, 4.0];
    Nasa7::new(200.0, 1000.0, 6000.0, a, a).unwrap()
}

/// A -> B (Arrhenius) in a diluent D; A lies `q` J/mol above B (exothermic by q).
fn exothermic(pre: f64, ea: f64, q: f64) -> Kinetics {
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
    for (species, h0) in m.species.iter_mut().zip([q / R, 0.0, 0.0]) {
        species.thermo = Some(monatomic(h0));
    }
    Kinetics::compile(&m).unwrap()
}

/// Root of `g` in `(a, b)` by bisection (g(a) and g(b) of opposite signs).
fn bisect(g: impl Fn(f64) -> f64, mut a: f64, mut b: f64) -> f64 {
    let ga = g(a);
    for _ in 0..200 {
        let mid = 0.5 * (a + b);
        if (g(mid) > 0.0) == (ga > 0.0) {
            a = mid;
        } else {
            b = mid;
        }
    }
    0.5 * (a + b)
}

#[test]
fn adiabatic_exothermic_tank_follows_the_van_heerden_s_curve() {
    // Constant-density adiabatic tank, A -> B exothermic by q, k(T) = A exp(-E/(R T)), all
    // species cp = 5/2 R. Steady states solve c_A = c_in / (1 + k tau) and the van Heerden
    // relation T - T_in = dT_ad k tau / (1 + k tau), dT_ad = q c_in / (C cp) (C. van Heerden,
    // Ind. Eng. Chem. 45 (1953) 1242). Solved for tau along the curve,
    // tau(T) = (T - T_in) / ((T_ad - T) k(T)), whose extrema (d ln tau/dT =
    // -E/(R T^2) + 1/(T - T_in) + 1/(T_ad - T) = 0) are the turning points; between them the
    // middle branch is a saddle, the outer branches stable (Uppal, Ray & Poore, Chem. Eng.
    // Sci. 29 (1974) 967).
    let (pre, ea, q) = (5e6, 8e4, 6e4);
    let kin = exothermic(pre, ea, q);
    let (c_in, diluent, t_in) = (2.0, 38.0, 450.0);
    let total = c_in + diluent;
    let dt_ad = q * c_in / (total * 2.5 * R);
    let t_ad = t_in + dt_ad;
    let k = |t: f64| pre * (-ea / (R * t)).exp();
    let slope = |t: f64| -ea / (R * t * t) + 1.0 / (t - t_in) + 1.0 / (t_ad - t);
    let tau_of = |t: f64| (t - t_in) / ((t_ad - t) * k(t));
    // The two roots of the slope, bracketed by a scan of the closed form.
    let scan: Vec<f64> = (1..4000)
        .map(|i| t_in + dt_ad * i as f64 / 4000.0)
        .collect();
    let mut folds = Vec::new();
    for w in scan.windows(2) {
        if (slope(w[0]) > 0.0) != (slope(w[1]) > 0.0) {
            folds.push(bisect(slope, w[0], w[1]));
        }
    }
    assert_eq!(folds.len(), 2, "three steady states need two folds");
    let flow = StirredFlow::new(1.0, vec![c_in, 0.0, diluent], t_in).unwrap();
    let model = tank(Constraint::ConstantVolume, Energy::Adiabatic, flow);
    let branch = continuation(
        &kin,
        &model,
        t_in,
        &[c_in, 0.0, diluent],
        ContinuationParameter::ResidenceTime,
        1.0,
        1e4,
        &ContinuationOptions::new(steady_options(3)),
    )
    .unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(branch.end, BranchEnd::ReachedEnd);
    eprintln!(
        "S-curve: {} points, {} corrector iterations, start by {:?} in {} Newton iterations",
        branch.points.len(),
        branch.corrector_iterations,
        branch.start.path,
        branch.start.newton_iterations
    );
    let mut worst: f64 = 0.0;
    for p in &branch.points {
        let kt = k(p.temperature_k) * p.parameter;
        let relation = p.temperature_k - t_in - dt_ad * kt / (1.0 + kt);
        worst = worst.max(relation.abs() / dt_ad);
        assert_close(
            "c_A on the branch",
            p.concentrations_mol_per_m3[0],
            c_in / (1.0 + kt),
            1e-8,
            1e-12,
        );
    }
    eprintln!("worst van Heerden residual / dT_ad: {worst:e}");
    assert!(worst < 1e-8, "{worst:e}");
    // Turning points: the ignition (low T, large tau) and extinction (high T, small tau).
    assert_eq!(
        branch.turning_points.len(),
        2,
        "{:?}",
        branch.turning_points
    );
    for (found, &t_fold) in branch.turning_points.iter().zip(&folds) {
        eprintln!(
            "turning point at tau = {:.12} s, T = {:.9} K (closed form {:.12} s, {:.9} K)",
            found.parameter,
            found.temperature_k,
            tau_of(t_fold),
            t_fold
        );
        assert_close("fold tau", found.parameter, tau_of(t_fold), 1e-8, 0.0);
        assert_close("fold T", found.temperature_k, t_fold, 1e-6, 0.0);
    }
    // Stability: middle branch unstable, outer branches stable (points within 0.5 K of a
    // fold, where an eigenvalue crosses zero, are skipped).
    let (low, high) = (folds[0], folds[1]);
    let mut middle = 0;
    for p in &branch.points {
        let t = p.temperature_k;
        if (t - low).abs() < 0.5 || (t - high).abs() < 0.5 {
            continue;
        }
        let expect_stable = t < low || t > high;
        middle += usize::from(!expect_stable);
        assert_eq!(
            p.stable, expect_stable,
            "T = {t} K, tau = {} s, largest real part {}",
            p.parameter, p.largest_real_part_per_s
        );
    }
    assert!(middle > 3, "the middle branch was sampled");
}

#[test]
fn three_steady_states_at_one_residence_time_are_found_from_three_guesses() {
    // At tau = 20 s the S-curve above has three steady states; Newton from a cold guess lands
    // on the low one, from a hot guess on the high one, each on the van Heerden relation.
    let (pre, ea, q) = (5e6, 8e4, 6e4);
    let kin = exothermic(pre, ea, q);
    let (c_in, diluent, t_in, tau) = (2.0, 38.0, 450.0, 20.0);
    let dt_ad = q * c_in / ((c_in + diluent) * 2.5 * R);
    let flow = StirredFlow::new(tau, vec![c_in, 0.0, diluent], t_in).unwrap();
    let model = tank(Constraint::ConstantVolume, Energy::Adiabatic, flow);
    let cold = steady_state(
        &kin,
        &model,
        t_in,
        &[c_in, 0.0, diluent],
        &steady_options(3),
    )
    .unwrap();
    let hot = steady_state(
        &kin,
        &model,
        t_in + dt_ad,
        &[0.0, c_in, diluent],
        &steady_options(3),
    )
    .unwrap();
    for s in [&cold, &hot] {
        let kt = pre * (-ea / (R * s.temperature_k)).exp() * tau;
        assert_close(
            "van Heerden",
            s.temperature_k - t_in,
            dt_ad * kt / (1.0 + kt),
            1e-10,
            0.0,
        );
        assert!(s.stability.stable);
        eprintln!(
            "T = {} K by {:?}: {} Newton iterations, scaled residual {:e}",
            s.temperature_k, s.path, s.newton_iterations, s.scaled_residual
        );
    }
    assert!(hot.temperature_k > cold.temperature_k + 0.5 * dt_ad);
}

#[test]
fn closed_reactors_and_bad_parameters_are_refused() {
    let kin = exothermic(5e6, 8e4, 6e4);
    let closed = ReactorModel::default();
    let err = steady_state(&kin, &closed, 450.0, &[1.0, 0.0, 1.0], &steady_options(3));
    assert!(matches!(err, Err(SteadyError::NotATank)), "{err:?}");
    let flow = StirredFlow::new(1.0, vec![2.0, 0.0, 38.0], 450.0).unwrap();
    let model = tank(Constraint::ConstantVolume, Energy::Adiabatic, flow);
    let run = |parameter, from, to| {
        continuation(
            &kin,
            &model,
            450.0,
            &[2.0, 0.0, 38.0],
            parameter,
            from,
            to,
            &ContinuationOptions::new(steady_options(3)),
        )
    };
    for (parameter, from, to) in [
        (ContinuationParameter::ResidenceTime, -1.0, 10.0),
        (ContinuationParameter::ResidenceTime, 5.0, 5.0),
        (ContinuationParameter::CoolantTemperature, 300.0, 400.0),
    ] {
        let e = run(parameter, from, to);
        assert!(matches!(e, Err(SteadyError::BadParameter(_))), "{e:?}");
    }
}

#[test]
fn feed_and_coolant_temperature_branches_satisfy_the_steady_flow_energy_balance() {
    // The same tank at tau = 20 s followed in the feed temperature (adiabatic) and, cooled
    // through U A / V = 50 W/(m3 K), in the coolant temperature. Every point must satisfy
    // c_A = c_in / (1 + k tau) and the steady-flow first law
    // C cp (T - T_in) / tau + U A / V (T - T_c) = q k c_A (van Heerden's heat-generation and
    // heat-removal lines; H. S. Fogler, Elements of Chemical Reaction Engineering, 4th ed.,
    // ch. 8).
    use stoik_reactor::{HeatExchange, TemperatureHistory};
    let (pre, ea, q) = (5e6, 8e4, 6e4);
    let kin = exothermic(pre, ea, q);
    let (c_in, diluent, t_in, tau, ua) = (2.0, 38.0, 450.0, 20.0, 50.0);
    let capacity = (c_in + diluent) * 2.5 * R;
    let flow = StirredFlow::new(tau, vec![c_in, 0.0, diluent], t_in).unwrap();
    let coolant = TemperatureHistory::new(vec![0.0], vec![440.0]).unwrap();
    let cases = [
        (
            Energy::Adiabatic,
            ContinuationParameter::InletTemperature,
            0.0,
            (400.0, 480.0),
        ),
        (
            Energy::HeatExchange(HeatExchange::new(ua, coolant).unwrap()),
            ContinuationParameter::CoolantTemperature,
            ua,
            (400.0, 520.0),
        ),
    ];
    for (energy, parameter, ua, (from, to)) in cases {
        let model = tank(Constraint::ConstantVolume, energy, flow.clone());
        let branch = continuation(
            &kin,
            &model,
            t_in,
            &[c_in, 0.0, diluent],
            parameter,
            from,
            to,
            &ContinuationOptions::new(steady_options(3)),
        )
        .unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(branch.end, BranchEnd::ReachedEnd, "{parameter:?}");
        let mut worst: f64 = 0.0;
        for p in &branch.points {
            let (feed, cool) = match parameter {
                ContinuationParameter::InletTemperature => (p.parameter, 0.0),
                _ => (t_in, p.parameter),
            };
            let t = p.temperature_k;
            let k = pre * (-ea / (R * t)).exp();
            let c_a = c_in / (1.0 + k * tau);
            assert_close("c_A", p.concentrations_mol_per_m3[0], c_a, 1e-8, 1e-12);
            let generation = q * k * c_a;
            let removal = capacity * (t - feed) / tau + ua * (t - cool);
            worst = worst.max((generation - removal).abs() / (capacity * 100.0 / tau));
        }
        eprintln!(
            "{parameter:?}: {} points, {} turning points, worst balance error {worst:e}",
            branch.points.len(),
            branch.turning_points.len()
        );
        assert!(worst < 1e-8, "{parameter:?}: {worst:e}");
        if parameter == ContinuationParameter::InletTemperature {
            // Three steady states at T_in = 450 K (the S-curve above at tau = 20 s): the
            // feed-temperature branch folds twice around it.
            assert_eq!(branch.turning_points.len(), 2);
            let folds: Vec<f64> = branch.turning_points.iter().map(|t| t.parameter).collect();
            assert!(folds.iter().any(|&f| f > 450.0) && folds.iter().any(|&f| f < 450.0));
        }
    }
}
