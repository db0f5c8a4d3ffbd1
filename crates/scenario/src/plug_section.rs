//! `[plug_flow]`: a steady plug-flow tube (length, cross-section, flow rate, optional
//! pressure profile and wall heat exchange, output distances), read with located
//! diagnostics, and its resolution into the reactor's [`PlugFlow`] against a mechanism.

use crate::file::{MAX_GRID_POINTS, PRESSURE_RANGE_PA, TEMPERATURE_RANGE_K};
use crate::read::{quantity, require_in_range, require_positive, section, Converter};
use crate::sections::located_list;
use stoik_mechanism::{
    pressure_to_pa, show_number, temperature_to_k, Diagnostic, Mechanism, Report, SourceLocation,
    PRESSURE_UNITS, TEMPERATURE_UNITS,
};
use stoik_reactor::{AxialProfile, PlugFlow, WallExchange};
use toml::de::DeTable;

/// The keys of `[plug_flow]`.
const PLUG_KEYS: &[&str] = &[
    "length",
    "diameter",
    "area",
    "area_profile",
    "mass_flow",
    "inlet_velocity",
    "pressure_profile",
    "wall_heat_transfer_coefficient",
    "wall_temperature",
    "perimeter",
    "points",
    "distances",
];
/// Units of a length.
const LENGTH_UNITS: &[&str] = &["m", "cm", "mm"];
/// Units of an area.
const AREA_UNITS: &[&str] = &["m2", "cm2", "mm2"];
/// Units of a velocity.
const VELOCITY_UNITS: &[&str] = &["m/s", "cm/s"];
/// Units of a mass flow.
const MASS_FLOW_UNITS: &[&str] = &["kg/s", "g/s", "kg/h"];
/// Units of a heat-transfer coefficient.
const COEFFICIENT_UNITS: &[&str] = &["W/m2/K", "kW/m2/K"];

fn length_to_m(value: f64, unit: &str) -> Option<f64> {
    let factor = match unit {
        "m" => 1.0,
        "cm" => 1e-2,
        "mm" => 1e-3,
        _ => return None,
    };
    Some(value * factor)
}

fn area_to_m2(value: f64, unit: &str) -> Option<f64> {
    let factor = match unit {
        "m2" => 1.0,
        "cm2" => 1e-4,
        "mm2" => 1e-6,
        _ => return None,
    };
    Some(value * factor)
}

fn velocity_to_m_per_s(value: f64, unit: &str) -> Option<f64> {
    let factor = match unit {
        "m/s" => 1.0,
        "cm/s" => 1e-2,
        _ => return None,
    };
    Some(value * factor)
}

fn mass_flow_to_kg_per_s(value: f64, unit: &str) -> Option<f64> {
    let factor = match unit {
        "kg/s" => 1.0,
        "g/s" => 1e-3,
        "kg/h" => 1.0 / 3600.0,
        _ => return None,
    };
    Some(value * factor)
}

fn coefficient_to_si(value: f64, unit: &str) -> Option<f64> {
    let factor = match unit {
        "W/m2/K" => 1.0,
        "kW/m2/K" => 1e3,
        _ => return None,
    };
    Some(value * factor)
}

/// The cross-section as written.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum CrossSection {
    /// A circular tube of this diameter (m).
    Diameter(f64),
    /// A constant area (m2).
    Area(f64),
    /// Areas (m2) at distances (m), linear between.
    Profile(Vec<f64>, Vec<f64>),
}

/// How the flow rate is given.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum PlugRate {
    /// Mass flow rate (kg/s).
    Mass(f64),
    /// Velocity at the inlet (m/s): mdot = rho_in u_in A(0).
    InletVelocity(f64),
}

/// The wall as written: U (W/(m2 K)), T_wall (K), perimeter (m) if given.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct WallSpec {
    pub(crate) coefficient_w_per_m2_k: f64,
    pub(crate) temperature_k: f64,
    pub(crate) perimeter_m: Option<f64>,
}

/// What `[plug_flow]` says.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct PlugSpec {
    pub(crate) length_m: f64,
    pub(crate) section: CrossSection,
    pub(crate) rate: PlugRate,
    /// Pressures (Pa) at distances (m), and where the profile was written.
    pub(crate) pressure: Option<(Vec<f64>, Vec<f64>, SourceLocation)>,
    pub(crate) wall: Option<WallSpec>,
    /// Output distances (m): 0 first, the length last.
    pub(crate) distances_m: Vec<f64>,
    /// Where `[plug_flow]` is.
    pub(crate) at: SourceLocation,
}

/// Reads a profile `key = { distances = [...], <values> = [...] }`: at least one point, equal
/// lengths, distances from 0, strictly increasing; values checked by `check` (which reports
/// and returns `false` when one is bad). Returns the distances and values.
#[allow(clippy::too_many_arguments)]
fn read_profile(
    r: &mut Report<'_>,
    t: &DeTable<'_>,
    key: &str,
    values_key: &str,
    unit: &str,
    convert: Converter,
    accepted: &[&str],
    check: &mut dyn FnMut(&mut Report<'_>, f64, usize) -> bool,
) -> Option<(Vec<f64>, Vec<f64>)> {
    let value = t.get(key)?;
    let table = r.table(key, value)?;
    r.check_keys(table, &["distances", values_key], key);
    let at = value.span().start;
    let distances = located_list(
        r,
        table,
        at,
        key,
        "distances",
        "m",
        length_to_m,
        LENGTH_UNITS,
    );
    let values = located_list(r, table, at, key, values_key, unit, convert, accepted);
    let (distances, values) = (distances?, values?);
    if distances.is_empty() || distances.len() != values.len() {
        r.error(
            at,
            format!(
                "`{key}` needs as many {values_key} as distances (at least one), got {} and {}",
                values.len(),
                distances.len()
            ),
            None,
        );
        return None;
    }
    let mut ok = true;
    if distances[0].0 != 0.0 {
        r.error(
            distances[0].1,
            format!("the first distance of `{key}` must be 0 m (the inlet)"),
            None,
        );
        ok = false;
    }
    for (i, &(z, pos)) in distances.iter().enumerate() {
        if !z.is_finite() || (i > 0 && z <= distances[i - 1].0) {
            r.error(
                pos,
                format!(
                    "`{key}` distances must be finite and strictly increasing: {} m",
                    show_number(z)
                ),
                None,
            );
            ok = false;
        }
    }
    for &(x, pos) in &values {
        ok &= check(r, x, pos);
    }
    ok.then(|| {
        (
            distances.iter().map(|d| d.0).collect(),
            values.iter().map(|v| v.0).collect(),
        )
    })
}

/// Reads `[plug_flow]` (absent: `Some(None)`); `None` when it could not be read.
pub(crate) fn read_plug_flow(r: &mut Report<'_>, root: &DeTable<'_>) -> Option<Option<PlugSpec>> {
    if !root.contains_key("plug_flow") {
        return Some(None);
    }
    let at = root.get("plug_flow").map(|v| v.span().start).unwrap_or(0);
    let t = section(r, root, "plug_flow", PLUG_KEYS)?;
    let positive = |r: &mut Report<'_>, key: &str, unit: &str, convert: Converter, units| {
        let v = t.get(key)?;
        let x = quantity(r, key, v, unit, convert, units)?;
        require_positive(r, key, v, x)
    };
    let length = match t.get("length") {
        None => {
            r.error(
                at,
                "missing `length` in [plug_flow]",
                Some("e.g. length = \"1.5 m\"".to_string()),
            );
            None
        }
        Some(_) => positive(r, "length", "m", length_to_m, LENGTH_UNITS),
    };
    // The cross-section: exactly one of three keys.
    let given: Vec<&str> = ["diameter", "area", "area_profile"]
        .into_iter()
        .filter(|k| t.contains_key(*k))
        .collect();
    let section = match given.as_slice() {
        ["diameter"] => {
            positive(r, "diameter", "m", length_to_m, LENGTH_UNITS).map(CrossSection::Diameter)
        }
        ["area"] => positive(r, "area", "m2", area_to_m2, AREA_UNITS).map(CrossSection::Area),
        ["area_profile"] => {
            let mut check = |r: &mut Report<'_>, x: f64, pos: usize| {
                if x.is_finite() && x > 0.0 {
                    true
                } else {
                    r.error(
                        pos,
                        format!(
                            "areas of `area_profile` must be finite and positive, got {} m2",
                            show_number(x)
                        ),
                        None,
                    );
                    false
                }
            };
            read_profile(
                r,
                t,
                "area_profile",
                "areas",
                "m2",
                area_to_m2,
                AREA_UNITS,
                &mut check,
            )
            .map(|(z, a)| CrossSection::Profile(z, a))
        }
        [] => {
            r.error(
                at,
                "[plug_flow] needs the cross-section: `diameter`, `area` or `area_profile`",
                Some("e.g. diameter = \"2 cm\"".to_string()),
            );
            None
        }
        _ => {
            let second = t.get(given[1]).map_or(at, |v| v.span().start);
            r.error(
                second,
                format!(
                    "give one cross-section in [plug_flow], not `{}` and `{}`",
                    given[0], given[1]
                ),
                None,
            );
            None
        }
    };
    let rate = match (t.get("mass_flow"), t.get("inlet_velocity")) {
        (Some(_), None) => positive(
            r,
            "mass_flow",
            "kg/s",
            mass_flow_to_kg_per_s,
            MASS_FLOW_UNITS,
        )
        .map(PlugRate::Mass),
        (None, Some(_)) => positive(
            r,
            "inlet_velocity",
            "m/s",
            velocity_to_m_per_s,
            VELOCITY_UNITS,
        )
        .map(PlugRate::InletVelocity),
        (Some(_), Some(v)) => {
            r.error(
                v.span().start,
                "give one flow rate in [plug_flow], not `mass_flow` and `inlet_velocity`",
                None,
            );
            None
        }
        (None, None) => {
            r.error(
                at,
                "[plug_flow] needs the flow rate: `mass_flow` or `inlet_velocity`",
                Some("e.g. mass_flow = \"2 g/s\"".to_string()),
            );
            None
        }
    };
    let pressure = match t.get_key_value("pressure_profile") {
        None => Some(None),
        Some((key, _)) => {
            let mut check = |r: &mut Report<'_>, x: f64, pos: usize| {
                require_in_range(r, "pressure", pos, x, PRESSURE_RANGE_PA, "Pa").is_some()
            };
            read_profile(
                r,
                t,
                "pressure_profile",
                "pressures",
                "Pa",
                pressure_to_pa,
                PRESSURE_UNITS,
                &mut check,
            )
            .map(|(z, p)| Some((z, p, r.location(key.span().start))))
        }
    };
    let wall_keys = ["wall_heat_transfer_coefficient", "wall_temperature"];
    let wall = match (t.get(wall_keys[0]), t.get(wall_keys[1])) {
        (None, None) => {
            if let Some(v) = t.get("perimeter") {
                r.error(
                    v.span().start,
                    "`perimeter` is the wall's: it needs `wall_heat_transfer_coefficient` and `wall_temperature`",
                    None,
                );
                None
            } else {
                Some(None)
            }
        }
        (Some(u), Some(tw)) => {
            let coefficient = quantity(
                r,
                wall_keys[0],
                u,
                "W/m2/K",
                coefficient_to_si,
                COEFFICIENT_UNITS,
            )
            .and_then(|x| {
                if x.is_finite() && x >= 0.0 {
                    Some(x)
                } else {
                    r.error(
                        u.span().start,
                        format!("`{}` must be finite and not negative", wall_keys[0]),
                        None,
                    );
                    None
                }
            });
            let temperature = quantity(
                r,
                wall_keys[1],
                tw,
                "K",
                temperature_to_k,
                TEMPERATURE_UNITS,
            )
            .and_then(|x| {
                require_in_range(
                    r,
                    wall_keys[1],
                    tw.span().start,
                    x,
                    TEMPERATURE_RANGE_K,
                    "K",
                )
            });
            let perimeter = match t.get("perimeter") {
                None => Some(None),
                Some(_) => positive(r, "perimeter", "m", length_to_m, LENGTH_UNITS).map(Some),
            };
            match (coefficient, temperature, perimeter) {
                (Some(c), Some(tk), Some(p)) => Some(Some(WallSpec {
                    coefficient_w_per_m2_k: c,
                    temperature_k: tk,
                    perimeter_m: p,
                })),
                _ => None,
            }
        }
        (Some(v), None) | (None, Some(v)) => {
            r.error(
                v.span().start,
                "wall heat exchange needs both `wall_heat_transfer_coefficient` and `wall_temperature`",
                None,
            );
            None
        }
    };
    let distances = read_distances(r, t, at, length);
    Some(Some(PlugSpec {
        length_m: length?,
        section: section?,
        rate: rate?,
        pressure: pressure?,
        wall: wall?,
        distances_m: distances?,
        at: r.location(at),
    }))
}

/// The output distances: `points` evenly spaced from 0 to the length (default 101), or a
/// `distances` list within [0, length] (0 and the length added when missing).
fn read_distances(
    r: &mut Report<'_>,
    t: &DeTable<'_>,
    at: usize,
    length: Option<f64>,
) -> Option<Vec<f64>> {
    match (t.get("points"), t.get("distances")) {
        (Some(_), Some(v)) => {
            r.error(
                v.span().start,
                "give either `points` or `distances` in [plug_flow], not both",
                None,
            );
            None
        }
        (Some(v), None) => {
            let n = r.count("points", v)?;
            if !(2..=MAX_GRID_POINTS).contains(&n) {
                r.error(
                    v.span().start,
                    format!("`points` must be between 2 and {MAX_GRID_POINTS}, got {n}"),
                    None,
                );
                return None;
            }
            let len = length?;
            let n = n as usize;
            // i/(n-1) first: len * i could overflow for a length near f64::MAX.
            Some((0..n).map(|i| len * (i as f64 / (n - 1) as f64)).collect())
        }
        (None, Some(_)) => {
            let list = located_list(
                r,
                t,
                at,
                "plug_flow",
                "distances",
                "m",
                length_to_m,
                LENGTH_UNITS,
            )?;
            let len = length?;
            let mut out = vec![0.0];
            let mut ok = true;
            for &(z, pos) in &list {
                if !(z.is_finite() && z >= 0.0 && z <= len) {
                    r.error(
                        pos,
                        format!(
                            "output distances must lie within [0, length = {} m], got {} m",
                            show_number(len),
                            show_number(z)
                        ),
                        None,
                    );
                    ok = false;
                } else if z > 0.0 {
                    if z <= out[out.len() - 1] {
                        r.error(pos, "output distances must increase strictly", None);
                        ok = false;
                    } else {
                        out.push(z);
                    }
                }
            }
            if out[out.len() - 1] < len {
                out.push(len);
            }
            ok.then_some(out)
        }
        (None, None) => {
            let len = length?;
            Some((0..101).map(|i| len * (i as f64 / 100.0)).collect())
        }
    }
}

/// The reactor's plug flow of `spec` for `mechanism`, with the inlet state `initial` (mol/m3)
/// at `temperature_k` (K): molar masses from the species' elements, the mass flow from the
/// inlet density when a velocity is given, the pressure profile checked against the inlet
/// pressure sum(c) R T. `None` after recording the problems at `[plug_flow]`.
pub(crate) fn plug_flow(
    file: &str,
    mechanism: &Mechanism,
    spec: &PlugSpec,
    initial: &[f64],
    temperature_k: f64,
    diagnostics: &mut Vec<Diagnostic>,
) -> Option<PlugFlow> {
    let mut error = |at: SourceLocation, message: String| {
        diagnostics.push(Diagnostic::error(file, Some(at), message));
    };
    let mut masses = Vec::with_capacity(mechanism.species.len());
    for (i, s) in mechanism.species.iter().enumerate() {
        match mechanism.molar_mass_kg_per_mol(i) {
            Some(m) if m > 0.0 => masses.push(m),
            _ => {
                error(
                    spec.at,
                    format!(
                        "a plug flow needs every species' molar mass (the gas density), but species `{}` has no elements",
                        s.name
                    ),
                );
                return None;
            }
        }
    }
    let area = match &spec.section {
        CrossSection::Diameter(d) => {
            AxialProfile::constant("area", std::f64::consts::PI * d * d / 4.0)
        }
        CrossSection::Area(a) => AxialProfile::constant("area", *a),
        CrossSection::Profile(z, a) => AxialProfile::new("area", z.clone(), a.clone()),
    };
    let area = match area {
        Ok(a) => a,
        Err(e) => {
            error(spec.at, e.to_string());
            return None;
        }
    };
    let density: f64 = initial.iter().zip(&masses).map(|(c, m)| c * m).sum();
    if !(density.is_finite() && density > 0.0) {
        error(
            spec.at,
            "a plug flow needs an inlet of positive density (the initial state is empty)".into(),
        );
        return None;
    }
    let mass_flow = match spec.rate {
        PlugRate::Mass(m) => m,
        PlugRate::InletVelocity(u) => density * u * area.value_at(0.0),
    };
    let mut plug = match PlugFlow::new(mass_flow, area, masses) {
        Ok(p) => p,
        Err(e) => {
            error(spec.at, e.to_string());
            return None;
        }
    };
    if let Some((z, p, at)) = &spec.pressure {
        let inlet_pa: f64 =
            initial.iter().sum::<f64>() * stoik_mechanism::GAS_CONSTANT * temperature_k;
        if (p[0] - inlet_pa).abs() > 1e-6 * inlet_pa {
            error(
                *at,
                format!(
                    "the pressure profile starts at {} Pa but the inlet is at {} Pa (sum(c) R T of [initial] and [reactor]); they must agree within 1e-6",
                    show_number(p[0]),
                    // Nine significant digits: the rounding of R T does not show.
                    show_number(format!("{inlet_pa:.8e}").parse().unwrap_or(inlet_pa))
                ),
            );
            return None;
        }
        match AxialProfile::new("pressure", z.clone(), p.clone()) {
            Ok(profile) => plug = plug.with_pressure_profile(profile),
            Err(e) => {
                error(*at, e.to_string());
                return None;
            }
        }
    }
    if let Some(w) = spec.wall {
        match WallExchange::new(w.coefficient_w_per_m2_k, w.temperature_k, w.perimeter_m) {
            Ok(wall) => plug = plug.with_wall(wall),
            Err(e) => {
                error(spec.at, e.to_string());
                return None;
            }
        }
    }
    Some(plug)
}
