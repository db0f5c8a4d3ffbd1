"""Worst-case sparsity for the benchmark: mass-action steps whose partners are drawn uniformly
at random from all species (no hubs, no locality), so the Newton matrix has no band or block
structure and a sparse LU fills in heavily.

Writes NAME.json (the format documented at the top of the baseline generator bench/mech.py under $STOIK_SHARED_DIR: 0-based
indices, a repeated reactant is a coefficient of 2) and its plain-text twin NAME.txt into
$MECH_DIR (default ./mech), through mech.py's own `save`.

Shape: N species, each with an integer size 1..S; every step conserves sum(size_i * y_i), so
concentrations stay bounded and non-negative. Step kinds: isomerisation A -> B, decomposition
A -> B + C, association A + B -> C, exchange A + B -> C + D; every partner is drawn uniformly
among all species of the size the balance requires. About 3N steps, every species consumed by
at least one. Rate constants log-uniform: unimolecular 1e-4..1e6 /s, bimolecular 1e-1..1e9
/(mol/m3 s); y0 log-uniform 1e-6..1e-3 mol/m3; t_end = 1e3 s. Fixed seed: identical output on
every run.

usage: python3 random_partners.py [N]        (N = 1000 by default; name "random<N>")
"""
import os
import sys

import numpy as np

SHARED = os.environ.get("STOIK_SHARED_DIR")
if not SHARED:
    sys.exit("set STOIK_SHARED_DIR to the folder holding bench/mech.py")
sys.path.insert(0, os.path.join(SHARED, "bench"))
import mech  # noqa: E402  (the generator and writer of the shared baseline)

SEED = 20240607
S = 6


def random_partners(N, seed=SEED, t_end=1e3):
    rng = np.random.default_rng([seed, N])
    sizes = rng.integers(1, S + 1, N)
    classes = {s: np.flatnonzero(sizes == s) for s in range(1, S + 1)}

    def pick(s, exclude=-1):
        arr = classes.get(s)
        if arr is None or len(arr) == 0:
            return None
        for _ in range(20):
            j = int(rng.choice(arr))
            if j != exclude:
                return j
        return None

    def ku():
        return float(10.0 ** rng.uniform(-4, 6))

    def kb():
        return float(10.0 ** rng.uniform(-1, 9))

    def make(A):
        sA = int(sizes[A])
        u = rng.random()
        if u < 0.2:  # isomerisation A -> B
            B = pick(sA, A)
            return None if B is None else {"reactants": [A], "products": [B], "k": ku()}
        if u < 0.4:  # decomposition A -> B + C
            if sA < 2:
                return None
            sB = int(rng.integers(1, sA))
            B, C = pick(sB), pick(sA - sB)
            if B is None or C is None:
                return None
            return {"reactants": [A], "products": [B, C], "k": ku()}
        # bimolecular: a uniformly random partner of any size
        P = int(rng.integers(0, N))
        total = sA + int(sizes[P])
        if u < 0.6:  # association A + P -> C
            C = pick(total) if total <= S else None
            if C is None:
                return None
            return {"reactants": [A, P], "products": [C], "k": kb()}
        # exchange A + P -> C + D
        sC = int(rng.integers(max(1, total - S), min(S, total - 1) + 1))
        C, D = pick(sC), pick(total - sC)
        if C is None or D is None:
            return None
        return {"reactants": [A, P], "products": [C, D], "k": kb()}

    reactions = []
    for A in range(N):
        r = None
        while r is None:
            r = make(A)
        reactions.append(r)
    while len(reactions) < 3 * N:
        r = make(int(rng.integers(0, N)))
        if r is not None:
            reactions.append(r)
    for r in reactions:
        assert sum(sizes[j] for j in r["reactants"]) == sum(sizes[j] for j in r["products"])
    y0 = 10.0 ** rng.uniform(-6, -3, N)
    return {
        "name": "random%d" % N,
        "n_species": N,
        "species": ["R%d" % i for i in range(N)],
        "y0": [float(v) for v in y0],
        "t_end": t_end,
        "reactions": reactions,
        "generator": "stoik benches/compare/random_partners.py (N=%d, seed=%d, S=%d)" % (N, seed, S),
        "seed": seed,
        "conserved_weights": [int(s) for s in sizes],
        "note": "sum(conserved_weights[i]*y[i]) is invariant",
    }


if __name__ == "__main__":
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1000
    m = random_partners(n)
    mech.save(m, mech.MECH_DIR)
    print(m["name"], "N", n, "M", len(m["reactions"]))
