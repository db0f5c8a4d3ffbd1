//! Per-step thermochemistry for reports ([`step_energetics`]) and the plausibility check of
//! bimolecular rate constants against the gas-kinetic collision limit
//! ([`collision_limit_warnings`]).

use crate::{Kinetics, STANDARD_PRESSURE_PA};
use stoik_mechanism::{
    Diagnostic, Mechanism, PressureDependence, Step, AVOGADRO, BOLTZMANN, GAS_CONSTANT,
};

/// Thermochemistry of one step at one temperature (net change products minus reactants; a
/// third-body collider does not enter). All quantities per mole of reaction as written.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StepEnergetics {
    /// Reaction enthalpy dH0 = sum_i nu_i H0_i(T), J/mol.
    pub delta_h_j_per_mol: f64,
    /// Reaction entropy dS0 = sum_i nu_i S0_i(T) at the standard pressure 1e5 Pa, J/(mol K).
    pub delta_s_j_per_mol_k: f64,
    /// Reaction Gibbs energy dG0 = dH0 - T dS0 at 1e5 Pa, J/mol.
    pub delta_g_j_per_mol: f64,
    /// Reaction internal energy dU0 = dH0 - dn R T (ideal gas), J/mol, with dn = sum_i nu_i.
    pub delta_u_j_per_mol: f64,
    /// Change in the number of moles dn = sum_i nu_i (dimensionless).
    pub delta_moles: f64,
    /// Equilibrium constant in pressure units of P0 = 1e5 Pa: Kp = exp(-dG0/(R T)),
    /// dimensionless.
    pub kp: f64,
    /// Equilibrium constant in concentrations, Kc = Kp (P0/(R T))^dn, in (mol/m3)^dn.
    pub kc_si: f64,
    /// Effective (Arrhenius-plot) activation energy of the forward rate constant at T,
    /// R T^2 d ln kf/dT = Ea + n R T, J/mol (the Ea parameter itself when n = 0).
    pub forward_activation_energy_j_per_mol: f64,
    /// Effective activation energy of the thermodynamically consistent reverse rate
    /// constant kr = kf / Kc at T: Ea_f - dU0 (from d ln Kc/dT = dU0/(R T^2), van 't Hoff),
    /// J/mol. Given for every step with thermochemistry, also where the file gives explicit
    /// reverse parameters (compare with `explicit_reverse_activation_energy_j_per_mol`).
    pub reverse_activation_energy_j_per_mol: f64,
    /// Effective activation energy Ea_r + n_r R T (J/mol) of explicit reverse parameters,
    /// when the step has them.
    pub explicit_reverse_activation_energy_j_per_mol: Option<f64>,
    /// Whether the step releases heat as written (dH0 < 0).
    pub exothermic: bool,
}

/// Thermochemistry of every step of `mechanism` at `temperature_k` (K), in step order;
/// `None` for a step some of whose species (reactants or products) lack thermochemistry.
///
/// Standard-state properties come from the species' NASA 7-coefficient polynomials
/// (McBride, Gordon & Reno 1993, NASA TM-4513), which extrapolate outside their range.
pub fn step_energetics(mechanism: &Mechanism, temperature_k: f64) -> Vec<Option<StepEnergetics>> {
    mechanism
        .steps
        .iter()
        .map(|step| energetics_of(mechanism, step, temperature_k))
        .collect()
}

fn energetics_of(mechanism: &Mechanism, step: &Step, t: f64) -> Option<StepEnergetics> {
    let mut dh = 0.0;
    let mut ds = 0.0;
    let mut dn = 0.0;
    let terms = step
        .reactants
        .iter()
        .map(|term| (term.species, -term.coefficient))
        .chain(
            step.products
                .iter()
                .map(|term| (term.species, term.coefficient)),
        );
    for (s, nu) in terms {
        let thermo = mechanism.species.get(s)?.thermo.as_ref()?;
        dh += nu * thermo.enthalpy_j_per_mol(t);
        ds += nu * thermo.entropy_j_per_mol_k(t);
        dn += nu;
    }
    let rt = GAS_CONSTANT * t;
    let dg = dh - t * ds;
    let du = dh - dn * rt;
    let ln_kp = -dg / rt;
    let ln_kc = ln_kp + dn * (STANDARD_PRESSURE_PA / rt).ln();
    let effective = |a: &stoik_mechanism::Arrhenius| {
        a.activation_energy_j_per_mol + a.temperature_exponent * rt
    };
    let forward = effective(&step.forward);
    Some(StepEnergetics {
        delta_h_j_per_mol: dh,
        delta_s_j_per_mol_k: ds,
        delta_g_j_per_mol: dg,
        delta_u_j_per_mol: du,
        delta_moles: dn,
        kp: ln_kp.exp(),
        kc_si: ln_kc.exp(),
        forward_activation_energy_j_per_mol: forward,
        reverse_activation_energy_j_per_mol: forward - du,
        explicit_reverse_activation_energy_j_per_mol: step.reverse.as_ref().map(effective),
        exothermic: dh < 0.0,
    })
}

pub use stoik_mechanism::COLLISION_LIMIT_M3_PER_MOL_S;

/// The temperatures (K) at which [`collision_limit_warnings`] evaluates rate constants:
/// 300 K to 3000 K in steps of 100 K.
pub const COLLISION_LIMIT_TEMPERATURES_K: [f64; 28] = {
    let mut grid = [0.0; 28];
    let mut i = 0;
    while i < 28 {
        grid[i] = 300.0 + 100.0 * i as f64;
        i += 1;
    }
    grid
};

/// Hard-sphere collision rate constant in m3/(mol s) (collision theory, e.g. Atkins'
/// *Physical Chemistry*): k = N_A sigma sqrt(8 k_B T / (pi mu)) with the cross-section
/// sigma = pi ((d_a + d_b)/2)^2 from the diameters `d_a_m`, `d_b_m` (m) and the reduced mass
/// mu = m_a m_b / (m_a + m_b) from the molar masses (kg/mol), at `temperature_k` (K).
pub fn hard_sphere_rate_constant(
    d_a_m: f64,
    d_b_m: f64,
    m_a_kg_per_mol: f64,
    m_b_kg_per_mol: f64,
    temperature_k: f64,
) -> f64 {
    let d = 0.5 * (d_a_m + d_b_m);
    let sigma = std::f64::consts::PI * d * d;
    let mu = m_a_kg_per_mol * m_b_kg_per_mol / (m_a_kg_per_mol + m_b_kg_per_mol) / AVOGADRO;
    let speed = (8.0 * BOLTZMANN * temperature_k / (std::f64::consts::PI * mu)).sqrt();
    AVOGADRO * sigma * speed
}

/// The hard-sphere limit of a direction whose two colliding molecules are `pair` (species
/// indices), when both have a collision diameter and a composition.
fn pair_limit(mechanism: &Mechanism, pair: Option<(usize, usize)>, t: f64) -> Option<f64> {
    let (a, b) = pair?;
    let da = mechanism.species[a].collision_diameter_m?;
    let db = mechanism.species[b].collision_diameter_m?;
    let ma = mechanism.molar_mass_kg_per_mol(a)?;
    let mb = mechanism.molar_mass_kg_per_mol(b)?;
    Some(hard_sphere_rate_constant(da, db, ma, mb, t))
}

/// The two colliding molecules of a side with coefficients summing to 2 (`A + B` or `2 A`).
fn colliding_pair(terms: &[stoik_mechanism::StoichTerm]) -> Option<(usize, usize)> {
    match terms {
        [one] if (one.coefficient - 2.0).abs() < 1e-12 => Some((one.species, one.species)),
        [a, b] if a.coefficient == 1.0 && b.coefficient == 1.0 => Some((a.species, b.species)),
        _ => None,
    }
}

/// Warnings for bimolecular rate constants above the gas-kinetic collision limit anywhere on
/// [`COLLISION_LIMIT_TEMPERATURES_K`].
///
/// The limit is the hard-sphere collision rate constant ([`hard_sphere_rate_constant`]) at
/// each temperature when both colliding species have `collision_diameter_nm` and a
/// composition, and otherwise the common-practice constant [`COLLISION_LIMIT_M3_PER_MOL_S`].
/// A direction counts as bimolecular when its overall order is 2, a third body counting
/// one (so `A + B` and `A (+M)` do, `A + B (+M)` does not); the hard-sphere limit applies to
/// two colliding molecules without a third body. The reverse direction of a reversible step
/// is checked with its explicit parameters or, without them, with kr = kf / Kc from
/// thermochemistry. Each warning names `file_label` and the step's location and shows the
/// k that exceeds the limit most (by ratio), its temperature and the limit there.
///
/// Pressure-dependent steps are checked in the limit whose units are the reactants' own
/// (the bath gas does not count): a falloff step `A + B (+M) -> AB` with its high-pressure
/// limit kinf (the largest value its rate constant reaches), a chemically activated step
/// `A + B (+M) -> C + D` with its low-pressure limit k0 (likewise its largest value, as
/// F/(1+Pr) <= 1 for the usual broadening forms), and a pressure table with the largest of
/// its tabulated (summed) values.
///
/// A mechanism that does not compile (see [`crate::CompileError`]; only possible for one
/// built by hand) gives one error diagnostic saying why, instead of warnings.
pub fn collision_limit_warnings(mechanism: &Mechanism, file_label: &str) -> Vec<Diagnostic> {
    let kinetics = match Kinetics::compile(mechanism) {
        Ok(kinetics) => kinetics,
        Err(e) => return vec![Diagnostic::error(file_label, None, e.to_string())],
    };
    let mut k = kinetics.rate_constants(COLLISION_LIMIT_TEMPERATURES_K[0]);
    let pairs: Vec<[Option<(usize, usize)>; 2]> = mechanism
        .steps
        .iter()
        .map(|s| {
            if s.third_body.is_some() {
                [None, None]
            } else {
                [colliding_pair(&s.reactants), colliding_pair(&s.products)]
            }
        })
        .collect();
    // (largest k / limit, k, limit, T, hard sphere?) per step, forward and reverse.
    let mut worst = vec![[(0.0f64, 0.0f64, 0.0f64, 0.0f64, false); 2]; mechanism.steps.len()];
    for &t in &COLLISION_LIMIT_TEMPERATURES_K {
        kinetics.evaluate_rate_constants(t, &mut k);
        for (j, w) in worst.iter_mut().enumerate() {
            let mut forward = k.forward[j];
            let mut reverse = k.reverse[j];
            if let Some(PressureDependence::Table { points }) =
                &mechanism.steps[j].pressure_dependence
            {
                // The compiled forward is 1; take the largest tabulated value.
                let largest = points
                    .iter()
                    .map(|p| p.rate_sets.iter().map(|a| a.rate_constant(t)).sum::<f64>())
                    .fold(0.0, f64::max);
                reverse *= largest / forward;
                forward = largest;
            }
            for (direction, value) in [forward, reverse].into_iter().enumerate() {
                let hard = pair_limit(mechanism, pairs[j][direction], t);
                let limit = hard.unwrap_or(COLLISION_LIMIT_M3_PER_MOL_S);
                let ratio = value / limit;
                // NaN (missing thermochemistry) never compares greater.
                if ratio > w[direction].0 {
                    w[direction] = (ratio, value, limit, t, hard.is_some());
                }
            }
        }
    }
    let is_two = |order: f64| (order - 2.0).abs() < 1e-9;
    let mut out = Vec::new();
    for (step, w) in mechanism.steps.iter().zip(&worst) {
        let directions = [
            ("forward", is_two(step.forward_order())),
            ("reverse", step.reversible && is_two(step.reverse_order())),
        ];
        for ((direction, bimolecular), &(ratio, k_max, limit, t_max, hard)) in
            directions.into_iter().zip(w)
        {
            if !bimolecular || ratio <= 1.0 {
                continue;
            }
            let per_molecule = k_max * 1e6 / AVOGADRO;
            let which = if hard {
                format!(
                    "the hard-sphere collision rate constant from the species' collision diameters, {limit:.3e} m3/(mol s) there"
                )
            } else {
                format!(
                    "the gas-kinetic collision limit of about {limit:.3e} m3/(mol s) (1e-10 cm3/(molecule s))"
                )
            };
            let message = format!(
                "{direction} rate constant of bimolecular step `{}` reaches {k_max:.3e} m3/(mol s) ({per_molecule:.3e} cm3/(molecule s)) at {t_max} K, {ratio:.2} times {which}",
                step.equation
            );
            out.push(
                Diagnostic::warning(file_label, step.location, message)
                    .with_help("check the prefactor and its units (mol or molecule, cm or m)"),
            );
        }
    }
    out
}

/// The temperature range (lowest, highest) in K over which [`rate_constant_range_errors`]
/// checks a mechanism when the caller knows no other: 200 K (the cold upper troposphere) to
/// 3500 K (adiabatic flame temperatures), both included.
pub const RATE_CHECK_RANGE_K: (f64, f64) = (200.0, 3500.0);

/// Number of temperatures, spaced evenly in 1/T from the highest to the lowest, at which
/// [`rate_constant_range_errors`] evaluates the rate constants.
pub const RATE_CHECK_POINTS: usize = 64;

/// Errors for every step whose forward rate constant, or reverse one (explicit, or
/// kf / Kc from thermochemistry), is not finite somewhere on `range_k` ((lowest, highest)
/// in K; [`RATE_CHECK_RANGE_K`] when the mechanism states none), evaluated at
/// [`RATE_CHECK_POINTS`] temperatures evenly spaced in 1/T, both ends included. Such a
/// step makes every integration over that range fail, so it is an error of the file,
/// located at the step (`file_label` names the file) and given with the first temperature
/// where it happens.
///
/// A mechanism that does not compile (only possible for one built by hand) gives one error
/// diagnostic saying why.
pub fn rate_constant_range_errors(
    mechanism: &Mechanism,
    file_label: &str,
    range_k: (f64, f64),
) -> Vec<Diagnostic> {
    match Kinetics::compile(mechanism) {
        Ok(kinetics) => {
            compiled_rate_constant_range_errors(&kinetics, mechanism, file_label, range_k)
        }
        Err(e) => vec![Diagnostic::error(file_label, None, e.to_string())],
    }
}

/// [`rate_constant_range_errors`] with the mechanism already compiled: `kinetics` must come
/// from `mechanism` (a process model that runs many plans of one mechanism compiles it
/// once). A range of one temperature (`low == high`) checks that temperature alone.
pub fn compiled_rate_constant_range_errors(
    kinetics: &Kinetics,
    mechanism: &Mechanism,
    file_label: &str,
    range_k: (f64, f64),
) -> Vec<Diagnostic> {
    if kinetics.n_steps() != mechanism.steps.len() {
        return vec![Diagnostic::error(
            file_label,
            None,
            format!(
                "the compiled kinetics has {} steps but the mechanism {}: they are not the same mechanism",
                kinetics.n_steps(),
                mechanism.steps.len()
            ),
        )];
    }
    let (low, high) = range_k;
    let n = RATE_CHECK_POINTS.max(2);
    let mut k = kinetics.rate_constants(high);
    // (direction, value, temperature) of the first non-finite rate constant per step.
    let mut found: Vec<Option<(&str, f64, f64)>> = vec![None; mechanism.steps.len()];
    for i in 0..n {
        let inverse = 1.0 / high + (1.0 / low - 1.0 / high) * (i as f64 / (n - 1) as f64);
        let t = match i {
            0 => high,
            _ if i == n - 1 => low,
            _ => 1.0 / inverse,
        };
        kinetics.evaluate_rate_constants(t, &mut k);
        for (j, slot) in found.iter_mut().enumerate() {
            if slot.is_some() {
                continue;
            }
            let mut forward = k.forward[j];
            if let Some(PressureDependence::Table { points }) =
                &mechanism.steps[j].pressure_dependence
            {
                forward = points
                    .iter()
                    .map(|p| p.rate_sets.iter().map(|a| a.rate_constant(t)).sum::<f64>())
                    .fold(0.0, f64::max);
            }
            if !forward.is_finite() {
                *slot = Some(("forward", forward, t));
            } else if !k.reverse[j].is_finite() {
                *slot = Some(("reverse", k.reverse[j], t));
            }
        }
    }
    mechanism
        .steps
        .iter()
        .zip(found)
        .filter_map(|(step, f)| {
            let (direction, value, t) = f?;
            let why = if direction == "reverse" && step.reverse.is_none() {
                " (kf / Kc: the equilibrium constant from the species' thermochemistry under- or overflows)"
            } else {
                ""
            };
            Some(
                Diagnostic::error(
                    file_label,
                    step.location,
                    format!(
                        "{direction} rate constant of step `{}` is {value} at {t} K{why}; rate constants must be finite {}",
                        step.equation,
                        if low == high { format!("at {low} K") } else { format!("from {low} K to {high} K") }
                    ),
                )
                .with_help("check the prefactor, the temperature exponent and the sign and units of the activation energy"),
            )
        })
        .collect()
}
