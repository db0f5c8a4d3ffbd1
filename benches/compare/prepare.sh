#!/usr/bin/env bash
# Prepares the comparison of stoik against compiled CVODE (and LSODA for Robertson):
#  1. installs what is missing: Debian libsundials-dev (brings libsuitesparse-dev: KLU) and
#     gfortran, the PyPI packages numpy scipy numba numbalsoda;
#  2. generates the benchmark mechanisms into $MECH_DIR (default target/bench-mech/mech, not
#     committed): the shared generator's set (Robertson, synth50..synth5000), synth10000 and
#     the uniformly-random-partners worst case random1000;
#  3. builds cvode_bench from the shared C source into target/bench-mech/;
#  4. converts every JSON mechanism to stoik's mechanism + scenario files.
# Environment: STOIK_SHARED_DIR (required: the folder holding the baseline's bench/mech.py and
# bench/cvode_bench.c, which are not part of this repository), BENCH_MECH_DIR (default
# <repo>/target/bench-mech).
set -euo pipefail

HERE="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
ROOT="$(cd "$HERE/../.." && pwd)"
SHARED="${STOIK_SHARED_DIR:?set STOIK_SHARED_DIR to the folder holding bench/mech.py and bench/cvode_bench.c}"
OUT="${BENCH_MECH_DIR:-$ROOT/target/bench-mech}"
export MECH_DIR="$OUT/mech"
export STOIK_SHARED_DIR="$SHARED"
PY="${PYTHON:-python3}"

[ -f "$SHARED/bench/mech.py" ] || { echo "error: $SHARED/bench/mech.py not found (set STOIK_SHARED_DIR)" >&2; exit 1; }

# 1. dependencies
need_apt=()
dpkg -s libsundials-dev >/dev/null 2>&1 || need_apt+=(libsundials-dev)
command -v gfortran >/dev/null 2>&1 || need_apt+=(gfortran)
command -v gcc >/dev/null 2>&1 || need_apt+=(gcc)
if [ ${#need_apt[@]} -gt 0 ]; then
    echo "installing Debian packages: ${need_apt[*]}"
    apt-get update -qq
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq "${need_apt[@]}"
fi
if ! "$PY" -c "import numpy, scipy, numba, numbalsoda" 2>/dev/null; then
    echo "installing PyPI packages: numpy scipy numba numbalsoda"
    "$PY" -m pip install -q numpy scipy numba numbalsoda
fi

# 2. mechanisms (deterministic; regenerated only when missing)
mkdir -p "$MECH_DIR"
if [ ! -f "$MECH_DIR/synth5000.json" ] || [ ! -f "$MECH_DIR/robertson.json" ]; then
    (cd "$OUT" && "$PY" "$SHARED/bench/mech.py")
fi
if [ ! -f "$MECH_DIR/synth10000.json" ]; then
    "$PY" -c "
import sys; sys.path.insert(0, '$SHARED/bench')
import mech
m = mech.synthetic(10000)
mech.save(m, '$MECH_DIR')
print(m['name'], 'N', m['n_species'], 'M', len(m['reactions']))
"
fi
# synth20: the small generated case of the LSODA comparison (issue 16's per-run overhead).
if [ ! -f "$MECH_DIR/synth20.json" ]; then
    "$PY" -c "
import sys; sys.path.insert(0, '$SHARED/bench')
import mech
m = mech.synthetic(20)
mech.save(m, '$MECH_DIR')
print(m['name'], 'N', m['n_species'], 'M', len(m['reactions']))
"
fi
if [ ! -f "$MECH_DIR/random1000.json" ]; then
    "$PY" "$HERE/random_partners.py" 1000
fi

# 3. CVODE baseline
if [ ! -x "$OUT/cvode_bench" ] || [ "$SHARED/bench/cvode_bench.c" -nt "$OUT/cvode_bench" ]; then
    gcc -O2 -march=native -Wall -I/usr/include/suitesparse -o "$OUT/cvode_bench" \
        "$SHARED/bench/cvode_bench.c" -lsundials_cvode -lsundials_nvecserial \
        -lsundials_sunmatrixdense -lsundials_sunmatrixsparse -lsundials_sunlinsoldense \
        -lsundials_sunlinsolklu -lklu -lm
    echo "built $OUT/cvode_bench"
fi

# 4. stoik files, and the C twin of the bundled HIRES (no JSON twin)
"$PY" "$HERE/json_to_stoik.py" "$MECH_DIR"
"$PY" "$HERE/stoik_to_txt.py" "$ROOT/mechanisms/hires.scenario.toml" "$MECH_DIR/hires.txt"
# The 10,000-species target case: the same mechanism to t = 100 s.
if [ -f "$MECH_DIR/synth10000.scenario.toml" ]; then
    sed 's/^end_time = "1000 s"/end_time = "100 s"/; s/^times = \[1000.0\]/times = [100.0]/' \
        "$MECH_DIR/synth10000.scenario.toml" > "$MECH_DIR/synth10000-t100.scenario.toml"
fi
echo "ready: $MECH_DIR"
