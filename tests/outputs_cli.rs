//! The real `stoik` binary and the files around it (issue 12, sections 1, 2 and 6): outputs
//! that would overwrite an input or each other are refused before anything runs, a failed run
//! keeps an existing output, special input paths are refused at once, invalid UTF-8 is
//! located. The expectations are the rules of issue 12 and docs/file-format.md (exit 2 for a
//! refused path, every input byte left as it was, the partial profile beside the output).

mod common;

use common::{repo, stoik, text};
use std::path::{Path, PathBuf};

fn scratch(name: &str) -> PathBuf {
    let dir = common::scratch("outputs", name);
    // A fresh folder: a previous run of the same test may have left files.
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch folder");
    dir
}

/// Copies bundled files (paths relative to `mechanisms/`) into `dir`, keeping subfolders.
fn copy(dir: &Path, files: &[&str]) {
    for f in files {
        let to = dir.join(f);
        std::fs::create_dir_all(to.parent().expect("a folder")).expect("folder");
        std::fs::copy(repo().join("mechanisms").join(f), &to).expect("copy");
    }
}

fn bytes(path: &Path) -> Vec<u8> {
    std::fs::read(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

const OZONE: [&str; 2] = ["ozone-flask.scenario.toml", "ozone-flask.toml"];

#[test]
fn an_output_resolving_to_an_input_is_refused_in_every_spelling() {
    let dir = scratch("alias");
    copy(&dir, &OZONE);
    copy(
        &dir,
        &[
            "hydrogen-oxygen.scenario.toml",
            "hydrogen-oxygen.toml",
            "thermo/janaf-nasa7.toml",
        ],
    );
    std::fs::create_dir_all(dir.join("sub")).expect("sub");
    #[cfg(unix)]
    std::os::unix::fs::symlink("ozone-flask.toml", dir.join("link.csv")).expect("symlink");
    let absolute = dir.join("ozone-flask.scenario.toml");
    let mut spellings = vec![
        ("ozone-flask.scenario.toml", "ozone-flask.scenario.toml"),
        ("./ozone-flask.toml", "ozone-flask.toml"),
        ("sub/../ozone-flask.toml", "ozone-flask.toml"),
        (
            absolute.to_str().expect("utf-8 path"),
            "ozone-flask.scenario.toml",
        ),
    ];
    #[cfg(unix)]
    spellings.push(("link.csv", "ozone-flask.toml"));
    for (output, input) in spellings {
        let before = bytes(&dir.join(input));
        let out = stoik(&["run", "ozone-flask.scenario.toml", "-o", output], &dir);
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "-o {output}: {err}");
        assert!(err.contains("-o") && err.contains("input file"), "{err}");
        assert_eq!(
            bytes(&dir.join(input)),
            before,
            "-o {output} changed {input}"
        );
    }
    // The thermo file a mechanism names is an input too.
    let thermo = dir.join("thermo/janaf-nasa7.toml");
    let before = bytes(&thermo);
    let out = stoik(
        &[
            "run",
            "hydrogen-oxygen.scenario.toml",
            "-o",
            "thermo/janaf-nasa7.toml",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(2), "{}", text(&out.stderr));
    assert_eq!(bytes(&thermo), before);
    // A default output name equal to the mechanism: the scenario's CSV would be its
    // mechanism, through run and batch.
    let mechanism = std::fs::read_to_string(dir.join("ozone-flask.toml")).expect("read");
    std::fs::write(dir.join("ozone-flask.csv"), &mechanism).expect("write");
    let scenario =
        std::fs::read_to_string(dir.join("ozone-flask.scenario.toml")).expect("scenario");
    std::fs::write(
        dir.join("ozone-flask.scenario.toml"),
        scenario.replace("\"ozone-flask.toml\"", "\"ozone-flask.csv\""),
    )
    .expect("write");
    for args in [
        vec!["run", "ozone-flask.scenario.toml"],
        vec!["batch", "ozone-flask.scenario.toml", "-q"],
    ] {
        let out = stoik(&args, &dir);
        assert_eq!(
            out.status.code(),
            Some(2),
            "{args:?}: {}",
            text(&out.stderr)
        );
        assert_eq!(
            std::fs::read_to_string(dir.join("ozone-flask.csv")).expect("read"),
            mechanism
        );
    }
}

#[test]
fn fit_outputs_aliasing_the_input_or_each_other_are_refused_before_writing() {
    let dir = scratch("fit-alias");
    copy(&dir, &["data/ethanal-decomposition.csv"]);
    let data = "data/ethanal-decomposition.csv";
    let before = bytes(&dir.join(data));
    for flag in ["--svg", "--snippet"] {
        let out = stoik(
            &[
                "fit-rate",
                data,
                flag,
                "./data/../data/ethanal-decomposition.csv",
            ],
            &dir,
        );
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{flag}: {err}");
        assert!(err.contains(flag), "{err}");
        assert_eq!(bytes(&dir.join(data)), before);
    }
    // Both outputs to one path: refused, naming both flags; nothing written.
    let out = stoik(
        &["fit-rate", data, "--svg", "x.out", "--snippet", "x.out"],
        &dir,
    );
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains("--svg") && err.contains("--snippet"), "{err}");
    assert!(!dir.join("x.out").exists());
    // A snippet path that is fine and an SVG path whose folder is missing: the existing
    // snippet file keeps its content (every path is checked before any is written).
    std::fs::write(dir.join("s.toml"), "earlier content\n").expect("write");
    let out = stoik(
        &[
            "fit-rate",
            data,
            "--snippet",
            "s.toml",
            "--svg",
            "no/dir/p.svg",
        ],
        &dir,
    );
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains("--svg") && err.contains("no/dir"), "{err}");
    assert_eq!(
        std::fs::read_to_string(dir.join("s.toml")).expect("read"),
        "earlier content\n"
    );
    // fit-thermo TABLE -o TABLE.
    let janaf = repo().join("crates/thermo/tests/data/janaf/H2O.tsv");
    std::fs::copy(&janaf, dir.join("H2O.tsv")).expect("copy");
    let before = bytes(&dir.join("H2O.tsv"));
    let out = stoik(&["fit-thermo", "H2O.tsv", "-o", "./H2O.tsv"], &dir);
    assert_eq!(out.status.code(), Some(2), "{}", text(&out.stderr));
    assert_eq!(bytes(&dir.join("H2O.tsv")), before);
}

#[test]
fn colliding_outputs_are_refused_naming_both_sources() {
    let dir = scratch("collide");
    for sub in ["a", "b"] {
        for f in OZONE {
            let to = dir.join(sub).join(f);
            std::fs::create_dir_all(to.parent().expect("folder")).expect("folder");
            std::fs::copy(repo().join("mechanisms").join(f), to).expect("copy");
        }
    }
    let out = stoik(
        &[
            "batch",
            "a/ozone-flask.scenario.toml",
            "b/ozone-flask.scenario.toml",
            "--output-dir",
            "out",
            "-q",
        ],
        &dir,
    );
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(
        err.contains("a/ozone-flask.scenario.toml") && err.contains("b/ozone-flask.scenario.toml"),
        "{err}"
    );
    assert!(
        !dir.join("out").exists(),
        "a refused batch leaves no folder"
    );
    // 600, 600.0 and 6e2 are one number (IEEE 754 binary64): one run asked for twice.
    let out = stoik(
        &[
            "batch",
            "a/ozone-flask.scenario.toml",
            "--output-dir",
            "out",
            "-q",
            "--temperatures-k",
            "600,600.0,6e2",
        ],
        &dir,
    );
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(
        err.contains("--temperatures-k") && err.contains("values 1 and 2"),
        "{err}"
    );
    // Two tables of one stem, and two renames to one name, in fit-thermo.
    let janaf = repo().join("crates/thermo/tests/data/janaf");
    for sub in ["a", "b"] {
        std::fs::copy(janaf.join("H2O.tsv"), dir.join(sub).join("H2O.tsv")).expect("copy");
    }
    std::fs::copy(janaf.join("O2.tsv"), dir.join("O2.tsv")).expect("copy");
    for args in [
        vec!["fit-thermo", "a/H2O.tsv", "b/H2O.tsv", "-o", "t.toml"],
        vec![
            "fit-thermo",
            "a/H2O.tsv",
            "O2.tsv",
            "--rename",
            "H2O=X",
            "--rename",
            "O2=X",
            "-o",
            "t.toml",
        ],
    ] {
        let out = stoik(&args, &dir);
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains(args[1]) && err.contains(args[2]), "{err}");
        assert!(!dir.join("t.toml").exists());
    }
}

#[test]
fn a_failed_run_keeps_an_existing_output_and_writes_the_partial_profile_beside_it() {
    let dir = scratch("partial");
    copy(&dir, &["robertson.toml"]);
    std::fs::write(
        dir.join("short.scenario.toml"),
        "stoik_scenario = 1\nmechanism = \"robertson.toml\"\n[reactor]\ntemperature = 300\n\
         [initial]\nconcentrations = { A = 1.0 }\n[output]\nend_time = \"1e11 s\"\n\
         grid = { spacing = \"log\", first = \"1e-6 s\", points = 40 }\n\
         [solver]\nmax_steps = 60\n",
    )
    .expect("write");
    std::fs::write(dir.join("out.csv"), "earlier complete profile\n").expect("write");
    let out = stoik(&["run", "short.scenario.toml", "-o", "out.csv"], &dir);
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(3), "{err}");
    assert!(err.contains("out.partial.csv"), "{err}");
    assert_eq!(
        std::fs::read_to_string(dir.join("out.csv")).expect("read"),
        "earlier complete profile\n"
    );
    let partial = std::fs::read_to_string(dir.join("out.partial.csv")).expect("partial");
    // Some of the 41 rows were computed before the step limit of 60, not all.
    let rows = partial.lines().count() - 1;
    assert!((1..41).contains(&rows), "{rows} rows");
}

#[test]
fn run_refuses_a_missing_output_folder_before_integrating() {
    let dir = scratch("nofolder");
    copy(&dir, &OZONE);
    let out = stoik(
        &["run", "ozone-flask.scenario.toml", "-o", "no/dir/out.csv"],
        &dir,
    );
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains("no/dir"), "{err}");
    // Refused before the run: no summary was printed.
    assert!(
        !text(&out.stdout).contains("final state"),
        "{}",
        text(&out.stdout)
    );
}

#[test]
fn batch_temperature_names_stay_short_and_bad_temperatures_exit_2_as_in_run() {
    let dir = scratch("tnames");
    copy(&dir, &OZONE);
    // 1e300 K is accepted by the plan; its CSV name is `-1e300K`, not 301 digits.
    let out = stoik(
        &[
            "batch",
            "ozone-flask.scenario.toml",
            "--output-dir",
            "out",
            "-q",
            "--temperatures-k",
            "1e300",
        ],
        &dir,
    );
    let names: Vec<String> = std::fs::read_dir(dir.join("out"))
        .map(|d| {
            d.filter_map(|e| e.ok())
                .map(|e| e.file_name().to_string_lossy().into_owned())
                .collect()
        })
        .unwrap_or_default();
    assert!(
        names.iter().all(|n| n.len() < 40),
        "{names:?} {}",
        text(&out.stderr)
    );
    // The same bad temperature gives the same exit status through run and batch.
    let run = stoik(
        &[
            "run",
            "ozone-flask.scenario.toml",
            "-o",
            "r.csv",
            "--temperature-k",
            "5e-324",
        ],
        &dir,
    );
    let batch = stoik(
        &[
            "batch",
            "ozone-flask.scenario.toml",
            "--output-dir",
            "out2",
            "-q",
            "--temperatures-k",
            "5e-324",
        ],
        &dir,
    );
    assert_eq!(
        run.status.code(),
        batch.status.code(),
        "run: {} batch: {}",
        text(&run.stderr),
        text(&batch.stderr)
    );
    assert_eq!(run.status.code(), Some(2));
}

#[test]
fn fit_thermo_refuses_non_finite_and_inconsistent_temperature_flags() {
    let dir = scratch("thermoflags");
    let janaf = repo().join("crates/thermo/tests/data/janaf/H2O.tsv");
    std::fs::copy(&janaf, dir.join("H2O.tsv")).expect("copy");
    for (flag, value) in [
        ("--low-k", "nan"),
        ("--high-k", "inf"),
        ("--common-temperature-k", "-1"),
        ("--low-k", "7000"),
        ("--common-temperature-k", "100"),
    ] {
        let given = format!("{flag}={value}");
        let out = stoik(&["fit-thermo", "H2O.tsv", "-o", "t.toml", &given], &dir);
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{flag} {value}: {err}");
        assert!(err.contains(flag), "{err}");
        assert!(!dir.join("t.toml").exists());
    }
}

#[cfg(unix)]
#[test]
fn special_input_paths_are_refused_at_once_with_their_kind() {
    let dir = scratch("special");
    copy(&dir, &OZONE);
    let fifo = dir.join("pipe.toml");
    let status = std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .expect("mkfifo runs");
    assert!(status.success());
    std::fs::create_dir_all(dir.join("afolder.toml")).expect("folder");
    for (path, kind) in [
        ("pipe.toml", "FIFO"),
        ("/dev/zero", "character device"),
        ("afolder.toml", "folder"),
    ] {
        for args in [
            vec!["check", path],
            vec!["energetics", path],
            vec!["run", path, "-o", "o.csv"],
            vec!["fit-rate", path],
            vec!["fit-thermo", path, "-o", "t.toml"],
        ] {
            // A FIFO with no writer would block a reader forever; the test would hang.
            let out = stoik(&args, &dir);
            let err = text(&out.stderr);
            assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
            assert!(err.contains(path) && err.contains(kind), "{args:?}: {err}");
        }
    }
}

#[test]
fn invalid_utf8_is_reported_at_its_line_and_column() {
    let dir = scratch("utf8");
    copy(&dir, &OZONE);
    // A 0xFF byte in a comment on a new line 2, column 3 of the mechanism (0xFF never
    // occurs in UTF-8, RFC 3629 section 1).
    let path = dir.join("ozone-flask.toml");
    let mut text_bytes = bytes(&path);
    let first_newline = text_bytes.iter().position(|&b| b == b'\n').expect("a line");
    text_bytes.splice(first_newline + 1..first_newline + 1, b"# \xff\n".to_vec());
    std::fs::write(&path, text_bytes).expect("write");
    for args in [
        vec!["check", "ozone-flask.toml"],
        vec!["run", "ozone-flask.scenario.toml", "-o", "o.csv"],
    ] {
        let out = stoik(&args, &dir);
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{err}");
        assert!(err.contains("ozone-flask.toml:2:3:"), "{args:?}: {err}");
    }
}
