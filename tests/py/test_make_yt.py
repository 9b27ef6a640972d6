#!/usr/bin/python3
"""The helmix output file is Grid Data Format that yt opens.

yt (Turk et al. 2011, ApJS 192, 9) with its GDF reader is the external
consumer: it must load a non-cubic cube, report its dimensions and edges, and
return the same velocity values as h5py. The group/attribute layout is also
checked against the GDF description (yt project documentation of the Grid
Data Format, from memory).
"""

import sys
import logging

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

SRC_YT = "yt 4.x GDF frontend (Turk et al. 2011, ApJS 192, 9)"
SRC_GDF = "Grid Data Format layout, yt project documentation (from memory)"
CELLS = (32, 16, 8)
BOX = (2.0, 1.0, 0.5)


def recipe(precision):
    return {
        "grid": {"cells": " ".join(map(str, CELLS)), "box": " ".join(map(str, BOX))},
        "spectrum": {"shape": "power", "slope": 2.0, "kmin": 1},
        "mix": {"zeta": 0.5},
        "amplitude": {"vrms": 1.0},
        "random": {"seed": 9},
        "output": {"precision": precision},
    }


def gdf_layout(c, path):
    Nx, Ny, Nz = CELLS
    with h5py.File(path, "r") as f:
        g = f.get("/gridded_data_format")
        sw = g.attrs.get("data_software") if g is not None else None
        sw = sw.decode() if isinstance(sw, bytes) else sw
        c.check("/gridded_data_format group with data_software=helmix",
                g is not None and sw == "helmix", f"{sw!r}", SRC_GDF)
        sp = f["/simulation_parameters"].attrs
        ok = (list(sp["domain_dimensions"]) == [Nx, Ny, Nz]
              and np.allclose(sp["domain_left_edge"], 0)
              and np.allclose(sp["domain_right_edge"], BOX)
              and int(sp["field_ordering"]) == 1
              and list(sp["boundary_conditions"]) == [0] * 6
              and int(sp["dimensionality"]) == 3
              and int(sp["num_ghost_zones"]) == 0
              and int(sp["cosmological_simulation"]) == 0
              and "refine_by" in sp and "current_time" in sp and "unique_identifier" in sp)
        c.check("/simulation_parameters attributes", ok,
                {k: sp[k] for k in sp.keys()}, SRC_GDF)
        ft = f.get("/field_types")
        c.check("/field_types/velocity_x|y|z groups",
                ft is not None and all(f"velocity_{a}" in ft for a in "xyz"),
                list(ft.keys()) if ft is not None else None, SRC_GDF)
        ok = (list(np.ravel(f["/grid_dimensions"][...])) == [Nx, Ny, Nz]
              and list(np.ravel(f["/grid_left_index"][...])) == [0, 0, 0]
              and list(np.ravel(f["/grid_level"][...])) == [0]
              and list(np.ravel(f["/grid_parent_id"][...])) == [-1]
              and list(np.ravel(f["/grid_particle_count"][...])) == [0])
        c.check("grid index datasets describe one root grid", ok,
                {k: np.ravel(f[k][...]).tolist() for k in
                 ("/grid_dimensions", "/grid_left_index", "/grid_level",
                  "/grid_parent_id", "/grid_particle_count") if k in f}, SRC_GDF)
        shapes = [f[f"/data/grid_0000000000/velocity_{a}"].shape for a in "xyz"]
        c.check("datasets shaped (Nz, Ny, Nx)", all(s == (Nz, Ny, Nx) for s in shapes),
                shapes, "helmix specification (field_ordering=1, x fastest)")


def body(args, hx, c):
    import yt
    yt.set_log_level(50)
    logging.getLogger("yt").setLevel(logging.CRITICAL)
    for prec in ("single", "double"):
        run = hx.make(recipe(prec), ranks=2, name=f"yt_{prec}")
        if not c.check(f"[{prec}] helmix make exits 0", run.ok,
                       f"{run.seconds:.2f} s" if run.ok else run.describe()):
            continue
        if prec == "single":
            gdf_layout(c, run.out)
        ds = yt.load(run.out)
        c.check(f"[{prec}] yt.load recognises GDF", type(ds).__name__ == "GDFDataset",
                type(ds).__name__, SRC_YT)
        dd = [int(x) for x in ds.domain_dimensions]
        c.check(f"[{prec}] ds.domain_dimensions == [Nx,Ny,Nz]", dd == list(CELLS), dd, SRC_YT)
        re = np.asarray(ds.domain_right_edge.to("code_length").d)
        le = np.asarray(ds.domain_left_edge.to("code_length").d)
        c.check(f"[{prec}] ds.domain_right_edge == box, left edge == 0",
                np.allclose(re, BOX, rtol=0, atol=1e-14) and np.allclose(le, 0, atol=1e-14),
                f"right={re.tolist()} left={le.tolist()}", SRC_YT)
        per = list(ds.periodicity)
        c.check(f"[{prec}] yt reads the box as periodic", all(per), per, SRC_YT)
        cg = ds.covering_grid(0, ds.domain_left_edge, ds.domain_dimensions)
        with h5py.File(run.out, "r") as f:
            for a in "xyz":
                ref = f[f"/data/grid_0000000000/velocity_{a}"][...].astype(np.float64)
                got = np.asarray(cg[("gdf", f"velocity_{a}")].d, dtype=np.float64)
                want = ref.transpose(2, 1, 0)  # (Nz,Ny,Nx) -> (Nx,Ny,Nz)
                same = got.shape == want.shape and np.array_equal(got, want)
                c.check(f"[{prec}] covering_grid velocity_{a} == h5py data transposed",
                        same, f"shape {got.shape} vs {want.shape}; max|d|="
                        f"{np.max(np.abs(got - want)) if got.shape == want.shape else 'n/a'}",
                        SRC_YT)
        # cell centres from yt: x = (i + 1/2) dx
        x = np.asarray(cg[("index", "x")].to("code_length").d)
        dx = BOX[0] / CELLS[0]
        c.check(f"[{prec}] yt cell centres x_i = (i+1/2) dx",
                np.allclose(x[:, 0, 0], (np.arange(CELLS[0]) + 0.5) * dx, atol=1e-12),
                f"x[0..2]={x[:3, 0, 0].tolist()}", SRC_YT)
        ad = ds.all_data()
        vx = np.sort(np.asarray(ad[("gdf", "velocity_x")].d))
        with h5py.File(run.out, "r") as f:
            ref = np.sort(f["/data/grid_0000000000/velocity_x"][...].astype(np.float64).ravel())
        c.check(f"[{prec}] all_data velocity_x holds the same values",
                vx.shape == ref.shape and np.array_equal(vx, ref), f"n={vx.size}", SRC_YT)


if __name__ == "__main__":
    H.run_main("test_make_yt", __doc__, body)
