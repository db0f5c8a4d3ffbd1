//! The bundled mechanism files of published stiff test problems, loaded through the parser and
//! integrated through the public API, against the published reference solutions:
//! - Robertson: Hairer & Wanner, Solving ODEs II (2nd ed., 1996), section IV.10, and Mazzia &
//!   Magherini, Test Set for IVP Solvers, release 2.4 (2008) ("Bari");
//! - HIRES: Bari;
//! - Oregonator: Hairer & Wanner's data file and Bari.

// Reference values are quoted with every digit their source publishes.
#![allow(clippy::excessive_precision)]

use stoik::kinetics::Kinetics;
use stoik::reactor::{integrate, IntegrationOptions, LinearAlgebra, Profiles};
use stoik::scenario::RunPlan;
use stoik_testsupport::published;

/// Integrates the bundled scenario `name` to `times` with tolerances `rtol`/`atol`.
fn run(name: &str, times: &[f64], rtol: f64, atol: f64, la: LinearAlgebra) -> Profiles {
    let root = stoik_testsupport::mechanisms_dir();
    let plan = RunPlan::load(&root.join(format!("{name}.scenario.toml")))
        .unwrap_or_else(|e| panic!("{e}"));
    let kinetics = Kinetics::compile(plan.mechanism()).unwrap_or_else(|e| panic!("{e}"));
    let mut options = IntegrationOptions::new(kinetics.n_species());
    options.relative_tolerance = rtol;
    options.absolute_tolerances_mol_per_m3 = vec![atol; kinetics.n_species()];
    options.linear_algebra = la;
    let mut output = vec![0.0];
    output.extend_from_slice(times);
    integrate(
        &kinetics,
        plan.temperature_k(),
        plan.initial_mol_per_m3(),
        &output,
        &options,
    )
    .unwrap_or_else(|e| panic!("{e}"))
}

fn assert_close(what: &str, got: f64, expected: f64, relative: f64) {
    let err = ((got - expected) / expected).abs();
    assert!(
        err <= relative,
        "{what}: got {got:.15e}, reference {expected:.15e}, relative error {err:.2e} > {relative:.0e}"
    );
}

#[test]
fn robertson_at_t40_matches_reference() {
    // Reference (recomputed, uncertainty ~5e-14; agrees with Hairer & Wanner's 10-digit values).
    let expected = published::ROBERTSON_AT_40;
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let p = run("robertson", &[40.0], 1e-10, 1e-16, la);
        let y = &p.concentrations_mol_per_m3[1];
        // rtol 1e-10 gives a global error of order 1e-8 on this problem.
        for i in 0..3 {
            assert_close(
                &format!("Robertson y{} at t=40 ({la:?})", i + 1),
                y[i],
                expected[i],
                1e-7,
            );
        }
        // Invariant y1 + y2 + y3 = 1 (the steps conserve the total).
        assert!((y.iter().sum::<f64>() - 1.0).abs() < 1e-12);
    }
}

#[test]
fn robertson_at_t1e11_matches_bari_reference() {
    // Bari values, good to about 1e-14 absolute.
    let expected = published::ROBERTSON_AT_1E11;
    let p = run("robertson", &[1e11], 1e-10, 1e-20, LinearAlgebra::Dense);
    let y = &p.concentrations_mol_per_m3[1];
    assert_close("Robertson y1 at t=1e11", y[0], expected[0], 1e-5);
    assert_close("Robertson y2 at t=1e11", y[1], expected[1], 1e-5);
    assert_close("Robertson y3 at t=1e11", y[2], expected[2], 1e-12);
}

#[test]
fn hires_matches_bari_reference() {
    let expected = published::HIRES_AT_END;
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let p = run("hires", &[published::HIRES_END_TIME], 1e-10, 1e-14, la);
        let y = &p.concentrations_mol_per_m3[1];
        for i in 0..8 {
            assert_close(
                &format!("HIRES y{} ({la:?})", i + 1),
                y[i],
                expected[i],
                1e-6,
            );
        }
        // Invariant y7 + y8 = 0.0057.
        assert!((y[6] + y[7] - 0.0057).abs() < 1e-12);
    }
}

#[test]
fn oregonator_matches_published_reference() {
    let times = published::OREGONATOR.map(|(t, _)| t);
    let p = run("oregonator", &times, 1e-11, 1e-12, LinearAlgebra::Dense);
    for (row, (_, exp)) in published::OREGONATOR.iter().enumerate() {
        let y = &p.concentrations_mol_per_m3[row + 1];
        for i in 0..3 {
            // The oscillation amplifies phase errors: 1e-5 relative at rtol 1e-11.
            assert_close(
                &format!("Oregonator y{} at t={}", i + 1, times[row]),
                y[i],
                exp[i],
                1e-5,
            );
        }
    }
}
