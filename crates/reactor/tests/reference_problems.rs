//! Published stiff chemical test problems: Robertson (ROBER), HIRES and the Oregonator
//! (OREGO), from F. Mazzia and C. Magherini, *Test Set for Initial Value Problem Solvers*,
//! release 2.4, Bari 2008, and E. Hairer and G. Wanner, *Solving Ordinary Differential
//! Equations II*, 2nd ed., Springer 1996, section IV.10. Each runs with dense and with sparse
//! linear algebra.
//!
//! Tolerance choice: the integrations run at rtol 1e-10 with absolute tolerances far below
//! the smallest component of interest, so the error control is effectively relative for every
//! component; we then require agreement to 1e-7 relative for every component. Measured errors
//! (both linear-algebra paths) are at most 3e-10 (Robertson, t = 40), 7e-9 (Robertson's tiny
//! y1, y2 at t = 1e11, where errors accumulate over 4,000 steps), 2e-9 (HIRES) and 2e-8
//! (Oregonator, whose steep relaxation fronts turn small phase errors into amplitude errors;
//! checked to 1e-6 there).

// Published values are kept with all their digits; components are indexed in parallel.
#![allow(clippy::excessive_precision, clippy::needless_range_loop)]

mod common;

use common::*;
use stoik_reactor::{integrate, LinearAlgebra};
use stoik_testsupport::published;

/// Every linear algebra: dense, the fixed-pattern sparse LU, and (with the
/// `bench-internals` feature, as in `cargo test --workspace`) faer's sparse LU.
fn both() -> Vec<LinearAlgebra> {
    vec![
        LinearAlgebra::Dense,
        LinearAlgebra::Sparse,
        #[cfg(feature = "bench-internals")]
        LinearAlgebra::SparseFaer,
    ]
}

#[test]
fn robertson_at_40_and_1e11() {
    let kin = robertson();
    // Reference: t = 40 recomputed (agrees with Hairer & Wanner's 10-digit values);
    // t = 1e11 from the Bari test set.
    let y40 = published::ROBERTSON_AT_40;
    let y1e11 = published::ROBERTSON_AT_1E11;
    for la in both() {
        let p = integrate(
            &kin,
            T,
            &[1.0, 0.0, 0.0],
            &[0.0, 40.0, 1e11],
            &options(3, 1e-10, 1e-24, la),
        )
        .unwrap();
        assert_eq!(p.linear_algebra_used, la);
        let c = &p.concentrations_mol_per_m3;
        for i in 0..3 {
            assert_close(
                &format!("{la:?} y{}(40)", i + 1),
                c[1][i],
                y40[i],
                1e-7,
                0.0,
            );
        }
        for i in 0..3 {
            assert_close(
                &format!("{la:?} y{}(1e11)", i + 1),
                c[2][i],
                y1e11[i],
                1e-7,
                0.0,
            );
        }
        // invariant y1 + y2 + y3 = 1 (Bari): mass action conserves it exactly up to
        // integration error.
        let sum: f64 = c[2].iter().sum();
        assert_close("y1 + y2 + y3 at 1e11", sum, 1.0, 1e-9, 0.0);
        println!("Robertson {la:?}: {:?}", p.stats);
    }
}

#[test]
fn hires_at_321_8122() {
    let kin = hires();
    // Bari reference at t = 321.8122.
    let reference = published::HIRES_AT_END;
    let y0 = published::HIRES_INITIAL;
    for la in both() {
        let p = integrate(
            &kin,
            T,
            &y0,
            &[0.0, published::HIRES_END_TIME],
            &options(8, 1e-10, 1e-20, la),
        )
        .unwrap();
        let c = &p.concentrations_mol_per_m3[1];
        for i in 0..8 {
            assert_close(&format!("{la:?} y{}", i + 1), c[i], reference[i], 1e-7, 0.0);
        }
        // invariant y7 + y8 = 0.0057 (Bari)
        assert_close("y7 + y8", c[6] + c[7], 0.0057, 1e-10, 0.0);
        println!("HIRES {la:?}: {:?}", p.stats);
    }
}

#[test]
fn oregonator_at_30_120_300_360() {
    let kin = oregonator();
    // t = 30, 120, 300: Hairer & Wanner data file; t = 360: Bari.
    let reference = published::OREGONATOR;
    let mut times = vec![0.0];
    times.extend(reference.map(|(t, _)| t));
    for la in both() {
        let p = integrate(
            &kin,
            T,
            &[1.0, 2.0, 3.0],
            &times,
            &options(3, 1e-10, 1e-14, la),
        )
        .unwrap();
        for (row, (t, y)) in reference.iter().enumerate() {
            assert_eq!(p.times_s[row + 1], *t);
            for i in 0..3 {
                assert_close(
                    &format!("{la:?} y{}({t})", i + 1),
                    p.concentrations_mol_per_m3[row + 1][i],
                    y[i],
                    1e-6,
                    0.0,
                );
            }
        }
        println!("Oregonator {la:?}: {:?}", p.stats);
    }
}
