//! How a process model embeds stoik: compile a mechanism once, integrate it under several
//! conditions, and advance a state step by step while changing it between steps (operator
//! splitting), without recompiling or reallocating. Run with `cargo run --example process_model`.
//!
//! The chemistry is an invented two-step scheme for a dye fading in a stirred vat; the numbers
//! are for illustration only.

use stoik::kinetics::Kinetics;
use stoik::mechanism::parse_mechanism;
use stoik::reactor::{BatchSystem, IntegrationOptions};

const MECHANISM: &str = r#"
stoik_mechanism = 1
title = "Dye fading in a vat (invented illustration)"
[units]
amount = "mol"
length = "m"
activation_energy = "kJ/mol"

[[species]]
name = "DYE"
[[species]]
name = "OX"
note = "dissolved oxidant"
[[species]]
name = "FADED"

[[step]]
equation = "DYE + OX -> FADED"
forward = { prefactor = 5.0e6, activation_energy = 45.0 }

[[step]]
equation = "OX -> "
forward = { prefactor = 2.0e3, activation_energy = 30.0 }
note = "oxidant decays on the vat walls"
"#;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let file = parse_mechanism(MECHANISM, "<vat>")?;
    let kinetics = Kinetics::compile(&file.mechanism)?;
    let options = IntegrationOptions::new(kinetics.n_species());

    // The mechanism is compiled once and set up once; everything below reuses it.
    let mut system = BatchSystem::new(&kinetics, 290.0, &options)?;

    // 1. One set-up, several temperatures.
    println!("dye left after 600 s (mol/m3):");
    for temperature_k in [290.0, 300.0, 310.0] {
        system.set_temperature(temperature_k)?;
        let profiles = system.integrate(&[1.0, 2.0, 0.0], &[0.0, 600.0])?;
        println!(
            "  {temperature_k} K: {:.6}",
            profiles.concentrations_mol_per_m3[1][0]
        );
    }

    // 2. Operator splitting: advance 60 s at a time; dose fresh oxidant every 5 minutes and let
    //    the vat cool by 1 K per step. The session keeps one solver: after its first step,
    //    advancing, dosing and cooling do not allocate.
    system.set_temperature(305.0)?;
    let mut vat = system.integrator(&[1.0, 0.5, 0.0])?;
    let mut state = [0.0; 3];
    for minute in 1..=10 {
        vat.advance_to(60.0 * minute as f64)?;
        if minute % 5 == 0 {
            state.copy_from_slice(vat.state());
            state[1] += 0.5;
            vat.set_state(&state)?;
        }
        vat.set_temperature(vat.temperature() - 1.0)?;
        println!(
            "t = {:4.0} s  T = {} K  dye = {:.6}  oxidant = {:.6} mol/m3",
            vat.time(),
            vat.temperature(),
            vat.state()[0],
            vat.state()[1]
        );
    }
    println!(
        "{} steps, {} LU factorizations",
        vat.stats().steps,
        vat.stats().factorizations
    );
    Ok(())
}
