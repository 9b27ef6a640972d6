#!/bin/bash
# helmix setup: install the Debian packages helmix needs (only those missing), then configure
# and build into build/. Sourced or run by demo.sh, test.sh and .ci/run.
set -euo pipefail
root=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
pkgs=(build-essential cmake pkg-config openmpi-bin libopenmpi-dev libfftw3-dev libfftw3-mpi-dev
      libhdf5-openmpi-dev hdf5-tools librandom123-dev libinih-dev libcjson-dev libcairo2-dev
      poppler-utils python3-numpy python3-scipy python3-h5py python3-yt time clang-14 libclang-rt-14-dev valgrind)
missing=()
for p in "${pkgs[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if [ ${#missing[@]} -gt 0 ]; then
  echo "helmix setup: installing ${missing[*]}"
  sudo_=""
  [ "$(id -u)" = 0 ] || sudo_="sudo"
  $sudo_ apt-get update -q
  DEBIAN_FRONTEND=noninteractive $sudo_ apt-get install -y -q --no-install-recommends "${missing[@]}"
fi
cmake -S "$root" -B "$root/build" -DCMAKE_BUILD_TYPE=Release > /dev/null
cmake --build "$root/build" -j "$(nproc)"
