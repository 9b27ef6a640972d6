#!/bin/bash
# helmix under AddressSanitizer and UndefinedBehaviorSanitizer (float-cast-overflow included):
# build with -DHELMIX_SANITIZE=ON into build-asan/ (HX_ASAN_BUILD to choose another directory),
# then run the unit tests, the MPI layout and I/O tests and a subset of the Python tests that
# covers make, inspect, suite and plan. Every report fails the run: the runtimes write reports
# to files (log_path) and the run fails if any file appears, even where a test expected a
# non-zero exit. Leaks of the MPI, HDF5 and fontconfig libraries are suppressed by name in
# tests/sanitizers/lsan.supp; helmix's own leaks are reported. Extra arguments go to ctest.
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
build=${HX_ASAN_BUILD:-$root/build-asan}
reports=$build/sanitizer-reports
t0=$(date +%s)

cmake -S "$root" -B "$build" -DCMAKE_BUILD_TYPE=Debug -DHELMIX_SANITIZE=ON > /dev/null
cmake --build "$build" -j "$(nproc)" > "$build.log" 2>&1 || { tail -40 "$build.log"; exit 1; }
t1=$(date +%s)

rm -rf "$reports"
mkdir -p "$reports"
# fast_unwind_on_malloc=0: MPI and HDF5 are built without frame pointers, so only the slow
# unwinder gives leak stacks deep enough to name the library the suppressions match.
common="log_path=$reports/report:exitcode=86"
export ASAN_OPTIONS="$common:detect_leaks=1:fast_unwind_on_malloc=0:check_initialization_order=1:strict_init_order=1"
export UBSAN_OPTIONS="$common:print_stacktrace=1:halt_on_error=1"
# use_tls=0: GCC 12's LeakSanitizer crashes reading glibc 2.36's dynamic thread-local storage in
# an MPI singleton ("Tracer caught signal 11"); what only TLS holds is OpenMP's (suppressed by name).
export LSAN_OPTIONS="suppressions=$root/tests/sanitizers/lsan.supp:print_suppressions=0:use_tls=0"
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1
export OMPI_MCA_btl="${OMPI_MCA_btl:-self,vader}" OMPI_MCA_pml="${OMPI_MCA_pml:-ob1}" # one machine: see test.sh

# py_make_errors, py_inspect_errors and py_plan launch too many processes or too large cubes for
# their timeouts here (the leak check costs about 2 s per process); plan is run below instead.
tests='^(unit_.*|mpi_layout_.*|mpi_io_.*|py_make_parts|py_make_xdmf|py_inspect_outputs|py_suite)$'
status=0
(cd "$build" && ctest --output-on-failure -R "$tests" "$@") || status=1

# helmix plan on every example recipe (it fits: exit 0 without a budget) and one refusal (exit 2).
for ini in "$root"/ics/*.ini; do
  "$build/helmix" plan "$ini" --ranks 3 --json > /dev/null ||
    { echo "helmix sanitizers: plan $ini --ranks 3 failed"; status=1; }
done
rc=0
"$build/helmix" plan "$root/ics/demo64.ini" --ranks 2 --mem-per-rank 1K > /dev/null 2>&1 || rc=$?
[ "$rc" = 2 ] || { echo "helmix sanitizers: plan with a 1 KB budget exited $rc, not 2"; status=1; }
echo "helmix sanitizers: plan on $(ls "$root"/ics/*.ini | wc -l) example recipes and one refusal"

found=$(find "$reports" -type f | sort)
if [ -n "$found" ]; then
  echo "helmix sanitizers: $(echo "$found" | wc -l) report(s):"
  for f in $found; do echo "==== $f"; cat "$f"; done
  status=1
fi
t2=$(date +%s)
echo "helmix sanitizers: build $((t1 - t0)) s, tests $((t2 - t1)) s; $([ $status = 0 ] && echo clean || echo FAILED)"
exit $status
