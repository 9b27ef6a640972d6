#!/usr/bin/env bash
# run_sparse.sh — the sparse FFT evaluation: builds bench/sparse_probe.c against SpFFT
# (Debian's libspfft-dev; for this benchmark only, never a dependency of helmix) and compares,
# at N^3 on 1 and 2 ranks and for kmax = N/8 and N/2 - 1, FFTW-MPI's dense c2r in double and
# in single with SpFFT's sparse c2r in double from the in-band z-sticks: field equality, plan,
# fill and transform time and the bytes each rank sends; then prints a Markdown table.
#
# Usage:  bash bench/run_sparse.sh [N=256]
# Environment (optional): REPEATS=3 (processes per method, interleaved; each times REPS=5
#   executions and keeps the fastest; the report keeps the fastest process), TMPDIR.
# Nothing is written in the repository.
set -euo pipefail
here=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)
N=${1:-256}
REPEATS=${REPEATS:-3}
PY=/usr/bin/python3
MPIEXEC=(mpiexec --allow-run-as-root --oversubscribe)
die() { echo "run_sparse.sh: $*" >&2; exit 1; }
if ! [[ $N =~ ^[0-9]+$ ]] || (( N < 16 || N % 2 != 0 )); then die "N must be an even integer >= 16, got '$N'"; fi
[[ -f /usr/include/spfft/spfft.h ]] || die "SpFFT not found: apt-get install libspfft-dev (for this benchmark only)"
work=$(mktemp -d "${TMPDIR:-/tmp}/helmix-bench_sparse.XXXXXX")
trap 'rm -rf "$work"' EXIT
mpicc -O2 "$here/sparse_probe.c" -o "$work/sparse_probe" -lspfft -lfftw3_mpi -lfftw3 -lfftw3f_mpi -lfftw3f -lm \
    || die "could not compile bench/sparse_probe.c"
cores=$(nproc) # before OMP_NUM_THREADS, which nproc honours
export OMP_NUM_THREADS=1 # SpFFT gets one thread per rank, as FFTW has
load_start=$(cut -d' ' -f1-3 /proc/loadavg)
out=$work/probe.txt
: >"$out"
for p in 1 2; do
    for k in $(( N / 8 )) $(( N / 2 - 1 )); do
        echo "  check: $p rank(s), kmax=$k" >&2
        "${MPIEXEC[@]}" -n "$p" "$work/sparse_probe" "$N" "$k" check >>"$out"
    done
done
for rep in $(seq 1 "$REPEATS"); do
    for p in 1 2; do
        for k in $(( N / 8 )) $(( N / 2 - 1 )); do
            echo "  repeat $rep: $p rank(s), kmax=$k: dense double, dense single, sparse double" >&2
            for m in dense_double dense_single sparse_double; do
                "${MPIEXEC[@]}" -n "$p" "$work/sparse_probe" "$N" "$k" "$m" >>"$out"
            done
        done
    done
done
BENCH_LOAD_START=$load_start BENCH_LOAD_END=$(cut -d' ' -f1-3 /proc/loadavg) BENCH_CORES=$cores \
    "$PY" "$here/report_sparse.py" "$out"
