//! `stoik check` finds what `stoik run` finds (issue 12, section 4): the same located
//! refusals, a pipe read once, the file kind decided from the parsed document, and rate
//! constants that overflow over the checked temperature range.

mod common;

use common::{repo, scratch, stoik, text};
use std::io::Write;
use std::process::{Command, Stdio};

/// Runs `stoik check /dev/stdin` with `input` written to a pipe.
fn check_stdin(input: &[u8]) -> std::process::Output {
    let mut child = Command::new(env!("CARGO_BIN_EXE_stoik"))
        .args(["check", "/dev/stdin"])
        .current_dir(repo().join("mechanisms"))
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the stoik binary starts");
    child
        .stdin
        .take()
        .expect("a pipe")
        .write_all(input)
        .expect("written");
    child.wait_with_output().expect("finished")
}

#[test]
fn check_reads_a_pipe_once_and_decides_the_kind_from_the_document() {
    // The bundled ozone-flask mechanism (3 species O2, O3, O, 3 steps... as its file says)
    // and scenario, through a pipe: both must pass as they do from their files.
    let mechanisms = repo().join("mechanisms");
    let mechanism = std::fs::read(mechanisms.join("ozone-flask.toml")).expect("bundled");
    let out = check_stdin(&mechanism);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let from_file = stoik(&["check", "ozone-flask.toml"], &mechanisms);
    let counts = |o: &std::process::Output| {
        let s = text(&o.stdout);
        s[s.find('(').unwrap_or(0)..].to_string()
    };
    assert_eq!(counts(&out), counts(&from_file));
    // A scenario whose format key is quoted is still a scenario (TOML: "a" and a are the
    // same key), and a mechanism whose description has a line starting `stoik_scenario` is
    // still a mechanism.
    let scenario = std::fs::read_to_string(mechanisms.join("ozone-flask.scenario.toml"))
        .expect("bundled scenario");
    // (A piped scenario has no folder of its own: name its mechanism by an absolute path.)
    let absolute = mechanisms.join("ozone-flask.toml");
    let scenario = scenario.replace(
        "\"ozone-flask.toml\"",
        &format!("{:?}", absolute.to_str().expect("UTF-8 path")),
    );
    let quoted = scenario.replacen("stoik_scenario", "\"stoik_scenario\"", 1);
    assert_ne!(quoted, scenario);
    let out = check_stdin(quoted.as_bytes());
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let dir = scratch("check", "kind");
    let m = "stoik_mechanism = 1\ndescription = \"\"\"\nstoik_scenario is not a key here\n\"\"\"\n[[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n[[step]]\nequation = \"A -> B\"\nforward = { prefactor = 1 }\n";
    std::fs::write(dir.join("m.toml"), m).expect("written");
    let out = stoik(&["check", "m.toml"], &dir);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    assert!(text(&out.stdout).contains("(2 species, 1 steps)"));
}

#[test]
fn check_refuses_what_run_refuses_located() {
    // All initial concentrations zero: mole fractions c_i / sum c are 0/0 (NaN in IEEE 754),
    // so run must not write them and check must refuse the scenario where `concentrations`
    // is written (line 6, column 1).
    let dir = scratch("check", "zero");
    std::fs::copy(
        repo().join("mechanisms/ozone-flask.toml"),
        dir.join("ozone-flask.toml"),
    )
    .expect("copied");
    std::fs::write(
        dir.join("z.scenario.toml"),
        "stoik_scenario = 1\nmechanism = \"ozone-flask.toml\"\n[reactor]\ntemperature = 600\n[initial]\nconcentrations = { O3 = 0, O2 = 0 }\n[output]\nend_time = 1\n",
    )
    .expect("written");
    for command in ["check", "run"] {
        let out = stoik(&[command, "z.scenario.toml"], &dir);
        assert_eq!(out.status.code(), Some(2), "{command}");
        let err = text(&out.stderr);
        assert!(
            err.contains("z.scenario.toml:6:1: error: every initial concentration is zero"),
            "{command}: {err}"
        );
    }
}

#[test]
fn check_refuses_a_rate_constant_that_overflows_in_the_checked_range() {
    // k = exp(1e6 K / T) exceeds DBL_MAX (IEEE 754 binary64, ln DBL_MAX = 709.78) below
    // 1408.9 K, inside the documented check range 200 K to 3500 K: an error at the step's
    // header (line 6), not only a warning.
    let dir = scratch("check", "overflow");
    std::fs::write(
        dir.join("m.toml"),
        "stoik_mechanism = 1\n[[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n[[step]]\nequation = \"A -> B\"\nunits = { activation_energy = \"K\" }\nforward = { prefactor = 1, activation_energy = -1e6 }\n",
    )
    .expect("written");
    let out = stoik(&["check", "m.toml"], &dir);
    assert_eq!(out.status.code(), Some(2), "{}", text(&out.stderr));
    let err = text(&out.stderr);
    assert!(
        err.contains("m.toml:6:1: error: forward rate constant of step `A -> B` is inf"),
        "{err}"
    );
}

#[test]
fn check_and_run_refuse_a_rate_constant_that_overflows_at_the_scenarios_temperature() {
    // k = 1e-50 T^100 s-1: log10 k = -50 + 100 log10 T is 304.4 at 3500 K (finite, so the
    // mechanism alone passes the 200-3500 K check) and 319.9 at 5000 K, past DBL_MAX
    // (IEEE 754 binary64, about 1.8e308). A scenario at 5000 K is refused by `check` and by
    // `run` (exit 2, before integrating), at the step's header (line 10), the same way.
    let dir = scratch("check", "hot");
    std::fs::write(
        dir.join("hot.toml"),
        "stoik_mechanism = 1\n[units]\namount = \"mol\"\nlength = \"m\"\ntime = \"s\"\n\
         [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n[[step]]\nequation = \"A -> B\"\n\
         forward = { prefactor = 1e-50, temperature_exponent = 100 }\n",
    )
    .expect("written");
    std::fs::write(
        dir.join("hot.scenario.toml"),
        "stoik_scenario = 1\nmechanism = \"hot.toml\"\n[reactor]\ntemperature = \"5000 K\"\n\
         [initial]\nconcentrations = { A = 1 }\n[output]\nend_time = \"1 s\"\n",
    )
    .expect("written");
    let out = stoik(&["check", "hot.toml"], &dir);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let expected = "hot.toml:10:1: error: forward rate constant of step `A -> B` is inf at 5000 K";
    for args in [
        &["check", "hot.scenario.toml"][..],
        &["run", "hot.scenario.toml", "-o", "hot.csv"][..],
    ] {
        let out = stoik(args, &dir);
        assert_eq!(
            out.status.code(),
            Some(2),
            "{args:?}: {}",
            text(&out.stderr)
        );
        let err = text(&out.stderr);
        assert!(err.contains(expected), "{args:?}: {err}");
        assert!(
            err.contains("the scenario runs at 5000 K"),
            "{args:?}: {err}"
        );
    }
    assert!(!dir.join("hot.csv").exists());
    assert!(!dir.join("hot.partial.csv").exists());
}

#[test]
fn energetics_refuses_temperatures_outside_the_range_and_names_overflows_in_words() {
    // The documented temperature range is 1 K to 1e5 K (the scenario range). At 1 K the
    // equilibrium constant of H2 + OH <=> H2O + H, exp(-dG/(R T)) with dG = -61.85 kJ/mol, is
    // exp(7439), beyond DBL_MAX = 1.8e308 (IEEE 754): printed in words, never as inf.
    let mechanisms = repo().join("mechanisms");
    for bad in ["1e308", "1e-320", "0.5"] {
        let out = stoik(
            &["energetics", "hydrogen-oxygen.toml", "--temperature-k", bad],
            &mechanisms,
        );
        assert_eq!(out.status.code(), Some(2), "{bad}");
        assert!(text(&out.stderr).contains("--temperature-k"), "{bad}");
    }
    let out = stoik(
        &["energetics", "hydrogen-oxygen.toml", "--temperature-k", "1"],
        &mechanisms,
    );
    assert_eq!(out.status.code(), Some(0));
    let table = text(&out.stdout);
    let row = table
        .lines()
        .find(|l| l.contains("H2 + OH <=> H2O + H"))
        .expect("the step's row");
    assert!(row.ends_with("out of range"), "{row}");
    for token in table.split_whitespace() {
        assert!(
            !matches!(token.to_ascii_lowercase().as_str(), "inf" | "-inf" | "nan"),
            "{table}"
        );
    }
}
