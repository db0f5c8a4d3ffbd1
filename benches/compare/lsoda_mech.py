"""A generated mass-action benchmark mechanism (JSON of the shared generator, e.g. synth20)
integrated with compiled LSODA (PyPI numbalsoda; right-hand side compiled with numba),
rtol 1e-6, atol 1e-10, from t = 0 to the mechanism's t_end: the LSODA baseline of stoik's
`scale/NAME` bench for small mechanisms (issue 16: per-run overhead).

The right-hand side loops over the reactions of the JSON file (rate constant k times the
product of the reactant concentrations; reactants consumed, products formed), with the
index arrays frozen into the compiled function. LSODA's Jacobian is its own finite-difference
one (numbalsoda passes no Jacobian), as in lsoda_robertson.py.

Times `runs` calls after one warm-up call, prints the median, and scores the end state
against stoik's tight reference ($BENCH_MECH_DIR/ref/NAME.txt, written by the scale bench)
when present. Writes $BENCH_MECH_DIR/lsoda-NAME.json.

usage: python3 lsoda_mech.py NAME [runs]      (default 200 runs)
"""
import json
import os
import sys
import time

import numpy as np
from numba import cfunc, njit
from numbalsoda import lsoda, lsoda_sig

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.environ.get("BENCH_MECH_DIR", os.path.join(HERE, "..", "..", "target", "bench-mech"))
RTOL, ATOL = 1e-6, 1e-10


def compile_rhs(mech):
    reactions = mech["reactions"]
    m = len(reactions)
    width_r = max(len(r["reactants"]) for r in reactions)
    width_p = max(max(len(r["products"]) for r in reactions), 1)
    reac = -np.ones((m, width_r), dtype=np.int64)
    prod = -np.ones((m, width_p), dtype=np.int64)
    k = np.zeros(m)
    for j, r in enumerate(reactions):
        reac[j, : len(r["reactants"])] = r["reactants"]
        prod[j, : len(r["products"])] = r["products"]
        k[j] = r["k"]
    n = mech["n_species"]

    @njit(cache=False)
    def rhs_impl(y, dy):
        for i in range(n):
            dy[i] = 0.0
        for j in range(m):
            q = k[j]
            for a in range(width_r):
                s = reac[j, a]
                if s >= 0:
                    q *= y[s]
            for a in range(width_r):
                s = reac[j, a]
                if s >= 0:
                    dy[s] -= q
            for a in range(width_p):
                s = prod[j, a]
                if s >= 0:
                    dy[s] += q

    @cfunc(lsoda_sig)
    def rhs(t, y, dy, p):
        rhs_impl(y, dy)

    return rhs


def main():
    name = sys.argv[1]
    runs = int(sys.argv[2]) if len(sys.argv) > 2 else 200
    mech = json.load(open(os.path.join(OUT, "mech", name + ".json")))
    fp = compile_rhs(mech).address
    y0 = np.array(mech["y0"], dtype=float)
    t_eval = np.array([0.0, float(mech["t_end"])])
    usol, ok = lsoda(fp, y0, t_eval, rtol=RTOL, atol=ATOL)
    assert ok, "LSODA failed"
    times = []
    for _ in range(runs):
        t0 = time.perf_counter()
        usol, ok = lsoda(fp, y0, t_eval, rtol=RTOL, atol=ATOL)
        times.append(time.perf_counter() - t0)
    times.sort()
    median = times[len(times) // 2]
    y = usol[-1]
    result = {"runs": runs, "median_s": median, "min_s": times[0], "ok": bool(ok),
              "y_end": [float(v) for v in y]}
    ref_path = os.path.join(OUT, "ref", name + ".txt")
    if os.path.exists(ref_path):
        ref = np.array([float(l) for l in open(ref_path) if not l.startswith("#")])
        mask = np.abs(ref) > 1e-8 * np.abs(ref).max()
        result["max_relative_error"] = float(np.max(np.abs((y[mask] - ref[mask]) / ref[mask])))
    print("LSODA %s: median %.4f ms over %d runs, max rel. error %s"
          % (name, median * 1e3, runs, result.get("max_relative_error", "n/a (no reference)")))
    os.makedirs(OUT, exist_ok=True)
    with open(os.path.join(OUT, "lsoda-%s.json" % name), "w") as f:
        json.dump(result, f, indent=1)


if __name__ == "__main__":
    main()
