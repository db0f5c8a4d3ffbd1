//! Unit tests of the scenario loader.

use super::*;
use crate::parse_mechanism;

/// The folder with `good.mech.toml`, a valid mechanism with species H2, O2, H, OH, H2O, AR.
fn corpus_dir() -> PathBuf {
    PathBuf::from(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../tests/bad-input"
    ))
}

fn good_mechanism() -> Mechanism {
    let path = corpus_dir().join("good.mech.toml");
    let text = std::fs::read_to_string(&path).expect("corpus mechanism");
    parse_mechanism(&text, "good.mech.toml")
        .expect("good mechanism loads")
        .mechanism
}

fn scenario(body: &str) -> Scenario {
    let text = format!("stoik_scenario = 1\nmechanism = \"good.mech.toml\"\n{body}");
    match parse_scenario(&text, "s.toml", &corpus_dir()) {
        Ok((s, _)) => s,
        Err(e) => panic!("expected a clean scenario, got:\n{e}"),
    }
}

fn scenario_errors(body: &str) -> Vec<Diagnostic> {
    let text = format!("stoik_scenario = 1\nmechanism = \"good.mech.toml\"\n{body}");
    match parse_scenario(&text, "s.toml", &corpus_dir()) {
        Ok(_) => panic!("expected errors"),
        Err(LoadError::Invalid { diagnostics }) => diagnostics.0,
        Err(e) => panic!("unexpected {e}"),
    }
}

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

#[test]
fn quantities_with_units_and_defaults() {
    // Sources: 1 atm = 101325 Pa (definition), 25 C = 298.15 K (definition of the Celsius
    // scale), 1 mol/L = 1000 mol/m3, 2 min = 120 s.
    let s = scenario(
        "[reactor]\ntemperature = \"25 C\"\npressure = \"1 atm\"\n[initial]\nconcentrations = { H2 = \"2e-3 mol/L\", O2 = 1.5 }\n[output]\nend_time = \"2 min\"\n",
    );
    assert!(rel(s.temperature_k, 298.15) < 1e-15);
    assert_eq!(s.pressure_pa, Some(101_325.0));
    assert_eq!(s.end_time_s, 120.0);
    assert_eq!(s.reactor, ReactorKind::IsothermalConstantVolume);
    assert_eq!(s.output, OutputTimes::Linear { points: 101 });
    // Defaults of the format: rtol 1e-6, atol 1e-12 mol/m3, auto, 100000 steps.
    assert_eq!(s.relative_tolerance, 1e-6);
    assert_eq!(s.absolute_tolerance_mol_per_m3, 1e-12);
    assert_eq!(s.linear_algebra, LinearAlgebraChoice::Auto);
    assert_eq!(s.max_steps, 100_000);
    assert!(s.mechanism_path.ends_with("good.mech.toml"));
    let resolved = s.resolve(&good_mechanism()).expect("resolves");
    // Species order of good.mech.toml: H2, O2, H, OH, H2O, AR.
    assert!(rel(resolved.initial_concentrations_mol_per_m3[0], 2.0) < 1e-15);
    assert_eq!(resolved.initial_concentrations_mol_per_m3[1], 1.5);
    assert_eq!(&resolved.initial_concentrations_mol_per_m3[2..], &[0.0; 4]);
    // Linear grid with 101 points: 0, 1.2, ..., 120 s.
    assert_eq!(resolved.output_times_s.len(), 101);
    assert_eq!(resolved.output_times_s[0], 0.0);
    assert!(rel(resolved.output_times_s[1], 1.2) < 1e-14);
    assert_eq!(resolved.output_times_s[100], 120.0);
}

#[test]
fn mole_fractions_become_ideal_gas_concentrations() {
    // Ideal gas law c = x P / (R T) (textbook); at 1 atm and 298.15 K the total is
    // 101325 / (8.314462618 * 298.15) = 40.874 mol/m3, computed here independently.
    let s = scenario(
        "[reactor]\ntemperature = 298.15\npressure = \"101.325 kPa\"\n[initial]\nmole_fractions = { H2 = 0.25, O2 = 0.05, AR = 0.7 }\n[output]\nend_time = 1\n",
    );
    let total: f64 = 101_325.0 / (8.314_462_618 * 298.15);
    assert!((total - 40.874).abs() < 1e-3);
    let c = s
        .resolve(&good_mechanism())
        .expect("resolves")
        .initial_concentrations_mol_per_m3;
    assert!(rel(c[0], 0.25 * total) < 1e-12);
    assert!(rel(c[1], 0.05 * total) < 1e-12);
    assert!(rel(c[5], 0.7 * total) < 1e-12);
    assert!(rel(c.iter().sum::<f64>(), total) < 1e-12);
    // Changing the public temperature (a command-line override) changes the concentrations.
    let mut hot = s.clone();
    hot.temperature_k = 2.0 * 298.15;
    let c_hot = hot
        .resolve(&good_mechanism())
        .expect("resolves")
        .initial_concentrations_mol_per_m3;
    assert!(rel(c_hot[0], 0.5 * c[0]) < 1e-12);
}

#[test]
fn output_grids_lists_and_units() {
    // Log grid from 1e-6 s to 1 s with 7 points: one point per decade (hand computed).
    let s = scenario(
        "[reactor]\ntemperature = \"1000 K\"\n[initial]\nconcentrations = { H2 = 1 }\n[output]\nend_time = \"1000 ms\"\ngrid = { spacing = \"log\", first = \"1 us\", points = 7 }\nconcentration_unit = \"molecule/cm3\"\n[solver]\nabsolute_tolerance = 1e3\nabsolute_tolerance_for = { OH = \"1e-9 mol/m3\" }\nlinear_algebra = \"sparse\"\nmax_steps = 500\n",
    );
    let r = s.resolve(&good_mechanism()).expect("resolves");
    let expected = [0.0, 1e-6, 1e-5, 1e-4, 1e-3, 1e-2, 1e-1, 1.0];
    assert_eq!(r.output_times_s.len(), expected.len());
    for (t, e) in r.output_times_s.iter().zip(expected) {
        assert!(*t == e || rel(*t, e) < 1e-12, "{t} vs {e}");
    }
    // atol 1e3 molecule/cm3 = 1e3 * 1e6 / N_A mol/m3 (SI 2019 exact Avogadro constant).
    let atol = 1e9 / 6.022_140_76e23;
    assert!(rel(r.absolute_tolerances_mol_per_m3[0], atol) < 1e-12);
    assert_eq!(r.absolute_tolerances_mol_per_m3[3], 1e-9);
    assert_eq!(s.linear_algebra, LinearAlgebraChoice::Sparse);
    assert_eq!(s.max_steps, 500);
    assert_eq!(s.output_concentration_unit.label(), "molecule/cm3");

    // Explicit list: 0 is prepended, end_time appended.
    let list = scenario(
        "[reactor]\ntemperature = 300\n[initial]\nconcentrations = { H2 = 1 }\n[output]\nend_time = 40\ntimes = [0.4, \"4000 ms\", 20]\n",
    );
    let r = list.resolve(&good_mechanism()).expect("resolves");
    assert_eq!(r.output_times_s, vec![0.0, 0.4, 4.0, 20.0, 40.0]);
}

#[test]
fn scenario_problems_are_all_reported_with_locations() {
    let diags = scenario_errors(
        "[reactor]\ntemperature = \"-5 K\"\npresure = \"1 atm\"\n[initial]\nconcentrations = { H2 = -1 }\n[output]\nend_time = \"1 fortnight\"\ntimes = [2, 1]\n",
    );
    let got: Vec<(usize, usize, String)> = diags
        .iter()
        .map(|d| {
            let l = d.location.unwrap_or_default();
            (l.line, l.column, d.message.clone())
        })
        .collect();
    // Lines: 1 version, 2 mechanism, 3 [reactor], 4 temperature, 5 presure, 6 [initial],
    // 7 concentrations, 8 [output], 9 end_time, 10 times.
    assert_eq!(got.len(), 5, "{got:#?}");
    assert_eq!((got[0].0, got[0].1), (4, 15));
    assert!(got[0].2.contains("`temperature` is negative"));
    assert_eq!((got[1].0, got[1].1), (5, 1));
    assert_eq!(diags[1].help.as_deref(), Some("did you mean `pressure`?"));
    assert_eq!((got[2].0, got[2].1), (7, 25));
    assert!(got[2].2.contains("initial concentration of `H2` is -1"));
    assert_eq!((got[3].0, got[3].1), (9, 12));
    assert!(got[3].2.contains("unknown unit `fortnight`"));
    assert_eq!((got[4].0, got[4].1), (10, 13));
    assert!(got[4].2.contains("strictly increasing"));
}

#[test]
fn unknown_species_resolve_with_location_and_suggestion() {
    let s = scenario(
        "[reactor]\ntemperature = 300\n[initial]\nconcentrations = { H2 = 1, H2O2 = 2 }\n[output]\nend_time = 1\n[solver]\nabsolute_tolerance_for = { oh = 1e-3 }\n",
    );
    let Err(LoadError::Invalid { diagnostics }) = s.resolve(&good_mechanism()) else {
        panic!("expected unknown species");
    };
    assert_eq!(diagnostics.error_count(), 2);
    let first = &diagnostics.0[0];
    assert_eq!(
        first.location,
        Some(SourceLocation {
            line: 6,
            column: 28
        })
    );
    assert!(first.message.contains("unknown species `H2O2`"));
    assert_eq!(first.help.as_deref(), Some("did you mean `H2O`?"));
    let second = &diagnostics.0[1];
    assert_eq!(
        second.location,
        Some(SourceLocation {
            line: 10,
            column: 28
        })
    );
    assert_eq!(second.help.as_deref(), Some("did you mean `OH`?"));
}

#[test]
fn mole_fractions_must_sum_to_one_and_need_pressure() {
    let diags = scenario_errors(
        "[reactor]\ntemperature = 300\n[initial]\nmole_fractions = { H2 = 0.5, O2 = 0.4 }\n[output]\nend_time = 1\n",
    );
    let messages: Vec<&str> = diags.iter().map(|d| d.message.as_str()).collect();
    assert_eq!(messages.len(), 2, "{messages:?}");
    assert!(messages[0].contains("need `pressure`"));
    assert!(messages[1].contains("mole fractions sum to 0.9"));
}
