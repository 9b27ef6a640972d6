#!/usr/bin/env bash
# run.sh — the helmix make benchmark: times `helmix make` against the floor (bench/floor.c:
# allocation, FFTs, repacking and parallel HDF5 output only) in the same precision, on the
# same ranks, writing the same bytes, and against the plain serial numpy peer
# (bench/peer_numpy.py); then prints a Markdown table, the memory per rank as bytes per cell
# and the aims.
#
# Side by side in each repeat, for every N of the list and every rank count:
#   single: helmix make (precision = single, compute = single) vs floor single (fftwf, float32)
#   double: helmix make (precision = double, compute = double) vs floor double (fftw,  float64)
#   each helmix row twice: [output] draws = keep and draws = regenerate;
# plus the numpy peer (1 process) at the smallest N.
#
# Usage:  bash bench/run.sh [N ...]        (default: 256)
#   N <= 256 runs on 1 and 2 ranks; N >= 512 on 2 ranks only (the issue's 512^3 line);
#   1024 or more runs only when listed.
# Environment (optional): HELMIX=path/to/helmix (default build/helmix next to bench/),
#   REPEATS=5 (each command is run this many times, interleaved; minimum wall, maximum RSS
#   are kept), TMPDIR (where the temporary directory for the floor binary and the cubes goes).
# Nothing is written inside the repository: the floor binary, the recipes and every cube go
# to a temporary directory that is removed at exit. What both benchmarks share is in
# bench/lib.sh (this driver) and bench/benchlib.py (the report).
set -euo pipefail
# shellcheck source-path=SCRIPTDIR source=lib.sh
source "$(dirname "${BASH_SOURCE[0]}")/lib.sh"

sizes=("$@")
(( ${#sizes[@]} )) || sizes=(256)
for n in "${sizes[@]}"; do check_n "$n"; done
bench_init "${sizes[0]}" numpy scipy h5py
build_floor floor
smallest=$(printf '%s\n' "${sizes[@]}" | sort -n | head -n 1)

# recipe N PRECISION DRAWS: the helmix make recipe, written once per combination.
recipe() {
    local f=$work/make_$1_$2_$3.ini
    cat >"$f" <<EOT
# helmix benchmark recipe: $1^3 cube, E(k) ~ k^-2, zeta = 0.5, $2 precision, draws $3.
[grid]
cells = $1
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
precision = $2
compute = $2
draws = $3
EOT
    echo "$f"
}

# --- measurements ---------------------------------------------------------------------------
bench_outputs=("$work"/{helmix,floor,peer}.h5{,.xmf})

# collect LABEL RANKS (see lib.sh): helmix records its own time, peak RSS and draws in the file.
collect() {
    if [[ $1 == make_* ]]; then
        read -r self_wall self_rss check < <("$PY" "$here/report.py" attrs "$work/helmix.h5") || true
    fi
}

ranks_for() { if (( $1 >= 512 )); then echo 2; else echo 1 2; fi; }

echo "helmix make benchmark: N = ${sizes[*]}, $REPEATS repeats, $(nproc) cores, helmix at $HELMIX" >&2
for rep in $(seq 1 "$REPEATS"); do
    for n in "${sizes[@]}"; do
        for p in $(ranks_for "$n"); do
            for prec in single double; do
                echo "  repeat $rep: N=$n, $p rank(s), $prec: floor, make keep, make regenerate" >&2
                run_one "floor_$prec@$n" "$p" "$rep" \
                    "${MPIEXEC[@]}" -n "$p" "$work/floor" "$n" "$work/floor.h5" "$prec"
                for draws in keep regenerate; do
                    run_one "make_${prec}_$draws@$n" "$p" "$rep" \
                        "${MPIEXEC[@]}" -n "$p" "$HELMIX" make "$(recipe "$n" "$prec" "$draws")" \
                        -o "$work/helmix.h5" --force --quiet
                done
            done
        done
    done
    echo "  repeat $rep: numpy peer, N=$smallest, 1 process" >&2
    run_one "peer_numpy@$smallest" 1 "$rep" "$PY" "$here/peer_numpy.py" "$smallest" "$work/peer.h5"
done

bench_table report.py
