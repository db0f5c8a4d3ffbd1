//! `stoik suite record` / `verify` through the real binary: the walkthrough of
//! docs/regression-suites.md (record the bundled hydrogen suite, edit one step, verify fails
//! with exit 4 and `--explain` names the edit), `--changed-only`, and bad input (exit 2,
//! located).

mod common;

use common::{repo, stoik, text};
use std::path::{Path, PathBuf};

fn scratch(name: &str) -> PathBuf {
    let dir = common::scratch("suite-cli", name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch");
    dir
}

/// The bundled hydrogen suite, scenario, mechanism and thermo file copied to `dir`.
fn hydrogen_suite(dir: &Path) {
    std::fs::create_dir_all(dir.join("thermo")).expect("folder");
    for name in [
        "hydrogen-oxygen.toml",
        "hydrogen-oxygen.scenario.toml",
        "hydrogen-oxygen.suite.toml",
        "thermo/janaf-nasa7.toml",
    ] {
        std::fs::copy(repo().join("mechanisms").join(name), dir.join(name)).expect("copy");
    }
}

fn git(dir: &Path, args: &[&str]) {
    let out = std::process::Command::new("git")
        .args([
            "-c",
            "user.name=stoik test",
            "-c",
            "user.email=test@example.invalid",
        ])
        .args(args)
        .current_dir(dir)
        .output()
        .expect("the `git` program runs (CI installs it)");
    assert!(out.status.success(), "git {args:?}: {}", text(&out.stderr));
}

/// Scales the prefactor of H + O2 <=> O + OH (3.547e15, the first step) to `new`.
fn edit_first_step(dir: &Path, new: &str) {
    let path = dir.join("hydrogen-oxygen.toml");
    let t = std::fs::read_to_string(&path).expect("read");
    assert!(t.contains("prefactor = 3.547e15"));
    std::fs::write(
        &path,
        t.replacen("prefactor = 3.547e15", &format!("prefactor = {new}"), 1),
    )
    .expect("write");
}

#[test]
fn walkthrough_record_edit_verify_explain() {
    let dir = scratch("walk");
    hydrogen_suite(&dir);
    git(&dir, &["init", "-q"]);
    git(&dir, &["add", "."]);
    git(&dir, &["commit", "-q", "-m", "mechanism"]);
    let out = stoik(&["suite", "record", "hydrogen-oxygen.suite.toml"], &dir);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    assert!(
        text(&out.stdout).contains("recorded 20 observable(s) of 4 case(s)"),
        "{}",
        text(&out.stdout)
    );
    assert!(dir.join("hydrogen-oxygen.baseline.toml").is_file());
    git(&dir, &["add", "."]);
    git(&dir, &["commit", "-q", "-m", "baseline"]);

    // Unchanged: everything holds.
    let out = stoik(&["suite", "verify", "hydrogen-oxygen.suite.toml"], &dir);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stdout));
    assert!(text(&out.stdout).contains("20 within tolerance, 0 moved"));

    // A reordering, a comment and a unit rewrite change nothing kinetically: `diff` says so
    // and verify still exits 0. The rewrite gives H + O2 <=> O + OH in m3 and kJ/mol:
    // 3.547e15 cm3/(mol s) = 3.547e9 m3/(mol s); 16599 cal/mol x 4.184 J/cal (the
    // thermochemical calorie, common practice) = 69.450216 kJ/mol.
    let path = dir.join("hydrogen-oxygen.toml");
    let t = std::fs::read_to_string(&path).expect("read");
    let old_step = "equation = \"H + O2 <=> O + OH\"\nforward = { prefactor = 3.547e15, temperature_exponent = -0.406, activation_energy = 16599.0 }";
    assert!(t.contains(old_step));
    std::fs::write(
        &path,
        t.replace(
            old_step,
            "equation = \"O2 + H <=> OH + O\" # reordered, SI length and kJ\nunits = { length = \"m\", activation_energy = \"kJ/mol\" }\nforward = { prefactor = 3.547e9, temperature_exponent = -0.406, activation_energy = 69.450216 }",
        ),
    )
    .expect("write");
    let out = stoik(
        &["diff", "HEAD:hydrogen-oxygen.toml", "hydrogen-oxygen.toml"],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stdout));
    assert!(text(&out.stdout).contains("no kinetic change"));
    let out = stoik(&["suite", "verify", "hydrogen-oxygen.suite.toml"], &dir);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stdout));
    assert!(text(&out.stdout).contains("20 within tolerance, 0 moved"));
    std::fs::write(&path, t).expect("write back");

    // The first step's prefactor doubled: the delays move beyond 1 %, exit 4, and explain
    // finds the recorded mechanism in git history and ranks that step first.
    edit_first_step(&dir, "7.094e15");
    let out = stoik(
        &[
            "suite",
            "verify",
            "hydrogen-oxygen.suite.toml",
            "--explain",
            "--junit",
            "report.xml",
            "--markdown",
            "report.md",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(4), "{}", text(&out.stderr));
    let report = text(&out.stdout);
    let first_line = report.lines().nth(1).expect("a first row");
    assert!(first_line.starts_with("MOVED"), "{report}");
    assert!(report.contains("explain: `hydrogen-oxygen.toml` compared with its recorded version, "));
    // Only one edit: it makes the largest share of every move, and the whole of each.
    assert!(
        report.contains(
            "  1. step changed: H + O2 <=> O + OH: the largest share in 15 of 15 move(s), up to "
        ),
        "{report}"
    );
    let lines: Vec<&str> = report
        .lines()
        .filter(|l| l.starts_with("  ignition T="))
        .collect();
    assert!(!lines.is_empty(), "{report}");
    for line in &lines {
        assert!(
            line.contains(": step changed: H + O2 <=> O + OH 100.0 %; sum 100.0 %"),
            "{line}"
        );
    }
    assert!(report.contains("extra run(s) in"), "{report}");
    let junit = std::fs::read_to_string(dir.join("report.xml")).expect("junit written");
    assert!(junit.contains("<failure"), "{junit}");
    let md = std::fs::read_to_string(dir.join("report.md")).expect("markdown written");
    assert!(md.contains("MOVED"), "{md}");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn changed_only_skips_cases_whose_inputs_are_unchanged() {
    let dir = scratch("changed");
    hydrogen_suite(&dir);
    let out = stoik(
        &[
            "suite",
            "record",
            "hydrogen-oxygen.suite.toml",
            "--no-noise",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let out = stoik(
        &[
            "suite",
            "verify",
            "hydrogen-oxygen.suite.toml",
            "--changed-only",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    assert!(
        text(&out.stdout).contains("verified 0 of 4 case(s)"),
        "{}",
        text(&out.stdout)
    );
    // The factor 1.0001 on the first step changes the mechanism's hash (every case runs
    // again) but moves nothing beyond tolerance.
    edit_first_step(&dir, "3.5473547e15");
    let out = stoik(
        &[
            "suite",
            "verify",
            "hydrogen-oxygen.suite.toml",
            "--changed-only",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stdout));
    assert!(text(&out.stdout).contains("verified 4 of 4 case(s)"));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_malformed_suite_exits_2_with_every_problem_located() {
    let dir = scratch("bad");
    hydrogen_suite(&dir);
    std::fs::write(
        dir.join("bad.suite.toml"),
        "stoik_suite = 1\n[[case]]\nname = \"a\"\nscenario = \"hydrogen-oxygen.scenario.toml\"\n[[case.observable]]\nname = \"x\"\nkind = \"tallest\"\n[[case.observable]]\nname = \"y\"\nkind = \"peak\"\nspecies = \"OHH\"\n",
    )
    .expect("write");
    let out = stoik(&["suite", "record", "bad.suite.toml"], &dir);
    assert_eq!(out.status.code(), Some(2));
    let err = text(&out.stderr);
    assert!(err.contains("bad.suite.toml:7:8"), "{err}");
    assert!(err.contains("unknown observable kind `tallest`"), "{err}");
    // The unknown species of the other observable is reported in the same run, at its
    // observable's table.
    assert!(err.contains("bad.suite.toml:8:1"), "{err}");
    assert!(err.contains("`OHH`"), "{err}");
    assert!(err.contains("2 error(s)"), "{err}");
    assert!(!dir.join("bad.baseline.toml").exists());
    let _ = std::fs::remove_dir_all(&dir);
}
