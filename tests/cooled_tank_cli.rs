//! The cooled-tank demo through the real binary: the loss of cooling runs away to the
//! adiabatic steady state of the textbook construction, the continuation prints its turning
//! points and writes the S-curve, and every output carries the process-safety caution.

mod common;

use common::{repo, scratch, stoik, text, Table};

/// The numbers of mechanisms/cooled-tank*.scenario.toml (inputs of the construction):
/// k = A exp(-E / (R T)), residence time, feed concentration of R and temperature,
/// rho cp, reaction enthalpy, U A / V before the failure.
const PREFACTOR: f64 = 2.1e12;
const ACTIVATION: f64 = 100.0e3;
const TAU: f64 = 3600.0;
const C_IN: f64 = 3000.0;
const T_IN: f64 = 300.0;
const RHO_CP: f64 = 950.0 * 2100.0;
const DH: f64 = -100.0e3;
const UA_V: f64 = 2500.0 / 5.0;
const COOLANT: f64 = 290.0;
/// R = 8.314462618 J/(mol K) (CODATA 2018).
const GAS_CONSTANT: f64 = 8.314462618;

/// G(T) - R(T) of the stirred tank's energy balance with the mole balance substituted
/// (X = k tau / (1 + k tau); H. S. Fogler, *Elements of Chemical Reaction Engineering*,
/// multiple steady states; from memory), with U A / V = `ua_v`.
fn balance(t: f64, ua_v: f64) -> f64 {
    let kt = PREFACTOR * (-ACTIVATION / (GAS_CONSTANT * t)).exp() * TAU;
    let kappa = ua_v * TAU / RHO_CP;
    -DH * C_IN * kt / (1.0 + kt) - RHO_CP * ((t - T_IN) + kappa * (t - COOLANT))
}

/// The roots of `balance(., ua_v)` on [250, 600] K, bracketed on a 0.01 K grid and bisected.
fn steady_temperatures(ua_v: f64) -> Vec<f64> {
    let f = |t: f64| balance(t, ua_v);
    let mut out = Vec::new();
    for i in 0..35_000 {
        let (mut a, mut b) = (250.0 + 0.01 * i as f64, 250.0 + 0.01 * (i + 1) as f64);
        if f(a) * f(b) >= 0.0 {
            continue;
        }
        while b - a > 1e-12 {
            let m = 0.5 * (a + b);
            if (f(m) > 0.0) == (f(a) > 0.0) {
                a = m;
            } else {
                b = m;
            }
        }
        out.push(0.5 * (a + b));
    }
    out
}

const PROCESS_SAFETY: &str =
    "simulation is no substitute for process-safety review (measured kinetics, calorimetry) and local codes";

#[test]
fn loss_of_cooling_runs_away_to_the_adiabatic_steady_state() {
    let dir = scratch("cooled-tank", "loss");
    let scenario = repo().join("mechanisms/cooled-tank-cooling-loss.scenario.toml");
    let csv = dir.join("loss.csv");
    let out = stoik(
        &[
            "run",
            scenario.to_str().unwrap(),
            "--output",
            csv.to_str().unwrap(),
        ],
        &dir,
    );
    let all = text(&out.stdout) + &text(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{all}");
    assert!(all.contains(PROCESS_SAFETY), "{all}");
    assert!(all.contains("CAUTION: thermal runaway detected"), "{all}");
    let table = Table::read(&csv);
    let (time, temp) = (table.col("time [s]"), table.col("temperature [K]"));
    // Before the failure (6 h) the tank holds its cold steady state (the lowest of the
    // three at U A / V = 500 W/(m3 K)); the scenario starts from it rounded to 0.01 K.
    let cold = steady_temperatures(UA_V);
    assert_eq!(cold.len(), 3, "{cold:?}");
    for row in table.rows.iter().filter(|r| r[time] <= 6.0 * 3600.0) {
        assert!(
            (row[temp] - cold[0]).abs() <= 0.01,
            "{} K at {} s",
            row[temp],
            row[time]
        );
    }
    // Without cooling only the hot, adiabatic steady state is left; 13 residence times
    // after the runaway the tank sits on it (measured: 2.3e-10 relative).
    let adiabatic = steady_temperatures(0.0);
    assert_eq!(adiabatic.len(), 1, "{adiabatic:?}");
    let last = table.rows.last().unwrap()[temp];
    eprintln!(
        "cold steady state {} K, adiabatic {} K, end of run {last} K",
        cold[0], adiabatic[0]
    );
    assert!(
        (last - adiabatic[0]).abs() <= 1e-8 * adiabatic[0],
        "{last} against {}",
        adiabatic[0]
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn the_s_curve_is_drawn_with_its_turning_points_and_the_caution() {
    let dir = scratch("cooled-tank", "s-curve");
    let scenario = repo().join("mechanisms/cooled-tank.scenario.toml");
    let svg = dir.join("s.svg");
    let out = stoik(
        &[
            "continuation",
            scenario.to_str().unwrap(),
            "--parameter",
            "coolant-temperature",
            "--from",
            "240",
            "--to",
            "320",
            "--svg",
            svg.to_str().unwrap(),
        ],
        &dir,
    );
    let all = text(&out.stdout) + &text(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{all}");
    // The printed turning points against the tangency G = R, G' = R' of the construction:
    // R' = rho cp (1 + kappa) does not depend on the coolant, so the tangency temperatures
    // are the roots of G'(T) - R'(T) (bracketed and bisected) and the coolant temperature
    // follows from G = R, which is linear in it.
    let slope = |t: f64| (balance(t + 1e-4, UA_V) - balance(t - 1e-4, UA_V)) / 2e-4;
    let mut expected = Vec::new();
    for i in 0..30_000 {
        let (mut a, mut b) = (250.0 + 0.01 * i as f64, 250.0 + 0.01 * (i + 1) as f64);
        if slope(a) * slope(b) >= 0.0 {
            continue;
        }
        while b - a > 1e-9 {
            let m = 0.5 * (a + b);
            if (slope(m) > 0.0) == (slope(a) > 0.0) {
                a = m;
            } else {
                b = m;
            }
        }
        let t = 0.5 * (a + b);
        // balance(t) at coolant Tc: balance(t, .) + rho cp kappa (Tc - COOLANT) = 0.
        let kappa = UA_V * TAU / RHO_CP;
        expected.push(COOLANT - balance(t, UA_V) / (RHO_CP * kappa));
    }
    let printed: Vec<f64> = all
        .lines()
        .filter_map(|l| l.strip_prefix("turning point "))
        .filter_map(|l| l.split("coolant-temperature = ").nth(1))
        .filter_map(|l| l.split(' ').next())
        .map(|x| x.parse().expect("a number"))
        .collect();
    eprintln!("printed turning points {printed:?}, tangency {expected:?}");
    assert_eq!(printed.len(), 2, "{all}");
    assert_eq!(expected.len(), 2);
    for (p, e) in printed.iter().zip(&expected) {
        // Printed with ten significant digits (rounding below 2e-10 relative); at the fold
        // the coolant temperature is flat in T, so the bisected tangency gives it to far
        // better than that.
        assert!((p - e).abs() <= 1e-8 * e, "printed {p} K, tangency {e} K");
    }
    assert!(all.contains(PROCESS_SAFETY), "{all}");
    assert!(all.contains("CAUTION: thermal runaway possible"), "{all}");
    let drawn = std::fs::read_to_string(&svg).unwrap();
    assert!(drawn.starts_with("<svg") && drawn.contains("coolant temperature [K]"));
    let _ = std::fs::remove_dir_all(&dir);
}
