//! `stoik run` on plug-flow scenarios: the demo tube (distance and residence-time columns,
//! constant pressure, the residence time as the integral of rho A / mdot along the tube, the
//! hazard caution) and a malformed `[plug_flow]` reported at its line and column.

mod common;

use common::{repo, stoik, text, Table};

#[test]
fn run_of_the_tube_demo_writes_profiles_against_distance_and_residence_time() {
    let dir = common::scratch("plug", "demo");
    let scenario = repo().join("mechanisms/hydrogen-tube.scenario.toml");
    let out = stoik(&["run", scenario.to_str().unwrap(), "-o", "tube.csv"], &dir);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let stdout = text(&out.stdout);
    assert!(stdout.contains("plug flow"), "{stdout}");
    assert!(
        stdout.contains("Hydrogen-oxygen mixtures are explosive"),
        "{stdout}"
    );
    assert!(stdout.contains("licensed engineering review"), "{stdout}");
    let table = Table::read(&dir.join("tube.csv"));
    assert_eq!(table.header[0], "distance [m]");
    assert_eq!(table.header[1], "residence time [s]");
    // `points = 501` over `length = "1 m"`: z_i = i / 500 m, written in round-trip form.
    assert_eq!(table.rows.len(), 501);
    for (i, row) in table.rows.iter().enumerate() {
        assert_eq!(row[0], i as f64 / 500.0);
    }
    let (t, rho, p, temp) = (
        table.col("residence time [s]"),
        table.col("density [kg/m3]"),
        table.col("pressure [Pa]"),
        table.col("temperature [K]"),
    );
    // Constant pressure (no pressure profile): the ideal-gas pressure column stays at 1 atm.
    for row in &table.rows {
        assert!((row[p] / 101325.0 - 1.0).abs() < 1e-7, "{}", row[p]);
    }
    // The mixture ignites in the tube and leaves above the wall temperature.
    let hottest = table.rows.iter().map(|r| r[temp]).fold(0.0, f64::max);
    assert!(hottest > 1500.0, "{hottest}");
    // Steady plug flow: u = mdot / (rho A) (mass conservation), so the residence time to z is
    // the integral of rho A / mdot dz, with mdot = rho_in u_in A at the inlet (10 m/s):
    // t(z) = integral of rho dz / (rho_in u_in). Trapezoids over the 2 mm rows, accurate to
    // about 1e-3 through the ignition front (the rule's error, h^2 / 12 times the second
    // derivative, summed).
    let (rho_in, u_in) = (table.rows[0][rho], 10.0);
    let mut integral = 0.0;
    for pair in table.rows.windows(2) {
        integral += (pair[1][0] - pair[0][0]) * (pair[0][rho] + pair[1][rho]) / 2.0;
        let expected = integral / (rho_in * u_in);
        let got = pair[1][t];
        assert!(
            ((got - expected) / expected).abs() < 1e-3,
            "t({}) = {got}, integral {expected}",
            pair[1][0]
        );
    }
}

#[test]
fn run_of_a_malformed_plug_flow_exits_2_with_located_errors() {
    let dir = common::scratch("plug", "bad");
    let scenario = repo().join("tests/bad-input/plug-flow-keys.scenario.toml");
    let out = stoik(&["run", scenario.to_str().unwrap(), "-o", "bad.csv"], &dir);
    assert_eq!(out.status.code(), Some(2), "{}", text(&out.stderr));
    let stderr = text(&out.stderr);
    assert!(
        stderr
            .contains("plug-flow-keys.scenario.toml:17:1: error: missing `length` in [plug_flow]"),
        "{stderr}"
    );
    assert!(
        stderr.contains("plug-flow-keys.scenario.toml:19:58: error: areas of `area_profile`"),
        "{stderr}"
    );
    assert!(!dir.join("bad.csv").exists());
}

#[test]
fn analysis_commands_refuse_a_plug_flow_with_its_path() {
    let dir = common::scratch("plug", "analysis");
    let scenario = repo().join("mechanisms/hydrogen-tube.scenario.toml");
    let path = scenario.to_str().unwrap();
    for args in [
        vec!["rates", path, "--species", "OH", "--times", "0.01"],
        vec!["flux", path, "--element", "H", "--time", "0.01"],
        vec!["sensitivity", path, "--of", "final:OH"],
    ] {
        let out = stoik(&args, &dir);
        assert_eq!(
            out.status.code(),
            Some(2),
            "{args:?}: {}",
            text(&out.stderr)
        );
        let stderr = text(&out.stderr);
        assert!(
            stderr.contains("hydrogen-tube.scenario.toml") && stderr.contains("plug flow"),
            "{args:?}: {stderr}"
        );
    }
}
