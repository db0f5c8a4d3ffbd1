//! Local sensitivities (forward and adjoint) against closed forms obtained by differentiating
//! textbook integrated rate laws.
//!
//! Source of every closed form: P. Atkins and J. de Paula, *Atkins' Physical Chemistry*,
//! chapter on the rates of chemical reactions: the first-order integrated law
//! `A = A0 exp(-k t)`, consecutive first-order steps `B = A0 k1/(k2 - k1) (exp(-k1 t) -
//! exp(-k2 t))` with the maximum of B at `t_max = ln(k2/k1)/(k2 - k1)`, and reactions
//! approaching equilibrium (`A_eq = A0/(1 + K)`, `K = kf/kr`). The derivatives with respect
//! to ln k are taken by hand below (chain rule, `d/d ln k = k d/dk`).
//!
//! Tolerances: runs at rtol 1e-10; results checked to 1e-6 relative (the global error is a
//! few times the local tolerance, amplified at most by the sensitivities' own growth).

mod common;

use common::*;
use stoik_reactor::{
    adjoint_sensitivity, forward_sensitivities, LinearAlgebra, ReactorModel, SensitivityError,
    Target,
};

const CHECK_REL: f64 = 1e-6;

fn opts(n: usize) -> stoik_reactor::IntegrationOptions {
    options(n, 1e-10, 1e-16, LinearAlgebra::Sparse)
}

#[test]
fn first_order_decay_sensitivity_is_minus_k_t() {
    // A -> B: ln A = ln A0 - k t, so d ln A/d ln k = -k t (Atkins, first-order law).
    let (k, a0) = (0.5, 2.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let times = [0.0, 0.5, 1.0, 2.0, 4.0];
    let model = ReactorModel::default();
    let targets = [Target::Value {
        state: 0,
        time_s: 4.0,
    }];
    let r = forward_sensitivities(
        &kin,
        &model,
        T,
        &[a0, 0.0],
        &times,
        &opts(2),
        &[0],
        &targets,
    )
    .unwrap();
    for (row, &t) in times.iter().enumerate().skip(1) {
        let a = r.states[row][0];
        let s = r.sensitivities[row][0][0] / a;
        assert_close(&format!("S_A({t})"), s, -k * t, CHECK_REL, 1e-12);
        // B = A0 - A: dB/d ln k = -dA/d ln k = A0 k t exp(-k t).
        let expected_b = a0 * k * t * (-k * t).exp();
        assert_close(
            &format!("dB/dlnk({t})"),
            r.sensitivities[row][0][1],
            expected_b,
            CHECK_REL,
            1e-14,
        );
    }
    let adj = adjoint_sensitivity(&kin, &model, T, &[a0, 0.0], &opts(2), &[0], targets[0]).unwrap();
    let expected = -k * 4.0 * a0 * (-k * 4.0f64).exp();
    assert_close(
        "adjoint dA(4)/dlnk",
        adj.target.gradient[0],
        expected,
        CHECK_REL,
        1e-14,
    );
    assert_close(
        "forward target",
        r.targets[0].gradient[0],
        expected,
        CHECK_REL,
        1e-14,
    );
}

/// `B(t)` of A -> B -> C and its derivatives with respect to ln k1 and ln k2 (Atkins,
/// consecutive first-order reactions; derivatives by hand).
fn consecutive(a0: f64, k1: f64, k2: f64, t: f64) -> (f64, f64, f64) {
    let (e1, e2) = ((-k1 * t).exp(), (-k2 * t).exp());
    let d = k2 - k1;
    let b = a0 * k1 / d * (e1 - e2);
    let db_dk1 = a0 * (k2 / (d * d) * (e1 - e2) - k1 / d * t * e1);
    let db_dk2 = a0 * k1 * (-(e1 - e2) / (d * d) + t * e2 / d);
    (b, k1 * db_dk1, k2 * db_dk2)
}

#[test]
fn consecutive_steps_match_the_differentiated_bateman_form() {
    let (a0, k1, k2) = (1.0, 1.0, 3.0);
    let kin = kinetics(
        &["A", "B", "C"],
        vec![
            step(&[(0, 1.0)], &[(1, 1.0)], k1),
            step(&[(1, 1.0)], &[(2, 1.0)], k2),
        ],
    );
    let model = ReactorModel::default();
    let t_max = (k2 / k1).ln() / (k2 - k1);
    // d t_max / d ln k1 = k1 [-(k2 - k1)/k1 + ln(k2/k1)] / (k2 - k1)^2, and symmetrically
    // d t_max / d ln k2 = k2 [(k2 - k1)/k2 - ln(k2/k1)] / (k2 - k1)^2 (by hand from t_max).
    let d = k2 - k1;
    let dt_dk1 = k1 * (-d / k1 + (k2 / k1).ln()) / (d * d);
    let dt_dk2 = k2 * (d / k2 - (k2 / k1).ln()) / (d * d);
    let times = [0.0, 0.25, 1.0, 2.0, 3.0];
    let peak = Target::Peak {
        state: 1,
        time_s: t_max,
    };
    let peak_value = Target::Value {
        state: 1,
        time_s: t_max,
    };
    let r = forward_sensitivities(
        &kin,
        &model,
        T,
        &[a0, 0.0, 0.0],
        &times,
        &opts(3),
        &[0, 1],
        &[peak, peak_value],
    )
    .unwrap();
    for (row, &t) in times.iter().enumerate().skip(1) {
        let (b, s1, s2) = consecutive(a0, k1, k2, t);
        assert_close(&format!("B({t})"), r.states[row][1], b, 1e-7, 1e-14);
        assert_close(
            &format!("dB/dlnk1({t})"),
            r.sensitivities[row][0][1],
            s1,
            CHECK_REL,
            1e-12,
        );
        assert_close(
            &format!("dB/dlnk2({t})"),
            r.sensitivities[row][1][1],
            s2,
            CHECK_REL,
            1e-12,
        );
    }
    assert_close(
        "dtmax/dlnk1",
        r.targets[0].gradient[0],
        dt_dk1,
        CHECK_REL,
        1e-12,
    );
    assert_close(
        "dtmax/dlnk2",
        r.targets[0].gradient[1],
        dt_dk2,
        CHECK_REL,
        1e-12,
    );
    // At the peak dB/dt = 0, so the peak value moves as B itself at fixed t_max.
    let (_, s1, s2) = consecutive(a0, k1, k2, t_max);
    assert_close(
        "dBmax/dlnk1",
        r.targets[1].gradient[0],
        s1,
        CHECK_REL,
        1e-12,
    );
    assert_close(
        "dBmax/dlnk2",
        r.targets[1].gradient[1],
        s2,
        CHECK_REL,
        1e-12,
    );
    let init = [a0, 0.0, 0.0];
    let adj = adjoint_sensitivity(&kin, &model, T, &init, &opts(3), &[0, 1], peak).unwrap();
    assert_close(
        "adjoint dtmax/dlnk1",
        adj.target.gradient[0],
        dt_dk1,
        CHECK_REL,
        1e-12,
    );
    assert_close(
        "adjoint dtmax/dlnk2",
        adj.target.gradient[1],
        dt_dk2,
        CHECK_REL,
        1e-12,
    );
    let adj = adjoint_sensitivity(&kin, &model, T, &init, &opts(3), &[0, 1], peak_value).unwrap();
    assert_close(
        "adjoint dBmax/dlnk1",
        adj.target.gradient[0],
        s1,
        CHECK_REL,
        1e-12,
    );
    assert_close(
        "adjoint dBmax/dlnk2",
        adj.target.gradient[1],
        s2,
        CHECK_REL,
        1e-12,
    );
}

#[test]
fn reversible_step_at_equilibrium_follows_the_equilibrium_constant() {
    // A <=> B with explicit kf, kr: A_eq = A0/(1 + K), K = kf/kr (Atkins, reactions
    // approaching equilibrium), so d ln A_eq/d ln kf = -K/(1 + K) and d ln A_eq/d ln kr =
    // +K/(1 + K). The relaxation time is 1/(kf + kr) = 0.25 s: 20 s is equilibrium.
    let (kf, kr, a0) = (3.0, 1.0, 1.0);
    let kin = kinetics(
        &["A", "B"],
        vec![reversible(&[(0, 1.0)], &[(1, 1.0)], kf, kr)],
    );
    // A second copy with the step reversed (B <=> A, kf' = kr, kr' = kf): its forward rate
    // constant is the first one's reverse one.
    let reversed = kinetics(
        &["A", "B"],
        vec![reversible(&[(1, 1.0)], &[(0, 1.0)], kr, kf)],
    );
    let model = ReactorModel::default();
    let big_k = kf / kr;
    let expected = -big_k / (1.0 + big_k);
    let times = [0.0, 20.0];
    let r =
        forward_sensitivities(&kin, &model, T, &[a0, 0.0], &times, &opts(2), &[0], &[]).unwrap();
    assert_close("A_eq", r.states[1][0], a0 / (1.0 + big_k), 1e-8, 1e-14);
    assert_close(
        "S(A_eq, kf)",
        r.sensitivities[1][0][0] / r.states[1][0],
        expected,
        CHECK_REL,
        1e-12,
    );
    let r = forward_sensitivities(
        &reversed,
        &model,
        T,
        &[a0, 0.0],
        &times,
        &opts(2),
        &[0],
        &[],
    )
    .unwrap();
    assert_close(
        "S(A_eq, kr)",
        r.sensitivities[1][0][0] / r.states[1][0],
        -expected,
        CHECK_REL,
        1e-12,
    );
    let target = Target::Value {
        state: 0,
        time_s: 20.0,
    };
    let adj = adjoint_sensitivity(&kin, &model, T, &[a0, 0.0], &opts(2), &[0], target).unwrap();
    assert_close(
        "adjoint S(A_eq, kf)",
        adj.target.gradient[0] / adj.target.value,
        expected,
        CHECK_REL,
        1e-12,
    );
}

#[test]
fn bad_indices_are_refused() {
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 1.0)]);
    let model = ReactorModel::default();
    let times = [0.0, 1.0];
    let err = forward_sensitivities(&kin, &model, T, &[1.0, 0.0], &times, &opts(2), &[3], &[])
        .unwrap_err();
    assert!(
        matches!(
            err,
            SensitivityError::StepOutOfRange {
                step: 3,
                n_steps: 1
            }
        ),
        "{err}"
    );
    let target = Target::Value {
        state: 5,
        time_s: 1.0,
    };
    let err =
        adjoint_sensitivity(&kin, &model, T, &[1.0, 0.0], &opts(2), &[0], target).unwrap_err();
    assert!(
        matches!(
            err,
            SensitivityError::StateOutOfRange {
                state: 5,
                n_states: 2
            }
        ),
        "{err}"
    );
    let target = Target::Value {
        state: 0,
        time_s: 2.0,
    };
    let err = forward_sensitivities(
        &kin,
        &model,
        T,
        &[1.0, 0.0],
        &times,
        &opts(2),
        &[0],
        &[target],
    )
    .unwrap_err();
    assert!(
        matches!(err, SensitivityError::TimeOutsideRun { .. }),
        "{err}"
    );
}

#[test]
fn robertson_adjoint_to_1e11_completes_and_agrees_with_forward() {
    // Robertson's problem (Robertson 1966; Hairer and Wanner, "Solving ODEs II", section
    // IV.10): A -> B (0.04), B + B -> C + B (3e7), B + C -> A + C (1e4), from (1, 0, 0) to
    // t = 1e11. The backward pass used to run out of its 100,000 steps (Newton iterations of
    // the adjoint equations declared divergent on rounding; docs/sensitivity.md).
    let kin = kinetics(
        &["A", "B", "C"],
        vec![
            step(&[(0, 1.0)], &[(1, 1.0)], 0.04),
            step(&[(1, 2.0)], &[(2, 1.0), (1, 1.0)], 3e7),
            step(&[(1, 1.0), (2, 1.0)], &[(0, 1.0), (2, 1.0)], 1e4),
        ],
    );
    let o = options(3, 1e-8, 1e-14, LinearAlgebra::Sparse);
    let model = ReactorModel::default();
    let target = Target::Value {
        state: 2,
        time_s: 1e11,
    };
    let adj = adjoint_sensitivity(
        &kin,
        &model,
        298.15,
        &[1.0, 0.0, 0.0],
        &o,
        &[0, 1, 2],
        target,
    )
    .expect("the backward pass completes");
    assert!(adj.stats.backward_steps < 100_000);
    let fwd = forward_sensitivities(
        &kin,
        &model,
        298.15,
        &[1.0, 0.0, 0.0],
        &[0.0, 1e11],
        &o,
        &[0, 1, 2],
        &[target],
    )
    .expect("forward");
    let g_fwd = &fwd.targets[0].gradient;
    let g_adj = &adj.target.gradient;
    // The largest coefficients (R1, R3: equal and opposite) agree to 1e-5 relative; R2's,
    // half as large, to 1e-2 (measured 2e-6 and 1.1e-3).
    for (j, bound) in [(0, 1e-5), (2, 1e-5), (1, 1e-2)] {
        let rel = (g_adj[j] - g_fwd[j]).abs() / g_fwd[j].abs();
        assert!(
            rel < bound,
            "step {j}: adjoint {} forward {} ({rel:e})",
            g_adj[j],
            g_fwd[j]
        );
    }
}
