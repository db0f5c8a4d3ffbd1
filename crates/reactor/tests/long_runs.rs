//! Long runs: following an integration from another thread, stopping it on request, and the
//! wall-clock limit. Every stopped run must keep its profile so far, and that profile must be
//! right: the rows are checked against the closed form of first-order decay A -> B,
//! c_A = c_A0 exp(-k t) (any physical chemistry text, e.g. Atkins' Physical Chemistry,
//! integrated rate laws).

mod common;

use common::*;
use stoik_reactor::{
    forward_sensitivities, integrate, BatchSystem, FailureKind, IntegrationError,
    IntegrationFailure, LinearAlgebra, ReactorError, ReactorModel, RunMonitor, SensitivityError,
};

const K: f64 = 0.7;

fn decay() -> stoik_kinetics::Kinetics {
    kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], K)])
}

fn times(n: usize, end: f64) -> Vec<f64> {
    (0..=n).map(|i| end * i as f64 / n as f64).collect()
}

fn failed(result: Result<stoik_reactor::Profiles, IntegrationError>) -> IntegrationFailure {
    match result {
        Err(IntegrationError::Failed(f)) => *f,
        Err(e) => panic!("expected a stopped run, got {e}"),
        Ok(p) => panic!(
            "expected a stopped run, it reached t = {:?}",
            p.times_s.last()
        ),
    }
}

/// Every row of `failure.partial` against the closed form, to `rtol`.
fn rows_follow_decay(failure: &IntegrationFailure, rtol: f64) {
    let p = &failure.partial;
    assert!(!p.times_s.is_empty());
    for (t, c) in p.times_s.iter().zip(&p.concentrations_mol_per_m3) {
        assert_close(
            &format!("c_A at t = {t}"),
            c[0],
            (-K * t).exp(),
            rtol,
            1e-12,
        );
        // A + B is conserved (stoichiometry of A -> B).
        assert_close(
            &format!("c_A + c_B at t = {t}"),
            c[0] + c[1],
            1.0,
            1e-12,
            0.0,
        );
    }
}

#[test]
fn a_stop_request_ends_the_run_after_one_step_with_the_state_reached() {
    let kin = decay();
    let monitor = RunMonitor::new();
    monitor.interrupt();
    let mut opts = options(2, 1e-8, 1e-14, LinearAlgebra::Dense);
    opts.monitor = Some(monitor.clone());
    let failure = failed(integrate(&kin, T, &[1.0, 0.0], &times(10, 10.0), &opts));
    assert_eq!(failure.kind, FailureKind::Interrupted);
    assert!(failure.source.is_none());
    assert!(failure.reason.contains("interrupted"), "{}", failure.reason);
    // One accepted step, published to the monitor.
    assert_eq!(failure.partial.stats.steps, 1);
    assert_eq!(monitor.steps(), 1);
    assert_eq!(monitor.time_s(), failure.time_s);
    // The profile so far: the start, then the state at the time reached (off the grid).
    let p = &failure.partial;
    assert_eq!(p.times_s.len(), 2);
    assert_eq!(p.times_s[0], 0.0);
    assert_eq!(p.times_s[1], failure.time_s);
    assert!(failure.time_s > 0.0 && failure.time_s < 1.0);
    rows_follow_decay(&failure, 1e-6);
}

#[test]
fn a_stop_from_another_thread_keeps_every_row_computed() {
    // A run that never ends by itself: the Lotka-Volterra oscillator in mass-action form,
    // X -> 2 X, X + Y -> 2 Y, Y -> Z (all k = 1), to 1e9 s at rtol 1e-10 (billions of steps),
    // stopped by a supervisor thread once 200 steps are taken.
    let kin = kinetics(
        &["X", "Y", "Z"],
        vec![
            step(&[(0, 1.0)], &[(0, 2.0)], 1.0),
            step(&[(0, 1.0), (1, 1.0)], &[(1, 2.0)], 1.0),
            step(&[(1, 1.0)], &[(2, 1.0)], 1.0),
        ],
    );
    let monitor = RunMonitor::new();
    let mut opts = options(3, 1e-10, 1e-14, LinearAlgebra::Dense);
    opts.monitor = Some(monitor.clone());
    opts.max_steps = usize::MAX;
    let out: Vec<f64> = (0..=100_000).map(|i| 1e4 * i as f64).collect();
    let supervisor = {
        let monitor = monitor.clone();
        std::thread::spawn(move || {
            while monitor.steps() < 200 {
                std::thread::yield_now();
            }
            monitor.interrupt();
        })
    };
    let result = integrate(&kin, T, &[2.0, 0.5, 0.0], &out, &opts);
    supervisor.join().expect("supervisor");
    let failure = failed(result);
    assert_eq!(failure.kind, FailureKind::Interrupted);
    let p = &failure.partial;
    assert!(p.stats.steps >= 200, "{} steps", p.stats.steps);
    assert_eq!(*p.times_s.last().expect("rows"), failure.time_s);
    // The first integral of Lotka-Volterra, V = x - ln x + y - ln y (Hairer, Norsett &
    // Wanner, Solving ODEs I, section I.16), holds on every row kept.
    let v = |c: &[f64]| c[0] - c[0].ln() + c[1] - c[1].ln();
    let v0 = v(&[2.0, 0.5]);
    for (t, c) in p.times_s.iter().zip(&p.concentrations_mol_per_m3) {
        assert_close(&format!("V at t = {t}"), v(c), v0, 1e-6, 0.0);
    }
    // The rows on the grid are the grid's times, in order, up to the stop.
    let on_grid = p.times_s.len() - 1;
    assert_eq!(&p.times_s[..on_grid], &out[..on_grid]);
}

#[test]
fn the_wall_time_limit_ends_the_run_like_a_failure() {
    let kin = decay();
    let mut opts = options(2, 1e-8, 1e-14, LinearAlgebra::Dense);
    // Any step takes longer than a nanosecond of wall time: the limit is hit at once.
    opts.wall_time_limit_s = Some(1e-9);
    let failure = failed(integrate(&kin, T, &[1.0, 0.0], &times(10, 10.0), &opts));
    assert_eq!(failure.kind, FailureKind::WallTimeLimit);
    assert!(
        failure.reason.contains("wall-time limit"),
        "{}",
        failure.reason
    );
    assert_eq!(failure.partial.stats.steps, 1);
    rows_follow_decay(&failure, 1e-6);
    let advice = failure.advice(&["A".into(), "B".into()], &["A -> B".into()]);
    assert!(advice.contains("wall_time_limit"), "{advice}");
}

#[test]
fn a_generous_limit_and_an_idle_monitor_change_nothing() {
    let kin = decay();
    let plain = options(2, 1e-10, 1e-16, LinearAlgebra::Dense);
    let mut watched = plain.clone();
    watched.wall_time_limit_s = Some(1e6);
    let monitor = RunMonitor::new();
    watched.monitor = Some(monitor.clone());
    let out = times(20, 20.0);
    let a = integrate(&kin, T, &[1.0, 0.0], &out, &plain).expect("plain run");
    let b = integrate(&kin, T, &[1.0, 0.0], &out, &watched).expect("watched run");
    // Bit for bit the same profile, and the monitor saw every step and the end time.
    assert_eq!(a.concentrations_mol_per_m3, b.concentrations_mol_per_m3);
    assert_eq!(monitor.steps(), b.stats.steps as u64);
    assert_eq!(monitor.time_s(), 20.0);
    for (t, c) in b.times_s.iter().zip(&b.concentrations_mol_per_m3) {
        assert_close(
            &format!("c_A at t = {t}"),
            c[0],
            (-K * t).exp(),
            1e-7,
            1e-14,
        );
    }
}

#[test]
fn a_stepping_session_resumes_after_a_stop_request_is_withdrawn() {
    let kin = decay();
    let monitor = RunMonitor::new();
    let mut opts = options(2, 1e-10, 1e-16, LinearAlgebra::Dense);
    opts.monitor = Some(monitor.clone());
    let mut system =
        BatchSystem::with_model(&kin, &ReactorModel::default(), T, &opts).expect("system");
    let mut session = system.integrator(&[1.0, 0.0]).expect("session");
    monitor.interrupt();
    let err = session.advance_to(5.0).expect_err("stopped");
    let failure = err.failure().expect("a failure");
    assert_eq!(failure.kind, FailureKind::Interrupted);
    let stopped_at = session.time();
    assert!(stopped_at > 0.0 && stopped_at < 5.0);
    assert_close(
        "c_A at the stop",
        session.state()[0],
        (-K * stopped_at).exp(),
        1e-8,
        1e-14,
    );
    monitor.clear_interrupt();
    let c = session.advance_to(5.0).expect("resumed").to_vec();
    assert_close("c_A at t = 5 s", c[0], (-K * 5.0f64).exp(), 1e-8, 1e-14);
}

#[test]
fn bad_limits_are_refused() {
    let kin = decay();
    for bad in [0.0, -1.0, f64::NAN, f64::INFINITY] {
        let mut opts = options(2, 1e-8, 1e-14, LinearAlgebra::Dense);
        opts.wall_time_limit_s = Some(bad);
        match integrate(&kin, T, &[1.0, 0.0], &[0.0, 1.0], &opts) {
            Err(IntegrationError::InvalidArgument(ReactorError::BadWallTimeLimit(v))) => {
                assert!(v.is_nan() && bad.is_nan() || v == bad)
            }
            other => panic!("limit {bad}: expected a refusal, got {other:?}"),
        }
    }
}

#[test]
fn sensitivity_runs_honour_a_stop_request() {
    let kin = decay();
    let monitor = RunMonitor::new();
    monitor.interrupt();
    let mut opts = options(2, 1e-8, 1e-14, LinearAlgebra::Sparse);
    opts.monitor = Some(monitor.clone());
    let err = forward_sensitivities(
        &kin,
        &ReactorModel::default(),
        T,
        &[1.0, 0.0],
        &times(10, 10.0),
        &opts,
        &[0],
        &[],
    )
    .expect_err("stopped");
    match err {
        SensitivityError::Failed { time_s, reason } => {
            assert!(reason.contains("interrupted"), "{reason}");
            assert!(time_s > 0.0 && time_s < 10.0);
            assert_eq!(monitor.time_s(), time_s);
        }
        other => panic!("expected a stopped run, got {other}"),
    }
}
