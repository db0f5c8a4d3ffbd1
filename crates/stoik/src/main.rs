//! The `stoik` binary: thin glue over the library (arguments, files, printing).

mod batch;
mod check;
mod csv_out;
mod energetics;
mod fit_thermo;
mod run;

use clap::{Parser, Subcommand, ValueEnum};
use std::path::PathBuf;
use std::process::ExitCode;

/// Exit status for success.
pub const EXIT_OK: u8 = 0;
/// Exit status when only warnings were found and `--strict` was given.
pub const EXIT_WARNINGS: u8 = 1;
/// Exit status for bad input (unreadable or invalid files, bad flags).
pub const EXIT_BAD_INPUT: u8 = 2;
/// Exit status for a failed integration (the partial profile is still written).
pub const EXIT_INTEGRATION_FAILED: u8 = 3;

#[derive(Parser)]
#[command(
    name = "stoik",
    version,
    about = "Simulate chemical reaction mechanisms: TOML mechanism + scenario in, concentration-time profiles out.",
    after_help = "Examples:\n  stoik check mechanisms/ozone-flask.toml\n  stoik check --strict mechanisms/ozone-flask.scenario.toml\n  stoik run mechanisms/ozone-flask.scenario.toml --output ozone.csv\n  stoik run mechanisms/robertson.scenario.toml --rtol 1e-10 --linear-algebra dense\n  stoik batch mechanisms/ozone-flask.scenario.toml --temperatures-k 550,600,650 --output-dir sweep\n\nExit status: 0 success, 1 warnings only (check --strict), 2 bad input, 3 integration failure.\n\nSimulation is no substitute for local codes, standards and licensed engineering review."
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
        after_help = "Examples:\n  stoik run mechanisms/ozone-flask.scenario.toml\n  stoik run mechanisms/hires.scenario.toml --output hires.csv --rtol 1e-10\n  stoik run mechanisms/ozone-flask.scenario.toml --temperature-k 650 --end-time-s 0.5"
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
    /// Folder for the CSV files.
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
    /// CSV output path [default: <scenario name>.csv in the current folder].
    #[arg(short, long)]
    pub output: Option<PathBuf>,
    /// Override the temperature, in K.
    #[arg(long)]
    pub temperature_k: Option<f64>,
    /// Override the end time, in s.
    #[arg(long)]
    pub end_time_s: Option<f64>,
    /// Override the relative tolerance.
    #[arg(long)]
    pub rtol: Option<f64>,
    /// Override the absolute tolerance of every species, in mol/m3.
    #[arg(long)]
    pub atol_mol_per_m3: Option<f64>,
    /// Override the linear algebra of the Newton iterations.
    #[arg(long, value_enum)]
    pub linear_algebra: Option<LinearAlgebraArg>,
    /// Do not enforce non-negative concentrations in the step acceptance (for comparison
    /// with solvers that do not).
    #[arg(long)]
    pub allow_negative: bool,
    /// Print only errors.
    #[arg(short, long)]
    pub quiet: bool,
}

/// Linear algebra choice on the command line.
#[derive(Clone, Copy, ValueEnum)]
pub enum LinearAlgebraArg {
    /// Dense below a size threshold, sparse above.
    Auto,
    /// Dense LU (small mechanisms).
    Dense,
    /// Sparse LU on the Jacobian's fixed pattern (large mechanisms).
    Sparse,
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let status = match cli.command {
        Command::Check { file, strict } => check::check(&file, strict),
        Command::Run(args) => run::run(&args),
        Command::Batch(args) => batch::batch(&args),
        Command::FitThermo(args) => fit_thermo::fit_thermo(&args),
        Command::Energetics(args) => energetics::energetics(&args),
    };
    ExitCode::from(status)
}
