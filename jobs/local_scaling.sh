#!/bin/bash
# helmix strong-scaling run on one machine: the same recipe on 1, 2, 4, ... ranks, reporting
# wall time and peak memory per rank from the /helmix attributes of each output.
# usage: jobs/local_scaling.sh [CELLS] [MAXRANKS]   (defaults 128 and 4)
set -euo pipefail
cells=${1:-128}
maxp=${2:-4}
here=$(cd "$(dirname "$0")/.." && pwd)
helmix=${HELMIX:-$here/build/helmix}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
printf '[grid]\ncells = %s\n[output]\nfile = %s/scale.h5\n' "$cells" "$work" > "$work/scale.ini"
launcher=${MPIEXEC:-mpiexec --oversubscribe}
[ "$(id -u)" = 0 ] && launcher="$launcher --allow-run-as-root"
printf '%6s %10s %14s\n' ranks "total s" "peak MiB/rank"
p=1
while [ "$p" -le "$maxp" ]; do
  $launcher -n "$p" "$helmix" make "$work/scale.ini" --force --quiet
  /usr/bin/python3 - "$work/scale.h5" "$p" <<'PY'
import sys, h5py
a = h5py.File(sys.argv[1], "r")["helmix"].attrs
print(f"{sys.argv[2]:>6} {float(a['timing_total']):10.2f} {int(a['peak_rss_bytes']) / 2**20:14.1f}")
PY
  p=$((p * 2))
done
