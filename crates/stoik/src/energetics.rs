//! `stoik energetics`: per-step reaction thermochemistry at one temperature, the numeric form
//! of a reaction-coordinate energy diagram.

use crate::error::CliError;
use crate::EnergeticsArgs;
use stoik::kinetics::step_energetics;
use stoik::mechanism::load_mechanism;
use stoik::scenario::TEMPERATURE_RANGE_K;

/// `x` in the form `fmt`, or `out of range` in words when it is not finite (an equilibrium
/// constant exp(-dG/(R T)) beyond the range of a double, at low temperature); `seen` records
/// that a note is due.
fn cell(x: f64, width: usize, fmt: impl Fn(f64) -> String, seen: &mut bool) -> String {
    if x.is_finite() {
        fmt(x)
    } else {
        *seen = true;
        format!("{:>width$}", "out of range")
    }
}

/// Prints the table.
pub fn energetics(args: &EnergeticsArgs) -> Result<(), CliError> {
    let (low, high) = TEMPERATURE_RANGE_K;
    if !(args.temperature_k >= low && args.temperature_k <= high) {
        return Err(CliError::BadFlag(format!(
            "--temperature-k must be between {low} and {high:e} K, got {:e}",
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
    let mut out_of_range = false;
    for (j, (step, e)) in file
        .mechanism
        .steps
        .iter()
        .zip(step_energetics(&file.mechanism, t))
        .enumerate()
    {
        match e {
            Some(e) => {
                let seen = &mut out_of_range;
                let kj =
                    |x: f64, seen: &mut bool| cell(x / 1e3, 10, |v| format!("{v:>10.2}"), seen);
                println!(
                    "{:>4}  {:<32} {} {:>12} {} {} {} {}",
                    j + 1,
                    step.equation,
                    kj(e.delta_h_j_per_mol, seen),
                    if e.exothermic {
                        "exothermic"
                    } else {
                        "endothermic"
                    },
                    kj(e.forward_activation_energy_j_per_mol, seen),
                    kj(e.reverse_activation_energy_j_per_mol, seen),
                    kj(e.delta_g_j_per_mol, seen),
                    cell(e.kc_si, 12, |v| format!("{v:>12.4e}"), seen)
                )
            }
            None => println!(
                "{:>4}  {:<32} (no thermochemistry for some species)",
                j + 1,
                step.equation
            ),
        }
    }
    if out_of_range {
        println!("out of range: the value is beyond the range of a double at this temperature (Kc = exp(-dG/(R T)) (P0/(R T))^dn over- or underflows); choose a higher temperature.");
    }
    println!("Ea rev is implied by thermochemistry: Ea fwd - dU (van 't Hoff); Ea fwd includes n R T for a temperature exponent n.");
    Ok(())
}
