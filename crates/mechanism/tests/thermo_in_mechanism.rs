//! Thermochemistry in the mechanism file: `thermo_files` and inline `[species.thermo]`
//! tables, as specified in docs/file-format.md ("Thermochemistry").

use std::path::Path;
use stoik_mechanism::{load_thermo, parse_mechanism, parse_mechanism_in, LoadError};

use stoik_testsupport::mechanisms_dir;

fn diagnostics(result: Result<stoik_mechanism::MechanismFile, LoadError>) -> Vec<String> {
    match result {
        Ok(file) => panic!("expected errors, loaded with {}", file.warnings),
        Err(LoadError::Invalid { diagnostics }) => {
            diagnostics.iter().map(|d| d.to_string()).collect()
        }
        Err(e) => panic!("{e}"),
    }
}

const TWO_SPECIES: &str = r#"stoik_mechanism = 1
thermo_files = ["thermo/janaf-nasa7.toml"]
[[species]]
name = "H2"
[[species]]
name = "H"
[[step]]
equation = "H2 <=> H + H"
forward = { prefactor = 1e14, activation_energy = 436000 }
third_body = {}
"#;

#[test]
fn thermo_files_give_species_their_polynomials() {
    let dir = mechanisms_dir();
    let file =
        parse_mechanism_in(TWO_SPECIES, "m.toml", Some(&dir)).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(file.warnings.0.len(), 0, "{}", file.warnings);
    let m = &file.mechanism;
    // The file holds 9 species (more than the mechanism declares: allowed, docs).
    let table = load_thermo(&dir.join("thermo/janaf-nasa7.toml")).expect("thermo file");
    assert_eq!(table.entries.len(), 9);
    for species in &m.species {
        let expected = table.get(&species.name).expect("in the file").polynomial;
        assert_eq!(species.thermo, Some(expected), "{}", species.name);
    }
    // The reversible step without `reverse` is accepted; its reverse comes from thermo.
    assert!(m.steps[0].reversible && m.steps[0].reverse.is_none());
    assert!(m.steps[0].reverse_from_thermo());
    // NIST-JANAF 4th ed.: formation enthalpy of H(g) 217.999 kJ/mol at 298.15 K.
    let h = m.species[1].thermo.expect("H").enthalpy_j_per_mol(298.15);
    assert!((h - 217_999.0).abs() < 100.0, "{h}");
}

#[test]
fn inline_thermo_wins_over_files() {
    // Inline H: a monatomic ideal gas, cp = 5/2 R at every temperature (textbook), with
    // H(298.15 K) = 0 (a6 = -2.5 x 298.15) - deliberately unlike the file's H.
    let text = TWO_SPECIES.replace(
        "name = \"H\"\n",
        "name = \"H\"\nthermo = { temperature_ranges_k = [200, 1000, 6000], coefficients_low = [2.5, 0, 0, 0, 0, -745.375, 0], coefficients_high = [2.5, 0, 0, 0, 0, -745.375, 0] }\n",
    );
    let m = parse_mechanism_in(&text, "m.toml", Some(&mechanisms_dir()))
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism;
    let h = m.species[1].thermo.expect("inline");
    assert_eq!(h.cp_over_r(1500.0), 2.5);
    assert!(h.enthalpy_j_per_mol(298.15).abs() < 1e-9);
    // H2 still comes from the file: JANAF H2 cp at 1000 K is 30.205 J/(mol K).
    let cp = m.species[0].thermo.expect("file").cp_j_per_mol_k(1000.0);
    assert!((cp - 30.205).abs() < 0.2, "{cp}");
}

fn write(dir: &Path, name: &str, text: &str) {
    std::fs::write(dir.join(name), text).expect("temporary file");
}

#[test]
fn a_species_in_two_thermo_files_is_an_error_naming_both() {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR")).join("thermo_in_mechanism_two_files");
    std::fs::create_dir_all(&dir).expect("temporary folder");
    let entry = |name: &str| {
        format!("[[species]]\nname = \"{name}\"\ntemperature_ranges_k = [200, 1000, 6000]\ncoefficients_low = [2.5, 0, 0, 0, 0, 0, 0]\ncoefficients_high = [2.5, 0, 0, 0, 0, 0, 0]\n")
    };
    write(
        &dir,
        "a.toml",
        &format!("stoik_thermo = 1\n{}{}", entry("X"), entry("Y")),
    );
    write(
        &dir,
        "b.toml",
        &format!("stoik_thermo = 1\n{}{}", entry("Z"), entry("X")),
    );
    let text = r#"stoik_mechanism = 1
thermo_files = ["a.toml", "b.toml"]
[[species]]
name = "X"
[[species]]
name = "Y"
[[step]]
equation = "X <=> Y"
forward = { prefactor = 1 }
"#;
    let found = diagnostics(parse_mechanism_in(text, "m.toml", Some(&dir)));
    // X is entry 1 of a.toml (line 2) and entry 2 of b.toml (line 7); reported at b.toml's
    // place in `thermo_files` (line 2, column 27).
    assert_eq!(found.len(), 1, "{found:#?}");
    assert!(
        found[0].starts_with("m.toml:2:27: error: species `X` (line 4) has thermochemistry in two thermo files: `a.toml` (line 2) and `b.toml` (line 7)"),
        "{}",
        found[0]
    );
    // Z is in a file but not in the mechanism: fine. Y alone is fine. Without b.toml: loads.
    let one = text.replace(", \"b.toml\"", "");
    assert!(parse_mechanism_in(&one, "m.toml", Some(&dir)).is_ok());
}

#[test]
fn problems_inside_a_thermo_file_carry_its_own_location() {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR")).join("thermo_in_mechanism_bad_file");
    std::fs::create_dir_all(&dir).expect("temporary folder");
    write(
        &dir,
        "bad.toml",
        "stoik_thermo = 1\n[[species]]\nname = \"X\"\ntemperature_ranges_k = [200, 1000]\ncoefficients_low = [2.5, 0, 0, 0, 0, 0, 0]\ncoefficients_high = [2.5, 0, 0, 0, 0, 0, 0]\n",
    );
    let text = "stoik_mechanism = 1\nthermo_files = [\"bad.toml\"]\n[[species]]\nname = \"X\"\n[[step]]\nequation = \"X -> \"\nforward = { prefactor = 1 }\n";
    let found = diagnostics(parse_mechanism_in(text, "m.toml", Some(&dir)));
    assert_eq!(found.len(), 2, "{found:#?}");
    assert!(
        found[0].starts_with("m.toml:2:17: error: thermo file"),
        "{}",
        found[0]
    );
    // Line 4, column 24 of bad.toml: the two-number array.
    let label = dir.join("bad.toml").display().to_string();
    assert!(
        found[1].starts_with(&format!(
            "{label}:4:24: error: `temperature_ranges_k` must hold 3 numbers, found 2"
        )),
        "{}",
        found[1]
    );
}

#[test]
fn relative_thermo_files_need_a_folder() {
    let found = diagnostics(parse_mechanism(TWO_SPECIES, "m.toml"));
    // Line 2, column 17: the path string. The step's missing thermochemistry is not
    // reported again while a thermo file failed.
    assert!(
        found[0].starts_with(
            "m.toml:2:17: error: thermo file `thermo/janaf-nasa7.toml` is a relative path"
        ),
        "{found:#?}"
    );
    assert_eq!(found.len(), 1, "{found:#?}");
    // An absolute path works without a folder.
    let absolute = mechanisms_dir().join("thermo/janaf-nasa7.toml");
    let text = TWO_SPECIES.replace(
        "\"thermo/janaf-nasa7.toml\"",
        &format!("'{}'", absolute.display()),
    );
    assert!(parse_mechanism(&text, "m.toml").is_ok());
}

#[test]
fn reversible_step_without_reverse_or_thermo_names_the_species() {
    let text = "stoik_mechanism = 1\n[[species]]\nname = \"H2\"\n[[species]]\nname = \"H\"\n[[step]]\nequation = \"H2 <=> H + H\"\nforward = { prefactor = 1 }\n";
    let found = diagnostics(parse_mechanism(text, "m.toml"));
    assert_eq!(found.len(), 1, "{found:#?}");
    assert!(
        found[0].starts_with("m.toml:7:12: error: reversible step needs reverse rate parameters or thermochemistry of all its species; no thermochemistry for `H2`, `H`"),
        "{}",
        found[0]
    );
}
