//! The `stoik` binary: thin glue over the library (arguments, files, printing).

mod analysis;
mod batch;
mod check;
mod conservation_out;
mod csv_out;
mod diff;
mod energetics;
mod error;
mod fit_rate;
mod fit_thermo;
mod network_run;
mod out_file;
mod progress;
mod report;
mod run;
mod run_analyses;
mod sensitivity;
mod steady;
mod suite;

use clap::builder::{PossibleValue, PossibleValuesParser, TypedValueParser};
use clap::{Parser, Subcommand, ValueEnum};
use std::path::PathBuf;
use std::process::ExitCode;
use stoik::reactor::LinearAlgebra;
use stoik::scenario::linear_algebra_from_name;

#[derive(Parser)]
#[command(
    name = "stoik",
    version,
    about = "Simulate chemical reaction mechanisms: TOML mechanism + scenario in, concentration-time profiles out.",
    after_help = "Examples:\n  stoik check mechanisms/ozone-flask.toml\n  stoik check --strict mechanisms/ozone-flask.scenario.toml\n  stoik run mechanisms/ozone-flask.scenario.toml --output ozone.csv\n  stoik run mechanisms/robertson.scenario.toml --rtol 1e-10 --linear-algebra dense\n  stoik batch mechanisms/ozone-flask.scenario.toml --temperatures-k 550,600,650 --output-dir sweep\n  stoik fit-rate mechanisms/data/ethanal-decomposition.csv --svg ethanal.svg\n  stoik suite record mechanisms/hydrogen-oxygen.suite.toml\n  stoik suite verify mechanisms/hydrogen-oxygen.suite.toml --junit suite.xml\n  stoik diff HEAD~1:mechanisms/hydrogen-oxygen.toml mechanisms/hydrogen-oxygen.toml\n\nExit status: 0 success, 1 warnings only (check --strict) or kinetic changes (diff), 2 bad input, 3 integration failure,\n4 an observable moved beyond tolerance (suite verify).\n\nSimulation is no substitute for local codes, standards and licensed engineering review."
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Validate a mechanism or scenario file and print every problem found.
    #[command(
        after_help = "Examples:\n  stoik check mechanisms/ozone-flask.toml\n  stoik check --strict mechanisms/robertson.scenario.toml"
    )]
    Check {
        /// Mechanism file, or scenario file (its mechanism is checked too).
        file: PathBuf,
        /// Exit with status 1 when there are warnings but no errors.
        #[arg(long)]
        strict: bool,
    },
    /// Run a scenario: integrate its mechanism and write concentration profiles as CSV.
    #[command(
        after_help = "Examples:\n  stoik run mechanisms/ozone-flask.scenario.toml\n  stoik run mechanisms/hires.scenario.toml --output hires.csv --rtol 1e-10\n  stoik run mechanisms/ozone-flask.scenario.toml --temperature-k 650 --end-time-s 0.5\n  stoik run mechanisms/hydrogen-oxygen.scenario.toml --report h2.html --report-mole-fractions\n\nThe report of a run shows its profiles and summary; ranked sensitivities, rates of production and\nthe flux graph have their own reports: stoik sensitivity|rates|flux ... --report FILE.html."
    )]
    Run(RunArgs),
    /// Run many scenarios in parallel, each mechanism compiled once; one CSV per run.
    #[command(
        after_help = "Examples:\n  stoik batch mechanisms/ozone-flask.scenario.toml --temperatures-k 550,600,650 --output-dir sweep\n  stoik batch runs/*.scenario.toml --output-dir results"
    )]
    Batch(BatchArgs),
    /// Fit NASA 7-coefficient polynomials to thermochemical tables and write a thermo file.
    #[command(
        after_help = "Examples:\n  stoik fit-thermo janaf/H2O.tsv janaf/OH.tsv --output thermo.toml\n  stoik fit-thermo janaf/Ar.tsv --rename Ar=AR --common-temperature-k 1000 --output ar.toml\n\nTables use the NIST-JANAF tab-separated layout: a title line, a header line, then rows of\nT (K), Cp, S, -[G-H(298.15)]/T (J/mol/K), H-H(298.15), formation H, formation G (kJ/mol), log10 Kf."
    )]
    FitThermo(FitThermoArgs),
    /// Print each step's reaction enthalpy, activation energies (forward and implied reverse),
    /// Gibbs energy and Kc at one temperature.
    #[command(
        after_help = "Examples:\n  stoik energetics mechanisms/annotated-example.toml --temperature-k 298.15"
    )]
    Energetics(EnergeticsArgs),
    /// Fit Arrhenius parameters to measured rate constants: parameters with uncertainties,
    /// warnings, a mechanism snippet and a plot.
    #[command(
        after_help = "Examples:\n  stoik fit-rate mechanisms/data/ethanal-decomposition.csv --equation \"CH3CHO -> CH4 + CO\" --svg ethanal.svg --snippet ethanal-step.toml\n  stoik fit-rate data.csv --model modified --reference-temperature-k 1000 --confidence 0.9\n\nThe CSV starts with a header naming columns with units in brackets, e.g.\n  temperature [K], rate_constant [cm3 molecule-1 s-1], uncertainty [factor]\nColumns: temperature (K, C), rate_constant (its unit sets the reaction order), optional\nuncertainty (factor, %, or an absolute rate-constant unit) and pressure. '#' starts a comment line."
    )]
    FitRate(FitRateArgs),
    /// Compare two mechanisms kinetically: species, thermochemistry and steps (matched by
    /// canonical equation, not position) added, removed or changed, with k_new/k_old.
    #[command(
        after_help = "Examples:\n  stoik diff old.toml new.toml\n  stoik diff HEAD~1:mechanisms/hydrogen-oxygen.toml mechanisms/hydrogen-oxygen.toml\n  stoik diff a.toml b.toml --temperatures-k 500,1500 --pressures-pa 1e4,1e6 --format toml\n\nEither mechanism may be REV:path, a file of a git revision read with `git show` (an existing\nfile wins over that reading). Exit status: 0 no kinetic change, 1 kinetic changes, 2 bad input."
    )]
    Diff(DiffArgs),
    /// Which steps make and destroy species: each step's contribution to their net
    /// production rate at instants, or integrated over time windows, ranked.
    #[command(
        after_help = "Examples:\n  stoik rates mechanisms/hydrogen-oxygen.scenario.toml --species OH,H --times 1e-4,2e-4\n  stoik rates mechanisms/hydrogen-oxygen.scenario.toml --species H2O --window 0,2e-3 --top 3 --csv h2o.csv\n  stoik rates mechanisms/hydrogen-oxygen.scenario.toml --species OH --times 2.2e-4 --report oh.html\n\nAt an instant a contribution is nu q in mol/(m3 s); over a window it is its time integral in mol/m3,\nintegrated on the solver's own steps. Exit status: 0 success, 2 bad input, 3 integration failure."
    )]
    Rates(RatesArgs),
    /// Where an element's atoms go: the flux of its atoms between species through each step,
    /// as a table, DOT and SVG.
    #[command(
        after_help = "Examples:\n  stoik flux mechanisms/hydrogen-oxygen.scenario.toml --element H --time 2.2e-4 --dot h.dot --svg h.svg\n  stoik flux mechanisms/hydrogen-oxygen.scenario.toml --element O --window 0,2e-3 --threshold 0.05\n  stoik flux mechanisms/hydrogen-oxygen.scenario.toml --element H --time 2.2e-4 --report h-flux.html\n\nReactant a passes atoms to product b of a step at q nu_a n(a) nu_b n(b) / (atoms on the product side);\nthe two directions between a pair are netted. Exit status: 0 success, 2 bad input, 3 integration failure."
    )]
    Flux(FluxArgs),
    /// Which rate constants matter: the local sensitivity of an observable (ignition delay,
    /// a final or peak value, a peak time) to the rate constant of every step, ranked.
    #[command(
        after_help = "Examples:\n  stoik sensitivity mechanisms/hydrogen-oxygen.scenario.toml --of ignition-delay\n  stoik sensitivity mechanisms/hydrogen-oxygen.scenario.toml --of peak:OH --method adjoint --top 5 --csv oh.csv\n  stoik sensitivity mechanisms/hydrogen-oxygen.scenario.toml --of final:H2O --steps R1,R3 --profile-csv profile.csv\n  stoik sensitivity mechanisms/hydrogen-oxygen.scenario.toml --of ignition-delay --top 8 --svg delay.svg --report delay.html\n\nThe parameter of a step is ln k of its forward rate constant (both falloff limits together; a reverse\nrate constant from thermochemistry follows it, explicit reverse parameters stay). The table ranks\nd ln G/d ln k, the relative change of the observable per relative change of k.\nExit status: 0 success, 2 bad input, 3 integration failure."
    )]
    Sensitivity(SensitivityArgs),
    /// The steady state of a stirred tank (a scenario with [flow]): state, convergence and
    /// stability (eigenvalues of the Jacobian).
    #[command(
        after_help = "Examples:\n  stoik steady mechanisms/hydrogen-stirred-tank.scenario.toml\n  stoik steady mechanisms/hydrogen-stirred-tank.scenario.toml --csv steady.csv\n\nThe search starts from the scenario's initial state: pseudo-transient continuation (which follows the\ntank's transient), then time integration, each finished by Newton; --newton starts with Newton instead.\nExit status: 0 success, 2 bad input (no [flow] section), 3 no steady state found."
    )]
    Steady(SteadyArgs),
    /// A branch of steady states of a stirred tank against one parameter (pseudo-arclength
    /// continuation): turning points, stability of every point, the S-curve as SVG.
    #[command(
        after_help = "Examples:\n  stoik continuation mechanisms/hydrogen-stirred-tank.scenario.toml --parameter residence-time --from 0.05 --to 1e-5 --svg s-curve.svg\n  stoik continuation tank.scenario.toml --parameter inlet-temperature --from 600 --to 1000 --csv branch.csv\n\nThe branch starts at the steady state found at --from (as `stoik steady` finds it) and runs until the\nparameter leaves the range [--from, --to]. Residence time in s, temperatures in K.\nExit status: 0 the branch left the range, 2 bad input, 3 no starting steady state or the branch stopped."
    )]
    Continuation(ContinuationArgs),
    /// Regression suites: record trusted predictions of scenario runs in a baseline, then
    /// verify a mechanism edit against them.
    #[command(subcommand)]
    Suite(SuiteCommand),
}

/// The subcommands of `stoik suite`.
#[derive(Subcommand)]
enum SuiteCommand {
    /// Run every case of a suite and write a baseline (values, noise estimates, provenance).
    #[command(
        after_help = "Examples:\n  stoik suite record mechanisms/hydrogen-oxygen.suite.toml -o h2.baseline.toml\n\nExit status: 0 recorded, 2 bad input, 3 some case or observable gave no value (the rest is recorded)."
    )]
    Record(SuiteRecordArgs),
    /// Run every case of a suite again and compare each observable with the baseline.
    #[command(
        after_help = "Examples:\n  stoik suite verify mechanisms/hydrogen-oxygen.suite.toml --baseline h2.baseline.toml --junit suite.xml --markdown suite.md\n  stoik suite verify mechanisms/hydrogen-oxygen.suite.toml --explain\n\nExit status: 0 every observable within tolerance, 4 some observable moved beyond tolerance,\n3 some case or observable gave no value (and nothing moved), 2 bad input."
    )]
    Verify(SuiteVerifyArgs),
}

/// A time window `T1,T2` (s) on the command line.
#[derive(Clone, Copy, Debug)]
pub struct Window {
    /// Start, s.
    pub from_s: f64,
    /// End, s.
    pub to_s: f64,
}

/// Reads `T1,T2` (s).
fn parse_window(text: &str) -> Result<Window, String> {
    let (a, b) = text
        .split_once(',')
        .ok_or_else(|| format!("`{text}` is not a window T1,T2 (two times in s)"))?;
    let time = |x: &str| {
        x.trim()
            .parse::<f64>()
            .map_err(|e| format!("`{}` is not a time in s: {e}", x.trim()))
    };
    Ok(Window {
        from_s: time(a)?,
        to_s: time(b)?,
    })
}

/// Flags of `stoik rates`.
#[derive(clap::Args)]
pub struct RatesArgs {
    /// Scenario file (run as it is, with output times at the instants and window ends).
    pub scenario: PathBuf,
    /// Species whose production is analysed, comma-separated.
    #[arg(long, value_delimiter = ',', required = true)]
    pub species: Vec<String>,
    /// Instants, s, comma-separated.
    #[arg(long, value_delimiter = ',')]
    pub times: Vec<f64>,
    /// A time window T1,T2 in s (repeatable): contributions integrated over it.
    #[arg(long, value_parser = parse_window)]
    pub window: Vec<Window>,
    /// Steps listed per side (production, consumption) in the table.
    #[arg(long, default_value_t = 5)]
    pub top: usize,
    /// Write every contribution (all steps) to this CSV file.
    #[arg(long)]
    pub csv: Option<PathBuf>,
    /// Write a self-contained HTML report (the printed tables, a bar chart per species and
    /// span) to this file.
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,
}

/// How `stoik sensitivity` computes.
#[derive(Clone, Copy, Debug, ValueEnum)]
pub enum MethodArg {
    /// Sensitivity equations integrated with the state (cost grows with the steps).
    Forward,
    /// One backward pass for the one observable (for large mechanisms).
    Adjoint,
}

/// Flags of `stoik sensitivity`.
#[derive(clap::Args)]
pub struct SensitivityArgs {
    /// Scenario file (run as it is).
    pub scenario: PathBuf,
    /// The observable: ignition-delay, final:NAME, peak:NAME or peak-time:NAME (NAME a
    /// species, or T for the temperature of an adiabatic reactor).
    #[arg(long)]
    pub of: String,
    /// forward or adjoint.
    #[arg(long, value_enum, default_value = "forward")]
    pub method: MethodArg,
    /// Only these steps (R1, R2, ... or 1, 2, ...), comma-separated; every step by default.
    #[arg(long, value_delimiter = ',')]
    pub steps: Vec<String>,
    /// Steps listed in the table.
    #[arg(long, default_value_t = 10)]
    pub top: usize,
    /// Write every step's sensitivity, ranked, to this CSV file.
    #[arg(long)]
    pub csv: Option<PathBuf>,
    /// Write d ln y/d ln k of every species (and T) at every output time and step to this
    /// CSV file (forward method).
    #[arg(long)]
    pub profile_csv: Option<PathBuf>,
    /// Write the ranked sensitivities (the --top largest) as a bar chart, SVG, to this file.
    #[arg(long, value_name = "FILE.svg")]
    pub svg: Option<PathBuf>,
    /// Write a self-contained HTML report (the ranked sensitivities as a bar chart and a
    /// table, the run's profiles and summary) to this file.
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,
    /// Species plotted in the report, comma-separated, at most 10 [default: the 8 largest by
    /// peak].
    #[arg(long, value_delimiter = ',', requires = "report")]
    pub report_species: Vec<String>,
    /// Plot mole fractions (dimensionless) instead of concentrations in the report.
    #[arg(long, requires = "report")]
    pub report_mole_fractions: bool,
    /// Also rank the formation enthalpy of every species with thermochemistry
    /// (d ln G/dH_f per kJ/mol), in a table of their own.
    #[arg(long)]
    pub enthalpies: bool,
    /// Also rank each limit (k0, kinf) of the chosen falloff steps alone, in a table of
    /// their own.
    #[arg(long)]
    pub falloff_limits: bool,
    /// Write the formation-enthalpy table (every species with thermochemistry, full
    /// precision) to this CSV file.
    #[arg(long, requires = "enthalpies")]
    pub enthalpies_csv: Option<PathBuf>,
    /// Write the falloff-limit table (each limit of each chosen falloff step, full precision)
    /// to this CSV file.
    #[arg(long, requires = "falloff_limits")]
    pub falloff_limits_csv: Option<PathBuf>,
}

/// Flags of `stoik steady`.
#[derive(clap::Args)]
pub struct SteadyArgs {
    /// Scenario file with a [flow] section, or a network of tanks ([[tank]] and [[stream]]).
    pub scenario: PathBuf,
    /// Write the steady state (temperature, pressure, concentrations, stability) as one CSV
    /// row to this file (a network: one row per tank, its temperature and concentrations).
    #[arg(long)]
    pub csv: Option<PathBuf>,
    /// Start with Newton from the scenario's initial state instead of pseudo-transient
    /// continuation.
    #[arg(long)]
    pub newton: bool,
}

/// The parameter of `stoik continuation`.
#[derive(Clone, Copy, Debug, ValueEnum)]
pub enum ParameterArg {
    /// The residence time, s (followed in ln tau).
    ResidenceTime,
    /// The feed temperature, K (tanks with the energy balance).
    InletTemperature,
    /// The coolant temperature, K (jacketed tanks).
    CoolantTemperature,
}

/// Flags of `stoik continuation`.
#[derive(clap::Args)]
pub struct ContinuationArgs {
    /// Scenario file with a [flow] section.
    pub scenario: PathBuf,
    /// The parameter followed.
    #[arg(long, value_enum)]
    pub parameter: ParameterArg,
    /// Start of the range (s or K): the branch starts at the steady state there.
    #[arg(long, allow_negative_numbers = true)]
    pub from: f64,
    /// End of the range (s or K).
    #[arg(long, allow_negative_numbers = true)]
    pub to: f64,
    /// Write the branch (parameter, temperature, concentrations, stable flag, largest
    /// eigenvalue real part) to this CSV file.
    #[arg(long)]
    pub csv: Option<PathBuf>,
    /// Write the temperature against the parameter (unstable parts dashed, turning points
    /// circled) to this SVG file.
    #[arg(long, value_name = "FILE.svg")]
    pub svg: Option<PathBuf>,
    /// Start with Newton from the scenario's initial state instead of pseudo-transient
    /// continuation.
    #[arg(long)]
    pub newton: bool,
}

/// Flags of `stoik flux`.
#[derive(clap::Args)]
pub struct FluxArgs {
    /// Scenario file.
    pub scenario: PathBuf,
    /// Element symbol, as the mechanism declares it (e.g. H).
    #[arg(long)]
    pub element: String,
    /// The instant, s.
    #[arg(long, conflicts_with = "window", required_unless_present = "window")]
    pub time: Option<f64>,
    /// A window T1,T2 in s: fluxes integrated over it.
    #[arg(long, value_parser = parse_window)]
    pub window: Option<Window>,
    /// Edges below this fraction of the largest are left out (0 to 1).
    #[arg(long, default_value_t = stoik::analysis::DEFAULT_THRESHOLD)]
    pub threshold: f64,
    /// Write the graph as Graphviz DOT text to this file.
    #[arg(long)]
    pub dot: Option<PathBuf>,
    /// Write the graph drawn as SVG to this file.
    #[arg(long)]
    pub svg: Option<PathBuf>,
    /// Write a self-contained HTML report (the printed table, the graph drawn) to this file.
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,
}

/// Flags of `stoik suite record`.
#[derive(clap::Args)]
pub struct SuiteRecordArgs {
    /// Suite file.
    pub suite: PathBuf,
    /// Baseline file to write [default: <suite name>.baseline.toml beside the suite].
    #[arg(short, long)]
    pub output: Option<PathBuf>,
    /// Do not estimate the solver noise (halves the cost; no noise warnings).
    #[arg(long)]
    pub no_noise: bool,
    /// Print only errors and warnings (no progress bar).
    #[arg(short, long)]
    pub quiet: bool,
}

/// Flags of `stoik suite verify`.
#[derive(clap::Args)]
pub struct SuiteVerifyArgs {
    /// Suite file.
    pub suite: PathBuf,
    /// Baseline file [default: <suite name>.baseline.toml beside the suite].
    #[arg(long)]
    pub baseline: Option<PathBuf>,
    /// Skip the cases whose scenario, mechanism and thermo files have the content hashes
    /// recorded in the baseline.
    #[arg(long)]
    pub changed_only: bool,
    /// Write a JUnit XML report (one test case per observable) to this file.
    #[arg(long)]
    pub junit: Option<PathBuf>,
    /// Write a Markdown summary (for a pull-request comment) to this file.
    #[arg(long)]
    pub markdown: Option<PathBuf>,
    /// When an observable moved and its mechanism changed since the baseline, take each edit
    /// back alone, re-run, and rank the edits by their share of the move (one extra run per
    /// edit and moved case, plus one on the old mechanism).
    #[arg(long)]
    pub explain: bool,
    /// The mechanism the baseline was recorded on, for --explain: a file or REV:path
    /// [default: searched in the git history of the mechanism file by the SHA-256 the
    /// baseline records].
    #[arg(long, value_name = "MECHANISM", requires = "explain")]
    pub explain_against: Option<String>,
    /// No progress bar and no closing line (the report is still printed).
    #[arg(short, long)]
    pub quiet: bool,
}

/// Flags of `stoik diff`.
#[derive(clap::Args)]
pub struct DiffArgs {
    /// Old mechanism: a file, or REV:path (a file of a git revision).
    pub old: String,
    /// New mechanism: a file, or REV:path.
    pub new: String,
    /// Temperatures of the k_new/k_old ratios, K, comma-separated.
    #[arg(long, value_delimiter = ',', default_values_t = stoik::diff::DEFAULT_TEMPERATURES_K)]
    pub temperatures_k: Vec<f64>,
    /// Bath-gas pressures of the ratios of steps with a third body or pressure dependence,
    /// Pa, comma-separated [default: 0.01, 1 and 100 atm].
    #[arg(long, value_delimiter = ',', default_values_t = stoik::diff::DEFAULT_PRESSURES_PA, hide_default_value = true)]
    pub pressures_pa: Vec<f64>,
    /// Relative tolerance under which two SI values (rate parameters, efficiencies, thermo
    /// coefficients) count as equal (0 to 1e-3).
    #[arg(long, default_value_t = stoik::diff::DEFAULT_RELATIVE_TOLERANCE)]
    pub relative_tolerance: f64,
    /// Report form: text for people, toml for machines (numbers read back exactly).
    #[arg(long, value_enum, default_value = "text")]
    pub format: DiffFormat,
}

/// The report form of `stoik diff`.
#[derive(Clone, Copy, ValueEnum)]
pub enum DiffFormat {
    /// A terminal report.
    Text,
    /// TOML (`stoik_diff = 1`), every number in round-trip form.
    Toml,
}

/// Flags of `stoik fit-rate`.
#[derive(clap::Args)]
pub struct FitRateArgs {
    /// Rate-data CSV (temperature, rate_constant, optional uncertainty and pressure).
    pub data: PathBuf,
    /// The form fitted.
    #[arg(long, value_enum, default_value = "arrhenius")]
    pub model: ModelArg,
    /// Reference temperature of the decorrelated form, in K (1 to 1e5 K) [default: harmonic
    /// mean of the data's temperatures].
    #[arg(long)]
    pub reference_temperature_k: Option<f64>,
    /// Equation of the step in the snippet, e.g. "CH3CHO -> CH4 + CO" [default: a placeholder
    /// to edit].
    #[arg(long)]
    pub equation: Option<String>,
    /// Write a plot of ln k against 1000/T (data, fit, confidence band) to this SVG file.
    #[arg(long)]
    pub svg: Option<PathBuf>,
    /// Write the fitted step as a mechanism-file snippet to this file.
    #[arg(long)]
    pub snippet: Option<PathBuf>,
    /// Confidence level of intervals and band (0.5 to 0.9999).
    #[arg(long, default_value_t = 0.95)]
    pub confidence: f64,
}

/// The rate-constant form on the command line.
#[derive(Clone, Copy, ValueEnum)]
pub enum ModelArg {
    /// k = A exp(-Ea/(R T)): ln k linear in 1/T.
    Arrhenius,
    /// k = A T^n exp(-Ea/(R T)): ln k linear in 1, ln T, 1/T.
    Modified,
}

/// Flags of `stoik energetics`.
#[derive(clap::Args)]
pub struct EnergeticsArgs {
    /// Mechanism file (species need thermochemistry).
    pub mechanism: PathBuf,
    /// Temperature in K.
    #[arg(long, default_value_t = 298.15)]
    pub temperature_k: f64,
}

/// Flags of `stoik fit-thermo`.
#[derive(clap::Args)]
pub struct FitThermoArgs {
    /// Tables to fit, one species each; the species is named after the file stem.
    #[arg(required = true)]
    pub tables: Vec<PathBuf>,
    /// Thermo file to write.
    #[arg(short, long)]
    pub output: PathBuf,
    /// Common temperature of the two ranges, in K.
    #[arg(long, default_value_t = 1000.0)]
    pub common_temperature_k: f64,
    /// Lowest table temperature used, in K.
    #[arg(long, default_value_t = 200.0)]
    pub low_k: f64,
    /// Highest table temperature used, in K.
    #[arg(long, default_value_t = 6000.0)]
    pub high_k: f64,
    /// Rename a species: FILESTEM=NAME (repeatable), e.g. Ar=AR.
    #[arg(long)]
    pub rename: Vec<String>,
}

/// Flags of `stoik batch`.
#[derive(clap::Args)]
pub struct BatchArgs {
    /// Scenario files; scenarios naming the same mechanism share one compiled mechanism.
    #[arg(required = true)]
    pub scenarios: Vec<PathBuf>,
    /// Run every scenario at each of these temperatures (K), comma-separated; CSV files are
    /// then named <scenario>-<T>K.csv.
    #[arg(long, value_delimiter = ',')]
    pub temperatures_k: Vec<f64>,
    /// Folder for the CSV files (a failed run writes <name>.partial.csv instead).
    #[arg(long, default_value = ".")]
    pub output_dir: PathBuf,
    /// Do not enforce non-negative concentrations in the step acceptance.
    #[arg(long)]
    pub allow_negative: bool,
    /// Print only errors (no progress bar).
    #[arg(short, long)]
    pub quiet: bool,
}

/// Flags of `stoik run`; each overrides the scenario's value.
#[derive(clap::Args)]
pub struct RunArgs {
    /// Scenario file (names the mechanism to run).
    pub scenario: PathBuf,
    /// CSV output path [default: <scenario name>.csv in the current folder]. A failed run
    /// writes its partial profile to <output stem>.partial.csv beside it instead.
    #[arg(short, long)]
    pub output: Option<PathBuf>,
    /// Override the temperature, in K (1 to 1e5 K).
    #[arg(long)]
    pub temperature_k: Option<f64>,
    /// Override the end time, in s (positive, at most 1e15 s).
    #[arg(long)]
    pub end_time_s: Option<f64>,
    /// Override the relative tolerance.
    #[arg(long)]
    pub rtol: Option<f64>,
    /// Override the absolute tolerance of every species, in mol/m3.
    #[arg(long)]
    pub atol_mol_per_m3: Option<f64>,
    /// Override the linear algebra of the Newton iterations.
    #[arg(long, value_parser = linear_algebra_parser())]
    pub linear_algebra: Option<LinearAlgebra>,
    /// Longest wall-clock time of the integration, in s; running out ends the run like a
    /// failed one (exit 3), with the profile so far written [default: the scenario's
    /// `[solver] wall_time_limit`, else none].
    #[arg(long, value_name = "SECONDS")]
    pub wall_time_limit_s: Option<f64>,
    /// Do not enforce non-negative concentrations in the step acceptance (for comparison
    /// with solvers that do not).
    #[arg(long)]
    pub allow_negative: bool,
    /// Print only errors (no progress line for long runs).
    #[arg(short, long)]
    pub quiet: bool,
    /// Write a self-contained HTML report (the run summary, concentration and temperature
    /// plots against time) to this file.
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,
    /// Species plotted in the report, comma-separated, at most 10 [default: the 8 largest by
    /// peak concentration].
    #[arg(long, value_delimiter = ',', requires = "report")]
    pub report_species: Vec<String>,
    /// Plot mole fractions (dimensionless) instead of concentrations in the report.
    #[arg(long, requires = "report")]
    pub report_mole_fractions: bool,
    /// Species whose rates of production (integrated over the run) the report ranks,
    /// comma-separated [default: the 3 of largest peak concentration].
    #[arg(long, value_delimiter = ',', requires = "report")]
    pub report_rates_of: Vec<String>,
    /// Element whose flux between species (integrated over the run) the report draws
    /// [default: the element in the most species].
    #[arg(long, requires = "report")]
    pub report_flux_element: Option<String>,
    /// Observable whose sensitivities to every rate constant the report ranks (adjoint
    /// method): `ignition-delay`, `final:NAME`, `peak:NAME`, `peak-time:NAME` (NAME a species
    /// or T) [default: the ignition delay if found, else the final value of the main product].
    #[arg(long, requires = "report")]
    pub report_sensitivity_of: Option<String>,
    /// Leave the analyses (sensitivities, rates of production, flux) out of the report: the
    /// profiles and the summary only.
    #[arg(long, requires = "report")]
    pub report_without_analyses: bool,
}

/// The reactor's linear algebra on the command line, spelled as in scenario files.
fn linear_algebra_parser() -> impl TypedValueParser<Value = LinearAlgebra> {
    PossibleValuesParser::new([
        PossibleValue::new("auto").help("Dense below a size threshold, sparse above"),
        PossibleValue::new("dense").help("Dense LU (small mechanisms)"),
        PossibleValue::new("sparse")
            .help("Sparse LU on the Jacobian's fixed pattern (large mechanisms)"),
    ])
    .try_map(|name| {
        linear_algebra_from_name(&name).ok_or_else(|| format!("unknown linear algebra `{name}`"))
    })
}

fn main() -> ExitCode {
    // Piping into `head` and the like: end quietly like other command-line tools when the
    // reader goes away, instead of panicking on the failed write (Rust ignores SIGPIPE).
    #[cfg(unix)]
    // SAFETY: restoring the default disposition of SIGPIPE at start-up, before any thread
    // exists, has no preconditions.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Check { file, strict } => check::check(&file, strict),
        Command::Run(args) => {
            if is_network_scenario(&args.scenario) {
                network_run::run(&args)
            } else {
                run::run(&args)
            }
        }
        Command::Batch(args) => batch::batch(&args),
        Command::FitThermo(args) => fit_thermo::fit_thermo(&args),
        Command::Energetics(args) => energetics::energetics(&args),
        Command::FitRate(args) => fit_rate::fit_rate(&args),
        Command::Suite(SuiteCommand::Record(args)) => suite::record(&args),
        Command::Suite(SuiteCommand::Verify(args)) => suite::verify(&args),
        Command::Diff(args) => diff::diff(&args),
        Command::Rates(args) => {
            not_a_network(&args.scenario, "rates").and_then(|()| analysis::rates(&args))
        }
        Command::Flux(args) => {
            not_a_network(&args.scenario, "flux").and_then(|()| analysis::flux(&args))
        }
        Command::Sensitivity(args) => not_a_network(&args.scenario, "sensitivity")
            .and_then(|()| sensitivity::sensitivity(&args)),
        Command::Steady(args) => {
            if is_network_scenario(&args.scenario) {
                network_run::steady(&args)
            } else {
                steady::steady(&args)
            }
        }
        Command::Continuation(args) => {
            not_a_network(&args.scenario, "continuation").and_then(|()| steady::continuation(&args))
        }
    };
    // Every error is reported here, once.
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            // `diff` has printed its report when it finds changes: nothing more to say.
            let message = e.to_string();
            if !message.is_empty() {
                eprintln!("{message}");
            }
            ExitCode::from(e.exit_code())
        }
    }
}

/// Refuses a network scenario for a command that runs single reactors only, located at its
/// first `[[tank]]` and naming what to use instead (rather than the single-reactor reader's
/// complaints about a missing `[reactor]`).
fn not_a_network(path: &std::path::Path, command: &str) -> Result<(), error::CliError> {
    match network_refusal(path, command) {
        Some(d) => Err(error::CliError::Load(
            stoik::mechanism::LoadError::Invalid {
                diagnostics: stoik::mechanism::Diagnostics(vec![d]),
            },
        )),
        None => Ok(()),
    }
}

/// The located refusal of a network scenario by `stoik command`; `None` for any other file.
fn network_refusal(path: &std::path::Path, command: &str) -> Option<stoik::mechanism::Diagnostic> {
    if !is_network_scenario(path) {
        return None;
    }
    let text = stoik::mechanism::read_input_text(path).ok()?;
    let location = text.lines().enumerate().find_map(|(i, line)| {
        let trimmed = line.trim_start();
        trimmed
            .starts_with("[[tank]]")
            .then(|| stoik::mechanism::SourceLocation {
                line: i + 1,
                column: line.chars().count() - trimmed.chars().count() + 1,
            })
    });
    let mut d = stoik::mechanism::Diagnostic::error(
        &path.display().to_string(),
        location,
        format!(
            "a network scenario ([[tank]] and [[stream]]): `stoik {command}` takes single-reactor scenarios only"
        ),
    );
    d.help = Some("run a network with `stoik run`, or `stoik steady` for its steady state".into());
    Some(d)
}

/// Whether the file at `path` reads as a network scenario (`[[tank]]`). Only a regular file
/// is looked into (a FIFO or standard input would block or be consumed by this first read);
/// anything else, and an unreadable file, is left to the ordinary scenario path, which
/// reports it.
pub(crate) fn is_network_scenario(path: &std::path::Path) -> bool {
    let regular = std::fs::metadata(path).is_ok_and(|m| m.is_file());
    regular
        && stoik::mechanism::read_input_text(path)
            .is_ok_and(|text| stoik::scenario::is_network_scenario_text(&text))
}
