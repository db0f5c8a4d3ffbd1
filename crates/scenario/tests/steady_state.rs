//! The steady state of the stirred-tank demo (adiabatic, constant pressure) against the end
//! of a long time integration of the same scenario.

use std::path::Path;
use stoik_kinetics::Kinetics;
use stoik_reactor::{steady_state, SteadyOptions};
use stoik_scenario::{run_scenario, RunPlan};

#[test]
fn the_demo_tank_steady_state_is_where_the_integration_ends() {
    // A steady state is a fixed point of the tank's equations: an integration over many
    // residence times from any start in its basin ends there (definition of an attracting
    // steady state; the demo runs 20 residence times, leaving a transient below e^-20). The
    // burning state must also be stable.
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../../mechanisms/hydrogen-stirred-tank.scenario.toml");
    let plan = RunPlan::load(&path).unwrap_or_else(|e| panic!("{e}"));
    let kinetics = Kinetics::compile(plan.mechanism()).unwrap_or_else(|e| panic!("{e}"));
    let s = steady_state(
        &kinetics,
        plan.model(),
        plan.temperature_k(),
        plan.initial_mol_per_m3(),
        &SteadyOptions {
            // The demo also has an unburnt steady state near the feed temperature, which
            // Newton from the argon-filled start finds; the transient leads to the burning one.
            transient_first: true,
            ..SteadyOptions::from_integration(plan.options())
        },
    )
    .unwrap_or_else(|e| panic!("{e}"));
    eprintln!(
        "demo: T = {} K by {:?}, {} Newton iterations, {} pseudo-transient steps, scaled residual {:e}, largest eigenvalue real part {:e} 1/s",
        s.temperature_k,
        s.path,
        s.newton_iterations,
        s.pseudo_transient_steps,
        s.scaled_residual,
        s.stability.largest_real_part_per_s
    );
    let outcome = run_scenario(&path).unwrap_or_else(|e| panic!("{e}"));
    let p = outcome.profiles();
    let last = p.times_s.len() - 1;
    let (c_end, t_end) = (&p.concentrations_mol_per_m3[last], p.temperatures_k[last]);
    let total: f64 = c_end.iter().sum();
    assert!(
        (s.temperature_k - t_end).abs() <= 1e-6 * t_end,
        "T {} K against {t_end} K",
        s.temperature_k
    );
    let mut worst: f64 = 0.0;
    for (i, (&a, &b)) in s.concentrations_mol_per_m3.iter().zip(c_end).enumerate() {
        // Species below 1e-9 of the total are compared absolutely at 1e-15 of the total.
        let err = (a - b).abs() / b.abs().max(1e-9 * total);
        worst = worst.max(err);
        assert!(err <= 1e-6, "species {i}: {a} against {b} mol/m3");
    }
    eprintln!("worst relative difference from the integration: {worst:e}");
    assert!(s.stability.stable);
}
