//! A small flowsheet built on the library: a jacketed stirred tank feeding an insulated
//! tubular (plug-flow) reactor, with part of the tube's outlet recycled to the tank's inlet.
//! Run with `cargo run --example flowsheet`.
//!
//! The recycle makes the flowsheet a tear-stream problem: the tank's inlet depends on the
//! tube's outlet, which depends on the tank. The recycle stream is torn, guessed, and the
//! units are solved in order (mixer, tank, tube, splitter) until the recycle computed equals
//! the one guessed, by successive substitution accelerated by Wegstein's method (J. H.
//! Wegstein, 1958; the bounded form common practice in sequential-modular flowsheeting).
//!
//! The units, all of a constant-density liquid (the library's [`LiquidPhase`]: a mixture
//! heat capacity per volume and a reaction enthalpy per step):
//! - the tank: [`steady_state`] of a [`StirredFlow`] at residence time `V / q`, jacketed
//!   ([`HeatExchange`]), isothermal or adiabatic;
//! - the tube: a steady plug flow of a constant-density liquid. A parcel entering the tube
//!   meets no other fluid on its way, so the tube's outlet is a closed batch integrated over
//!   the residence time `V_tube / q` (O. Levenspiel, *Chemical Reaction Engineering*, the
//!   plug-flow and batch design equations coincide at constant density). The library's
//!   `plug` module is the ideal-gas tube (its density follows the gas law); for the liquid
//!   here the batch integrator ([`BatchSystem`]) is the plug flow, with the extents of each
//!   step tracked over the parcel's passage;
//! - the mixer and the splitter: volumetric flows add, molar flows add, and at a constant
//!   heat capacity per volume the mixed temperature is the flow-weighted mean.
//!
//! The chemistry is invented (a reagent A turning into a product P, which slowly degrades to
//! a waste W, in a solvent S); the numbers describe no real process. Simulation is no
//! substitute for process-safety review, local codes, standards and licensed engineering
//! review.

use stoik::kinetics::Kinetics;
use stoik::mechanism::parse_mechanism;
use stoik::reactor::{
    steady_state, BatchSystem, Energy, HeatExchange, IntegrationOptions, LiquidPhase, ReactorModel,
    SteadyOptions, StirredFlow, TemperatureHistory,
};

type Error = Box<dyn std::error::Error>;

/// A liquid stream: volumetric flow (m3/s), concentrations (mol/m3) and temperature (K).
#[derive(Debug, Clone, PartialEq)]
pub struct Stream {
    /// Volumetric flow (m3/s).
    pub flow_m3_per_s: f64,
    /// Concentrations (mol/m3), one per species.
    pub concentrations: Vec<f64>,
    /// Temperature (K).
    pub temperature_k: f64,
}

impl Stream {
    /// Molar flows (mol/s).
    pub fn molar_flows(&self) -> Vec<f64> {
        self.concentrations
            .iter()
            .map(|c| c * self.flow_m3_per_s)
            .collect()
    }

    /// Two streams mixed at constant density and constant heat capacity per volume.
    pub fn mix(&self, other: &Stream) -> Stream {
        let q = self.flow_m3_per_s + other.flow_m3_per_s;
        let (a, b) = (self.flow_m3_per_s / q, other.flow_m3_per_s / q);
        Stream {
            flow_m3_per_s: q,
            concentrations: self
                .concentrations
                .iter()
                .zip(&other.concentrations)
                .map(|(x, y)| a * x + b * y)
                .collect(),
            temperature_k: a * self.temperature_k + b * other.temperature_k,
        }
    }

    /// The fraction `fraction` of the stream (same composition and temperature).
    pub fn part(&self, fraction: f64) -> Stream {
        Stream {
            flow_m3_per_s: fraction * self.flow_m3_per_s,
            ..self.clone()
        }
    }
}

/// How a unit exchanges heat.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Thermal {
    /// Held at a temperature (K).
    Isothermal(f64),
    /// Insulated.
    Adiabatic,
    /// A jacket of `ua_w_per_k` (W/K) with its coolant at `coolant_k` (K).
    Jacketed { ua_w_per_k: f64, coolant_k: f64 },
}

/// The flowsheet: fresh feed, tank, tube, the recycled fraction of the tube's outlet.
#[derive(Debug, Clone)]
pub struct Flowsheet {
    /// The fresh feed.
    pub feed: Stream,
    /// Tank volume (m3) and heat exchange.
    pub tank_volume_m3: f64,
    pub tank_thermal: Thermal,
    /// Tube volume (m3) and heat exchange (isothermal or adiabatic).
    pub tube_volume_m3: f64,
    pub tube_thermal: Thermal,
    /// Fraction of the tube's outlet returned to the tank's inlet, in [0, 1).
    pub recycle_fraction: f64,
    /// The liquid's heat capacity per volume and step enthalpies.
    pub liquid: LiquidPhase,
    /// Integration tolerances of the units.
    pub options: IntegrationOptions,
}

/// The converged flowsheet.
#[derive(Debug, Clone)]
pub struct Solution {
    pub tank_outlet: Stream,
    pub tube_outlet: Stream,
    pub recycle: Stream,
    pub product: Stream,
    /// Extents of each step per second in the tank and the tube (mol/s).
    pub tank_extents: Vec<f64>,
    pub tube_extents: Vec<f64>,
    /// Heat flowing from the jacket into the tank (W; negative: removed).
    pub jacket_heat_w: f64,
    /// Tear iterations and the largest relative change of the recycle at each.
    pub iterations: usize,
    pub tear_changes: Vec<f64>,
}

/// Wegstein's acceleration of `x = g(x)`, component by component, with the factor `q`
/// bounded to [-5, 0] (q = 0 is successive substitution).
pub struct Wegstein {
    previous: Option<(Vec<f64>, Vec<f64>)>,
}

impl Wegstein {
    pub fn new() -> Wegstein {
        Wegstein { previous: None }
    }

    /// The next guess from the guess `x` and its image `gx`.
    pub fn next(&mut self, x: &[f64], gx: &[f64]) -> Vec<f64> {
        let out = match &self.previous {
            None => gx.to_vec(),
            Some((x0, g0)) => x
                .iter()
                .zip(gx)
                .zip(x0.iter().zip(g0))
                .map(|((&x1, &g1), (&x0, &g0))| {
                    let dx = x1 - x0;
                    if dx.abs() <= 1e-300 {
                        return g1;
                    }
                    let s = (g1 - g0) / dx;
                    let q = if (s - 1.0).abs() < 1e-12 {
                        0.0
                    } else {
                        (s / (s - 1.0)).clamp(-5.0, 0.0)
                    };
                    q * x1 + (1.0 - q) * g1
                })
                .collect(),
        };
        self.previous = Some((x.to_vec(), gx.to_vec()));
        out
    }
}

impl Default for Wegstein {
    fn default() -> Self {
        Wegstein::new()
    }
}

fn energy(thermal: Thermal, volume_m3: f64) -> Result<Energy, Error> {
    Ok(match thermal {
        Thermal::Isothermal(_) => Energy::Isothermal,
        Thermal::Adiabatic => Energy::Adiabatic,
        Thermal::Jacketed {
            ua_w_per_k,
            coolant_k,
        } => Energy::HeatExchange(HeatExchange::new(
            ua_w_per_k / volume_m3,
            TemperatureHistory::new(vec![0.0], vec![coolant_k])?,
        )?),
    })
}

/// The stirred tank's steady outlet for `inlet`, searched from `guess` (concentrations and
/// temperature of the previous solution; the first search follows the start-up transient).
fn tank(
    kinetics: &Kinetics,
    sheet: &Flowsheet,
    inlet: &Stream,
    guess: &mut Option<(Vec<f64>, f64)>,
) -> Result<(Stream, Vec<f64>), Error> {
    let tau = sheet.tank_volume_m3 / inlet.flow_m3_per_s;
    let model = ReactorModel {
        energy: energy(sheet.tank_thermal, sheet.tank_volume_m3)?,
        flow: Some(StirredFlow::new(
            tau,
            inlet.concentrations.clone(),
            inlet.temperature_k,
        )?),
        liquid: Some(sheet.liquid.clone()),
        ..Default::default()
    };
    let start = match sheet.tank_thermal {
        Thermal::Isothermal(t) => t,
        _ => inlet.temperature_k,
    };
    let (c0, t0, transient_first) = match guess {
        Some((c, t)) => (c.clone(), *t, false),
        None => (inlet.concentrations.clone(), start, true),
    };
    let options = SteadyOptions {
        transient_first,
        ..SteadyOptions::from_integration(&sheet.options)
    };
    let s = steady_state(kinetics, &model, t0, &c0, &options)?;
    *guess = Some((s.concentrations_mol_per_m3.clone(), s.temperature_k));
    // Extents per second: V r_j at the tank's state.
    let k = kinetics.rate_constants(s.temperature_k);
    let mut q = vec![0.0; kinetics.n_steps()];
    kinetics.rates_of_progress(&k, &s.concentrations_mol_per_m3, &mut q);
    let extents = q.iter().map(|r| r * sheet.tank_volume_m3).collect();
    Ok((
        Stream {
            flow_m3_per_s: inlet.flow_m3_per_s,
            concentrations: s.concentrations_mol_per_m3,
            temperature_k: s.temperature_k,
        },
        extents,
    ))
}

/// The plug-flow tube's outlet for `inlet`: a parcel integrated as a closed constant-density
/// batch over the residence time, with its extents (returned per second of flow, mol/s).
fn tube(
    kinetics: &Kinetics,
    sheet: &Flowsheet,
    inlet: &Stream,
) -> Result<(Stream, Vec<f64>), Error> {
    let tau = sheet.tube_volume_m3 / inlet.flow_m3_per_s;
    let model = ReactorModel {
        energy: energy(sheet.tube_thermal, sheet.tube_volume_m3)?,
        liquid: Some(sheet.liquid.clone()),
        ..Default::default()
    };
    let start = match sheet.tube_thermal {
        Thermal::Isothermal(t) => t,
        _ => inlet.temperature_k,
    };
    let mut system = BatchSystem::with_model(kinetics, &model, start, &sheet.options)?;
    let mut parcel = system.integrator(&inlet.concentrations)?;
    parcel.track_extents();
    parcel.advance_to(tau)?;
    let mut xi = vec![0.0; kinetics.n_steps()];
    parcel.take_extents(&mut xi)?;
    Ok((
        Stream {
            flow_m3_per_s: inlet.flow_m3_per_s,
            concentrations: parcel.state().to_vec(),
            temperature_k: parcel.temperature(),
        },
        xi.iter().map(|x| x * inlet.flow_m3_per_s).collect(),
    ))
}

/// Converges the recycle (tear) stream to a relative change below `tolerance`, in at most
/// `max_iterations` passes.
pub fn solve(
    kinetics: &Kinetics,
    sheet: &Flowsheet,
    tolerance: f64,
    max_iterations: usize,
) -> Result<Solution, Error> {
    let r = sheet.recycle_fraction;
    if !(0.0..1.0).contains(&r) {
        return Err(format!("the recycle fraction must be in [0, 1), got {r}").into());
    }
    // At constant density the flows follow from the split alone: q = q0 / (1 - R).
    let recycle_flow = sheet.feed.flow_m3_per_s * r / (1.0 - r);
    // The torn stream: concentrations then temperature, first guessed as the fresh feed.
    let pack = |s: &Stream| {
        let mut x = s.concentrations.clone();
        x.push(s.temperature_k);
        x
    };
    let unpack = |x: &[f64]| Stream {
        flow_m3_per_s: recycle_flow,
        concentrations: x[..x.len() - 1].iter().map(|c| c.max(0.0)).collect(),
        temperature_k: x[x.len() - 1],
    };
    let mut x = pack(&sheet.feed);
    let mut accelerate = Wegstein::new();
    let mut guess = None;
    let mut tear_changes = Vec::new();
    for iteration in 1..=max_iterations {
        let recycle = unpack(&x);
        let inlet = if r > 0.0 {
            sheet.feed.mix(&recycle)
        } else {
            sheet.feed.clone()
        };
        let (tank_outlet, tank_extents) = tank(kinetics, sheet, &inlet, &mut guess)?;
        let (tube_outlet, tube_extents) = tube(kinetics, sheet, &tank_outlet)?;
        let computed = tube_outlet.part(r);
        let gx = pack(&computed);
        let scale = gx.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let change = x
            .iter()
            .zip(&gx)
            .fold(0.0f64, |m, (a, b)| m.max((a - b).abs() / scale));
        tear_changes.push(change);
        if change <= tolerance || r == 0.0 {
            let jacket_heat_w = match sheet.tank_thermal {
                Thermal::Jacketed {
                    ua_w_per_k,
                    coolant_k,
                } => ua_w_per_k * (coolant_k - tank_outlet.temperature_k),
                _ => 0.0,
            };
            return Ok(Solution {
                product: tube_outlet.part(1.0 - r),
                recycle: computed,
                tank_outlet,
                tube_outlet,
                tank_extents,
                tube_extents,
                jacket_heat_w,
                iterations: iteration,
                tear_changes,
            });
        }
        x = accelerate.next(&x, &gx);
    }
    Err(format!("the recycle did not converge in {max_iterations} iterations").into())
}

/// The largest imbalance of the species' molar flows, out - in - sum_j nu_ij xi_j (mol/s),
/// relative to the fresh feed's total molar flow.
pub fn mole_balance_closure(kinetics: &Kinetics, sheet: &Flowsheet, s: &Solution) -> f64 {
    let nu = kinetics.stoichiometric_matrix();
    let (fin, fout) = (sheet.feed.molar_flows(), s.product.molar_flows());
    let total: f64 = fin.iter().sum();
    (0..fin.len())
        .map(|i| {
            let made: f64 = (0..kinetics.n_steps())
                .map(|j| nu[i][j] * (s.tank_extents[j] + s.tube_extents[j]))
                .sum();
            (fout[i] - fin[i] - made).abs() / total
        })
        .fold(0.0, f64::max)
}

/// The energy imbalance (W) relative to the heat released: the product carries
/// q rho cp (T_out - T_feed) more than the feed brought (at constant density the flows are
/// equal); the reactions release sum_j (-dH_j) xi_j and the jacket adds its heat.
pub fn energy_balance_closure(sheet: &Flowsheet, s: &Solution) -> f64 {
    let rho_cp = sheet.liquid.heat_capacity_j_per_m3_k();
    let carried =
        s.product.flow_m3_per_s * rho_cp * (s.product.temperature_k - sheet.feed.temperature_k);
    let released: f64 = sheet
        .liquid
        .step_enthalpies_j_per_mol()
        .iter()
        .zip(s.tank_extents.iter().zip(&s.tube_extents))
        .map(|(dh, (a, b))| -dh * (a + b))
        .sum();
    (carried - released - s.jacket_heat_w).abs() / released.abs()
}

const MECHANISM: &str = r#"
stoik_mechanism = 1
title = "Reagent to product with a slow degradation (invented flowsheet chemistry)"
[units]
amount = "mol"
length = "m"
time = "s"
activation_energy = "kJ/mol"

[[species]]
name = "A"
[[species]]
name = "P"
[[species]]
name = "W"
[[species]]
name = "S"
note = "solvent"

[[step]]
equation = "A -> P"
forward = { prefactor = 4.0e8, activation_energy = 70.0 }

[[step]]
equation = "P -> W"
forward = { prefactor = 2.0e9, activation_energy = 90.0 }
"#;

#[allow(dead_code)]
fn main() -> Result<(), Error> {
    let file = parse_mechanism(MECHANISM, "<flowsheet>")?;
    let kinetics = Kinetics::compile(&file.mechanism)?;
    let mut options = IntegrationOptions::new(kinetics.n_species());
    options.relative_tolerance = 1e-10;
    options.absolute_tolerances_mol_per_m3 = vec![1e-9; kinetics.n_species()];
    let sheet = Flowsheet {
        // 2 m3/h of 1.5 mol/L of A in the solvent, at 300 K.
        feed: Stream {
            flow_m3_per_s: 2.0 / 3600.0,
            concentrations: vec![1500.0, 0.0, 0.0, 12000.0],
            temperature_k: 300.0,
        },
        tank_volume_m3: 4.0,
        tank_thermal: Thermal::Jacketed {
            ua_w_per_k: 8.0e3,
            coolant_k: 310.0,
        },
        tube_volume_m3: 1.5,
        tube_thermal: Thermal::Adiabatic,
        recycle_fraction: 0.3,
        liquid: LiquidPhase::per_volume(2.0e6, vec![-60.0e3, -20.0e3])?,
        options,
    };
    let s = solve(&kinetics, &sheet, 1e-12, 100)?;
    let names = kinetics.species_names();
    let show = |label: &str, x: &Stream| {
        let c: Vec<String> = names
            .iter()
            .zip(&x.concentrations)
            .take(3)
            .map(|(n, c)| format!("{n} {c:.4}"))
            .collect();
        println!(
            "  {label:<12} {:6.3} m3/h  {:7.2} K  {} mol/m3",
            x.flow_m3_per_s * 3600.0,
            x.temperature_k,
            c.join(", ")
        );
    };
    println!("Jacketed tank (4 m3, U A 8 kW/K, coolant 310 K) -> insulated tube (1.5 m3), 30 % of the tube's outlet recycled (invented process)");
    println!(
        "recycle converged in {} iterations (Wegstein); relative change of the recycle: {}",
        s.iterations,
        s.tear_changes
            .iter()
            .map(|c| format!("{c:.1e}"))
            .collect::<Vec<_>>()
            .join(", ")
    );
    show("fresh feed", &sheet.feed);
    show("tank outlet", &s.tank_outlet);
    show("tube outlet", &s.tube_outlet);
    show("recycle", &s.recycle);
    show("product", &s.product);
    let a_in = sheet.feed.molar_flows()[0];
    let out = s.product.molar_flows();
    println!(
        "conversion of A {:.4} %, yield of P {:.4} %; jacket heat {:.1} kW",
        100.0 * (1.0 - out[0] / a_in),
        100.0 * out[1] / a_in,
        s.jacket_heat_w / 1e3
    );
    println!(
        "balances over the flowsheet: moles (out - in - made) {:.1e} of the feed, energy {:.1e} of the heat released",
        mole_balance_closure(&kinetics, &sheet, &s),
        energy_balance_closure(&sheet, &s)
    );
    println!("Caution: an invented process; simulation is no substitute for process-safety review, local codes, standards and licensed engineering review.");
    Ok(())
}
