"""Robertson's problem to t = 1e5 with compiled LSODA (PyPI numbalsoda; numba-compiled
right-hand side), rtol 1e-6, atol 1e-10, y0 = (1, 0, 0): the baseline of stoik's
`scale/robertson_1e5` bench.

Times `runs` calls of lsoda (after one warm-up call that compiles nothing but touches the
caches), prints the median, and scores the end state against stoik's tight reference
($BENCH_MECH_DIR/ref/robertson_1e5.txt, written by the scale bench) when present. Writes
$BENCH_MECH_DIR/lsoda-robertson.json.

usage: python3 lsoda_robertson.py [runs]      (default 1000)
"""
import json
import os
import sys
import time

import numpy as np
from numba import cfunc
from numbalsoda import lsoda, lsoda_sig

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.environ.get("BENCH_MECH_DIR", os.path.join(HERE, "..", "..", "target", "bench-mech"))
RTOL, ATOL, T_END = 1e-6, 1e-10, 1e5


@cfunc(lsoda_sig)
def robertson(t, y, dy, p):
    r1 = 0.04 * y[0]
    r2 = 3e7 * y[1] * y[1]
    r3 = 1e4 * y[1] * y[2]
    dy[0] = -r1 + r3
    dy[1] = r1 - r2 - r3
    dy[2] = r2


def main():
    runs = int(sys.argv[1]) if len(sys.argv) > 1 else 1000
    fp = robertson.address
    y0 = np.array([1.0, 0.0, 0.0])
    t_eval = np.array([0.0, T_END])
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
    ref_path = os.path.join(OUT, "ref", "robertson_1e5.txt")
    if os.path.exists(ref_path):
        ref = np.array([float(l) for l in open(ref_path) if not l.startswith("#")])
        mask = np.abs(ref) > 1e-8 * np.abs(ref).max()
        result["max_relative_error"] = float(np.max(np.abs((y[mask] - ref[mask]) / ref[mask])))
    print("LSODA Robertson to 1e5: median %.4f ms over %d runs, y_end %s, max rel. error %s"
          % (median * 1e3, runs, y, result.get("max_relative_error", "n/a (no reference)")))
    os.makedirs(OUT, exist_ok=True)
    with open(os.path.join(OUT, "lsoda-robertson.json"), "w") as f:
        json.dump(result, f, indent=1)


if __name__ == "__main__":
    main()
