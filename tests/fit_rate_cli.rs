//! `stoik fit-rate` from the real binary: the printed fit, the snippet, the plot, bad input.

// Reference values are quoted with every digit their source publishes.
#![allow(clippy::excessive_precision)]

mod common;

use common::{repo, stoik, text};

fn scratch(name: &str) -> std::path::PathBuf {
    common::scratch("fit-rate", name)
}

/// The first number after `label` at the start of a line of `report`.
fn value_after(report: &str, label: &str) -> f64 {
    let line = report
        .lines()
        .find(|l| l.starts_with(label))
        .unwrap_or_else(|| panic!("no line `{label}` in\n{report}"));
    line[label.len()..]
        .split_whitespace()
        .next()
        .and_then(|v| v.parse().ok())
        .unwrap_or_else(|| panic!("no number in `{line}`"))
}

#[test]
fn ethanal_fit_prints_the_textbook_parameters_and_writes_snippet_and_plot() {
    let dir = scratch("ethanal");
    let data = repo().join("mechanisms/data/ethanal-decomposition.csv");
    let out = stoik(
        &[
            "fit-rate",
            data.to_str().unwrap(),
            "--equation",
            "CH3CHO -> CH4 + CO",
            "--svg",
            "ethanal.svg",
            "--snippet",
            "ethanal-step.toml",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let report = text(&out.stdout);
    // Gas-phase decomposition of ethanal, worked example in Atkins' *Physical Chemistry* (data
    // from memory, partly corroborated); least squares recomputed: Ea = 188.33 kJ/mol and
    // A = 1.079e12 dm3 mol-1 s-1, each within 0.1%.
    let ea = value_after(&report, "Ea [kJ/mol]");
    let a = value_after(&report, "A [dm3 mol-1 s-1]");
    assert!((ea / 188.33 - 1.0).abs() < 1e-3, "Ea = {ea}");
    assert!((a / 1.079e12 - 1.0).abs() < 1e-3, "A = {a}");
    // 8 points, 2 parameters: t(0.975, 6) = 2.446912 (standard statistical tables).
    assert!(report.contains("Student t with 6 degrees of freedom (t = 2.4469)"));
    assert!(report.contains("about T_ref ="));
    assert!(report.contains("studentized"));
    assert!(report.contains("confidence band"));

    // The snippet parses as part of a mechanism and carries the fitted parameters: in SI,
    // A = 1.079e12 dm3 mol-1 s-1 = 1.079e9 m3 mol-1 s-1 (1 dm3 = 1e-3 m3) and Ea = 188.33
    // kJ/mol (same source), each within 0.1%.
    let snippet = std::fs::read_to_string(dir.join("ethanal-step.toml")).unwrap();
    assert!(snippet.contains("ethanal-decomposition.csv"), "{snippet}");
    let mechanism = format!(
        "stoik_mechanism = 1\n[[species]]\nname = \"CH3CHO\"\natoms = {{ C = 2, H = 4, O = 1 }}\n\
         [[species]]\nname = \"CH4\"\natoms = {{ C = 1, H = 4 }}\n\
         [[species]]\nname = \"CO\"\natoms = {{ C = 1, O = 1 }}\n{snippet}"
    );
    let file = stoik::mechanism::parse_mechanism_in(&mechanism, "snippet", None)
        .expect("the snippet parses");
    let step = &file.mechanism.steps[0];
    assert!((step.forward.pre_exponential_si / 1.079e9 - 1.0).abs() < 1e-3);
    assert!((step.forward.activation_energy_j_per_mol / 188_330.0 - 1.0).abs() < 1e-3);
    assert!(step
        .note
        .as_deref()
        .unwrap()
        .contains("ethanal-decomposition.csv"));

    // The plot (drawn by plotters): one filled marker per data point (8 in the source's
    // table) plus the legend's, the fitted line, its band, the axis labels.
    let svg = std::fs::read_to_string(dir.join("ethanal.svg")).unwrap();
    assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
    assert_eq!(svg.matches("<circle").count(), 8 + 1);
    assert_eq!(svg.matches("fill=\"#DE2D26\"").count(), 8 + 1);
    assert!(svg.contains("<polygon") && svg.contains("stroke=\"#08519C\""));
    assert!(svg.contains("ln(k / (dm3 mol-1 s-1))") && svg.contains("1000 K / T"));
}

#[test]
fn modified_fit_of_a_narrow_range_warns_about_n() {
    // 700-1000 K (ratio 1.43) cannot determine a temperature exponent (common practice):
    // the modified fit of the ethanal data (Atkins' Physical Chemistry, data from memory)
    // warns with the numbers.
    let data = repo().join("mechanisms/data/ethanal-decomposition.csv");
    let out = stoik(
        &["fit-rate", data.to_str().unwrap(), "--model", "modified"],
        &repo(),
    );
    assert_eq!(out.status.code(), Some(0));
    let err = text(&out.stderr);
    assert!(
        err.contains("warning: the temperature range 700.0-1000.0 K (ratio 1.429) is too narrow to determine n"),
        "{err}"
    );
}

#[test]
fn two_point_form_from_the_binary() {
    // Two-point form (exact arithmetic): a rate constant that doubles between 298.15 K and
    // 308.15 K has Ea = R ln 2 / (1/298.15 - 1/308.15) = 52.9489 kJ/mol.
    let dir = scratch("two-point");
    std::fs::write(
        dir.join("two.csv"),
        "temperature [K], rate_constant [s-1], uncertainty [%]\n298.15, 0.5, 3\n308.15, 1.0, 3\n",
    )
    .unwrap();
    let out = stoik(&["fit-rate", "two.csv"], &dir);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let ea = value_after(&text(&out.stdout), "Ea [kJ/mol]");
    assert!((ea - 52.9489).abs() < 5e-5, "Ea = {ea}");
}

#[test]
fn bad_input_exits_2_with_located_messages() {
    let dir = scratch("bad");
    let cases: [(&str, &str, &[&str]); 5] = [
        (
            "nonpositive.csv",
            "# measured\ntemperature [K], rate_constant [s-1]\n300, 1.0\n310, 0\n320, -4e-3\n",
            &[
                "nonpositive.csv:4:6: error: rate constant `0` is not positive",
                "nonpositive.csv:5:6: error: rate constant `-4e-3` is not positive",
            ],
        ),
        (
            "nounits.csv",
            "temperature [K], rate_constant\n300, 1.0\n310, 2.0\n",
            &["nounits.csv:1:18: error: column `rate_constant` has no unit"],
        ),
        (
            "onepoint.csv",
            "temperature [K], rate_constant [s-1]\n300, 1.0\n",
            &["onepoint.csv:2:1: error: 1 data point(s) (line 2) cannot determine 2 parameters"],
        ),
        (
            "same-t.csv",
            "temperature [K], rate_constant [s-1]\n300, 1.0\n300, 1.2\n300, 0.9\n",
            &["same-t.csv:2:1: error: the points (lines 2-4) are at 1 distinct temperature(s) (300 K)"],
        ),
        (
            "badunit.csv",
            "temperature [F], rate_constant [dm3 mol-1 s-1]\n300, 1.0\n",
            &[
                "badunit.csv:1:1: error: unknown temperature unit `F`",
                "help: accepted: K, C",
            ],
        ),
    ];
    for (name, content, expected) in cases {
        std::fs::write(dir.join(name), content).unwrap();
        let out = stoik(&["fit-rate", name], &dir);
        assert_eq!(out.status.code(), Some(2), "{name}");
        let err = text(&out.stderr);
        for e in expected {
            assert!(err.contains(e), "{name}: expected `{e}` in\n{err}");
        }
    }
    // An equation that cannot carry the data's order (second order, two reactant species
    // with coefficients adding up to 3).
    let data = repo().join("mechanisms/data/ethanal-decomposition.csv");
    let out = stoik(
        &[
            "fit-rate",
            data.to_str().unwrap(),
            "--equation",
            "2 A + B -> C",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr)
        .contains("add up to 3 but the rate constant's unit `dm3 mol-1 s-1` is of order 2"));
}

#[test]
fn out_of_range_flags_are_refused_naming_the_flag_before_anything_is_written() {
    // The documented ranges (docs/file-format.md): confidence 0.5 to 0.9999, reference
    // temperature 1 K to 1e5 K. Values just outside, tiny, infinite and NaN are refused with
    // exit 2 and the flag's name; no snippet is written.
    let dir = scratch("flag-ranges");
    let data = repo().join("mechanisms/data/ethanal-decomposition.csv");
    let cases: [(&str, &str); 6] = [
        ("--confidence", "0.99991"),
        ("--confidence", "5e-324"),
        ("--confidence", "inf"),
        ("--reference-temperature-k", "0.9999999999999999"),
        ("--reference-temperature-k", "1e300"),
        ("--reference-temperature-k", "NaN"),
    ];
    for (flag, value) in cases {
        let mut argv = vec!["fit-rate", data.to_str().unwrap(), "--snippet", "s.toml"];
        if flag == "--reference-temperature-k" {
            argv.extend(["--model", "modified"]);
        }
        argv.extend([flag, value]);
        let out = stoik(&argv, &dir);
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{flag} {value}: {err}");
        assert!(err.contains(flag), "{flag} {value}: {err}");
        assert!(!err.contains("00000000000"), "{flag} {value}: {err}");
        assert!(!dir.join("s.toml").exists(), "{flag} {value}");
    }
}
