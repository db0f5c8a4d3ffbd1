//! [`diff_mechanisms`]: species compared by name, steps matched by canonical equation, rate
//! constants of changed steps compared through the compiled kinetics.

use crate::canonical::{shape, species_name, Shape};
use crate::edit::{
    Collider, Edit, EfficiencyChange, MechanismDiff, RateRatio, StepAspect, ThermoChange,
};
use crate::{canonical_equation, DiffError, Which};
use std::collections::{BTreeMap, HashMap};
use stoik_kinetics::{Kinetics, GAS_CONSTANT};
use stoik_mechanism::{
    Arrhenius, Broadening, Mechanism, PressureDependence, PressurePoint, Species, Step, ThirdBody,
};
use stoik_thermo::Nasa7;

/// Temperatures of the rate-constant ratios by default, K.
pub const DEFAULT_TEMPERATURES_K: [f64; 3] = [300.0, 1000.0, 2000.0];
/// Bath-gas pressures of the ratios of pressure-dependent steps by default, Pa (0.01, 1 and
/// 100 atm).
pub const DEFAULT_PRESSURES_PA: [f64; 3] = [1013.25, 101_325.0, 10_132_500.0];
/// Relative tolerance under which two SI values count as equal by default: unit conversions
/// round, so a value rewritten in other units reads back within a few units in the last place
/// (about 1e-16 relative), far below it.
pub const DEFAULT_RELATIVE_TOLERANCE: f64 = 1e-12;

/// Temperature at which formation enthalpies are compared, K.
pub const ENTHALPY_TEMPERATURE_K: f64 = 298.15;
/// Temperature at which Gibbs energies are compared, K.
pub const GIBBS_TEMPERATURE_K: f64 = 1000.0;

/// What a diff evaluates and how close two values must be to count as equal.
#[derive(Debug, Clone, PartialEq)]
pub struct DiffOptions {
    /// Temperatures of the rate-constant ratios, K (finite, positive, at least one).
    pub temperatures_k: Vec<f64>,
    /// Bath-gas pressures of the ratios of steps that depend on the bath gas (third body or
    /// pressure dependence in either mechanism), Pa (finite, positive, at least one; the
    /// ratios of other steps do not depend on it).
    ///
    /// The bath gas is an ideal gas at this pressure and the ratio's temperature, total
    /// concentration P/(R T), made of the species the two mechanisms share (by name) in equal
    /// mole fractions, so that both mechanisms see the same mixture and an efficiency change
    /// of a shared species shows in the ratio.
    pub pressures_pa: Vec<f64>,
    /// Two SI values (rate parameters, efficiencies, pressures, thermo coefficients) `a` and
    /// `b` count as equal when `|a - b| <= relative_tolerance * max(|a|, |b|)`; in [0, 1e-3].
    pub relative_tolerance: f64,
}

impl Default for DiffOptions {
    fn default() -> Self {
        DiffOptions {
            temperatures_k: DEFAULT_TEMPERATURES_K.to_vec(),
            pressures_pa: DEFAULT_PRESSURES_PA.to_vec(),
            relative_tolerance: DEFAULT_RELATIVE_TOLERANCE,
        }
    }
}

impl DiffOptions {
    fn check(&self) -> Result<(), DiffError> {
        let positive = |what: &'static str, values: &[f64]| -> Result<(), DiffError> {
            if values.is_empty() {
                return Err(DiffError::BadOption {
                    what,
                    value: f64::NAN,
                    rule: "give at least one value",
                });
            }
            match values.iter().find(|v| !(v.is_finite() && **v > 0.0)) {
                Some(&value) => Err(DiffError::BadOption {
                    what,
                    value,
                    rule: "finite and positive",
                }),
                None => Ok(()),
            }
        };
        positive("temperatures_k", &self.temperatures_k)?;
        positive("pressures_pa", &self.pressures_pa)?;
        let tol = self.relative_tolerance;
        if !(0.0..=1e-3).contains(&tol) {
            return Err(DiffError::BadOption {
                what: "relative_tolerance",
                value: tol,
                rule: "from 0 to 1e-3",
            });
        }
        Ok(())
    }
}

/// Whether `a` and `b` are equal within the relative tolerance `tol`.
pub(crate) fn close(a: f64, b: f64, tol: f64) -> bool {
    a == b || (a - b).abs() <= tol * a.abs().max(b.abs())
}

fn arrhenius_close(a: &Arrhenius, b: &Arrhenius, tol: f64) -> bool {
    close(a.pre_exponential_si, b.pre_exponential_si, tol)
        && close(a.temperature_exponent, b.temperature_exponent, tol)
        && close(
            a.activation_energy_j_per_mol,
            b.activation_energy_j_per_mol,
            tol,
        )
}

fn option_close<T>(a: Option<&T>, b: Option<&T>, same: impl Fn(&T, &T) -> bool) -> bool {
    match (a, b) {
        (None, None) => true,
        (Some(a), Some(b)) => same(a, b),
        _ => false,
    }
}

fn broadening_close(a: &Broadening, b: &Broadening, tol: f64) -> bool {
    let c = |x: f64, y: f64| close(x, y, tol);
    match (a, b) {
        (Broadening::Lindemann, Broadening::Lindemann) => true,
        (
            Broadening::Troe {
                a: a1,
                t3_k: t31,
                t1_k: t11,
                t2_k: t21,
            },
            Broadening::Troe {
                a: a2,
                t3_k: t32,
                t1_k: t12,
                t2_k: t22,
            },
        ) => {
            c(*a1, *a2)
                && c(*t31, *t32)
                && c(*t11, *t12)
                && option_close(t21.as_ref(), t22.as_ref(), |x, y| c(*x, *y))
        }
        (
            Broadening::Sri {
                a: a1,
                b_k: b1,
                c_k: c1,
                d: d1,
                e: e1,
            },
            Broadening::Sri {
                a: a2,
                b_k: b2,
                c_k: c2,
                d: d2,
                e: e2,
            },
        ) => c(*a1, *a2) && c(*b1, *b2) && c(*c1, *c2) && c(*d1, *d2) && c(*e1, *e2),
        (Broadening::FixedCenter { center: x }, Broadening::FixedCenter { center: y }) => c(*x, *y),
        _ => false,
    }
}

/// The sets of a pressure-table point sorted by prefactor (they add, so their order does not
/// matter).
fn sorted_sets(point: &PressurePoint) -> Vec<Arrhenius> {
    let mut sets = point.rate_sets.clone();
    sets.sort_by(|a, b| {
        a.pre_exponential_si
            .total_cmp(&b.pre_exponential_si)
            .then(a.temperature_exponent.total_cmp(&b.temperature_exponent))
            .then(
                a.activation_energy_j_per_mol
                    .total_cmp(&b.activation_energy_j_per_mol),
            )
    });
    sets
}

fn pressure_close(a: &PressureDependence, b: &PressureDependence, tol: f64) -> bool {
    match (a, b) {
        (
            PressureDependence::Falloff {
                low_pressure: l1,
                high_pressure: h1,
                broadening: b1,
                chemically_activated: c1,
            },
            PressureDependence::Falloff {
                low_pressure: l2,
                high_pressure: h2,
                broadening: b2,
                chemically_activated: c2,
            },
        ) => {
            c1 == c2
                && arrhenius_close(l1, l2, tol)
                && arrhenius_close(h1, h2, tol)
                && broadening_close(b1, b2, tol)
        }
        (PressureDependence::Table { points: p1 }, PressureDependence::Table { points: p2 }) => {
            p1.len() == p2.len()
                && p1.iter().zip(p2).all(|(x, y)| {
                    let (sx, sy) = (sorted_sets(x), sorted_sets(y));
                    close(x.pressure_pa, y.pressure_pa, tol)
                        && sx.len() == sy.len()
                        && sx.iter().zip(&sy).all(|(a, b)| arrhenius_close(a, b, tol))
                })
        }
        _ => false,
    }
}

/// The collision partner of a step by name.
fn collider(mechanism: &Mechanism, step: &Step) -> Collider {
    match &step.third_body {
        None => Collider::None,
        Some(ThirdBody::Mixture { .. }) => Collider::Mixture,
        Some(ThirdBody::Species(s)) => Collider::Species(species_name(mechanism, *s)),
    }
}

/// Default efficiency and the listed efficiencies by species name of a mixture partner.
fn efficiencies(mechanism: &Mechanism, step: &Step) -> Option<(f64, BTreeMap<String, f64>)> {
    match &step.third_body {
        Some(ThirdBody::Mixture {
            default_efficiency,
            efficiencies,
        }) => Some((
            *default_efficiency,
            efficiencies
                .iter()
                .map(|(s, e)| (species_name(mechanism, *s), *e))
                .collect(),
        )),
        _ => None,
    }
}

/// The efficiencies that differ between two mixture partners: every species listed in
/// either step (an unlisted species has its step's default), then the default.
fn efficiency_changes(
    old: (f64, BTreeMap<String, f64>),
    new: (f64, BTreeMap<String, f64>),
    tol: f64,
) -> Vec<EfficiencyChange> {
    let (old_default, old_map) = old;
    let (new_default, new_map) = new;
    let mut names: Vec<&String> = old_map.keys().chain(new_map.keys()).collect();
    names.sort();
    names.dedup();
    let mut out = Vec::new();
    for name in names {
        let o = old_map.get(name).copied().unwrap_or(old_default);
        let n = new_map.get(name).copied().unwrap_or(new_default);
        if !close(o, n, tol) {
            out.push(EfficiencyChange {
                species: Some(name.clone()),
                old: o,
                new: n,
            });
        }
    }
    if !close(old_default, new_default, tol) {
        out.push(EfficiencyChange {
            species: None,
            old: old_default,
            new: new_default,
        });
    }
    out
}

/// Forward order of every reactant by name (explicit orders, else the coefficients).
fn orders(mechanism: &Mechanism, step: &Step) -> BTreeMap<String, f64> {
    let mut out: BTreeMap<String, f64> = BTreeMap::new();
    match &step.forward_orders {
        None => {
            for t in &step.reactants {
                *out.entry(species_name(mechanism, t.species)).or_insert(0.0) += t.coefficient;
            }
        }
        Some(orders) => {
            for t in &step.reactants {
                *out.entry(species_name(mechanism, t.species)).or_insert(0.0) += t.coefficient;
            }
            for (s, o) in orders {
                out.insert(species_name(mechanism, *s), *o);
            }
        }
    }
    out
}

/// What differs between old step `i` and new step `j` (same shape); empty when they are
/// kinetically the same.
fn step_aspects(
    old: &Mechanism,
    i: usize,
    old_shape: &Shape,
    new: &Mechanism,
    j: usize,
    new_shape: &Shape,
    tol: f64,
) -> Vec<StepAspect> {
    let (so, sn) = (&old.steps[i], &new.steps[j]);
    let mut aspects = Vec::new();
    if so.reversible != sn.reversible {
        aspects.push(StepAspect::Reversibility {
            old: so.reversible,
            new: sn.reversible,
        });
    }
    let same_orientation = old_shape.reactants_first == new_shape.reactants_first;
    let arr = |a: &Arrhenius, b: &Arrhenius| arrhenius_close(a, b, tol);
    if same_orientation {
        if (so.pressure_dependence.is_none() || sn.pressure_dependence.is_none())
            && !arr(&so.forward, &sn.forward)
        {
            aspects.push(StepAspect::Forward {
                old: so.forward,
                new: sn.forward,
            });
        }
        if !option_close(so.reverse.as_ref(), sn.reverse.as_ref(), arr) {
            aspects.push(StepAspect::Reverse {
                old: so.reverse,
                new: sn.reverse,
            });
        }
    } else {
        // Written the other way round: the same kinetics only when both give explicit
        // parameters both ways, swapped, and neither depends on pressure.
        let swapped_same = match (&so.reverse, &sn.reverse) {
            (Some(ro), Some(rn)) => {
                so.pressure_dependence.is_none()
                    && sn.pressure_dependence.is_none()
                    && arr(&so.forward, rn)
                    && arr(ro, &sn.forward)
            }
            _ => false,
        };
        if !swapped_same {
            aspects.push(StepAspect::Orientation);
            if let (Some(ro), Some(rn)) = (&so.reverse, &sn.reverse) {
                if !arr(&so.forward, rn) {
                    aspects.push(StepAspect::Forward {
                        old: so.forward,
                        new: *rn,
                    });
                }
                if !arr(ro, &sn.forward) {
                    aspects.push(StepAspect::Reverse {
                        old: Some(*ro),
                        new: Some(sn.forward),
                    });
                }
            }
        }
    }
    let (co, cn) = (collider(old, so), collider(new, sn));
    if co != cn {
        aspects.push(StepAspect::ThirdBody { old: co, new: cn });
    } else if let (Some(eo), Some(en)) = (efficiencies(old, so), efficiencies(new, sn)) {
        let changes = efficiency_changes(eo, en, tol);
        if !changes.is_empty() {
            aspects.push(StepAspect::Efficiencies(changes));
        }
    }
    if !option_close(
        so.pressure_dependence.as_ref(),
        sn.pressure_dependence.as_ref(),
        |a, b| pressure_close(a, b, tol),
    ) {
        aspects.push(StepAspect::PressureDependence {
            old: so.pressure_dependence.clone(),
            new: sn.pressure_dependence.clone(),
        });
    }
    // Explicit orders exist on one-way steps only; compared in one orientation (a change of
    // orientation is reported as such).
    let (oo, on) = (orders(old, so), orders(new, sn));
    let orders_same = oo.len() == on.len()
        && oo
            .iter()
            .zip(&on)
            .all(|((a, x), (b, y))| a == b && close(*x, *y, tol));
    let explicit = so.forward_orders.is_some() || sn.forward_orders.is_some();
    if explicit && same_orientation && !orders_same {
        aspects.push(StepAspect::ReactionOrders);
    }
    aspects
}

/// The old and the new steps of one shape (indices).
type Group = (Vec<usize>, Vec<usize>);

/// Effective rate constants of every step of one mechanism at every (temperature, pressure)
/// of the options: `forward[t][p][j]`, `reverse[t][p][j]`.
struct RateTable {
    forward: Vec<Vec<Vec<f64>>>,
    reverse: Vec<Vec<Vec<f64>>>,
}

fn rate_table(
    kinetics: &Kinetics,
    mechanism: &Mechanism,
    shared: &[String],
    options: &DiffOptions,
) -> RateTable {
    let n = kinetics.n_steps();
    let mut table = RateTable {
        forward: Vec::new(),
        reverse: Vec::new(),
    };
    let index: HashMap<&str, usize> = mechanism
        .species
        .iter()
        .enumerate()
        .map(|(i, s)| (s.name.as_str(), i))
        .collect();
    for &t in &options.temperatures_k {
        let k = kinetics.rate_constants(t);
        let (mut fwd_t, mut rev_t) = (Vec::new(), Vec::new());
        for &p in &options.pressures_pa {
            let mut c = vec![0.0; kinetics.n_species()];
            if !shared.is_empty() {
                let each = p / (GAS_CONSTANT * t) / shared.len() as f64;
                for name in shared {
                    if let Some(&i) = index.get(name.as_str()) {
                        c[i] = each;
                    }
                }
            }
            let mut fwd = vec![0.0; n];
            kinetics.effective_forward_rate_constants(&k, &c, &mut fwd);
            // The reverse rate constant carries the same [M] or pressure factor as the forward
            // one (kr = kf / Kc for pressure-dependent steps).
            let rev: Vec<f64> = (0..n)
                .map(|j| {
                    if k.forward[j] != 0.0 && k.forward[j].is_finite() {
                        k.reverse[j] * (fwd[j] / k.forward[j])
                    } else {
                        k.reverse[j]
                    }
                })
                .collect();
            fwd_t.push(fwd);
            rev_t.push(rev);
        }
        table.forward.push(fwd_t);
        table.reverse.push(rev_t);
    }
    table
}

fn depends_on_bath(step: &Step) -> bool {
    step.third_body.is_some() || step.pressure_dependence.is_some()
}

/// The ratios k_new/k_old of old step `i` and new step `j`, in the old step's direction.
#[allow(clippy::too_many_arguments)]
fn ratios(
    old: &Mechanism,
    i: usize,
    old_rates: &RateTable,
    new: &Mechanism,
    j: usize,
    new_rates: &RateTable,
    same_orientation: bool,
    options: &DiffOptions,
) -> Vec<RateRatio> {
    let (so, sn) = (&old.steps[i], &new.steps[j]);
    let bath = depends_on_bath(so) || depends_on_bath(sn);
    let pressures = if bath { options.pressures_pa.len() } else { 1 };
    let mut out = Vec::new();
    for (ti, &t) in options.temperatures_k.iter().enumerate() {
        for pi in 0..pressures {
            let (nf, nr) = if same_orientation {
                (new_rates.forward[ti][pi][j], new_rates.reverse[ti][pi][j])
            } else {
                (new_rates.reverse[ti][pi][j], new_rates.forward[ti][pi][j])
            };
            let reverse =
                (so.reversible && sn.reversible).then(|| nr / old_rates.reverse[ti][pi][i]);
            out.push(RateRatio {
                temperature_k: t,
                pressure_pa: bath.then(|| options.pressures_pa[pi]),
                forward: nf / old_rates.forward[ti][pi][i],
                reverse,
            });
        }
    }
    out
}

/// The cost of matching old step `i` with new step `j` of the same shape and not equivalent:
/// `None` when forbidden (two one-way steps in opposite directions), else 1000 per differing
/// kind (direction kind, collision-partner kind, pressure-dependence kind) plus the mean
/// |ln(k_new/k_old)| of the forward ratios (1e6 when one is not finite).
fn match_cost(
    so: &Step,
    sn: &Step,
    same_orientation: bool,
    ratios: &[RateRatio],
    old: &Mechanism,
    new: &Mechanism,
) -> Option<f64> {
    if !so.reversible && !sn.reversible && !same_orientation {
        return None;
    }
    let mut cost = 0.0;
    if so.reversible != sn.reversible || !same_orientation {
        cost += 1000.0;
    }
    if std::mem::discriminant(&collider(old, so)) != std::mem::discriminant(&collider(new, sn)) {
        cost += 1000.0;
    }
    let kind = |s: &Step| match &s.pressure_dependence {
        None => 0,
        Some(PressureDependence::Falloff {
            chemically_activated: false,
            ..
        }) => 1,
        Some(PressureDependence::Falloff { .. }) => 2,
        Some(PressureDependence::Table { .. }) => 3,
    };
    if kind(so) != kind(sn) {
        cost += 1000.0;
    }
    let mut sum = 0.0;
    for r in ratios {
        let l = r.forward.ln().abs();
        sum += if l.is_finite() { l } else { 1e6 };
    }
    Some(cost + sum / ratios.len().max(1) as f64)
}

fn composition(mechanism: &Mechanism, species: &Species) -> Option<Vec<(String, f64)>> {
    let atoms = species.composition.as_ref()?;
    let mut out: Vec<(String, f64)> = Vec::new();
    for &(e, n) in atoms {
        let symbol = mechanism
            .elements
            .get(e)
            .map_or_else(|| format!("#{e}"), |el| el.symbol.clone());
        match out.iter_mut().find(|(s, _)| *s == symbol) {
            Some(entry) => entry.1 += n,
            None => out.push((symbol, n)),
        }
    }
    out.retain(|(_, n)| *n != 0.0);
    out.sort_by(|a, b| a.0.cmp(&b.0));
    Some(out)
}

fn composition_close(
    a: &Option<Vec<(String, f64)>>,
    b: &Option<Vec<(String, f64)>>,
    tol: f64,
) -> bool {
    option_close(a.as_ref(), b.as_ref(), |x, y| {
        x.len() == y.len()
            && x.iter()
                .zip(y)
                .all(|((s1, n1), (s2, n2))| s1 == s2 && close(*n1, *n2, tol))
    })
}

fn nasa_close(a: &Nasa7, b: &Nasa7, tol: f64) -> bool {
    close(a.t_low_k, b.t_low_k, tol)
        && close(a.t_mid_k, b.t_mid_k, tol)
        && close(a.t_high_k, b.t_high_k, tol)
        && a.low.iter().zip(&b.low).all(|(x, y)| close(*x, *y, tol))
        && a.high.iter().zip(&b.high).all(|(x, y)| close(*x, *y, tol))
}

/// The kinetic edits that turn `old` into `new`.
///
/// - Species are matched by name. A species of one mechanism only is added or removed; a
///   shared one whose composition (by element symbol) or thermochemistry (temperature ranges
///   and coefficients, within the tolerance) differs is an edit, with H(298.15 K) and
///   G(1000 K) before and after.
/// - Steps are matched by shape (see [`canonical_equation`]: sides sorted, repeats added up,
///   `<=>` steps either way round), never by position. Within one shape, pairs that are
///   kinetically the same are matched first, in old order, each with the first unmatched new
///   step (so reordered duplicates match); then the remaining pairs by smallest cost (1000 per
///   differing kind of direction, collision partner or pressure dependence, plus the mean
///   |ln(k_new/k_old)| of the forward ratios), ties in old then new order. Two one-way steps
///   in opposite directions never match. What is left is removed or added.
/// - Two matched steps are the same when their direction kind, parameters (SI, within the
///   tolerance), collision partner and efficiencies (an unlisted species has its step's
///   default), pressure dependence and forward orders agree; a `<=>` step written the other
///   way round is the same only when both give explicit reverse parameters, swapped.
///   Notes, comments, units, locations and `allow_duplicate` are not kinetics.
/// - A changed step gets the ratios k_new/k_old (forward and, when both run both ways,
///   reverse) at every temperature of `options`, and at every pressure for steps that depend
///   on the bath gas ([`DiffOptions::pressures_pa`]).
///
/// Errors: [`DiffError::BadOption`] for options out of range, [`DiffError::Compile`] when a
/// mechanism does not compile.
pub fn diff_mechanisms(
    old: &Mechanism,
    new: &Mechanism,
    options: &DiffOptions,
) -> Result<MechanismDiff, DiffError> {
    options.check()?;
    let tol = options.relative_tolerance;
    let old_kinetics = Kinetics::compile(old).map_err(|source| DiffError::Compile {
        which: Which::Old,
        source,
    })?;
    let new_kinetics = Kinetics::compile(new).map_err(|source| DiffError::Compile {
        which: Which::New,
        source,
    })?;
    let mut edits = Vec::new();

    // Species, by name.
    let new_index: HashMap<&str, usize> = new
        .species
        .iter()
        .enumerate()
        .map(|(i, s)| (s.name.as_str(), i))
        .collect();
    let old_names: std::collections::HashSet<&str> =
        old.species.iter().map(|s| s.name.as_str()).collect();
    let mut shared: Vec<String> = Vec::new();
    let mut thermo_edits: Vec<usize> = Vec::new();
    for (i, so) in old.species.iter().enumerate() {
        let Some(&j) = new_index.get(so.name.as_str()) else {
            edits.push(Edit::SpeciesRemoved {
                name: so.name.clone(),
                old_index: i,
            });
            continue;
        };
        shared.push(so.name.clone());
        let sn = &new.species[j];
        let (co, cn) = (composition(old, so), composition(new, sn));
        if !composition_close(&co, &cn, tol) {
            edits.push(Edit::SpeciesComposition {
                name: so.name.clone(),
                old_index: i,
                new_index: j,
                old: co,
                new: cn,
            });
        }
        if !option_close(so.thermo.as_ref(), sn.thermo.as_ref(), |a, b| {
            nasa_close(a, b, tol)
        }) {
            let h = |t: &Option<Nasa7>| t.map(|t| t.enthalpy_j_per_mol(ENTHALPY_TEMPERATURE_K));
            let g = |t: &Option<Nasa7>| t.map(|t| t.gibbs_j_per_mol(GIBBS_TEMPERATURE_K));
            thermo_edits.push(edits.len());
            edits.push(Edit::SpeciesThermo {
                name: so.name.clone(),
                old_index: i,
                new_index: j,
                change: ThermoChange {
                    old_h298_j_per_mol: h(&so.thermo),
                    new_h298_j_per_mol: h(&sn.thermo),
                    old_g1000_j_per_mol: g(&so.thermo),
                    new_g1000_j_per_mol: g(&sn.thermo),
                },
                reverse_rates_affected: Vec::new(),
            });
        }
    }
    for (j, sn) in new.species.iter().enumerate() {
        if !old_names.contains(sn.name.as_str()) {
            edits.push(Edit::SpeciesAdded {
                name: sn.name.clone(),
                new_index: j,
            });
        }
    }

    // Steps, by shape.
    let old_rates = rate_table(&old_kinetics, old, &shared, options);
    let new_rates = rate_table(&new_kinetics, new, &shared, options);
    let old_shapes: Vec<Shape> = (0..old.steps.len()).filter_map(|i| shape(old, i)).collect();
    let new_shapes: Vec<Shape> = (0..new.steps.len()).filter_map(|j| shape(new, j)).collect();
    let mut groups: BTreeMap<(&str, &str), Group> = BTreeMap::new();
    for (i, s) in old_shapes.iter().enumerate() {
        groups
            .entry((s.first.as_str(), s.second.as_str()))
            .or_default()
            .0
            .push(i);
    }
    for (j, s) in new_shapes.iter().enumerate() {
        groups
            .entry((s.first.as_str(), s.second.as_str()))
            .or_default()
            .1
            .push(j);
    }
    let mut old_match: Vec<Option<usize>> = vec![None; old.steps.len()];
    let mut new_match: Vec<Option<usize>> = vec![None; new.steps.len()];
    let mut changed: BTreeMap<usize, (usize, Vec<StepAspect>, Vec<RateRatio>)> = BTreeMap::new();
    for (olds, news) in groups.values() {
        // Equivalent pairs first, in old order.
        for &i in olds {
            let found = news.iter().copied().find(|&j| {
                new_match[j].is_none()
                    && step_aspects(old, i, &old_shapes[i], new, j, &new_shapes[j], tol).is_empty()
            });
            if let Some(j) = found {
                old_match[i] = Some(j);
                new_match[j] = Some(i);
            }
        }
        // Then the closest of the rest.
        let mut candidates: Vec<(f64, usize, usize, Vec<RateRatio>)> = Vec::new();
        for &i in olds.iter().filter(|&&i| old_match[i].is_none()) {
            for &j in news.iter().filter(|&&j| new_match[j].is_none()) {
                let same = old_shapes[i].reactants_first == new_shapes[j].reactants_first;
                let r = ratios(old, i, &old_rates, new, j, &new_rates, same, options);
                if let Some(cost) = match_cost(&old.steps[i], &new.steps[j], same, &r, old, new) {
                    candidates.push((cost, i, j, r));
                }
            }
        }
        candidates.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)).then(a.2.cmp(&b.2)));
        for (_, i, j, r) in candidates {
            if old_match[i].is_some() || new_match[j].is_some() {
                continue;
            }
            old_match[i] = Some(j);
            new_match[j] = Some(i);
            let aspects = step_aspects(old, i, &old_shapes[i], new, j, &new_shapes[j], tol);
            changed.insert(i, (j, aspects, r));
        }
    }
    let mut unchanged_steps = Vec::new();
    for (i, m) in old_match.iter().enumerate() {
        let equation = canonical_equation(old, i).unwrap_or_default();
        match m {
            None => edits.push(Edit::StepRemoved {
                equation,
                old_index: i,
            }),
            Some(j) => match changed.remove(&i) {
                Some((j, aspects, ratios)) => edits.push(Edit::StepChanged {
                    equation,
                    old_index: i,
                    new_index: j,
                    aspects,
                    ratios,
                }),
                None => unchanged_steps.push((i, *j)),
            },
        }
    }
    for (j, m) in new_match.iter().enumerate() {
        if m.is_none() {
            edits.push(Edit::StepAdded {
                equation: canonical_equation(new, j).unwrap_or_default(),
                new_index: j,
            });
        }
    }

    // Steps of both mechanisms whose reverse rate constant moves with a species' thermo.
    for e in thermo_edits {
        if let Edit::SpeciesThermo {
            new_index: species,
            reverse_rates_affected,
            ..
        } = &mut edits[e]
        {
            for (j, m) in new_match.iter().enumerate() {
                let step = &new.steps[j];
                if m.is_some()
                    && step.reverse_from_thermo()
                    && step
                        .reactants
                        .iter()
                        .chain(&step.products)
                        .any(|t| t.species == *species)
                {
                    reverse_rates_affected.push(j);
                }
            }
        }
    }

    Ok(MechanismDiff {
        edits,
        unchanged_steps,
        temperatures_k: options.temperatures_k.clone(),
        pressures_pa: options.pressures_pa.clone(),
        relative_tolerance: tol,
        species_counts: (old.species.len(), new.species.len()),
        step_counts: (old.steps.len(), new.steps.len()),
    })
}
