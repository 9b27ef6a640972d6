#!/usr/bin/env bash
# run_io.sh — write bandwidth of `helmix make`: the time its write phase takes (the per-
# component attribute timing_write that make records in /helmix, summed) against a plain `dd`
# of the same number of bytes into the same directory, and against helmix with [output]
# alignment and io_hints set.
#
# Rows, run side by side in every repeat:
#   helmix default      make with HDF5's packing and no hints (Open MPI's default MPI-IO, OMPIO)
#   helmix tuned        alignment = 1048576, io_hints = cb_nodes=1,romio_cb_write=enable
#   helmix tuned romio  the same under `--mca io romio321`, where those ROMIO hints take effect
#   dd                  dd if=/dev/zero of=F bs=1M count=MIB   (page cache, like helmix's writes)
#   dd fdatasync        the same with conv=fdatasync           (to the disk: for information)
# helmix never syncs its file, so it is compared with dd without fdatasync: both measure the
# bandwidth into the page cache; the fdatasync row shows what the disk itself takes.
#
# Usage:  bash bench/run_io.sh [N=256]
# Environment (optional): HELMIX, REPEATS=5, PRECISION=single|double (default single), TMPDIR
# (the directory written to: the bandwidth is that of its file system). Nothing is written in
# the repository.
set -euo pipefail
# shellcheck source-path=SCRIPTDIR source=lib.sh
source "$(dirname "${BASH_SOURCE[0]}")/lib.sh"

bench_init "${1:-256}" h5py
PRECISION=${PRECISION:-single}
[[ $PRECISION == single || $PRECISION == double ]] || die "PRECISION must be single or double, got '$PRECISION'"
bytes_per_value=4
[[ $PRECISION == double ]] && bytes_per_value=8
bytes=$(( 3 * N * N * N * bytes_per_value ))
mib=$(( (bytes + 1048575) / 1048576 ))
HINTS="cb_nodes=1,romio_cb_write=enable"

recipe() { # recipe NAME [KEY = VALUE lines of [output]]
    local f=$work/$1.ini
    shift
    printf '[grid]\ncells = %s\n[mix]\nzeta = 0.5\n[random]\nseed = 1\n[output]\nfile = %s\nprecision = %s\n' \
        "$N" "$work/helmix.h5" "$PRECISION" >"$f"
    printf '%s\n' "$@" >>"$f"
    echo "$f"
}
plain=$(recipe plain)
tuned=$(recipe tuned "alignment = 1048576" "io_hints = $HINTS")

bench_outputs=("$work"/helmix.h5{,.xmf} "$work/dd.bin")

# collect LABEL RANKS (see lib.sh): self_wall is the write time (helmix: the sum of
# timing_write; dd: the seconds it reports), check the bytes written.
collect() {
    if [[ $1 == helmix* ]]; then
        self_wall=$("$PY" "$here/report_io.py" writes "$work/helmix.h5") || self_wall=nan
    else
        self_wall=$(sed -n 's/.* copied, \([0-9.e+-]*\) s,.*/\1/p' "$work/stderr.txt" | tail -n 1)
    fi
    check=$bytes
}

echo "helmix write benchmark: N=$N, $PRECISION, $bytes bytes ($mib MiB), $REPEATS repeats, into $work" >&2
for rep in $(seq 1 "$REPEATS"); do
    for p in 1 2; do
        echo "  repeat $rep: $p rank(s): helmix default, tuned, tuned under ROMIO" >&2
        run_one helmix_default "$p" "$rep" "${MPIEXEC[@]}" -n "$p" "$HELMIX" make "$plain" --force --quiet
        run_one helmix_tuned "$p" "$rep" "${MPIEXEC[@]}" -n "$p" "$HELMIX" make "$tuned" --force --quiet
        run_one helmix_tuned_romio "$p" "$rep" "${MPIEXEC[@]}" --mca io romio321 -n "$p" "$HELMIX" make "$tuned" \
            --force --quiet
    done
    echo "  repeat $rep: dd of $mib MiB, without and with fdatasync" >&2
    run_one dd 1 "$rep" dd if=/dev/zero of="$work/dd.bin" bs=1M count="$mib"
    run_one dd_fdatasync 1 "$rep" dd if=/dev/zero of="$work/dd.bin" bs=1M count="$mib" conv=fdatasync
done

bench_table report_io.py
