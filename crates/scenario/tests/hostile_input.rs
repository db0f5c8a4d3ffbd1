//! Malformed and hostile input never panics: random edits of a valid scenario either load or
//! are rejected with at least one located error (the stated contract of the loader: every
//! problem reported, no panic).

use proptest::prelude::*;
use std::path::Path;
use stoik_mechanism::LoadError;
use stoik_scenario::parse_scenario;

const SCENARIO: &str = "stoik_scenario = 1\nmechanism = \"good.mech.toml\"\n[reactor]\n\
temperature = \"500 K\"\npressure = \"1 bar\"\n[initial]\nmole_fractions = { A = 0.5, B = 0.5 }\n\
[output]\nend_time = \"2 s\"\ngrid = { spacing = \"log\", first = \"1e-3 s\", points = 5 }\n\
[solver]\nrelative_tolerance = 1e-6\nnewton_tolerance = 0.2\nkeep_invariants = true\n";

/// Applies `edits` (position, byte to insert or delete) to `text`.
fn mutate(text: &str, edits: &[(usize, Option<u8>)]) -> String {
    let mut bytes = text.as_bytes().to_vec();
    for &(at, insert) in edits {
        let at = at % (bytes.len() + 1);
        match insert {
            Some(b) => bytes.insert(at, b),
            None if at < bytes.len() => {
                bytes.remove(at);
            }
            None => {}
        }
    }
    String::from_utf8_lossy(&bytes).into_owned()
}

fn edit() -> impl Strategy<Value = (usize, Option<u8>)> {
    let interesting = prop_oneof![
        Just(b'='),
        Just(b'"'),
        Just(b'['),
        Just(b']'),
        Just(b'{'),
        Just(b'}'),
        Just(b','),
        Just(b'\n'),
        Just(b'-'),
        Just(b'0'),
        Just(b'e'),
        Just(b' '),
        any::<u8>()
    ];
    (any::<usize>(), prop::option::of(interesting))
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(400))]

    #[test]
    fn edited_scenarios_never_panic(edits in prop::collection::vec(edit(), 1..8)) {
        let text = mutate(SCENARIO, &edits);
        match parse_scenario(&text, "edited.scenario.toml", Path::new(".")) {
            Ok((s, _)) => prop_assert!(s.max_steps >= 1),
            Err(LoadError::Invalid { diagnostics }) => prop_assert!(
                diagnostics.error_count() >= 1,
                "rejected without an error: {diagnostics}"
            ),
            Err(LoadError::Io { .. }) => {}
        }
    }
}
