#!/usr/bin/env python3
"""Independent check of stoik's adiabatic constant-volume ignition delay.

Reads the hydrogen-oxygen mechanism, its thermo file and the scenario directly (tomllib),
builds the ideal-gas batch-reactor equations from them with numpy, integrates them with
scipy's Radau solver and locates the ignition delay (time of the maximum of dT/dt). Then it
runs the stoik binary on the same scenario and asserts that both delays agree within 0.5 %.
Nothing from stoik is imported or reused; the equations come from docs/file-format.md.

Usage (from anywhere; paths are resolved from the repository root):
    python3 tests/scipy/ignition_check.py [STOIK_BINARY] [--scipy-only] [--stoik-atol A]

Exit status: 0 agreement (or --scipy-only checks passed), 1 disagreement or failed check.
Dependencies: Python >= 3.11 (tomllib), numpy, scipy.
"""

import argparse
import math
import os
import re
import subprocess
import sys
import tempfile
import time
import tomllib

import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import minimize_scalar

# Physical constants (SI, exact 2019 values; "common practice").
R = 8.314462618  # J/(mol K)
N_A = 6.02214076e23  # 1/mol
P_STD = 1.0e5  # Pa, standard pressure of the thermochemistry

REPO = os.path.abspath(os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", ".."))
DEFAULT_SCENARIO = os.path.join(REPO, "mechanisms", "hydrogen-oxygen.scenario.toml")
DEFAULT_MECHANISM = os.path.join(REPO, "mechanisms", "hydrogen-oxygen.toml")
TOLERANCE = 0.005  # relative agreement required between the two ignition delays

# ---------------------------------------------------------------------------------------------
# Units (docs/file-format.md, "[units]" and "Quantities")
# ---------------------------------------------------------------------------------------------
AMOUNT = {"mol": 1.0, "molecule": 1.0 / N_A}
LENGTH = {"cm": 1.0e-2, "m": 1.0}
TIME_RATE = {"s": 1.0, "ms": 1.0e-3, "min": 60.0, "h": 3600.0}
ENERGY = {"J/mol": 1.0, "kJ/mol": 1.0e3, "cal/mol": 4.184, "kcal/mol": 4184.0, "K": R}

Q_UNITS = {
    "temperature": {"K": (1.0, 0.0), "C": (1.0, 273.15)},
    "pressure": {
        "Pa": (1.0, 0.0),
        "kPa": (1.0e3, 0.0),
        "MPa": (1.0e6, 0.0),
        "bar": (1.0e5, 0.0),
        "atm": (101325.0, 0.0),
        "Torr": (101325.0 / 760.0, 0.0),
    },
    "time": {
        "s": (1.0, 0.0),
        "ms": (1.0e-3, 0.0),
        "us": (1.0e-6, 0.0),
        "min": (60.0, 0.0),
        "h": (3600.0, 0.0),
    },
}


def quantity(value, kind):
    """A plain number (SI) or a string "VALUE UNIT" -> SI float."""
    if isinstance(value, (int, float)):
        return float(value)
    parts = str(value).split()
    if len(parts) != 2 or parts[1] not in Q_UNITS[kind]:
        raise ValueError(f"cannot read {kind} quantity {value!r}")
    scale, offset = Q_UNITS[kind][parts[1]]
    return float(parts[0]) * scale + offset


# ---------------------------------------------------------------------------------------------
# Scenario
# ---------------------------------------------------------------------------------------------
def load_scenario(path):
    """Returns dict(mechanism, T0, P0, x, end_time, source)."""
    if path is not None and os.path.exists(path):
        with open(path, "rb") as f:
            doc = tomllib.load(f)
        reactor = doc.get("reactor", {})
        kind = reactor.get("kind", "isothermal-constant-volume")
        if kind != "adiabatic-constant-volume":
            raise ValueError(f"{path}: reactor kind {kind!r}, this check needs adiabatic-constant-volume")
        criterion = doc.get("ignition", {}).get("criterion", "max-temperature-rate")
        if criterion != "max-temperature-rate":
            raise ValueError(f"{path}: [ignition] criterion {criterion!r}, this check compares max-temperature-rate")
        initial = doc.get("initial", {})
        if "mole_fractions" not in initial:
            raise ValueError(f"{path}: this check needs [initial] mole_fractions")
        return {
            "mechanism": os.path.join(os.path.dirname(os.path.abspath(path)), doc["mechanism"]),
            "T0": quantity(reactor["temperature"], "temperature"),
            "P0": quantity(reactor["pressure"], "pressure"),
            "x": {k: float(v) for k, v in initial["mole_fractions"].items()},
            "end_time": quantity(doc["output"]["end_time"], "time"),
            "source": path,
        }
    return {
        "mechanism": DEFAULT_MECHANISM,
        "T0": 1100.0,
        "P0": 101325.0,
        "x": {"H2": 0.10, "O2": 0.05, "AR": 0.85},
        "end_time": 2.0e-3,
        "source": "built-in defaults (scenario file not found)",
    }


# ---------------------------------------------------------------------------------------------
# Mechanism
# ---------------------------------------------------------------------------------------------
ARROWS = [("<=>", True), ("⇌", True), ("->", False), ("→", False)]


def parse_side(text, names):
    """'2 OH + H2' -> {name: coefficient}; repeats add up."""
    out = {}
    text = text.strip()
    if not text:
        return out
    for term in re.split(r"\s+\+\s+", text):
        tokens = term.split()
        if len(tokens) == 2:
            coef, name = float(tokens[0]), tokens[1]
        elif len(tokens) == 1:
            tok = tokens[0]
            m = re.match(r"^([0-9]+(?:\.[0-9]*)?|\.[0-9]+)(.+)$", tok)
            if tok in names:
                coef, name = 1.0, tok
            elif m and m.group(2) in names:
                coef, name = float(m.group(1)), m.group(2)
            else:
                raise ValueError(f"unknown species {tok!r}")
        else:
            raise ValueError(f"cannot read term {term!r}")
        if name not in names:
            raise ValueError(f"unknown species {name!r}")
        out[name] = out.get(name, 0.0) + coef
    return out


def parse_equation(eq, names):
    for arrow, reversible in ARROWS:
        pieces = re.split(r"(?:^|\s)" + re.escape(arrow) + r"(?:\s|$)", eq)
        if len(pieces) == 2:
            return parse_side(pieces[0], names), parse_side(pieces[1], names), reversible
    raise ValueError(f"cannot read equation {eq!r}")


def arrhenius_si(params, order, units):
    """(A_SI, n, Ea_SI) of a `forward`/`reverse` table, A converted for the given overall order."""
    c_factor = AMOUNT[units["amount"]] / LENGTH[units["length"]] ** 3
    a = float(params["prefactor"]) * c_factor ** (1.0 - order) / TIME_RATE[units["time"]]
    n = float(params.get("temperature_exponent", 0.0))
    ea = float(params.get("activation_energy", 0.0)) * ENERGY[units["activation_energy"]]
    return a, n, ea


class Mechanism:
    """Dense numpy representation of the mechanism (SI units)."""

    def __init__(self, path):
        with open(path, "rb") as f:
            doc = tomllib.load(f)
        folder = os.path.dirname(os.path.abspath(path))
        self.title = doc.get("title", "")
        self.names = [s["name"] for s in doc["species"]]
        self.index = {n: i for i, n in enumerate(self.names)}
        ns = len(self.names)
        self.atoms = [s.get("atoms", {}) for s in doc["species"]]

        # Thermochemistry: inline table wins, else thermo_files.
        from_files = {}
        for rel in doc.get("thermo_files", []):
            with open(os.path.join(folder, rel), "rb") as f:
                tdoc = tomllib.load(f)
            for s in tdoc.get("species", []):
                from_files[s["name"]] = s
        self.t_mid = np.zeros(ns)
        self.a_low = np.zeros((ns, 7))
        self.a_high = np.zeros((ns, 7))
        for i, s in enumerate(doc["species"]):
            th = s.get("thermo", from_files.get(s["name"]))
            if th is None:
                raise ValueError(f"species {s['name']} has no thermochemistry (needed for the energy equation)")
            self.t_mid[i] = th["temperature_ranges_k"][1]
            self.a_low[i] = th["coefficients_low"]
            self.a_high[i] = th["coefficients_high"]

        base_units = {"amount": "mol", "length": "cm", "time": "s", "activation_energy": "J/mol"}
        base_units.update(doc.get("units", {}))

        steps = doc["step"]
        nr = len(steps)
        self.nu_f = np.zeros((nr, ns))  # reactant coefficients
        self.nu_r = np.zeros((nr, ns))  # product coefficients
        self.ord_f = np.zeros((nr, ns))  # forward orders (reaction_orders may replace)
        self.eff = np.zeros((nr, ns))  # third-body efficiencies
        self.has_tb = np.zeros(nr, dtype=bool)
        # Falloff steps (docs/file-format.md): forward is kinf, k0 = falloff.low_pressure
        # (one order higher), F from the Troe form (Gilbert, Luther & Troe 1983) or 1.
        self.is_falloff = np.zeros(nr, dtype=bool)
        self.k0_par = np.zeros((nr, 3))
        self.troe = np.full((nr, 4), np.nan)  # a, T3, T1, T2 (NaN: absent / Lindemann)
        self.kf_par = np.zeros((nr, 3))
        self.kr_par = np.zeros((nr, 3))
        self.rev_mode = np.zeros(nr, dtype=int)  # 0 none, 1 explicit, 2 thermochemical
        self.equations = []
        for j, st in enumerate(steps):
            units = dict(base_units)
            units.update(st.get("units", {}))
            reac, prod, reversible = parse_equation(st["equation"], self.index)
            self.equations.append(st["equation"])
            for n, c in reac.items():
                self.nu_f[j, self.index[n]] = c
                self.ord_f[j, self.index[n]] = c
            for n, c in prod.items():
                self.nu_r[j, self.index[n]] = c
            for n, o in st.get("reaction_orders", {}).items():
                self.ord_f[j, self.index[n]] = float(o)
            tb = st.get("third_body")
            if tb is not None:
                self.has_tb[j] = True
                if "species" in tb:
                    self.eff[j, self.index[tb["species"]]] = 1.0
                else:
                    self.eff[j, :] = float(tb.get("default_efficiency", 1.0))
                    for n, e in tb.get("efficiency", {}).items():
                        self.eff[j, self.index[n]] = float(e)
            for key in ("chemically_activated", "termolecular_300k", "pressure_table"):
                if key in st:
                    raise ValueError(f"this check does not implement `{key}`")
            fo = st.get("falloff")
            extra = 1.0 if tb is not None and fo is None else 0.0
            if fo is not None:
                self.is_falloff[j] = True
                self.k0_par[j] = arrhenius_si(fo["low_pressure"], self.ord_f[j].sum() + 1.0, units)
                if fo["broadening"] == "troe":
                    tr = fo["troe"]
                    self.troe[j] = [tr["a"], tr["t3"], tr["t1"], tr.get("t2", np.nan)]
                elif fo["broadening"] != "lindemann":
                    raise ValueError(f"this check does not implement broadening {fo['broadening']!r}")
            self.kf_par[j] = arrhenius_si(st["forward"], self.ord_f[j].sum() + extra, units)
            if "reverse" in st:
                self.kr_par[j] = arrhenius_si(st["reverse"], self.nu_r[j].sum() + extra, units)
                self.rev_mode[j] = 1
            elif reversible:
                self.rev_mode[j] = 2
        self.nu = self.nu_r - self.nu_f  # net stoichiometry, steps x species
        self.dn = self.nu.sum(axis=1)
        self.thermo_rev = self.rev_mode == 2
        self.explicit_rev = self.rev_mode == 1
        self.ord_r = self.nu_r.copy()
        # Element matrix (elements x species) for the balance check.
        self.elements = sorted({e for a in self.atoms for e in a})
        self.elem = np.array([[float(a.get(e, 0.0)) for a in self.atoms] for e in self.elements])

    # NASA 7 polynomials ------------------------------------------------------------------
    def _coeffs(self, T):
        return np.where((T < self.t_mid)[:, None], self.a_low, self.a_high)

    def cp_R(self, T):
        a = self._coeffs(T)
        return a[:, 0] + T * (a[:, 1] + T * (a[:, 2] + T * (a[:, 3] + T * a[:, 4])))

    def h_RT(self, T):
        a = self._coeffs(T)
        return (
            a[:, 0]
            + T * (a[:, 1] / 2 + T * (a[:, 2] / 3 + T * (a[:, 3] / 4 + T * a[:, 4] / 5)))
            + a[:, 5] / T
        )

    def s_R(self, T):
        a = self._coeffs(T)
        return (
            a[:, 0] * math.log(T)
            + T * (a[:, 1] + T * (a[:, 2] / 2 + T * (a[:, 3] / 3 + T * a[:, 4] / 4)))
            + a[:, 6]
        )

    # Kinetics ------------------------------------------------------------------------------
    @staticmethod
    def _arrh(par, T):
        return par[:, 0] * T ** par[:, 1] * np.exp(-par[:, 2] / (R * T))

    def rate_constants(self, T):
        kf = self._arrh(self.kf_par, T)
        kr = np.zeros_like(kf)
        kr[self.explicit_rev] = self._arrh(self.kr_par[self.explicit_rev], T)
        g_RT = self.h_RT(T) - self.s_R(T)  # G0/(R T) per species
        dg_RT = self.nu @ g_RT
        kc = np.exp(-dg_RT) * (P_STD / (R * T)) ** self.dn
        kr = np.where(self.thermo_rev, kf / kc, kr)
        return kf, kr

    def progress(self, c, T):
        kf, kr = self.rate_constants(T)
        # Products of c^order with integer orders: negative c (solver noise) is fine.
        fwd = kf * np.prod(np.power(c[None, :], self.ord_f), axis=1)
        rev = kr * np.prod(np.power(c[None, :], self.ord_r), axis=1)
        q = fwd - rev
        m = np.where(self.has_tb, self.eff @ c, 1.0)
        if self.is_falloff.any():
            # kf = kinf Pr/(1+Pr) F with Pr = k0 [M]/kinf; kr = kf/Kc scales alike.
            k0 = self._arrh(self.k0_par, T)
            for j in np.flatnonzero(self.is_falloff):
                pr = k0[j] * m[j] / kf[j]
                f = 1.0
                a, t3, t1, t2 = self.troe[j]
                if not math.isnan(a):
                    fcent = (1 - a) * math.exp(-T / t3) + a * math.exp(-T / t1)
                    if not math.isnan(t2):
                        fcent += math.exp(-t2 / T)
                    lf = math.log10(fcent)
                    cc, nn = -0.4 - 0.67 * lf, 0.75 - 1.27 * lf
                    u = math.log10(max(pr, 1e-300)) + cc
                    f = 10.0 ** (lf / (1.0 + (u / (nn - 0.14 * u)) ** 2))
                m[j] = pr / (1.0 + pr) * f
        return m * q

    def production(self, c, T):
        return self.nu.T @ self.progress(c, T)  # mol/(m3 s)

    # Energy ------------------------------------------------------------------------------
    def u_molar(self, T):
        return (self.h_RT(T) - 1.0) * R * T  # J/mol

    def cv_molar(self, T):
        return (self.cp_R(T) - 1.0) * R  # J/(mol K)

    def rhs(self, t, y):
        c, T = y[:-1], y[-1]
        w = self.production(c, T)
        dT = -np.dot(self.u_molar(T), w) / np.dot(c, self.cv_molar(T))
        out = np.empty_like(y)
        out[:-1] = w
        out[-1] = dT
        return out

    def internal_energy(self, y):
        return float(np.dot(y[:-1], self.u_molar(y[-1])))  # J/m3


# ---------------------------------------------------------------------------------------------
# scipy solution and ignition delay
# ---------------------------------------------------------------------------------------------
def solve_scipy(mech, case, rtol=1e-11):
    ns = len(mech.names)
    c_tot = case["P0"] / (R * case["T0"])
    c0 = np.zeros(ns)
    for n, x in case["x"].items():
        c0[mech.index[n]] = x * c_tot
    y0 = np.append(c0, case["T0"])
    # Radicals start at zero and grow over ~15 decades before ignition, so the absolute
    # tolerance on concentrations must be far below any value that matters for the induction
    # chemistry: 1e-20 mol/m3 (c_tot ~ 11 mol/m3). Temperature: 1e-9 K.
    atol = np.append(np.full(ns, 1e-20), 1e-9)
    t_end = case["end_time"]
    sol = solve_ivp(
        mech.rhs,
        (0.0, t_end),
        y0,
        method="Radau",
        rtol=rtol,
        atol=atol,
        dense_output=True,
        first_step=1e-12,
    )
    if not sol.success:
        raise RuntimeError(f"solve_ivp failed: {sol.message}")
    return sol, y0


def ignition_delay(mech, sol, t_end):
    """Time of the maximum of dT/dt, from the right-hand side evaluated on the dense output."""

    def dTdt(t):
        return mech.rhs(t, sol.sol(t))[-1]

    grid = np.linspace(0.0, t_end, 20001)
    vals = np.array([dTdt(t) for t in grid])
    k = int(np.argmax(vals))
    lo, hi = grid[max(k - 1, 0)], grid[min(k + 1, len(grid) - 1)]
    # Finer grid around the steepest region, then bounded refinement.
    fine = np.linspace(lo, hi, 2001)
    fvals = np.array([dTdt(t) for t in fine])
    kf = int(np.argmax(fvals))
    lo2, hi2 = fine[max(kf - 1, 0)], fine[min(kf + 1, len(fine) - 1)]
    res = minimize_scalar(lambda t: -dTdt(t), bounds=(lo2, hi2), method="bounded",
                          options={"xatol": 1e-10 * max(hi2, 1e-30)})
    t_ign = float(res.x)
    return t_ign, float(-res.fun), vals


def run_scipy(case, rtol=1e-11, verbose=True):
    t0 = time.perf_counter()
    mech = Mechanism(case["mechanism"])
    sol, y0 = solve_scipy(mech, case, rtol=rtol)
    t_solve = time.perf_counter() - t0
    t_ign, dTmax, _ = ignition_delay(mech, sol, case["end_time"])
    t_total = time.perf_counter() - t0

    # Energy check: U = sum_i c_i u_i(T) is constant (closed, rigid, adiabatic).
    u0 = mech.internal_energy(y0)
    u_states = [mech.internal_energy(sol.y[:, i]) for i in range(sol.y.shape[1])]
    u_scale = float(np.dot(y0[:-1], np.abs(mech.u_molar(y0[-1]))))
    u_drift = max(abs(u - u0) for u in u_states) / u_scale
    # Element totals: E = A c is constant.
    e0 = mech.elem @ y0[:-1]
    # Relative to each element's total; an absent element (N here) is measured against the
    # largest total, so it reports concentration noise instead of dividing by zero.
    e_scale = np.maximum(e0, 1e-12 * e0.max())
    e_drift = np.max(np.abs(mech.elem @ sol.y[:-1, :] - e0[:, None]), axis=1) / e_scale
    c_min = float(sol.y[:-1, :].min())
    if verbose:
        print(f"case: {case['source']}")
        print(f"  mechanism {case['mechanism']}")
        print(f"  T0 = {case['T0']} K, P0 = {case['P0']} Pa, x = {case['x']}, end {case['end_time']} s")
        print(f"scipy Radau: rtol {rtol:g}, {sol.t.size - 1} steps, {sol.nfev} f-evaluations, "
              f"{sol.njev} Jacobians, {sol.nlu} LU; solve {t_solve:.2f} s, total {t_total:.2f} s")
        print(f"  final T = {sol.y[-1, -1]:.4f} K, max dT/dt = {dTmax:.6e} K/s, "
              f"min concentration {c_min:.3e} mol/m3")
        print(f"  energy check: max |U - U0| / sum|c_i u_i| = {u_drift:.3e} "
              f"(U0 = {u0:.9e} J/m3)")
        for e, d in zip(mech.elements, e_drift):
            print(f"  element {e}: max relative drift {d:.3e}")
        print(f"  scipy ignition delay: {t_ign:.9e} s")
    return {"t_ign": t_ign, "u_drift": u_drift, "e_drift": float(e_drift.max()),
            "T_final": float(sol.y[-1, -1]), "seconds": t_total}


# ---------------------------------------------------------------------------------------------
# stoik side
# ---------------------------------------------------------------------------------------------
def default_binary():
    for rel in ("target/release/stoik", "target/debug/stoik"):
        p = os.path.join(REPO, rel)
        if os.path.exists(p):
            return p
    return os.path.join(REPO, "target/release/stoik")


def run_stoik(binary, scenario, atol=None):
    with tempfile.TemporaryDirectory() as tmp:
        cmd = [binary, "run", scenario, "--output", os.path.join(tmp, "h2.csv"), "--rtol", "1e-10"]
        if atol is not None:
            cmd += ["--atol-mol-per-m3", repr(atol)]
        t0 = time.perf_counter()
        try:
            proc = subprocess.run(cmd, cwd=REPO, capture_output=True, text=True)
        except OSError as e:
            print(f"FAIL: cannot run stoik binary {binary}: {e}", file=sys.stderr)
            sys.exit(1)
        secs = time.perf_counter() - t0
    text = proc.stdout + "\n" + proc.stderr
    m = re.search(r"ignition delay:\s*([-+0-9.eE]+)\s*s\b", text)
    if proc.returncode != 0 or m is None:
        print(f"stoik command: {' '.join(cmd)}", file=sys.stderr)
        print(f"exit status {proc.returncode}; output:\n{text}", file=sys.stderr)
        if m is None:
            print("FAIL: no line 'ignition delay: <value> s' in stoik's output", file=sys.stderr)
        sys.exit(1)
    print(f"stoik: {' '.join(cmd)} ({secs:.2f} s)")
    return float(m.group(1))


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("binary", nargs="?", default=None, help="stoik binary (default target/release/stoik, else target/debug/stoik)")
    ap.add_argument("--scenario", default=DEFAULT_SCENARIO)
    ap.add_argument("--scipy-only", action="store_true", help="solve with scipy only, no stoik run")
    ap.add_argument("--rtol", type=float, default=1e-11, help="scipy relative tolerance (default 1e-11)")
    ap.add_argument("--stoik-atol", type=float, default=None, help="pass --atol-mol-per-m3 to stoik")
    args = ap.parse_args()
    sys.stdout.reconfigure(line_buffering=True)

    case = load_scenario(args.scenario)
    res = run_scipy(case, rtol=args.rtol)
    ok = True
    # The integration error is set by rtol ~1e-11; allow a generous margin on the invariants.
    if res["u_drift"] > 1e-8:
        print(f"FAIL: internal energy drift {res['u_drift']:.3e} > 1e-8", file=sys.stderr)
        ok = False
    if res["e_drift"] > 1e-8:
        print(f"FAIL: element drift {res['e_drift']:.3e} > 1e-8", file=sys.stderr)
        ok = False
    if not (0.0 < res["t_ign"] < case["end_time"]):
        print("FAIL: no ignition inside the simulated time", file=sys.stderr)
        ok = False
    if args.scipy_only:
        return 0 if ok else 1
    if not os.path.exists(case["source"]):
        print(f"FAIL: scenario file {args.scenario} not found; stoik cannot be run", file=sys.stderr)
        return 1

    binary = args.binary or default_binary()
    t_stoik = run_stoik(binary, case["source"], args.stoik_atol)
    rel = abs(t_stoik - res["t_ign"]) / res["t_ign"]
    print(f"ignition delay: scipy {res['t_ign']:.6e} s, stoik {t_stoik:.6e} s, "
          f"relative difference {rel:.3e} (limit {TOLERANCE})")
    if rel > TOLERANCE:
        print(f"FAIL: ignition delays differ by {rel * 100:.3f} % (> {TOLERANCE * 100} %)", file=sys.stderr)
        ok = False
    if ok:
        print("OK")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
