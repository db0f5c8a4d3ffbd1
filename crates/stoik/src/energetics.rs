//! `stoik energetics`: per-step reaction thermochemistry at one temperature, the numeric form
//! of a reaction-coordinate energy diagram.

use crate::error::CliError;
use crate::EnergeticsArgs;
use stoik::kinetics::step_energetics;
use stoik::mechanism::load_mechanism;

/// Prints the table.
pub fn energetics(args: &EnergeticsArgs) -> Result<(), CliError> {
    if !(args.temperature_k.is_finite() && args.temperature_k > 0.0) {
        return Err(CliError::BadFlag(format!(
            "--temperature-k must be a positive number of kelvin, got {}",
            args.temperature_k
        )));
    }
    let file = load_mechanism(&args.mechanism)?;
    let t = args.temperature_k;
    println!(
        "step energetics at {t} K (kJ/mol; Kc in SI units of mol/m3 to the power of the mole change)"
    );
    println!(
        "{:>4}  {:<32} {:>10} {:>12} {:>10} {:>10} {:>10} {:>12}",
        "step", "equation", "dH", "", "Ea fwd", "Ea rev", "dG", "Kc"
    );
    for (j, (step, e)) in file
        .mechanism
        .steps
        .iter()
        .zip(step_energetics(&file.mechanism, t))
        .enumerate()
    {
        match e {
            Some(e) => println!(
                "{:>4}  {:<32} {:>10.2} {:>12} {:>10.2} {:>10.2} {:>10.2} {:>12.4e}",
                j + 1,
                step.equation,
                e.delta_h_j_per_mol / 1e3,
                if e.exothermic {
                    "exothermic"
                } else {
                    "endothermic"
                },
                e.forward_activation_energy_j_per_mol / 1e3,
                e.reverse_activation_energy_j_per_mol / 1e3,
                e.delta_g_j_per_mol / 1e3,
                e.kc_si
            ),
            None => println!(
                "{:>4}  {:<32} (no thermochemistry for some species)",
                j + 1,
                step.equation
            ),
        }
    }
    println!("Ea rev is implied by thermochemistry: Ea fwd - dU (van 't Hoff); Ea fwd includes n R T for a temperature exponent n.");
    Ok(())
}
