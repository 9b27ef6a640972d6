# lib.sh — what the two helmix benchmark drivers share (bench/run.sh for `helmix make`,
# bench/run_inspect.sh for `helmix inspect`); sourced by both, runs nothing by itself.
#
# It sets here, root, HELMIX, PY, MPIEXEC, TIME, REPEATS and die(), and provides
#   check_n N                die unless N is an even integer >= 4;
#   bench_init N MODULE...   check N, REPEATS and the tools (PY must import every MODULE),
#                            make the work directory $work (removed at exit), empty
#                            $results and note the load average;
#   build_floor NAME         compile bench/NAME.c (with floor_common.h, FFTW-MPI in double and
#                            single precision, threaded when OMP_NUM_THREADS > 1) into $work/NAME;
#   run_one LABEL RANKS REP CMD...
#                            run CMD under /usr/bin/time and append its line to $results;
#   bench_table REPORT       print the tables: bench/REPORT table $results N REPEATS.
# The sourcing script sets `bench_outputs` (files a run may write: removed before and after
# every run) and defines `collect LABEL RANKS`, called after each successful run (see
# run_one).
#
# One line per run in $results (read by benchlib.py), tab-separated:
#   label ranks rep rc cmd_wall_s cmd_maxrss_kib self_wall_s self_rss_kib check
# shellcheck shell=bash

prog=${0##*/}
here=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)
root=$(dirname "$here")
HELMIX=${HELMIX:-$root/build/helmix}
REPEATS=${REPEATS:-5}
PY=/usr/bin/python3
# shellcheck disable=SC2034  # used by the sourcing scripts
MPIEXEC=(mpiexec --allow-run-as-root --oversubscribe)
TIME=/usr/bin/time
bench_outputs=()

die() { echo "$prog: $*" >&2; exit 1; }

check_n() {
    if ! [[ $1 =~ ^[0-9]+$ ]] || (( $1 < 4 || $1 % 2 != 0 )); then
        die "N must be an even integer >= 4, got '$1'"
    fi
}

bench_init() {
    N=$1
    shift
    check_n "$N"
    if ! [[ $REPEATS =~ ^[0-9]+$ ]] || (( REPEATS < 1 )); then
        die "REPEATS must be a positive integer, got '$REPEATS'"
    fi
    [[ -x $TIME ]] || die "$TIME not found (apt-get install time)"
    [[ -x $PY ]] || die "$PY not found"
    local modules
    modules=$(IFS=,; echo "$*")
    "$PY" -c "import $modules" 2>/dev/null || die "$PY cannot import $*"
    command -v mpicc >/dev/null || die "mpicc not found"
    command -v mpiexec >/dev/null || die "mpiexec not found"
    [[ -x $HELMIX ]] || die "helmix binary not found at $HELMIX (build it: cmake -S $root -B $root/build && cmake --build $root/build -j2)"

    load_start=$(cut -d' ' -f1-3 /proc/loadavg)
    local kind=${prog%.sh}  # run.sh -> helmix-bench.*, run_inspect.sh -> helmix-bench_inspect.*
    work=$(mktemp -d "${TMPDIR:-/tmp}/helmix-bench${kind#run}.XXXXXX")
    trap 'rm -rf "$work"' EXIT
    results=$work/results.tsv
    : >"$results"
}

build_floor() {
    # shellcheck disable=SC2046  # pkg-config output is a list of words
    mpicc -O2 -fopenmp -I/usr/include/hdf5/openmpi "$here/$1.c" -o "$work/$1" \
        $(pkg-config --libs hdf5-openmpi) -lfftw3_mpi -lfftw3_omp -lfftw3 -lfftw3f_mpi -lfftw3f_omp -lfftw3f -lm \
        || die "could not compile bench/$1.c"
}

# run_one LABEL RANKS REP CMD...: time CMD with /usr/bin/time (minimum wall and maximum RSS
# are taken later), then take what the program reports about itself: from a line
#   BENCH ... wall_s=T peak_rss_kib=K [fraction=F | mean=MX,MY,MZ]
# on its stdout self_wall, self_rss and check (F, or MX). If the run succeeded,
# `collect LABEL RANKS` may then set self_wall, self_rss, check or rc itself (bash's dynamic
# scope lets it see these locals). A failed run keeps its status and nan values.
run_one() {
    local label=$1 ranks=$2 rep=$3
    shift 3
    rm -f "${bench_outputs[@]}"
    local rc=0
    "$TIME" -f '%e %M' -o "$work/time.txt" "$@" >"$work/stdout.txt" 2>"$work/stderr.txt" || rc=$?
    local cmd_wall=nan cmd_rss=nan self_wall=nan self_rss=nan check=nan line
    if [[ -s $work/time.txt ]]; then
        # The last line holds "%e %M"; a failing command adds a status line before it.
        read -r cmd_wall cmd_rss < <(tail -n 1 "$work/time.txt")
    fi
    if (( rc != 0 )); then
        echo "$prog: $label on $ranks rank(s), repeat $rep, failed with status $rc; its stderr:" >&2
        sed 's/^/    /' "$work/stderr.txt" | tail -n 20 >&2
    else
        line=$(grep -m1 '^BENCH ' "$work/stdout.txt" || true)
        if [[ -n $line ]]; then
            self_wall=$(sed -n 's/.* wall_s=\([^ ]*\).*/\1/p' <<<"$line")
            self_rss=$(sed -n 's/.* peak_rss_kib=\([^ ]*\).*/\1/p' <<<"$line")
            check=$(sed -n -e 's/.* fraction=\([^ ]*\).*/\1/p' \
                           -e 's/.* mean=\([^,]*\),.*/\1/p' <<<"$line")
        fi
        collect "$label" "$ranks"
    fi
    printf '%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n' "$label" "$ranks" "$rep" "$rc" \
        "$cmd_wall" "$cmd_rss" "${self_wall:-nan}" "${self_rss:-nan}" "${check:-nan}" >>"$results"
    rm -f "${bench_outputs[@]}"
}

bench_table() {
    BENCH_LOAD_START=$load_start BENCH_LOAD_END=$(cut -d' ' -f1-3 /proc/loadavg) \
        BENCH_CORES=$(nproc) "$PY" "$here/$1" table "$results" "$N" "$REPEATS"
}
