//! The thermo file format: the project's fitted NIST-JANAF data loads, and bad files are
//! rejected with located messages.

use stoik_mechanism::{load_thermo, parse_thermo, LoadError};

#[test]
fn the_projects_janaf_thermo_file_loads() {
    let path = stoik_testsupport::mechanism_path("thermo/janaf-nasa7.toml");
    let file = load_thermo(&path).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(file.entries.len(), 9);
    // JANAF (Chase 1998): H2O(g) formation enthalpy -241.826 kJ/mol at 298.15 K; the fit pins
    // H(298.15) to it.
    let water = file.get("H2O").expect("H2O present");
    let h = water.polynomial.enthalpy_j_per_mol(298.15);
    assert!((h + 241_826.0).abs() < 1.0, "{h}");
}

#[test]
fn discontinuous_and_malformed_entries_are_all_reported() {
    let text = "stoik_thermo = 1\n\
[[species]]\n\
name = \"X\"\n\
temperature_ranges_k = [300.0, 1000.0, 5000.0]\n\
coefficients_low = [3.5, 0, 0, 0, 0, -1000.0, 4.0]\n\
coefficients_high = [4.5, 0, 0, 0, 0, -1000.0, 4.0]\n\
[[species]]\n\
name = \"Y\"\n\
temperature_ranges_k = [300.0, 1000.0]\n\
coefficients_low = [3.5, 0, 0, 0, 0, -1000.0, 4.0]\n\
coefficients_high = [3.5, 0, 0, 0, 0, -1000.0, 4.0]\n\
colour = 1\n";
    let Err(LoadError::Invalid { diagnostics }) = parse_thermo(text, "t.toml") else {
        panic!("expected errors");
    };
    let messages: Vec<String> = diagnostics.iter().map(|d| d.to_string()).collect();
    // X: cp/R jumps by 3.5 - 4.5 = -1 at 1000 K (hand computation).
    assert!(
        messages.iter().any(|m| m.starts_with("t.toml:2:1:")
            && m.contains("not continuous at 1000 K: jumps cp/R -1.000e0")),
        "{messages:#?}"
    );
    assert!(
        messages
            .iter()
            .any(|m| m.starts_with("t.toml:9:") && m.contains("must hold 3 numbers, found 2")),
        "{messages:#?}"
    );
    assert!(
        messages
            .iter()
            .any(|m| m.starts_with("t.toml:12:1:") && m.contains("unknown key `colour`")),
        "{messages:#?}"
    );
    assert_eq!(diagnostics.error_count(), 3);
}
