//! Box-model conditions against closed forms: emissions with first-order deposition, fixed
//! species (pseudo-first order), tabulated and solar photolysis rates, element conservation.

use stoik_kinetics::Kinetics;
use stoik_mechanism::{load_mechanism, parse_mechanism, Mechanism};
use stoik_reactor::{
    cos_solar_zenith, simulate, solar_declination_rad, BoxConditions, IntegrationOptions,
    PhotolysisForm, PhotolysisRate, Profiles, ReactorModel, Sun,
};

fn mechanism(text: &str) -> Mechanism {
    parse_mechanism(text, "box.toml")
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism
}

fn run(mech: &Mechanism, conditions: BoxConditions, c0: &[f64], times: &[f64]) -> Profiles {
    let kinetics = Kinetics::compile(mech).unwrap();
    let mut options = IntegrationOptions::new(c0.len());
    options.relative_tolerance = 1e-10;
    options.absolute_tolerances_mol_per_m3 = vec![1e-14; c0.len()];
    let model = ReactorModel {
        conditions,
        ..Default::default()
    };
    simulate(&kinetics, &model, 298.0, c0, times, &options).unwrap_or_else(|e| panic!("{e}"))
}

const TWO_SPECIES: &str = "stoik_mechanism = 1\n[units]\nlength = \"m\"\n[[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n[[step]]\nequation = \"A -> B\"\nforward = { prefactor = 0.5 }\n";

/// dc/dt = E - d c for a species no step consumes (B here, fed by A -> B at rate k c_A):
/// with c_A = c_A0 exp(-k t), c_B solves a linear first-order equation. Closed form
/// (integrating factor, textbook): c_B = E/d (1 - e^{-dt}) + c_B0 e^{-dt}
/// + k c_A0 (e^{-kt} - e^{-dt}) / (d - k).
#[test]
fn emission_and_deposition_follow_the_linear_closed_form() {
    let mech = mechanism(TWO_SPECIES);
    let (k, e, d) = (0.5, 0.3, 0.2);
    let conditions = BoxConditions {
        emissions: vec![(1, e)],
        deposition: vec![(1, d)],
        ..Default::default()
    };
    let times: Vec<f64> = (0..=20).map(|i| i as f64 * 0.5).collect();
    let p = run(&mech, conditions, &[2.0, 1.0], &times);
    for (row, &t) in times.iter().enumerate() {
        let expected = e / d * (1.0 - (-d * t).exp())
            + (-d * t).exp()
            + k * 2.0 * ((-k * t).exp() - (-d * t).exp()) / (d - k);
        let got = p.concentrations_mol_per_m3[row][1];
        assert!(
            (got - expected).abs() < 1e-8 * expected.abs().max(1.0),
            "t {t}: {got} vs {expected}"
        );
    }
}

/// A + F -> B with F held fixed: pseudo-first order, c_A = c_A0 exp(-k c_F t) (textbook
/// isolation method), and c_F never moves.
#[test]
fn fixed_species_make_a_step_pseudo_first_order() {
    let text = "stoik_mechanism = 1\n[units]\nlength = \"m\"\n[[species]]\nname = \"A\"\n[[species]]\nname = \"F\"\n[[species]]\nname = \"B\"\n[[step]]\nequation = \"A + F -> B\"\nforward = { prefactor = 0.01 }\n";
    let mech = mechanism(text);
    let conditions = BoxConditions {
        fixed_species: vec![1],
        ..Default::default()
    };
    let times = [0.0, 0.5, 1.0, 2.0, 4.0];
    let p = run(&mech, conditions, &[3.0, 50.0, 0.0], &times);
    for (row, &t) in times.iter().enumerate() {
        let c = &p.concentrations_mol_per_m3[row];
        let expected = 3.0 * (-0.01 * 50.0 * t).exp();
        assert!(((c[0] - expected) / expected).abs() < 1e-8, "t {t}");
        assert_eq!(c[1], 50.0);
    }
}

/// A -> B at the photolysis rate J(t) = J1 t / T1 (table 0 -> J1 over [0, T1], held after):
/// c_A = c_A0 exp(-int J dt), int_0^t J = J1 t^2 / (2 T1) for t <= T1 (exact calculus).
#[test]
fn tabulated_photolysis_rate_is_interpolated_linearly() {
    let mech = mechanism(TWO_SPECIES);
    let (j1, t1) = (0.4, 2.0);
    let conditions = BoxConditions {
        photolysis: vec![(
            0,
            PhotolysisRate {
                form: PhotolysisForm::Table {
                    times_s: vec![0.0, t1],
                    rates_per_s: vec![0.0, j1],
                },
                sun: None,
            },
        )],
        ..Default::default()
    };
    let times = [0.0, 0.5, 1.0, 2.0, 3.0];
    let p = run(&mech, conditions, &[1.0, 0.0], &times);
    for (row, &t) in times.iter().enumerate() {
        let integral = if t <= t1 {
            j1 * t * t / (2.0 * t1)
        } else {
            j1 * t1 / 2.0 + j1 * (t - t1)
        };
        let got = p.concentrations_mol_per_m3[row][0];
        assert!(((got - (-integral).exp()) / got).abs() < 1e-8, "t {t}");
    }
}

/// Solar geometry (spherical astronomy, e.g. Seinfeld & Pandis, *Atmospheric Chemistry and
/// Physics*): at solar noon chi = |phi - delta|, at midnight cos(chi) = -cos(phi + delta); the
/// sun rises at hour angle h0 with cos h0 = -tan(phi) tan(delta). The declination on day 172
/// is 23.45 deg sin(360 deg 456/365) = 23.45 deg (Cooper 1969 approximation).
#[test]
fn solar_zenith_angle_and_diurnal_photolysis() {
    let sun = Sun {
        latitude_deg: 48.0,
        day_of_year: 172.0,
        start_solar_time_s: 0.0,
    };
    let delta = solar_declination_rad(172.0);
    assert!(
        (delta.to_degrees() - 23.45 * (2.0 * std::f64::consts::PI * 456.0 / 365.0).sin()).abs()
            < 1e-12
    );
    let phi = 48f64.to_radians();
    assert!((cos_solar_zenith(&sun, 12.0 * 3600.0) - (phi - delta).cos()).abs() < 1e-12);
    assert!((cos_solar_zenith(&sun, 0.0) + (phi + delta).cos()).abs() < 1e-12);
    let h0 = (-phi.tan() * delta.tan()).acos();
    let sunrise_s = 12.0 * 3600.0 - h0 / (2.0 * std::f64::consts::PI) * 86_400.0;
    assert!(cos_solar_zenith(&sun, sunrise_s).abs() < 1e-12);
    // J = scale mu^m exp(-n / mu) by day, 0 by night.
    let rate = PhotolysisRate {
        form: PhotolysisForm::Diurnal {
            scale_per_s: 1e-2,
            cos_power: 0.25,
            sec_factor: 0.3,
        },
        sun: Some(sun),
    };
    let mu = (phi - delta).cos();
    let noon = 1e-2 * mu.powf(0.25) * (-0.3 / mu).exp();
    assert!((rate.rate_at(12.0 * 3600.0).unwrap() - noon).abs() < 1e-15);
    assert_eq!(rate.rate_at(sunrise_s - 60.0).unwrap(), 0.0);
    assert_eq!(rate.rate_at(86_400.0).unwrap(), 0.0);
    // The next day's noon: the declination has moved by one day only.
    let next = rate.rate_at(36.0 * 3600.0).unwrap();
    assert!((next / noon - 1.0).abs() < 1e-3, "{next} vs {noon}");
}

/// Conservation of the elements that fixed species do not carry: in the urban-air demo
/// mechanism with N2, O2 and H2O fixed and no emissions or deposition, carbon (carried only
/// by the organics) is conserved over three days of photochemistry.
#[test]
fn elements_not_carried_by_fixed_species_are_conserved() {
    let path = stoik_testsupport::mechanism_path("urban-box.toml");
    let mech = load_mechanism(&path)
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism;
    let index = |name: &str| {
        mech.species
            .iter()
            .position(|s| s.name == name)
            .unwrap_or_else(|| panic!("{name}"))
    };
    let per_cm3 = 1e6 / 6.02214076e23; // molecule/cm3 -> mol/m3
    let mut c0 = vec![0.0; mech.species.len()];
    for (name, x) in [
        ("N2", 1.92e19),
        ("O2", 5.16e18),
        ("H2O", 3.9e17),
        ("NO", 2.5e10),
        ("NO2", 2.5e11),
        ("O3", 7.4e11),
        ("RH", 2.5e12),
    ] {
        c0[index(name)] = x * per_cm3;
    }
    let sun = Sun {
        latitude_deg: 48.0,
        day_of_year: 172.0,
        start_solar_time_s: 0.0,
    };
    let conditions = BoxConditions {
        fixed_species: vec![index("N2"), index("O2"), index("H2O")],
        photolysis: vec![
            (
                0,
                PhotolysisRate {
                    form: PhotolysisForm::Diurnal {
                        scale_per_s: 1.165e-2,
                        cos_power: 0.244,
                        sec_factor: 0.267,
                    },
                    sun: Some(sun),
                },
            ),
            (
                3,
                PhotolysisRate {
                    form: PhotolysisForm::Diurnal {
                        scale_per_s: 6.073e-5,
                        cos_power: 1.743,
                        sec_factor: 0.474,
                    },
                    sun: Some(sun),
                },
            ),
        ],
        ..Default::default()
    };
    let times: Vec<f64> = (0..=72).map(|h| h as f64 * 3600.0).collect();
    let kinetics = Kinetics::compile(&mech).unwrap();
    let mut options = IntegrationOptions::new(c0.len());
    options.relative_tolerance = 1e-9;
    options.absolute_tolerances_mol_per_m3 = vec![1e-24; c0.len()];
    let p = simulate(
        &kinetics,
        &ReactorModel {
            conditions,
            ..Default::default()
        },
        298.0,
        &c0,
        &times,
        &options,
    )
    .unwrap_or_else(|e| panic!("{e}"));
    let carbon = mech
        .elements
        .iter()
        .position(|e| e.symbol == "C")
        .unwrap_or_else(|| panic!("carbon"));
    let c_start = mech.element_totals(&p.concentrations_mol_per_m3[0])[carbon];
    let mut drift: f64 = 0.0;
    for row in &p.concentrations_mol_per_m3 {
        drift = drift.max((mech.element_totals(row)[carbon] / c_start - 1.0).abs());
    }
    eprintln!("carbon drift over 72 h: {drift:.2e}");
    assert!(drift < 1e-9, "carbon drift {drift:e}");
    // The fixed species did not move, and the organic was attacked (the chemistry ran).
    let last = p
        .concentrations_mol_per_m3
        .last()
        .unwrap_or_else(|| panic!("rows"));
    assert_eq!(last[index("O2")], c0[index("O2")]);
    assert!(last[index("RH")] < 0.9 * c0[index("RH")]);
}
