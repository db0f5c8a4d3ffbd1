//! `stoik fit-rate`: Arrhenius parameters fitted to measured rate constants, printed with
//! their uncertainties, written as a mechanism snippet and plotted as SVG.

use crate::error::CliError;
use crate::out_file::OutputPaths;
use crate::{FitRateArgs, ModelArg};
use stoik::fit::{
    fit_rate_constants, load_rate_data, mechanism_snippet, report_text, svg_plot, FitOptions,
    Model, RateFitError, CONFIDENCE_RANGE, REFERENCE_TEMPERATURE_RANGE_K,
};

/// `value` as a user would have typed it: plain digits for ordinary magnitudes, exponent
/// form for very large or small ones (never hundreds of digits).
fn as_given(value: f64) -> String {
    if value == 0.0 || (1e-4..1e16).contains(&value.abs()) || !value.is_finite() {
        format!("{value}")
    } else {
        format!("{value:e}")
    }
}

/// Refuses `--confidence` and `--reference-temperature-k` outside their documented ranges,
/// naming the flag (the fit would refuse them too, without knowing the flag).
fn check_flags(args: &FitRateArgs) -> Result<(), CliError> {
    let (low, high) = CONFIDENCE_RANGE;
    let c = args.confidence;
    if !(c >= low && c <= high) {
        return Err(CliError::BadFlag(format!(
            "--confidence: {} is not a confidence level between {low} and {high} (e.g. 0.95)",
            as_given(c)
        )));
    }
    if let Some(t) = args.reference_temperature_k {
        let (low, high) = REFERENCE_TEMPERATURE_RANGE_K;
        if !(t >= low && t <= high) {
            return Err(CliError::BadFlag(format!(
                "--reference-temperature-k: {} K is not between {low} K and {high:e} K",
                as_given(t)
            )));
        }
    }
    Ok(())
}

/// Runs the fit.
pub fn fit_rate(args: &FitRateArgs) -> Result<(), CliError> {
    let label = args.data.display().to_string();
    check_flags(args)?;
    // Both outputs are checked before anything is fitted or written.
    let mut outputs = OutputPaths::new();
    outputs.input(&args.data);
    if let Some(path) = &args.snippet {
        outputs.output("--snippet", path)?;
    }
    if let Some(path) = &args.svg {
        outputs.output("--svg", path)?;
    }
    let data = load_rate_data(&args.data).map_err(|e| CliError::fit("", e))?;
    let options = FitOptions {
        model: match args.model {
            ModelArg::Arrhenius => Model::Arrhenius,
            ModelArg::Modified => Model::ModifiedArrhenius,
        },
        confidence: args.confidence,
        reference_temperature_k: args.reference_temperature_k,
    };
    // Conclusions about the data set as a whole are located at the row to look at first.
    let at = |e: &RateFitError| match e.line() {
        Some(line) => format!("{label}:{line}:1: error: "),
        None => format!("{label}: error: "),
    };
    let fit = fit_rate_constants(&data, &options).map_err(|e| match e {
        RateFitError::BadOption(_) => CliError::fit("error: ", e),
        _ => CliError::fit(at(&e), e),
    })?;
    let snippet = mechanism_snippet(&fit, args.equation.as_deref()).map_err(|e| match e {
        RateFitError::Equation { .. } => CliError::fit("error: --equation: ", e),
        _ => CliError::fit(at(&e), e),
    })?;
    let plot = args
        .svg
        .as_ref()
        .map(|_| svg_plot(&fit))
        .transpose()
        .map_err(|e| CliError::fit(format!("{label}: error: "), e))?
        .unwrap_or_default();
    let mut written = Vec::new();
    let outputs = [(&args.snippet, snippet.clone()), (&args.svg, plot)];
    for (path, text) in outputs {
        if let Some(path) = path {
            crate::out_file::write_text(path, &text).map_err(|e| CliError::write(path, e))?;
            written.push(path.display().to_string());
        }
    }
    print!("{}", report_text(&fit));
    for w in fit.warnings() {
        eprintln!("{label}: warning: {w}");
    }
    println!();
    println!("mechanism snippet:");
    print!("{snippet}");
    for path in written {
        println!("wrote {path}");
    }
    Ok(())
}
