#!/usr/bin/python3
"""helmix inspect --verify: the checksums make stores with every dataset are recomputed from the
file; an intact cube passes (exit 0, then the analysis), a copy with one flipped bit in
velocity_y is reported by name with exit status 1 and no analysis, on 1 and 3 ranks; a file
without checksums (written by h5py) is refused with exit 2. A cube under a 300-character path
is read (Open MPI's I/O layer aborts on names of about 240 characters unless helmix routes them).

Sources: helmix's documented exit codes (1: a check found a difference, 2: bad input); h5py's
`dset.id.get_offset()` (the h5py documentation) to find the bytes of a contiguous dataset, so
the corruption is made independently of helmix.
"""
import shutil

import h5py
import numpy as np

import hxcheck

GRID = "/data/grid_0000000000"


def body(args, hx, c):
    run = hx.make({"grid": {"cells": 24}, "random": {"seed": 4}}, ranks=2, name="verify")
    if not c.check("make exits 0", run.ok, run.describe()[:300]):
        return
    bad = hx.path("flipped.h5")
    shutil.copy(run.out, bad)
    with h5py.File(bad, "r") as f:
        off = f[GRID + "/velocity_y"].id.get_offset()
    with open(bad, "r+b") as f:
        f.seek(off + 100)
        b = f.read(1)
        f.seek(off + 100)
        f.write(bytes([b[0] ^ 0x04]))
    for ranks in (1, 3):
        ok = hx.launch(["inspect", run.out, "--verify"], ranks=ranks)[0]
        c.check(f"[{ranks} rank(s)] intact cube: exit 0, every dataset ok, then the analysis",
                ok.returncode == 0 and ok.stdout.count(" ok (checksum") == 3 and "compressive share" in ok.stdout,
                f"rc {ok.returncode}", "helmix exit codes")
        p = hx.launch(["inspect", bad, "--verify"], ranks=ranks)[0]
        lines = [ln for ln in hxcheck.mpi_noise_free_lines(p.stderr) if ln.startswith("helmix")]
        c.check(f"[{ranks} rank(s)] one flipped bit: exit 1, velocity_y named, the others ok, no analysis",
                p.returncode == 1 and "velocity_y" in p.stdout and "MISMATCH" in p.stdout
                and p.stdout.count(" ok (checksum") == 2 and "compressive share" not in p.stdout and len(lines) == 1,
                f"rc {p.returncode}: {lines}", "helmix exit codes; h5py get_offset")
    import os
    deep = hx.path(os.path.join("d" * 120, "e" * 120))
    os.makedirs(deep)
    long_path = os.path.join(deep, "a_cube_with_a_long_enough_name.h5")
    shutil.copy(run.out, long_path)
    for ranks in (1, 3):
        p = hx.launch(["inspect", long_path, "--verify", "--check", "--quiet"], ranks=ranks)[0]
        c.check(f"[{ranks} rank(s)] a {len(long_path)}-character path: verified and checked, exit 0",
                p.returncode == 0 and "verdict: PASS" in p.stdout, f"rc {p.returncode} {p.stderr[-300:]}",
                "helmix exit codes")
    foreign = hx.path("foreign.h5")
    rng = np.random.default_rng(1)
    with h5py.File(foreign, "w") as f:
        for a in "xyz":
            f[GRID + "/velocity_" + a] = rng.standard_normal((8, 8, 8))
    p = hx.launch(["inspect", foreign, "--verify"], ranks=1)[0]
    c.check("a file without checksums: exit 2, one line saying so", p.returncode == 2 and "no checksums" in p.stderr,
            f"rc {p.returncode}", "helmix exit codes")


if __name__ == "__main__":
    hxcheck.run_main("inspect_verify", __doc__, body)
