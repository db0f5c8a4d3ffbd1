//! `stoik run` on the bundled network demo (two jacketed tanks with a recycle): per-tank CSV
//! columns in round-trip form, the summary with the process-safety caution, and the
//! steady-flow balances of the run's last row.

mod common;

use common::{repo, stoik, text, Table};

#[test]
fn run_of_the_network_demo_writes_per_tank_columns() {
    let dir = common::scratch("network", "demo");
    let scenario = repo().join("mechanisms/tank-train.scenario.toml");
    let out = stoik(
        &["run", scenario.to_str().unwrap(), "-o", "train.csv"],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let stdout = text(&out.stdout);
    assert!(stdout.contains("network of 2"), "{stdout}");
    assert!(stdout.contains("process-safety review"), "{stdout}");
    assert!(stdout.contains("licensed engineering review"), "{stdout}");
    let table = Table::read(&dir.join("train.csv"));
    assert_eq!(table.header[0], "time [s]");
    assert_eq!(table.header[1], "first temperature [K]");
    assert_eq!(table.header[2], "first A [mol/L]");
    assert_eq!(table.rows.len(), 361);
    // After 6 h (30 residence times) the tanks are at steady state: the solvent, inert, is
    // fed at 46 mol/L and leaves at that concentration (its own balance, common practice).
    let last = table.rows.last().unwrap();
    let s2 = table.col("second S [mol/L]");
    assert!((last[s2] - 46.0).abs() < 1e-5, "{}", last[s2]);
    // A and B react one to one: the feed's excess of B (0.2 mol/L) leaves unchanged, and
    // every A reacted left as P (the feed has 2 mol/L of A).
    let (a, b, p) = (
        table.col("second A [mol/L]"),
        table.col("second B [mol/L]"),
        table.col("second P [mol/L]"),
    );
    assert!(
        (last[b] - last[a] - 0.2).abs() < 1e-5,
        "{} {}",
        last[a],
        last[b]
    );
    assert!(
        (last[a] + last[p] - 2.0).abs() < 1e-5,
        "{} {}",
        last[a],
        last[p]
    );
}

#[test]
fn a_bad_network_is_refused_with_located_errors() {
    let dir = common::scratch("network", "bad");
    let scenario = repo().join("tests/bad-input/network-undefined-tank.network.toml");
    let out = stoik(&["run", scenario.to_str().unwrap(), "-o", "x.csv"], &dir);
    assert_eq!(out.status.code(), Some(2));
    let stderr = text(&out.stderr);
    assert!(
        stderr.contains(":22:6: error: no tank is named `secnod`"),
        "{stderr}"
    );
    assert!(!dir.join("x.csv").exists());
}
