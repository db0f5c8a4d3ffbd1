//! The conservation section of the run summary: every conservation law of the mechanism in
//! its reactor with its drift along the profile, and a warning for each drift above what the
//! tolerances allow.

use stoik::mechanism::Mechanism;
use stoik::reactor::{
    ConservationCheckError, ConservationDrift, IntegrationOptions, Profiles, ReactorConservation,
};
use stoik::scenario::ConservationCheck;

/// Laws listed in the summary (the rest are counted).
const MAX_LISTED: usize = 12;

/// Longest law name printed in full.
const MAX_NAME: usize = 40;

/// Summary lines and warnings about the conservation laws of one run.
#[derive(Debug, Default)]
pub struct ConservationReport {
    /// Lines for the run summary (stdout).
    pub lines: Vec<String>,
    /// One `warning: ...` line per law whose drift exceeds its allowance (stderr).
    pub warnings: Vec<String>,
}

/// The report of a run's conservation `check` (its `profiles`, integrated from `mechanism`
/// with `options`).
pub fn report_from_check(
    mechanism: &Mechanism,
    check: &Result<ConservationCheck, ConservationCheckError>,
    profiles: &Profiles,
    options: &IntegrationOptions,
) -> ConservationReport {
    match check {
        Ok(c) => report_lines(mechanism, &c.laws, &c.drifts, profiles, options),
        Err(e) => ConservationReport {
            lines: vec![format!("conserved quantities: not checked ({e})")],
            warnings: Vec::new(),
        },
    }
}

/// A law name shortened to [`MAX_NAME`] characters.
fn short(name: &str) -> String {
    if name.chars().count() <= MAX_NAME {
        name.to_string()
    } else {
        let cut: String = name.chars().take(MAX_NAME - 3).collect();
        format!("{cut}...")
    }
}

/// Formats the report from computed drifts.
pub fn report_lines(
    mechanism: &Mechanism,
    conservation: &ReactorConservation,
    drifts: &[ConservationDrift],
    profiles: &Profiles,
    options: &IntegrationOptions,
) -> ConservationReport {
    let unit = conservation.basis.unit();
    let mut lines = Vec::new();
    let open: Vec<&str> = conservation
        .open_species
        .iter()
        .filter_map(|&i| mechanism.species.get(i).map(|s| s.name.as_str()))
        .collect();
    if drifts.is_empty() {
        let which = if open.is_empty() { "" } else { "other " };
        lines.push(format!(
            "conserved quantities: none (no combination of the {which}species is unchanged by every step)"
        ));
    } else {
        lines.push(format!(
            "conserved quantities [{unit}], initial value and largest drift relative to the quantity's size:"
        ));
        let width = drifts
            .iter()
            .take(MAX_LISTED)
            .map(|d| short(&d.name).chars().count())
            .max()
            .unwrap_or(0);
        for d in drifts.iter().take(MAX_LISTED) {
            let allowed = d.allowed / d.scale;
            let drift = if d.scale > 0.0 && allowed.is_finite() && d.relative_drift.is_finite() {
                format!(
                    "drift {:.1e} (allowed {allowed:.1e}){}",
                    d.relative_drift,
                    if d.exceeded { "  EXCEEDED" } else { "" }
                )
            } else if d.scale > 0.0 {
                // Tolerances so loose (or values so large) that the allowance, or the drift,
                // is beyond the range of f64: say so in words, never print `inf`.
                "drift not bounded (the tolerances allow any drift at these magnitudes)".to_string()
            } else {
                // Every species of the law stayed at exactly zero.
                "(none present)".to_string()
            };
            lines.push(format!(
                "  {:<width$} {:>14.6e}  {drift}",
                short(&d.name),
                d.initial_value,
            ));
        }
        if drifts.len() > MAX_LISTED {
            lines.push(format!(
                "  ... {} more conserved quantities",
                drifts.len() - MAX_LISTED
            ));
        }
    }
    if !open.is_empty() {
        lines.push(format!(
            "  (open box: {} exchange matter with the surroundings or are held fixed; no conserved quantity involves them)",
            open.join(", ")
        ));
    }
    let retried = profiles.stats.negative_step_rejections;
    let warnings = drifts
        .iter()
        .filter(|d| d.exceeded)
        .map(|d| {
            let projections = if retried > 0 {
                format!(
                    "; {retried} steps were retried after negative concentrations, each projection onto c >= 0 can move it by up to the absolute tolerances"
                )
            } else {
                String::new()
            };
            format!(
                "warning: conserved quantity `{}` drifted by {:.3e} {unit} (largest at t = {:.6e} s), more than the {:.3e} {unit} that rtol {:e} and the absolute tolerances allow{projections}; try a tighter --rtol or --atol-mol-per-m3",
                short(&d.name),
                d.max_drift,
                d.time_of_max_drift_s,
                d.allowed,
                options.relative_tolerance,
            )
        })
        .collect();
    ConservationReport { lines, warnings }
}

#[cfg(test)]
mod tests {
    use super::*;
    use stoik::kinetics::Kinetics;
    use stoik::mechanism::parse_mechanism;
    use stoik::reactor::{integrate, ReactorModel};

    /// The report as a run builds it: the laws of `m` in `model`, their drift along `p`.
    fn conservation_report(
        m: &Mechanism,
        model: &ReactorModel,
        p: &Profiles,
        options: &IntegrationOptions,
    ) -> ConservationReport {
        let check = ReactorConservation::new(m, model).map(|laws| ConservationCheck {
            drifts: laws.drifts(p, options),
            laws,
        });
        report_from_check(m, &check, p, options)
    }

    /// Robertson's problem (Hairer & Wanner, Solving ODEs II, section IV.10) conserves
    /// A + B + C; a profile edited by hand breaks it and must be reported.
    #[test]
    fn a_broken_law_gives_a_warning_with_drift_and_allowance() {
        let text = "stoik_mechanism = 1\n[units]\namount = \"mol\"\nlength = \"m\"\n\
            [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n[[species]]\nname = \"C\"\n\
            [[step]]\nequation = \"A -> B\"\nforward = { prefactor = 0.04 }\n\
            [[step]]\nequation = \"B + B -> C + B\"\nforward = { prefactor = 3.0e7 }\n\
            [[step]]\nequation = \"B + C -> A + C\"\nforward = { prefactor = 1.0e4 }\n";
        let m = parse_mechanism(text, "<robertson>").unwrap().mechanism;
        let kinetics = Kinetics::compile(&m).unwrap();
        let mut options = IntegrationOptions::new(3);
        options.relative_tolerance = 1e-8;
        options.absolute_tolerances_mol_per_m3 = vec![1e-14; 3];
        let times = [0.0, 0.4, 4.0, 40.0];
        let mut p = integrate(&kinetics, 300.0, &[1.0, 0.0, 0.0], &times, &options).unwrap();
        let model = ReactorModel::default();

        let report = conservation_report(&m, &model, &p, &options);
        assert!(report.warnings.is_empty(), "{:?}", report.warnings);
        assert_eq!(report.lines.len(), 2, "{:?}", report.lines);
        let line = &report.lines[1];
        assert!(
            line.starts_with("  A + B + C     1.000000e0  drift "),
            "{line}"
        );
        // Allowance relative to the scale 1: rtol 1e-8 + 3 atol 1e-14 + rounding.
        assert!(line.contains("(allowed 1.0e-8)"), "{line}");

        p.concentrations_mol_per_m3[2][1] += 2e-6;
        let report = conservation_report(&m, &model, &p, &options);
        assert!(report.lines[1].ends_with("EXCEEDED"), "{:?}", report.lines);
        assert_eq!(report.warnings.len(), 1);
        let w = &report.warnings[0];
        assert!(
            w.starts_with("warning: conserved quantity `A + B + C` drifted by 2.000e-6 mol/m3 (largest at t = 4.000000e0 s), more than the 1.000e-8 mol/m3"),
            "{w}"
        );
        assert!(
            w.ends_with("try a tighter --rtol or --atol-mol-per-m3"),
            "{w}"
        );

        // Absolute tolerances of 1e308 mol/m3: the allowance rtol + 3 atol overflows f64
        // (IEEE 754: the largest finite double is about 1.8e308); the line says so in words.
        let mut loose = options.clone();
        loose.absolute_tolerances_mol_per_m3 = vec![1e308; 3];
        let report = conservation_report(&m, &model, &p, &loose);
        assert!(
            report.lines[1].ends_with(
                "drift not bounded (the tolerances allow any drift at these magnitudes)"
            ),
            "{:?}",
            report.lines
        );
        assert!(!report
            .lines
            .iter()
            .any(|l| l.contains("inf") || l.contains("NaN")));
    }
}
