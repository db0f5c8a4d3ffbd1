//! Constants shared by the crates above this one: the physical constants (defined once, in
//! `stoik-thermo`, and re-exported here as the same items) and the gas-kinetic collision
//! limit that the plausibility checks of mechanisms and fitted rate constants compare with.

pub use stoik_thermo::{AVOGADRO, BOLTZMANN, GAS_CONSTANT};

/// The gas-kinetic collision limit of a bimolecular rate constant, about 1e-10
/// cm3 molecule^-1 s^-1 (common practice), in SI: 1e-10 x 1e-6 m3/cm3 x N_A = 6.02e7
/// m3/(mol s).
pub const COLLISION_LIMIT_M3_PER_MOL_S: f64 = 1e-10 * 1e-6 * AVOGADRO;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn collision_limit_in_si() {
        // 1e-10 cm3/(molecule s) x 6.02214076e23 /mol (SI 2019 exact) x 1e-6 m3/cm3
        // = 6.02214076e7 m3/(mol s).
        assert!((COLLISION_LIMIT_M3_PER_MOL_S / 6.02214076e7 - 1.0).abs() < 1e-15);
    }
}
