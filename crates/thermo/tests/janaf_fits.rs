//! Fits of the NIST-JANAF tables (M. W. Chase Jr., NIST-JANAF Thermochemical Tables,
//! 4th ed., J. Phys. Chem. Ref. Data Monograph 9, 1998; copies in tests/data/janaf)
//! checked against the tables' own values and their equilibrium constants.

use stoik_thermo::{fit_nasa7, read_janaf_tsv, FitError, JanafTable, Nasa7, GAS_CONSTANT};

fn table(stem: &str) -> JanafTable {
    let path = format!("{}/tests/data/janaf/{stem}.tsv", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).expect("test data file present");
    read_janaf_tsv(&text).expect("JANAF table parses")
}

/// Fits 200-1000-6000 K, the ranges used for stoik's data file.
fn fitted(stem: &str) -> Nasa7 {
    let t = table(stem);
    let fit = fit_nasa7(
        &t.points(200.0, 6000.0),
        1000.0,
        t.h298_formation_j_per_mol,
        None,
    )
    .expect("fit succeeds");
    fit.polynomial
}

/// (species, T in K, Cp in J/(mol K), H - H(298.15) in kJ/mol, S in J/(mol K)),
/// typed in from NIST-JANAF 4th ed. (Chase 1998), rows 298.15, 1000 and 2000 K.
const JANAF_CHECKS: [(&str, f64, f64, f64, f64); 24] = [
    ("H2", 298.15, 28.836, 0., 130.680),
    ("H2", 1000., 30.205, 20.680, 166.216),
    ("H2", 2000., 34.280, 52.951, 188.418),
    ("O2", 298.15, 29.376, 0., 205.147),
    ("O2", 1000., 34.870, 22.703, 243.578),
    ("O2", 2000., 37.741, 59.175, 268.748),
    ("H2O", 298.15, 33.590, 0., 188.834),
    ("H2O", 1000., 41.268, 26.000, 232.738),
    ("H2O", 2000., 51.180, 72.790, 264.769),
    ("OH", 298.15, 29.986, 0., 183.708),
    ("OH", 1000., 30.676, 20.935, 219.736),
    ("OH", 2000., 34.670, 53.762, 242.327),
    ("H", 298.15, 20.786, 0., 114.716),
    ("H", 1000., 20.786, 14.589, 139.871),
    ("H", 2000., 20.786, 35.375, 154.278),
    ("O", 298.15, 21.911, 0., 161.058),
    ("O", 1000., 20.915, 14.860, 186.790),
    ("O", 2000., 20.826, 35.713, 201.247),
    ("N2", 298.15, 29.124, 0., 191.609),
    ("N2", 1000., 32.697, 21.463, 228.170),
    ("N2", 2000., 35.971, 56.137, 252.074),
    ("Ar", 298.15, 20.786, 0., 154.845),
    ("Ar", 1000., 20.786, 14.589, 179.999),
    ("Ar", 2000., 20.786, 35.375, 194.407),
];

#[test]
fn fits_reproduce_janaf_cp_h_s_within_half_percent() {
    for (stem, t, cp, dh_kj, s) in JANAF_CHECKS {
        let tab = table(stem);
        let p = fitted(stem);
        // Source: NIST-JANAF 4th ed. (Chase 1998), values in JANAF_CHECKS.
        let cp_fit = p.cp_j_per_mol_k(t);
        assert!(
            (cp_fit - cp).abs() <= 0.005 * cp,
            "{stem} cp({t} K) = {cp_fit}, JANAF {cp}"
        );
        let s_fit = p.entropy_j_per_mol_k(t);
        assert!(
            (s_fit - s).abs() <= 0.005 * s,
            "{stem} S({t} K) = {s_fit}, JANAF {s}"
        );
        let dh = dh_kj * 1e3;
        let dh_fit = p.enthalpy_j_per_mol(t) - tab.h298_formation_j_per_mol;
        let bound = if dh == 0.0 { 50.0 } else { 0.005 * dh.abs() };
        assert!(
            (dh_fit - dh).abs() <= bound,
            "{stem} H - H298 ({t} K) = {dh_fit} J/mol, JANAF {dh}"
        );
    }
}

#[test]
fn fitted_enthalpy_at_298_is_janaf_formation_enthalpy() {
    // Source: NIST-JANAF 4th ed. (Chase 1998), delta-f H at 298.15 K in kJ/mol.
    for (stem, dfh_kj) in [
        ("H2O", -241.826),
        ("OH", 38.987),
        ("H", 217.999),
        ("O", 249.173),
        ("HO2", 2.092),
        ("H2", 0.0),
    ] {
        let h = fitted(stem).enthalpy_j_per_mol(298.15);
        assert!(
            (h - dfh_kj * 1e3).abs() <= 1e-6 * (1.0 + dfh_kj.abs() * 1e3),
            "{stem}: H(298.15) = {h} J/mol, JANAF {dfh_kj} kJ/mol"
        );
    }
}

#[test]
fn fits_are_continuous_at_t_mid() {
    // Continuity of cp, H and S at the common temperature is a constraint of the
    // two-range form (McBride, Gordon & Reno 1993, NASA TM-4513).
    for stem in ["H2", "O2", "H2O", "OH", "H", "O", "HO2", "N2", "Ar"] {
        let p = fitted(stem);
        let t = p.t_mid_k;
        let (dcp, dh, ds) = p.continuity_jumps();
        assert!(
            dcp.abs() <= 1e-6 * p.cp_over_r(t).abs(),
            "{stem} cp jump {dcp}"
        );
        assert!(
            dh.abs() <= 1e-6 * p.h_over_rt(t).abs().max(p.cp_over_r(t)),
            "{stem} H jump {dh}"
        );
        assert!(ds.abs() <= 1e-6 * p.s_over_r(t).abs(), "{stem} S jump {ds}");
        // d cp/dT continuity: compare with the slope scale cp/T.
        let dslope = p.cp_slope_jump_per_k();
        assert!(
            dslope.abs() <= 1e-6 * p.cp_over_r(t) / t,
            "{stem} slope jump {dslope}"
        );
        // The evaluation itself switches sets at t_mid without a visible step.
        let below = p.enthalpy_j_per_mol(t - 1e-9);
        let above = p.enthalpy_j_per_mol(t);
        assert!(
            (below - above).abs() < 1e-3,
            "{stem}: H step {}",
            below - above
        );
    }
}

/// log10 Kp of H2 + 1/2 O2 <=> H2O from the fitted polynomials, pressures in bar.
fn log10_kp_water(t: f64, h2: &Nasa7, o2: &Nasa7, h2o: &Nasa7) -> f64 {
    let dg = h2o.gibbs_j_per_mol(t) - h2.gibbs_j_per_mol(t) - 0.5 * o2.gibbs_j_per_mol(t);
    -dg / (GAS_CONSTANT * t * std::f64::consts::LN_10)
}

#[test]
fn water_formation_equilibrium_matches_janaf_log_kf() {
    let (h2, o2, h2o) = (fitted("H2"), fitted("O2"), fitted("H2O"));
    // Source: NIST-JANAF 4th ed. (Chase 1998), log10 Kf of H2O(g):
    // 10.060 at 1000 K, 3.540 at 2000 K, 40.047 at 298.15 K.
    for (t, expected) in [(1000.0, 10.060), (2000.0, 3.540), (298.15, 40.047)] {
        let got = log10_kp_water(t, &h2, &o2, &h2o);
        assert!(
            (got - expected).abs() <= 0.005,
            "log10 Kp({t} K) = {got}, JANAF {expected}"
        );
    }
}

#[test]
fn reader_converts_units_and_infinite_cells() {
    let t = table("H2O");
    // Source: NIST-JANAF 4th ed. (Chase 1998), H2O(g): delta-f H(298.15) = -241.826 kJ/mol,
    // S(298.15) = 188.834 J/(mol K); at 0 K -[G-H(Tr)]/T and log Kf are printed infinite;
    // at 1000 K H - H(298.15) = 26.000 kJ/mol and log Kf = 10.060.
    assert_eq!(t.h298_formation_j_per_mol, -241_826.0);
    assert_eq!(t.s298_j_per_mol_k, 188.834);
    assert_eq!(t.formula, "H2O1(g)");
    let zero = t.row_at(0.0).expect("0 K row");
    assert!(zero.minus_g_minus_h298_over_t_j_per_mol_k.is_infinite());
    assert!(zero.log10_kf.is_infinite() && zero.log10_kf > 0.0);
    let r = t.row_at(1000.0).expect("1000 K row");
    assert_eq!(r.h_minus_h298_j_per_mol, 26_000.0);
    assert_eq!(r.log10_kf, 10.060);
    // 0 K and 100 K are left out of the 200-6000 K points.
    let pts = t.points(200.0, 6000.0);
    assert_eq!(pts.first().map(|p| p.t_k), Some(200.0));
    assert_eq!(pts.last().map(|p| p.t_k), Some(6000.0));
}

#[test]
fn reader_accepts_the_word_infinite_and_rejects_bad_rows() {
    // Layout of NIST-JANAF 4th ed. tables (Chase 1998); "INFINITE" is how the printed
    // tables mark the 0 K Gibbs function.
    let good =
        "Test (X)\tX1(g)\nT(K)\tCp\tS\t-[G-H(Tr)]/T\tH-H(Tr)\tdelta-f H\tdelta-f G\tlog Kf\n\
                0\t0.\t0.\tINFINITE\t-8.0\t1.5\t1.5\tINFINITE\n\
                298.15\t29.0\t130.0\t130.0\t0.\t1.5\t2.5\t-0.438\n";
    let t = read_janaf_tsv(good).expect("parses");
    assert_eq!(t.rows.len(), 2);
    assert!(t.rows[0]
        .minus_g_minus_h298_over_t_j_per_mol_k
        .is_infinite());
    assert_eq!(t.h298_formation_j_per_mol, 1500.0);

    let short_row = good.replace("298.15\t29.0\t130.0", "298.15\t29.0");
    // Columns count characters: the seven cells of the short row take 35 characters, so the
    // missing eighth would start at column 36; the cp cell starts after "298.15\t", column 8.
    assert!(matches!(
        read_janaf_tsv(&short_row),
        Err(FitError::Parse {
            line: 4,
            column: 36,
            ..
        })
    ));
    let bad_number = good.replace("29.0", "2x9");
    assert!(matches!(
        read_janaf_tsv(&bad_number),
        Err(FitError::Parse {
            line: 4,
            column: 8,
            ..
        })
    ));
    let no_reference = good.replace("298.15", "300");
    assert!(matches!(
        read_janaf_tsv(&no_reference),
        Err(FitError::MissingReferenceRow {
            line: 2,
            column: 1,
            ..
        })
    ));
    // A formation enthalpy of 1e308 kJ/mol is 1e311 J/mol, beyond f64: reported at its cell
    // (the sixth: "298.15\t29.0\t130.0\t130.0\t0.\t" is 27 characters), not as a missing row.
    let huge = good.replace("0.\t1.5\t2.5\t-0.438", "0.\t1e308\t2.5\t-0.438");
    match read_janaf_tsv(&huge) {
        Err(FitError::MissingReferenceRow {
            line: 4,
            column: 28,
            message,
        }) => assert!(message.contains("formation enthalpy"), "{message}"),
        other => panic!("{other:?}"),
    }
    assert!(matches!(read_janaf_tsv(""), Err(FitError::Parse { .. })));
    let no_header = good.replace("T(K)", "Temp");
    assert!(matches!(
        read_janaf_tsv(&no_header),
        Err(FitError::Parse { line: 2, .. })
    ));
}
