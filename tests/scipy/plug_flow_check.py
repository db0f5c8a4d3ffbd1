#!/usr/bin/env python3
"""Independent check of stoik's plug-flow reactor on the hydrogen tube demo.

Reads the scenario (mechanisms/hydrogen-tube.scenario.toml) and its mechanism directly
(tomllib; the mechanism reader and rate expressions are those of ignition_check.py in this
folder, which share nothing with stoik), writes the steady plug flow with the DISTANCE z as
the independent variable (stoik integrates a parcel in its residence time instead):

    dn_i/dz = A w_i(c, T) / mdot                       n_i = c_i / rho, mol/kg
    dT/dz   = (-A sum_i h_i w_i + U p (T_wall - T)) / (mdot sum_i n_i cp_i)
    dt/dz   = rho A / mdot                             the residence time
    rho = P / (R T sum_i n_i),  c_i = rho n_i,  A = pi d^2 / 4,  p = pi d,  mdot = rho_in u_in A

(steady species and energy balances of an ideal plug flow of ideal gas at constant pressure;
O. Levenspiel, Chemical Reaction Engineering, 3rd ed., ch. 5 and 9), integrates them with
scipy's Radau, runs the stoik binary on the same scenario and compares, at stoik's output
distances, the residence time, the temperature and the distance where the temperature
first reaches 1400 K (linear interpolation between output rows on both sides).

Usage (from anywhere; paths are resolved from the repository root):
    python3 tests/scipy/plug_flow_check.py [STOIK_BINARY]

Exit status: 0 agreement, 1 disagreement or failed check.
Dependencies: Python >= 3.11 (tomllib), numpy, scipy.
"""

import csv
import math
import os
import subprocess
import sys
import tempfile
import tomllib

import numpy as np
from scipy.integrate import solve_ivp

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from ignition_check import R, REPO, Mechanism, default_binary, quantity  # noqa: E402

SCENARIO = os.path.join(REPO, "mechanisms", "hydrogen-tube.scenario.toml")
# IUPAC abridged standard atomic weights (2021), kg/mol, of the mechanism's elements.
ATOMIC_WEIGHT = {"H": 1.008e-3, "O": 15.999e-3, "N": 14.007e-3, "Ar": 39.95e-3, "AR": 39.95e-3}
LENGTH = {"m": 1.0, "cm": 1e-2, "mm": 1e-3}
TOL_TIME = 1e-7  # relative, residence time at every output distance
TOL_FRONT = 1e-6  # relative, distance where T first reaches 1400 K
TOL_T_SMOOTH = 1e-7  # relative, temperature away from the ignition front


def si(value, table):
    if isinstance(value, (int, float)):
        return float(value)
    number, unit = str(value).split()
    return float(number) * table[unit]


def scenario():
    with open(SCENARIO, "rb") as f:
        doc = tomllib.load(f)
    r, plug = doc["reactor"], doc["plug_flow"]
    assert r["kind"] == "adiabatic-constant-pressure", r["kind"]
    return {
        "mechanism": os.path.join(os.path.dirname(SCENARIO), doc["mechanism"]),
        "T0": quantity(r["temperature"], "temperature"),
        "P": quantity(r["pressure"], "pressure"),
        "x": {k: float(v) for k, v in doc["initial"]["mole_fractions"].items()},
        "L": si(plug["length"], LENGTH),
        "d": si(plug["diameter"], LENGTH),
        "u": si(plug["inlet_velocity"], {"m/s": 1.0}),
        "U": si(plug["wall_heat_transfer_coefficient"], {"W/m2/K": 1.0}),
        "Tw": quantity(plug["wall_temperature"], "temperature"),
        "points": int(plug["points"]),
    }


def solve(case, distances):
    mech = Mechanism(case["mechanism"])
    masses = np.array([sum(n * ATOMIC_WEIGHT[e] for e, n in a.items()) for a in mech.atoms])
    ns = len(mech.names)
    x = np.zeros(ns)
    for name, value in case["x"].items():
        x[mech.index[name]] = value
    c0 = x * case["P"] / (R * case["T0"])
    rho0 = float(c0 @ masses)
    area = math.pi * case["d"] ** 2 / 4
    perimeter = math.pi * case["d"]
    mdot = rho0 * case["u"] * area
    P, U, Tw = case["P"], case["U"], case["Tw"]

    def rhs(z, y):
        n, T = y[:ns], y[ns]
        rho = P / (R * T * n.sum())
        c = rho * n
        w = mech.production(c, T)
        h = mech.h_RT(T) * R * T
        cp = mech.cp_R(T) * R
        out = np.empty_like(y)
        out[:ns] = area * w / mdot
        out[ns] = (-area * float(h @ w) + U * perimeter * (Tw - T)) / (mdot * float(n @ cp))
        out[ns + 1] = rho * area / mdot
        return out

    y0 = np.concatenate([c0 / rho0, [case["T0"], 0.0]])
    sol = solve_ivp(rhs, (0.0, case["L"]), y0, method="Radau", rtol=1e-11,
                    atol=np.concatenate([np.full(ns, 1e-16), [1e-9, 1e-15]]),
                    t_eval=distances, dense_output=False)
    if not sol.success:
        raise RuntimeError(sol.message)
    return {"T": sol.y[ns], "t": sol.y[ns + 1]}


def run_stoik(binary):
    with tempfile.TemporaryDirectory() as tmp:
        out = os.path.join(tmp, "tube.csv")
        cmd = [binary, "run", SCENARIO, "--output", out, "--rtol", "1e-11", "--quiet"]
        proc = subprocess.run(cmd, cwd=REPO, capture_output=True, text=True)
        if proc.returncode != 0:
            print(f"FAIL: {' '.join(cmd)} exited {proc.returncode}:\n{proc.stderr}", file=sys.stderr)
            sys.exit(1)
        with open(out, newline="") as f:
            rows = list(csv.reader(f))
    header, data = rows[0], np.array([[float(v) for v in r] for r in rows[1:]])
    col = {name: i for i, name in enumerate(header)}
    return {
        "z": data[:, col["distance [m]"]],
        "t": data[:, col["residence time [s]"]],
        "T": data[:, col["temperature [K]"]],
    }


def first_reaching(z, T, level):
    i = int(np.argmax(T >= level))
    if T[i] < level or i == 0:
        return float("nan")
    return z[i - 1] + (level - T[i - 1]) * (z[i] - z[i - 1]) / (T[i] - T[i - 1])


def main():
    binary = sys.argv[1] if len(sys.argv) > 1 else default_binary()
    case = scenario()
    s = run_stoik(binary)
    ref = solve(case, s["z"])
    ok = True
    t_err = np.max(np.abs(s["t"][1:] - ref["t"][1:]) / ref["t"][1:])
    front_s, front_ref = first_reaching(s["z"], s["T"], 1400.0), first_reaching(s["z"], ref["T"], 1400.0)
    front_err = abs(front_s - front_ref) / front_ref
    # Away from the front (where T changes by less than 1 K per output row on both sides).
    dT = np.abs(np.diff(ref["T"]))
    smooth = np.concatenate([[True], dT < 1.0]) & np.concatenate([dT < 1.0, [True]])
    T_err = np.max(np.abs(s["T"][smooth] - ref["T"][smooth]) / ref["T"][smooth])
    print(f"residence time: largest relative difference {t_err:.2e} (limit {TOL_TIME:.0e})")
    print(f"T = 1400 K at z = {front_s:.9f} m (stoik), {front_ref:.9f} m (scipy): "
          f"relative difference {front_err:.2e} (limit {TOL_FRONT:.0e})")
    print(f"temperature away from the front ({smooth.sum()} of {len(smooth)} rows): largest "
          f"relative difference {T_err:.2e} (limit {TOL_T_SMOOTH:.0e})")
    for name, err, tol in [("residence time", t_err, TOL_TIME), ("ignition front", front_err, TOL_FRONT),
                           ("temperature", T_err, TOL_T_SMOOTH)]:
        if not err <= tol:
            print(f"FAIL: {name} differs by {err:.3e} > {tol:.0e}", file=sys.stderr)
            ok = False
    print("OK" if ok else "FAILED")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
