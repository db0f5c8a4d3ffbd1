//! `stoik fit-rate`: Arrhenius parameters fitted to measured rate constants, printed with
//! their uncertainties, written as a mechanism snippet and plotted as SVG.

use crate::{FitRateArgs, ModelArg, EXIT_BAD_INPUT, EXIT_OK};
use stoik::fit::{
    fit_rate_constants, load_rate_data, mechanism_snippet, report_text, svg_plot, FitOptions,
    Model, RateFitError,
};

/// Runs the fit; returns the exit status.
pub fn fit_rate(args: &FitRateArgs) -> u8 {
    let label = args.data.display().to_string();
    let data = match load_rate_data(&args.data) {
        Ok(d) => d,
        Err(e) => {
            eprintln!("{e}");
            return EXIT_BAD_INPUT;
        }
    };
    let options = FitOptions {
        model: match args.model {
            ModelArg::Arrhenius => Model::Arrhenius,
            ModelArg::Modified => Model::ModifiedArrhenius,
        },
        confidence: args.confidence,
        reference_temperature_k: args.reference_temperature_k,
    };
    let fit = match fit_rate_constants(&data, &options) {
        Ok(f) => f,
        Err(e @ RateFitError::BadOption(_)) => {
            eprintln!("error: {e}");
            return EXIT_BAD_INPUT;
        }
        Err(e) => {
            eprintln!("{label}: error: {e}");
            return EXIT_BAD_INPUT;
        }
    };
    let snippet = match mechanism_snippet(&fit, args.equation.as_deref()) {
        Ok(s) => s,
        Err(e @ RateFitError::Equation { .. }) => {
            eprintln!("error: --equation: {e}");
            return EXIT_BAD_INPUT;
        }
        Err(e) => {
            eprintln!("{label}: error: {e}");
            return EXIT_BAD_INPUT;
        }
    };
    let plot = match args.svg.as_ref().map(|_| svg_plot(&fit)).transpose() {
        Ok(p) => p.unwrap_or_default(),
        Err(e) => {
            eprintln!("{label}: error: {e}");
            return EXIT_BAD_INPUT;
        }
    };
    let mut written = Vec::new();
    let outputs = [(&args.snippet, snippet.clone()), (&args.svg, plot)];
    for (path, text) in outputs {
        if let Some(path) = path {
            if let Err(e) = crate::out_file::write_text(path, &text) {
                eprintln!("error: cannot write {}: {e}", path.display());
                return EXIT_BAD_INPUT;
            }
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
    EXIT_OK
}
