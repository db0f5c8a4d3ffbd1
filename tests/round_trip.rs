//! Everything stoik writes for machines reads back as exactly the `f64` the library computes:
//! the run and batch CSVs, the ignition-delay line, the thermo file of `fit-thermo` and the
//! mechanism snippet of `fit-rate`. Each test computes the values through the library API
//! (the independent path) and compares them bit for bit (`to_bits`) with what the real binary
//! wrote, read back with Rust's float parser (correctly rounded, IEEE 754) or the `toml`
//! crate's parser. Bit identity holds because the binary runs the same computation and writes
//! the shortest digits that round-trip.

mod common;

use common::{repo, stoik, text, Table};
use std::path::Path;
use stoik::kinetics::Kinetics;
use stoik::mechanism::{EnergyUnit, Mechanism};
use stoik::reactor::{
    ignition_delay, integrate_batch, simulate, BatchCase, Constraint, Energy, IgnitionCriterion,
    IntegrationOptions, Profiles, ReactorModel,
};
use stoik::scenario::{RunPlan, Scenario};

fn scratch(name: &str) -> std::path::PathBuf {
    common::scratch("round-trip", name)
}

/// A bundled scenario with its mechanism, at `temperature_k` when given (as `--temperatures-k`).
fn bundled(name: &str, temperature_k: Option<f64>) -> RunPlan {
    let mut plan =
        RunPlan::load(&repo().join("mechanisms").join(name)).unwrap_or_else(|e| panic!("{e}"));
    if let Some(t) = temperature_k {
        plan.set_temperature_k(t).unwrap_or_else(|e| panic!("{e}"));
    }
    plan
}

/// The scenario's integration options as the binary builds them (non-negativity on).
fn options(scenario: &Scenario, absolute: Vec<f64>) -> IntegrationOptions {
    let mut o = IntegrationOptions::new(absolute.len());
    o.relative_tolerance = scenario.relative_tolerance;
    o.absolute_tolerances_mol_per_m3 = absolute;
    o.linear_algebra = scenario.linear_algebra;
    o.max_steps = scenario.max_steps;
    o.non_negative = true;
    o
}

/// Asserts that every cell of the CSV at `path` has the bits of the library's value: time,
/// concentrations in the scenario's unit, T, P ([`Profiles::pressure_pa`]), density
/// sum(c_i M_i) with M_i = sum(n_e W_e) in composition order, mole fractions
/// ([`Profiles::mole_fractions`]).
fn assert_csv_is_bit_identical(path: &Path, scenario: &Scenario, m: &Mechanism, p: &Profiles) {
    let table = Table::read(path);
    assert_eq!(table.rows.len(), p.times_s.len(), "{}", path.display());
    let factor = scenario.output_concentration_unit.to_si_factor();
    let masses: Vec<f64> = m
        .species
        .iter()
        .map(|s| {
            s.composition
                .as_ref()
                .expect("composition")
                .iter()
                .map(|&(e, n)| n * m.elements[e].atomic_weight_kg_per_mol)
                .sum()
        })
        .collect();
    let mut cells = 0;
    for (i, row) in table.rows.iter().enumerate() {
        let c = &p.concentrations_mol_per_m3[i];
        let mut expected = vec![p.times_s[i]];
        expected.extend(c.iter().map(|x| x / factor));
        expected.push(p.temperatures_k[i]);
        expected.push(p.pressure_pa(i).expect("row"));
        expected.push(c.iter().zip(&masses).map(|(c, m)| c * m).sum());
        expected.extend(p.mole_fractions(i).expect("positive total"));
        assert_eq!(row.len(), expected.len());
        for (k, (got, want)) in row.iter().zip(&expected).enumerate() {
            assert_eq!(
                got.to_bits(),
                want.to_bits(),
                "{}: row {}, column `{}`: read {got:e}, library {want:e}",
                path.display(),
                i + 1,
                table.header[k]
            );
            cells += 1;
        }
    }
    assert!(cells > 0);
}

/// The hydrogen-oxygen demo (adiabatic, 2001 rows, mol/m3): every CSV cell and the printed
/// ignition delay equal the library's values bit for bit.
#[test]
fn run_csv_and_ignition_line_hold_the_library_values_bit_for_bit() {
    let dir = scratch("run");
    let name = "hydrogen-oxygen.scenario.toml";
    let out = stoik(
        &[
            "run",
            repo().join("mechanisms").join(name).to_str().unwrap(),
            "-o",
            "h2.csv",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));

    let plan = bundled(name, None);
    let (scenario, mechanism) = (plan.scenario(), plan.mechanism());
    let kinetics = Kinetics::compile(mechanism).unwrap_or_else(|e| panic!("{e}"));
    let model = ReactorModel {
        constraint: Constraint::ConstantVolume,
        energy: Energy::Adiabatic,
        ..ReactorModel::default()
    };
    // `stoik run` locates the ignition delay on the solver's steps; so does this run.
    let mut opts = options(
        scenario,
        plan.options().absolute_tolerances_mol_per_m3.clone(),
    );
    opts.watch = IgnitionCriterion::MaxTemperatureRate.watches(scenario.temperature_k);
    let profiles = simulate(
        &kinetics,
        &model,
        scenario.temperature_k,
        plan.initial_mol_per_m3(),
        plan.output_times_s(),
        &opts,
    )
    .unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(profiles.times_s.len(), 2001);
    assert_csv_is_bit_identical(&dir.join("h2.csv"), scenario, mechanism, &profiles);

    // The line tests/scipy/ignition_check.py reads: `ignition delay: <value> s`.
    let stdout = text(&out.stdout);
    let printed: f64 = stdout
        .lines()
        .find_map(|l| l.strip_prefix("ignition delay: "))
        .and_then(|l| l.strip_suffix(" s (maximum of dT/dt)"))
        .unwrap_or_else(|| panic!("no ignition line in\n{stdout}"))
        .parse()
        .expect("a number");
    let library = ignition_delay(&profiles, IgnitionCriterion::MaxTemperatureRate)
        .expect("a consistent profile")
        .expect("ignites")
        .delay_s;
    assert_eq!(
        printed.to_bits(),
        library.to_bits(),
        "{printed:e} vs {library:e}"
    );
}

/// `stoik batch` on the ozone demo at 650 K (concentrations in mol/L: each cell is the SI value
/// divided by 1000) against the library's `integrate_batch`.
#[test]
fn batch_csv_holds_the_library_values_bit_for_bit() {
    let dir = scratch("batch");
    let name = "ozone-flask.scenario.toml";
    let out = stoik(
        &[
            "batch",
            repo().join("mechanisms").join(name).to_str().unwrap(),
            "--temperatures-k",
            "650",
            "--output-dir",
            "sweep",
            "--quiet",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));

    let plan = bundled(name, Some(650.0));
    let (scenario, mechanism) = (plan.scenario(), plan.mechanism());
    let case = BatchCase {
        model: ReactorModel::default(),
        temperature_k: 650.0,
        initial_mol_per_m3: plan.initial_mol_per_m3().to_vec(),
        output_times_s: plan.output_times_s().to_vec(),
        rate_multipliers: Vec::new(),
        options: options(
            scenario,
            plan.options().absolute_tolerances_mol_per_m3.clone(),
        ),
    };
    let profiles = integrate_batch(&Kinetics::compile(mechanism).unwrap(), &[case], &|| {})
        .pop()
        .expect("one result")
        .unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(scenario.output_concentration_unit.to_si_factor(), 1000.0);
    assert_csv_is_bit_identical(
        &dir.join("sweep/ozone-flask-650K.csv"),
        scenario,
        mechanism,
        &profiles,
    );
}

/// `stoik fit-thermo` on the NIST-JANAF H2O table (Chase 1998, 4th ed.; copy in
/// crates/thermo/tests/data/janaf), read back by stoik's thermo reader, against the library's
/// fit of the same points (the binary's defaults: 200-6000 K, common temperature 1000 K).
#[test]
fn fit_thermo_file_reads_back_the_fitted_coefficients_bit_for_bit() {
    let dir = scratch("thermo");
    let path = repo().join("crates/thermo/tests/data/janaf/H2O.tsv");
    let out = stoik(
        &["fit-thermo", path.to_str().unwrap(), "-o", "water.toml"],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let read = stoik::mechanism::load_thermo(&dir.join("water.toml")).unwrap_or_else(|e| {
        panic!("{e}");
    });
    let got = &read.get("H2O").expect("H2O entry").polynomial;

    let table = stoik::thermo::read_janaf_tsv(&std::fs::read_to_string(&path).unwrap()).unwrap();
    let (lo, hi) = table.temperature_span_k().unwrap();
    let fit = stoik::thermo::fit_nasa7(
        &table.points(200f64.max(lo), 6000f64.min(hi)),
        1000.0,
        table.h298_formation_j_per_mol,
        None,
    )
    .unwrap();
    let want = &fit.polynomial;
    let bits = |a: &[f64]| a.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
    assert_eq!(
        bits(&[got.t_low_k, got.t_mid_k, got.t_high_k]),
        bits(&[want.t_low_k, want.t_mid_k, want.t_high_k])
    );
    assert_eq!(bits(&got.low), bits(&want.low), "low range");
    assert_eq!(bits(&got.high), bits(&want.high), "high range");
}

/// `stoik fit-rate --snippet` on the bundled ethanal data, both forms: the snippet's prefactor
/// (in the snippet's units), temperature exponent and activation energy (kJ/mol), read by the
/// `toml` crate, equal the library's fit bit for bit.
#[test]
fn fit_rate_snippet_reads_back_the_fitted_parameters_bit_for_bit() {
    let dir = scratch("snippet");
    let data_path = repo().join("mechanisms/data/ethanal-decomposition.csv");
    let data = stoik::fit::load_rate_data(&data_path).unwrap_or_else(|e| panic!("{e}"));
    for (flag, model) in [
        ("arrhenius", stoik::fit::Model::Arrhenius),
        ("modified", stoik::fit::Model::ModifiedArrhenius),
    ] {
        let snippet_file = format!("{flag}.toml");
        let out = stoik(
            &[
                "fit-rate",
                data_path.to_str().unwrap(),
                "--model",
                flag,
                "--equation",
                "CH3CHO -> CH4 + CO",
                "--snippet",
                &snippet_file,
            ],
            &dir,
        );
        assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
        let snippet = std::fs::read_to_string(dir.join(&snippet_file)).unwrap();
        let doc: toml::Table = toml::from_str(&snippet).unwrap_or_else(|e| panic!("{e}"));
        let step = &doc["step"].as_array().expect("[[step]]")[0];
        let forward = &step["forward"];
        let read = |key: &str| forward[key].as_float().expect("a float");

        let fit = stoik::fit::fit_rate_constants(
            &data,
            &stoik::fit::FitOptions {
                model,
                ..Default::default()
            },
        )
        .unwrap();
        let units = data
            .rate_constant_unit
            .mechanism_units(EnergyUnit::KjPerMol);
        let prefactor = fit.prefactor_si() / units.prefactor_to_si(1.0, data.order() as f64);
        for (key, want) in [
            ("prefactor", prefactor),
            ("temperature_exponent", fit.temperature_exponent()),
            ("activation_energy", fit.activation_energy_j_per_mol() / 1e3),
        ] {
            assert_eq!(
                read(key).to_bits(),
                want.to_bits(),
                "{flag} {key}: read {:e}, library {want:e}",
                read(key)
            );
        }
        assert_eq!(
            step["reaction_orders"]["CH3CHO"].as_integer(),
            Some(2),
            "{snippet}"
        );
    }
}

/// Nothing to react (every initial concentration 0): the mole fractions c_i / sum c would
/// be 0/0 in every row, undefined (NaN in IEEE 754 arithmetic), so the run is refused before
/// integrating, at the `concentrations` key (line 6, column 1), and no CSV is written
/// (issue 12, section 3). A total that reaches 0 during a run is still written as the
/// explicit `nan` marker with a warning (csv_out).
#[test]
fn undefined_mole_fractions_are_refused_before_running() {
    let dir = scratch("zero");
    std::fs::write(
        dir.join("m.toml"),
        "stoik_mechanism = 1\n[units]\nlength = \"m\"\n[[species]]\nname = \"A\"\n\
         [[species]]\nname = \"B\"\n[[step]]\nequation = \"A -> B\"\nforward = { prefactor = 2.0 }\n",
    )
    .unwrap();
    std::fs::write(
        dir.join("z.scenario.toml"),
        "stoik_scenario = 1\nmechanism = \"m.toml\"\n[reactor]\ntemperature = 300\n\
         [initial]\nconcentrations = { A = 0.0 }\n[output]\nend_time = 1.0\ntimes = [0.5]\n",
    )
    .unwrap();
    let out = stoik(&["run", "z.scenario.toml", "-o", "z.csv", "--quiet"], &dir);
    assert_eq!(out.status.code(), Some(2), "{}", text(&out.stderr));
    let err = text(&out.stderr);
    assert!(
        err.contains("z.scenario.toml:6:1: error: every initial concentration is zero"),
        "{err}"
    );
    assert!(!dir.join("z.csv").exists());
    // Written atomically: no temporary file is left beside the CSV.
    let leftovers: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().ends_with(".tmp"))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
}
