//! Malformed and hostile input never panics: random edits of a valid mechanism either load or
//! are rejected with at least one located error (the stated contract of the loader: every
//! problem reported, no panic). stoik-scenario holds the same test for scenario files.

use proptest::prelude::*;
use stoik_mechanism::{parse_mechanism, LoadError};

/// The corpus's valid mechanism, `tests/bad-input/good.mech.toml`.
fn good_mechanism() -> String {
    stoik_testsupport::read_text(&stoik_testsupport::tests_dir().join("bad-input/good.mech.toml"))
}

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
        Just(b'>'),
        Just(b'+'),
        Just(b'0'),
        Just(b'e'),
        Just(b' '),
        any::<u8>()
    ];
    (any::<usize>(), prop::option::of(interesting))
}

fn check(result: Result<usize, LoadError>) -> Result<(), TestCaseError> {
    match result {
        Ok(_) => Ok(()),
        Err(LoadError::Invalid { diagnostics }) => {
            prop_assert!(
                diagnostics.error_count() >= 1,
                "rejected without an error: {diagnostics}"
            );
            Ok(())
        }
        Err(LoadError::Io { .. }) => Ok(()),
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(400))]

    #[test]
    fn edited_mechanisms_never_panic(edits in prop::collection::vec(edit(), 1..8)) {
        let text = mutate(&good_mechanism(), &edits);
        check(parse_mechanism(&text, "edited.toml").map(|f| f.mechanism.steps.len()))?;
    }

    #[test]
    fn arbitrary_text_never_panics(text in "\\PC{0,300}") {
        check(parse_mechanism(&text, "random.toml").map(|f| f.mechanism.steps.len()))?;
    }
}
