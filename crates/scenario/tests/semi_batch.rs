//! Semi-batch reactors (`[[feed]]`), closed constant-pressure jacketed batches and the
//! liquid description (`[liquid]`) in scenario files, run end to end against closed forms.

use std::path::PathBuf;
use stoik_scenario::run_scenario;

/// R = 8.314462618 J/(mol K) (CODATA 2018).
const R: f64 = 8.314462618;

fn mechanisms() -> PathBuf {
    stoik_testsupport::mechanisms_dir()
}

/// Writes `text` as a scenario in a fresh folder (the mechanism path is absolute) and runs it.
fn run(text: &str, name: &str) -> stoik_scenario::RunOutcome {
    let dir = std::env::temp_dir().join(format!("stoik-semi-{}-{name}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("s.scenario.toml");
    std::fs::write(&path, text).unwrap();
    let outcome = run_scenario(&path).unwrap_or_else(|e| panic!("{e}"));
    let _ = std::fs::remove_dir_all(&dir);
    outcome
}

fn close(what: &str, actual: f64, expected: f64, rel: f64) {
    assert!(
        (actual - expected).abs() <= rel * expected.abs(),
        "{what}: got {actual:e}, expected {expected:e}"
    );
}

/// The demo mechanism's A -> P, isothermal at 330 K, with A fed as a species at a constant
/// molar rate F into 1 m3 of solvent: d(n_A)/dt = F - k n_A, so n_A = (F / k)(1 - e^{-k t})
/// (semibatch mole balance: O. Levenspiel, *Chemical Reaction Engineering*, 3rd ed., ch. 5;
/// H. S. Fogler, *Elements of Chemical Reaction Engineering*, 4th ed., sec. 6.6), with k from
/// the mechanism's Arrhenius form k = A exp(-Ea / (R T)); the volume grows by the molar volume
/// v per mole fed, V = V0 + v F t.
#[test]
fn a_species_feed_at_constant_rate_matches_the_semibatch_closed_form() {
    let text = format!(
        "stoik_scenario = 1\nmechanism = {:?}\n[reactor]\ntemperature = \"330 K\"\n\
         volume = \"1 m3\"\n[initial]\nconcentrations = {{ S = 12000 }}\n[[feed]]\n\
         species = \"A\"\nmolar_flow = \"0.5 mol/s\"\nmolar_volume = \"0.1 L/mol\"\n\
         stop = \"1 h\"\n[liquid]\nheat_capacity = \"2.0 MJ/(m3 K)\"\n[output]\n\
         end_time = \"1 h\"\ngrid = {{ spacing = \"linear\", points = 7 }}\n[solver]\n\
         relative_tolerance = 1e-11\nabsolute_tolerance = \"1e-12 mol/m3\"\n",
        mechanisms()
            .join("semibatch-exotherm.toml")
            .display()
            .to_string()
    );
    let outcome = run(&text, "species-feed");
    let p = outcome.profiles();
    let k = 4.6e9 * (-80.0e3 / (R * 330.0)).exp();
    let (f, v0, molar_volume) = (0.5, 1.0, 1e-4);
    for (row, &t) in p.times_s.iter().enumerate().skip(1) {
        let v = v0 + molar_volume * f * t;
        close(&format!("V({t})"), p.volumes_m3[row], v, 1e-9);
        let n_a = f / k * (1.0 - (-k * t).exp());
        let c = &p.concentrations_mol_per_m3[row];
        close(&format!("n_A({t})"), c[0] * p.volumes_m3[row], n_a, 1e-7);
        // The solvent is diluted, never consumed: n_S = 12000 V0.
        close(
            &format!("n_S({t})"),
            c[2] * p.volumes_m3[row],
            12000.0,
            1e-9,
        );
    }
}

/// The demo with its 2 h feed: the volume rises linearly by 0.5 m3/h to 3 m3 and stays, and
/// every mole of A fed is A or P: (c_A + c_P) V = c_feed q t (the feed's mole balance), at
/// every output.
#[test]
fn the_demo_feed_fills_the_vessel_and_conserves_the_fed_moles() {
    let path = mechanisms().join("semibatch-exotherm.scenario.toml");
    let outcome = run_scenario(&path).unwrap_or_else(|e| panic!("{e}"));
    let p = outcome.profiles();
    assert!(outcome.failure().is_none());
    let q = 0.5 / 3600.0;
    for (row, &t) in p.times_s.iter().enumerate().skip(1) {
        let fed_time = t.min(7200.0);
        close(
            &format!("V({t})"),
            p.volumes_m3[row],
            2.0 + q * fed_time,
            1e-9,
        );
        let c = &p.concentrations_mol_per_m3[row];
        close(
            &format!("n_A + n_P at {t}"),
            (c[0] + c[1]) * p.volumes_m3[row],
            4000.0 * q * fed_time,
            1e-7,
        );
    }
    // The slow feed stays within a few kelvin of the coolant; the fast one runs away.
    let hottest = |p: &stoik_reactor::Profiles| {
        p.temperatures_k
            .iter()
            .fold(f64::NEG_INFINITY, |m, &x| m.max(x))
    };
    let slow = hottest(p);
    let fast_path = mechanisms().join("semibatch-exotherm-fast.scenario.toml");
    let fast = run_scenario(&fast_path).unwrap_or_else(|e| panic!("{e}"));
    let fast = hottest(fast.profiles());
    assert!(slow < 345.0, "the 2 h feed peaks at {slow} K");
    assert!(fast > 380.0, "the 15 min feed peaks at {fast} K");
}

/// Argon in a closed, jacketed vessel at constant pressure (the `jacketed-constant-pressure`
/// kind without [flow]): n cp dT/dt = U A (T_c - T) with cp = 5/2 R for the monatomic gas
/// (kinetic theory; NIST-JANAF: cp = 20.786 J/(mol K)), so T - T_c = (T0 - T_c)
/// exp(-U A t / (n cp)) (Newton's law of cooling), n = P V0 / (R T0), and the volume follows
/// the ideal gas at fixed P and n, V = V0 T / T0. The bundled AR polynomial fits cp to about
/// 4e-6, hence the 1e-4 tolerance.
#[test]
fn argon_in_a_closed_constant_pressure_jacket_cools_by_newtons_law() {
    let text = format!(
        "stoik_scenario = 1\nmechanism = {:?}\n[reactor]\nkind = \"jacketed-constant-pressure\"\n\
         temperature = \"1100 K\"\npressure = \"1 atm\"\nua = \"2 W/K\"\nvolume = \"1 L\"\n\
         coolant_temperature = \"300 K\"\n[initial]\nmole_fractions = {{ AR = 1.0 }}\n\
         [output]\nend_time = \"200 ms\"\ngrid = {{ spacing = \"linear\", points = 21 }}\n\
         [solver]\nrelative_tolerance = 1e-10\nabsolute_tolerance = \"1e-16 mol/m3\"\n",
        mechanisms()
            .join("hydrogen-oxygen.toml")
            .display()
            .to_string()
    );
    let outcome = run(&text, "argon");
    let p = outcome.profiles();
    let n = 101_325.0 * 1e-3 / (R * 1100.0);
    let tau = n * 2.5 * R / 2.0;
    for (row, &t) in p.times_s.iter().enumerate() {
        let expected = 300.0 + 800.0 * (-t / tau).exp();
        let temp = p.temperatures_k[row];
        assert!(
            (temp - expected).abs() <= 1e-4 * 800.0,
            "T({t}) = {temp}, expected {expected}"
        );
        close(
            &format!("V({t})"),
            p.volumes_m3[row],
            1e-3 * temp / 1100.0,
            1e-8,
        );
    }
}

/// Hot argon fed by volume (mole fractions at the reactor's pressure and the feed
/// temperature, c = P / (R T_feed)) into cold argon at constant pressure, adiabatic: the
/// enthalpy balance of the open system with cp = 5/2 R for both (monatomic ideal gas;
/// NIST-JANAF 20.786 J/(mol K)) gives the mixing rule T = (n0 T0 + F t T_f) / (n0 + F t),
/// F = q P / (R T_f), and the ideal gas V = (n0 + F t) R T / P. The bundled AR polynomial
/// fits cp to about 4e-6, hence the 1e-5 tolerance.
#[test]
fn hot_gas_fed_at_constant_pressure_follows_the_mixing_rule() {
    let text = format!(
        "stoik_scenario = 1\nmechanism = {:?}\n[reactor]\nkind = \"adiabatic-constant-pressure\"\n\
         temperature = \"300 K\"\npressure = \"1 atm\"\nvolume = \"1 L\"\n\
         [initial]\nmole_fractions = {{ AR = 1.0 }}\n[[feed]]\nmole_fractions = {{ AR = 1.0 }}\n\
         volumetric_flow = \"0.1 L/s\"\ntemperature = \"600 K\"\n[output]\nend_time = \"20 s\"\n\
         grid = {{ spacing = \"linear\", points = 5 }}\n[solver]\nrelative_tolerance = 1e-10\n\
         absolute_tolerance = \"1e-16 mol/m3\"\n",
        mechanisms()
            .join("hydrogen-oxygen.toml")
            .display()
            .to_string()
    );
    let outcome = run(&text, "hot-argon");
    let p = outcome.profiles();
    let pressure = 101_325.0;
    let n0 = pressure * 1e-3 / (R * 300.0);
    let flow = 1e-4 * pressure / (R * 600.0);
    for (row, &t) in p.times_s.iter().enumerate() {
        let n = n0 + flow * t;
        let temp = (n0 * 300.0 + flow * t * 600.0) / n;
        close(&format!("T({t})"), p.temperatures_k[row], temp, 1e-5);
        close(
            &format!("V({t})"),
            p.volumes_m3[row],
            n * R * temp / pressure,
            1e-5,
        );
    }
}
