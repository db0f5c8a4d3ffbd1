//! Unit tests of the scenario loader and of its resolution into a run plan.

use super::*;
use std::path::PathBuf;
use std::sync::Arc;
use stoik_mechanism::{
    parse_mechanism, Diagnostic, Diagnostics, LoadError, MechanismFile, SourceLocation,
};
use stoik_reactor::{Constraint, Energy, LinearAlgebra};

/// The folder with `good.mech.toml`, a valid mechanism with species H2, O2, H, OH, H2O, AR.
fn corpus_dir() -> PathBuf {
    stoik_testsupport::tests_dir().join("bad-input")
}

fn good_mechanism() -> Arc<MechanismFile> {
    let path = corpus_dir().join("good.mech.toml");
    let text = std::fs::read_to_string(&path).expect("corpus mechanism");
    Arc::new(parse_mechanism(&text, "good.mech.toml").expect("good mechanism loads"))
}

/// The scenario resolved against the corpus mechanism.
fn plan(s: &Scenario) -> Result<RunPlan, ScenarioError> {
    RunPlan::new(s.clone(), Diagnostics::default(), good_mechanism())
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
    assert_eq!(s.constraint, Constraint::ConstantVolume);
    assert_eq!(s.energy, Energy::Isothermal);
    assert_eq!(s.kind_label(), "isothermal-constant-volume");
    assert_eq!(s.output, OutputTimes::Linear { points: 101 });
    // Defaults of the format: rtol 1e-6, atol 1e-12 mol/m3, auto, 100000 steps.
    assert_eq!(s.relative_tolerance, 1e-6);
    assert_eq!(s.absolute_tolerance_mol_per_m3, 1e-12);
    assert_eq!(s.linear_algebra, LinearAlgebra::Auto);
    assert_eq!(s.max_steps, 100_000);
    assert_eq!(s.newton_tolerance, None);
    assert!(s.keep_invariants);
    assert!(s.mechanism_path.ends_with("good.mech.toml"));
    let resolved = plan(&s).expect("resolves");
    // Species order of good.mech.toml: H2, O2, H, OH, H2O, AR.
    let initial = resolved.initial_mol_per_m3();
    assert!(rel(initial[0], 2.0) < 1e-15);
    assert_eq!(initial[1], 1.5);
    assert_eq!(&initial[2..], &[0.0; 4]);
    // Linear grid with 101 points: 0, 1.2, ..., 120 s.
    let times = resolved.output_times_s();
    assert_eq!(times.len(), 101);
    assert_eq!(times[0], 0.0);
    assert!(rel(times[1], 1.2) < 1e-14);
    assert_eq!(times[100], 120.0);
    // The plan's options carry the file's defaults.
    assert_eq!(resolved.options().relative_tolerance, 1e-6);
    assert_eq!(resolved.options().max_steps, 100_000);
    assert!(resolved.options().non_negative);
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
    let mut planned = plan(&s).expect("resolves");
    let c = planned.initial_mol_per_m3().to_vec();
    assert!(rel(c[0], 0.25 * total) < 1e-12);
    assert!(rel(c[1], 0.05 * total) < 1e-12);
    assert!(rel(c[5], 0.7 * total) < 1e-12);
    assert!(rel(c.iter().sum::<f64>(), total) < 1e-12);
    // A temperature override converts the mole fractions again: twice T, half c.
    planned
        .set_temperature_k(2.0 * 298.15)
        .expect("valid override");
    let c_hot = planned.initial_mol_per_m3();
    assert!(rel(c_hot[0], 0.5 * c[0]) < 1e-12);
    assert_eq!(planned.temperature_k(), 2.0 * 298.15);
    // So does a pressure override: twice P, c back to the 298.15 K values.
    planned
        .set_pressure_pa(2.0 * 101_325.0)
        .expect("valid override");
    assert!(rel(planned.initial_mol_per_m3()[0], c[0]) < 1e-12);
    // A rejected override leaves the plan as it was.
    assert!(planned.set_temperature_k(-1.0).is_err());
    assert!(planned.set_relative_tolerance(1.5).is_err());
    assert_eq!(planned.temperature_k(), 2.0 * 298.15);
    assert_eq!(planned.options().relative_tolerance, 1e-6);
}

#[test]
fn output_grids_lists_and_units() {
    // Log grid from 1e-6 s to 1 s with 7 points: one point per decade (hand computed).
    let s = scenario(
        "[reactor]\ntemperature = \"1000 K\"\n[initial]\nconcentrations = { H2 = 1 }\n[output]\nend_time = \"1000 ms\"\ngrid = { spacing = \"log\", first = \"1 us\", points = 7 }\nconcentration_unit = \"molecule/cm3\"\n[solver]\nabsolute_tolerance = 1e3\nabsolute_tolerance_for = { OH = \"1e-9 mol/m3\" }\nlinear_algebra = \"sparse\"\nmax_steps = 500\n",
    );
    let mut r = plan(&s).expect("resolves");
    let expected = [0.0, 1e-6, 1e-5, 1e-4, 1e-3, 1e-2, 1e-1, 1.0];
    assert_eq!(r.output_times_s().len(), expected.len());
    for (t, e) in r.output_times_s().iter().zip(expected) {
        assert!(*t == e || rel(*t, e) < 1e-12, "{t} vs {e}");
    }
    // atol 1e3 molecule/cm3 = 1e3 * 1e6 / N_A mol/m3 (SI 2019 exact Avogadro constant).
    let atol = 1e9 / 6.022_140_76e23;
    let tolerances = &r.options().absolute_tolerances_mol_per_m3;
    assert!(rel(tolerances[0], atol) < 1e-12);
    assert_eq!(tolerances[3], 1e-9);
    assert_eq!(s.linear_algebra, LinearAlgebra::Sparse);
    assert_eq!(r.options().linear_algebra, LinearAlgebra::Sparse);
    // An end-time override moves the log grid's last decade: 1e-6 s to 10 s in 7 points.
    r.set_end_time_s(10.0).expect("valid override");
    assert_eq!(r.output_times_s().len(), 8);
    assert!(rel(r.output_times_s()[6], 10f64.powf(1.0 - 7.0 / 6.0)) < 1e-12);
    assert_eq!(r.output_times_s()[7], 10.0);
    // An absolute-tolerance override replaces the per-species ones too.
    r.set_absolute_tolerance_mol_per_m3(1e-3)
        .expect("valid override");
    assert!(r
        .options()
        .absolute_tolerances_mol_per_m3
        .iter()
        .all(|&a| a == 1e-3));
    assert_eq!(s.max_steps, 500);
    assert_eq!(s.output_concentration_unit.label(), "molecule/cm3");

    // Explicit list: 0 is prepended, end_time appended.
    let list = scenario(
        "[reactor]\ntemperature = 300\n[initial]\nconcentrations = { H2 = 1 }\n[output]\nend_time = 40\ntimes = [0.4, \"4000 ms\", 20]\n",
    );
    let mut r = plan(&list).expect("resolves");
    assert_eq!(r.output_times_s(), &[0.0, 0.4, 4.0, 20.0, 40.0]);
    // An end time before a listed time is refused and leaves the plan unchanged.
    assert!(r.set_end_time_s(10.0).is_err());
    assert_eq!(r.output_times_s(), &[0.0, 0.4, 4.0, 20.0, 40.0]);
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
    // The documented range of temperatures is 1 K to 1e5 K (docs/file-format.md).
    assert!(got[0]
        .2
        .contains("`temperature` is -5 K; it must be between 1 and 100000 K"));
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
    let Err(ScenarioError::Load(LoadError::Invalid { diagnostics })) = plan(&s) else {
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

#[test]
fn solver_keys_ignition_and_kind_reach_the_reactor_terms() {
    let s = scenario(
        "[reactor]\nkind = \"adiabatic-constant-pressure\"\ntemperature = 1000\n[initial]\nconcentrations = { H2 = 1 }\n[output]\nend_time = 1\n[solver]\nnewton_tolerance = 0.2\nkeep_invariants = false\n[ignition]\ncriterion = \"species-peak\"\nspecies = \"OH\"\n",
    );
    assert_eq!(s.newton_tolerance, Some(0.2));
    assert!(!s.keep_invariants);
    // The energy balance needs thermochemistry (good.mech.toml has none): resolve against
    // the bundled hydrogen-oxygen mechanism, whose species order is H2, O2, H2O, OH, ...
    let hydrogen = stoik_testsupport::mechanisms_dir().join("hydrogen-oxygen.toml");
    let file = Arc::new(stoik_mechanism::load_mechanism(&hydrogen).expect("bundled mechanism"));
    let p = RunPlan::new(s.clone(), Diagnostics::default(), file).expect("resolves");
    assert_eq!(p.model().constraint, Constraint::ConstantPressure);
    assert_eq!(p.model().energy, Energy::Adiabatic);
    assert_eq!(p.options().newton_tolerance, Some(0.2));
    assert!(!p.options().keep_invariants);
    // OH is species 3 of hydrogen-oxygen.toml (H2, O2, H2O, OH, ...).
    assert_eq!(
        p.ignition(),
        Some(stoik_reactor::IgnitionCriterion::SpeciesMaximum(3))
    );
    assert_eq!(
        p.options().watch,
        vec![
            stoik_reactor::Watch::Maximum(stoik_reactor::Quantity::Concentration(3)),
            stoik_reactor::Watch::Maximum(stoik_reactor::Quantity::Temperature)
        ]
    );

    let diags = scenario_errors(
        "[reactor]\ntemperature = 1000\n[initial]\nconcentrations = { H2 = 1 }\n[output]\nend_time = 1\n[solver]\nnewton_tolerance = 0\nkeep_invariants = 1\n",
    );
    // Lines: 1 version, 2 mechanism, 3 [reactor], 4 temperature, 5 [initial],
    // 6 concentrations, 7 [output], 8 end_time, 9 [solver], 10 newton_tolerance,
    // 11 keep_invariants.
    assert_eq!(diags.len(), 2, "{diags:#?}");
    assert_eq!(
        diags[0].location.map(|l| (l.line, l.column)),
        Some((10, 20))
    );
    assert!(diags[0].message.contains("`newton_tolerance` is zero"));
    assert_eq!(
        diags[1].location.map(|l| (l.line, l.column)),
        Some((11, 19))
    );
    assert!(diags[1].message.contains("must be true or false"));
}

#[test]
fn a_prescribed_history_is_the_reactors_and_refuses_a_temperature_override() {
    let s = scenario(
        "[reactor]\nkind = \"prescribed-temperature-constant-volume\"\ntemperature_history = { times = [0, \"2 ms\"], temperatures = [\"900 K\", \"1300 K\"] }\n[initial]\nconcentrations = { H2 = 1 }\n[output]\nend_time = \"4 ms\"\n",
    );
    let Energy::Prescribed(history) = &s.energy else {
        panic!("expected a prescribed history, got {:?}", s.energy);
    };
    // Linear between the points: 1100 K half way (hand computed).
    assert!((history.temperature_at(1e-3) - 1100.0).abs() < 1e-9);
    assert_eq!(s.temperature_k, 900.0);
    assert_eq!(s.kind_label(), "prescribed-temperature-constant-volume");
    let mut p = plan(&s).expect("resolves");
    assert_eq!(p.planned_temperature_span_k(), (900.0, 1300.0));
    assert!(matches!(
        p.set_temperature_k(1000.0),
        Err(ScenarioError::TemperaturePrescribed)
    ));
    assert_eq!(p.ignition(), None);
}

#[test]
fn a_grid_whose_profile_exceeds_the_memory_limit_is_refused_at_its_key() {
    // 6 species (H2, O2, H, OH, H2O, AR): per row (6 + 4) * 8 + 24 = 104 bytes.
    assert_eq!(profile_bytes(1, 6), 104);
    assert_eq!(profile_bytes(usize::MAX, usize::MAX), u64::MAX);
    // 10,000,000 rows (the grid's own maximum) need 1,040,000,000 bytes = 991 MiB, above
    // the 512 MiB limit: refused when the plan is made, at line 9 (the `grid` key), with
    // the size it would need.
    let s = scenario(
        "[reactor]\ntemperature = 300\n[initial]\nconcentrations = { H2 = 1.0 }\n[output]\nend_time = \"1 s\"\ngrid = { spacing = \"linear\", points = 10000000 }\n",
    );
    let Err(ScenarioError::Load(LoadError::Invalid { diagnostics })) = plan(&s) else {
        panic!("a 10,000,000-row profile was planned");
    };
    let d = &diagnostics.0[0];
    assert_eq!(d.location, Some(SourceLocation { line: 9, column: 1 }));
    assert!(d.message.contains("991 MiB"), "{}", d.message);
    // 1,000,000 rows need 99 MiB: planned.
    let s = scenario(
        "[reactor]\ntemperature = 300\n[initial]\nconcentrations = { H2 = 1.0 }\n[output]\nend_time = \"1 s\"\ngrid = { spacing = \"linear\", points = 1000000 }\n",
    );
    let mut p = plan(&s).expect("a 99 MiB profile is planned");
    // An override that resolves the plan again is checked too, and refused without change.
    assert!(p
        .set_output_times(OutputTimes::Linear { points: 10_000_000 })
        .is_err());
    assert_eq!(p.output_times_s().len(), 1_000_000);
}

/// The diagnostics of a scenario that parses but does not resolve.
fn plan_errors(body: &str) -> Vec<Diagnostic> {
    match plan(&scenario(body)) {
        Ok(_) => panic!("expected the plan to be refused"),
        Err(ScenarioError::Load(LoadError::Invalid { diagnostics })) => diagnostics.0,
        Err(e) => panic!("unexpected {e}"),
    }
}

/// The one error of `errors`, with its line and column.
fn only_error(errors: &[Diagnostic]) -> (usize, usize, &str) {
    assert_eq!(errors.len(), 1, "{errors:?}");
    let at = errors[0].location.expect("located");
    (at.line, at.column, errors[0].message.as_str())
}

#[test]
fn zero_total_concentration_is_refused_at_the_initial_key() {
    // Mole fractions are c_i / sum c: with every concentration 0 the quotient is 0/0, NaN in
    // IEEE 754 arithmetic, so the plan must refuse the scenario (issue 12, section 3). The
    // scenario text puts `concentrations` on line 6, column 1.
    let errors = plan_errors(
        "[reactor]\ntemperature = 300\n[initial]\nconcentrations = { H2 = 0, O2 = 0.0 }\n[output]\nend_time = 1\n",
    );
    let (line, column, message) = only_error(&errors);
    assert_eq!((line, column), (6, 1));
    assert!(
        message.contains("every initial concentration is zero"),
        "{message}"
    );
}

#[test]
fn temperature_and_pressure_outside_their_documented_ranges_are_refused() {
    // The documented ranges (docs/file-format.md): 1 K <= T <= 1e5 K, 1e-9 Pa <= P <= 1e10 Pa.
    // At T = 1e308 K and P = 1 atm, P/(R T) underflows to 0 (IEEE 754), the zero total of the
    // test above; at P = 5e-324 Pa likewise.
    assert_eq!(TEMPERATURE_RANGE_K, (1.0, 1.0e5));
    assert_eq!(PRESSURE_RANGE_PA, (1.0e-9, 1.0e10));
    let errors = scenario_errors(
        "[reactor]\ntemperature = 1e308\npressure = 5e-324\n[initial]\nmole_fractions = { AR = 1 }\n[output]\nend_time = 1\n",
    );
    assert_eq!(errors.len(), 2, "{errors:?}");
    let at: Vec<(usize, usize)> = errors
        .iter()
        .map(|d| d.location.map(|l| (l.line, l.column)).unwrap_or_default())
        .collect();
    assert_eq!(at, vec![(4, 15), (5, 12)]);
    assert!(errors[0].message.contains("`temperature` is 1e308 K"));
    assert!(errors[1].message.contains("`pressure`"));
    // The lowest and highest values of the ranges themselves are accepted.
    let s = scenario(
        "[reactor]\ntemperature = 1e5\npressure = 1e-9\n[initial]\nmole_fractions = { AR = 1 }\n[output]\nend_time = 1\n",
    );
    let c = plan(&s)
        .expect("the ends of the ranges resolve")
        .initial_mol_per_m3()[5];
    // Ideal gas: c = P / (R T) with R = 8.314462618 J/(mol K) (CODATA 2018).
    assert!(rel(c, 1e-9 / (8.314_462_618 * 1e5)) < 1e-12);
    // The override methods enforce the same ranges and leave the plan unchanged.
    let mut p = plan(&s).expect("resolves");
    assert!(p.set_temperature_k(1e308).is_err());
    assert!(p.set_temperature_k(0.5).is_err());
    assert!(p.set_pressure_pa(5e-324).is_err());
    assert!(p.set_end_time_s(1e308).is_err());
    assert_eq!(p.temperature_k(), 1e5);
}

#[test]
fn output_times_that_are_not_distinct_are_refused_at_their_key() {
    // An end time of 5e-324 s (the smallest subnormal double) on the default 101-point grid
    // gives times that round to 0 or 5e-324 (IEEE 754), not strictly increasing.
    let errors = plan_errors(
        "[reactor]\ntemperature = 300\n[initial]\nconcentrations = { H2 = 1 }\n[output]\nend_time = 5e-324\n",
    );
    let (line, column, message) = only_error(&errors);
    assert_eq!((line, column), (8, 1));
    assert!(message.contains("not distinct"), "{message}");
    // An end time above the documented 1e15 s is refused by the reader, located.
    let errors = scenario_errors(
        "[reactor]\ntemperature = 300\n[initial]\nconcentrations = { H2 = 1 }\n[output]\nend_time = 1e308\n",
    );
    let (line, column, _) = only_error(&errors);
    assert_eq!((line, column), (8, 12));
    // At the largest end time the linear grid stays finite: t_1 = 1e15 / 100 exactly
    // (i/(n-1) is formed first).
    let s = scenario(
        "[reactor]\ntemperature = 300\n[initial]\nconcentrations = { H2 = 1 }\n[output]\nend_time = 1e15\n",
    );
    assert_eq!(MAX_END_TIME_S, 1e15);
    assert_eq!(plan(&s).expect("resolves").output_times_s()[1], 1e13);
}

#[test]
fn box_values_that_the_reactor_refuses_are_refused_at_their_key() {
    // Emissions must be finite and not negative, as must the zenith-angle exponents
    // (cos(zenith)^cos_power is not bounded for a negative power as the sun sets); each
    // value is reported where it is written.
    let errors = scenario_errors(
        "[reactor]\ntemperature = 300\n[initial]\nconcentrations = { H2 = 1 }\n[output]\nend_time = 1\n[box]\nemissions = { H2 = 1e308, O2 = -1 }\n[sun]\nlatitude = 45\nday_of_year = 172\n[[photolysis]]\nstep = \"H2 -> 2 H\"\ndiurnal = { scale = 1e-3, cos_power = -1 }\n",
    );
    let at: Vec<(usize, usize)> = errors
        .iter()
        .map(|d| d.location.map(|l| (l.line, l.column)).unwrap_or_default())
        .collect();
    // 1e308 mol/m3/s is finite; "1e308 molecule/cm3/s" is too, but 1e308 mol/cm3/s overflows.
    assert_eq!(at, vec![(10, 32), (16, 39)], "{errors:?}");
    assert!(errors[0].message.contains("emission of `O2` is -1"));
    assert!(errors[1].message.contains("`cos_power` is -1"));
    let errors = scenario_errors(
        "[reactor]\ntemperature = 300\n[initial]\nconcentrations = { H2 = 1 }\n[output]\nend_time = 1\n[box]\nemissions = { H2 = \"1e308 mol/cm3/s\" }\n[[photolysis]]\nstep = \"H2 -> 2 H\"\ndiurnal = { scale = 1e-3, cos_power = 1 }\n",
    );
    let (line, column, _) = (
        errors[0].location.expect("located").line,
        errors[0].location.expect("located").column,
        (),
    );
    assert_eq!((line, column), (10, 20), "{errors:?}");
    assert!(errors[0].message.contains("infinite") || errors[0].message.contains("inf"));
    // The zenith-angle form without a [sun] is reported at the entry's `diurnal`.
    assert_eq!(errors.len(), 2, "{errors:?}");
    let sun = errors[1].location.expect("located");
    assert_eq!((sun.line, sun.column), (13, 11));
    assert!(errors[1].message.contains("needs a [sun] section"));
}

#[test]
fn the_energy_balance_names_the_species_without_thermochemistry() {
    // good.mech.toml gives no thermochemistry: the adiabatic reactor needs cp and U of
    // every species (energy balance of a closed constant-volume reactor), so the plan is
    // refused at `kind` (line 4, column 1) naming the species, not their indices.
    let errors = plan_errors(
        "[reactor]\nkind = \"adiabatic-constant-volume\"\ntemperature = 300\n[initial]\nconcentrations = { H2 = 1 }\n[output]\nend_time = 1\n",
    );
    let (line, column, message) = only_error(&errors);
    assert_eq!((line, column), (4, 1));
    for name in ["`H2`", "`O2`", "`H`", "`OH`", "`H2O`", "`AR`"] {
        assert!(message.contains(name), "{message}");
    }
}

/// A step whose rate constant is finite from 200 K to 3500 K but overflows at the scenario's
/// 5000 K: k = 1e-50 T^100 s-1 has log10 k = -50 + 100 log10 T = 304.4 at 3500 K and 319.9 at
/// 5000 K, past the largest IEEE 754 double (about 1.8e308). The plan refuses to run it,
/// located at the step, as `check` reports it; at 1000 K (k = 1e250 s-1, finite) it is not
/// refused.
#[test]
fn a_rate_constant_that_overflows_at_the_planned_temperature_is_refused_before_running() {
    let dir = std::env::temp_dir().join(format!("stoik-hot-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("scratch folder");
    std::fs::write(
        dir.join("hot.toml"),
        "stoik_mechanism = 1\n[units]\namount = \"mol\"\nlength = \"m\"\ntime = \"s\"\n\
         [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n\
         [[step]]\nequation = \"A -> B\"\n\
         forward = { prefactor = 1e-50, temperature_exponent = 100 }\n",
    )
    .expect("writes the mechanism");
    let scenario_path = dir.join("hot.scenario.toml");
    std::fs::write(
        &scenario_path,
        "stoik_scenario = 1\nmechanism = \"hot.toml\"\n[reactor]\ntemperature = \"5000 K\"\n\
         [initial]\nconcentrations = { A = 1 }\n[output]\nend_time = \"1 s\"\n",
    )
    .expect("writes the scenario");
    let mut p = RunPlan::load(&scenario_path).expect("loads and resolves");
    std::fs::remove_dir_all(&dir).expect("removes the scratch folder");
    let kinetics = stoik_kinetics::Kinetics::compile(p.mechanism()).expect("compiles");
    let errors = p.rate_constant_errors(&kinetics);
    assert_eq!(errors.len(), 1, "{errors:?}");
    assert_eq!(
        errors[0].location.map(|l| (l.line, l.column)),
        Some((10, 1))
    ); // the `[[step]]` header
    assert!(
        errors[0].message.contains("is inf at 5000 K"),
        "{}",
        errors[0].message
    );
    match p.run() {
        Err(ScenarioError::Load(LoadError::Invalid { diagnostics })) => {
            assert_eq!(diagnostics.0, errors)
        }
        other => panic!("expected the run to be refused, got {other:?}"),
    }
    let batch = run_batch(std::slice::from_ref(&p), &|| {});
    assert!(matches!(
        batch[0],
        Err(ScenarioError::Load(LoadError::Invalid { .. }))
    ));
    p.set_temperature_k(1000.0).expect("in range");
    assert!(p.rate_constant_errors(&kinetics).is_empty());
}
