#!/usr/bin/env bash
# Runs stoik (the `scale` criterion bench) and compiled CVODE alternately on every benchmark
# mechanism, then writes the comparison table to target/bench-mech/table.md.
#
# usage: benches/compare/run.sh [CASE ...]       (default: every case below)
# Environment:
#   REPS=5         alternations for small and medium cases
#   BIG_REPS=3     alternations for synth5000 and synth10000
#   PLAIN=...      cases timed by one plain stoik run per alternation (STOIK_SCALE_RUNS=1)
#                  instead of a criterion invocation of 10+ runs; default: the cases with
#                  1,000 species or more
#   LSODA_RUNS=1000  calls timed by lsoda_robertson.py
#   BENCH_MECH_DIR, STOIK_SHARED_DIR: as for prepare.sh
#   SCALE_BIN      an already built scale bench executable (skips the cargo build)
#   STOIK_SCALE_LOOSEN=4  passed on to the scale bench: stoik requested 4x looser, so that its
#                  solver works to CVODE's tolerances (comparison at equal solver tolerances)
# Each alternation: one stoik measurement (a criterion median of 10 samples, or one plain run),
# then one CVODE run (`cvode_bench MECH.txt klu|dense 1e-6 1e-10 1 y.txt 0`; when that run
# fails, the case switches to CONSTR=1, the y >= 0 constraint, for every alternation). The
# table takes medians over the alternations.
set -euo pipefail

HERE="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
ROOT="$(cd "$HERE/../.." && pwd)"
OUT="${BENCH_MECH_DIR:-$ROOT/target/bench-mech}"
export BENCH_MECH_DIR="$OUT"
REPS="${REPS:-5}"
BIG_REPS="${BIG_REPS:-3}"
PLAIN="${PLAIN:-synth1000 random1000 synth5000 synth10000}"
PY="${PYTHON:-python3}"

# case : CVODE twin : CVODE linear solver
ALL_CASES="robertson_1e5:robertson:dense robertson_1e11:robertson_t1e+11:dense hires:hires:dense
synth50:synth50:klu synth200:synth200:klu synth1000:synth1000:klu random1000:random1000:klu
synth5000:synth5000:klu synth10000:synth10000:klu"

"$HERE/prepare.sh"
cd "$ROOT"
# Build once and run the executable directly: the measurements then cannot trigger rebuilds.
BENCH_BIN="${SCALE_BIN:-}"
[ -n "$BENCH_BIN" ] || BENCH_BIN="$(cargo bench --bench scale --no-run --message-format=json 2>/dev/null \
    | "$PY" -c 'import json,sys
for l in sys.stdin:
    m = json.loads(l)
    if m.get("reason") == "compiler-artifact" and m["target"]["name"] == "scale" and m.get("executable"):
        print(m["executable"])')"
[ -x "$BENCH_BIN" ] || { echo "error: could not build the scale bench" >&2; exit 1; }
echo "stoik bench executable: $BENCH_BIN ($(git rev-parse --short HEAD 2>/dev/null || echo 'no git')$(git diff --quiet HEAD -- crates 2>/dev/null || echo ', crates/ modified'))"

selected=()
for spec in $ALL_CASES; do
    name="${spec%%:*}"
    if [ $# -eq 0 ] || [[ " $* " == *" $name "* ]]; then selected+=("$spec"); fi
done

LOG="$OUT/run-log"
mkdir -p "$LOG" "$OUT/cvode-y"
RUNS="$OUT/runs.tsv"
[ -f "$RUNS" ] || printf 'case\tprogram\trep\tseconds\tdetail\n' > "$RUNS"

stoik_time() {  # case -> seconds of the last measurement
    local name="$1"
    if [[ " $PLAIN " == *" $name "* ]]; then
        cat "$OUT/stoik-time/$name.txt"
    else
        "$PY" -c "import json,sys; print(json.load(open(sys.argv[1]))['median']['point_estimate']*1e-9)" \
            "${CARGO_TARGET_DIR:-$ROOT/target}/criterion/scale/$name/new/estimates.json"
    fi
}

for spec in "${selected[@]}"; do
    IFS=: read -r name twin solver <<< "$spec"
    if [ ! -f "$OUT/mech/$twin.txt" ]; then echo "$name: no $OUT/mech/$twin.txt, skipped"; continue; fi
    # forget earlier measurements of this case
    grep -v -P "^\Q$name\E\t" "$RUNS" > "$RUNS.tmp" || true; mv "$RUNS.tmp" "$RUNS"
    echo "=== $name: statistics and tight reference (once)"
    STOIK_SCALE_STATS_ONLY=1 "$BENCH_BIN" --bench "scale/$name\$" 2>&1 | tee "$LOG/$name.stats.log" | grep -v '^$' | grep -v Gnuplot || true
    reps="$REPS"
    case "$name" in synth5000|synth10000) reps="$BIG_REPS" ;; esac
    constr=0
    for rep in $(seq 1 "$reps"); do
        if [[ " $PLAIN " == *" $name "* ]]; then
            STOIK_SCALE_NO_STATS=1 STOIK_SCALE_RUNS=1 "$BENCH_BIN" --bench "scale/$name\$" > "$LOG/$name.stoik.$rep.log" 2>&1
        else
            STOIK_SCALE_NO_STATS=1 "$BENCH_BIN" --bench "scale/$name\$" > "$LOG/$name.stoik.$rep.log" 2>&1
        fi
        ts="$(stoik_time "$name")"
        printf '%s\tstoik\t%s\t%s\t%s\n' "$name" "$rep" "$ts" "" >> "$RUNS"
        clog="$LOG/$name.cvode.$rep.log"
        CONSTR=$constr "$OUT/cvode_bench" "$OUT/mech/$twin.txt" "$solver" 1e-6 1e-10 1 "$OUT/cvode-y/$name.txt" 0 > "$clog" 2>&1 || true
        if [ "$constr" = 0 ] && grep -q "CVode failed" "$clog"; then
            echo "$name: CVODE failed without the y >= 0 constraint: $(grep 'CVode failed' "$clog")"
            printf '%s\tcvode-failed\t%s\t%s\t%s\n' "$name" "$rep" "$(awk '/^MEDIAN/{print $2}' "$clog")" "$(grep 'CVode failed' "$clog")" >> "$RUNS"
            constr=1
            CONSTR=1 "$OUT/cvode_bench" "$OUT/mech/$twin.txt" "$solver" 1e-6 1e-10 1 "$OUT/cvode-y/$name.txt" 0 > "$clog" 2>&1 || true
        fi
        tc="$(awk '/^MEDIAN/{print $2}' "$clog")"
        detail="$solver constr=$constr $(grep '^MEDIAN' "$clog" | cut -d' ' -f3-)"
        if grep -q "CVode failed" "$clog"; then detail="FAILED $detail"; fi
        printf '%s\tcvode\t%s\t%s\t%s\n' "$name" "$rep" "$tc" "$detail" >> "$RUNS"
        echo "$name rep $rep: stoik $ts s, CVODE $tc s ($detail)"
    done
done

if [[ " ${selected[*]} " == *"robertson_1e5:"* ]]; then
    echo "=== LSODA (numbalsoda), Robertson to 1e5"
    "$PY" "$HERE/lsoda_robertson.py" "${LSODA_RUNS:-1000}"
fi
"$PY" "$HERE/table.py" "$OUT"
cat "$OUT/table.md"
