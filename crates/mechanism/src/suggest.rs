//! Nearest-name suggestions ("did you mean `x`?") by edit distance.
//!
//! The distance is the Levenshtein distance (insertions, deletions and substitutions each
//! cost 1) counted in characters, computed on lower-cased text so that `ar` finds `AR`;
//! ties are broken by the case-sensitive distance.

/// Levenshtein edit distance between `a` and `b`, in characters (the tests' entry point to
/// the distance that [`nearest_name`] uses).
#[cfg(test)]
fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    edit_distance_chars(&a, &b)
}

fn edit_distance_chars(a: &[char], b: &[char]) -> usize {
    if a.is_empty() {
        return b.len();
    }
    // One row of the dynamic-programming table (two-row variant folded into one).
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, &ca) in a.iter().enumerate() {
        let mut diagonal = row[0];
        row[0] = i + 1;
        for (j, &cb) in b.iter().enumerate() {
            let above = row[j + 1];
            let cost = usize::from(ca != cb);
            row[j + 1] = (above + 1).min(row[j] + 1).min(diagonal + cost);
            diagonal = above;
        }
    }
    row[b.len()]
}

/// Largest edit distance still offered as a suggestion for a query of `length` characters:
/// one edit for short names, about a third of the length for longer ones, at most four.
fn allowed_distance(length: usize) -> usize {
    (length.div_ceil(3)).clamp(1, 4)
}

/// The candidate closest to `query` by edit distance, if it is reasonably close (at most
/// about a third of the query's length in edits; any case-only difference counts as close).
///
/// Returns `None` when no candidate is close enough or there are no candidates.
pub fn nearest_name<'a>(
    query: &str,
    candidates: impl IntoIterator<Item = &'a str>,
) -> Option<&'a str> {
    let query_lower: Vec<char> = query.to_lowercase().chars().collect();
    let query_chars: Vec<char> = query.chars().collect();
    let limit = allowed_distance(query_lower.len());
    let mut best: Option<(usize, usize, &'a str)> = None;
    let mut candidate_lower: Vec<char> = Vec::new();
    for candidate in candidates {
        candidate_lower.clear();
        candidate_lower.extend(candidate.chars().flat_map(char::to_lowercase));
        // Cheap filter: the distance is at least the difference in length.
        if candidate_lower.len().abs_diff(query_lower.len()) > limit {
            continue;
        }
        let distance = edit_distance_chars(&query_lower, &candidate_lower);
        if distance > limit {
            continue;
        }
        let candidate_chars: Vec<char> = candidate.chars().collect();
        let exact = edit_distance_chars(&query_chars, &candidate_chars);
        let better = match best {
            None => true,
            Some((d, e, _)) => (distance, exact) < (d, e),
        };
        if better {
            best = Some((distance, exact, candidate));
        }
    }
    best.map(|(_, _, name)| name)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn edit_distance_matches_hand_counts() {
        // Source: the textbook example of the Levenshtein distance, kitten -> sitting = 3
        // (two substitutions and one insertion).
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("flaw", "lawn"), 2);
        // Characters, not bytes: one substitution of a two-byte character.
        assert_eq!(edit_distance("→", ">"), 1);
    }

    #[test]
    fn nearest_name_picks_the_closest_reasonable_candidate() {
        // Expectations counted by hand: H2O2 -> HO2 and H2O2 -> H2O are one deletion each
        // (the first listed wins a tie); "ar" matches "AR" case-insensitively; "XYZ" is at
        // least two edits from every candidate, more than a 3-character name allows.
        let names = ["H2", "O2", "HO2", "H2O", "AR"];
        assert_eq!(nearest_name("H2O2", names), Some("HO2"));
        assert_eq!(nearest_name("H2O2", ["H2O", "HO2"]), Some("H2O"));
        assert_eq!(nearest_name("ar", names), Some("AR"));
        assert_eq!(nearest_name("XYZ", names), None);
        assert_eq!(
            nearest_name("stoik_mechansim", ["stoik_mechanism", "title"]),
            Some("stoik_mechanism")
        );
        assert_eq!(nearest_name("anything", std::iter::empty()), None);
    }
}
