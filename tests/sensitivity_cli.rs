//! The real `stoik` binary's `sensitivity`: the ranked table and CSVs against the
//! first-order closed form, exit statuses, located errors, outputs never onto inputs.

mod common;

use common::{repo, stoik, text};
use std::path::{Path, PathBuf};

fn scratch(name: &str) -> PathBuf {
    common::scratch("sensitivity", name)
}

fn demo() -> String {
    repo()
        .join("mechanisms/hydrogen-oxygen.scenario.toml")
        .to_string_lossy()
        .into_owned()
}

/// A -> B, k = 2.5 1/s, c_A(0) = 3 mol/m3, isothermal, to 2 s, with `solver_extra` lines in
/// `[solver]`; returns the scenario path.
fn first_order(dir: &Path, solver_extra: &str) -> String {
    std::fs::write(
        dir.join("a-to-b.toml"),
        "stoik_mechanism = 1\n[units]\namount = \"mol\"\nlength = \"m\"\ntime = \"s\"\n\
         [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n\
         [[step]]\nequation = \"A -> B\"\nforward = { prefactor = 2.5 }\n",
    )
    .unwrap();
    let scenario = dir.join("a-to-b.scenario.toml");
    std::fs::write(
        &scenario,
        format!(
            "stoik_scenario = 1\nmechanism = \"a-to-b.toml\"\n[reactor]\ntemperature = \"300 K\"\n\
             [initial]\nconcentrations = {{ A = 3.0 }}\n[output]\nend_time = \"2 s\"\n\
             grid = {{ spacing = \"linear\", points = 3 }}\n\
             [solver]\nrelative_tolerance = 1e-11\nabsolute_tolerance = 1e-16\n{solver_extra}"
        ),
    )
    .unwrap();
    scenario.to_string_lossy().into_owned()
}

#[test]
fn csvs_follow_the_first_order_closed_form() {
    // First-order kinetics (any physical-chemistry textbook, e.g. Atkins): ln c_A = ln c0 -
    // k t, so d ln c_A/d ln k = -k t: -5 at the end (2 s), -2.5 at 1 s.
    let dir = scratch("first-order");
    let scenario = first_order(&dir, "");
    for method in ["forward", "adjoint"] {
        let out = stoik(
            &[
                "sensitivity",
                &scenario,
                "--of",
                "final:A",
                "--method",
                method,
                "--csv",
                "s.csv",
                "--profile-csv",
                "p.csv",
            ],
            &dir,
        );
        assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
        let stdout = text(&out.stdout);
        assert!(stdout.contains("final A = "), "{stdout}");
        assert!(stdout.contains("R1"), "{stdout}");
        let csv = std::fs::read_to_string(dir.join("s.csv")).unwrap();
        let mut lines = csv.lines();
        assert_eq!(
            lines.next(),
            Some("rank,step,equation,normalized,derivative,unit,value")
        );
        let row: Vec<&str> = lines.next().unwrap().split(',').collect();
        assert_eq!(&row[..3], &["1", "R1", "A -> B"]);
        let normalized: f64 = row[3].parse().unwrap();
        assert_eq!(format!("{normalized:e}"), row[3], "round-trip form");
        assert!(
            (normalized + 5.0).abs() < 1e-6 * 5.0,
            "{method}: {normalized}"
        );
        let value: f64 = row[6].parse().unwrap();
        let expected = 3.0 * (-5.0f64).exp();
        assert!((value - expected).abs() < 1e-8 * expected, "{value}");
        assert_eq!(row[5], "mol/m3");
        let profile = std::fs::read_to_string(dir.join("p.csv")).unwrap();
        let mut lines = profile.lines();
        assert_eq!(
            lines.next(),
            Some("time_s,quantity,step,equation,value,derivative,normalized")
        );
        let at_one: Vec<&str> = lines
            .map(|l| l.split(',').collect::<Vec<&str>>())
            .find(|r| r[0] == "1e0" && r[1] == "A")
            .expect("A at 1 s");
        let s: f64 = at_one[6].parse().unwrap();
        assert!((s + 2.5).abs() < 1e-6 * 2.5, "{s}");
        // B starts at zero: its normalized coefficient at t = 0 is undefined, written as nan
        // with a warning.
        assert!(profile.contains("0e0,B,R1,A -> B,0e0,0e0,nan"), "{profile}");
        assert!(text(&out.stderr).contains("written as nan"));
    }
}

#[test]
fn hydrogen_ignition_delay_table_ranks_chain_branching_first() {
    let dir = scratch("demo");
    let out = stoik(
        &[
            "sensitivity",
            &demo(),
            "--of",
            "ignition-delay",
            "--method",
            "adjoint",
            "--top",
            "3",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let stdout = text(&out.stdout);
    assert!(stdout.starts_with("ignition delay = "), "{stdout}");
    let first = stdout
        .lines()
        .find(|l| l.trim_start().starts_with("1 "))
        .expect("rank 1");
    assert!(
        first.contains("R1") && first.contains("H + O2 <=> O + OH"),
        "{first}"
    );
    assert!(
        stdout.contains("(10 more; --top N or --csv for all)"),
        "{stdout}"
    );
}

#[test]
fn bad_sensitivity_input_is_located_with_exit_2() {
    let dir = scratch("bad");
    let demo = demo();
    let scenario = first_order(&dir, "");
    let cases: [(&[&str], &[&str]); 7] = [
        (
            &["sensitivity", &demo, "--of", "final:XY"],
            &["--of", "unknown species `XY`"],
        ),
        (
            &["sensitivity", &demo, "--of", "peak:oh"],
            &["--of", "did you mean `OH`"],
        ),
        (
            &["sensitivity", &demo, "--of", "largest:OH"],
            &["--of", "unknown observable `largest:OH`"],
        ),
        (
            &[
                "sensitivity",
                &demo,
                "--of",
                "ignition-delay",
                "--steps",
                "R1,R14",
            ],
            &["--steps", "R14 is out of range", "R1 to R13"],
        ),
        (
            &[
                "sensitivity",
                &demo,
                "--of",
                "ignition-delay",
                "--steps",
                "R0",
            ],
            &["--steps", "`R0` is not a step number"],
        ),
        (
            &["sensitivity", &scenario, "--of", "final:T"],
            &["temperature is not solved"],
        ),
        (
            &["sensitivity", &scenario, "--of", "ignition-delay"],
            &["no ignition delay"],
        ),
    ];
    for (args, needles) in cases {
        let out = stoik(args, &dir);
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
        for n in needles {
            assert!(err.contains(n), "{args:?}: `{n}` not in {err}");
        }
    }
    // A scenario error is located at file:line:column.
    let bad = dir.join("bad.scenario.toml");
    std::fs::write(
        &bad,
        std::fs::read_to_string(&scenario)
            .unwrap()
            .replace("A = 3.0", "X = 3.0"),
    )
    .unwrap();
    let out = stoik(
        &["sensitivity", bad.to_str().unwrap(), "--of", "final:A"],
        &dir,
    );
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(
        err.contains("bad.scenario.toml:6:20: error: unknown species `X`"),
        "{err}"
    );
}

#[test]
fn integration_failure_exits_3() {
    let dir = scratch("failure");
    let scenario = first_order(&dir, "max_steps = 2\n");
    let out = stoik(&["sensitivity", &scenario, "--of", "final:A"], &dir);
    assert_eq!(out.status.code(), Some(3), "{}", text(&out.stderr));
}

#[test]
fn sensitivity_outputs_never_overwrite_an_input() {
    let dir = scratch("inputs");
    let scenario = first_order(&dir, "");
    let before = std::fs::read_to_string(&scenario).unwrap();
    for flag in ["--csv", "--profile-csv"] {
        let out = stoik(
            &[
                "sensitivity",
                &scenario,
                "--of",
                "final:A",
                flag,
                "a-to-b.toml",
            ],
            &dir,
        );
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{err}");
        assert!(err.contains(flag), "{err}");
        assert!(err.contains("refusing to overwrite an input"), "{err}");
    }
    assert_eq!(std::fs::read_to_string(&scenario).unwrap(), before);
}

#[test]
fn falloff_limit_and_enthalpy_tables_are_written_in_full_precision() {
    let dir = scratch("extra-csvs");
    let out = stoik(
        &[
            "sensitivity",
            &demo(),
            "--of",
            "ignition-delay",
            "--falloff-limits",
            "--enthalpies",
            "--csv",
            "s.csv",
            "--falloff-limits-csv",
            "l.csv",
            "--enthalpies-csv",
            "e.csv",
            "--report",
            "s.html",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let read = |name: &str| -> Vec<Vec<String>> {
        std::fs::read_to_string(dir.join(name))
            .unwrap()
            .lines()
            .skip(1)
            .map(|l| l.split(',').map(str::to_string).collect())
            .collect()
    };
    let ranked = read("s.csv");
    let limits = read("l.csv");
    assert!(!limits.is_empty());
    // Scaling both limits of a falloff step scales the step (kf = kinf g(Pr), Pr = k0 [M] /
    // kinf): the two limits' coefficients sum to the step's (docs/sensitivity.md; an identity
    // of the falloff form, independent of the integration).
    let mut steps: Vec<&str> = limits.iter().map(|r| r[1].as_str()).collect();
    steps.dedup();
    for step in steps {
        let sum: f64 = limits
            .iter()
            .filter(|r| r[1] == step)
            .map(|r| r[4].parse::<f64>().unwrap())
            .sum();
        let whole: f64 = ranked
            .iter()
            .find(|r| r[1] == step)
            .map(|r| r[3].parse().unwrap())
            .unwrap();
        assert!(
            (sum - whole).abs() <= 1e-7 * whole.abs(),
            "{step}: limits sum to {sum}, the step has {whole}"
        );
    }
    // Enthalpies: d ln G/dH_f per kJ/mol = 1000 (dG/dH_f per J/mol) / G, for every species
    // with thermochemistry (all 9 of the demo).
    let enthalpies = read("e.csv");
    assert_eq!(enthalpies.len(), 9);
    for r in &enthalpies {
        let (normalized, derivative, value): (f64, f64, f64) = (
            r[2].parse().unwrap(),
            r[3].parse().unwrap(),
            r[5].parse().unwrap(),
        );
        assert!(
            (normalized - 1e3 * derivative / value).abs() <= 1e-12 * normalized.abs(),
            "{r:?}"
        );
    }
    // The page holds both tables with the CSVs' numbers on hover.
    let html = std::fs::read_to_string(dir.join("s.html")).unwrap();
    for section in ["Each falloff limit alone", "Formation enthalpies"] {
        assert!(html.contains(&format!("<h2>{section}</h2>")), "{section}");
    }
    for r in limits.iter().chain(&enthalpies) {
        let number = if r.len() == 8 { &r[4] } else { &r[2] };
        assert!(html.contains(&format!("title=\"{number}\"")), "{number}");
    }
    // The tables' CSVs need their tables.
    let out = stoik(
        &[
            "sensitivity",
            &demo(),
            "--of",
            "ignition-delay",
            "--enthalpies-csv",
            "x.csv",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(2), "{}", text(&out.stderr));
    assert!(!dir.join("x.csv").exists());
}
