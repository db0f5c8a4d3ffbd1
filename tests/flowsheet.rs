//! The flowsheet of `examples/flowsheet.rs` (stirred tank -> plug-flow tube, a fraction of
//! the tube's outlet recycled to the tank, the recycle converged as a tear stream) run for one
//! isothermal first-order step A -> B, whose converged outlet has a closed form.

#[path = "../examples/flowsheet.rs"]
#[allow(dead_code)]
mod flowsheet;

use flowsheet::{mole_balance_closure, solve, Flowsheet, Stream, Thermal};
use stoik::kinetics::Kinetics;
use stoik::mechanism::parse_mechanism;
use stoik::reactor::{IntegrationOptions, LiquidPhase};

/// k = 2e-3 1/s (no activation energy: the same at any temperature).
const K: f64 = 2.0e-3;

const MECHANISM: &str = r#"
stoik_mechanism = 1
[units]
amount = "mol"
length = "m"
time = "s"
[[species]]
name = "A"
[[species]]
name = "B"
[[step]]
equation = "A -> B"
forward = { prefactor = 2.0e-3 }
"#;

/// The converged outlet concentration of A (mol/m3) for a fresh feed c0 at q0 into a tank of
/// volume `vt` and a tube of volume `vp`, with the fraction `r` of the tube's outlet
/// recycled.
///
/// Derivation (the first-order design equations of the stirred tank, c_out = c_in / (1 + k
/// tau), and of the plug flow, c_out = c_in exp(-k tau); O. Levenspiel, *Chemical Reaction
/// Engineering*, chs. 5 and 6; H. S. Fogler, *Elements of Chemical Reaction Engineering*,
/// the recycle reactor; from memory). At constant density the flows add: the tank and the
/// tube carry q = q0 / (1 - r) (the recycle is r q, the product (1 - r) q = q0), so
/// tau_t = vt / q and tau_p = vp / q. The tank's inlet mixes the fresh feed and the recycle:
/// c_in = (q0 c0 + r q c_out) / q = (1 - r) c0 + r c_out. Through the tank and the tube,
/// c_out = c_in a with a = exp(-k tau_p) / (1 + k tau_t). Substituting,
/// c_out = [(1 - r) c0 + r c_out] a, a linear equation with the solution
/// c_out = (1 - r) c0 a / (1 - r a).
fn closed_form(c0: f64, q0: f64, vt: f64, vp: f64, r: f64) -> f64 {
    let q = q0 / (1.0 - r);
    let a = (-K * vp / q).exp() / (1.0 + K * vt / q);
    (1.0 - r) * c0 * a / (1.0 - r * a)
}

#[test]
fn recycled_tank_and_tube_match_the_linear_recycle_balance() {
    let file = parse_mechanism(MECHANISM, "<a-to-b>").unwrap_or_else(|e| panic!("{e}"));
    let kinetics = Kinetics::compile(&file.mechanism).unwrap_or_else(|e| panic!("{e}"));
    let mut options = IntegrationOptions::new(2);
    options.relative_tolerance = 1e-11;
    options.absolute_tolerances_mol_per_m3 = vec![1e-10; 2];
    let (c0, q0, vt, vp) = (1000.0, 1.0e-3, 2.0, 1.0);
    for r in [0.0, 0.25, 0.5, 0.8] {
        let sheet = Flowsheet {
            feed: Stream {
                flow_m3_per_s: q0,
                concentrations: vec![c0, 0.0],
                temperature_k: 330.0,
            },
            tank_volume_m3: vt,
            tank_thermal: Thermal::Isothermal(330.0),
            tube_volume_m3: vp,
            tube_thermal: Thermal::Isothermal(330.0),
            recycle_fraction: r,
            liquid: LiquidPhase::per_volume(2.0e6, vec![0.0]).unwrap_or_else(|e| panic!("{e}")),
            options: options.clone(),
        };
        let s = solve(&kinetics, &sheet, 1e-13, 200).unwrap_or_else(|e| panic!("R = {r}: {e}"));
        let expected = closed_form(c0, q0, vt, vp, r);
        let a_out = s.product.concentrations[0];
        let relative = (a_out - expected).abs() / expected;
        // Overall mole balance: A + B is conserved by A -> B, so the product carries the
        // fresh feed's moles (q0 c0) out.
        let fin = q0 * c0;
        let fout: f64 = s.product.molar_flows().iter().sum();
        let closure = (fout - fin).abs() / fin;
        let with_extents = mole_balance_closure(&kinetics, &sheet, &s);
        eprintln!(
            "R = {r}: c_A,out = {a_out} mol/m3 (closed form {expected}), relative error {relative:.1e}, {} iterations, overall mole balance {closure:.1e}, species balance with the extents {with_extents:.1e}",
            s.iterations
        );
        assert!(relative <= 1e-8, "R = {r}: {a_out} against {expected}");
        assert!(closure <= 1e-10, "R = {r}: mole balance off by {closure:e}");
        // The extents are quadratures on the solver's steps (measured: about 2e-12).
        assert!(
            with_extents <= 1e-10,
            "R = {r}: species balance off by {with_extents:e}"
        );
        assert!(
            s.product.flow_m3_per_s == q0 || (s.product.flow_m3_per_s - q0).abs() <= 1e-15 * q0
        );
    }
}

#[test]
fn wegstein_converges_a_linear_fixed_point_in_two_steps() {
    // For a linear map g(x) = s x + b, Wegstein's secant slope is exact and the second
    // update lands on the fixed point b / (1 - s) (when q = s / (s - 1) is inside its
    // bounds [-5, 0], i.e. 0 <= s <= 5/6): the method's defining property (Wegstein 1958).
    let (s, b) = (0.6, 2.0);
    let g = |x: f64| s * x + b;
    let mut w = flowsheet::Wegstein::new();
    let x1 = w.next(&[0.0], &[g(0.0)])[0];
    let x2 = w.next(&[x1], &[g(x1)])[0];
    let fixed = b / (1.0 - s);
    assert!((x2 - fixed).abs() <= 1e-14 * fixed, "{x2} against {fixed}");
}
