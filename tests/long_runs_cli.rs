//! Long runs from the `stoik` binary: the wall-time limit, Ctrl-C and the progress line.
//!
//! The run is the Oregonator (Field & Noyes' model of the Belousov-Zhabotinsky reaction,
//! bundled as `mechanisms/oregonator.toml`) carried to 1e9 s: it oscillates for ever, so it
//! takes minutes, and every stopped run must still hold correct rows. Its first four rows are
//! checked against the published reference solution at t = 30, 120, 300 and 360 s (Hairer &
//! Wanner's test-set data, `stoik_testsupport::published::OREGONATOR`).

// Reference values are quoted with every digit their source publishes.
#![allow(clippy::excessive_precision)]

mod common;

use common::{repo, text, Table};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};
use stoik_testsupport::published::OREGONATOR;

fn scratch(name: &str) -> PathBuf {
    let dir = common::scratch("longruns", name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch folder");
    std::fs::copy(
        repo().join("mechanisms/oregonator.toml"),
        dir.join("oregonator.toml"),
    )
    .expect("copy");
    std::fs::write(
        dir.join("long.scenario.toml"),
        "stoik_scenario = 1\nmechanism = \"oregonator.toml\"\n[reactor]\ntemperature = \"298.15 K\"\n\
         [initial]\nconcentrations = { X = 1.0, Y = 2.0, Z = 3.0 }\n\
         [output]\nend_time = \"1e9 s\"\ntimes = [30.0, 120.0, 300.0, 360.0, 1e3, 1e9]\n\
         [solver]\nrelative_tolerance = 1e-11\nabsolute_tolerance = 1e-12\nmax_steps = 1000000000\n",
    )
    .expect("write");
    dir
}

/// The partial profile against the published reference rows it holds, and its last row
/// past them but short of the end.
fn check_partial(dir: &Path) -> Table {
    let table = Table::read(&dir.join("out.partial.csv"));
    let t = table.col("time [s]");
    let cols = ["X [mol/m3]", "Y [mol/m3]", "Z [mol/m3]"].map(|c| table.col(c));
    assert_eq!(table.rows[0][t], 0.0);
    // The run is stopped after a second or more: far past the reference times (the first
    // 360 s take about 5,000 steps, a few milliseconds).
    assert!(table.rows.len() >= 6, "{} rows", table.rows.len());
    for (row, (time, expected)) in table.rows[1..5].iter().zip(OREGONATOR.iter()) {
        assert_eq!(row[t], *time);
        for (&c, &e) in cols.iter().zip(expected) {
            // The oscillation amplifies phase errors: 1e-5 relative at rtol 1e-11, as the
            // library test of the same reference (tests/published_problems.rs).
            let rel = (row[c] - e).abs() / e.abs();
            assert!(rel < 1e-5, "t = {time}: {} against {e} ({rel:e})", row[c]);
        }
    }
    let last = table.rows.last().expect("rows")[t];
    assert!(last > 360.0 && last < 1e9, "last row at {last} s");
    table
}

/// The time printed in `message` after `prefix` (the shortest digits that read back the same).
fn time_after(message: &str, prefix: &str) -> f64 {
    let rest = &message[message.find(prefix).expect(prefix) + prefix.len()..];
    rest.split(' ')
        .next()
        .expect("a number")
        .parse()
        .expect("a number")
}

#[test]
fn the_wall_time_limit_ends_a_run_with_its_profile_so_far() {
    let dir = scratch("limit");
    let started = Instant::now();
    let out = Command::new(env!("CARGO_BIN_EXE_stoik"))
        .args([
            "run",
            "long.scenario.toml",
            "-o",
            "out.csv",
            "--wall-time-limit-s",
            "1.5",
        ])
        .current_dir(&dir)
        .output()
        .expect("the stoik binary starts");
    let elapsed = started.elapsed();
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(3), "{err}");
    assert!(
        err.contains("the wall-time limit of 1.5 s ran out"),
        "{err}"
    );
    assert!(err.contains("out.partial.csv"), "{err}");
    assert!(!dir.join("out.csv").exists());
    // Stopped near the limit (the whole run would take minutes); generous for a busy machine.
    assert!(elapsed < Duration::from_secs(60), "{elapsed:?}");
    let table = check_partial(&dir);
    // The last row is the state where the run stopped, at the time the message gives.
    let t = table.col("time [s]");
    assert_eq!(
        table.rows.last().expect("rows")[t],
        time_after(&err, "integration failed at t = ")
    );
    // Not a terminal: no progress line.
    assert!(!err.contains(" steps,"), "{err}");
}

#[test]
fn the_scenario_can_set_the_wall_time_limit_and_bad_limits_are_refused() {
    let dir = scratch("scenario-limit");
    let scenario = std::fs::read_to_string(dir.join("long.scenario.toml")).expect("read");
    std::fs::write(
        dir.join("limited.scenario.toml"),
        format!("{scenario}wall_time_limit = \"1500 ms\"\n"),
    )
    .expect("write");
    let out = common::stoik(&["run", "limited.scenario.toml", "-o", "out.csv"], &dir);
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(3), "{err}");
    assert!(
        err.contains("the wall-time limit of 1.5 s ran out"),
        "{err}"
    );
    check_partial(&dir);

    std::fs::write(
        dir.join("bad.scenario.toml"),
        format!("{scenario}wall_time_limit = \"-2 s\"\n"),
    )
    .expect("write");
    let out = common::stoik(&["run", "bad.scenario.toml", "-o", "bad.csv"], &dir);
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    // Located: the key is on line 14 of the file.
    assert!(err.contains("bad.scenario.toml:14:"), "{err}");
    assert!(err.contains("wall_time_limit"), "{err}");
    let out = common::stoik(
        &[
            "run",
            "long.scenario.toml",
            "-o",
            "bad.csv",
            "--wall-time-limit-s",
            "0",
        ],
        &dir,
    );
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains("--wall-time-limit-s"), "{err}");
}

#[cfg(unix)]
#[test]
fn ctrl_c_writes_the_profile_so_far_and_exits_130() {
    let dir = scratch("interrupt");
    let child = Command::new(env!("CARGO_BIN_EXE_stoik"))
        .args(["run", "long.scenario.toml", "-o", "out.csv"])
        .current_dir(&dir)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the stoik binary starts");
    std::thread::sleep(Duration::from_millis(2500));
    let pid = i32::try_from(child.id()).expect("a pid");
    // SAFETY: sending SIGINT to our own child process, which is still running (the whole
    // run takes minutes).
    let sent = unsafe { libc::kill(pid, libc::SIGINT) };
    assert_eq!(sent, 0);
    let out = child.wait_with_output().expect("the run ends");
    let err = text(&out.stderr);
    // 128 + SIGINT, the shell convention for a process ended by Ctrl-C.
    assert_eq!(out.status.code(), Some(130), "{err}");
    assert!(err.contains("interrupted at t = "), "{err}");
    assert!(!dir.join("out.csv").exists());
    let table = check_partial(&dir);
    let t = table.col("time [s]");
    assert_eq!(
        table.rows.last().expect("rows")[t],
        time_after(&err, "interrupted at t = ")
    );
}

#[cfg(unix)]
#[test]
fn a_terminal_shows_the_progress_of_a_long_run() {
    // util-linux `script` gives the run a pseudo-terminal (Debian: bsdutils, an essential
    // package). The run is limited to 3 s; the line appears after 1 s.
    let dir = scratch("progress");
    let bin = env!("CARGO_BIN_EXE_stoik");
    let out = Command::new("script")
        .args([
            "-qec",
            &format!("{bin} run long.scenario.toml -o out.csv --wall-time-limit-s 3"),
            "/dev/null",
        ])
        .current_dir(&dir)
        .output()
        .expect("`script` (util-linux) runs");
    let all = text(&out.stdout);
    assert_eq!(out.status.code(), Some(3), "{all}");
    // "t = 2.143e3 s of 1.000e9 s, 27166 steps, 1s elapsed"
    let line = all
        .split(['\r', '\n'])
        .find(|l| l.contains(" s of 1.000e9 s, ") && l.contains(" steps, "))
        .unwrap_or_else(|| panic!("no progress line in {all:?}"));
    let t = time_after(line, "t = ");
    assert!(t > 360.0 && t < 1e9, "{line}");
    check_partial(&dir);
    // --quiet: no progress line even on a terminal.
    let out = Command::new("script")
        .args([
            "-qec",
            &format!("{bin} run long.scenario.toml -o q.csv --wall-time-limit-s 2 --quiet"),
            "/dev/null",
        ])
        .current_dir(&dir)
        .output()
        .expect("`script` (util-linux) runs");
    let all = text(&out.stdout);
    assert_eq!(out.status.code(), Some(3), "{all}");
    assert!(!all.contains(" steps, "), "{all}");
}
