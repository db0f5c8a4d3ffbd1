"""Builds target/bench-mech/table.md from run.sh's measurements.

Reads (all under the folder given, default target/bench-mech): runs.tsv (one line per
measurement: case, program, alternation, seconds, CVODE's counters), stoik-stats.json (the
scale bench's statistics and accuracy), ref/CASE.txt (stoik's tight-tolerance end state),
cvode-y/CASE.txt (CVODE's end state of the last alternation) and lsoda-robertson.json.
Accuracy = largest relative error at t_end over species with |y_ref| > 1e-8 max|y_ref|.

usage: python3 table.py [FOLDER]
"""
import csv
import json
import os
import statistics
import sys

ORDER = ["robertson_1e5", "robertson_1e11", "hires", "synth50", "synth200", "synth1000",
         "random1000", "synth5000", "synth10000"]


def fmt_time(s):
    if s is None:
        return "-"
    if s < 1e-3:
        return "%.3g us" % (s * 1e6)
    if s < 1:
        return "%.3g ms" % (s * 1e3)
    return "%.3g s" % s if s < 100 else "%.0f s" % s


def read_vec(path):
    if not os.path.exists(path):
        return None
    return [float(l) for l in open(path) if l.strip() and not l.startswith("#")]


def max_rel_err(y, ref):
    if y is None or ref is None or len(y) != len(ref):
        return None
    scale = max(abs(v) for v in ref)
    errs = [abs((a - r) / r) for a, r in zip(y, ref) if abs(r) > 1e-8 * scale]
    return max(errs) if errs else 0.0


def fmt_err(e):
    return "-" if e is None else "%.1e" % e


def cvode_counts(detail):
    # "klu constr=0 steps 2498 rhs 4242 jac 122 lsetups 351 errfails 76 newton 4241 convfails 116"
    w = detail.split()
    d = {w[i]: w[i + 1] for i in range(len(w) - 1) if w[i] in
         ("steps", "rhs", "jac", "lsetups", "errfails", "newton", "convfails")}
    return d


def main(out):
    runs = {}
    notes = {}
    with open(os.path.join(out, "runs.tsv")) as f:
        for row in csv.DictReader(f, delimiter="\t"):
            if row["program"] == "cvode-failed":
                notes.setdefault(row["case"], set()).add(
                    "CVODE without the y >= 0 constraint: %s; the table's CVODE run uses it (CONSTR=1)"
                    % row["detail"].strip())
                continue
            runs.setdefault(row["case"], {}).setdefault(row["program"], []).append(row)
    stats = {}
    sp = os.path.join(out, "stoik-stats.json")
    if os.path.exists(sp):
        stats = json.load(open(sp))
    lines = [
        "| case | species | stoik | CVODE | stoik / CVODE | alternations | stoik: linear algebra, steps / LU | CVODE: solver, steps / LU set-ups | stoik error | CVODE error |",
        "|---|---:|---:|---:|---:|---:|---|---|---:|---:|",
    ]
    extra = []
    for case in ORDER + sorted(set(runs) - set(ORDER)):
        if case not in runs:
            continue
        r = runs[case]
        st = [float(x["seconds"]) for x in r.get("stoik", []) if x["seconds"]]
        cv = [float(x["seconds"]) for x in r.get("cvode", []) if x["seconds"] and not x["detail"].startswith("FAILED")]
        ms, mc = (statistics.median(st) if st else None), (statistics.median(cv) if cv else None)
        s = stats.get(case, {})
        ref = read_vec(os.path.join(out, "ref", case + ".txt"))
        e_cvode = max_rel_err(read_vec(os.path.join(out, "cvode-y", case + ".txt")), ref)
        last = r.get("cvode", [{}])[-1].get("detail", "")
        c = cvode_counts(last)
        solver = last.split()[0] if last else "-"
        if "constr=1" in last:
            solver += ", y >= 0"
        if last.startswith("FAILED"):
            solver = "FAILED " + solver
        stoik_work = "%s, %s / %s" % (s.get("linear_algebra", "-").lower(), s.get("steps", "-"),
                                      s.get("factorizations", "-")) if s.get("ok") else "failed"
        lines.append("| %s | %s | %s | %s | %s | %d / %d | %s | %s, %s / %s | %s | %s |" % (
            case, s.get("species", "-"), fmt_time(ms), fmt_time(mc),
            "%.2f" % (ms / mc) if ms and mc else "-", len(st), len(cv), stoik_work,
            solver, c.get("steps", "-"), c.get("lsetups", "-"),
            fmt_err(s.get("max_relative_error")), fmt_err(e_cvode)))
        for n in sorted(notes.get(case, ())):
            extra.append("- %s: %s" % (case, n))
        if s and s.get("most_negative_mol_per_m3", 0) < 0:
            extra.append("- %s: stoik's most negative concentration %.2g mol/m3" % (case, s["most_negative_mol_per_m3"]))
    lp = os.path.join(out, "lsoda-robertson.json")
    if os.path.exists(lp) and "robertson_1e5" in runs:
        lz = json.load(open(lp))
        st = [float(x["seconds"]) for x in runs["robertson_1e5"].get("stoik", [])]
        ms = statistics.median(st) if st else None
        lines.append("")
        lines.append("| case | stoik | LSODA (numbalsoda, numba right-hand side) | stoik / LSODA | stoik error | LSODA error |")
        lines.append("|---|---:|---:|---:|---:|---:|")
        lines.append("| robertson_1e5 | %s | %s (median of %d calls) | %s | %s | %s |" % (
            fmt_time(ms), fmt_time(lz["median_s"]), lz["runs"],
            "%.2f" % (ms / lz["median_s"]) if ms else "-",
            fmt_err(stats.get("robertson_1e5", {}).get("max_relative_error")),
            fmt_err(lz.get("max_relative_error"))))
    text = "\n".join(lines) + "\n"
    if extra:
        text += "\n" + "\n".join(extra) + "\n"
    with open(os.path.join(out, "table.md"), "w") as f:
        f.write(text)


if __name__ == "__main__":
    main(sys.argv[1] if len(sys.argv) > 1 else os.path.join(
        os.path.dirname(os.path.abspath(__file__)), "..", "..", "target", "bench-mech"))
