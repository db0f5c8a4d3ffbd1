//! The equation grammar of mechanism files.
//!
//! ```text
//! equation := side WS ARROW WS side        ARROW: "->" | "→" (one way), "<=>" | "⇌" (both ways)
//! side     := ""  |  term ( WS "+" WS term )*
//! term     := [coefficient WS] name  |  coefficient name     (compact form, see below)
//! ```
//! - A name is any run of non-whitespace characters: `O(1D)`, `CH2(S)`, `1,3-C4H6`, `CH3O'`,
//!   `H3O+` (a `+` without spaces on both sides belongs to the name).
//! - A coefficient is a positive number such as `2`, `0.5` or `1.5`.
//! - The compact form `2OH` is read as `2 OH` only when `OH` is a declared species and `2OH`
//!   itself is not, so names that start with digits (`2-C4H8`) stay names.
//! - A side may be empty (`-> A` is a constant source, `A ->` a sink).
//!
//! Parsing works on the text alone (plus a predicate saying which names are declared, for the
//! compact form); resolving names to species indices is the caller's job.

/// One term of a side as written: coefficient and name, with the name's byte offset.
#[derive(Debug, Clone, PartialEq)]
pub struct EquationTerm<'a> {
    /// Stoichiometric coefficient (positive; 1 when not written).
    pub coefficient: f64,
    /// Species name as written.
    pub name: &'a str,
    /// Byte offset of the name (or of the compact `2OH` token) within the equation text.
    pub offset: usize,
}

/// An equation split into its two sides.
#[derive(Debug, Clone, PartialEq)]
pub struct ParsedEquation<'a> {
    /// Left-hand side terms in written order (repeats not yet merged).
    pub reactants: Vec<EquationTerm<'a>>,
    /// Right-hand side terms in written order (repeats not yet merged).
    pub products: Vec<EquationTerm<'a>>,
    /// `true` for `<=>`/`⇌`, `false` for `->`/`→`.
    pub reversible: bool,
}

/// A problem in an equation, at a byte offset within the equation text.
#[derive(Debug, Clone, PartialEq)]
pub struct EquationError {
    /// Byte offset within the equation text.
    pub offset: usize,
    /// What is wrong.
    pub message: String,
    /// How to fix it, when known.
    pub help: Option<String>,
}

const ONE_WAY: &[&str] = &["->", "→"];
const BOTH_WAYS: &[&str] = &["<=>", "⇌"];
const ARROW_HELP: &str = "write `->` (one way) or `<=>` (both ways) with spaces on both sides";

/// Splits `text` into whitespace-separated tokens with their byte offsets.
fn tokens(text: &str) -> Vec<(usize, &str)> {
    let mut out = Vec::new();
    let mut start: Option<usize> = None;
    for (i, c) in text.char_indices() {
        if c.is_whitespace() {
            if let Some(s) = start.take() {
                out.push((s, &text[s..i]));
            }
        } else if start.is_none() {
            start = Some(i);
        }
    }
    if let Some(s) = start {
        out.push((s, &text[s..]));
    }
    out
}

fn is_arrow(token: &str) -> Option<bool> {
    if ONE_WAY.contains(&token) {
        Some(false)
    } else if BOTH_WAYS.contains(&token) {
        Some(true)
    } else {
        None
    }
}

/// A token made only of arrow-like characters that is not one of our arrows (`=>`, `<->`, `=`).
fn is_false_arrow(token: &str) -> bool {
    token.len() > 1 && token.chars().all(|c| "<>=-→⇌↔⟶".contains(c))
        || token == "="
        || token == "↔"
        || token == "⟶"
}

/// Reads `token` as a coefficient when it looks like a number (starts with a digit, a point
/// or a sign): `Some(Ok(x))` for a positive finite number, `Some(Err(..))` for a bad one.
fn coefficient(token: &str) -> Option<Result<f64, String>> {
    let first = token.chars().next()?;
    if !(first.is_ascii_digit() || first == '.' || first == '-' || first == '+') {
        return None;
    }
    let x: f64 = token.parse().ok()?;
    if x.is_finite() && x > 0.0 {
        Some(Ok(x))
    } else {
        Some(Err(format!(
            "coefficient `{token}` must be a positive number"
        )))
    }
}

/// Parses one side (a slice of tokens) into terms.
fn parse_side<'a>(
    toks: &[(usize, &'a str)],
    is_species: &dyn Fn(&str) -> bool,
    errors: &mut Vec<EquationError>,
) -> Vec<EquationTerm<'a>> {
    let mut terms = Vec::new();
    if toks.is_empty() {
        return terms;
    }
    let mut groups: Vec<&[(usize, &'a str)]> = Vec::new();
    let mut plus_offsets = Vec::new();
    let mut begin = 0;
    for (k, &(offset, tok)) in toks.iter().enumerate() {
        if tok == "+" {
            groups.push(&toks[begin..k]);
            plus_offsets.push(offset);
            begin = k + 1;
        }
    }
    groups.push(&toks[begin..]);
    for (g, group) in groups.iter().enumerate() {
        match group.len() {
            0 => {
                let at = if g < plus_offsets.len() {
                    plus_offsets[g]
                } else {
                    plus_offsets[g - 1]
                };
                errors.push(EquationError {
                    offset: at,
                    message: "`+` without a species on both sides".to_string(),
                    help: Some(
                        "terms are separated by ` + ` (a plus with spaces on both sides)"
                            .to_string(),
                    ),
                });
            }
            1 => {
                let (offset, tok) = group[0];
                if is_species(tok) {
                    terms.push(EquationTerm {
                        coefficient: 1.0,
                        name: tok,
                        offset,
                    });
                    continue;
                }
                // Compact form `2OH`: a leading number followed by a declared name.
                let split = tok
                    .char_indices()
                    .find(|(_, c)| !(c.is_ascii_digit() || *c == '.'))
                    .map(|(i, _)| i)
                    .unwrap_or(tok.len());
                if split > 0 && split < tok.len() && is_species(&tok[split..]) {
                    match coefficient(&tok[..split]) {
                        Some(Ok(x)) => {
                            terms.push(EquationTerm {
                                coefficient: x,
                                name: &tok[split..],
                                offset,
                            });
                            continue;
                        }
                        Some(Err(message)) => {
                            errors.push(EquationError {
                                offset,
                                message,
                                help: None,
                            });
                            continue;
                        }
                        None => {}
                    }
                }
                if split == tok.len() && coefficient(tok).is_some() {
                    errors.push(EquationError {
                        offset,
                        message: format!("coefficient `{tok}` is not followed by a species"),
                        help: Some("an empty side is written as nothing, e.g. `A ->`".to_string()),
                    });
                    continue;
                }
                terms.push(EquationTerm {
                    coefficient: 1.0,
                    name: tok,
                    offset,
                });
            }
            2 => {
                let (c_offset, c_tok) = group[0];
                let (offset, name) = group[1];
                match coefficient(c_tok) {
                    Some(Ok(x)) => terms.push(EquationTerm { coefficient: x, name, offset }),
                    Some(Err(message)) => errors.push(EquationError {
                        offset: c_offset,
                        message,
                        help: None,
                    }),
                    None => errors.push(EquationError {
                        offset,
                        message: format!(
                            "missing ` + ` between `{c_tok}` and `{name}` (or `{c_tok}` is not a number)"
                        ),
                        help: Some(
                            "terms are separated by ` + `; a coefficient is a positive number such as `2` or `0.5`"
                                .to_string(),
                        ),
                    }),
                }
            }
            _ => {
                let (offset, tok) = group[2];
                errors.push(EquationError {
                    offset,
                    message: format!("unexpected `{tok}`: missing ` + ` between terms?"),
                    help: Some(
                        "terms are separated by ` + ` (a plus with spaces on both sides)"
                            .to_string(),
                    ),
                });
            }
        }
    }
    terms
}

/// Parses an equation. `is_species` says whether a name is declared (used only for the
/// compact coefficient form). Every problem found is returned.
pub fn parse_equation<'a>(
    text: &'a str,
    is_species: &dyn Fn(&str) -> bool,
) -> Result<ParsedEquation<'a>, Vec<EquationError>> {
    let toks = tokens(text);
    let mut errors = Vec::new();
    let arrows: Vec<(usize, bool)> = toks
        .iter()
        .enumerate()
        .filter_map(|(k, (_, t))| is_arrow(t).map(|rev| (k, rev)))
        .collect();
    for &(offset, tok) in &toks {
        if is_arrow(tok).is_none() && is_false_arrow(tok) {
            errors.push(EquationError {
                offset,
                message: format!("`{tok}` is not an arrow"),
                help: Some(ARROW_HELP.to_string()),
            });
        }
    }
    if arrows.is_empty() {
        if errors.is_empty() {
            let glued = toks
                .iter()
                .find(|(_, t)| ONE_WAY.iter().chain(BOTH_WAYS).any(|a| t.contains(a)));
            let (offset, message) = match glued {
                Some(&(offset, tok)) => (
                    offset,
                    format!("the arrow in `{tok}` needs spaces on both sides"),
                ),
                None => (0, format!("equation `{text}` has no arrow")),
            };
            errors.push(EquationError {
                offset,
                message,
                help: Some(ARROW_HELP.to_string()),
            });
        }
        return Err(errors);
    }
    if arrows.len() > 1 {
        let (k, _) = arrows[1];
        errors.push(EquationError {
            offset: toks[k].0,
            message: "equation has more than one arrow".to_string(),
            help: Some(ARROW_HELP.to_string()),
        });
        return Err(errors);
    }
    let (k, reversible) = arrows[0];
    let reactants = parse_side(&toks[..k], is_species, &mut errors);
    let products = parse_side(&toks[k + 1..], is_species, &mut errors);
    if reactants.is_empty() && products.is_empty() && errors.is_empty() {
        errors.push(EquationError {
            offset: toks[k].0,
            message: "both sides of the equation are empty".to_string(),
            help: None,
        });
    }
    if errors.is_empty() {
        Ok(ParsedEquation {
            reactants,
            products,
            reversible,
        })
    } else {
        Err(errors)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source for every expectation here: the equation grammar of docs/file-format.md (our
    // own specification), applied by hand.

    fn parse(text: &str, declared: &[&str]) -> Result<ParsedEquation<'static>, Vec<EquationError>> {
        let owned: Vec<String> = declared.iter().map(|s| s.to_string()).collect();
        let leaked: &'static str = Box::leak(text.to_string().into_boxed_str());
        parse_equation(leaked, &move |n: &str| owned.iter().any(|d| d == n))
    }

    fn side(terms: &[EquationTerm<'_>]) -> Vec<(f64, String)> {
        terms
            .iter()
            .map(|t| (t.coefficient, t.name.to_string()))
            .collect()
    }

    #[test]
    fn names_with_digits_parentheses_commas_dashes_primes_and_charges() {
        let eq = parse("O(1D) + CH2(S) -> C3H5-A + 1,3-C4H6 + CH3O' + H3O+", &[]).unwrap();
        assert_eq!(
            side(&eq.reactants),
            vec![(1.0, "O(1D)".into()), (1.0, "CH2(S)".into())]
        );
        assert_eq!(
            side(&eq.products),
            vec![
                (1.0, "C3H5-A".into()),
                (1.0, "1,3-C4H6".into()),
                (1.0, "CH3O'".into()),
                (1.0, "H3O+".into())
            ]
        );
        assert!(!eq.reversible);
        // Offsets are byte positions of each name: "O(1D) + " is 8 bytes.
        assert_eq!(eq.reactants[1].offset, 8);
    }

    #[test]
    fn coefficients_spaced_decimal_and_compact() {
        let eq = parse("2 OH <=> 0.5 O2 + H2O", &["OH", "O2", "H2O"]).unwrap();
        assert!(eq.reversible);
        assert_eq!(side(&eq.reactants), vec![(2.0, "OH".into())]);
        assert_eq!(
            side(&eq.products),
            vec![(0.5, "O2".into()), (1.0, "H2O".into())]
        );
        let compact = parse("2OH ⇌ 1.5O2", &["OH", "O2"]).unwrap();
        assert_eq!(side(&compact.reactants), vec![(2.0, "OH".into())]);
        assert_eq!(side(&compact.products), vec![(1.5, "O2".into())]);
        // A declared name that starts with digits stays a name.
        let name = parse("2-C4H8 → 1,3-C4H6", &["2-C4H8", "1,3-C4H6", "C4H8"]).unwrap();
        assert_eq!(side(&name.reactants), vec![(1.0, "2-C4H8".into())]);
        // Compact form only when the rest is declared: `2X` with no `X` is a (unknown) name.
        let unknown = parse("2X -> A", &["A"]).unwrap();
        assert_eq!(side(&unknown.reactants), vec![(1.0, "2X".into())]);
    }

    #[test]
    fn empty_sides_catalysts_and_repeats() {
        let source = parse("-> A", &["A"]).unwrap();
        assert!(source.reactants.is_empty());
        assert_eq!(side(&source.products), vec![(1.0, "A".into())]);
        let sink = parse("A ->", &["A"]).unwrap();
        assert!(sink.products.is_empty());
        let catalyst = parse("Y -> X + Y", &["X", "Y"]).unwrap();
        assert_eq!(side(&catalyst.reactants), vec![(1.0, "Y".into())]);
        assert_eq!(
            side(&catalyst.products),
            vec![(1.0, "X".into()), (1.0, "Y".into())]
        );
        // Repeats are kept as written; the loader adds them up (B + B = 2 B).
        let repeat = parse("B + B -> C", &["B", "C"]).unwrap();
        assert_eq!(
            side(&repeat.reactants),
            vec![(1.0, "B".into()), (1.0, "B".into())]
        );
    }

    #[test]
    fn malformed_equations_are_reported_with_offsets() {
        let glued = parse("A->B", &["A", "B"]).unwrap_err();
        assert!(glued[0].message.contains("needs spaces"), "{glued:?}");
        let none = parse("A + B", &["A", "B"]).unwrap_err();
        assert!(none[0].message.contains("no arrow"));
        let two = parse("A -> B -> C", &["A", "B", "C"]).unwrap_err();
        assert_eq!(two[0].offset, 7);
        assert!(two[0].message.contains("more than one arrow"));
        let fat = parse("A => B", &["A", "B"]).unwrap_err();
        assert_eq!(
            (fat[0].offset, fat[0].message.as_str()),
            (2, "`=>` is not an arrow")
        );
        let zero = parse("0 A -> B", &["A", "B"]).unwrap_err();
        assert_eq!(zero[0].offset, 0);
        assert!(zero[0].message.contains("must be a positive number"));
        let negative = parse("A -> -2 B", &["A", "B"]).unwrap_err();
        assert_eq!(negative[0].offset, 5);
        let missing_plus = parse("A B -> C", &["A", "B", "C"]).unwrap_err();
        assert!(missing_plus[0].message.contains("missing ` + `"));
        let dangling = parse("A + -> C", &["A", "C"]).unwrap_err();
        assert_eq!(dangling[0].offset, 2);
        let empty = parse(" -> ", &[]).unwrap_err();
        assert!(empty[0].message.contains("both sides"));
    }
}
