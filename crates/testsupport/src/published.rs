//! Published reference solutions of the stiff chemical test problems bundled in
//! `mechanisms/`, quoted once for every test that checks them, with every digit their source
//! publishes. Concentrations in the problems' own units (mol/m3 in stoik), times in s.
//!
//! Sources: F. Mazzia and C. Magherini, *Test Set for Initial Value Problem Solvers*, release
//! 2.4, University of Bari, 2008 ("Bari"); E. Hairer and G. Wanner, *Solving Ordinary
//! Differential Equations II*, 2nd ed., Springer 1996, section IV.10.

// Reference values are quoted with every digit their source publishes.
#![allow(clippy::excessive_precision)]

/// Robertson (ROBER) from y = (1, 0, 0) at t = 40 s: recomputed to an uncertainty of about
/// 5e-14; agrees with Hairer & Wanner's 10-digit values.
pub const ROBERTSON_AT_40: [f64; 3] = [0.7158270687194, 9.185534764558e-06, 0.2841637457458];

/// Robertson (ROBER) from y = (1, 0, 0) at t = 1e11 s (Bari, good to about 1e-14 absolute).
pub const ROBERTSON_AT_1E11: [f64; 3] = [
    0.2083340149701255e-07,
    0.8333360770334713e-13,
    0.9999999791665050,
];

/// The end time of HIRES in s (Bari).
pub const HIRES_END_TIME: f64 = 321.8122;

/// HIRES initial state y1..y8 (Bari).
pub const HIRES_INITIAL: [f64; 8] = [1.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0057];

/// HIRES y1..y8 at [`HIRES_END_TIME`] (Bari). The steps conserve y7 + y8 = 0.0057.
pub const HIRES_AT_END: [f64; 8] = [
    0.7371312573325668e-3,
    0.1442485726316185e-3,
    0.5888729740967575e-4,
    0.1175651343283149e-2,
    0.2386356198831331e-2,
    0.6238968252742796e-2,
    0.2849998395185769e-2,
    0.2850001604814231e-2,
];

/// The Oregonator (OREGO) from y = (1, 2, 3): (time in s, y1..y3) at t = 30, 120 and 300
/// (Hairer & Wanner's data file) and t = 360 (Bari).
pub const OREGONATOR: [(f64, [f64; 3]); 4] = [
    (
        30.0,
        [
            0.1000661467180497e+01,
            0.1512778937348249e+04,
            0.1035854312767229e+05,
        ],
    ),
    (
        120.0,
        [
            0.1004118022612645e+01,
            0.2438326079910346e+03,
            0.1008822224048647e+01,
        ],
    ),
    (
        300.0,
        [
            0.1779724751937019e+01,
            0.2281852385542403e+01,
            0.1613754023671725e+01,
        ],
    ),
    (
        360.0,
        [
            0.1000814870318523e+01,
            0.1228178521549917e+04,
            0.1320554942846706e+03,
        ],
    ),
];
