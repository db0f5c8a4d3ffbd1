//! `stoik run` on a network scenario (`[[tank]]` and `[[stream]]`): one integration of the
//! whole network, a CSV with one column per tank and quantity, and a summary per tank.

use crate::csv_out::number;
use crate::error::CliError;
use crate::out_file::{partial_path, write_atomically, OutputPaths};
use crate::run::{scenario_stem, CAUTION};
use crate::RunArgs;
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use stoik::mechanism::Mechanism;
use stoik::reactor::{simulate_network, NetworkError, NetworkProfiles};
use stoik::scenario::{load_network_scenario, NetworkPlan};

/// The caution printed with every network run, before the general one.
pub const NETWORK_CAUTION: &str = "Caution: a network of tanks with exothermic reactions and recycles can run away; simulation is no substitute for process-safety review.";

/// Runs the network scenario of `args` and writes its CSV (a failed run writes its rows
/// beside the output, as `stoik run` does).
pub fn run(args: &RunArgs) -> Result<(), CliError> {
    for (given, flag) in [
        (args.temperature_k.is_some(), "--temperature-k"),
        (args.report.is_some(), "--report"),
    ] {
        if given {
            return Err(CliError::BadFlag(format!(
                "{flag} does not apply to a network scenario (each [[tank]] has its own temperature; no HTML report for networks yet)"
            )));
        }
    }
    let (scenario, warnings) = load_network_scenario(&args.scenario)?;
    let mechanism_file = stoik::mechanism::load_mechanism(&scenario.mechanism_path)?;
    let mechanism = &mechanism_file.mechanism;
    let mut plan = scenario.resolve(mechanism)?;
    if let Some(r) = args.rtol {
        if !(r.is_finite() && r > 0.0 && r < 1.0) {
            return Err(CliError::BadFlag(format!(
                "--rtol must be between 0 and 1, got {r}"
            )));
        }
        plan.options.relative_tolerance = r;
    }
    if let Some(a) = args.atol_mol_per_m3 {
        if !(a.is_finite() && a > 0.0) {
            return Err(CliError::BadFlag(format!(
                "--atol-mol-per-m3 must be positive and finite, got {a}"
            )));
        }
        plan.options
            .absolute_tolerances_mol_per_m3
            .iter_mut()
            .for_each(|x| *x = a);
    }
    if let Some(t) = args.end_time_s {
        if !(t.is_finite() && t > 0.0) {
            return Err(CliError::BadFlag(format!(
                "--end-time-s must be positive and finite, got {t}"
            )));
        }
        plan.output_times_s.retain(|&x| x < t);
        plan.output_times_s.push(t);
    }
    if let Some(choice) = args.linear_algebra {
        plan.options.linear_algebra = choice;
    }
    if let Some(limit) = args.wall_time_limit_s {
        plan.options.wall_time_limit_s = Some(limit);
    }
    plan.options.non_negative = !args.allow_negative;
    plan.options.monitor = Some(crate::progress::interrupt_monitor());
    let output = args
        .output
        .clone()
        .unwrap_or_else(|| PathBuf::from(format!("{}.csv", scenario_stem(&args.scenario))));
    let mut outputs = OutputPaths::new();
    outputs.input(&args.scenario);
    outputs.input(&scenario.mechanism_path);
    outputs.output("-o/--output", &output)?;
    outputs.output(
        "-o/--output, partial profile of a failed run",
        &partial_path(&output),
    )?;
    if !args.quiet {
        for w in warnings.iter().chain(mechanism_file.warnings.iter()) {
            eprintln!("{w}");
        }
    }
    let started = std::time::Instant::now();
    let Written {
        profiles,
        failure,
        target,
    } = simulate_and_write(
        mechanism,
        &plan,
        &plan.options,
        scenario.output_concentration_unit,
        &output,
    )?;
    if !args.quiet {
        for line in summary(
            &scenario.title,
            mechanism,
            &plan.network,
            &profiles,
            started.elapsed().as_secs_f64(),
            &target,
        ) {
            println!("{line}");
        }
        println!("{NETWORK_CAUTION}");
        println!("{CAUTION}");
    }
    match failure {
        None => Ok(()),
        Some((time_s, reason)) => Err(CliError::IntegrationFailed {
            failure: Box::new(stoik::reactor::IntegrationFailure {
                time_s,
                reason,
                kind: stoik::reactor::FailureKind::Other,
                fastest: None,
                nonfinite_steps: Vec::new(),
                partial: stoik::reactor::Profiles::default(),
                source: None,
            }),
            advice: "try a tighter --rtol or a shorter --end-time-s; check the tanks' temperatures and flows".into(),
            rows: profiles.times_s.len(),
            output: target,
            target: output,
        }),
    }
}

/// A network run and where its CSV went.
pub struct Written {
    /// The profiles (up to the failure, for a failed run).
    pub profiles: NetworkProfiles,
    /// When and why the run failed, if it did (s, reason).
    pub failure: Option<(f64, String)>,
    /// The CSV written: `output`, or its `.partial.csv` beside it for a failed run.
    pub target: PathBuf,
}

/// Runs the network of `plan` with `options` and writes its CSV (`write_network_csv`,
/// atomically) to `output`, or for a failed run its partial profile beside it; `output` is
/// then left as it was. A bad network is an error (nothing written).
pub fn simulate_and_write(
    mechanism: &Mechanism,
    plan: &NetworkPlan,
    options: &stoik::reactor::IntegrationOptions,
    unit: stoik::mechanism::ConcentrationUnit,
    output: &Path,
) -> Result<Written, CliError> {
    let result = simulate_network(
        &mechanism_file_kinetics(mechanism)?,
        &plan.network,
        &plan.output_times_s,
        options,
    );
    let (profiles, failure) = match result {
        Ok(p) => (p, None),
        Err(NetworkError::Failed {
            time_s,
            reason,
            partial,
        }) => (*partial, Some((time_s, reason))),
        Err(e) => return Err(CliError::BadFlag(e.to_string())),
    };
    let target = if failure.is_some() {
        partial_path(output)
    } else {
        output.to_path_buf()
    };
    write_atomically(&target, |w| {
        write_network_csv(w, mechanism, &profiles, unit.to_si_factor(), unit.label())
    })
    .map_err(|e: io::Error| CliError::write(&target, e))?;
    Ok(Written {
        profiles,
        failure,
        target,
    })
}

fn mechanism_file_kinetics(mechanism: &Mechanism) -> Result<stoik::kinetics::Kinetics, CliError> {
    stoik::kinetics::Kinetics::compile(mechanism)
        .map_err(|e| CliError::Scenario(stoik::scenario::ScenarioError::Compile(e)))
}

/// Writes the network's profiles: `time [s]`, then for each tank its temperature
/// (`TANK temperature [K]`) and every species' concentration (`TANK SPECIES [UNIT]`), one
/// row per output time, numbers in round-trip form. A non-finite value refuses the file.
pub fn write_network_csv(
    out: &mut impl Write,
    mechanism: &Mechanism,
    profiles: &NetworkProfiles,
    si_per_unit: f64,
    unit_label: &str,
) -> io::Result<()> {
    let mut header = vec!["time [s]".to_string()];
    for tank in &profiles.tanks {
        header.push(format!("{} temperature [K]", tank.name));
        header.extend(
            mechanism
                .species
                .iter()
                .map(|s| format!("{} {} [{unit_label}]", tank.name, s.name)),
        );
    }
    let mut writer = csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(out);
    writer.write_record(&header).map_err(io::Error::from)?;
    for (i, &t) in profiles.times_s.iter().enumerate() {
        let mut cells = vec![t];
        for tank in &profiles.tanks {
            cells.push(tank.temperatures_k[i]);
            cells.extend(
                tank.concentrations_mol_per_m3[i]
                    .iter()
                    .map(|c| c / si_per_unit),
            );
        }
        let mut line = Vec::with_capacity(cells.len());
        for (k, v) in cells.iter().enumerate() {
            line.push(number(*v).ok_or_else(|| {
                io::Error::new(
                    io::ErrorKind::InvalidData,
                    format!(
                        "column `{}` of row {} is not finite ({v}); nothing was written",
                        header[k],
                        i + 1
                    ),
                )
            })?);
        }
        writer.write_record(&line).map_err(io::Error::from)?;
    }
    writer.flush()
}

/// The summary: the network, the run's statistics, and each tank's final temperature and
/// largest species.
fn summary(
    title: &Option<String>,
    mechanism: &Mechanism,
    network: &stoik::reactor::TankNetwork,
    profiles: &NetworkProfiles,
    seconds: f64,
    output: &Path,
) -> Vec<String> {
    let mut lines = Vec::new();
    if let Some(t) = title {
        lines.push(t.clone());
    }
    lines.push(format!(
        "network of {} constant-density stirred tanks, {} streams; {}",
        network.tanks().len(),
        network.streams().len(),
        profiles.stats
    ));
    let end = profiles.times_s.last().copied().unwrap_or(0.0);
    for (j, tank) in profiles.tanks.iter().enumerate() {
        let (Some(c), Some(t)) = (
            tank.concentrations_mol_per_m3.last(),
            tank.temperatures_k.last(),
        ) else {
            continue;
        };
        let mut order: Vec<usize> = (0..c.len()).collect();
        order.sort_by(|&a, &b| c[b].total_cmp(&c[a]));
        let top: Vec<String> = order
            .iter()
            .take(3)
            .map(|&i| format!("{} {:.4e} mol/m3", mechanism.species[i].name, c[i]))
            .collect();
        lines.push(format!(
            "tank {} (V = {:e} m3, residence time {:.4e} s): at t = {end:e} s T = {t:.2} K; {}",
            tank.name,
            network.tanks()[j].volume_m3,
            network.residence_time_s(j),
            top.join(", ")
        ));
    }
    lines.push(format!(
        "wrote {} ({} rows) in {seconds:.2} s",
        output.display(),
        profiles.times_s.len()
    ));
    lines
}

/// `stoik steady` on a network scenario: the steady state of the whole network (Newton,
/// pseudo-transient continuation, time integration as fall-back; coolant histories at their
/// last values), each tank's temperature and largest species, how it converged, the
/// stability of the network's Jacobian, and with `--csv` one row per tank.
pub fn steady(args: &crate::SteadyArgs) -> Result<(), CliError> {
    let (scenario, warnings) = load_network_scenario(&args.scenario)?;
    let mechanism_file = stoik::mechanism::load_mechanism(&scenario.mechanism_path)?;
    let mechanism = &mechanism_file.mechanism;
    let plan = scenario.resolve(mechanism)?;
    let mut outputs = OutputPaths::new();
    outputs.input(&args.scenario);
    outputs.input(&scenario.mechanism_path);
    if let Some(csv) = &args.csv {
        outputs.output("--csv", csv)?;
    }
    for w in warnings.iter().chain(mechanism_file.warnings.iter()) {
        eprintln!("{w}");
    }
    let kinetics = mechanism_file_kinetics(mechanism)?;
    let options = stoik::reactor::SteadyOptions {
        transient_first: !args.newton,
        ..stoik::reactor::SteadyOptions::from_integration(&plan.options)
    };
    let s = stoik::reactor::network_steady_state(&kinetics, &plan.network, &options)
        .map_err(|e| CliError::BadFlag(format!("{}: {e}", args.scenario.display())))?;
    let unit = scenario.output_concentration_unit;
    let mut lines = Vec::new();
    if let Some(t) = &scenario.title {
        lines.push(t.clone());
    }
    lines.push(format!(
        "steady state of a network of {} constant-density stirred tanks, {} streams:",
        plan.network.tanks().len(),
        plan.network.streams().len()
    ));
    for (j, tank) in s.tanks.iter().enumerate() {
        let c = &tank.concentrations_mol_per_m3;
        let mut order: Vec<usize> = (0..c.len()).collect();
        order.sort_by(|&a, &b| c[b].total_cmp(&c[a]));
        let top: Vec<String> = order
            .iter()
            .take(3)
            .map(|&i| {
                format!(
                    "{} {:.6e} {}",
                    mechanism.species[i].name,
                    c[i] / unit.to_si_factor(),
                    unit.label()
                )
            })
            .collect();
        lines.push(format!(
            "tank {} (residence time {:.4e} s): T = {:.4} K; {}",
            tank.name,
            plan.network.residence_time_s(j),
            tank.temperature_k,
            top.join(", ")
        ));
    }
    lines.push(format!(
        "convergence: {} ({} Newton iterations, {} pseudo-transient steps, {} s integrated); scaled residual {:.3e}, last correction {:.3e}",
        s.path.name(),
        s.newton_iterations,
        s.pseudo_transient_steps,
        s.integrated_time_s,
        s.scaled_residual,
        s.scaled_correction
    ));
    let st = &s.stability;
    lines.push(format!(
        "stability: {} (largest eigenvalue real part {:e} 1/s, {} eigenvalues)",
        if st.stable { "stable" } else { "unstable" },
        st.largest_real_part_per_s,
        st.eigenvalues_per_s.len()
    ));
    if let Some(csv) = &args.csv {
        write_atomically(csv, |w| {
            write_network_steady_csv(w, mechanism, &s, unit.to_si_factor(), unit.label())
        })
        .map_err(|e: io::Error| CliError::write(csv, e))?;
        lines.push(format!("wrote {} ({} rows)", csv.display(), s.tanks.len()));
    }
    for line in &lines {
        println!("{line}");
    }
    println!("{NETWORK_CAUTION}");
    println!("{CAUTION}");
    Ok(())
}

/// Writes a network's steady state: one row per tank, `tank`, `temperature [K]`, then every
/// species' concentration (`SPECIES [UNIT]`), numbers in round-trip form. A non-finite value
/// refuses the file.
pub fn write_network_steady_csv(
    out: &mut impl Write,
    mechanism: &Mechanism,
    steady: &stoik::reactor::NetworkSteadyState,
    si_per_unit: f64,
    unit_label: &str,
) -> io::Result<()> {
    let mut header = vec!["tank".to_string(), "temperature [K]".to_string()];
    header.extend(
        mechanism
            .species
            .iter()
            .map(|s| format!("{} [{unit_label}]", s.name)),
    );
    let mut writer = csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(out);
    writer.write_record(&header).map_err(io::Error::from)?;
    for tank in &steady.tanks {
        let mut line = vec![tank.name.clone()];
        let values = std::iter::once(tank.temperature_k).chain(
            tank.concentrations_mol_per_m3
                .iter()
                .map(|c| c / si_per_unit),
        );
        for (k, v) in values.enumerate() {
            line.push(number(v).ok_or_else(|| {
                io::Error::new(
                    io::ErrorKind::InvalidData,
                    format!(
                        "column `{}` of tank `{}` is not finite ({v}); nothing was written",
                        header[k + 1],
                        tank.name
                    ),
                )
            })?);
        }
        writer.write_record(&line).map_err(io::Error::from)?;
    }
    writer.flush()
}
