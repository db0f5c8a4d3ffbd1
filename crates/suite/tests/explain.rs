//! Explaining a move: each edit of the mechanism taken back alone, the edits ranked by their
//! share of the move, interaction flagged. Expectations from closed forms of first-order
//! kinetics (any physical-chemistry textbook: consecutive and parallel first-order steps).

use std::path::{Path, PathBuf};
use stoik_diff::MechanismSource;
use stoik_suite::{
    explain, prepare_cases, record, verify_prepared, MoveScale, OldMechanism, RecordOptions,
    Status, Suite, VerifyOptions, INTERACTION_THRESHOLD,
};

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("stoik-explain-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch folder");
    dir
}

fn write(path: &Path, text: &str) {
    std::fs::write(path, text).expect("write test file");
}

fn no_progress() {}

/// A mechanism of first-order steps `(equation, k in 1/s)` over species A to F.
fn mechanism(steps: &[(&str, f64)]) -> String {
    let mut s = String::from("stoik_mechanism = 1\n[units]\namount = \"mol\"\nlength = \"m\"\n");
    for name in ["A", "B", "C", "D", "E", "F"] {
        s.push_str(&format!("[[species]]\nname = \"{name}\"\n"));
    }
    for (equation, k) in steps {
        s.push_str(&format!(
            "[[step]]\nequation = \"{equation}\"\nforward = {{ prefactor = {k:e} }}\n"
        ));
    }
    s
}

/// Records `old_steps` in `dir`, then writes `new_steps` in place (the old version kept as
/// `old.toml`), verifies and explains against `old.toml`.
fn record_edit_explain(
    dir: &Path,
    initial: &str,
    time: &str,
    old_steps: &[(&str, f64)],
    new_steps: &[(&str, f64)],
) -> stoik_suite::Explanation {
    write(&dir.join("m.toml"), &mechanism(old_steps));
    write(&dir.join("old.toml"), &mechanism(old_steps));
    write(
        &dir.join("s.scenario.toml"),
        &format!("stoik_scenario = 1\nmechanism = \"m.toml\"\n[reactor]\ntemperature = \"300 K\"\n[initial]\nconcentrations = {{ {initial} }}\n[output]\nend_time = \"{time}\"\n[solver]\nrelative_tolerance = 1e-11\nabsolute_tolerance = 1e-16\n"),
    );
    write(
        &dir.join("t.suite.toml"),
        &format!("stoik_suite = 1\n[[case]]\nname = \"run\"\nscenario = \"s.scenario.toml\"\n[[case.observable]]\nname = \"B\"\nkind = \"concentration\"\nspecies = \"B\"\ntime = \"{time}\"\ntolerance = {{ relative = 1e-3 }}\n"),
    );
    let suite = Suite::load(&dir.join("t.suite.toml")).expect("suite");
    let recording = record(
        &suite,
        &RecordOptions {
            estimate_noise: false,
        },
        &no_progress,
    )
    .expect("records");
    write(&dir.join("m.toml"), &mechanism(new_steps));
    let cases = prepare_cases(&suite).expect("prepares");
    let verification = verify_prepared(
        &suite,
        &cases,
        &recording.baseline,
        &VerifyOptions::default(),
        &no_progress,
    )
    .expect("verifies");
    assert_eq!(verification.moved().len(), 1, "B moved");
    explain(
        &suite.folder,
        &cases,
        &recording.baseline,
        &verification,
        &OldMechanism::Given(MechanismSource::File(dir.join("old.toml"))),
    )
    .expect("explains")
}

#[test]
fn the_one_edit_that_moves_the_observable_ranks_first() {
    // A -> B alone feeds B: c_B(t) = 1 - exp(-k1 t) (first-order closed form). The other
    // edits (C -> D faster, E -> F added) touch species B never sees.
    let dir = scratch("rank");
    let e = record_edit_explain(
        &dir,
        "A = 1.0, C = 1.0, E = 1.0",
        "0.5 s",
        &[("A -> B", 1.0), ("C -> D", 1.0)],
        &[("C -> D", 5.0), ("A -> B", 2.0), ("E -> F", 3.0)],
    );
    assert!(e.unexplained.is_empty(), "{:?}", e.unexplained);
    assert!(e.not_revertible.is_empty(), "{:?}", e.not_revertible);
    assert_eq!(e.observables.len(), 1);
    let o = &e.observables[0];
    assert_eq!(o.scale, MoveScale::Linear);
    let closed = |k: f64| 1.0 - (-k * 0.5f64).exp();
    assert!((o.new - closed(2.0)).abs() < 1e-8, "{}", o.new);
    assert!((o.old_run.clone().expect("old run") - closed(1.0)).abs() < 1e-8);
    assert!(o.old_run_reproduces_baseline);
    assert_eq!(o.shares.len(), 3, "three edits");
    assert_eq!(o.shares[0].edit, "step changed: A -> B");
    let first = o.shares[0].share.expect("a share");
    assert!((first - 1.0).abs() < 1e-6, "{first}");
    for s in &o.shares[1..] {
        assert!(s.share.expect("a share").abs() < 1e-6, "{s:?}");
    }
    assert!(!o.interacting);
    // One run on the old mechanism and one per edit.
    assert_eq!(e.extra_runs, 4);
}

#[test]
fn edits_that_interact_are_flagged_with_shares_from_the_closed_form() {
    // Parallel channels A -> B (k1), A -> C (k2): the yield c_B(inf) = c_A0 k1 / (k1 + k2).
    // Edit k1 1 -> 10 and k2 1 -> 5: the yield goes 1/2 -> 2/3; with k1 taken back it is
    // 1/6, with k2 taken back 10/11. Shares (new - reverted) / (new - old): 3 and -16/11,
    // sum 1.545: the edits interact.
    let dir = scratch("interact");
    let e = record_edit_explain(
        &dir,
        "A = 1.0",
        "30 s",
        &[("A -> B", 1.0), ("A -> C", 1.0)],
        &[("A -> B", 10.0), ("A -> C", 5.0)],
    );
    let o = &e.observables[0];
    let total = 2.0 / 3.0 - 0.5;
    let expect_k1 = (2.0 / 3.0 - 1.0 / 6.0) / total;
    let expect_k2 = (2.0 / 3.0 - 10.0 / 11.0) / total;
    assert_eq!(o.shares[0].edit, "step changed: A -> B");
    let s1 = o.shares[0].share.expect("share");
    let s2 = o.shares[1].share.expect("share");
    assert!((s1 - expect_k1).abs() < 1e-6, "{s1} vs {expect_k1}");
    assert!((s2 - expect_k2).abs() < 1e-6, "{s2} vs {expect_k2}");
    let sum = o.sum_of_shares.expect("sum");
    assert!((sum - (expect_k1 + expect_k2)).abs() < 1e-6, "{sum}");
    assert!((sum - 1.0).abs() > INTERACTION_THRESHOLD);
    assert!(o.interacting);
    let report = stoik_suite::explanation_report(&e);
    assert!(report.contains("the edits interact"), "{report}");
    assert!(report.contains("step changed: A -> B 300.0 %"), "{report}");
}

#[test]
fn an_unchanged_mechanism_is_not_blamed() {
    // The scenario's end time moves the observable; the mechanism is the recorded one, so
    // the explanation says the move comes from elsewhere (history search, no git needed).
    let dir = scratch("unchanged");
    write(&dir.join("m.toml"), &mechanism(&[("A -> B", 1.0)]));
    let scenario = |end: &str| {
        format!("stoik_scenario = 1\nmechanism = \"m.toml\"\n[reactor]\ntemperature = \"300 K\"\n[initial]\nconcentrations = {{ A = 1.0 }}\n[output]\nend_time = \"{end}\"\n")
    };
    write(&dir.join("s.scenario.toml"), &scenario("1 s"));
    write(
        &dir.join("t.suite.toml"),
        "stoik_suite = 1\n[[case]]\nname = \"run\"\nscenario = \"s.scenario.toml\"\n[[case.observable]]\nname = \"B end\"\nkind = \"integral\"\nspecies = \"B\"\n",
    );
    let suite = Suite::load(&dir.join("t.suite.toml")).expect("suite");
    let recording = record(
        &suite,
        &RecordOptions {
            estimate_noise: false,
        },
        &no_progress,
    )
    .expect("records");
    write(&dir.join("s.scenario.toml"), &scenario("2 s"));
    let cases = prepare_cases(&suite).expect("prepares");
    let v = verify_prepared(
        &suite,
        &cases,
        &recording.baseline,
        &VerifyOptions::default(),
        &no_progress,
    )
    .expect("verifies");
    assert_eq!(v.cases[0].observables[0].status, Status::Moved);
    let e = explain(
        &suite.folder,
        &cases,
        &recording.baseline,
        &v,
        &OldMechanism::FromHistory,
    )
    .expect("explains");
    assert_eq!(e.extra_runs, 0);
    assert_eq!(e.unexplained.len(), 1);
    assert!(
        e.unexplained[0].reason.contains("unchanged"),
        "{:?}",
        e.unexplained
    );
}
