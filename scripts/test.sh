#!/bin/bash
# helmix tests: install what is missing, build, run the whole suite with ctest.
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
bash "$root/scripts/setup.sh"
# The tests run on one machine: Open MPI's shared-memory transport alone starts each launch in
# about half the time of the default set (which also probes TCP); users' runs are not affected.
export OMPI_MCA_btl="${OMPI_MCA_btl:-self,vader}" OMPI_MCA_pml="${OMPI_MCA_pml:-ob1}"
cd "$root/build"
ctest --output-on-failure "$@"  # one test at a time: concurrent mpiexec launches race on their session directories
