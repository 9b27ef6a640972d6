#!/usr/bin/env bash
# run_inspect.sh — the helmix inspect benchmark: makes an N^3 single-precision cube with
# `helmix make`, then times `helmix inspect` on 1 and 2 ranks (and with --plot on 2 ranks)
# against the floor (bench/floor_inspect.c: collective read, padded rows and r2c transforms
# only) and against the plain serial numpy peer (bench/peer_numpy_inspect.py), then prints a
# Markdown table and the aim.
#
# Usage:  bash bench/run_inspect.sh [N=256]
# Environment (optional): HELMIX=path/to/helmix (default build/helmix next to bench/),
#   REPEATS=5 (each command is run this many times; minimum wall, maximum RSS are kept),
#   TMPDIR (where the temporary directory for the floor binary and the cube goes).
# Nothing is written inside the repository: the floor binary, the recipe, the cube and every
# output of inspect go to a temporary directory that is removed at exit.
set -euo pipefail

N=${1:-256}
REPEATS=${REPEATS:-5}
here=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)
root=$(dirname "$here")
HELMIX=${HELMIX:-$root/build/helmix}
PY=/usr/bin/python3
MPIEXEC=(mpiexec --allow-run-as-root --oversubscribe)
TIME=/usr/bin/time

die() { echo "run_inspect.sh: $*" >&2; exit 1; }

if ! [[ $N =~ ^[0-9]+$ ]] || (( N < 4 || N % 2 != 0 )); then
    die "N must be an even integer >= 4, got '$N'"
fi
if ! [[ $REPEATS =~ ^[0-9]+$ ]] || (( REPEATS < 1 )); then
    die "REPEATS must be a positive integer, got '$REPEATS'"
fi
[[ -x $TIME ]] || die "$TIME not found (apt-get install time)"
[[ -x $PY ]] || die "$PY not found"
"$PY" -c 'import numpy, h5py' 2>/dev/null || die "$PY cannot import numpy and h5py"
command -v mpicc >/dev/null || die "mpicc not found"
command -v mpiexec >/dev/null || die "mpiexec not found"
[[ -x $HELMIX ]] || die "helmix binary not found at $HELMIX (build it: cmake -S $root -B $root/build && cmake --build $root/build -j2)"

work=$(mktemp -d "${TMPDIR:-/tmp}/helmix-bench-inspect.XXXXXX")
trap 'rm -rf "$work"' EXIT
load_start=$(cut -d' ' -f1-3 /proc/loadavg)

# --- build the floor (same flags as bench/run.sh uses for bench/floor.c) ----------------------
# shellcheck disable=SC2046  # pkg-config output is a list of words
mpicc -O2 -I/usr/include/hdf5/openmpi "$here/floor_inspect.c" -o "$work/floor_inspect" \
    $(pkg-config --libs hdf5-openmpi) -lfftw3_mpi -lfftw3 -lm \
    || die "could not compile bench/floor_inspect.c"

# --- (a) the cube to analyse ----------------------------------------------------------------
cube=$work/cube.h5
cat >"$work/cube.ini" <<EOF
# helmix inspect benchmark input: N^3 cube, zeta = 0.5, single precision.
[grid]
cells = $N
[mix]
zeta = 0.5
[output]
file = $cube
precision = single
EOF
echo "helmix inspect benchmark: N=$N, $REPEATS repeats, $(nproc) cores, helmix at $HELMIX" >&2
echo "  making the ${N}^3 cube with helmix make on 2 ranks" >&2
"${MPIEXEC[@]}" -n 2 "$HELMIX" make "$work/cube.ini" -o "$cube" --force --quiet >"$work/make.out" 2>&1 \
    || { sed 's/^/    /' "$work/make.out" | tail -n 20 >&2; die "helmix make failed"; }
[[ -s $cube ]] || die "helmix make wrote no $cube"

# --- (c, d) measurements ----------------------------------------------------------------------
# One line per run in results.tsv:
#   label ranks rep rc cmd_wall_s cmd_maxrss_kib self_wall_s self_rss_kib check
# check: compressive share (inspect from its JSON, the peer from its BENCH line) or the
# x mean (floor), so the report can show that every program saw the same data.
results=$work/results.tsv
: >"$results"

# run_one LABEL RANKS REP CMD... : time CMD, collect its own report, append a line.
run_one() {
    local label=$1 ranks=$2 rep=$3
    shift 3
    rm -f "$work/out.json" "$work/out.png"
    local rc=0
    "$TIME" -f '%e %M' -o "$work/time.txt" "$@" >"$work/stdout.txt" 2>"$work/stderr.txt" || rc=$?
    local cmd_wall=nan cmd_rss=nan self_wall=nan self_rss=nan check=nan line
    if [[ -s $work/time.txt ]]; then
        # The last line holds "%e %M"; a failing command adds a status line before it.
        read -r cmd_wall cmd_rss < <(tail -n 1 "$work/time.txt")
    fi
    if (( rc != 0 )); then
        echo "run_inspect.sh: $label on $ranks rank(s), repeat $rep, failed with status $rc; its stderr:" >&2
        sed 's/^/    /' "$work/stderr.txt" | tail -n 20 >&2
    elif [[ $label == inspect* ]]; then
        check=$("$PY" "$here/report_inspect.py" fraction "$work/out.json") || check=nan
        if [[ $label == inspect_plot && ! -s $work/out.png ]]; then
            echo "run_inspect.sh: inspect --plot on $ranks rank(s) wrote no page" >&2
            rc=99
        fi
    else
        line=$(grep -m1 '^BENCH ' "$work/stdout.txt" || true)
        if [[ -n $line ]]; then
            self_wall=$(sed -n 's/.* wall_s=\([^ ]*\).*/\1/p' <<<"$line")
            self_rss=$(sed -n 's/.* peak_rss_kib=\([^ ]*\).*/\1/p' <<<"$line")
            if [[ $label == floor ]]; then
                check=$(sed -n 's/.* mean=\([^,]*\),.*/\1/p' <<<"$line")
            else
                check=$(sed -n 's/.* fraction=\([^ ]*\).*/\1/p' <<<"$line")
            fi
        fi
    fi
    printf '%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n' "$label" "$ranks" "$rep" "$rc" \
        "$cmd_wall" "$cmd_rss" "$self_wall" "$self_rss" "${check:-nan}" >>"$results"
    rm -f "$work/out.json" "$work/out.png"
}

for rep in $(seq 1 "$REPEATS"); do
    for p in 1 2; do
        echo "  repeat $rep: helmix inspect, $p rank(s)" >&2
        run_one inspect "$p" "$rep" \
            "${MPIEXEC[@]}" -n "$p" "$HELMIX" inspect "$cube" --quiet --json "$work/out.json"
        echo "  repeat $rep: floor, $p rank(s)" >&2
        run_one floor "$p" "$rep" "${MPIEXEC[@]}" -n "$p" "$work/floor_inspect" "$cube"
    done
    echo "  repeat $rep: helmix inspect --plot, 2 ranks" >&2
    run_one inspect_plot 2 "$rep" \
        "${MPIEXEC[@]}" -n 2 "$HELMIX" inspect "$cube" --quiet --json "$work/out.json" --plot "$work/out.png"
    echo "  repeat $rep: numpy peer, 1 process" >&2
    run_one peer_numpy 1 "$rep" "$PY" "$here/peer_numpy_inspect.py" "$cube"
done

# --- (e) the table ----------------------------------------------------------------------------
BENCH_LOAD_START=$load_start BENCH_LOAD_END=$(cut -d' ' -f1-3 /proc/loadavg) BENCH_CORES=$(nproc) \
    "$PY" "$here/report_inspect.py" table "$results" "$N" "$REPEATS"
