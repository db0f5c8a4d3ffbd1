//! The real `stoik` binary's `steady` and `continuation`: the first-order tank against its
//! design equation, the CSV at full precision, and bad input refused with exit status 2.

mod common;

use common::{stoik, text};
use std::path::{Path, PathBuf};

/// Runs the binary in `dir`: the exit status and stdout followed by stderr.
fn run(dir: &Path, args: &[&str]) -> (Option<i32>, String) {
    let out = stoik(args, dir);
    (out.status.code(), text(&out.stdout) + &text(&out.stderr))
}

fn scratch(name: &str) -> PathBuf {
    common::scratch("steady", name)
}

/// A -> B, k = 2.5 1/s, in an isothermal tank with tau = 0.4 s fed 3 mol/m3 of A; with
/// `flow = false` the same scenario without [flow]. Returns the scenario path.
fn first_order(dir: &Path, flow: bool) -> String {
    std::fs::write(
        dir.join("a-to-b.toml"),
        "stoik_mechanism = 1\n[units]\namount = \"mol\"\nlength = \"m\"\ntime = \"s\"\n\
         [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n\
         [[step]]\nequation = \"A -> B\"\nforward = { prefactor = 2.5 }\n",
    )
    .unwrap();
    let scenario = dir.join(if flow {
        "tank.scenario.toml"
    } else {
        "closed.scenario.toml"
    });
    let flow = if flow {
        "[flow]\nresidence_time = \"0.4 s\"\ninlet_concentrations = { A = 3.0 }\n"
    } else {
        ""
    };
    std::fs::write(
        &scenario,
        format!(
            "stoik_scenario = 1\nmechanism = \"a-to-b.toml\"\n[reactor]\ntemperature = \"300 K\"\n\
             [initial]\nconcentrations = {{ A = 1.0 }}\n{flow}[output]\nend_time = \"2 s\"\n"
        ),
    )
    .unwrap();
    scenario.to_string_lossy().into_owned()
}

#[test]
fn steady_prints_and_writes_the_design_equation_state() {
    // c_A = c_in / (1 + k tau) = 3 / 2 = 1.5 mol/m3 (first-order design equation,
    // O. Levenspiel, Chemical Reaction Engineering, 3rd ed., ch. 5).
    let dir = scratch("design");
    let scenario = first_order(&dir, true);
    let csv = dir.join("steady.csv");
    let out = run(
        &dir,
        &["steady", &scenario, "--csv", &csv.to_string_lossy()],
    );
    assert_eq!(out.0, Some(0), "{}", out.1);
    let printed = out.1;
    assert!(printed.contains("stability: stable"), "{printed}");
    assert!(printed.contains("Caution"), "{printed}");
    let body = std::fs::read_to_string(&csv).unwrap();
    let mut lines = body.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let row: Vec<f64> = lines
        .next()
        .unwrap()
        .split(',')
        .map(|x| x.parse().unwrap())
        .collect();
    let a = header.iter().position(|h| h.starts_with("A [")).unwrap();
    let b = header.iter().position(|h| h.starts_with("B [")).unwrap();
    assert!((row[a] - 1.5).abs() < 1e-12, "{}", row[a]);
    assert!((row[b] - 1.5).abs() < 1e-12, "{}", row[b]);
}

#[test]
fn continuation_rows_lie_on_the_design_equation() {
    let dir = scratch("branch");
    let scenario = first_order(&dir, true);
    let csv = dir.join("branch.csv");
    let svg = dir.join("branch.svg");
    let out = run(
        &dir,
        &[
            "continuation",
            &scenario,
            "--parameter",
            "residence-time",
            "--from",
            "0.01",
            "--to",
            "100",
            "--csv",
            &csv.to_string_lossy(),
            "--svg",
            &svg.to_string_lossy(),
        ],
    );
    assert_eq!(out.0, Some(0), "{}", out.1);
    assert!(out.1.contains("turning points: none"), "{}", out.1);
    let body = std::fs::read_to_string(&csv).unwrap();
    let mut rows = 0;
    for line in body.lines().skip(1) {
        let v: Vec<f64> = line.split(',').map(|x| x.parse().unwrap()).collect();
        // Levenspiel ch. 5, as above, at every residence time of the branch.
        let expected = 3.0 / (1.0 + 2.5 * v[0]);
        assert!((v[2] - expected).abs() < 1e-9 * expected, "{line}");
        assert_eq!(v[4], 1.0, "stable: {line}");
        rows += 1;
    }
    assert!(rows > 10);
    let drawn = std::fs::read_to_string(&svg).unwrap();
    assert!(drawn.starts_with("<svg") && drawn.contains("stable"));
}

#[test]
fn bad_input_is_refused_with_exit_status_2() {
    let dir = scratch("bad");
    let closed = first_order(&dir, false);
    let tank = first_order(&dir, true);
    let out = run(&dir, &["steady", &closed]);
    assert_eq!(out.0, Some(2));
    assert!(out.1.contains("no [flow] section"), "{}", out.1);
    let out = run(
        &dir,
        &[
            "continuation",
            &closed,
            "--parameter",
            "residence-time",
            "--from",
            "1",
            "--to",
            "2",
        ],
    );
    assert_eq!(out.0, Some(2));
    assert!(out.1.contains("no [flow] section"), "{}", out.1);
    // A range on the wrong side of zero.
    let out = run(
        &dir,
        &[
            "continuation",
            &tank,
            "--parameter",
            "residence-time",
            "--from",
            "1",
            "--to",
            "-2",
        ],
    );
    assert_eq!(out.0, Some(2));
    assert!(out.1.contains("finite and positive"), "{}", out.1);
    // An isothermal tank has no inlet temperature to follow, nor a coolant.
    let out = run(
        &dir,
        &[
            "continuation",
            &tank,
            "--parameter",
            "inlet-temperature",
            "--from",
            "300",
            "--to",
            "400",
        ],
    );
    assert_eq!(out.0, Some(2));
    assert!(out.1.contains("isothermal"), "{}", out.1);
    // An unknown parameter: clap lists the possible values.
    let out = run(
        &dir,
        &[
            "continuation",
            &tank,
            "--parameter",
            "pressure",
            "--from",
            "1",
            "--to",
            "2",
        ],
    );
    assert_eq!(out.0, Some(2));
    assert!(out.1.contains("residence-time"), "{}", out.1);
}
