//! Built-in table of element symbols and standard atomic weights.
//!
//! Values: IUPAC CIAAW standard atomic weights, abridged (2021), from memory, in g/mol; the
//! table stores them in g/mol and the accessor returns kg/mol. For elements whose standard
//! atomic weight is an interval (H, C, N, O, ...), the abridged conventional value is used.
//!
//! One pseudo-element is added for charged species: `E`, the electron (molar mass
//! 5.48579909e-4 g/mol, CODATA, from memory), so that ions such as `H3O+` can be written
//! `atoms = { H = 3, O = 1, E = -1 }` and charge is balanced like any element.

/// (symbol, standard atomic weight in g/mol).
const TABLE: &[(&str, f64)] = &[
    ("H", 1.0080),
    ("He", 4.0026),
    ("Li", 6.94),
    ("Be", 9.0122),
    ("B", 10.81),
    ("C", 12.011),
    ("N", 14.007),
    ("O", 15.999),
    ("F", 18.998),
    ("Ne", 20.180),
    ("Na", 22.990),
    ("Mg", 24.305),
    ("Al", 26.982),
    ("Si", 28.085),
    ("P", 30.974),
    ("S", 32.06),
    ("Cl", 35.45),
    ("Ar", 39.95),
    ("K", 39.098),
    ("Ca", 40.078),
    ("Sc", 44.956),
    ("Ti", 47.867),
    ("V", 50.942),
    ("Cr", 51.996),
    ("Mn", 54.938),
    ("Fe", 55.845),
    ("Co", 58.933),
    ("Ni", 58.693),
    ("Cu", 63.546),
    ("Zn", 65.38),
    ("Ga", 69.723),
    ("Ge", 72.630),
    ("As", 74.922),
    ("Se", 78.971),
    ("Br", 79.904),
    ("Kr", 83.798),
    ("Rb", 85.468),
    ("Sr", 87.62),
    ("Ag", 107.87),
    ("Sn", 118.71),
    ("I", 126.90),
    ("Xe", 131.29),
    ("Cs", 132.91),
    ("Ba", 137.33),
    ("W", 183.84),
    ("Pt", 195.08),
    ("Au", 196.97),
    ("Hg", 200.59),
    ("Pb", 207.2),
    ("U", 238.03),
    ("E", 5.485_799_09e-4),
];

/// Standard atomic weight of the element `symbol` in kg/mol, or `None` if the symbol is not in
/// the table (symbols are case-sensitive: `Co` is cobalt, `CO` is not an element).
pub fn standard_atomic_weight_kg_per_mol(symbol: &str) -> Option<f64> {
    TABLE
        .iter()
        .find(|(s, _)| *s == symbol)
        .map(|(_, w)| w * 1e-3)
}

/// Every element symbol the table knows, in order of atomic number (then `E`).
pub fn known_symbols() -> impl Iterator<Item = &'static str> {
    TABLE.iter().map(|(s, _)| *s)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn atomic_weights_in_kg_per_mol() {
        // Source: IUPAC CIAAW abridged standard atomic weights (2021), from memory:
        // O 15.999, Ar 39.95, Fe 55.845 g/mol.
        assert!((standard_atomic_weight_kg_per_mol("O").unwrap() - 15.999e-3).abs() < 1e-12);
        assert!((standard_atomic_weight_kg_per_mol("Ar").unwrap() - 39.95e-3).abs() < 1e-12);
        assert!((standard_atomic_weight_kg_per_mol("Fe").unwrap() - 55.845e-3).abs() < 1e-12);
        // Water: 2 * 1.0080 + 15.999 = 18.015 g/mol (common textbook value 18.015).
        let water = 2.0 * standard_atomic_weight_kg_per_mol("H").unwrap()
            + standard_atomic_weight_kg_per_mol("O").unwrap();
        assert!((water - 18.015e-3).abs() < 1e-6);
        assert_eq!(standard_atomic_weight_kg_per_mol("CO"), None);
        assert_eq!(standard_atomic_weight_kg_per_mol("AR"), None);
        // H..Kr is 36 elements, plus 14 heavier ones and the electron.
        assert_eq!(known_symbols().count(), 36 + 14 + 1);
    }
}
