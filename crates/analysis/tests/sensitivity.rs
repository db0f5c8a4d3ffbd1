//! Local sensitivities of the hydrogen-oxygen demo against outside references:
//! - central finite differences of full reruns (the definition of the derivative; each
//!   rerun scales one step's forward rate constant by exp(+-h), h = 1e-3 for species, 0.01
//!   for the ignition delay (truncation error h^2/6 of the third derivative: 0.01 left
//!   0.5 % near ignition, where ln c is strongly curved in ln k), as
//!   `Kinetics::scale_forward` does), for the ignition delay and for species concentrations:
//!   within 1e-3 relative on the ten largest;
//! - the adjoint gradient against the forward one on the same observable: within 1e-6
//!   relative (two different integrations of the same derivative);
//! - common practice (trade knowledge, no citable source): in hydrogen-oxygen ignition near
//!   1100 K the chain-branching step H + O2 -> O + OH has the largest negative sensitivity
//!   of the ignition delay.
//!
//! The plan runs at rtol 1e-11 (atol 1e-16 mol/m3, to 1 ms) so that the rerun noise divided by 2h
//! stays far below the checked accuracy.

use stoik_analysis::{
    observable_sensitivity, profile_sensitivities, AnalysisError, Method, Observable, StateQuantity,
};
use stoik_kinetics::Kinetics;
use stoik_scenario::{OutputTimes, RunPlan};
use stoik_testsupport::mechanisms_dir;

const H: f64 = 1e-3;
/// Step of the ignition-delay differences: the delay is located to about 1e-9 relative, so
/// h = 1e-3 would leave a noise of 1e-6 in d ln tau/d ln k; its dependence on ln k is
/// smooth enough for h = 0.01.
const H_DELAY: f64 = 0.01;
const FD_REL: f64 = 1e-3;
const ADJOINT_REL: f64 = 1e-6;
const TIMES: [f64; 4] = [0.0, 1.0e-4, 2.0e-4, 1.0e-3];

fn hydrogen_plan() -> RunPlan {
    let mut plan = RunPlan::load(&mechanisms_dir().join("hydrogen-oxygen.scenario.toml"))
        .unwrap_or_else(|e| panic!("{e}"));
    plan.set_relative_tolerance(1e-11).expect("rtol");
    plan.set_absolute_tolerance_mol_per_m3(1e-16).expect("atol");
    plan.set_end_time_s(1.0e-3).expect("end");
    plan.set_output_times(OutputTimes::List(TIMES.to_vec()))
        .expect("times");
    plan
}

/// A rerun's ignition delay (s) and concentrations at `TIMES` (mol/m3).
type Rerun = (f64, Vec<Vec<f64>>);

/// One rerun with step `j`'s forward rate constant times `factor`.
fn rerun(plan: &RunPlan, j: usize, factor: f64) -> Rerun {
    let mut kinetics = Kinetics::compile(plan.mechanism()).expect("compiles");
    assert!(kinetics.scale_forward(j, factor));
    let outcome = plan.run_compiled(&kinetics).expect("runs");
    let delay = outcome.ignition_delay.expect("ignites").delay_s;
    (delay, outcome.profiles().concentrations_mol_per_m3.clone())
}

#[track_caller]
fn assert_rel(what: &str, actual: f64, expected: f64, rel: f64) {
    let err = (actual - expected).abs();
    assert!(
        err <= rel * expected.abs(),
        "{what}: got {actual:e}, expected {expected:e} (relative error {:e})",
        err / expected.abs()
    );
}

#[test]
fn hydrogen_sensitivities_match_central_differences_of_reruns() {
    let plan = hydrogen_plan();
    let n_steps = plan.mechanism().steps.len();
    let delay = observable_sensitivity(&plan, Observable::IgnitionDelay, Method::Forward, None)
        .expect("sensitivities");
    let profile = profile_sensitivities(&plan, None).expect("profile");
    assert_eq!(profile.times_s, TIMES.to_vec());
    let runs: Vec<(Rerun, Rerun)> = (0..n_steps)
        .map(|j| (rerun(&plan, j, H.exp()), rerun(&plan, j, (-H).exp())))
        .collect();
    // Ignition delay: d ln tau/d ln k.
    let mut worst_delay = 0.0f64;
    let mut worst_species = 0.0f64;
    for s in delay.ranked.iter().take(10) {
        let (up, _) = rerun(&plan, s.step, H_DELAY.exp());
        let (down, _) = rerun(&plan, s.step, (-H_DELAY).exp());
        let fd = (up.ln() - down.ln()) / (2.0 * H_DELAY);
        worst_delay = worst_delay.max((s.normalized - fd).abs() / fd.abs());
        assert_rel(
            &format!("d ln tau/d ln k of R{}", s.step + 1),
            s.normalized,
            fd,
            FD_REL,
        );
    }
    // Species: d ln c/d ln k at 1e-4 and 2e-4 s (before and near ignition) and 1e-3 s
    // (burnt), the ten largest of each species and time.
    let names = ["H2", "O2", "OH", "H", "H2O", "HO2"];
    for name in names {
        let i = plan.mechanism().species_index(name).expect("species");
        for row in 1..TIMES.len() {
            let mut entries: Vec<(usize, f64)> = (0..n_steps)
                .filter_map(|p| profile.normalized(row, p, i).map(|s| (p, s)))
                .collect();
            entries.sort_by(|a, b| b.1.abs().total_cmp(&a.1.abs()));
            for &(p, s) in entries.iter().take(10) {
                let j = profile.steps[p];
                let ((_, up), (_, down)) = &runs[j];
                let fd = (up[row][i].ln() - down[row][i].ln()) / (2.0 * H);
                // Coefficients far below the largest one are limited by the rerun noise
                // (about rtol / h of the largest): an absolute floor of 1e-6 of it.
                let floor = 1e-6 * entries[0].1.abs();
                let err = (s - fd).abs();
                if s.abs() >= 1e-3 * entries[0].1.abs() {
                    worst_species = worst_species.max(err / fd.abs());
                }
                assert!(
                    err <= FD_REL * fd.abs() + floor,
                    "d ln {name}/d ln k of R{} at {} s: got {s:e}, differences {fd:e}",
                    j + 1,
                    TIMES[row]
                );
            }
        }
    }
    println!(
        "largest relative difference to central differences: ignition delay {worst_delay:.2e}, species {worst_species:.2e} (coefficients above 1e-3 of the largest)"
    );
}

#[test]
fn adjoint_gradients_match_forward_ones() {
    let plan = hydrogen_plan();
    let mechanism = plan.mechanism().clone();
    for text in [
        "ignition-delay",
        "peak:OH",
        "peak-time:OH",
        "final:H2O",
        "final:T",
    ] {
        let observable = Observable::parse(&mechanism, text).expect("observable");
        let forward =
            observable_sensitivity(&plan, observable, Method::Forward, None).expect("forward");
        let adjoint =
            observable_sensitivity(&plan, observable, Method::Adjoint, None).expect("adjoint");
        assert_rel(&format!("{text} value"), adjoint.value, forward.value, 1e-9);
        let largest = forward.ranked[0].derivative.abs();
        let mut worst = 0.0f64;
        for f in &forward.ranked {
            let a = adjoint
                .ranked
                .iter()
                .find(|a| a.step == f.step)
                .expect("every step");
            // Relative to each derivative, with a floor of 1e-9 of the largest for the ones
            // that are nearly zero.
            let err = (a.derivative - f.derivative).abs();
            if f.derivative.abs() > 1e-3 * largest {
                worst = worst.max(err / f.derivative.abs());
            }
            assert!(
                err <= ADJOINT_REL * f.derivative.abs() + 1e-9 * largest,
                "{text}, R{}: adjoint {:e}, forward {:e} (relative {:e})",
                f.step + 1,
                a.derivative,
                f.derivative,
                err / f.derivative.abs()
            );
        }
        println!("{text}: adjoint vs forward, largest relative difference {worst:.2e} (derivatives above 1e-3 of the largest)");
    }
}

#[test]
fn chain_branching_dominates_the_hydrogen_ignition_delay() {
    // Trade knowledge (common practice): near 1100 K, H + O2 -> O + OH has the largest
    // negative sensitivity of the ignition delay (faster branching, earlier ignition).
    let plan = RunPlan::load(&mechanisms_dir().join("hydrogen-oxygen.scenario.toml"))
        .unwrap_or_else(|e| panic!("{e}"));
    let r = observable_sensitivity(&plan, Observable::IgnitionDelay, Method::Adjoint, None)
        .expect("sensitivities");
    let most_negative = r
        .ranked
        .iter()
        .min_by(|a, b| a.normalized.total_cmp(&b.normalized))
        .expect("steps");
    let equation = &plan.mechanism().steps[most_negative.step].equation;
    assert_eq!(equation.replace(' ', ""), "H+O2<=>O+OH");
    assert!(most_negative.normalized < 0.0);
    assert_eq!(
        r.ranked[0].step, most_negative.step,
        "also the largest in magnitude"
    );
}

#[test]
fn bad_observables_and_steps_are_refused() {
    let plan = hydrogen_plan();
    let mechanism = plan.mechanism();
    assert!(matches!(
        Observable::parse(mechanism, "final:XX"),
        Err(AnalysisError::UnknownSpecies { .. })
    ));
    assert!(matches!(
        Observable::parse(mechanism, "final:oh"),
        Err(AnalysisError::UnknownSpecies { suggestion: Some(s), .. }) if s == "OH"
    ));
    assert!(matches!(
        Observable::parse(mechanism, "largest:OH"),
        Err(AnalysisError::UnknownObservable { .. })
    ));
    assert!(matches!(
        Observable::parse(mechanism, "delay"),
        Err(AnalysisError::UnknownObservable { .. })
    ));
    assert_eq!(
        Observable::parse(mechanism, "peak:T").expect("T"),
        Observable::Peak(StateQuantity::Temperature)
    );
    let n = mechanism.steps.len();
    let err = observable_sensitivity(
        &plan,
        Observable::IgnitionDelay,
        Method::Forward,
        Some(&[n]),
    )
    .unwrap_err();
    assert!(
        matches!(err, AnalysisError::StepOutOfRange { step, n_steps } if step == n && n_steps == n)
    );
    assert!(err.to_string().contains(&format!("R{}", n + 1)), "{err}");
}

/// Falloff limits and formation enthalpies through the analysis layer on the hydrogen demo
/// (its H + O2 (+M) <=> HO2 (+M) is a Troe falloff step): the two limits of a step sum to its
/// rate-constant sensitivity (both limits scaled together leave Pr unchanged), the adjoint
/// agrees with the forward method within 1e-6 relative, and a central difference of full
/// reruns with HO2's formation enthalpy shifted by +-50 J/mol matches `d ln G/dH_f` within
/// 1e-3.
#[test]
fn falloff_limits_and_enthalpies_of_the_hydrogen_demo() {
    use stoik_analysis::{observable_sensitivity_with, ExtraParameters};
    let plan = hydrogen_plan();
    let mechanism = plan.mechanism();
    let ho2 = mechanism.species_index("HO2").expect("HO2");
    let extra = ExtraParameters {
        falloff_limits: true,
        enthalpies: true,
    };
    let observable = Observable::Final(StateQuantity::Species(
        mechanism.species_index("OH").expect("OH"),
    ));
    let forward = observable_sensitivity_with(&plan, observable, Method::Forward, None, extra)
        .expect("forward");
    let adjoint = observable_sensitivity_with(&plan, observable, Method::Adjoint, None, extra)
        .expect("adjoint");
    assert_eq!(forward.falloff_limits.len(), 2);
    let step = forward.falloff_limits[0].step;
    let both = forward
        .ranked
        .iter()
        .find(|s| s.step == step)
        .expect("the falloff step is ranked")
        .derivative;
    let sum: f64 = forward.falloff_limits.iter().map(|l| l.derivative).sum();
    assert_rel("k0 + kinf = k", sum, both, 1e-9);
    for (f, a) in forward.falloff_limits.iter().zip(&adjoint.falloff_limits) {
        assert_eq!((f.step, f.limit), (a.step, a.limit));
        assert_rel("adjoint limit", a.derivative, f.derivative, ADJOINT_REL);
    }
    let largest = forward.enthalpies[0].derivative.abs();
    for f in &forward.enthalpies {
        let a = adjoint
            .enthalpies
            .iter()
            .find(|a| a.species == f.species)
            .expect("same species");
        let err = (a.derivative - f.derivative).abs();
        assert!(
            err <= ADJOINT_REL * largest,
            "adjoint dG/dH_f of species {}: {:e} against {:e}",
            f.species,
            a.derivative,
            f.derivative
        );
    }
    // Central difference of reruns in HO2's enthalpy.
    let h = 50.0;
    let final_oh = |shift: f64| {
        let mut kinetics = Kinetics::compile(mechanism).expect("compiles");
        assert!(kinetics.shift_formation_enthalpy(ho2, shift));
        let outcome = plan.run_compiled(&kinetics).expect("runs");
        let profiles = outcome.profiles();
        let last = profiles.concentrations_mol_per_m3.len() - 1;
        profiles.concentrations_mol_per_m3[last][mechanism.species_index("OH").unwrap()]
    };
    let fd = (final_oh(h) - final_oh(-h)) / (2.0 * h);
    let got = forward
        .enthalpies
        .iter()
        .find(|e| e.species == ho2)
        .expect("HO2 has thermochemistry")
        .derivative;
    assert_rel("dOH/dH_f(HO2) against central differences", got, fd, 1e-3);
}
