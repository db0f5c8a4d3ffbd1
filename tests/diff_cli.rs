//! `stoik diff`: exit statuses (0 no kinetic change, 1 changes, 2 bad input), the report, the
//! TOML form and git revisions, through the real binary.

mod common;

use common::{repo, stoik, text};
use std::path::{Path, PathBuf};

fn scratch(name: &str) -> PathBuf {
    common::scratch("diff-cli", name)
}

/// A copy of the hydrogen mechanism and its thermo file in `dir`, with `edit` applied to the
/// mechanism's text.
fn hydrogen_copy(dir: &Path, name: &str, edit: impl Fn(&str) -> String) -> PathBuf {
    let original =
        std::fs::read_to_string(repo().join("mechanisms/hydrogen-oxygen.toml")).expect("read");
    std::fs::create_dir_all(dir.join("thermo")).expect("folder");
    std::fs::copy(
        repo().join("mechanisms/thermo/janaf-nasa7.toml"),
        dir.join("thermo/janaf-nasa7.toml"),
    )
    .expect("copy");
    let path = dir.join(name);
    std::fs::write(&path, edit(&original)).expect("write");
    path
}

#[test]
fn a_comment_edit_is_no_kinetic_change_and_exits_0() {
    let dir = scratch("same");
    let new = hydrogen_copy(&dir, "new.toml", |t| {
        t.replace(
            "# Chain branching and propagation",
            "# (comment edited)\n# another",
        )
        .replace(
            "equation = \"H + O2 <=> O + OH\"",
            "equation = \"O2   +  H ⇌ OH + O\"",
        )
    });
    let old = repo().join("mechanisms/hydrogen-oxygen.toml");
    let out = stoik(
        &["diff", old.to_str().unwrap(), new.to_str().unwrap()],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let report = text(&out.stdout);
    assert!(
        report.contains("no kinetic change (13 step(s) matched"),
        "{report}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_doubled_prefactor_exits_1_with_ratio_2_in_both_forms() {
    let dir = scratch("double");
    // 7.094e15 = 2 x 3.547e15 (both integers, exact in binary; the unit conversion multiplies
    // both by the same factor): k_new/k_old = 2 exactly.
    let old = hydrogen_copy(&dir, "old.toml", |t| t.to_string());
    let new = hydrogen_copy(&dir, "new.toml", |t| {
        t.replacen("prefactor = 3.547e15", "prefactor = 7.094e15", 1)
    });
    let args = ["diff", old.to_str().unwrap(), new.to_str().unwrap()];
    let out = stoik(&args, &dir);
    assert_eq!(out.status.code(), Some(1), "{}", text(&out.stderr));
    let report = text(&out.stdout);
    assert!(
        report.contains("~ H + O2 <=> O + OH  (old #1, new #1)"),
        "{report}"
    );
    let forward_row = report
        .lines()
        .find(|l| l.trim_start().starts_with("forward "))
        .expect("a forward row");
    let cells: Vec<&str> = forward_row.split_whitespace().skip(1).collect();
    assert_eq!(cells, vec!["2", "2", "2"], "{report}");
    assert!(report.contains("1 kinetic change(s); 13 step(s) matched, 12 unchanged"));
    assert!(text(&out.stderr).is_empty(), "{}", text(&out.stderr));

    let mut toml_args = args.to_vec();
    toml_args.extend(["--format", "toml", "--temperatures-k", "500,1500"]);
    let out = stoik(&toml_args, &dir);
    assert_eq!(out.status.code(), Some(1));
    let doc: toml::Table = text(&out.stdout).parse().expect("TOML");
    let step = &doc["step"].as_array().expect("steps")[0];
    assert_eq!(step["edit"].as_str(), Some("changed"));
    let ratios = step["ratio"].as_array().expect("ratios");
    let temperatures: Vec<f64> = ratios
        .iter()
        .map(|r| r["temperature_k"].as_float().unwrap())
        .collect();
    assert_eq!(temperatures, vec![500.0, 1500.0]);
    for r in ratios {
        assert_eq!(r["forward"].as_float(), Some(2.0));
        assert_eq!(r["reverse"].as_float(), Some(2.0));
    }
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn bad_input_exits_2_with_a_located_message() {
    let dir = scratch("bad");
    let good = hydrogen_copy(&dir, "good.toml", |t| t.to_string());
    let broken = hydrogen_copy(&dir, "broken.toml", |t| {
        t.replacen(
            "equation = \"O + H2 <=> H + OH\"",
            "equation = \"O + H2 <=> H + OHX\"",
            1,
        )
    });
    let g = good.to_str().unwrap();
    // An unknown species, at its line (the second step's equation is on line 73).
    let out = stoik(&["diff", g, broken.to_str().unwrap()], &dir);
    assert_eq!(out.status.code(), Some(2));
    let err = text(&out.stderr);
    assert!(err.contains("broken.toml:73:"), "{err}");
    // A missing file; a revision that does not exist (the folder is no git repository, or
    // the revision is unknown); a temperature that is not positive.
    let out = stoik(&["diff", g, "missing.toml"], &dir);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        text(&out.stderr).contains("missing.toml"),
        "{}",
        text(&out.stderr)
    );
    let out = stoik(&["diff", "nosuchrev:good.toml", g], &dir);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        text(&out.stderr).starts_with("error: nosuchrev:good.toml: "),
        "{}",
        text(&out.stderr)
    );
    let out = stoik(&["diff", g, g, "--temperatures-k", "300,-1"], &dir);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        text(&out.stderr).contains("--temperatures-k: -1"),
        "{}",
        text(&out.stderr)
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_git_revision_against_the_working_copy() {
    let git = |dir: &Path, args: &[&str]| {
        std::process::Command::new("git")
            .args([
                "-c",
                "user.name=stoik test",
                "-c",
                "user.email=test@example.invalid",
            ])
            .args(args)
            .current_dir(dir)
            .output()
            .map(|o| o.status.success())
            .unwrap_or(false)
    };
    if std::process::Command::new("git")
        .arg("--version")
        .output()
        .is_err()
    {
        eprintln!("SKIPPED: the `git` program is not installed");
        return;
    }
    let dir = scratch("git");
    let path = hydrogen_copy(&dir, "h2.toml", |t| t.to_string());
    assert!(git(&dir, &["init", "-q"]));
    assert!(git(&dir, &["add", "."]));
    assert!(git(&dir, &["commit", "-q", "-m", "first"]));
    let out = stoik(&["diff", "HEAD:h2.toml", "h2.toml"], &dir);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    // A step removed in the working copy: exit 1, the step named.
    let edited = std::fs::read_to_string(&path).expect("read").replacen(
        "[[step]]\nequation = \"HO2 + O <=> O2 + OH\"\nforward = { prefactor = 3.25e13 }\n",
        "",
        1,
    );
    std::fs::write(&path, edited).expect("write");
    let out = stoik(&["diff", "HEAD:h2.toml", "h2.toml"], &dir);
    assert_eq!(out.status.code(), Some(1), "{}", text(&out.stderr));
    assert!(
        text(&out.stdout).contains("- HO2 + O <=> O2 + OH  (old #12)"),
        "{}",
        text(&out.stdout)
    );
    let _ = std::fs::remove_dir_all(&dir);
}
