"""Writes the plain-text twin read by cvode_bench (format at the top of
the baseline generator bench/mech.py (under $STOIK_SHARED_DIR)) of a simple stoik scenario: SI units (mol, m, s), one-way steps
with at most 2 reactant and 3 product molecules, plain prefactors (no temperature
dependence, third bodies or orders), initial concentrations as plain numbers in mol/m3.
Used for HIRES, which has no JSON twin.

usage: python3 stoik_to_txt.py SCENARIO.toml OUT.txt
"""
import os
import sys
import tomllib


def terms(side, index):
    out = []
    for t in side.split(" + "):
        t = t.strip()
        if not t:
            continue
        parts = t.split()
        c, name = (int(parts[0]), parts[1]) if len(parts) == 2 else (1, parts[0])
        out += [index[name]] * c
    return out


def main(scenario_path, out_path):
    with open(scenario_path, "rb") as f:
        scen = tomllib.load(f)
    mech_path = os.path.join(os.path.dirname(scenario_path), scen["mechanism"])
    with open(mech_path, "rb") as f:
        mech = tomllib.load(f)
    units = mech.get("units", {})
    assert units.get("amount", "mol") == "mol" and units.get("length") == "m" \
        and units.get("time", "s") == "s", "SI units only"
    names = [s["name"] for s in mech["species"]]
    index = {n: i for i, n in enumerate(names)}
    y0 = [0.0] * len(names)
    init = scen["initial"]
    assert init.get("concentration_unit", "mol/m3") == "mol/m3"
    for k, v in init["concentrations"].items():
        y0[index[k]] = float(v)
    t_end = float(str(scen["output"]["end_time"]).split()[0])
    lines = []
    for st in mech["step"]:
        left, right = st["equation"].split("->")
        r, p = terms(left, index), terms(right, index)
        fw = st["forward"]
        assert set(fw) == {"prefactor"} and "third_body" not in st and "reverse" not in st
        assert len(r) <= 2 and len(p) <= 3
        R, P = r + [-1] * (2 - len(r)), p + [-1] * (3 - len(p))
        lines.append("%d %d %d %d %d %d %d %.17g" % (len(r), R[0], R[1], len(p), P[0], P[1], P[2],
                                                    fw["prefactor"]))
    with open(out_path, "w") as f:
        f.write("%d %d %.17g\n" % (len(names), len(lines), t_end))
        f.write(" ".join("%.17g" % v for v in y0) + "\n")
        f.write("\n".join(lines) + "\n")


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])
