#!/usr/bin/env bash
# run_inspect.sh — the helmix inspect benchmark: makes an N^3 single-precision cube with
# `helmix make`, then times `helmix inspect` on 1 and 2 ranks, on 1 rank with 2 threads, and
# with --plot on 2 ranks, against the floor (with the same ranks and threads) (bench/floor_inspect.c: collective read, padded rows and r2c transforms
# only) and against the plain serial numpy peer (bench/peer_numpy_inspect.py), then prints a
# Markdown table and the aim.
#
# Usage:  bash bench/run_inspect.sh [N=256]
# Environment (optional): HELMIX=path/to/helmix (default build/helmix next to bench/),
#   REPEATS=5 (each command is run this many times; minimum wall, maximum RSS are kept),
#   TMPDIR (where the temporary directory for the floor binary and the cube goes).
# Nothing is written inside the repository: the floor binary, the recipe, the cube and every
# output of inspect go to a temporary directory that is removed at exit. What both
# benchmarks share is in bench/lib.sh (this driver) and bench/benchlib.py (the report).
set -euo pipefail
# shellcheck source-path=SCRIPTDIR source=lib.sh
source "$(dirname "${BASH_SOURCE[0]}")/lib.sh"

bench_init "${1:-256}" numpy h5py
build_floor floor_inspect

# --- the cube to analyse --------------------------------------------------------------------
cube=$work/cube.h5
cat >"$work/cube.ini" <<EOT
# helmix inspect benchmark input: N^3 cube, zeta = 0.5, single precision.
[grid]
cells = $N
[mix]
zeta = 0.5
[output]
file = $cube
precision = single
EOT
echo "helmix inspect benchmark: N=$N, $REPEATS repeats, $(nproc) cores, helmix at $HELMIX" >&2
echo "  making the ${N}^3 cube with helmix make on 2 ranks" >&2
"${MPIEXEC[@]}" -n 2 "$HELMIX" make "$work/cube.ini" -o "$cube" --force --quiet >"$work/make.out" 2>&1 \
    || { sed 's/^/    /' "$work/make.out" | tail -n 20 >&2; die "helmix make failed"; }
[[ -s $cube ]] || die "helmix make wrote no $cube"

# --- measurements ---------------------------------------------------------------------------
# check (see lib.sh): the compressive share (inspect from its JSON, the peer from its BENCH
# line) or the floor's x mean, so the report can show that every program saw the same data.
bench_outputs=("$work/out.json" "$work/out.png")

# collect LABEL RANKS (see lib.sh): inspect's share from its JSON; --plot must write a page.
collect() {
    if [[ $1 == inspect* ]]; then
        check=$("$PY" "$here/report_inspect.py" fraction "$work/out.json") || check=nan
        if [[ $1 == inspect_plot && ! -s $work/out.png ]]; then
            echo "$prog: inspect --plot on $2 rank(s) wrote no page" >&2
            rc=99
        fi
    fi
}

for rep in $(seq 1 "$REPEATS"); do
    for p in 1 2; do
        echo "  repeat $rep: helmix inspect, $p rank(s)" >&2
        run_one inspect "$p" "$rep" \
            "${MPIEXEC[@]}" -n "$p" "$HELMIX" inspect "$cube" --quiet --json "$work/out.json"
        echo "  repeat $rep: floor, $p rank(s)" >&2
        run_one floor "$p" "$rep" "${MPIEXEC[@]}" -n "$p" "$work/floor_inspect" "$cube"
    done
    echo "  repeat $rep: helmix inspect and floor, 1 rank x 2 threads" >&2
    # --bind-to none: Open MPI binds a lone rank to one core, where 2 threads would share it
    run_one inspect_t2 1 "$rep" \
        "${MPIEXEC[@]}" --bind-to none -n 1 "$HELMIX" inspect "$cube" --quiet --json "$work/out.json" --threads 2
    run_one floor_t2 1 "$rep" env OMP_NUM_THREADS=2 "${MPIEXEC[@]}" --bind-to none -x OMP_NUM_THREADS -n 1 \
        "$work/floor_inspect" "$cube"
    echo "  repeat $rep: helmix inspect --plot, 2 ranks" >&2
    run_one inspect_plot 2 "$rep" \
        "${MPIEXEC[@]}" -n 2 "$HELMIX" inspect "$cube" --quiet --json "$work/out.json" --plot "$work/out.png"
    echo "  repeat $rep: numpy peer, 1 process" >&2
    run_one peer_numpy 1 "$rep" "$PY" "$here/peer_numpy_inspect.py" "$cube"
done

bench_table report_inspect.py
