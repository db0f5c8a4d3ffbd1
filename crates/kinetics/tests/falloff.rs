//! Pressure-dependent steps against sources outside the project: the Troe and SRI
//! broadening values computed from the published formulas (Gilbert, Luther & Troe
//! 1983; Stewart, Larson & Golden 1989; recomputed to 10 digits), the limits of every falloff form, an atmospheric termolecular rate
//! constant worked by hand from the JPL form, pressure-table interpolation, and the analytic
//! Jacobian and temperature slopes against central finite differences.

use stoik_kinetics::Kinetics;
use stoik_mechanism::{parse_mechanism, Mechanism, AVOGADRO, BOLTZMANN, GAS_CONSTANT};

fn load(text: &str) -> Mechanism {
    parse_mechanism(text, "test.toml")
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism
}

/// A -> B with bath gas N2 only (`[M] = c_N2`), units mol, m, s: kinf = 1 /s and
/// k0 = `k0` m3/(mol s), so that Pr = k0 c_N2.
fn one_step(extra: &str, k0: f64, form: &str) -> Mechanism {
    load(&format!(
        "stoik_mechanism = 1\n[units]\nlength = \"m\"\n\
         [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n[[species]]\nname = \"N2\"\n\
         [[step]]\nequation = \"A -> B\"\nthird_body = {{ species = \"N2\" }}\n\
         forward = {{ prefactor = 1 }}\n\
         falloff = {{ low_pressure = {{ prefactor = {k0:e} }}, broadening = \"{form}\"{extra} }}\n"
    ))
}

/// The effective forward rate constant (1/s) of the only step at T and c_N2 = `m`.
fn k_eff(mechanism: &Mechanism, t: f64, m: f64) -> f64 {
    let kinetics = Kinetics::compile(mechanism).unwrap();
    let k = kinetics.rate_constants(t);
    let mut out = [0.0];
    kinetics.effective_forward_rate_constants(&k, &[1.0, 0.0, m], &mut out);
    out[0]
}

/// Broadening F = k / (kinf Pr/(1+Pr)) with kinf = 1 and c_N2 = 1 (so Pr = k0).
fn broadening(extra: &str, form: &str, pr: f64, t: f64) -> f64 {
    let k = k_eff(&one_step(extra, pr, form), t, 1.0);
    k * (1.0 + pr) / pr
}

#[test]
fn troe_broadening_matches_the_reference_table() {
    // F(Pr, Fcent) recomputed to 10 digits from the published Troe formula
    // (Gilbert, Luther & Troe 1983), 10 digits. Fcent = a exactly when T3 -> 0 and T1 -> inf
    // (exp(-T/T3) = 0, exp(-T/T1) = 1).
    let table = [
        (1e-3, 0.9154326166, 0.7250108253),
        (1e-2, 0.8740238776, 0.6119990033),
        (1e-1, 0.7817776425, 0.4364466335),
        (1.0, 0.6163353528, 0.3004411055),
        (10.0, 0.7340620907, 0.4599769441),
        (100.0, 0.9175649589, 0.7356489982),
        (1000.0, 0.9735431648, 0.8831246076),
    ];
    let mut worst = 0.0f64;
    for (pr, f06, f03) in table {
        for (fcent, expected) in [(0.6, f06), (0.3, f03)] {
            let troe = format!(", troe = {{ a = {fcent}, t3 = 1e-30, t1 = 1e30 }}");
            let f = broadening(&troe, "troe", pr, 500.0);
            let err = (f - expected).abs() / expected;
            worst = worst.max(err);
            assert!(err < 2e-9, "Pr {pr}, Fcent {fcent}: F {f} vs {expected}");
        }
    }
    eprintln!("Troe table: largest relative deviation {worst:.2e}");
}

#[test]
fn troe_centre_with_four_parameters_matches_the_reference() {
    // Recomputed from the published four-parameter Fcent: Fcent(T = 1000 K; a = 0.5, T3 = 100 K,
    // T1 = 1000 K, T2 = 1000 K) = 0.5518418617. At log10 Pr = -c = 0.4 + 0.67 log10 Fcent the
    // published formula gives F = Fcent exactly (its fraction vanishes).
    let fcent: f64 = 0.5518418617;
    let pr = 10f64.powf(0.4 + 0.67 * fcent.log10());
    let f = broadening(
        ", troe = { a = 0.5, t3 = 100, t1 = 1000, t2 = 1000 }",
        "troe",
        pr,
        1000.0,
    );
    assert!((f - fcent).abs() < 1e-9, "F {f} vs Fcent {fcent}");
}

#[test]
fn sri_broadening_matches_the_reference() {
    // Recomputed from the published SRI formula (Stewart, Larson & Golden 1989):
    // F(Pr = 10, T = 1000 K; a = 0.45, b = 797 K, c = 979 K) = 0.7502518441.
    let f = broadening(
        ", sri = { a = 0.45, b = 797, c = 979 }",
        "sri",
        10.0,
        1000.0,
    );
    assert!((f - 0.7502518441).abs() < 1e-9, "F {f}");
    // The 5-parameter form multiplies by d T^e (same source): d = 2, e = 0.5 at 1000 K
    // gives 2 sqrt(1000) times the 3-parameter value.
    let f5 = broadening(
        ", sri = { a = 0.45, b = 797, c = 979, d = 2, e = 0.5 }",
        "sri",
        10.0,
        1000.0,
    );
    let expected = 0.7502518441 * 2.0 * 1000f64.sqrt();
    assert!(
        (f5 - expected).abs() < 1e-9 * expected,
        "F {f5} vs {expected}"
    );
}

#[test]
fn every_falloff_form_tends_to_its_low_and_high_pressure_limits() {
    // Limits of k = kinf Pr/(1+Pr) F (common practice; the published forms): Pr -> 0 gives
    // k0 [M] and Pr -> inf gives kinf when F -> 1. Here kinf = 1 /s, k0 = 1 m3/(mol s), so
    // k0 [M] = [M] = Pr.
    // - Lindemann: F = 1; k/(k0[M]) = 1/(1+Pr) and k/kinf = Pr/(1+Pr) (relative error Pr
    //   resp. 1/Pr, hand algebra).
    // - SRI and fixed centre: log F = X log(base), X = 1/(1+(log10 Pr)^2) -> 0; at
    //   |log10 Pr| = 150, X = 1/22501, so |ln F| <= |ln base| / 22501.
    // - Troe: the published fraction f = u/(n - 0.14 u), u = log10 Pr + c, equals
    //   -1/0.14 + n/(0.14 (n - 0.14 u)), so F tends to Fcent^(1/(1 + 1/0.14^2)) (hand
    //   derivation; the Troe form itself does not tend to 1). At |log10 Pr| = 150 and
    //   Fcent >= 0.3 (n <= 1.414, |n - 0.14 u| >= 20): |f + 1/0.14| <= 0.505, so 1 + f^2
    //   lies in [45.06, 59.49] against 52.02 at the limit: the exponent of Fcent is within
    //   16 % of its limit.
    let forms: [(&str, &str, f64); 4] = [
        ("lindemann", "", 0.0),
        (
            "sri",
            ", sri = { a = 0.45, b = 797, c = 979 }",
            // ln base at 1000 K: base = 0.45 exp(-0.797) + exp(-1000/979) = 0.56289.
            0.56289f64.ln().abs() / 22501.0 * 1.01,
        ),
        (
            "troe",
            ", troe = { a = 0.6, t3 = 1e-30, t1 = 1e30 }",
            f64::NAN,
        ),
        (
            "troe",
            ", troe = { a = 0.3, t3 = 1e-30, t1 = 1e30 }",
            f64::NAN,
        ),
    ];
    for (form, extra, sri_bound) in forms {
        for (pr, low) in [(1e-150, true), (1e150, false)] {
            let k = k_eff(&one_step(extra, 1.0, form), 1000.0, pr);
            let ratio = if low { k / pr } else { k };
            match form {
                "lindemann" => {
                    let bound = if low { pr } else { 1.0 / pr };
                    assert!((ratio - 1.0).abs() <= bound + 1e-15, "{form} {pr}: {ratio}");
                }
                "sri" => assert!((ratio.ln()).abs() <= sri_bound, "{form} {pr}: {ratio}"),
                _ => {
                    let fcent: f64 = if extra.contains("0.6") { 0.6 } else { 0.3 };
                    let limit = fcent.powf(1.0 / (1.0 + 1.0 / (0.14 * 0.14)));
                    // Exponent within 16 % of its limit (see above).
                    let exponent = ratio.ln() / fcent.ln();
                    let limit_exponent = limit.ln() / fcent.ln();
                    assert!(
                        (exponent / limit_exponent - 1.0).abs() < 0.16,
                        "{form} Fcent {fcent} Pr {pr}: F {ratio}, limit {limit}"
                    );
                }
            }
        }
    }
    // JPL fixed centre (JPL 19-5 section 2) and a chemically activated Lindemann step:
    // k = k0 / (1 + Pr) -> k0 as Pr -> 0 and -> kinf/[M] as Pr -> inf.
    let jpl = load(
        "stoik_mechanism = 1\n[units]\nlength = \"m\"\n\
         [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n[[species]]\nname = \"N2\"\n\
         [[step]]\nequation = \"A -> B\"\nthird_body = { species = \"N2\" }\n\
         termolecular_300k = { low_pressure_300k = 1, high_pressure_300k = 1 }\n\
         [[step]]\nequation = \"A -> N2\"\nthird_body = { species = \"N2\" }\n\
         forward = { prefactor = 1 }\n\
         chemically_activated = { high_pressure = { prefactor = 1 }, broadening = \"lindemann\" }\n",
    );
    let kinetics = Kinetics::compile(&jpl).unwrap();
    let k = kinetics.rate_constants(300.0);
    for m in [1e-150, 1e150] {
        let mut out = [0.0; 2];
        kinetics.effective_forward_rate_constants(&k, &[1.0, 0.0, m], &mut out);
        // JPL: F = 0.6^(1/(1+150^2)): |ln F| = 0.5108/22501.
        let (jpl_ratio, activated_ratio) = if m < 1.0 {
            (out[0] / m, out[1])
        } else {
            (out[0], out[1] * m)
        };
        assert!(jpl_ratio.ln().abs() <= 0.6f64.ln().abs() / 22501.0 * 1.01 + 1e-15);
        assert!((activated_ratio - 1.0).abs() < 1e-15 + if m < 1.0 { m } else { 1.0 / m });
    }
}

#[test]
fn termolecular_example_at_298_k_and_one_atmosphere_of_air() {
    // OH + NO2 + M -> HNO3 + M, JPL Publication 19-5 (Burkholder et al. 2019), termolecular
    // table, values FROM MEMORY: k0(300) = 1.8e-30 cm6 molecule-2 s-1, n = 3.0,
    // kinf(300) = 2.8e-11 cm3 molecule-1 s-1, m = 0; form and Fc = 0.6 from
    // JPL Publication 19-5 (Burkholder et al. 2019), section 2.
    // Hand calculation at 298 K, [M] = p/(k_B T) = 2.462732e19 molecule cm-3 (README):
    //   k0(298) = 1.8e-30 (298/300)^-3 = 1.836485e-30; kinf = 2.8e-11;
    //   Pr = 1.836485e-30 * 2.462732e19 / 2.8e-11 = 1.615275; log10 Pr = 0.208245;
    //   F = 0.6^(1/(1 + 0.208245^2)) = 0.6^0.958427 = 0.612875;
    //   k = 1.836485e-30 * 2.462732e19 / 2.615275 * 0.612875 = 1.059886e-11 cm3 molecule-1 s-1.
    let mechanism = load(
        "stoik_mechanism = 1\n[units]\namount = \"molecule\"\n\
         [[species]]\nname = \"OH\"\n[[species]]\nname = \"NO2\"\n[[species]]\nname = \"HNO3\"\n\
         [[species]]\nname = \"N2\"\n\
         [[step]]\nequation = \"OH + NO2 -> HNO3\"\nthird_body = {}\n\
         termolecular_300k = { low_pressure_300k = 1.8e-30, low_pressure_exponent = 3.0, \
         high_pressure_300k = 2.8e-11, high_pressure_exponent = 0, center = 0.6 }\n",
    );
    let t = 298.0;
    let total_mol_per_m3 = 101_325.0 / (BOLTZMANN * t) / AVOGADRO;
    let trace = 1e-9 * total_mol_per_m3;
    let c = [trace, trace, 0.0, total_mol_per_m3 - 2.0 * trace];
    let kinetics = Kinetics::compile(&mechanism).unwrap();
    let k = kinetics.rate_constants(t);
    let mut out = [0.0];
    kinetics.effective_forward_rate_constants(&k, &c, &mut out);
    let per_molecule = out[0] * 1e6 / AVOGADRO;
    let expected = 1.059886e-11;
    assert!(
        (per_molecule - expected).abs() < 2e-6 * expected,
        "k = {per_molecule:e} cm3 molecule-1 s-1, hand calculation {expected:e}"
    );
}

const TABLE: &str = "stoik_mechanism = 1\n[units]\nactivation_energy = \"kJ/mol\"\n\
    [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n[[species]]\nname = \"C\"\n\
    [[step]]\nequation = \"A + B -> C\"\npressure_table = [\n\
    { pressure = \"10 atm\", prefactor = 4e13, temperature_exponent = 0.5, activation_energy = 30 },\n\
    { pressure = \"0.1 atm\", prefactor = 1e12, activation_energy = 20 },\n\
    { pressure = \"1 atm\", prefactor = 5e12, temperature_exponent = 0.2, activation_energy = 25 },\n\
    { pressure = \"1 atm\", prefactor = 2e11, activation_energy = 10 },\n]\n";

/// Hand formula: A T^n exp(-Ea/(R T)) in cm3/(mol s), converted to m3/(mol s).
fn arrhenius(a: f64, n: f64, ea_kj: f64, t: f64) -> f64 {
    a * 1e-6 * t.powf(n) * (-ea_kj * 1e3 / (GAS_CONSTANT * t)).exp()
}

/// k of the table step at T and pressure P (c chosen so that (sum c) R T = P).
fn table_k(kinetics: &Kinetics, t: f64, p: f64) -> f64 {
    let k = kinetics.rate_constants(t);
    let total = p / (GAS_CONSTANT * t);
    let c = [0.25 * total, 0.25 * total, 0.5 * total];
    let mut out = [0.0];
    kinetics.effective_forward_rate_constants(&k, &c, &mut out);
    out[0]
}

#[test]
fn pressure_table_is_exact_at_its_pressures_linear_in_ln_k_between_and_clamped_outside() {
    let file = parse_mechanism(TABLE, "table.toml").unwrap_or_else(|e| panic!("{e}"));
    // The loader notes the clamp (issue 5: "clamp and warn"): 0.1 atm to 10 atm.
    let warning = file.warnings.iter().next().map(|d| d.message.clone());
    assert!(
        warning
            .as_deref()
            .is_some_and(|m| m.contains("10132.5 Pa (0.1 atm) to 1013250 Pa (10 atm)")),
        "{warning:?}"
    );
    let kinetics = Kinetics::compile(&file.mechanism).unwrap();
    let t = 900.0;
    let atm = 101_325.0;
    // Exact at the tabulated pressures; at 1 atm the two sets add (hand formula).
    let at = [
        (0.1 * atm, arrhenius(1e12, 0.0, 20.0, t)),
        (
            atm,
            arrhenius(5e12, 0.2, 25.0, t) + arrhenius(2e11, 0.0, 10.0, t),
        ),
        (10.0 * atm, arrhenius(4e13, 0.5, 30.0, t)),
    ];
    for &(p, expected) in &at {
        let k = table_k(&kinetics, t, p);
        assert!(
            (k - expected).abs() < 1e-12 * expected,
            "{p} Pa: {k} vs {expected}"
        );
    }
    // Linear in ln k against ln P between them: a quarter of the way in ln P
    // (P = 0.1 atm * 10^0.25) gives ln k = 0.75 ln k(0.1) + 0.25 ln k(1).
    let quarter = table_k(&kinetics, t, 0.1 * atm * 10f64.powf(0.25));
    let expected = (0.75 * at[0].1.ln() + 0.25 * at[1].1.ln()).exp();
    assert!((quarter - expected).abs() < 1e-12 * expected);
    let geometric = table_k(&kinetics, t, atm * 10f64.sqrt());
    let expected = (at[1].1 * at[2].1).sqrt();
    assert!((geometric - expected).abs() < 1e-12 * expected);
    // Clamped outside the table.
    let below = table_k(&kinetics, t, 0.001 * atm);
    let above = table_k(&kinetics, t, 1000.0 * atm);
    assert!((below - at[0].1).abs() < 1e-12 * at[0].1);
    assert!((above - at[2].1).abs() < 1e-12 * at[2].1);
}

/// Every form at once, with bath gases of every kind, including a collider that is also a
/// reactant and a pressure table evaluated inside and outside its range.
const ALL_FORMS: &str = r#"stoik_mechanism = 1
[units]
activation_energy = "kJ/mol"
[[species]]
name = "A"
[[species]]
name = "B"
[[species]]
name = "C"
[[species]]
name = "D"
[[species]]
name = "E"
[[species]]
name = "N2"
[[step]]
equation = "A -> B + C"
forward = { prefactor = 2e13, temperature_exponent = 0.3, activation_energy = 150 }
falloff = { low_pressure = { prefactor = 3e17, temperature_exponent = -1, activation_energy = 120 }, broadening = "troe", troe = { a = 0.4, t3 = 300, t1 = 2000, t2 = 4000 } }
third_body = { efficiency = { A = 2, N2 = 0.5 } }
[[step]]
equation = "B + C -> A"
forward = { prefactor = 1e13 }
falloff = { low_pressure = { prefactor = 1e16, activation_energy = -5 }, broadening = "sri", sri = { a = 0.45, b = 797, c = 979, d = 1.2, e = 0.1 } }
third_body = { species = "N2" }
[[step]]
equation = "A + B -> C + D"
forward = { prefactor = 1e12, activation_energy = 10 }
chemically_activated = { high_pressure = { prefactor = 1e8, temperature_exponent = 0.5 }, broadening = "troe", troe = { a = 0.7, t3 = 500, t1 = 3000 } }
third_body = {}
[[step]]
equation = "C + D -> E"
termolecular_300k = { low_pressure_300k = 5e15, low_pressure_exponent = 2.0, high_pressure_300k = 3e12, high_pressure_exponent = -0.5 }
third_body = {}
[[step]]
equation = "E -> C + D"
forward = { prefactor = 1e14, activation_energy = 200 }
falloff = { low_pressure = { prefactor = 1e18, activation_energy = 180 }, broadening = "lindemann" }
third_body = { efficiency = { E = 3 }, default_efficiency = 0.7 }
[[step]]
equation = "A + D -> B + E"
pressure_table = [
  { pressure = "0.5 atm", prefactor = 1e12, activation_energy = 20 },
  { pressure = "2 atm", prefactor = 6e12, temperature_exponent = 0.2, activation_energy = 25 },
  { pressure = "2 atm", prefactor = 1e11, activation_energy = 5 },
  { pressure = "20 atm", prefactor = 2e13, temperature_exponent = 0.4, activation_energy = 30 },
]
[[step]]
equation = "B -> D"
forward = { prefactor = 1e9, activation_energy = 90 }
[[step]]
equation = "A + A -> E"
forward = { prefactor = 1e11 }
chemically_activated = { high_pressure = { prefactor = 1e7 }, broadening = "sri", sri = { a = 0.5, b = 500, c = 800 } }
third_body = { species = "A" }
"#;

/// Concentrations (mol/m3) of the all-forms mechanism at total pressure `p_atm` and 1200 K.
fn all_forms_state(p_atm: f64) -> Vec<f64> {
    let total = p_atm * 101_325.0 / (GAS_CONSTANT * 1200.0);
    let x = [0.2, 0.1, 0.05, 0.08, 0.07, 0.5];
    x.iter().map(|xi| xi * total).collect()
}

/// Largest |analytic - central difference| relative to the Jacobian's largest entry, and
/// the same for dw/dT.
fn finite_difference_errors(kinetics: &Kinetics, t: f64, c: &[f64]) -> (f64, f64) {
    let n = kinetics.n_species();
    let k = kinetics.rate_constants(t);
    let mut jac = vec![0.0; n * n];
    kinetics.jacobian_dense(&k, c, &mut jac);
    // The sparse Jacobian holds the same values on its pattern.
    let pattern = kinetics.jacobian_pattern();
    let mut values = vec![0.0; pattern.nnz()];
    kinetics.jacobian_sparse(&k, c, &mut values);
    let mut dense_from_sparse = vec![0.0; n * n];
    for col in 0..n {
        for p in pattern.column_starts()[col]..pattern.column_starts()[col + 1] {
            dense_from_sparse[col * n + pattern.row_indices()[p]] = values[p];
        }
    }
    assert_eq!(jac, dense_from_sparse, "sparse and dense Jacobians differ");
    let scale = jac.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let mut worst_jac = 0.0f64;
    let (mut wp, mut wm) = (vec![0.0; n], vec![0.0; n]);
    for col in 0..n {
        let h = 1e-6 * c[col].abs().max(1e-3);
        let mut cp = c.to_vec();
        let mut cm = c.to_vec();
        cp[col] += h;
        cm[col] -= h;
        kinetics.production_rates(&k, &cp, &mut wp);
        kinetics.production_rates(&k, &cm, &mut wm);
        for row in 0..n {
            let fd = (wp[row] - wm[row]) / (2.0 * h);
            worst_jac = worst_jac.max((fd - jac[col * n + row]).abs() / scale);
        }
    }
    let mut slopes = kinetics.rate_constants(t);
    kinetics.evaluate_rate_constant_slopes(t, &k, &mut slopes);
    let mut dw_dt = vec![0.0; n];
    kinetics.production_rate_slopes(&k, &slopes, c, &mut dw_dt);
    let h = 1e-4;
    let kp = kinetics.rate_constants(t + h);
    let km = kinetics.rate_constants(t - h);
    kinetics.production_rates(&kp, c, &mut wp);
    kinetics.production_rates(&km, c, &mut wm);
    let t_scale = dw_dt.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let mut worst_t = 0.0f64;
    for i in 0..n {
        let fd = (wp[i] - wm[i]) / (2.0 * h);
        worst_t = worst_t.max((fd - dw_dt[i]).abs() / t_scale);
    }
    (worst_jac, worst_t)
}

#[test]
fn jacobian_and_temperature_slopes_of_every_form_match_central_differences() {
    // Central differences (common practice) with relative step 1e-6 in c and 1e-4 K in T:
    // truncation and rounding errors are below 1e-6 of the largest entry.
    let kinetics = Kinetics::compile(&load(ALL_FORMS)).unwrap();
    // 1 atm: the table interpolates between 0.5 and 2 atm; 0.1 atm and 50 atm: clamped.
    for p_atm in [1.0, 5.0, 0.1, 50.0] {
        let c = all_forms_state(p_atm);
        let (jac, temp) = finite_difference_errors(&kinetics, 1200.0, &c);
        eprintln!("{p_atm} atm: Jacobian {jac:.2e}, dw/dT {temp:.2e}");
        assert!(jac < 1e-6, "{p_atm} atm: Jacobian deviates by {jac:e}");
        assert!(temp < 1e-6, "{p_atm} atm: dw/dT deviates by {temp:e}");
    }
}

#[test]
fn reversible_troe_step_of_the_hydrogen_mechanism_matches_central_differences() {
    // mechanisms/hydrogen-oxygen.toml: H + O2 <=> HO2 is a Troe falloff step with
    // efficiencies, reverse kr = kf / Kc from thermochemistry. State: a partly burnt
    // diluted mixture at 1500 K and about 1 atm.
    let path = stoik_testsupport::mechanism_path("hydrogen-oxygen.toml");
    let mechanism = stoik_mechanism::load_mechanism(&path)
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism;
    let kinetics = Kinetics::compile(&mechanism).unwrap();
    let t = 1500.0;
    let total = 101_325.0 / (GAS_CONSTANT * t);
    let c: Vec<f64> = mechanism
        .species
        .iter()
        .map(|s| {
            total
                * match s.name.as_str() {
                    "H2" => 0.06,
                    "O2" => 0.03,
                    "H2O" => 0.04,
                    "H" => 0.004,
                    "O" => 0.002,
                    "OH" => 0.005,
                    "HO2" => 1e-4,
                    _ => 0.0,
                }
        })
        .collect();
    let argon = mechanism.species_index("AR").expect("AR");
    let mut c = c;
    c[argon] = total - c.iter().sum::<f64>();
    let (jac, temp) = finite_difference_errors(&kinetics, t, &c);
    eprintln!("hydrogen-oxygen: Jacobian {jac:.2e}, dw/dT {temp:.2e}");
    assert!(jac < 1e-6 && temp < 1e-6, "{jac:e} {temp:e}");
}

#[test]
fn collision_limit_checks_the_limit_in_the_reactants_own_order() {
    // The gas-kinetic collision limit, about 1e-10 cm3/(molecule s) = 6.02e13 cm3/(mol s)
    // (common practice), applies to bimolecular rate constants. A falloff step A + B (+M)
    // is checked with kinf (order 2), not k0 (order 3); a chemically activated one with k0
    // (order 2); a pressure table with its largest tabulated value. Units: mol, cm, s.
    let mechanism = load(
        "stoik_mechanism = 1\n\
         [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n[[species]]\nname = \"C\"\n\
         [[species]]\nname = \"D\"\n\
         [[step]]\nequation = \"A + B -> C\"\nforward = { prefactor = 1e14 }\n\
         falloff = { low_pressure = { prefactor = 1e30 }, broadening = \"lindemann\" }\n\
         third_body = {}\n\
         [[step]]\nequation = \"A + C -> D\"\nforward = { prefactor = 1e13 }\n\
         falloff = { low_pressure = { prefactor = 1e30 }, broadening = \"lindemann\" }\n\
         third_body = {}\n\
         [[step]]\nequation = \"B + C -> A + D\"\nforward = { prefactor = 2e14 }\n\
         chemically_activated = { high_pressure = { prefactor = 1e3 }, broadening = \"lindemann\" }\n\
         third_body = {}\n\
         [[step]]\nequation = \"A + D -> B + C\"\npressure_table = [\n\
         { pressure = \"1 atm\", prefactor = 1e13 },\n\
         { pressure = \"10 atm\", prefactor = 5e13 },\n\
         { pressure = \"10 atm\", prefactor = 5e13 },\n]\n",
    );
    let warnings = stoik_kinetics::collision_limit_warnings(&mechanism, "t.toml");
    let flagged: Vec<String> = warnings
        .iter()
        .map(|d| d.message.split('`').nth(1).unwrap_or("").to_string())
        .collect();
    // kinf 1e14 > 6.02e13: flagged; kinf 1e13 with k0 1e30: not; chemically activated k0
    // 2e14: flagged; table 5e13 + 5e13 = 1e14 at 10 atm: flagged.
    assert_eq!(flagged, ["A + B -> C", "B + C -> A + D", "A + D -> B + C"]);
    // The table's value shown is the summed one: 1e14 cm3/(mol s) = 1e8 m3/(mol s).
    assert!(
        warnings[2].message.contains("1.000e8 m3/(mol s)"),
        "{}",
        warnings[2].message
    );
}

#[test]
fn reversible_falloff_step_obeys_detailed_balance_at_every_bath_gas_level() {
    // Decision (docs/file-format.md): a reversible pressure-dependent step takes
    // kr = kf(T, [M]) / Kc(T), so its net rate vanishes when [HO2] = Kc [H][O2] (detailed
    // balance, common practice), whatever [M]. Kc from the species' thermochemistry.
    let path = stoik_testsupport::mechanism_path("hydrogen-oxygen.toml");
    let mechanism = stoik_mechanism::load_mechanism(&path)
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism;
    let step = mechanism
        .steps
        .iter()
        .position(|s| s.equation == "H + O2 <=> HO2")
        .expect("H + O2 <=> HO2");
    let index = |name: &str| mechanism.species_index(name).expect(name);
    let (h, o2, ho2, ar) = (index("H"), index("O2"), index("HO2"), index("AR"));
    let kinetics = Kinetics::compile(&mechanism).unwrap();
    let t = 1200.0;
    let k = kinetics.rate_constants(t);
    let n = kinetics.n_steps();
    let (mut kp, mut kc) = (vec![0.0; n], vec![0.0; n]);
    kinetics.equilibrium_constants(t, &mut kp, &mut kc);
    for argon in [0.1, 10.0, 1000.0] {
        let mut c = vec![0.0; mechanism.species.len()];
        c[h] = 1e-3;
        c[o2] = 0.5;
        c[ar] = argon;
        c[ho2] = kc[step] * c[h] * c[o2];
        let mut q = vec![0.0; n];
        kinetics.rates_of_progress(&k, &c, &mut q);
        let mut kf = vec![0.0; n];
        kinetics.effective_forward_rate_constants(&k, &c, &mut kf);
        let forward = kf[step] * c[h] * c[o2];
        assert!(
            q[step].abs() < 1e-12 * forward,
            "[Ar] {argon}: net {} vs forward {forward}",
            q[step]
        );
        // Off equilibrium the reverse is kf/Kc [HO2] at the same [M] as the forward rate
        // (HO2 collides too, so kf is taken again): twice the equilibrium [HO2] gives
        // q = kf [H][O2] (1 - 2).
        c[ho2] *= 2.0;
        kinetics.rates_of_progress(&k, &c, &mut q);
        kinetics.effective_forward_rate_constants(&k, &c, &mut kf);
        let forward = kf[step] * c[h] * c[o2];
        assert!((q[step] + forward).abs() < 1e-12 * forward);
    }
}

#[test]
fn scaling_a_falloff_step_scales_its_rate_at_every_pressure() {
    // Kinetics::scale_step multiplies both limits, so Pr and F are unchanged and k scales by
    // the factor exactly (k = kinf Pr/(1+Pr) F with kinf -> f kinf, k0 -> f k0).
    let mechanism = load(ALL_FORMS);
    let mut kinetics = Kinetics::compile(&mechanism).unwrap();
    let c = all_forms_state(1.0);
    let before = {
        let k = kinetics.rate_constants(1200.0);
        let mut out = vec![0.0; kinetics.n_steps()];
        kinetics.effective_forward_rate_constants(&k, &c, &mut out);
        out
    };
    for j in 0..kinetics.n_steps() {
        assert!(kinetics.scale_step(j, 3.0));
    }
    let k = kinetics.rate_constants(1200.0);
    let mut after = vec![0.0; kinetics.n_steps()];
    kinetics.effective_forward_rate_constants(&k, &c, &mut after);
    for (j, (a, b)) in after.iter().zip(&before).enumerate() {
        assert!((a / b - 3.0).abs() < 1e-12, "step {j}: {a} / {b}");
    }
}
