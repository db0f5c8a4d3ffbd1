//! [`revert`]: the new mechanism with one edit taken back to the old mechanism's version.

use crate::canonical::species_name;
use crate::edit::Edit;
use crate::DiffError;
use stoik_mechanism::{Element, Mechanism, Species, Step, StoichTerm, ThirdBody};

/// The index in `target` of the species called like species `index` of `source`.
fn translate_species(
    source: &Mechanism,
    index: usize,
    target: &Mechanism,
) -> Result<usize, String> {
    let name = species_name(source, index);
    target
        .species_index(&name)
        .ok_or_else(|| format!("the new mechanism has no species `{name}`"))
}

/// Step `step` of `source` with its species indices translated by name into `target`.
fn translate_step(source: &Mechanism, step: &Step, target: &Mechanism) -> Result<Step, String> {
    let map = |i: usize| translate_species(source, i, target);
    let terms = |terms: &[StoichTerm]| -> Result<Vec<StoichTerm>, String> {
        terms
            .iter()
            .map(|t| {
                Ok(StoichTerm {
                    species: map(t.species)?,
                    coefficient: t.coefficient,
                })
            })
            .collect()
    };
    let mut out = step.clone();
    out.reactants = terms(&step.reactants)?;
    out.products = terms(&step.products)?;
    out.third_body = match &step.third_body {
        None => None,
        Some(ThirdBody::Species(s)) => Some(ThirdBody::Species(map(*s)?)),
        Some(ThirdBody::Mixture {
            default_efficiency,
            efficiencies,
        }) => Some(ThirdBody::Mixture {
            default_efficiency: *default_efficiency,
            efficiencies: efficiencies
                .iter()
                .map(|&(s, e)| Ok((map(s)?, e)))
                .collect::<Result<_, String>>()?,
        }),
    };
    out.forward_orders = match &step.forward_orders {
        None => None,
        Some(orders) => Some(
            orders
                .iter()
                .map(|&(s, o)| Ok((map(s)?, o)))
                .collect::<Result<_, String>>()?,
        ),
    };
    Ok(out)
}

/// Species `species` of `source` with its composition's element indices translated by symbol
/// into `target`, whose element list gains the elements it lacks.
fn translate_composition(source: &Mechanism, species: &Species, target: &mut Mechanism) -> Species {
    let mut out = species.clone();
    if let Some(atoms) = &species.composition {
        let mut translated = Vec::with_capacity(atoms.len());
        for &(e, n) in atoms {
            let Some(element) = source.elements.get(e) else {
                translated.push((e, n));
                continue;
            };
            let index = match target
                .elements
                .iter()
                .position(|x| x.symbol == element.symbol)
            {
                Some(i) => i,
                None => {
                    target.elements.push(Element {
                        symbol: element.symbol.clone(),
                        atomic_weight_kg_per_mol: element.atomic_weight_kg_per_mol,
                    });
                    target.elements.len() - 1
                }
            };
            translated.push((index, n));
        }
        out.composition = Some(translated);
    }
    out
}

/// Whether step `step` refers to species `species` (equation, partner, efficiencies, orders).
fn step_uses(step: &Step, species: usize) -> bool {
    step.reactants
        .iter()
        .chain(&step.products)
        .any(|t| t.species == species)
        || match &step.third_body {
            Some(ThirdBody::Species(s)) => *s == species,
            Some(ThirdBody::Mixture { efficiencies, .. }) => {
                efficiencies.iter().any(|(s, _)| *s == species)
            }
            None => false,
        }
        || step
            .forward_orders
            .iter()
            .flatten()
            .any(|(s, _)| *s == species)
}

/// Removes species `species` from `mechanism`, shifting the indices above it down by one
/// (no step may refer to it).
fn remove_species(mechanism: &mut Mechanism, species: usize) {
    mechanism.species.remove(species);
    let shift = |i: &mut usize| {
        if *i > species {
            *i -= 1;
        }
    };
    for step in &mut mechanism.steps {
        for t in step.reactants.iter_mut().chain(step.products.iter_mut()) {
            shift(&mut t.species);
        }
        match &mut step.third_body {
            Some(ThirdBody::Species(s)) => shift(s),
            Some(ThirdBody::Mixture { efficiencies, .. }) => {
                efficiencies.iter_mut().for_each(|(s, _)| shift(s))
            }
            None => {}
        }
        if let Some(orders) = &mut step.forward_orders {
            orders.iter_mut().for_each(|(s, _)| shift(s));
        }
    }
}

/// The mechanism `new` with the one edit `edit` (from `diff_mechanisms(old, new, ..)`) taken
/// back to `old`'s version, everything else left as in `new`:
///
/// - a species added is removed (no step of `new` may use it: revert those steps first), a
///   species removed is appended (with its composition; elements `new` lacks are appended
///   too), a composition or thermochemistry edit takes the old value;
/// - a step added is removed, a step removed is appended (its species must exist in `new`),
///   a changed step is replaced, at its new position, by the old step (species translated by
///   name).
///
/// A diff of `old` against the result no longer lists `edit` (other edits stay). The result
/// is checked with [`Mechanism::validate`].
///
/// Errors: [`DiffError::EditMismatch`] when the edit's indices or names do not belong to these
/// mechanisms, [`DiffError::RevertConflict`] when the edit cannot be reverted alone,
/// [`DiffError::InvalidRevert`] when the result breaks a rule of [`Mechanism::validate`].
pub fn revert(old: &Mechanism, new: &Mechanism, edit: &Edit) -> Result<Mechanism, DiffError> {
    let what = edit.describe();
    let mismatch = |reason: String| DiffError::EditMismatch {
        edit: what.clone(),
        reason,
    };
    let conflict = |reason: String| DiffError::RevertConflict {
        edit: what.clone(),
        reason,
    };
    let old_species = |index: usize, name: &str| -> Result<&Species, DiffError> {
        old.species
            .get(index)
            .filter(|s| s.name == name)
            .ok_or_else(|| mismatch(format!("old species {index} is not `{name}`")))
    };
    let new_species = |index: usize, name: &str| -> Result<(), DiffError> {
        new.species
            .get(index)
            .filter(|s| s.name == name)
            .map(|_| ())
            .ok_or_else(|| mismatch(format!("new species {index} is not `{name}`")))
    };
    let old_step = |index: usize| -> Result<&Step, DiffError> {
        old.steps
            .get(index)
            .ok_or_else(|| mismatch(format!("the old mechanism has no step {index}")))
    };
    let check_new_step = |index: usize| -> Result<(), DiffError> {
        if index < new.steps.len() {
            Ok(())
        } else {
            Err(mismatch(format!("the new mechanism has no step {index}")))
        }
    };
    let mut out = new.clone();
    match edit {
        Edit::SpeciesAdded { name, new_index } => {
            new_species(*new_index, name)?;
            if let Some(j) = new.steps.iter().position(|s| step_uses(s, *new_index)) {
                return Err(conflict(format!(
                    "step {} ({}) of the new mechanism uses `{name}`",
                    j + 1,
                    new.steps[j].equation
                )));
            }
            remove_species(&mut out, *new_index);
        }
        Edit::SpeciesRemoved { name, old_index } => {
            let species = old_species(*old_index, name)?;
            if new.species_index(name).is_some() {
                return Err(mismatch(format!(
                    "the new mechanism has a species `{name}`"
                )));
            }
            let species = translate_composition(old, species, &mut out);
            out.species.push(species);
        }
        Edit::SpeciesComposition {
            name,
            old_index,
            new_index,
            ..
        } => {
            let species = old_species(*old_index, name)?;
            new_species(*new_index, name)?;
            let translated = translate_composition(old, species, &mut out);
            out.species[*new_index].composition = translated.composition;
        }
        Edit::SpeciesThermo {
            name,
            old_index,
            new_index,
            ..
        } => {
            let species = old_species(*old_index, name)?;
            new_species(*new_index, name)?;
            out.species[*new_index].thermo = species.thermo;
        }
        Edit::StepAdded { new_index, .. } => {
            check_new_step(*new_index)?;
            out.steps.remove(*new_index);
        }
        Edit::StepRemoved { old_index, .. } => {
            let step = translate_step(old, old_step(*old_index)?, &out).map_err(conflict)?;
            out.steps.push(step);
        }
        Edit::StepChanged {
            old_index,
            new_index,
            ..
        } => {
            check_new_step(*new_index)?;
            let step = translate_step(old, old_step(*old_index)?, &out).map_err(conflict)?;
            out.steps[*new_index] = step;
        }
    }
    out.validate()
        .map_err(|problems| DiffError::InvalidRevert {
            edit: what.clone(),
            problems,
        })?;
    Ok(out)
}
