//! Polynomial evaluation against thermodynamic identities, exact recovery of known
//! polynomials by the fit, and typed errors for bad input.

use stoik_thermo::{fit_nasa7, FitError, Nasa7, ThermoPoint, GAS_CONSTANT, T_REFERENCE_K};

/// A water-like low-range set (magnitudes typical of 7-coefficient fits).
const LOW: [f64; 7] = [4.2, -2.2e-3, 7.1e-6, -6.2e-9, 2.1e-12, -3.03e4, -0.92];

/// Builds a high-range set that joins `low` at `tm` with continuous cp, d cp/dT, H and S,
/// choosing a3..a5 freely.
fn continuous_pair(low: [f64; 7], tm: f64) -> Nasa7 {
    let cp = |a: &[f64; 7], t: f64| a[0] + t * (a[1] + t * (a[2] + t * (a[3] + t * a[4])));
    let dcp = |a: &[f64; 7], t: f64| a[1] + t * (2.0 * a[2] + t * (3.0 * a[3] + t * 4.0 * a[4]));
    let mut high = [0.0, 0.0, -8.6e-7, 1.15e-10, -5.9e-15, 0.0, 0.0];
    high[1] = dcp(&low, tm)
        - (2.0 * high[2] * tm + 3.0 * high[3] * tm.powi(2) + 4.0 * high[4] * tm.powi(3));
    high[0] = cp(&low, tm) - cp(&[0.0, high[1], high[2], high[3], high[4], 0.0, 0.0], tm);
    let mut p = Nasa7::new(200.0, tm, 6000.0, low, high).expect("valid");
    let (_, dh, ds) = p.continuity_jumps();
    p.high[5] = dh * tm;
    p.high[6] = ds;
    p
}

fn table_from(p: &Nasa7, temps: &[f64]) -> Vec<ThermoPoint> {
    let h298 = p.enthalpy_j_per_mol(T_REFERENCE_K);
    temps
        .iter()
        .map(|&t| ThermoPoint {
            t_k: t,
            cp_j_per_mol_k: p.cp_j_per_mol_k(t),
            h_minus_h298_j_per_mol: p.enthalpy_j_per_mol(t) - h298,
            s_j_per_mol_k: p.entropy_j_per_mol_k(t),
        })
        .collect()
}

fn janaf_grid() -> Vec<f64> {
    let mut t = vec![200.0, 298.15];
    t.extend((3..=60).map(|k| 100.0 * k as f64));
    t
}

#[test]
fn constant_cp_gives_ideal_monatomic_gas_closed_forms() {
    // Textbook closed forms for constant cp = 5/2 R (monatomic ideal gas):
    // H(T) - H(T0) = 5/2 R (T - T0), S(T) - S(T0) = 5/2 R ln(T/T0), G = H - T S.
    let p = Nasa7::new(
        200.0,
        1000.0,
        6000.0,
        [2.5, 0.0, 0.0, 0.0, 0.0, 2.6e4, -0.45],
        [2.5, 0.0, 0.0, 0.0, 0.0, 2.6e4, -0.45],
    )
    .expect("valid");
    let r = GAS_CONSTANT;
    for t in [300.0, 999.0, 1000.0, 4321.0] {
        assert!((p.cp_j_per_mol_k(t) - 2.5 * r).abs() < 1e-12);
        let dh = p.enthalpy_j_per_mol(t) - p.enthalpy_j_per_mol(T_REFERENCE_K);
        assert!((dh - 2.5 * r * (t - T_REFERENCE_K)).abs() < 1e-9 * dh.abs());
        let ds = p.entropy_j_per_mol_k(t) - p.entropy_j_per_mol_k(T_REFERENCE_K);
        assert!((ds - 2.5 * r * (t / T_REFERENCE_K).ln()).abs() < 1e-12 * ds.abs().max(1.0));
        let g = p.enthalpy_j_per_mol(t) - t * p.entropy_j_per_mol_k(t);
        assert!((p.gibbs_j_per_mol(t) - g).abs() < 1e-9 * g.abs());
    }
}

#[test]
fn polynomials_obey_dh_dt_equals_cp_and_ds_dt_equals_cp_over_t() {
    // Thermodynamic identities at constant pressure (any textbook): dH/dT = cp,
    // dS/dT = cp/T. Checked by central differences.
    let p = continuous_pair(LOW, 1000.0);
    for t in [250.0, 700.0, 1500.0, 3500.0, 5500.0] {
        let dt = 1e-3 * t;
        let dh = (p.enthalpy_j_per_mol(t + dt) - p.enthalpy_j_per_mol(t - dt)) / (2.0 * dt);
        let ds = (p.entropy_j_per_mol_k(t + dt) - p.entropy_j_per_mol_k(t - dt)) / (2.0 * dt);
        let cp = p.cp_j_per_mol_k(t);
        assert!((dh - cp).abs() < 1e-5 * cp, "T {t}: dH/dT {dh} vs cp {cp}");
        assert!(
            (ds - cp / t).abs() < 1e-5 * cp / t,
            "T {t}: dS/dT {ds} vs cp/T {}",
            cp / t
        );
    }
}

#[test]
fn fit_recovers_a_known_continuous_polynomial_pair() {
    // Exact data from a polynomial pair that is itself in the model space (continuous
    // cp, d cp/dT, H, S at t_mid) must be reproduced to rounding: the least-squares
    // residual is zero.
    let truth = continuous_pair(LOW, 1000.0);
    let (dcp, dh, ds) = truth.continuity_jumps();
    assert!(dcp.abs() < 1e-12 && dh.abs() < 1e-12 && ds.abs() < 1e-12);
    let h298 = truth.enthalpy_j_per_mol(T_REFERENCE_K);
    let fit = fit_nasa7(&table_from(&truth, &janaf_grid()), 1000.0, h298, None).expect("fit");
    let p = fit.polynomial;
    assert_eq!((p.t_low_k, p.t_mid_k, p.t_high_k), (200.0, 1000.0, 6000.0));
    for k in 0..60 {
        let t = 200.0 + 97.3 * k as f64;
        let cp = truth.cp_j_per_mol_k(t);
        let s = truth.entropy_j_per_mol_k(t);
        let h = truth.enthalpy_j_per_mol(t);
        assert!(
            (p.cp_j_per_mol_k(t) - cp).abs() <= 1e-8 * cp.abs(),
            "cp at {t}"
        );
        assert!(
            (p.entropy_j_per_mol_k(t) - s).abs() <= 1e-8 * s.abs(),
            "S at {t}"
        );
        let h_scale = h.abs().max(GAS_CONSTANT * t);
        assert!(
            (p.enthalpy_j_per_mol(t) - h).abs() <= 1e-8 * h_scale,
            "H at {t}"
        );
    }
    assert!(fit.max_relative_error_cp < 1e-8);
    assert!(fit.max_relative_error_s < 1e-8);
    assert!(fit.max_abs_error_h_j_per_mol < 1e-8 * h298.abs());

    // Pinning S(298.15) to its true value changes nothing.
    let s298 = truth.entropy_j_per_mol_k(T_REFERENCE_K);
    let pinned = fit_nasa7(&table_from(&truth, &janaf_grid()), 1000.0, h298, Some(s298))
        .expect("fit with S pinned");
    assert!((pinned.polynomial.entropy_j_per_mol_k(T_REFERENCE_K) - s298).abs() < 1e-9 * s298);
    assert!(pinned.max_relative_error_cp < 1e-8);
}

#[test]
fn h298_and_s298_pins_hold_exactly_for_inconsistent_data() {
    // The constraints are exact even when the data disagree with them: shifting the
    // pinned formation enthalpy by 1 kJ/mol moves H(298.15) by exactly that amount.
    let truth = continuous_pair(LOW, 1000.0);
    let h298 = truth.enthalpy_j_per_mol(T_REFERENCE_K) + 1000.0;
    let s298 = truth.entropy_j_per_mol_k(T_REFERENCE_K) + 0.5;
    let fit = fit_nasa7(&table_from(&truth, &janaf_grid()), 1000.0, h298, Some(s298)).expect("fit");
    let p = fit.polynomial;
    assert!((p.enthalpy_j_per_mol(T_REFERENCE_K) - h298).abs() < 1e-6);
    assert!((p.entropy_j_per_mol_k(T_REFERENCE_K) - s298).abs() < 1e-9);
    // The S pin fights the data, so the fit is no longer exact.
    assert!(fit.max_relative_error_s > 1e-6);
}

#[test]
fn bad_input_gives_typed_errors() {
    let truth = continuous_pair(LOW, 1000.0);
    let h298 = truth.enthalpy_j_per_mol(T_REFERENCE_K);
    let good = table_from(&truth, &janaf_grid());

    let few = table_from(&truth, &[300.0, 500.0, 1500.0, 3000.0, 5000.0]);
    assert_eq!(
        fit_nasa7(&few, 1000.0, h298, None),
        Err(FitError::TooFewPoints {
            found: 5,
            needed: 8
        })
    );

    let low_only: Vec<ThermoPoint> = good.iter().copied().filter(|p| p.t_k < 1000.0).collect();
    assert!(matches!(
        fit_nasa7(&low_only, 1000.0, h298, None),
        Err(FitError::RangesNotCovered { above: 0, .. })
    ));

    let mut nan = good.clone();
    nan[7].cp_j_per_mol_k = f64::NAN;
    assert!(matches!(
        fit_nasa7(&nan, 1000.0, h298, None),
        Err(FitError::NonFiniteInput { .. })
    ));
    assert!(matches!(
        fit_nasa7(&good, 1000.0, f64::INFINITY, None),
        Err(FitError::NonFiniteInput { .. })
    ));

    let mut zero_t = good.clone();
    zero_t[0].t_k = 0.0;
    assert!(matches!(
        fit_nasa7(&zero_t, 1000.0, h298, None),
        Err(FitError::InvalidTemperature { .. })
    ));

    // Four copies of one temperature per range: 6 distinct equations for 14 - 5 = 9
    // free coefficients, so the reduced problem is rank deficient.
    let dup = table_from(
        &truth,
        &[500.0, 500.0, 500.0, 500.0, 2000.0, 2000.0, 2000.0, 2000.0],
    );
    assert!(matches!(
        fit_nasa7(&dup, 1000.0, h298, None),
        Err(FitError::Singular { .. })
    ));

    assert!(matches!(
        Nasa7::new(1000.0, 500.0, 6000.0, LOW, LOW),
        Err(FitError::InvalidTemperature { .. })
    ));
    let mut bad = LOW;
    bad[3] = f64::NAN;
    assert!(matches!(
        Nasa7::new(200.0, 1000.0, 6000.0, bad, LOW),
        Err(FitError::NonFiniteInput { .. })
    ));
}

#[test]
fn a_table_row_with_zero_entropy_gives_finite_fit_errors() {
    // A table whose 3000 K row says S = 0 (a corrupted or mistyped row) fits with a finite
    // "relative" S error: the error is taken relative to max(|S|, 1 J/(mol K)). Before, the
    // denominator was the smallest positive double and the error was infinite.
    let truth = continuous_pair(LOW, 1000.0);
    let h298 = truth.enthalpy_j_per_mol(T_REFERENCE_K);
    let mut table = table_from(&truth, &janaf_grid());
    let row = table
        .iter()
        .position(|p| p.t_k == 3000.0)
        .expect("3000 K row");
    table[row].s_j_per_mol_k = 0.0;
    let fit = fit_nasa7(&table, 1000.0, h298, None).expect("fit");
    assert!(fit.max_relative_error_s.is_finite());
    assert!(fit.rms_relative_error_s.is_finite());
    // By the documented definition, that row's error is |S_fit(3000 K) - 0| / (1 J/(mol K)),
    // and the largest error is at least that (the fit itself is pulled toward the bad row,
    // so its value is not known in advance).
    let row_error = fit.polynomial.entropy_j_per_mol_k(3000.0).abs() / 1.0;
    assert!(fit.max_relative_error_s >= row_error, "{fit:?}");
    assert!(row_error > 0.0);
}
