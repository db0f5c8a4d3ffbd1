//! Element totals are invariants of a closed reactor (conservation of atoms; common practice):
//! the bundled ozone demo, integrated far past its relaxation, keeps its O and Ar totals to
//! 1e-10 relative.

use std::path::Path;
use stoik::kinetics::Kinetics;
use stoik::mechanism::{load_mechanism, load_scenario};
use stoik::reactor::{integrate, IntegrationOptions};

#[test]
fn element_totals_are_conserved_over_a_long_run() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("mechanisms");
    let (scenario, _) = load_scenario(&root.join("ozone-flask.scenario.toml")).unwrap();
    let file = load_mechanism(&scenario.mechanism_path).unwrap();
    let mechanism = &file.mechanism;
    let resolved = scenario.resolve(mechanism).unwrap();
    let kinetics = Kinetics::compile(mechanism);
    let mut options = IntegrationOptions::new(kinetics.n_species());
    options.relative_tolerance = 1e-8;
    options.absolute_tolerances_mol_per_m3 = vec![1e-18; kinetics.n_species()];
    let times: Vec<f64> = (0..=40)
        .map(|i| {
            if i == 0 {
                0.0
            } else {
                10f64.powf(-6.0 + 0.25 * i as f64)
            }
        })
        .collect();
    let profiles = integrate(
        &kinetics,
        scenario.temperature_k,
        &resolved.initial_concentrations_mol_per_m3,
        &times,
        &options,
    )
    .unwrap();
    let start = mechanism.element_totals(&profiles.concentrations_mol_per_m3[0]);
    assert_eq!(start.len(), 2, "elements O and Ar");
    for row in &profiles.concentrations_mol_per_m3 {
        let totals = mechanism.element_totals(row);
        for (s, t) in start.iter().zip(&totals) {
            assert!(
                ((t - s) / s).abs() < 1e-10,
                "element total moved: {s} -> {t}"
            );
        }
    }
    // And the run really did something: most ozone is gone after 1e4 s at 600 K.
    let o3 = mechanism.species_index("O3").unwrap();
    let last = profiles.concentrations_mol_per_m3.last().unwrap();
    assert!(last[o3] < 1e-3 * profiles.concentrations_mol_per_m3[0][o3]);
}
