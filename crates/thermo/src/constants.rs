//! Physical constants, each defined once for all of stoik (SI 2019 exact values; CODATA).

/// Molar gas constant R in J/(mol K) (exact since the 2019 SI redefinition: R = N_A k_B).
pub const GAS_CONSTANT: f64 = 8.314462618;

/// Avogadro constant N_A in 1/mol (SI 2019 exact value).
pub const AVOGADRO: f64 = 6.02214076e23;

/// Boltzmann constant k_B in J/K (SI 2019 exact value).
pub const BOLTZMANN: f64 = 1.380649e-23;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gas_constant_is_avogadro_times_boltzmann() {
        // SI brochure, 9th edition (BIPM 2019), section 2.3.1: N_A and k_B are exact, and
        // R = N_A k_B = 8.314 462 618... J/(mol K) (CODATA 2018 lists 8.314462618).
        let product = AVOGADRO * BOLTZMANN;
        assert!((product / GAS_CONSTANT - 1.0).abs() < 1e-10, "{product}");
    }
}
