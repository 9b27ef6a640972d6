#!/bin/bash
# valgrind memcheck of helmix: a small make (16^3, one rank, double precision, a lognormal density
# and a magnetic field with faces, so that every writer runs) and an inspect of its output with
# --check, --json, --csv and --plot. Any error memcheck reports in helmix's code (invalid reads or
# writes, uninitialised values, definite leaks) fails the test; the MPI, HDF5, OpenMP and
# fontconfig libraries' own reports are suppressed by name in tests/valgrind/helmix.supp.
# Usage: run.sh HELMIX [WORKDIR]. Exit 77 (ctest: skipped) when valgrind is not installed.
set -uo pipefail
helmix=${1:?usage: run.sh HELMIX [WORKDIR]}
here=$(cd "$(dirname "$0")" && pwd)
if ! command -v valgrind > /dev/null; then
  echo "valgrind_memcheck: skipped: valgrind is not installed (Debian package valgrind)"
  exit 77
fi
work=${2:-$(mktemp -d "${TMPDIR:-/tmp}/helmix_valgrind_XXXXXX")}
mkdir -p "$work"
trap '[ -z "${2:-}" ] && rm -rf "$work"' EXIT
cat > "$work/small.ini" <<'EOF'
[grid]
cells = 16
[spectrum]
slope = 2
[mix]
compressive_fraction = 0.3
[amplitude]
vrms = 1
[density]
model = lognormal
sigma_s = 0.5
[magnetic]
strength = 1
random_ratio = 0.5
[magnetic_spectrum]
shape = power
[random]
seed = 5
[output]
precision = double
EOF

# One transport, shared memory, so that no network is probed under valgrind.
export OMPI_MCA_btl=self,vader OMPI_MCA_pml=ob1
export OMP_NUM_THREADS=1
vg=(valgrind --tool=memcheck --error-exitcode=97 --leak-check=full --show-leak-kinds=definite
    --errors-for-leak-kinds=definite --track-origins=yes --num-callers=40
    --suppressions="$here/helmix.supp" --gen-suppressions=all)
status=0
run() {  # label, then the helmix command line
  local label=$1; shift
  local t0=$SECONDS
  "${vg[@]}" --log-file="$work/$label.vg" "$helmix" "$@" > "$work/$label.out" 2> "$work/$label.err"
  local rc=$?
  local errors
  errors=$(grep -E "ERROR SUMMARY: [0-9]+" "$work/$label.vg" | tail -1)
  echo "valgrind_memcheck: $label: exit $rc, $errors ($((SECONDS - t0)) s)"
  if [ "$rc" != 0 ]; then
    status=1
    echo "---- helmix stderr"; cat "$work/$label.err"
    echo "---- memcheck"; cat "$work/$label.vg"
  fi
}
run make make "$work/small.ini" -o "$work/small.h5" --quiet
[ -f "$work/small.h5" ] || { echo "valgrind_memcheck: make wrote no cube"; exit 1; }
run inspect inspect "$work/small.h5" --check --json "$work/small.json" --csv "$work/small.csv" \
    --plot "$work/small.png" --quiet
if [ $status = 0 ]; then
  echo "valgrind_memcheck: no memcheck error in make and inspect"
  echo "1 passed, 0 failed"
else
  echo "1 passed, 1 failed"
fi
exit $status
