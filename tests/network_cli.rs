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

/// Three equal isothermal tanks in series with one first-order step A -> B (k = 0.01 1/s,
/// residence time 100 s each): at steady state tank n holds c_A = c_in / (1 + k tau)^n
/// (the tanks-in-series closed form of chemical-reaction-engineering textbooks, e.g.
/// Levenspiel, "Chemical Reaction Engineering", ch. 6; from memory).
fn series_of_three(dir: &std::path::Path) -> std::path::PathBuf {
    std::fs::write(
        dir.join("first-order.toml"),
        "stoik_mechanism = 1\n[units]\namount = \"mol\"\nlength = \"m\"\n\
         [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n\
         [[step]]\nequation = \"A -> B\"\nforward = { prefactor = 0.01 }\n",
    )
    .unwrap();
    let mut text = String::from(
        "stoik_scenario = 1\ntitle = \"three tanks in series\"\nmechanism = \"first-order.toml\"\n",
    );
    for name in ["t1", "t2", "t3"] {
        text.push_str(&format!(
            "[[tank]]\nname = \"{name}\"\nvolume = \"1 m3\"\ntemperature = \"300 K\"\ninitial = {{ B = \"0 mol/m3\" }}\n"
        ));
    }
    text.push_str(
        "[[stream]]\nto = \"t1\"\nvolumetric_flow = \"0.01 m3/s\"\ntemperature = \"300 K\"\nconcentrations = { A = \"8 mol/m3\" }\n\
         [[stream]]\nfrom = \"t1\"\nto = \"t2\"\nvolumetric_flow = \"0.01 m3/s\"\n\
         [[stream]]\nfrom = \"t2\"\nto = \"t3\"\nvolumetric_flow = \"0.01 m3/s\"\n\
         [[stream]]\nfrom = \"t3\"\nvolumetric_flow = \"0.01 m3/s\"\n\
         [output]\nend_time = \"2000 s\"\ngrid = { spacing = \"linear\", points = 3 }\n\
         [solver]\nrelative_tolerance = 1e-10\nabsolute_tolerance = 1e-14\n",
    );
    let path = dir.join("series.scenario.toml");
    std::fs::write(&path, text).unwrap();
    path
}

#[test]
fn steady_of_tanks_in_series_matches_the_closed_form() {
    let dir = common::scratch("network", "steady");
    let scenario = series_of_three(&dir);
    for extra in [&[][..], &["--newton"][..]] {
        let mut args = vec!["steady", scenario.to_str().unwrap(), "--csv", "steady.csv"];
        args.extend_from_slice(extra);
        let out = stoik(&args, &dir);
        assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
        let stdout = text(&out.stdout);
        assert!(stdout.contains("stability: stable"), "{stdout}");
        assert!(stdout.contains("process-safety review"), "{stdout}");
        let table = std::fs::read_to_string(dir.join("steady.csv")).unwrap();
        let mut lines = table.lines();
        assert_eq!(
            lines.next(),
            Some("tank,temperature [K],A [mol/m3],B [mol/m3]")
        );
        for (n, line) in lines.enumerate() {
            let cells: Vec<&str> = line.split(',').collect();
            assert_eq!(cells[0], ["t1", "t2", "t3"][n]);
            let a: f64 = cells[2].parse().unwrap();
            let b: f64 = cells[3].parse().unwrap();
            let expected = 8.0 / 2f64.powi(n as i32 + 1);
            assert!(
                (a - expected).abs() <= 1e-7 * expected,
                "tank {n} {extra:?}: {a} vs {expected}"
            );
            // A + B is fed at 8 mol/m3 and conserved by the step.
            assert!((a + b - 8.0).abs() <= 1e-7 * 8.0, "{a} + {b}");
            assert_eq!(cells[1].parse::<f64>().unwrap(), 300.0);
        }
    }
}

#[test]
fn check_reads_a_network_scenario_and_locates_its_problems() {
    let dir = common::scratch("network", "check");
    let scenario = series_of_three(&dir);
    let out = stoik(&["check", scenario.to_str().unwrap()], &dir);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let stdout = text(&out.stdout);
    assert!(
        stdout.contains("network of 3 tanks, 4 streams: 0 error(s)"),
        "{stdout}"
    );
    let bad = repo().join("tests/bad-input/network-all-at-once.network.toml");
    let out = stoik(&["check", bad.to_str().unwrap()], &dir);
    assert_eq!(out.status.code(), Some(2));
    let stderr = text(&out.stderr);
    // The same located errors as `stoik run` reports for this file: 7 at once.
    assert!(stderr.contains("7 error(s)"), "{stderr}");
    assert!(
        stderr.contains("network-all-at-once.network.toml:26:19: error: `volumetric_flow` is zero"),
        "{stderr}"
    );
}

#[test]
fn commands_for_single_reactors_refuse_a_network_by_name() {
    let dir = common::scratch("network", "single-only");
    let scenario = series_of_three(&dir);
    let s = scenario.to_str().unwrap();
    for (command, args) in [
        ("rates", vec!["rates", s, "--species", "A", "--times", "1"]),
        ("flux", vec!["flux", s, "--element", "C", "--time", "1"]),
        ("sensitivity", vec!["sensitivity", s, "--of", "final:A"]),
        (
            "continuation",
            vec![
                "continuation",
                s,
                "--parameter",
                "residence-time",
                "--from",
                "1",
                "--to",
                "2",
            ],
        ),
    ] {
        let out = stoik(&args, &dir);
        assert_eq!(out.status.code(), Some(2), "{command}");
        let stderr = text(&out.stderr);
        assert!(
            stderr.contains("series.scenario.toml:4:1: error: a network scenario")
                && stderr.contains(&format!("`stoik {command}`")),
            "{command}: {stderr}"
        );
        assert!(!stderr.contains("missing [reactor]"), "{command}: {stderr}");
    }
}

/// `stoik batch` runs a network scenario beside single-reactor ones: its CSV is byte for
/// byte the one `stoik run` writes; `--temperatures-k` is refused for it, naming the file.
#[test]
fn batch_runs_a_network_as_run_does() {
    let dir = common::scratch("network", "batch");
    let network = repo().join("mechanisms/tank-train.scenario.toml");
    let single = repo().join("mechanisms/ozone-flask.scenario.toml");
    let out = stoik(
        &[
            "batch",
            network.to_str().unwrap(),
            single.to_str().unwrap(),
            "--output-dir",
            "out",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let stdout = text(&out.stdout);
    assert!(stdout.contains("2 runs over"), "{stdout}");
    assert!(stdout.contains("process-safety review"), "{stdout}");
    let run = stoik(&["run", network.to_str().unwrap(), "-o", "run.csv"], &dir);
    assert_eq!(run.status.code(), Some(0), "{}", text(&run.stderr));
    let batch_csv = std::fs::read(dir.join("out/tank-train.csv")).unwrap();
    let run_csv = std::fs::read(dir.join("run.csv")).unwrap();
    assert!(batch_csv == run_csv, "batch and run CSVs differ");
    assert!(dir.join("out/ozone-flask.csv").exists());
    let refused = stoik(
        &[
            "batch",
            network.to_str().unwrap(),
            "--temperatures-k",
            "300",
            "--output-dir",
            "out2",
        ],
        &dir,
    );
    assert_eq!(refused.status.code(), Some(2));
    let stderr = text(&refused.stderr);
    assert!(
        stderr.contains("--temperatures-k does not apply to the network scenario")
            && stderr.contains("tank-train.scenario.toml"),
        "{stderr}"
    );
    assert!(
        !dir.join("out2").exists(),
        "a refused batch leaves no folder"
    );
}

/// One adiabatic tank of a constant-density liquid (`[liquid]`) running the cooled-tank
/// demo's first-order step R -> Q (k = 2.1e12 exp(-100 kJ/mol / (R T)) 1/s, -100 kJ/mol,
/// rho cp = 2.1 kJ/(kg K) x 950 kg/m3): its steady state from `stoik steady` against the
/// adiabatic stirred-tank construction rho cp (T - T_in) = -dH (c_in - c), c = c_in / (1 +
/// k(T) tau) (Fogler, "Elements of Chemical Reaction Engineering", ch. 8; from memory),
/// solved here by bisection on the hot branch.
#[test]
fn steady_of_a_liquid_network_matches_the_adiabatic_construction() {
    let dir = common::scratch("network", "liquid");
    std::fs::copy(
        repo().join("mechanisms/cooled-tank.toml"),
        dir.join("cooled-tank.toml"),
    )
    .unwrap();
    let body = "stoik_scenario = 1\nmechanism = \"cooled-tank.toml\"\n\
        [[tank]]\nname = \"hot\"\nvolume = \"2 m3\"\nenergy = \"adiabatic\"\ntemperature = \"420 K\"\ninitial = { Q = \"3 mol/L\" }\n\
        [[stream]]\nto = \"hot\"\nvolumetric_flow = \"1 L/s\"\ntemperature = \"300 K\"\nconcentrations = { R = \"3 mol/L\" }\n\
        [[stream]]\nfrom = \"hot\"\nvolumetric_flow = \"1 L/s\"\n\
        [liquid]\nheat_capacity = \"2.1 kJ/(kg K)\"\ndensity = \"950 kg/m3\"\nreaction_enthalpies = { \"R -> Q\" = \"-100 kJ/mol\" }\n\
        [output]\nend_time = \"1 h\"\ngrid = { spacing = \"linear\", points = 3 }\n\
        [solver]\nrelative_tolerance = 1e-10\n";
    let scenario = dir.join("liquid.scenario.toml");
    std::fs::write(&scenario, body).unwrap();
    let out = stoik(
        &["steady", scenario.to_str().unwrap(), "--csv", "s.csv"],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let table = std::fs::read_to_string(dir.join("s.csv")).unwrap();
    let row: Vec<f64> = table
        .lines()
        .nth(1)
        .unwrap()
        .split(',')
        .skip(1)
        .map(|x| x.parse().unwrap())
        .collect();
    assert_eq!(
        table.lines().next(),
        Some("tank,temperature [K],R [mol/m3],Q [mol/m3]")
    );
    let (t, c_r) = (row[0], row[1]);
    let (pre, ea, dh, rho_cp) = (2.1e12, 100e3, -100e3, 2.1e3 * 950.0);
    let (c_in, t_in, tau) = (3000.0, 300.0, 2000.0);
    let gas = 8.314_462_618;
    let c_of = |t: f64| c_in / (1.0 + pre * (-ea / (gas * t)).exp() * tau);
    let g = |t: f64| rho_cp * (t - t_in) + dh * (c_in - c_of(t));
    let rise = -dh * c_in / rho_cp;
    let (mut lo, mut hi) = (t_in + 0.5 * rise, t_in + rise + 1.0);
    assert!(g(lo) < 0.0 && g(hi) > 0.0, "bracket");
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if g(mid) < 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let expected = 0.5 * (lo + hi);
    assert!(
        (t - expected).abs() < 1e-7 * expected,
        "T {t} against {expected}"
    );
    assert!(
        (c_r - c_of(expected)).abs() < 1e-7 * c_in,
        "c_R {c_r} against {}",
        c_of(expected)
    );
}

/// A jacketed liquid tank from a network file whose `jacket_ua_history` switches the jacket
/// off between 2,000 and 2,100 s (no heat of reaction): the run follows Newton's law of
/// cooling with a feed before and after (two exponentials, common practice), as the library
/// test in crates/reactor/tests/network.rs.
#[test]
fn a_jacket_ua_history_from_a_network_file_switches_the_cooling_off() {
    let dir = common::scratch("network", "ua-history");
    std::fs::copy(
        repo().join("mechanisms/cooled-tank.toml"),
        dir.join("cooled-tank.toml"),
    )
    .unwrap();
    let body = "stoik_scenario = 1\nmechanism = \"cooled-tank.toml\"\n\
        [[tank]]\nname = \"vessel\"\nvolume = \"1 m3\"\nenergy = \"jacketed\"\ntemperature = \"340 K\"\n\
        jacket_ua_history = { times = [\"0 s\", \"2000 s\", \"2100 s\"], values = [\"4 kW/K\", \"4 kW/K\", \"0 W/K\"] }\n\
        coolant_temperature = \"280 K\"\ninitial = { R = \"1 mol/m3\" }\n\
        [[stream]]\nto = \"vessel\"\nvolumetric_flow = \"1 L/s\"\ntemperature = \"320 K\"\nconcentrations = { R = \"1 mol/m3\" }\n\
        [[stream]]\nfrom = \"vessel\"\nvolumetric_flow = \"1 L/s\"\n\
        [liquid]\nheat_capacity = \"4 MJ/(m3 K)\"\nreaction_enthalpies = { \"R -> Q\" = \"0 kJ/mol\" }\n\
        [output]\nend_time = \"5000 s\"\ntimes = [1000, 2000, 2100, 3000, 5000]\n\
        [solver]\nrelative_tolerance = 1e-10\nabsolute_tolerance = 1e-12\n";
    let scenario = dir.join("switch.scenario.toml");
    std::fs::write(&scenario, body).unwrap();
    let out = stoik(
        &["run", scenario.to_str().unwrap(), "-o", "switch.csv"],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let table = Table::read(&dir.join("switch.csv"));
    let (tc, temp) = (table.col("time [s]"), table.col("vessel temperature [K]"));
    let at = |t: f64| {
        table
            .rows
            .iter()
            .find(|r| r[tc] == t)
            .unwrap_or_else(|| panic!("no row at {t} s"))[temp]
    };
    let (a_on, a_off): (f64, f64) = (1e-3 + 4000.0 / 4e6, 1e-3);
    let t_ss = (1e-3 * 320.0 + 1e-3 * 280.0) / a_on;
    for t in [1000.0f64, 2000.0] {
        let expected = t_ss + (340.0 - t_ss) * (-a_on * t).exp();
        assert!(
            (at(t) - expected).abs() < 1e-6,
            "t = {t}: {} vs {expected}",
            at(t)
        );
    }
    let t2 = at(2100.0);
    for t in [3000.0f64, 5000.0] {
        let expected = 320.0 + (t2 - 320.0) * (-a_off * (t - 2100.0)).exp();
        assert!(
            (at(t) - expected).abs() < 1e-6,
            "t = {t}: {} vs {expected}",
            at(t)
        );
    }
}
