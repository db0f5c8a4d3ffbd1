//! The real `stoik` binary's `run` on the semi-batch demo: the summary (reactor line, final
//! volume, runaway caution), the CSV's volume column against the feed's closed form, and bad
//! input refused with exit status 2 at its line and column.

mod common;

use common::{stoik, text};
use std::path::Path;

fn demo(name: &str) -> String {
    stoik_testsupport::mechanisms_dir()
        .join(name)
        .to_string_lossy()
        .into_owned()
}

/// Runs the binary in `dir`: the exit status and stdout followed by stderr.
fn run(dir: &Path, args: &[&str]) -> (Option<i32>, String) {
    let out = stoik(args, dir);
    (out.status.code(), text(&out.stdout) + &text(&out.stderr))
}

#[test]
fn run_prints_and_writes_the_semi_batch_demo() {
    let dir = common::scratch("semi_batch", "demo");
    let csv = dir.join("slow.csv");
    let (status, out) = run(
        &dir,
        &[
            "run",
            &demo("semibatch-exotherm.scenario.toml"),
            "-o",
            &csv.to_string_lossy(),
        ],
    );
    assert_eq!(status, Some(0), "{out}");
    assert!(
        out.contains("semi-batch, 2 m3 at the start, 1 feed"),
        "{out}"
    );
    assert!(out.contains("liquid phase"), "{out}");
    assert!(out.contains("V = 3.000000e0 m3"), "{out}");
    assert!(
        out.contains("simulation is no substitute for local codes, standards and licensed engineering review"),
        "{out}"
    );
    assert!(!out.contains("thermal runaway detected"), "{out}");
    // The volume column: V = 2 m3 + 0.5 m3/h t for the two hours of feed, then 3 m3 (the
    // feed's integral), in the CSV's full-precision numbers.
    let body = std::fs::read_to_string(&csv).unwrap();
    let mut lines = body.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let time = header.iter().position(|h| *h == "time [s]").unwrap();
    let volume = header.iter().position(|h| *h == "volume [m3]").unwrap();
    let mut rows = 0;
    for line in lines {
        let cells: Vec<f64> = line.split(',').map(|c| c.parse().unwrap()).collect();
        let t = cells[time];
        let expected = 2.0 + 0.5 / 3600.0 * t.min(7200.0);
        assert!(
            (cells[volume] - expected).abs() <= 1e-9 * expected,
            "V({t}) = {}, expected {expected}",
            cells[volume]
        );
        rows += 1;
    }
    assert_eq!(rows, 181);
    // The fast feed runs away: the caution says so.
    let (status, out) = run(
        &dir,
        &[
            "run",
            &demo("semibatch-exotherm-fast.scenario.toml"),
            "-o",
            &dir.join("fast.csv").to_string_lossy(),
        ],
    );
    assert_eq!(status, Some(0), "{out}");
    assert!(out.contains("thermal runaway detected"), "{out}");
}

#[test]
fn run_refuses_a_liquid_scenario_with_a_pressure_at_its_line() {
    let dir = common::scratch("semi_batch", "mixed");
    let scenario = dir.join("mixed.scenario.toml");
    std::fs::write(
        &scenario,
        format!(
            "stoik_scenario = 1\nmechanism = {:?}\n[reactor]\nkind = \"adiabatic-constant-volume\"\n\
             temperature = \"330 K\"\npressure = \"1 atm\"\n[initial]\nconcentrations = {{ S = 1e4 }}\n\
             [output]\nend_time = \"1 h\"\n[liquid]\nheat_capacity = \"2 MJ/(m3 K)\"\n\
             reaction_enthalpies = {{ \"A -> P\" = \"-150 kJ/mol\" }}\n",
            demo("semibatch-exotherm.toml")
        ),
    )
    .unwrap();
    let (status, out) = run(&dir, &["run", &scenario.to_string_lossy()]);
    assert_eq!(status, Some(2), "{out}");
    assert!(
        out.contains("mixed.scenario.toml:6:1: error: `pressure` is an ideal-gas setting"),
        "{out}"
    );
}

#[test]
fn sensitivity_of_a_semi_batch_is_refused_as_not_available() {
    let dir = common::scratch("semi_batch", "sensitivity");
    let (status, out) = run(
        &dir,
        &[
            "sensitivity",
            &demo("semibatch-exotherm-fast.scenario.toml"),
            "--of",
            "peak:T",
        ],
    );
    assert_eq!(status, Some(2), "{out}");
    assert!(
        out.contains("sensitivities of semi-batch and liquid-phase reactors are not implemented"),
        "{out}"
    );
}
