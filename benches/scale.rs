//! Whole integrations from t = 0 to the end time, rtol 1e-6, atol 1e-10 mol/m3,
//! `LinearAlgebra::Auto`: the stoik side of the comparison with compiled CVODE and LSODA
//! (`benches/compare/run.sh`, results in benches/README.md).
//!
//! Cases: Robertson to t = 1e5 and to t = 1e11 and HIRES (the bundled `mechanisms/`), and the
//! converted benchmark mechanisms that `benches/compare/prepare.sh` writes to
//! `target/bench-mech/mech/` (synth20 ... synth10000, random1000); missing ones are skipped
//! with a note, so a clean clone still builds and runs this bench.
//!
//! Loading and compiling happen once, outside the timing. Before timing, each case is also run
//! once to record the solver statistics and the accuracy at the end time: the largest relative
//! error over species with |y| > 1e-8 max|y| against a tight run of stoik itself (rtol 1e-10,
//! atol 1e-16 mol/m3; cached in `target/bench-mech/ref/NAME.txt`, one value per line, which
//! run.sh also uses to score CVODE). They go to `target/bench-mech/stoik-stats.json`.
//!
//! Environment:
//! - `BENCH_MECH_DIR`: folder of the prepared files (default `<repo>/target/bench-mech`);
//! - `STOIK_SCALE_RUNS=n`: time each selected case by n plain runs (median printed and written
//!   to `BENCH_MECH_DIR/stoik-time/NAME.txt`) instead of criterion's 10+ samples, for cases
//!   whose single run takes minutes;
//! - `STOIK_SCALE_NO_REF=1`: skip the tight reference run (no accuracy figure);
//! - `STOIK_SCALE_STATS_ONLY=1`: record the statistics (and reference), time nothing;
//! - `STOIK_SCALE_NO_STATS=1`: time only (run.sh's alternations, after a statistics pass);
//! - `STOIK_SCALE_LOOSEN=F`: request rtol and atol F times looser (F = 4 makes the solver work
//!   to rtol 1e-6, atol 1e-10 itself, the tolerances CVODE is given: stoik divides the requested
//!   ones by `TOLERANCE_SAFETY_FACTOR` = 4), for comparisons at equal solver tolerances. The
//!   statistics then record the loosened tolerances.
//!
//! A filter argument (`cargo bench --bench scale -- synth1000$`) also skips the loading and the
//! statistics of the cases it excludes. Without `--bench` (test mode: one iteration each) the
//! cases above 1,000 species are skipped.

use criterion::{Criterion, SamplingMode};
use std::fmt::Write as _;
use std::hint::black_box;
use std::path::PathBuf;
use std::time::{Duration, Instant};
use stoik::kinetics::Kinetics;
use stoik::reactor::{integrate, IntegrationOptions, LinearAlgebra, Profiles};
use stoik::scenario::RunPlan;

/// Relative tolerance of the timed runs (CVODE's run in benches/compare/run.sh).
const RTOL: f64 = 1e-6;
/// Absolute tolerance of the timed runs, mol/m3.
const ATOL: f64 = 1e-10;
/// The factor `STOIK_SCALE_LOOSEN` applies to `RTOL` and `ATOL` (1 when unset or invalid).
fn loosen() -> f64 {
    std::env::var("STOIK_SCALE_LOOSEN")
        .ok()
        .and_then(|v| v.parse::<f64>().ok())
        .filter(|f| f.is_finite() && *f > 0.0)
        .unwrap_or(1.0)
}

/// Relative tolerance of the reference run.
const REF_RTOL: f64 = 1e-10;
/// Absolute tolerance of the reference run, mol/m3.
const REF_ATOL: f64 = 1e-16;
/// Species below this fraction of the largest end concentration are left out of the accuracy.
const ACCURACY_FLOOR: f64 = 1e-8;
/// Step limit (the default 100,000 is too few for the tight reference of the big cases).
const MAX_STEPS: usize = 10_000_000;
/// Largest case run in test mode (`cargo test --benches`).
const TEST_MODE_MAX_SPECIES: usize = 1000;

/// One benchmark case: a scenario file, optionally with its end time replaced.
struct Case {
    name: String,
    scenario: PathBuf,
    end_time_s: Option<f64>,
}

/// A case loaded and compiled, ready to integrate.
struct Prepared {
    kinetics: Kinetics,
    temperature_k: f64,
    initial: Vec<f64>,
    times: [f64; 2],
}

fn repo_root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn bench_mech_dir() -> PathBuf {
    std::env::var_os("BENCH_MECH_DIR")
        .map(PathBuf::from)
        .unwrap_or_else(|| repo_root().join("target").join("bench-mech"))
}

fn cases() -> Vec<Case> {
    let bundled = repo_root().join("mechanisms");
    let mut cases = vec![
        Case {
            name: "robertson_1e5".into(),
            scenario: bundled.join("robertson.scenario.toml"),
            end_time_s: Some(1e5),
        },
        Case {
            name: "robertson_1e11".into(),
            scenario: bundled.join("robertson.scenario.toml"),
            end_time_s: Some(1e11),
        },
        Case {
            name: "hires".into(),
            scenario: bundled.join("hires.scenario.toml"),
            end_time_s: None,
        },
    ];
    let dir = bench_mech_dir().join("mech");
    for name in [
        "synth20",
        "synth50",
        "synth200",
        "synth1000",
        "random1000",
        "synth5000",
        "synth10000",
    ] {
        cases.push(Case {
            name: name.into(),
            scenario: dir.join(format!("{name}.scenario.toml")),
            end_time_s: None,
        });
    }
    cases
}

fn prepare(case: &Case) -> Result<Prepared, String> {
    let plan = RunPlan::load(&case.scenario).map_err(|e| e.to_string())?;
    Ok(Prepared {
        kinetics: Kinetics::compile(plan.mechanism()).map_err(|e| e.to_string())?,
        temperature_k: plan.temperature_k(),
        initial: plan.initial_mol_per_m3().to_vec(),
        times: [0.0, case.end_time_s.unwrap_or(plan.scenario().end_time_s)],
    })
}

fn options(n: usize, rtol: f64, atol: f64) -> IntegrationOptions {
    let mut options = IntegrationOptions::new(n);
    options.relative_tolerance = rtol;
    options.absolute_tolerances_mol_per_m3 = vec![atol; n];
    options.linear_algebra = LinearAlgebra::Auto;
    options.max_steps = MAX_STEPS;
    options
}

fn run(p: &Prepared, options: &IntegrationOptions) -> Result<Profiles, String> {
    integrate(&p.kinetics, p.temperature_k, &p.initial, &p.times, options)
        .map_err(|e| e.to_string())
}

fn end_state(profiles: &Profiles) -> Vec<f64> {
    profiles
        .concentrations_mol_per_m3
        .last()
        .cloned()
        .unwrap_or_default()
}

/// Largest relative error of `y` against `reference` over the species whose reference value
/// exceeds ACCURACY_FLOOR times the largest one.
fn max_relative_error(y: &[f64], reference: &[f64]) -> f64 {
    let scale = reference.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    y.iter()
        .zip(reference)
        .filter(|(_, r)| r.abs() > ACCURACY_FLOOR * scale)
        .map(|(a, r)| ((a - r) / r).abs())
        .fold(0.0, f64::max)
}

/// The tight-tolerance end state, from the cache or computed (and cached).
fn reference(name: &str, p: &Prepared) -> Result<(Vec<f64>, String), String> {
    let dir = bench_mech_dir().join("ref");
    let path = dir.join(format!("{name}.txt"));
    let n = p.kinetics.n_species();
    if let Ok(text) = std::fs::read_to_string(&path) {
        let values: Result<Vec<f64>, _> = text
            .lines()
            .filter(|l| !l.starts_with('#'))
            .map(str::parse)
            .collect();
        if let Ok(values) = values {
            if values.len() == n {
                return Ok((values, format!("cached {}", path.display())));
            }
        }
    }
    let started = Instant::now();
    let profiles = run(p, &options(n, REF_RTOL, REF_ATOL))?;
    let seconds = started.elapsed().as_secs_f64();
    let y = end_state(&profiles);
    let s = profiles.stats;
    let mut text = format!(
        "# stoik reference at t = {:e} s: rtol {REF_RTOL:e}, atol {REF_ATOL:e} mol/m3, {seconds:.3} s, {} steps, {} factorizations\n",
        p.times[1], s.steps, s.factorizations
    );
    for v in &y {
        let _ = writeln!(text, "{v:.17e}");
    }
    std::fs::create_dir_all(&dir).map_err(|e| e.to_string())?;
    std::fs::write(&path, text).map_err(|e| e.to_string())?;
    Ok((y, format!("computed in {seconds:.3} s, {} steps", s.steps)))
}

fn json_string(s: &str) -> String {
    let mut out = String::from("\"");
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            c if (c as u32) < 0x20 => {
                let _ = write!(out, "\\u{:04x}", c as u32);
            }
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

fn json_number(x: f64) -> String {
    if x.is_finite() {
        format!("{x:e}")
    } else {
        "null".into()
    }
}

/// Runs the case once at the bench tolerances (and the reference), prints the statistics and
/// writes them to `stoik-stats/NAME.json`, then rebuilds `stoik-stats.json` from all of them.
/// Returns false when the run at the bench tolerances fails (nothing to time).
fn record_stats(name: &str, p: &Prepared) -> bool {
    let n = p.kinetics.n_species();
    let started = Instant::now();
    let result = run(p, &options(n, RTOL * loosen(), ATOL * loosen()));
    let seconds = started.elapsed().as_secs_f64();
    let mut json = format!(
        "{{\"species\": {n}, \"steps_in_mechanism\": {}, \"t_end_s\": {}, \"rtol\": {}, \"atol\": {}, \"single_run_s\": {}",
        p.kinetics.n_steps(),
        json_number(p.times[1]),
        json_number(RTOL * loosen()),
        json_number(ATOL * loosen()),
        json_number(seconds)
    );
    let ok = match &result {
        Ok(profiles) => {
            let s = profiles.stats;
            let _ = write!(
                json,
                ", \"ok\": true, \"linear_algebra\": {}, \"steps\": {}, \"rhs_evaluations\": {}, \"jacobian_evaluations\": {}, \"factorizations\": {}, \"error_test_failures\": {}, \"nonlinear_failures\": {}, \"most_negative_mol_per_m3\": {}",
                json_string(&format!("{:?}", profiles.linear_algebra_used)),
                s.steps,
                s.rhs_evaluations,
                s.jacobian_evaluations,
                s.factorizations,
                s.error_test_failures,
                s.nonlinear_failures,
                json_number(s.most_negative_concentration_mol_per_m3)
            );
            println!(
                "{name}: {n} species, {:?}, one run {seconds:.4} s: {s}, most negative {:e}",
                profiles.linear_algebra_used, s.most_negative_concentration_mol_per_m3
            );
            if std::env::var_os("STOIK_SCALE_NO_REF").is_none() {
                match reference(name, p) {
                    Ok((y_ref, how)) => {
                        let err = max_relative_error(&end_state(profiles), &y_ref);
                        let _ = write!(json, ", \"max_relative_error\": {}", json_number(err));
                        println!(
                            "{name}: max relative error at t_end {err:.2e} against stoik at rtol {REF_RTOL:e}, atol {REF_ATOL:e} ({how})"
                        );
                    }
                    Err(e) => {
                        let _ = write!(json, ", \"reference_error\": {}", json_string(&e));
                        println!("{name}: the reference run failed: {e}");
                    }
                }
            }
            true
        }
        Err(e) => {
            let _ = write!(json, ", \"ok\": false, \"error\": {}", json_string(e));
            println!("{name}: the integration failed after {seconds:.3} s: {e}");
            false
        }
    };
    json.push('}');
    if let Err(e) = write_stats(name, &json) {
        println!("{name}: could not write the statistics: {e}");
    }
    ok
}

fn write_stats(name: &str, json: &str) -> std::io::Result<()> {
    let root = bench_mech_dir();
    let dir = root.join("stoik-stats");
    std::fs::create_dir_all(&dir)?;
    std::fs::write(dir.join(format!("{name}.json")), json)?;
    let mut entries: Vec<(String, String)> = Vec::new();
    for entry in std::fs::read_dir(&dir)? {
        let path = entry?.path();
        if path.extension().is_some_and(|e| e == "json") {
            if let Some(stem) = path.file_stem().and_then(|s| s.to_str()) {
                entries.push((stem.to_string(), std::fs::read_to_string(&path)?));
            }
        }
    }
    entries.sort();
    let body: Vec<String> = entries
        .iter()
        .map(|(k, v)| format!("  {}: {}", json_string(k), v.trim()))
        .collect();
    std::fs::write(
        root.join("stoik-stats.json"),
        format!("{{\n{}\n}}\n", body.join(",\n")),
    )
}

/// Plain timing: `runs` integrations, median written to `stoik-time/NAME.txt`.
fn time_plainly(name: &str, p: &Prepared, runs: usize) {
    let options = options(p.kinetics.n_species(), RTOL * loosen(), ATOL * loosen());
    let mut times: Vec<f64> = (0..runs)
        .map(|_| {
            let started = Instant::now();
            black_box(run(p, &options).is_ok());
            started.elapsed().as_secs_f64()
        })
        .collect();
    times.sort_by(f64::total_cmp);
    let median = times[times.len() / 2];
    println!("scale/{name}: median of {runs} plain runs {median:.4} s (all: {times:?})");
    let dir = bench_mech_dir().join("stoik-time");
    let written = std::fs::create_dir_all(&dir)
        .and_then(|_| std::fs::write(dir.join(format!("{name}.txt")), format!("{median:e}\n")));
    if let Err(e) = written {
        println!("{name}: could not write the time: {e}");
    }
}

/// The filter of the command line (first argument that is not an option), criterion-style:
/// a substring, or a suffix when it ends with `$`.
struct Filter(Option<String>);

impl Filter {
    fn from_args() -> Filter {
        let mut args = std::env::args().skip(1);
        let mut filter = None;
        while let Some(a) = args.next() {
            if a.starts_with("--") {
                // Criterion options that take a value.
                if matches!(
                    a.as_str(),
                    "--save-baseline"
                        | "--baseline"
                        | "--load-baseline"
                        | "--color"
                        | "--sample-size"
                        | "--warm-up-time"
                        | "--measurement-time"
                        | "--nresamples"
                        | "--noise-threshold"
                        | "--confidence-level"
                        | "--significance-level"
                        | "--profile-time"
                        | "--plotting-backend"
                        | "--output-format"
                        | "--format"
                ) {
                    args.next();
                }
            } else if !a.starts_with('-') && filter.is_none() {
                filter = Some(a);
            }
        }
        Filter(filter)
    }

    fn selects(&self, id: &str) -> bool {
        match &self.0 {
            None => true,
            Some(f) => {
                let f = f.trim_start_matches('^');
                match f.strip_suffix('$') {
                    Some(suffix) => id.ends_with(suffix),
                    None => id.contains(f),
                }
            }
        }
    }
}

fn main() {
    let bench_mode = std::env::args().any(|a| a == "--bench");
    let filter = Filter::from_args();
    let plain_runs: Option<usize> = std::env::var("STOIK_SCALE_RUNS")
        .ok()
        .and_then(|v| v.parse().ok())
        .filter(|&n| n > 0);
    let stats_only = std::env::var_os("STOIK_SCALE_STATS_ONLY").is_some();
    let no_stats = std::env::var_os("STOIK_SCALE_NO_STATS").is_some();
    let mut criterion = Criterion::default().configure_from_args();
    for case in cases() {
        let id = format!("scale/{}", case.name);
        if !filter.selects(&id) {
            continue;
        }
        if !case.scenario.exists() {
            println!(
                "{}: skipped, {} is missing (run benches/compare/prepare.sh)",
                case.name,
                case.scenario.display()
            );
            continue;
        }
        let prepared = match prepare(&case) {
            Ok(p) => p,
            Err(e) => {
                println!("{}: skipped, could not load: {e}", case.name);
                continue;
            }
        };
        let n = prepared.kinetics.n_species();
        if !bench_mode {
            if n > TEST_MODE_MAX_SPECIES {
                println!("{}: skipped in test mode ({n} species)", case.name);
                continue;
            }
        } else if !no_stats && !record_stats(&case.name, &prepared) {
            continue;
        }
        if bench_mode && stats_only {
            continue;
        }
        if let (true, Some(runs)) = (bench_mode, plain_runs) {
            time_plainly(&case.name, &prepared, runs);
            continue;
        }
        let options = options(n, RTOL * loosen(), ATOL * loosen());
        let mut group = criterion.benchmark_group("scale");
        group.sampling_mode(SamplingMode::Flat).sample_size(10);
        if n <= 200 {
            group
                .warm_up_time(Duration::from_millis(500))
                .measurement_time(Duration::from_secs(2));
        } else {
            group
                .warm_up_time(Duration::from_millis(1))
                .measurement_time(Duration::from_secs(1));
        }
        group.bench_function(case.name.as_str(), |b| {
            b.iter(|| black_box(run(&prepared, &options).is_ok()))
        });
        group.finish();
    }
    criterion.final_summary();
}
