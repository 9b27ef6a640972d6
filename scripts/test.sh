#!/bin/bash
# helmix tests: install what is missing, build, run the whole suite with ctest.
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
bash "$root/scripts/setup.sh"
cd "$root/build"
ctest --output-on-failure "$@"  # one test at a time: concurrent mpiexec launches race on their session directories
