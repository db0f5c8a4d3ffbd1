//! A unit of a process model holds its integrator and system in one struct and steps on a
//! worker thread.

mod common;

use common::*;
use stoik_mechanism::{Arrhenius, GAS_CONSTANT};
use stoik_reactor::{BatchSystem, LinearAlgebra, OwnedIntegrator};

fn assert_send<T: Send>() {}

/// One unit of a flowsheet: its own integrator (which owns its system) and a label.
struct Unit {
    integrator: OwnedIntegrator,
    temperature_k: f64,
}

const TEMPERATURES: [f64; 4] = [300.0, 310.0, 320.0, 330.0];

/// A -> B with k(T) = 1e7 exp(-50 kJ/mol / (R T)) (Arrhenius; R = 8.314462618 J/(mol K),
/// CODATA).
fn k_of(t: f64) -> f64 {
    1e7 * (-50_000.0 / (GAS_CONSTANT * t)).exp()
}

fn units(la: LinearAlgebra) -> Vec<Unit> {
    let kin = kinetics(
        &["A", "B"],
        vec![arrhenius_step(
            &[(0, 1.0)],
            &[(1, 1.0)],
            Arrhenius {
                pre_exponential_si: 1e7,
                temperature_exponent: 0.0,
                activation_energy_j_per_mol: 50_000.0,
            },
        )],
    );
    TEMPERATURES
        .iter()
        .map(|&t| {
            let system = BatchSystem::new(&kin, t, &options(2, 1e-9, 1e-15, la)).unwrap();
            Unit {
                integrator: OwnedIntegrator::new(system, &[1.0, 0.0]).unwrap(),
                temperature_k: t,
            }
        })
        .collect()
}

/// Ten advances of 1 s; the concentrations after each.
fn step_unit(unit: &mut Unit) -> Vec<[f64; 2]> {
    let mut out = Vec::new();
    for i in 1..=10 {
        let mut c = [0.0; 2];
        unit.integrator.advance_to(i as f64, &mut c).unwrap();
        out.push(c);
    }
    out
}

#[test]
fn units_step_on_worker_threads_as_on_one() {
    assert_send::<OwnedIntegrator>();
    assert_send::<BatchSystem>();
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        // On the calling thread.
        let serial: Vec<Vec<[f64; 2]>> = units(la).iter_mut().map(step_unit).collect();
        // Each unit moved to its own worker thread, then moved back.
        let mut moved = units(la);
        let threaded: Vec<Vec<[f64; 2]>> = std::thread::scope(|scope| {
            let handles: Vec<_> = moved
                .drain(..)
                .map(|mut unit| {
                    scope.spawn(move || {
                        let profile = step_unit(&mut unit);
                        (unit, profile)
                    })
                })
                .collect();
            handles
                .into_iter()
                .map(|h| {
                    let (unit, profile) = h.join().unwrap();
                    moved.push(unit);
                    profile
                })
                .collect()
        });
        for (u, unit) in moved.iter().enumerate() {
            assert_eq!(unit.integrator.time(), 10.0);
            assert_eq!(unit.integrator.system().temperature(), unit.temperature_k);
            // Bit-identical to the serial run, and A(t) = exp(-k t) (first-order integrated
            // law, Atkins' Physical Chemistry).
            assert_eq!(threaded[u], serial[u], "{la:?} unit {u}");
            let k = k_of(unit.temperature_k);
            for (i, c) in threaded[u].iter().enumerate() {
                let t = (i + 1) as f64;
                assert_close(
                    &format!("{la:?} unit {u} A({t})"),
                    c[0],
                    (-k * t).exp(),
                    1e-7,
                    1e-15,
                );
                assert_close(
                    &format!("{la:?} unit {u} A+B"),
                    c[0] + c[1],
                    1.0,
                    1e-12,
                    1e-15,
                );
            }
        }
    }
}

#[test]
fn an_owned_session_gives_its_system_back() {
    let mut unit = units(LinearAlgebra::Dense).remove(2);
    let mut c = [0.0; 2];
    unit.integrator.advance_to(3.0, &mut c).unwrap();
    // Every BatchIntegrator call goes through `with`.
    let changed = unit.integrator.with(|it| it.set_temperature(300.0));
    assert!(changed.is_ok());
    unit.integrator.advance_to(5.0, &mut c).unwrap();
    // A(5) = exp(-k(320) 3) exp(-k(300) 2).
    let expected = (-k_of(320.0) * 3.0).exp() * (-k_of(300.0) * 2.0).exp();
    assert_close("A(5 s)", c[0], expected, 1e-7, 1e-15);
    let mut system = unit.integrator.into_system();
    assert_eq!(system.temperature(), 300.0);
    // The system opens new sessions as before.
    let a = {
        let mut again = system.integrator(&[2.0, 0.0]).unwrap();
        again.advance_to(1.0).unwrap()[0]
    };
    assert_close(
        "A(1 s), second session",
        a,
        2.0 * (-k_of(300.0)).exp(),
        1e-7,
        1e-15,
    );
    // A wrong-length initial state is an error, not a panic.
    assert!(OwnedIntegrator::new(system, &[1.0]).is_err());
}
