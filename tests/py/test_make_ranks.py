#!/usr/bin/python3
"""Rank-count invariance of `helmix make`.

The field is a function of the recipe only, so 1, 2, 3 and 4 MPI ranks must
give the same numbers to round-off, including grids that the rank count does
not divide and grids with fewer planes than ranks give some ranks nothing.
Reference: the 1-rank run of the same recipe; the 3D rms and compressive
share are also recomputed with numpy.
"""

import sys
import numpy as np

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

SRC = ("helmix specification (result independent of the rank count); "
       "round-off bound 1e-12*vrms in double precision")


def recipe(cells, seed, mix, kmax=None, box=None):
    r = {
        "grid": {"cells": cells},
        "spectrum": {"shape": "power", "slope": 2.0, "kmin": 1},
        "mix": mix,
        "amplitude": {"vrms": 1.5},
        "random": {"seed": seed},
        "output": {"precision": "double"},
    }
    if kmax is not None:
        r["spectrum"]["kmax"] = kmax
    if box is not None:
        r["grid"]["box"] = box
    return r


CASES = [
    # label, cells, box, mix, rank counts (1 is the reference)
    ("64^3 shell-exact", "64", None, {"compressive_fraction": 0.4, "exact": "shell"},
     (1, 2, 3, 4)),
    ("48x40x36 zeta", "48 40 36", "1.2 1 0.9", {"zeta": 0.3}, (1, 3, 4)),
    ("8x8x4 (4 z-planes, 4 ranks)", "8 8 4", None, {"compressive_fraction": 0.5}, (1, 3, 4)),
    ("4^3 (3, 4 ranks: a rank may own no plane)", "4", None, {"zeta": 0.5}, (1, 3, 4)),
    ("6x4x6", "6 4 6", None, {"zeta": 0.7}, (1, 4)),
    ("4x6x8", "4 6 8", None, {"compressive_fraction": 0.2}, (1, 3, 4)),
]


def body(args, hx, c):
    for i, (label, cells, box, mix, counts) in enumerate(CASES):
        seed = 500 + i
        ref = None
        for p in counts:
            run = hx.make(recipe(cells, seed, mix, box=box), ranks=p,
                          name=f"case{i}_p{p}")
            if not c.check(f"[{label}] {p} ranks: exit 0", run.ok,
                           f"{run.seconds:.2f} s" if run.ok else run.describe()):
                continue
            cube = H.Cube(run.out)
            rms = cube.rms3()
            c.check(f"[{label}] {p} ranks: 3D rms == vrms", abs(rms / 1.5 - 1) < 1e-10,
                    f"rms={rms:.15g}", "definition of the 3D rms, common practice")
            c.check(f"[{label}] {p} ranks: attr ranks == {p}",
                    int(cube.attrs.get("ranks", -1)) == p, f"{cube.attrs.get('ranks')}",
                    "helmix specification")
            if p == 1:
                ref = cube
                continue
            if ref is None:
                c.fail(f"[{label}] {p} ranks: no 1-rank reference")
                continue
            d = float(np.max(np.abs(cube.v - ref.v)))
            c.check(f"[{label}] {p} ranks == 1 rank (max|dv| < 1e-12*vrms)", d < 1e-12 * 1.5,
                    f"max|dv|={d:.2e}", SRC)
            a1 = float(ref.attrs["realized_compressive_fraction"])
            ap = float(cube.attrs["realized_compressive_fraction"])
            c.check(f"[{label}] {p} ranks: realized compressive share attr == 1 rank",
                    abs(a1 - ap) < 1e-12, f"{ap:.15f} vs {a1:.15f}", SRC)


if __name__ == "__main__":
    H.run_main("test_make_ranks", __doc__, body)
