#!/usr/bin/env bash
# run.sh — the helmix benchmark: times `helmix make` on 1 and 2 ranks against the floor
# (bench/floor.c: allocation, FFTs, repacking and parallel HDF5 output only) and against the
# plain serial numpy peer (bench/peer_numpy.py), then prints a Markdown table and the aims.
#
# Usage:  bash bench/run.sh [N=256]
# Environment (optional): HELMIX=path/to/helmix (default build/helmix next to bench/),
#   REPEATS=5 (each command is run this many times; minimum wall, maximum RSS are kept),
#   TMPDIR (where the temporary directory for the build of floor and the cubes goes).
# Nothing is written inside the repository: the floor binary, the recipe and every cube go
# to a temporary directory that is removed at exit.
set -euo pipefail

N=${1:-256}
REPEATS=${REPEATS:-5}
here=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)
root=$(dirname "$here")
HELMIX=${HELMIX:-$root/build/helmix}
PY=/usr/bin/python3
MPIEXEC=(mpiexec --allow-run-as-root --oversubscribe)
TIME=/usr/bin/time

die() { echo "run.sh: $*" >&2; exit 1; }

if ! [[ $N =~ ^[0-9]+$ ]] || (( N < 4 || N % 2 != 0 )); then
    die "N must be an even integer >= 4, got '$N'"
fi
if ! [[ $REPEATS =~ ^[0-9]+$ ]] || (( REPEATS < 1 )); then
    die "REPEATS must be a positive integer, got '$REPEATS'"
fi
[[ -x $TIME ]] || die "$TIME not found (apt-get install time)"
[[ -x $PY ]] || die "$PY not found"
"$PY" -c 'import numpy, scipy, h5py' 2>/dev/null || die "$PY cannot import numpy, scipy and h5py"
command -v mpicc >/dev/null || die "mpicc not found"
command -v mpiexec >/dev/null || die "mpiexec not found"
[[ -x $HELMIX ]] || die "helmix binary not found at $HELMIX (build it: cmake -S $root -B $root/build && cmake --build $root/build -j2)"

work=$(mktemp -d "${TMPDIR:-/tmp}/helmix-bench.XXXXXX")
trap 'rm -rf "$work"' EXIT

# --- (a) build the floor ------------------------------------------------------------------
# shellcheck disable=SC2046  # pkg-config output is a list of words
mpicc -O2 -I/usr/include/hdf5/openmpi "$here/floor.c" -o "$work/floor" \
    $(pkg-config --libs hdf5-openmpi) -lfftw3_mpi -lfftw3 -lm \
    || die "could not compile bench/floor.c"

# --- the recipe for helmix make -------------------------------------------------------------
recipe=$work/bench.ini
cat >"$recipe" <<EOF
# helmix benchmark recipe: N^3 cube, E(k) ~ k^-2, zeta = 0.5, single precision.
[grid]
cells = $N
[spectrum]
shape = power
slope = 2.0
[mix]
zeta = 0.5
[amplitude]
vrms = 1.0
[random]
seed = 1
[output]
file = $work/helmix.h5
precision = single
EOF

# --- (c) measurements -----------------------------------------------------------------------
# One line per run in results.tsv:
#   label ranks rep rc cmd_wall_s cmd_maxrss_kib self_wall_s self_rss_kib
results=$work/results.tsv
: >"$results"

# run_one LABEL RANKS REP OUTFILE CMD... : time CMD, collect its own report, append a line.
run_one() {
    local label=$1 ranks=$2 rep=$3 out=$4
    shift 4
    rm -f "$out" "$out.xmf"
    local rc=0
    "$TIME" -f '%e %M' -o "$work/time.txt" "$@" >"$work/stdout.txt" 2>"$work/stderr.txt" || rc=$?
    local cmd_wall=nan cmd_rss=nan self_wall=nan self_rss=nan
    if [[ -s $work/time.txt ]]; then
        # The last line holds "%e %M"; a failing command adds a status line before it.
        read -r cmd_wall cmd_rss < <(tail -n 1 "$work/time.txt")
    fi
    if (( rc != 0 )); then
        echo "run.sh: $label on $ranks rank(s), repeat $rep, failed with status $rc; its stderr:" >&2
        sed 's/^/    /' "$work/stderr.txt" | tail -n 20 >&2
    elif [[ $label == helmix ]]; then
        read -r self_wall self_rss < <("$PY" "$here/report.py" attrs "$out") || true
    else
        local line
        line=$(grep -m1 '^BENCH ' "$work/stdout.txt" || true)
        if [[ -n $line ]]; then
            self_wall=$(sed -n 's/.* wall_s=\([^ ]*\).*/\1/p' <<<"$line")
            self_rss=$(sed -n 's/.* peak_rss_kib=\([^ ]*\).*/\1/p' <<<"$line")
        fi
    fi
    printf '%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n' "$label" "$ranks" "$rep" "$rc" \
        "$cmd_wall" "$cmd_rss" "$self_wall" "$self_rss" >>"$results"
    rm -f "$out" "$out.xmf"
}

load_start=$(cut -d' ' -f1-3 /proc/loadavg)
echo "helmix benchmark: N=$N, $REPEATS repeats, $(nproc) cores, helmix at $HELMIX" >&2
for rep in $(seq 1 "$REPEATS"); do
    for p in 1 2; do
        echo "  repeat $rep: helmix make, $p rank(s)" >&2
        run_one helmix "$p" "$rep" "$work/helmix.h5" \
            "${MPIEXEC[@]}" -n "$p" "$HELMIX" make "$recipe" -o "$work/helmix.h5" --force --quiet
        echo "  repeat $rep: floor, $p rank(s)" >&2
        run_one floor "$p" "$rep" "$work/floor.h5" \
            "${MPIEXEC[@]}" -n "$p" "$work/floor" "$N" "$work/floor.h5"
    done
    echo "  repeat $rep: numpy peer, 1 process" >&2
    run_one peer_numpy 1 "$rep" "$work/peer.h5" "$PY" "$here/peer_numpy.py" "$N" "$work/peer.h5"
done

# --- (d) the table ------------------------------------------------------------------------
BENCH_LOAD="start $load_start, end $(cut -d' ' -f1-3 /proc/loadavg)" BENCH_CORES=$(nproc) \
    "$PY" "$here/report.py" table "$results" "$N" "$REPEATS"
