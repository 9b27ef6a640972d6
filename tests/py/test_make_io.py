#!/usr/bin/python3
"""Output tuning of `helmix make`: [output] alignment and [output] io_hints.

Read back with h5py as an independent reader:
  * with alignment = 1048576 every field dataset's raw data starts at a file address that is a
    multiple of 1 MiB (h5py's DatasetID.get_offset, which returns HDF5's H5Dget_offset: "the
    address in the file of the dataset's raw data"), and without it HDF5's packing does not do
    so by chance;
  * MPI-IO hints (cb_nodes=1,romio_cb_write=enable: ROMIO's collective-buffering hints, which
    change how the bytes reach the file, never which bytes) and the alignment leave every value
    identical to a file written without them;
  * a malformed hint text or alignment exits 2 with one line naming the key, and nothing is
    created (no file, no .partial, no .xmf);
  * the tuning is recorded under /helmix, with HDF5's own account of every field write
    (H5Pget_mpio_actual_io_mode): none fell back to independent I/O.
The density of a lognormal cloud is written from doubles into the single-precision file, so
that path is covered too.
"""

import os
import sys

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

SRC_OFFSET = "h5py DatasetID.get_offset = HDF5 H5Dget_offset (address of the raw data)"
SRC_ROMIO = "ROMIO hints cb_nodes, romio_cb_write (MPI-IO users' guide): how data moves, not what"
SRC_MODE = "HDF5 H5Pget_mpio_actual_io_mode per field write, as make records it (io_transfers)"
SRC_SPEC = "helmix specification (exit 2, one line naming the key, nothing written)"
MIB = 1 << 20
GRID = "/data/grid_0000000000"
HINTS = "cb_nodes=1,romio_cb_write=enable"


def recipe(**output):
    out = {"precision": "single"}
    out.update(output)
    return {
        "grid": {"cells": 32},
        "mix": {"zeta": 0.5},
        "density": {"model": "lognormal", "sigma_s": 1.0, "mean": 1},
        "random": {"seed": 11},
        "output": out,
    }


def datasets(path):
    """name -> (offset, values) of every field dataset."""
    with h5py.File(path, "r") as f:
        g = f[GRID]
        return {k: (g[k].id.get_offset(), g[k][...]) for k in g}


def body(args, hx, c):
    plain = hx.make(recipe(), ranks=2, name="plain")
    aligned = hx.make(recipe(alignment=MIB), ranks=2, name="aligned")
    hinted = hx.make(recipe(io_hints=HINTS), ranks=2, name="hinted")
    both = hx.make(recipe(alignment=MIB, io_hints=HINTS), ranks=2, name="both")
    runs = {"plain": plain, "aligned": aligned, "hinted": hinted, "both": both}
    for name, run in runs.items():
        c.check(f"[{name}] helmix make exits 0", run.ok, "" if run.ok else run.describe())
    if not all(r.ok for r in runs.values()):
        return
    d = {name: datasets(run.out) for name, run in runs.items()}
    names = sorted(d["plain"])
    c.check("four field datasets (density, velocity_x|y|z)", len(names) == 4, names)

    for name in ("aligned", "both"):
        offs = {k: d[name][k][0] for k in names}
        c.check(f"[{name}] every field dataset starts at a multiple of 1 MiB",
                all(o is not None and o % MIB == 0 for o in offs.values()), offs, SRC_OFFSET)
    offs = {k: d["plain"][k][0] for k in names}
    c.check("[plain] without alignment HDF5 packs the datasets (not all on 1 MiB boundaries)",
            not all(o is not None and o % MIB == 0 for o in offs.values()), offs, SRC_OFFSET)

    for name in ("aligned", "hinted", "both"):
        same = all(d[name][k][1].dtype == d["plain"][k][1].dtype
                   and np.array_equal(d[name][k][1], d["plain"][k][1]) for k in names)
        c.check(f"[{name}] every value identical to the file without tuning", same,
                {k: float(np.max(np.abs(d[name][k][1].astype(np.float64)
                                        - d["plain"][k][1].astype(np.float64)))) for k in names},
                SRC_ROMIO)

    for name in ("plain", "both"):
        with h5py.File(runs[name].out, "r") as f:
            a = f["helmix"].attrs
            got = tuple(a.get(k) for k in ("io_alignment", "io_hints", "io_transfers"))
        want = (MIB, HINTS) if name == "both" else (0, "none")
        ok = (all(g is not None for g in got) and float(got[0]) == want[0] and str(got[1]) == want[1]
              and int(got[2][1]) == 0 and int(got[2][0]) >= 4)
        c.check(f"[{name}] /helmix records io_alignment = {want[0]}, io_hints = {want[1]}, and every"
                " field write (velocity, and the density rounded from doubles) as a collective transfer",
                ok, got, SRC_MODE)

    bad = [("io_hints", "cb_nodes", "[output] io_hints"),
           ("io_hints", "cb_nodes=1,,romio_cb_write=enable", "[output] io_hints"),
           ("io_hints", "cb_nodes=1,cb_nodes=2", "[output] io_hints"),
           ("io_hints", "cb_nodes=", "[output] io_hints"),
           ("alignment", "1.5", "[output] alignment")]
    for i, (key, value, words) in enumerate(bad):
        sub = hx.path(f"bad{i}")
        os.mkdir(sub)
        out = os.path.join(sub, "cube.h5")
        run = hx.make(recipe(**{key: value}), ranks=2, out=out, name=f"bad{i}")
        lines = H.mpi_noise_free_lines(run.stderr)
        left = sorted(os.listdir(sub))
        c.check(f"[{key} = {value}] exit 2, one line naming {words}, nothing created",
                run.rc == 2 and len(lines) == 1 and words in lines[0] and not left,
                f"rc={run.rc} lines={lines!r} created={left}", SRC_SPEC)


if __name__ == "__main__":
    H.run_main("make_io", __doc__, body)
