//! Regression suites end to end through the library: record, verify, tolerances at their
//! edges, provenance, bad input, thread independence. Each check names its outside source.

use std::path::{Path, PathBuf};
use stoik_suite::{
    parse_baseline, prepare_cases, record, record_prepared, verify, Baseline, BaselineCase,
    InputFile, InputRole, RecordOptions, RecordedValue, Status, Suite, SuiteError, Verdict,
    VerifyOptions,
};
use stoik_testsupport::mechanisms_dir;

/// A fresh scratch folder for one test.
fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("stoik-suite-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch folder");
    dir
}

fn write(path: &Path, text: &str) {
    std::fs::write(path, text).expect("write test file");
}

/// A -> B with rate constant `k` (1/s), a scenario at A = 1 mol/m3 to 10 s.
fn decay_files(dir: &Path, k: f64) {
    write(
        &dir.join("decay.toml"),
        &format!(
            "stoik_mechanism = 1\n[units]\namount = \"mol\"\nlength = \"m\"\n[[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n[[step]]\nequation = \"A -> B\"\nforward = {{ prefactor = {k:e} }}\n"
        ),
    );
    write(
        &dir.join("decay.scenario.toml"),
        "stoik_scenario = 1\nmechanism = \"decay.toml\"\n[reactor]\ntemperature = \"300 K\"\n[initial]\nconcentrations = { A = 1.0 }\n[output]\nend_time = \"10 s\"\ngrid = { spacing = \"linear\", points = 2001 }\n[solver]\nrelative_tolerance = 1e-10\nabsolute_tolerance = 1e-16\n",
    );
}

fn decay_suite(dir: &Path, half_life_factor: f64) -> PathBuf {
    let path = dir.join("decay.suite.toml");
    write(
        &path,
        &format!(
            r#"stoik_suite = 1
title = "first-order decay"
[[case]]
name = "decay"
scenario = "decay.scenario.toml"
[[case.observable]]
name = "half-life"
kind = "crossing-time"
species = "A"
level = 0.5
tolerance = {{ factor = {half_life_factor} }}
[[case.observable]]
name = "A"
kind = "concentration"
species = "A"
time = "500 ms"
[[case.observable]]
name = "x_B"
kind = "mole-fraction"
species = "B"
time = 0.5
[[case.observable]]
name = "A integral"
kind = "integral"
species = "A"
"#
        ),
    );
    path
}

fn no_progress() {}

#[test]
fn first_order_half_life_and_its_tolerance_edge() {
    let dir = scratch("decay");
    let k = 2.0;
    decay_files(&dir, k);
    let f = 1.1;
    // The half-life moves by exactly 1/f when k is scaled by f; tolerances just above and
    // just below that factor.
    let loose = decay_suite(&dir, f * (1.0 + 1e-5));
    let suite = Suite::load(&loose).expect("suite loads");
    let recording = record(&suite, &RecordOptions::default(), &no_progress).expect("records");
    let case = &recording.baseline.cases[0];
    // First-order decay c_A = c0 exp(-k t) (closed form): half-life ln 2 / k,
    // c_A(0.5 s) = exp(-1), x_B(0.5 s) = 1 - exp(-1).
    let half_life = case.value("half-life").expect("recorded").value;
    assert!(
        (half_life / (2f64.ln() / k) - 1.0).abs() < 1e-7,
        "{half_life}"
    );
    let a = case.value("A").expect("recorded").value;
    assert!((a - (-1f64).exp()).abs() < 1e-8, "{a}");
    let xb = case.value("x_B").expect("recorded").value;
    assert!((xb - (1.0 - (-1f64).exp())).abs() < 1e-8, "{xb}");
    // Integral of c0 exp(-k t) from 0 to 10 s: (1 - exp(-20)) / k, taken on the solver's
    // steps: accurate to the run's tolerance (rtol 1e-10).
    let integral = case.value("A integral").expect("recorded").value;
    let exact = (1.0 - (-20f64).exp()) / k;
    assert!(
        (integral / exact - 1.0).abs() < 1e-8,
        "{integral} vs {exact}"
    );

    decay_files(&dir, k * f);
    let verified = verify(
        &suite,
        &recording.baseline,
        &VerifyOptions::default(),
        &no_progress,
    )
    .expect("verifies");
    let half = verified
        .observables()
        .find(|o| o.name == "half-life")
        .expect("reported");
    let factor = half.factor().expect("a factor");
    assert!(
        (factor * f - 1.0).abs() < 1e-7,
        "factor {factor}, expected 1/{f}"
    );
    assert_eq!(half.status, Status::Pass);

    let tight = decay_suite(&dir, f * (1.0 - 1e-5));
    let suite = Suite::load(&tight).expect("suite loads");
    let verified = verify(
        &suite,
        &recording.baseline,
        &VerifyOptions::default(),
        &no_progress,
    )
    .expect("verifies");
    let half = verified
        .observables()
        .find(|o| o.name == "half-life")
        .expect("reported");
    assert_eq!(half.status, Status::Moved);
    assert_eq!(verified.verdict(), Verdict::Moved);
    assert!(verified.moved().iter().any(|o| o.name == "half-life"));
}

/// The bundled hydrogen-oxygen mechanism and scenario copied to `dir`, the prefactor of
/// its first step (H + O2 <=> O + OH, 3.547e15) replaced by `prefactor`.
fn hydrogen_files(dir: &Path, prefactor: &str) {
    let m = mechanisms_dir();
    let text = std::fs::read_to_string(m.join("hydrogen-oxygen.toml")).expect("bundled");
    assert!(text.contains("prefactor = 3.547e15,"));
    write(
        &dir.join("hydrogen-oxygen.toml"),
        &text.replace(
            "prefactor = 3.547e15,",
            &format!("prefactor = {prefactor},"),
        ),
    );
    std::fs::create_dir_all(dir.join("thermo")).expect("folder");
    std::fs::copy(
        m.join("thermo/janaf-nasa7.toml"),
        dir.join("thermo/janaf-nasa7.toml"),
    )
    .expect("copy thermo");
    std::fs::copy(
        m.join("hydrogen-oxygen.scenario.toml"),
        dir.join("hydrogen-oxygen.scenario.toml"),
    )
    .expect("copy scenario");
}

const HYDROGEN_SUITE: &str = r#"stoik_suite = 1
tolerance = { relative = 1e-3 }
[[case]]
name = "ignition"
scenario = "hydrogen-oxygen.scenario.toml"
temperatures = [1100, 1300]
end_time = "0.5 ms"
[[case.observable]]
name = "delay"
kind = "ignition-delay"
tolerance = { factor = 1.01 }
[[case.observable]]
name = "OH peak"
kind = "peak"
species = "OH"
"#;

#[test]
fn hydrogen_step_scaled_by_two_is_caught_and_by_1_0001_is_not() {
    let dir = scratch("hydrogen");
    hydrogen_files(&dir, "3.547e15");
    let path = dir.join("h2.suite.toml");
    write(&path, HYDROGEN_SUITE);
    let suite = Suite::load(&path).expect("suite");
    assert_eq!(suite.cases.len(), 2);
    assert_eq!(suite.cases[0].name, "ignition T=1100 K");
    let recording = record(&suite, &RecordOptions::default(), &no_progress).expect("records");
    assert!(!recording.has_errors());
    // H + O2 <=> O + OH is the chain-branching step that controls the ignition delay of
    // hydrogen above about 1000 K (I. Glassman, Combustion, 3rd ed., ch. 3): doubling it
    // shortens the delay by far more than 1 %. Scaling it by 1.0001 moves the delay by
    // about 1e-4 at most, inside the 1 % band.
    hydrogen_files(&dir, "7.094e15");
    let doubled = verify(
        &suite,
        &recording.baseline,
        &VerifyOptions::default(),
        &no_progress,
    )
    .expect("verifies");
    assert_eq!(doubled.verdict(), Verdict::Moved);
    for o in doubled.observables().filter(|o| o.name == "delay") {
        assert_eq!(o.status, Status::Moved, "{o:?}");
        assert!(o.factor().expect("factor") < 0.8, "{o:?}");
    }
    // The changed input is named: the mechanism, and only it.
    for c in &doubled.cases {
        assert_eq!(c.changed_inputs.len(), 1);
        assert_eq!(c.changed_inputs[0].role, InputRole::Mechanism);
    }
    hydrogen_files(&dir, "3.5473547e15");
    let tiny = verify(
        &suite,
        &recording.baseline,
        &VerifyOptions::default(),
        &no_progress,
    )
    .expect("verifies");
    assert_eq!(
        tiny.verdict(),
        Verdict::AllWithin,
        "{}",
        stoik_suite::terminal_report(&tiny)
    );
    for o in tiny.observables() {
        let f = o.factor().expect("factor");
        assert!(
            f != 1.0 || o.name == "OH peak",
            "the edit moved the delay: {o:?}"
        );
        assert!((f - 1.0).abs() < 1e-3, "{o:?}");
    }
}

#[test]
fn results_are_bitwise_identical_with_one_and_two_threads() {
    let dir = scratch("threads");
    hydrogen_files(&dir, "3.547e15");
    let path = dir.join("h2.suite.toml");
    write(&path, HYDROGEN_SUITE);
    let suite = Suite::load(&path).expect("suite");
    let cases = prepare_cases(&suite).expect("prepared");
    let run = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .expect("pool");
        pool.install(|| {
            record_prepared(
                &suite,
                &cases,
                &RecordOptions::default(),
                "2026-01-01T00:00:00Z".into(),
                &no_progress,
            )
            .expect("records")
        })
    };
    let one = run(1);
    let two = run(2);
    // Baseline equality compares every value and noise estimate as f64 bits.
    assert_eq!(one.baseline, two.baseline);
    assert_eq!(
        one.baseline.to_toml().expect("text"),
        two.baseline.to_toml().expect("text")
    );
}

#[test]
fn baseline_round_trips_exactly() {
    // Awkward doubles: the smallest subnormal, 0.1 + 0.2 (not 0.3), a value near the top of
    // the range, negative zero, pi: each must read back as the same bits (IEEE 754).
    let values = [
        f64::from_bits(1),
        0.1 + 0.2,
        1.7976931348623157e308,
        -0.0,
        std::f64::consts::PI,
        5.63489164199531e-4,
    ];
    let mut case = example_case();
    case.name = "c \"quoted\" \\ name".into();
    case.inputs = vec![InputFile {
        role: InputRole::Mechanism,
        path: "m.toml".into(),
        sha256: stoik_suite::sha256_hex(b"m"),
    }];
    case.relative_tolerance = 1e-8;
    case.absolute_tolerance_mol_per_m3 = 1e-14;
    case.observables = values
        .iter()
        .enumerate()
        .map(|(i, &v)| {
            (
                format!("o{i}"),
                RecordedValue {
                    value: v,
                    noise: (i % 2 == 0).then_some(v.abs() * 1e-9),
                },
            )
        })
        .collect();
    let baseline = Baseline::new(
        "s.suite.toml".into(),
        stoik_suite::sha256_hex(b"s"),
        "0.1.0".into(),
        "2026-12-02T19:00:00Z".into(),
        vec![case],
    );
    let text = baseline.to_toml().expect("finite");
    let back = parse_baseline(&text, "b.toml").expect("reads back");
    assert_eq!(back, baseline);
    for ((_, a), (_, b)) in back.cases[0]
        .observables
        .iter()
        .zip(&baseline.cases[0].observables)
    {
        assert_eq!(a.value.to_bits(), b.value.to_bits());
    }
    // A NaN is refused, not written.
    let mut bad = baseline.clone();
    bad.cases[0].observables[0].1.value = f64::NAN;
    assert!(matches!(bad.to_toml(), Err(SuiteError::Write { .. })));
}

/// A baseline case to fill in (the location field is private).
fn example_case() -> BaselineCase {
    let text = "stoik_baseline = 1\nsuite = \"s\"\nsuite_sha256 = \"".to_string()
        + &stoik_suite::sha256_hex(b"")
        + "\"\nstoik_version = \"0\"\nrecorded = \"x\"\n[[case]]\nname = \"x\"\nrelative_tolerance = 1e-6\nabsolute_tolerance = 1e-12\n[[case.input]]\nrole = \"mechanism\"\npath = \"m.toml\"\nsha256 = \""
        + &stoik_suite::sha256_hex(b"")
        + "\"\n";
    parse_baseline(&text, "x").expect("valid").cases[0].clone()
}

#[test]
fn provenance_hashes_change_when_and_only_when_content_changes() {
    let dir = scratch("provenance");
    decay_files(&dir, 2.0);
    let path = decay_suite(&dir, 1.01);
    let suite = Suite::load(&path).expect("suite");
    let options = RecordOptions {
        estimate_noise: false,
    };
    let first = record(&suite, &options, &no_progress).expect("records");
    // Rewriting the same bytes: same hashes, and --changed-only skips the case.
    decay_files(&dir, 2.0);
    let again = record(&suite, &options, &no_progress).expect("records");
    assert_eq!(
        first.baseline.cases[0].inputs,
        again.baseline.cases[0].inputs
    );
    let skipped = verify(
        &suite,
        &first.baseline,
        &VerifyOptions { changed_only: true },
        &no_progress,
    )
    .expect("verifies");
    assert!(skipped.cases[0].skipped);
    assert!(skipped.observables().all(|o| o.status == Status::Skipped));
    // A comment added to the mechanism: its hash changes, the scenario's does not, and the
    // hash is SHA-256 of the new bytes (FIPS 180-4, as computed by `sha2`).
    let mechanism = dir.join("decay.toml");
    let mut text = std::fs::read_to_string(&mechanism).expect("read");
    text.push_str("# a comment\n");
    write(&mechanism, &text);
    let edited = record(&suite, &options, &no_progress).expect("records");
    let now = &edited.baseline.cases[0];
    let then = &first.baseline.cases[0];
    let role = |c: &BaselineCase, r| c.input(r).expect("input").sha256.clone();
    assert_ne!(
        role(now, InputRole::Mechanism),
        role(then, InputRole::Mechanism)
    );
    assert_eq!(
        role(now, InputRole::Scenario),
        role(then, InputRole::Scenario)
    );
    assert_eq!(
        role(now, InputRole::Mechanism),
        stoik_suite::sha256_hex(text.as_bytes())
    );
    let ran = verify(
        &suite,
        &first.baseline,
        &VerifyOptions { changed_only: true },
        &no_progress,
    )
    .expect("verifies");
    assert!(!ran.cases[0].skipped);
    // A comment changes no value.
    assert_eq!(ran.verdict(), Verdict::AllWithin);
}

fn load_error(e: impl std::fmt::Display) -> String {
    e.to_string()
}

#[test]
fn malformed_suite_reports_every_problem_located() {
    let dir = scratch("bad-suite");
    decay_files(&dir, 2.0);
    let text = r#"stoik_suite = 2
tolerance = { factor = 0.9 }
[[case]]
name = "a"
scenario = "missing.scenario.toml"
colour = "red"
[[case.observable]]
name = "x"
kind = "peek"
"#;
    let err = stoik_suite::parse_suite(text, "bad.suite.toml", &dir).expect_err("invalid");
    let message = load_error(err);
    for expected in [
        "bad.suite.toml:1:15: error: unsupported suite format version 2",
        "bad.suite.toml:2:24: error: `factor` must be finite and above 1",
        "bad.suite.toml:5:12: error: scenario file `missing.scenario.toml` not found",
        "bad.suite.toml:6:1: error: unknown key `colour` in [[case]]",
        "bad.suite.toml:9:8: error: unknown observable kind `peek`",
    ] {
        assert!(
            message.contains(expected),
            "missing `{expected}` in:\n{message}"
        );
    }
    assert!(message.contains("did you mean `peak`?"), "{message}");
}

#[test]
fn unknown_species_is_located_in_the_suite() {
    let dir = scratch("bad-species");
    decay_files(&dir, 2.0);
    let path = dir.join("s.suite.toml");
    write(
        &path,
        "stoik_suite = 1\n[[case]]\nname = \"a\"\nscenario = \"decay.scenario.toml\"\n[[case.observable]]\nname = \"p\"\nkind = \"peak\"\nspecies = \"Bb\"\n",
    );
    let suite = Suite::load(&path).expect("file is valid");
    let err = record(&suite, &RecordOptions::default(), &no_progress).expect_err("species");
    let message = load_error(err);
    assert!(
        message.contains(":5:1: error: observable `p` of case `a`: unknown species `Bb`"),
        "{message}"
    );
    assert!(message.contains("did you mean `B`?"), "{message}");
}

#[test]
fn malformed_baseline_reports_every_problem_located() {
    let text = "stoik_baseline = 1\nsuite = \"s\"\nsuite_sha256 = \"abc\"\nstoik_version = \"0\"\nrecorded = \"x\"\n[[case]]\nname = \"a\"\nrelative_tolerance = \"tight\"\nabsolute_tolerance = 1e-12\n[[case.observable]]\nname = \"o\"\nvalue = nan\n";
    let message = load_error(parse_baseline(text, "b.toml").expect_err("invalid"));
    for expected in [
        "b.toml:3:16: error: `suite_sha256` must be a SHA-256 digest",
        "b.toml:6:1: error: the case lists no `mechanism` input",
        "b.toml:8:22: error: `relative_tolerance` must be a number",
        "b.toml:12:9: error: `value` must be finite",
    ] {
        assert!(
            message.contains(expected),
            "missing `{expected}` in:\n{message}"
        );
    }
}

#[test]
fn baseline_of_another_mechanism_is_refused_located() {
    let dir = scratch("other-mechanism");
    decay_files(&dir, 2.0);
    let path = decay_suite(&dir, 1.01);
    let suite = Suite::load(&path).expect("suite");
    let options = RecordOptions {
        estimate_noise: false,
    };
    let recorded = record(&suite, &options, &no_progress).expect("records");
    let text = recorded.baseline.to_toml().expect("text");
    let baseline_path = dir.join("decay.baseline.toml");
    write(&baseline_path, &text);
    // The same case names, on a mechanism file of another name.
    std::fs::copy(dir.join("decay.toml"), dir.join("other.toml")).expect("copy");
    let scenario = std::fs::read_to_string(dir.join("decay.scenario.toml")).expect("read");
    write(
        &dir.join("decay.scenario.toml"),
        &scenario.replace("decay.toml", "other.toml"),
    );
    let baseline = Baseline::load(&baseline_path).expect("loads");
    let err = verify(&suite, &baseline, &VerifyOptions::default(), &no_progress)
        .expect_err("another mechanism");
    let message = load_error(err);
    let case_line = text
        .lines()
        .position(|l| l == "[[case]]")
        .expect("case header")
        + 1;
    let expected = format!(
        "decay.baseline.toml:{case_line}:1: error: case `decay` was recorded on the mechanism `decay.toml`, but the suite runs it on `other.toml`"
    );
    assert!(
        message.contains(&expected),
        "missing `{expected}` in:\n{message}"
    );
}

#[test]
fn a_failing_case_is_an_error_of_that_case_and_the_others_run() {
    let dir = scratch("failing-case");
    decay_files(&dir, 2.0);
    // The same scenario with a budget of 3 solver steps cannot reach 10 s.
    let scenario = std::fs::read_to_string(dir.join("decay.scenario.toml")).expect("read");
    write(
        &dir.join("starved.scenario.toml"),
        &scenario.replace("[solver]\n", "[solver]\nmax_steps = 3\n"),
    );
    let path = dir.join("s.suite.toml");
    write(
        &path,
        "stoik_suite = 1\n[[case]]\nname = \"starved\"\nscenario = \"starved.scenario.toml\"\n[[case.observable]]\nname = \"A\"\nkind = \"concentration\"\nspecies = \"A\"\ntime = 1\n[[case]]\nname = \"fine\"\nscenario = \"decay.scenario.toml\"\n[[case.observable]]\nname = \"A\"\nkind = \"concentration\"\nspecies = \"A\"\ntime = 1\n",
    );
    let suite = Suite::load(&path).expect("suite");
    let recording = record(&suite, &RecordOptions::default(), &no_progress).expect("records");
    assert!(recording.cases[0].error.is_some());
    assert_eq!(recording.baseline.cases.len(), 1);
    // c_A(1 s) = exp(-2) (closed form of first-order decay).
    let a = recording.baseline.cases[0]
        .value("A")
        .expect("recorded")
        .value;
    assert!((a - (-2f64).exp()).abs() < 1e-8);
    let verified = verify(
        &suite,
        &recording.baseline,
        &VerifyOptions::default(),
        &no_progress,
    )
    .expect("verifies");
    assert!(verified.cases[0]
        .error
        .as_deref()
        .unwrap_or("")
        .contains("integration failed"));
    assert_eq!(verified.cases[1].observables[0].status, Status::Pass);
    assert_eq!(verified.verdict(), Verdict::Errors);
}

#[test]
fn solver_noise_is_estimated_and_a_tolerance_near_it_is_flagged() {
    // A -> B at k = 2 1/s, run loosely (rtol 1e-4, atol 1e-10): c_A(0.5 s) = exp(-1) is the
    // first-order closed form. The noise estimate |v(rtol) - v(rtol/100)| must be close to
    // the run's true error |v(rtol) - exp(-1)|, since the tighter run is about 100 times
    // more accurate. A tolerance of 1e-9 relative lies below it (flagged); 0.1 does not.
    let dir = scratch("noise");
    decay_files(&dir, 2.0);
    let scenario = std::fs::read_to_string(dir.join("decay.scenario.toml"))
        .expect("read")
        .replace("relative_tolerance = 1e-10", "relative_tolerance = 1e-4")
        .replace("absolute_tolerance = 1e-16", "absolute_tolerance = 1e-10")
        .replace(
            "grid = { spacing = \"linear\", points = 2001 }",
            "grid = { spacing = \"linear\", points = 3 }",
        );
    write(&dir.join("decay.scenario.toml"), &scenario);
    let suite_path = dir.join("noise.suite.toml");
    write(
        &suite_path,
        "stoik_suite = 1\n[[case]]\nname = \"decay\"\nscenario = \"decay.scenario.toml\"\n[[case.observable]]\nname = \"tight\"\nkind = \"concentration\"\nspecies = \"A\"\ntime = \"500 ms\"\ntolerance = { relative = 1e-9 }\n[[case.observable]]\nname = \"loose\"\nkind = \"concentration\"\nspecies = \"A\"\ntime = \"500 ms\"\ntolerance = { relative = 0.1 }\n",
    );
    let suite = Suite::load(&suite_path).expect("suite");
    let recording = record(&suite, &RecordOptions::default(), &no_progress).expect("records");
    let observables = &recording.cases[0].observables;
    let tight = &observables[0];
    let value = *tight.value.as_ref().expect("a value");
    let true_error = (value - (-1f64).exp()).abs();
    let noise = tight.noise.expect("noise estimated");
    assert!(
        true_error > 1e-9,
        "the loose run must carry an error: {true_error}"
    );
    assert!(
        noise > 0.5 * true_error && noise < 1.5 * true_error,
        "noise {noise} vs true error {true_error}"
    );
    assert!(
        tight.tolerance_near_noise,
        "1e-9 relative is below the noise"
    );
    assert!(
        !observables[1].tolerance_near_noise,
        "0.1 relative is far above it"
    );
    // The baseline keeps the estimate, bit for bit.
    let recorded = recording.baseline.cases[0]
        .value("tight")
        .expect("recorded");
    assert_eq!(recorded.noise.map(f64::to_bits), Some(noise.to_bits()));
}

#[test]
fn a_composition_override_sets_the_initial_state() {
    // A -> B at k = 2 1/s from 2.5 mol/m3 instead of the scenario's 1: c_A(0.5 s) =
    // 2.5 exp(-1) (first-order closed form). An unknown species in the override is an error
    // located at its case.
    let dir = scratch("composition");
    decay_files(&dir, 2.0);
    let path = dir.join("c.suite.toml");
    write(
        &path,
        "stoik_suite = 1\n[[case]]\nname = \"richer\"\nscenario = \"decay.scenario.toml\"\nconcentrations = { A = \"2.5 mol/m3\" }\n[[case.observable]]\nname = \"A\"\nkind = \"concentration\"\nspecies = \"A\"\ntime = 0.5\n",
    );
    let suite = Suite::load(&path).expect("suite");
    let recording = record(&suite, &RecordOptions::default(), &no_progress).expect("records");
    let a = recording.baseline.cases[0]
        .value("A")
        .expect("recorded")
        .value;
    assert!((a - 2.5 * (-1f64).exp()).abs() < 1e-8, "{a}");

    write(
        &path,
        "stoik_suite = 1\n[[case]]\nname = \"typo\"\nscenario = \"decay.scenario.toml\"\nconcentrations = { AA = 1.0 }\n[[case.observable]]\nname = \"A\"\nkind = \"concentration\"\nspecies = \"A\"\ntime = 0.5\n",
    );
    let suite = Suite::load(&path).expect("the suite itself reads");
    let e = load_error(prepare_cases(&suite).expect_err("unknown species refused"));
    assert!(e.contains("c.suite.toml:2:1"), "{e}");
    assert!(
        e.contains("`AA` is not a species of the mechanism (did you mean `A`?)"),
        "{e}"
    );
}

#[test]
fn measured_values_are_validated_apart_from_the_verdict() {
    // A -> B at k = 2 1/s: half-life ln 2 / k = 0.34657 s (first-order closed form). A
    // measurement of 0.35 +- 0.01 s agrees; one of 0.30 +- 0.01 s does not, yet the
    // regression verdict (against the baseline) still passes.
    let dir = scratch("measured");
    decay_files(&dir, 2.0);
    let path = dir.join("m.suite.toml");
    write(
        &path,
        "stoik_suite = 1\n[[case]]\nname = \"decay\"\nscenario = \"decay.scenario.toml\"\n[[case.observable]]\nname = \"close\"\nkind = \"crossing-time\"\nspecies = \"A\"\nlevel = 0.5\nmeasured = { value = \"350 ms\", uncertainty = \"10 ms\" }\n[[case.observable]]\nname = \"far\"\nkind = \"crossing-time\"\nspecies = \"A\"\nlevel = 0.5\nmeasured = { value = 0.30, uncertainty = 0.01 }\n",
    );
    let suite = Suite::load(&path).expect("suite");
    let recording = record(&suite, &RecordOptions::default(), &no_progress).expect("records");
    let v = verify(
        &suite,
        &recording.baseline,
        &VerifyOptions::default(),
        &no_progress,
    )
    .expect("verifies");
    assert_eq!(v.verdict(), Verdict::AllWithin);
    let by_name = |n: &str| v.observables().find(|o| o.name == n).expect("reported");
    let close = by_name("close");
    assert!((close.new.expect("value") - 2f64.ln() / 2.0).abs() < 1e-7);
    assert_eq!(close.agrees_with_measurement(), Some(true));
    assert_eq!(by_name("far").agrees_with_measurement(), Some(false));
    let report = stoik_suite::terminal_report(&v);
    assert!(report.contains("validation against measured values (not part of the verdict):"));
    assert!(report.contains("decay / far: computed"), "{report}");
    assert!(report.contains("DISAGREES"), "{report}");
}

#[test]
fn an_integral_does_not_depend_on_the_output_grid() {
    // The same decay with 3 and with 2001 output points: the integral of c_A from 0 to 10 s
    // is (1 - exp(-20)) / k (closed form) within the tolerance either way, and the two agree
    // to 1e-9 relative (a trapezoid rule on those 3 points, at 0, 5 and 10 s, would give 2.5: 5 times too much).
    let k = 2.0;
    let exact = (1.0 - (-20f64).exp()) / k;
    let mut values = Vec::new();
    for points in ["3", "2001"] {
        let dir = scratch(&format!("integral-{points}"));
        decay_files(&dir, k);
        let scenario = std::fs::read_to_string(dir.join("decay.scenario.toml"))
            .expect("read")
            .replace("points = 2001", &format!("points = {points}"));
        write(&dir.join("decay.scenario.toml"), &scenario);
        let path = dir.join("i.suite.toml");
        write(
            &path,
            "stoik_suite = 1\n[[case]]\nname = \"decay\"\nscenario = \"decay.scenario.toml\"\n[[case.observable]]\nname = \"A integral\"\nkind = \"integral\"\nspecies = \"A\"\n",
        );
        let suite = Suite::load(&path).expect("suite");
        let recording = record(
            &suite,
            &RecordOptions {
                estimate_noise: false,
            },
            &no_progress,
        )
        .expect("records");
        let v = recording.baseline.cases[0]
            .value("A integral")
            .expect("recorded")
            .value;
        assert!(
            (v / exact - 1.0).abs() < 1e-8,
            "{points} points: {v} vs {exact}"
        );
        values.push(v);
    }
    assert!((values[0] / values[1] - 1.0).abs() < 1e-9, "{values:?}");
}
