#!/usr/bin/env bash
# run.sh — the helmix make benchmark: times `helmix make` on 1 and 2 ranks against the floor
# (bench/floor.c: allocation, FFTs, repacking and parallel HDF5 output only) and against the
# plain serial numpy peer (bench/peer_numpy.py), then prints a Markdown table and the aims.
#
# Usage:  bash bench/run.sh [N=256]
# Environment (optional): HELMIX=path/to/helmix (default build/helmix next to bench/),
#   REPEATS=5 (each command is run this many times; minimum wall, maximum RSS are kept),
#   TMPDIR (where the temporary directory for the build of floor and the cubes goes).
# Nothing is written inside the repository: the floor binary, the recipe and every cube go
# to a temporary directory that is removed at exit. What both benchmarks share is in
# bench/lib.sh (this driver) and bench/benchlib.py (the report).
set -euo pipefail
# shellcheck source-path=SCRIPTDIR source=lib.sh
source "$(dirname "${BASH_SOURCE[0]}")/lib.sh"

bench_init "${1:-256}" numpy scipy h5py
build_floor floor

# --- the recipe for helmix make -------------------------------------------------------------
recipe=$work/bench.ini
cat >"$recipe" <<EOT
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
EOT

# --- measurements ---------------------------------------------------------------------------
# Each command writes its own cube (and helmix its .xmf beside it).
bench_outputs=("$work"/{helmix,floor,peer}.h5{,.xmf})

# collect LABEL RANKS (see lib.sh): helmix records its own time and peak RSS in the file.
collect() {
    if [[ $1 == helmix ]]; then
        read -r self_wall self_rss < <("$PY" "$here/report.py" attrs "$work/helmix.h5") || true
    fi
}

echo "helmix benchmark: N=$N, $REPEATS repeats, $(nproc) cores, helmix at $HELMIX" >&2
for rep in $(seq 1 "$REPEATS"); do
    for p in 1 2; do
        echo "  repeat $rep: helmix make, $p rank(s)" >&2
        run_one helmix "$p" "$rep" \
            "${MPIEXEC[@]}" -n "$p" "$HELMIX" make "$recipe" -o "$work/helmix.h5" --force --quiet
        echo "  repeat $rep: floor, $p rank(s)" >&2
        run_one floor "$p" "$rep" "${MPIEXEC[@]}" -n "$p" "$work/floor" "$N" "$work/floor.h5"
    done
    echo "  repeat $rep: numpy peer, 1 process" >&2
    run_one peer_numpy 1 "$rep" "$PY" "$here/peer_numpy.py" "$N" "$work/peer.h5"
done

bench_table report.py
