//! Checks against sources outside the project (each named beside its check).

// Reference values are quoted with every digit their source publishes.
#![allow(clippy::excessive_precision)]

use crate::*;
use stoik_mechanism::{parse_mechanism_in, AVOGADRO, GAS_CONSTANT};

/// Ethanal decomposition, a worked example in Atkins' *Physical Chemistry* (data from memory,
/// partly corroborated by other textbooks).
/// The measured rate constants of `mechanisms/data/ethanal-decomposition.csv`.
fn ethanal() -> String {
    stoik_testsupport::read_text(&stoik_testsupport::mechanism_path(
        "data/ethanal-decomposition.csv",
    ))
}

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

fn fit_text(csv: &str, model: Model) -> (RateData, RateFit) {
    let data = parse_rate_data(csv, "test.csv").expect("valid data");
    let fit = fit_rate_constants(
        &data,
        &FitOptions {
            model,
            ..FitOptions::default()
        },
    )
    .expect("fit");
    (data, fit)
}

fn messages(err: RateFitError) -> String {
    err.to_string()
}

/// splitmix64 (Steele, Lea & Flood 2014) with Box-Muller normal deviates.
struct Rng(u64);

impl Rng {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        let (u1, u2) = (self.uniform(), self.uniform());
        (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
    }
}

fn synthetic(
    temperatures: &[f64],
    ln_a: f64,
    n: f64,
    ea: f64,
    noise: impl Fn(usize) -> (f64, Option<f64>),
) -> RateData {
    RateData {
        source: "synthetic".to_string(),
        rate_constant_unit: RateConstantUnit::parse("s-1").unwrap(),
        uncertainty: None,
        points: temperatures
            .iter()
            .enumerate()
            .map(|(i, &t)| {
                let (dev, sigma) = noise(i);
                RatePoint {
                    temperature_k: t,
                    rate_constant_si: (ln_a + n * t.ln() - ea / (GAS_CONSTANT * t) + dev).exp(),
                    ln_uncertainty: sigma,
                    pressure_pa: None,
                    line: i + 2,
                }
            })
            .collect(),
    }
}

#[test]
fn ethanal_decomposition_gives_the_textbook_parameters() {
    // Atkins' Physical Chemistry, worked example (data from memory, partly corroborated);
    // least squares on ln k vs 1/T recomputed: Ea = 188.33 kJ/mol, A = 1.079e12 dm3 mol-1 s-1.
    let (data, fit) = fit_text(&ethanal(), Model::Arrhenius);
    assert_eq!(data.order(), 2);
    let ea_kj = fit.activation_energy_j_per_mol() / 1e3;
    let a_dm3 = fit.prefactor_si() / data.rate_constant_unit.to_si_factor();
    assert!(rel(ea_kj, 188.33) < 1e-3, "Ea = {ea_kj} kJ/mol");
    assert!(rel(a_dm3, 1.079e12) < 1e-3, "A = {a_dm3} dm3/(mol s)");
    // 1 dm3 = 1e-3 m3 (SI): A in m3 mol-1 s-1 is 1e-3 times the dm3 value.
    assert!(rel(fit.prefactor_si(), 1.079e9) < 1e-3);
    // 8 points, 2 parameters: Student t with 6 degrees of freedom, t(0.975, 6) = 2.446912
    // (standard statistical tables).
    assert_eq!(fit.degrees_of_freedom(), 6);
    assert!((fit.quantile() - 2.446912).abs() < 1e-5);
    // A and Ea are strongly correlated in the plain form (common practice: |r| near 1 when
    // the data are far from 1/T = 0); about T_ref = 1/mean(1/T) the correlation vanishes.
    assert!(fit.correlation().get(0, 1).unwrap() > 0.99);
    let r = fit
        .reference()
        .covariance()
        .correlation()
        .get(0, 1)
        .unwrap();
    assert!(r.abs() < 0.01, "correlation about T_ref: {r}");
    // k_ref is the fitted k at T_ref (definition of the reference form).
    assert!(
        rel(
            fit.reference().parameters()[0].exp(),
            fit.rate_constant_si(fit.reference().temperature_k())
        ) < 1e-12
    );
    assert!(fit.warnings().is_empty(), "{:?}", fit.warnings());
}

#[test]
fn a_rate_constant_that_doubles_over_ten_kelvin_has_ea_52_9489_kj_per_mol() {
    // Two-point form (exact arithmetic): Ea = R ln 2 / (1/298.15 - 1/308.15) = 52.9489 kJ/mol.
    // Two points and two parameters: the scatter cannot be estimated, so the points carry a
    // stated uncertainty.
    let csv =
        "temperature [C], rate_constant [min-1], uncertainty [factor]\n25, 3.0, 1.1\n35, 6.0, 1.1\n";
    let (_, fit) = fit_text(csv, Model::Arrhenius);
    let ea_kj = fit.activation_energy_j_per_mol() / 1e3;
    assert!((ea_kj - 52.9489).abs() < 5e-5, "Ea = {ea_kj}");
    // A = k / exp(-Ea/(R T)) at either point; k = 3 min-1 = 0.05 s-1 at 298.15 K.
    let a = 0.05 / (-52_948.9 / (GAS_CONSTANT * 298.15)).exp();
    assert!(rel(fit.prefactor_si(), a) < 1e-4);
    // The same data without uncertainties leaves no degree of freedom: a clear error.
    let err = parse_rate_data(
        "temperature [K], rate_constant [s-1]\n298.15, 1\n308.15, 2\n",
        "t.csv",
    )
    .map(|d| fit_rate_constants(&d, &FitOptions::default()))
    .unwrap()
    .unwrap_err();
    assert!(messages(err).contains("at least 3 are needed"));
}

#[test]
fn noiseless_data_recovers_the_parameters_exactly() {
    // Independent expectation: data generated from k = A T^n exp(-Ea/(R T)) with known A, n,
    // Ea must give them back (to rounding).
    let temps: Vec<f64> = (0..9).map(|i| 300.0 + 150.0 * i as f64).collect();
    let (ln_a, n, ea) = (12.5_f64.ln() + 20.0, 1.75, 63_000.0);
    let data = synthetic(&temps, ln_a, n, ea, |_| (0.0, None));
    let fit = fit_rate_constants(
        &data,
        &FitOptions {
            model: Model::ModifiedArrhenius,
            ..FitOptions::default()
        },
    )
    .unwrap();
    assert!(
        (fit.parameters()[0] - ln_a).abs() < 1e-8,
        "{:?}",
        fit.parameters()
    );
    assert!((fit.temperature_exponent() - n).abs() < 1e-9);
    assert!(rel(fit.activation_energy_j_per_mol(), ea) < 1e-10);
    // Negative n and negative Ea too (common in radical-radical steps).
    let data = synthetic(&temps, 30.0, -2.5, -4_000.0, |_| (0.0, None));
    let fit = fit_rate_constants(
        &data,
        &FitOptions {
            model: Model::ModifiedArrhenius,
            ..FitOptions::default()
        },
    )
    .unwrap();
    assert!((fit.temperature_exponent() + 2.5).abs() < 1e-9);
    assert!((fit.activation_energy_j_per_mol() + 4_000.0).abs() < 1e-5);
}

/// Fraction of `trials` fits whose 95% intervals cover each true parameter.
fn coverage(
    model: Model,
    temps: &[f64],
    truth: &[f64],
    sigma: &dyn Fn(usize) -> f64,
    weighted: bool,
    seed: u64,
    trials: usize,
) -> Vec<f64> {
    let mut rng = Rng(seed);
    let (ln_a, n, ea) = match model {
        Model::Arrhenius => (truth[0], 0.0, truth[1]),
        Model::ModifiedArrhenius => (truth[0], truth[1], truth[2]),
    };
    let options = FitOptions {
        model,
        ..FitOptions::default()
    };
    let mut hits = vec![0usize; truth.len()];
    for _ in 0..trials {
        let deviates: Vec<f64> = (0..temps.len()).map(|i| sigma(i) * rng.normal()).collect();
        let data = synthetic(temps, ln_a, n, ea, |i| {
            (deviates[i], weighted.then(|| sigma(i)))
        });
        let fit = fit_rate_constants(&data, &options).unwrap();
        for (j, t) in truth.iter().enumerate() {
            let (lo, hi) = fit.interval(j).unwrap();
            if lo <= *t && *t <= hi {
                hits[j] += 1;
            }
        }
    }
    hits.iter().map(|&h| h as f64 / trials as f64).collect()
}

#[test]
fn monte_carlo_95_percent_intervals_cover_the_truth_95_percent_of_the_time() {
    // Independent expectation (definition of a confidence interval; Student t for scatter
    // estimated from residuals, normal quantile for known uncertainties): with Gaussian noise
    // in ln k, 95% intervals cover the true parameters in 95% of trials; 2,000 trials give a
    // binomial standard deviation of 0.49%, so 93-97% is a four-sigma band.
    let temps: Vec<f64> = (0..10).map(|i| 500.0 + 110.0 * i as f64).collect();
    let trials = 2000;
    let modified = coverage(
        Model::ModifiedArrhenius,
        &temps,
        &[30.0, 0.7, 150_000.0],
        &|_| 0.1,
        false,
        0x5EED_0001,
        trials,
    );
    let plain = coverage(
        Model::Arrhenius,
        &temps[..6],
        &[25.0, 80_000.0],
        &|_| 0.2,
        false,
        0x5EED_0002,
        trials,
    );
    let weighted = coverage(
        Model::ModifiedArrhenius,
        &temps,
        &[30.0, 0.7, 150_000.0],
        &|i| 0.05 + 0.03 * i as f64,
        true,
        0x5EED_0003,
        trials,
    );
    eprintln!("coverage: modified {modified:?}, two-parameter {plain:?}, weighted {weighted:?}");
    for c in modified.iter().chain(&plain).chain(&weighted) {
        assert!((0.93..=0.97).contains(c), "coverage {c}");
    }
}

#[test]
fn bad_input_gets_clear_located_errors() {
    // Non-positive k (two bad rows reported at once, each at line:column).
    let err = parse_rate_data(
        "temperature [K], rate_constant [s-1]\n300, 1.0\n310, 0\n320, -2\n330, fast\n",
        "bad.csv",
    )
    .unwrap_err();
    let text = messages(err);
    assert!(
        text.contains("bad.csv:3:6: error: rate constant `0` is not positive"),
        "{text}"
    );
    assert!(text.contains("bad.csv:4:6: error: rate constant `-2` is not positive"));
    assert!(text.contains("bad.csv:5:6: error: `fast` is not a finite number"));
    // A positive k that underflows to zero in SI (1e-320 cm3/(mol s) is 1e-326 m3/(mol s),
    // below the smallest double) is refused at its cell, not later without a column.
    let err = parse_rate_data(
        "temperature [K], rate_constant [cm3 mol-1 s-1]\n300, 1e-320\n",
        "tiny.csv",
    )
    .unwrap_err();
    let text = messages(err);
    assert!(
        text.contains("tiny.csv:2:6: error: rate constant `1e-320` is zero in SI units"),
        "{text}"
    );
    // Missing units.
    let err = parse_rate_data("temperature, rate_constant [s-1]\n300, 1\n", "u.csv").unwrap_err();
    assert!(
        messages(err).contains(
            "u.csv:1:1: error: column `temperature` has no unit: expected `NAME [UNIT]`, e.g. `temperature [K]`"
        )
    );
    let err = parse_rate_data(
        "temperature [K], rate_constant [cm3 s-1]\n300, 1\n",
        "u.csv",
    )
    .unwrap_err();
    assert!(messages(err).contains("u.csv:1:18: error: `cm3 s-1` is not a rate-constant unit"));
    let err =
        parse_rate_data("temprature [K], rate_constant [s-1]\n300, 1\n", "u.csv").unwrap_err();
    let text = messages(err);
    assert!(text.contains("unknown column `temprature`"), "{text}");
    assert!(text.contains("did you mean `temperature`?"));
    // Duplicate temperatures only.
    let csv = "temperature [K], rate_constant [s-1]\n700, 1.0\n700, 1.1\n700, 0.9\n";
    let data = parse_rate_data(csv, "d.csv").unwrap();
    let err = fit_rate_constants(&data, &FitOptions::default()).unwrap_err();
    assert_eq!(
        messages(err),
        "the points (lines 2-4) are at 1 distinct temperature(s) (700 K): a 2-parameter fit needs at least 2"
    );
    // One point.
    let data =
        parse_rate_data("temperature [K], rate_constant [s-1]\n700, 1.0\n", "o.csv").unwrap();
    let err = fit_rate_constants(&data, &FitOptions::default()).unwrap_err();
    assert!(messages(err).starts_with("1 data point(s) (line 2) cannot determine 2 parameters"));
    // Bad uncertainty factor and field count.
    let err = parse_rate_data(
        "temperature [K], rate_constant [s-1], uncertainty [factor]\n700, 1.0, 0.5\n710, 2\n",
        "f.csv",
    )
    .unwrap_err();
    let text = messages(err);
    assert!(text
        .contains("f.csv:2:11: error: uncertainty `0.5` is not valid: expected a factor above 1"));
    assert!(text.contains("f.csv:3:1: error: 2 field(s) but the header has 3 column(s)"));
}

#[test]
fn units_set_the_order_and_the_si_factor() {
    // SI: 1 dm3 = 1e-3 m3, 1 cm3 = 1e-6 m3; N_A = 6.02214076e23 /mol (SI 2019 exact).
    let u = RateConstantUnit::parse("dm3 mol-1 s-1").unwrap();
    assert_eq!(u.order(), 2);
    assert!(rel(u.to_si_factor(), 1e-3) < 1e-15);
    let u = RateConstantUnit::parse("L mol-1 s-1").unwrap();
    assert!(rel(u.to_si_factor(), 1e-3) < 1e-15);
    let u = RateConstantUnit::parse("cm3 molecule-1 s-1").unwrap();
    assert_eq!(u.order(), 2);
    assert!(rel(u.to_si_factor(), 1e-6 * AVOGADRO) < 1e-15);
    let u = RateConstantUnit::parse("cm6 molecule-2 s-1").unwrap();
    assert_eq!(u.order(), 3);
    assert!(rel(u.to_si_factor(), 1e-12 * AVOGADRO * AVOGADRO) < 1e-14);
    let u = RateConstantUnit::parse("min-1").unwrap();
    assert_eq!(u.order(), 1);
    assert!(rel(u.to_si_factor(), 1.0 / 60.0) < 1e-15);
    assert!(RateConstantUnit::parse("cm3 mol-1").is_err());
    assert!(RateConstantUnit::parse("cm3 dm3 mol-2 s-1").is_err());
}

#[test]
fn snippets_of_data_files_with_hostile_names_load_back() {
    // The snippet names the data file in a comment and in the step's note. A name holding a
    // newline used to end the comment and leave `[x].csv` as TOML text (issue 12, section
    // 5). Every name must give a snippet that the mechanism reader accepts, with the rate
    // constant read back equal to the fitted one (shortest round-trip digits) and the note
    // holding the name exactly (TOML string escapes, TOML 1.0 specification "String").
    let hostile = [
        "d\n[x].csv",
        "d\r\n[[step]].csv",
        "d\"q.csv",
        "d\\e.csv",
        "d #c.csv",
        "d\u{7f}\u{1}\t.csv",
        "\u{2028}Ω.csv",
        "\"\"\".csv",
    ];
    for name in hostile {
        let data = parse_rate_data(&ethanal(), name).expect("valid data");
        let fit = fit_rate_constants(&data, &FitOptions::default()).expect("fit");
        let snippet = mechanism_snippet(&fit, Some("CH3CHO -> CH4 + CO")).expect("snippet");
        let text = format!(
            "stoik_mechanism = 1\n[[species]]\nname = \"CH3CHO\"\n[[species]]\nname = \"CH4\"\n[[species]]\nname = \"CO\"\n{snippet}"
        );
        let file = parse_mechanism_in(&text, "<snippet>", None)
            .unwrap_or_else(|e| panic!("snippet of {name:?} does not load: {e}\n{snippet}"));
        assert_eq!(file.mechanism.steps.len(), 1, "{name:?}");
        let step = &file.mechanism.steps[0];
        assert!(
            step.note.as_deref().is_some_and(|n| n.contains(name)),
            "{name:?}: {:?}",
            step.note
        );
        // Unit conversion dm3 -> cm3 and back costs at most a few ulps.
        assert!(
            rel(
                step.forward.rate_constant(800.0),
                fit.rate_constant_si(800.0)
            ) < 1e-13,
            "{name:?}"
        );
    }
}

#[test]
fn the_snippet_parses_and_gives_back_the_fitted_rate_constant() {
    // Ethanal data (Atkins' Physical Chemistry, data from memory): second order in ethanal,
    // so `CH3CHO -> CH4 + CO` needs reaction order 2 for ethanal.
    let (data, fit) = fit_text(&ethanal(), Model::Arrhenius);
    assert_eq!(data.order(), 2);
    let snippet = mechanism_snippet(&fit, Some("CH3CHO -> CH4 + CO")).unwrap();
    assert!(
        snippet.contains("reaction_orders = { CH3CHO = 2 }"),
        "{snippet}"
    );
    assert!(snippet.contains("length = \"cm\""));
    // A = 1.079e12 dm3 mol-1 s-1 = 1.079e15 cm3 mol-1 s-1 (1 dm3 = 1000 cm3).
    assert!(snippet.contains("prefactor = 1.079"));
    assert!(snippet.contains("e15,"), "{snippet}");
    let text = format!(
        "stoik_mechanism = 1\n[[species]]\nname = \"CH3CHO\"\n[[species]]\nname = \"CH4\"\n[[species]]\nname = \"CO\"\n{snippet}"
    );
    let file = parse_mechanism_in(&text, "<snippet>", None).expect("the snippet parses");
    let step = &file.mechanism.steps[0];
    assert!(step.note.as_deref().unwrap().contains("test.csv"));
    for t in [700.0, 812.0, 1000.0] {
        assert!(rel(step.forward.rate_constant(t), fit.rate_constant_si(t)) < 1e-8);
    }
    // The modified form with a placeholder equation.
    let temps: Vec<f64> = (0..8).map(|i| 300.0 + 200.0 * i as f64).collect();
    let data = synthetic(&temps, 20.0, 1.3, 20_000.0, |_| (0.0, None));
    let fit = fit_rate_constants(
        &data,
        &FitOptions {
            model: Model::ModifiedArrhenius,
            ..FitOptions::default()
        },
    )
    .unwrap();
    let snippet = mechanism_snippet(&fit, None).unwrap();
    assert!(snippet.contains("equation = \"R1 -> P\""));
    assert!(snippet.contains("# EDIT"));
    let text = format!(
        "stoik_mechanism = 1\n[[species]]\nname = \"R1\"\n[[species]]\nname = \"P\"\n{snippet}"
    );
    let file = parse_mechanism_in(&text, "<snippet>", None).expect("the snippet parses");
    let k = file.mechanism.steps[0].forward.rate_constant(900.0);
    // Independent expectation: the generating parameters.
    let expected = (20.0 + 1.3 * 900f64.ln() - 20_000.0 / (GAS_CONSTANT * 900.0)).exp();
    assert!(rel(k, expected) < 1e-8);
    // An equation whose reactants cannot carry the data's order is refused.
    let err = mechanism_snippet(&fit, Some("A + B -> C")).unwrap_err();
    assert!(messages(err).contains("add up to 2 but the rate constant's unit `s-1` is of order 1"));
    assert!(mechanism_snippet(&fit, Some("A <=> B")).is_err());
}

#[test]
fn warnings_carry_their_numbers() {
    // Narrow range: 700-760 K cannot determine n (common practice: n needs a wide range).
    let temps = [700.0, 710.0, 720.0, 730.0, 740.0, 750.0, 760.0];
    let mut rng = Rng(7);
    let dev: Vec<f64> = (0..7).map(|_| 0.05 * rng.normal()).collect();
    let data = synthetic(&temps, 20.0, 1.0, 90_000.0, |i| (dev[i], None));
    let fit = fit_rate_constants(
        &data,
        &FitOptions {
            model: Model::ModifiedArrhenius,
            ..FitOptions::default()
        },
    )
    .unwrap();
    let narrow = fit
        .warnings()
        .iter()
        .find(|w| matches!(w, FitWarning::NarrowRangeForExponent { .. }))
        .expect("narrow-range warning");
    let text = narrow.to_string();
    assert!(text.contains("700.0-760.0 K (ratio 1.086)"), "{text}");

    // Few points: 4 points for 3 parameters (< parameters + 2 = 5).
    let data = synthetic(&[500.0, 700.0, 900.0, 1100.0], 20.0, 1.0, 9e4, |i| {
        ([0.01, -0.02, 0.015, 0.0][i], None)
    });
    let fit = fit_rate_constants(
        &data,
        &FitOptions {
            model: Model::ModifiedArrhenius,
            ..FitOptions::default()
        },
    )
    .unwrap();
    assert!(fit.warnings().contains(&FitWarning::FewPoints {
        points: 4,
        parameters: 3
    }));

    // Outlier: one point 1.0 off in ln k among points scattered by about 0.02.
    let temps: Vec<f64> = (0..10).map(|i| 400.0 + 50.0 * i as f64).collect();
    let mut rng = Rng(11);
    let dev: Vec<f64> = (0..10)
        .map(|i| 0.02 * rng.normal() + if i == 4 { 1.0 } else { 0.0 })
        .collect();
    let data = synthetic(&temps, 20.0, 0.0, 50_000.0, |i| (dev[i], None));
    let fit = fit_rate_constants(&data, &FitOptions::default()).unwrap();
    let outliers: Vec<&FitWarning> = fit
        .warnings()
        .iter()
        .filter(|w| matches!(w, FitWarning::Outlier { .. }))
        .collect();
    assert_eq!(outliers.len(), 1, "{outliers:?}");
    // Critical value: t at 1 - 0.05/20 with 10 - 2 - 1 = 7 dof, 4.0293 (standard tables of
    // Student's t, 0.9975 quantile with 7 dof).
    match outliers[0] {
        FitWarning::Outlier { line, critical, .. } => {
            assert_eq!(*line, 6);
            assert!((critical - 4.0293).abs() < 1e-3, "{critical}");
        }
        _ => unreachable!(),
    }

    // Collision limit: 3e-10 cm3 molecule-1 s-1 at all T exceeds ~1e-10 (common practice).
    let csv = "temperature [K], rate_constant [cm3 molecule-1 s-1]\n300, 3e-10\n400, 3.1e-10\n500, 2.9e-10\n600, 3e-10\n";
    let (_, fit) = fit_text(csv, Model::Arrhenius);
    let w = fit
        .warnings()
        .iter()
        .find(|w| matches!(w, FitWarning::AboveCollisionLimit { .. }))
        .expect("collision-limit warning");
    let text = w.to_string();
    assert!(
        text.contains("above the gas-kinetic collision limit of about 1e-10 cm3"),
        "{text}"
    );
    // The ethanal fit (max 145 dm3 mol-1 s-1 = 2.4e-19 cm3 molecule-1 s-1) stays below.
    let (_, fit) = fit_text(&ethanal(), Model::Arrhenius);
    assert!(!fit
        .warnings()
        .iter()
        .any(|w| matches!(w, FitWarning::AboveCollisionLimit { .. })));
}

/// Fill of the data markers in the SVG plot (`plot::DATA_COLOR`).
const DATA_FILL: &str = "#DE2D26";
/// Stroke of the error bars in the SVG plot (`plot::ERROR_BAR_COLOR`).
const ERROR_BAR_STROKE: &str = "#252525";

/// The data markers of a plot, (cx, cy) in pixels, in document order, after checking that the
/// SVG is well-formed XML; the legend's marker is the last.
fn markers(svg: &str) -> Vec<(f64, f64)> {
    let doc = roxmltree::Document::parse(svg).expect("well-formed SVG");
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    let number = |n: &roxmltree::Node, a: &str| n.attribute(a).unwrap().parse::<f64>().unwrap();
    doc.descendants()
        .filter(|n| n.has_tag_name("circle") && n.attribute("fill") == Some(DATA_FILL))
        .map(|n| (number(&n, "cx"), number(&n, "cy")))
        .collect()
}

/// The vertical error bars of a plot: (x, lower y, upper y) in pixels.
fn error_bars(svg: &str) -> Vec<(f64, f64, f64)> {
    let doc = roxmltree::Document::parse(svg).expect("well-formed SVG");
    let number = |n: &roxmltree::Node, a: &str| n.attribute(a).unwrap().parse::<f64>().unwrap();
    doc.descendants()
        .filter(|n| n.has_tag_name("line") && n.attribute("stroke") == Some(ERROR_BAR_STROKE))
        .filter(|n| number(n, "x1") == number(n, "x2"))
        .map(|n| (number(&n, "x1"), number(&n, "y1"), number(&n, "y2")))
        .collect()
}

#[test]
fn report_and_plot_show_the_fit() {
    // Ethanal (Atkins' Physical Chemistry, data from memory): the report prints Ea = 188.33
    // kJ/mol; the plot has one marker per data point (8 in the source's table) plus the
    // legend's.
    let (data, fit) = fit_text(&ethanal(), Model::Arrhenius);
    let report = report_text(&fit);
    assert!(report.contains("Ea [kJ/mol]"));
    assert!(report.contains("188.32"), "{report}");
    let svg = svg_plot(&fit).unwrap();
    let marks = markers(&svg);
    assert_eq!(marks.len(), 8 + 1);
    // x = 1000 K/T falls as T rises and y = ln k rises with k: the markers are ordered as the
    // data (the table's T and k both increase row by row).
    for pair in marks[..8].windows(2) {
        assert!(pair[1].0 < pair[0].0 && pair[1].1 < pair[0].1, "{pair:?}");
    }
    assert_eq!(data.points.len(), 8);
    assert!(svg.contains("1000 K / T"));
    assert!(svg.contains("ln(k / (dm3 mol-1 s-1))"));
    assert!(svg.contains("95% confidence band"));
    assert!(svg.contains("<polygon"), "the band");
    assert!(svg.contains("stroke=\"#08519C\""), "the fitted line");
    assert!(error_bars(&svg).is_empty());
    // With uncertainties every point gets an error bar of one standard uncertainty: a factor
    // 1.2 spans ln k +- ln 1.2 (definition of the factor column), the same length in pixels
    // for every point (to the pixel rounding of the SVG backend).
    let csv = "temperature [K], rate_constant [cm3 molecule-1 s-1], uncertainty [factor]\n\
               250, 2.1e-13, 1.2\n300, 5.5e-13, 1.2\n400, 2.2e-12, 1.2\n500, 5.0e-12, 1.2\n";
    let (data, fit) = fit_text(csv, Model::Arrhenius);
    assert!(rel(data.points[0].ln_uncertainty.unwrap(), 1.2f64.ln()) < 1e-15);
    let svg = svg_plot(&fit).unwrap();
    let marks = markers(&svg);
    assert_eq!(marks.len(), 4 + 1);
    let bars = error_bars(&svg);
    assert_eq!(bars.len(), 4);
    let length = (bars[0].1 - bars[0].2).abs();
    for (bar, mark) in bars.iter().zip(&marks) {
        assert_eq!(bar.0, mark.0, "the bar stands on its marker");
        assert!(((bar.1 - bar.2).abs() - length).abs() <= 2.0);
        assert!((0.5 * (bar.1 + bar.2) - mark.1).abs() <= 1.0);
    }
}

#[test]
fn standard_errors_and_residual_statistics_match_simple_regression_closed_forms() {
    // Closed forms of simple linear regression y = a + b x (any statistics textbook; common
    // practice): s^2 = SSR/(N-2), se(b) = s/sqrt(Sxx), se(a) = s sqrt(1/N + xbar^2/Sxx),
    // leverage h_i = 1/N + (x_i - xbar)^2/Sxx, externally studentized residual
    // r_i / (s_(i) sqrt(1 - h_i)) with s_(i)^2 = (SSR - r_i^2/(1 - h_i))/(N - 3).
    // Applied to ln k on x = -1/(R T) for the ethanal data (Atkins' Physical Chemistry, data
    // from memory), computed here in plain arithmetic.
    let (data, fit) = fit_text(&ethanal(), Model::Arrhenius);
    let x: Vec<f64> = data
        .points
        .iter()
        .map(|p| -1.0 / (GAS_CONSTANT * p.temperature_k))
        .collect();
    let y: Vec<f64> = data
        .points
        .iter()
        .map(|p| p.rate_constant_si.ln())
        .collect();
    let n = x.len() as f64;
    let (mx, my) = (x.iter().sum::<f64>() / n, y.iter().sum::<f64>() / n);
    let sxx: f64 = x.iter().map(|v| (v - mx).powi(2)).sum();
    let sxy: f64 = x.iter().zip(&y).map(|(a, b)| (a - mx) * (b - my)).sum();
    let b = sxy / sxx;
    let a = my - b * mx;
    let r: Vec<f64> = x.iter().zip(&y).map(|(xi, yi)| yi - a - b * xi).collect();
    let ssr: f64 = r.iter().map(|v| v * v).sum();
    let s = (ssr / (n - 2.0)).sqrt();
    let se = fit.standard_errors();
    assert!(rel(fit.parameters()[0], a) < 1e-12);
    assert!(rel(fit.parameters()[1], b) < 1e-12);
    assert!(
        rel(se[1], s / sxx.sqrt()) < 1e-9,
        "{} vs {}",
        se[1],
        s / sxx.sqrt()
    );
    assert!(rel(se[0], s * (1.0 / n + mx * mx / sxx).sqrt()) < 1e-9);
    for (i, res) in fit.residuals().iter().enumerate() {
        let h = 1.0 / n + (x[i] - mx).powi(2) / sxx;
        let s_i = ((ssr - r[i] * r[i] / (1.0 - h)) / (n - 3.0)).sqrt();
        assert!((res.leverage - h).abs() < 1e-12);
        assert!(rel(res.studentized, r[i] / (s_i * (1.0 - h).sqrt())) < 1e-8);
    }
    // Band at T: fitted ln k +- t se(ln k(T)) with se^2 = s^2 (1/N + (x(T) - xbar)^2/Sxx).
    let band = fit.band(3);
    let t = band[1].temperature_k;
    let xt = -1.0 / (GAS_CONSTANT * t);
    let half = fit.quantile() * s * (1.0 / n + (xt - mx).powi(2) / sxx).sqrt();
    assert!(rel(band[1].upper_si.ln() - band[1].fitted_si.ln(), half) < 1e-8);
    assert!(rel(band[1].fitted_si.ln() - band[1].lower_si.ln(), half) < 1e-8);
}

#[test]
fn hand_built_data_is_checked_and_understated_uncertainties_are_flagged() {
    // A point with k = 0 built through the library (not the CSV reader) is refused: ln 0 is
    // undefined.
    let temps = [400.0, 500.0, 600.0, 700.0];
    let mut data = synthetic(&temps, 20.0, 0.0, 50_000.0, |_| (0.0, None));
    data.points[2].rate_constant_si = 0.0;
    let err = fit_rate_constants(&data, &FitOptions::default()).unwrap_err();
    assert!(messages(err).starts_with("the point of line 4 needs T > 0 K, k > 0"));

    // Scatter of 0.3 in ln k with stated uncertainties of 1 %: chi-square far above its
    // degrees of freedom (chi-square distribution, common practice: the 99th percentile with
    // 8 dof is 20.09), so the fit warns.
    let temps: Vec<f64> = (0..10).map(|i| 400.0 + 60.0 * i as f64).collect();
    let mut rng = Rng(3);
    let dev: Vec<f64> = (0..10).map(|_| 0.3 * rng.normal()).collect();
    let data = synthetic(&temps, 20.0, 0.0, 50_000.0, |i| (dev[i], Some(0.01)));
    let fit = fit_rate_constants(&data, &FitOptions::default()).unwrap();
    let Scatter::FromUncertainties { chi_square, .. } = fit.scatter() else {
        panic!("weighted fit expected");
    };
    assert!(chi_square > 20.09);
    // Chi-square = sum of squared weighted residuals (definition).
    let direct: f64 = fit
        .residuals()
        .iter()
        .map(|r| (r.ln_residual / 0.01).powi(2))
        .sum();
    assert!(rel(chi_square, direct) < 1e-10);
    assert!(fit.warnings().iter().any(|w| matches!(
        w,
        FitWarning::ChiSquare { p_value, degrees_of_freedom: 8, .. } if *p_value < 0.01
    )));
}

#[test]
fn absolute_uncertainties_convert_units_and_pressures_are_reported() {
    // An absolute uncertainty is converted to the rate constant's unit before dividing:
    // 100 cm3 mol-1 s-1 = 0.1 dm3 mol-1 s-1 (1 dm3 = 1000 cm3), so sigma(ln k) = 0.1 for
    // k = 1 dm3 mol-1 s-1 and 0.05 for k = 2 (first-order propagation, sigma_ln = u/k).
    // 760 Torr = 101325 Pa, 1 atm (definitions).
    let csv = "temperature [K], rate_constant [dm3 mol-1 s-1], uncertainty [cm3 mol-1 s-1], pressure [Torr]\n\
               300, 1.0, 100, 76\n400, 2.0, 100, 760\n500, 3.0, 100, 760\n";
    let data = parse_rate_data(csv, "abs.csv").unwrap();
    assert!(rel(data.points[0].ln_uncertainty.unwrap(), 0.1) < 1e-12);
    assert!(rel(data.points[1].ln_uncertainty.unwrap(), 0.05) < 1e-12);
    assert!(rel(data.points[1].pressure_pa.unwrap(), 101_325.0) < 1e-15);
    let fit = fit_rate_constants(&data, &FitOptions::default()).unwrap();
    assert!(fit.warnings().iter().any(|w| matches!(
        w,
        FitWarning::PressuresDiffer { min_pa, max_pa }
            if rel(*min_pa, 10_132.5) < 1e-12 && rel(*max_pa, 101_325.0) < 1e-12
    )));
    // An absolute uncertainty of another order is refused at its header column.
    let err = parse_rate_data(
        "temperature [K], rate_constant [s-1], uncertainty [cm3 mol-1 s-1]\n300, 1, 0.1\n",
        "o.csv",
    )
    .unwrap_err();
    assert!(messages(err).contains(
        "o.csv:1:39: error: uncertainty unit `cm3 mol-1 s-1` is of order 2 but the rate constant's is of order 1"
    ));
}

#[test]
fn hand_built_values_give_errors_not_panics() {
    // Definitions: ln k needs k > 0; a fit needs points; T must be a finite positive number
    // of kelvins. Every case below is refused with a typed error.
    let unit = RateConstantUnit::parse("s-1").unwrap();
    let empty = RateData {
        source: "hand".to_string(),
        rate_constant_unit: unit.clone(),
        uncertainty: None,
        points: Vec::new(),
    };
    assert_eq!(
        fit_rate_constants(&empty, &FitOptions::default()),
        Err(RateFitError::TooFewPoints {
            points: 0,
            lines: vec![],
            needed: 3,
            parameters: 2,
            weighted: false
        })
    );
    let temps = [400.0, 500.0, 600.0, 700.0];
    for bad_t in [f64::NAN, f64::INFINITY, -300.0, 0.0] {
        let mut data = synthetic(&temps, 20.0, 0.0, 50_000.0, |_| (0.0, None));
        data.points[1].temperature_k = bad_t;
        let err = fit_rate_constants(&data, &FitOptions::default()).unwrap_err();
        assert!(
            matches!(err, RateFitError::BadOption(_)),
            "{bad_t}: {err:?}"
        );
        assert!(messages(err).starts_with("the point of line 3 needs T > 0 K"));
    }
    // A temperature of 5e-324 K is positive and finite, but 1/(R T) overflows: the design is
    // not finite and the fit says so instead of looping in the SVD.
    let mut data = synthetic(&temps, 20.0, 0.0, 50_000.0, |_| (0.0, None));
    data.points[0].temperature_k = 5e-324;
    data.points[0].rate_constant_si = 1.0;
    assert_eq!(
        fit_rate_constants(&data, &FitOptions::default()),
        Err(RateFitError::Degenerate)
    );
    // Uncertainties so small that the weights overflow (1/(1e-200)^2 = inf): refused for
    // being outside the documented range, naming the first point's line.
    let data = synthetic(&temps, 20.0, 0.0, 50_000.0, |_| (0.0, Some(1e-200)));
    let err = fit_rate_constants(&data, &FitOptions::default()).expect_err("refused");
    assert!(messages(err).starts_with("synthetic, line 2: the relative uncertainty"));
    // Some points with an uncertainty and some without.
    let mut data = synthetic(&temps, 20.0, 0.0, 50_000.0, |_| (0.0, Some(0.1)));
    data.points[2].ln_uncertainty = None;
    let err = fit_rate_constants(&data, &FitOptions::default()).unwrap_err();
    assert_eq!(
        messages(err),
        "3 of 4 points have an uncertainty: give all or none"
    );
    // Options out of range.
    let data = synthetic(&temps, 20.0, 0.0, 50_000.0, |_| (0.0, None));
    for confidence in [0.0, 1.0, f64::NAN, -0.5] {
        let options = FitOptions {
            confidence,
            ..FitOptions::default()
        };
        assert!(matches!(
            fit_rate_constants(&data, &options),
            Err(RateFitError::BadOption(_))
        ));
    }
    let options = FitOptions {
        reference_temperature_k: Some(f64::NAN),
        ..FitOptions::default()
    };
    assert!(matches!(
        fit_rate_constants(&data, &options),
        Err(RateFitError::BadOption(_))
    ));
}

#[test]
fn accessors_check_their_indices_and_counts() {
    // Noiseless data from k = exp(20) exp(-50 kJ/mol / (R T)) (independent expectation: the
    // generating parameters come back).
    let temps = [400.0, 500.0, 600.0, 700.0];
    let data = synthetic(&temps, 20.0, 0.0, 50_000.0, |_| (0.0, None));
    let fit = fit_rate_constants(&data, &FitOptions::default()).unwrap();
    assert!((fit.parameters()[0] - 20.0).abs() < 1e-9);
    assert!(rel(fit.activation_energy_j_per_mol(), 50_000.0) < 1e-12);
    // Two parameters: indices 0 and 1 exist, 2 does not.
    assert!(fit.interval(1).is_some());
    assert_eq!(fit.interval(2), None);
    assert_eq!(fit.covariance().size(), 2);
    assert_eq!(fit.covariance().get(2, 0), None);
    assert_eq!(fit.covariance().get(0, 2), None);
    assert_eq!(fit.covariance().rows().len(), 2);
    // A correlation matrix has ones on its diagonal (definition).
    for v in fit.correlation().diagonal() {
        assert!((v - 1.0).abs() < 1e-12);
    }
    // The band is clamped to 2..=MAX_BAND_POINTS temperatures and spans the data's range.
    let band = fit.band(0);
    assert_eq!(band.len(), 2);
    assert_eq!(band[0].temperature_k, 400.0);
    assert!(rel(band[1].temperature_k, 700.0) < 1e-15);
    assert_eq!(fit.band(usize::MAX).len(), MAX_BAND_POINTS);
    // Evaluating at a NaN temperature gives NaN, not a panic.
    assert!(fit.rate_constant_si(f64::NAN).is_nan());
    assert_eq!(fit.point_count(), 4);
    assert_eq!(fit.source(), "synthetic");
}

#[test]
fn rate_constant_units_with_extreme_exponents_are_refused() {
    // (volume/amount)^(m-1)/time with exponents beyond i32 or an order beyond i32::MAX: errors
    // naming the unit, not an arithmetic overflow.
    for text in [
        "mol-2147483648 cm6442450944 s-1",
        "L2147483647 mol-2147483647 s-1",
        "s-1 s-2147483648",
        "cm99999999999 s-1",
        "",
    ] {
        let err = RateConstantUnit::parse(text).unwrap_err();
        assert!(
            matches!(err, RateFitError::BadUnit { .. }),
            "{text}: {err:?}"
        );
    }
    // A legitimate third-order unit still reads: cm6 mol-2 s-1 is (cm3/mol)^2/s, order 3;
    // SI factor (1e-6)^2 = 1e-12 (1 cm3 = 1e-6 m3).
    let u = RateConstantUnit::parse("cm6 mol-2 s-1").unwrap();
    assert_eq!(u.order(), 3);
    assert!(rel(u.to_si_factor(), 1e-12) < 1e-15);
    assert_eq!(u.label(), "cm6 mol-2 s-1");
}

#[test]
fn the_csv_reader_locates_fields_in_quoted_and_crlf_files() {
    // Comma-separated values (RFC 4180): a quoted field may hold a comma; CRLF line ends; a
    // byte-order mark and an indented comment before the header. Columns count characters
    // from 1 at the start of the field's text.
    let csv = "\u{feff}  # indented comment\r\n\"temperature [K]\", rate_constant [s-1]\r\n300, 2.0\r\n\"1,000\", 3\r\n";
    let err = parse_rate_data(csv, "q.csv").unwrap_err();
    let text = messages(err);
    // Line 4 is `"1,000", 3`: the quoted field's text starts at column 2.
    assert!(
        text.contains("q.csv:4:2: error: `1,000` is not a finite number"),
        "{text}"
    );
    // The same file without the bad row reads, with the quoted header field understood.
    let csv = "\u{feff}  # indented comment\r\n\"temperature [K]\", rate_constant [s-1]\r\n300, 2.0\r\n400, 3\r\n";
    let data = parse_rate_data(csv, "q.csv").unwrap();
    assert_eq!(data.points.len(), 2);
    assert_eq!(data.points[1].line, 4);
    assert_eq!(data.points[1].temperature_k, 400.0);
    assert_eq!(data.points[1].rate_constant_si, 3.0);
    // Every problem at once: an empty file has no header; a header alone has no rows.
    let err = parse_rate_data("", "e.csv").unwrap_err();
    assert!(messages(err).contains("e.csv:1:1: error: no header line and no data"));
    let err = parse_rate_data("temperature [K], rate_constant [s-1]\n", "h.csv").unwrap_err();
    assert!(messages(err).contains("h.csv:1:1: error: no data rows after the header"));
}

#[test]
fn non_finite_fits_are_not_written_or_plotted() {
    // A prefactor beyond the range of f64: ln A = 800 (e^800 overflows, IEEE 754 double max
    // about e^709.78), with Ea = 600 kJ/mol keeping every k finite (ln k = 800 - Ea/(R T)
    // is at most 697 at 700 K). The snippet refuses to write `inf`; the plot, in ln k, still
    // draws.
    let temps = [400.0, 500.0, 600.0, 700.0];
    let data = synthetic(&temps, 800.0, 0.0, 600_000.0, |_| (0.0, None));
    let fit = fit_rate_constants(&data, &FitOptions::default()).unwrap();
    assert!(fit.prefactor_si().is_infinite());
    let err = mechanism_snippet(&fit, None).unwrap_err();
    assert!(matches!(err, RateFitError::NonFinite { ref quantity, .. } if quantity == "prefactor"));
    // The largest k (700 K, the fourth point, line 5) drives the overflow, and the error is
    // located there.
    assert_eq!(err.line(), Some(5));
    assert!(
        err.to_string().contains("driven by the rate constant")
            && err.to_string().contains("at line 5"),
        "{err}"
    );
    let svg = svg_plot(&fit).unwrap();
    assert_eq!(markers(&svg).len(), 4 + 1);
}

#[test]
fn confidence_reference_temperature_and_uncertainties_have_documented_ranges() {
    // Documented ranges (docs/file-format.md): confidence 0.5 to 0.9999, T_ref 1 K to 1e5 K,
    // uncertainty of ln k 1e-6 to 10. At confidence 0.9999999999999999 the two-sided
    // quantile is taken at 1 - 5.6e-17, which rounds to 1 in double precision (IEEE 754):
    // an infinite quantile and NaN intervals, so it must be refused.
    assert_eq!(CONFIDENCE_RANGE, (0.5, 0.9999));
    assert_eq!(REFERENCE_TEMPERATURE_RANGE_K, (1.0, 1.0e5));
    assert_eq!(LN_UNCERTAINTY_RANGE, (1.0e-6, 10.0));
    let temps: Vec<f64> = (0..6).map(|i| 300.0 + 100.0 * i as f64).collect();
    let mut rng = Rng(12);
    let noisy: Vec<f64> = (0..6).map(|_| 0.05 * rng.normal()).collect();
    let data = synthetic(&temps, 25.0, 0.0, 80_000.0, |i| (noisy[i], None));
    let with = |confidence: f64, reference: Option<f64>| {
        fit_rate_constants(
            &data,
            &FitOptions {
                confidence,
                reference_temperature_k: reference,
                ..FitOptions::default()
            },
        )
    };
    for bad in [0.9999999999999999, 0.49, f64::NAN, 1.0] {
        let err = with(bad, None).expect_err("refused");
        assert!(messages(err).contains("between 0.5 and 0.9999"), "{bad}");
    }
    for bad in [5e-324, 1e308, 0.5] {
        let err = with(0.95, Some(bad)).expect_err("refused");
        assert!(messages(err).contains("reference temperature"), "{bad}");
    }
    // The ends of the confidence range give finite intervals: 4 degrees of freedom, Student
    // t quantile at 0.99995 = 15.544 (scipy.stats.t.ppf(0.99995, 4) = 15.5441).
    let fit = with(0.9999, None).expect("the top of the range fits");
    assert!(
        (fit.quantile() - 15.5441).abs() < 1e-3,
        "{}",
        fit.quantile()
    );
    let report = report_text(&fit);
    assert!(
        !report.contains("NaN") && !report.contains("inf"),
        "{report}"
    );
    // An uncertainty of 1e-160 (a relative uncertainty of 1e-158 %) once made the SVD panic
    // on NaN singular values; it is now refused, naming the point's line (line 4 is the third
    // point of `synthetic`).
    let tiny = synthetic(&temps, 25.0, 0.0, 80_000.0, |i| {
        (0.0, Some(if i == 2 { 1e-160 } else { 0.1 }))
    });
    let err = fit_rate_constants(&tiny, &FitOptions::default()).expect_err("refused");
    let text = messages(err);
    assert!(text.contains("line 4") && text.contains("1e-160"), "{text}");
    assert!(!text.contains("separate"), "{text}");
    // The lowest uncertainty of the range fits.
    let sharp = synthetic(&temps, 25.0, 0.0, 80_000.0, |i| {
        (0.0, Some(if i == 2 { 1e-6 } else { 0.1 }))
    });
    assert!(fit_rate_constants(&sharp, &FitOptions::default()).is_ok());
}

#[test]
fn an_undefined_correlation_is_printed_in_words() {
    // With a standard error of 0 (unweighted data exactly on the curve) a correlation is
    // 0/0, NaN in IEEE 754 arithmetic: the report says `undefined` instead.
    assert_eq!(
        crate::report::correlation_cell(f64::NAN).trim(),
        "undefined"
    );
    assert_eq!(crate::report::correlation_cell(-0.25).trim(), "-0.250000");
}

#[test]
fn an_uncertainty_outside_its_range_is_refused_at_its_cell() {
    // LN_UNCERTAINTY_RANGE is 1e-6 to 10 for the uncertainty of ln k. 1e-160 % is a relative
    // uncertainty of 1e-162 (percent / 100), a factor of 1.0000000000000002 one of
    // ln(1 + 2^-52) = 2.22e-16 (IEEE 754 machine epsilon): both are refused where they are
    // written (line 3, column 10), with every bad row reported at once.
    let err = parse_rate_data(
        "temperature [K], rate_constant [s-1], uncertainty [%]\n300, 1.0, 10\n310, 2.0, 1e-160\n",
        "tiny.csv",
    )
    .unwrap_err();
    let text = messages(err);
    assert!(
        text.contains("tiny.csv:3:11: error: uncertainty `1e-160` is a relative uncertainty of k (of ln k) of 1e-162"),
        "{text}"
    );
    let err = parse_rate_data(
        "temperature [K], rate_constant [s-1], uncertainty [factor]\n300, 1.0, 1.0000000000000002\n310, 2.0, 1e300\n",
        "f.csv",
    )
    .unwrap_err();
    let text = messages(err);
    assert!(text.contains("f.csv:2:11: error: uncertainty `1.0000000000000002` is a relative uncertainty of k (of ln k) of 2.22044604925031"), "{text}");
    // ln(1e300) = 690.8 > 10.
    assert!(
        text.contains("f.csv:3:11: error: uncertainty `1e300`"),
        "{text}"
    );
}

#[test]
fn a_prefactor_that_underflows_is_not_written() {
    // ln A = -800 (e^-800 is below the smallest subnormal double, about e^-744.4, IEEE 754),
    // with Ea = -2000 kJ/mol keeping every k representable: ln k = -800 + 2e6/(R T) is -199
    // at 400 K and -456 at 700 K. The fitted prefactor is 0 in f64, and the snippet refuses
    // to write it (a prefactor of 0 would not load back).
    let temps = [400.0, 500.0, 600.0, 700.0];
    let data = synthetic(&temps, -800.0, 0.0, -2_000_000.0, |_| (0.0, None));
    let fit = fit_rate_constants(&data, &FitOptions::default()).unwrap();
    assert_eq!(fit.prefactor_si(), 0.0);
    let err = mechanism_snippet(&fit, None).unwrap_err();
    assert!(
        matches!(err, RateFitError::NotPositive { ref quantity, .. } if quantity == "prefactor")
    );
    // The smallest k (ln k = -456 at 700 K, line 5) drives the underflow.
    assert_eq!(err.line(), Some(5));
}

#[test]
fn conclusions_about_the_whole_data_set_name_the_rows() {
    // Two points cannot fix three parameters (modified Arrhenius) with one left to estimate the
    // scatter (common practice: n - p degrees of freedom); every point at one temperature
    // cannot separate A from Ea.
    let unit = RateConstantUnit::parse("s-1").unwrap();
    let two = synthetic(&[500.0, 600.0], 20.0, 0.0, 50_000.0, |_| (0.0, None));
    let options = FitOptions {
        model: Model::ModifiedArrhenius,
        ..FitOptions::default()
    };
    let err = fit_rate_constants(&two, &options).unwrap_err();
    assert_eq!(err.line(), Some(2));
    assert!(
        err.to_string()
            .starts_with("2 data point(s) (lines 2-3) cannot determine 3"),
        "{err}"
    );
    let same = RateData {
        source: "same".to_string(),
        rate_constant_unit: unit,
        uncertainty: None,
        points: [4, 5, 9]
            .iter()
            .map(|&line| RatePoint {
                temperature_k: 800.0,
                rate_constant_si: 1e3,
                ln_uncertainty: None,
                pressure_pa: None,
                line,
            })
            .collect(),
    };
    let err = fit_rate_constants(&same, &FitOptions::default()).unwrap_err();
    assert_eq!(err.line(), Some(4));
    assert!(
        err.to_string()
            .starts_with("the points (lines 4-5, 9) are at 1 distinct temperature(s) (800 K)"),
        "{err}"
    );
}

#[test]
fn temperatures_outside_the_documented_range_are_refused_at_their_cell() {
    // DATA_TEMPERATURE_RANGE_K is 1 K to 1e5 K: 1e-300 K and 1e308 K are refused where they
    // are written (line 3 and 4, column 1), both reported at once.
    let err = parse_rate_data(
        "temperature [K], rate_constant [s-1]\n300, 1.0\n1e-300, 2.0\n1e308, 3.0\n",
        "t.csv",
    )
    .unwrap_err();
    let text = messages(err);
    assert!(
        text.contains("t.csv:3:1: error: temperature `1e-300` K is outside 1 K to 1e5 K"),
        "{text}"
    );
    assert!(
        text.contains("t.csv:4:1: error: temperature `1e308` K is outside 1 K to 1e5 K"),
        "{text}"
    );
}

#[test]
fn numbers_beyond_a_double_print_as_out_of_range() {
    // The uncertainty factor exp(se) of A overflows when se(ln A) > about 709.78 (ln of the
    // largest double); reports print words, never inf or NaN.
    assert_eq!(crate::text::sci(709.0f64.exp(), 3), "8.218e+307");
    assert_eq!(crate::text::sci(710.0f64.exp(), 3), "out of range");
    assert_eq!(crate::text::sci(f64::NAN, 3), "out of range");
}
