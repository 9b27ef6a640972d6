#!/usr/bin/python3
"""The XDMF sidecar written next to each helmix cube.

Parsed with Python's xml.etree; checked against the XDMF model (xdmf.org,
"XDMF Model and Format": Domain/Grid/Topology/Geometry/Attribute/DataItem,
3DCoRectMesh topology with dimensions in z y x order, ORIGIN_DXDYDZ geometry,
HDF DataItems as "file:/dataset"; from memory) and against the HDF5 file
itself read with h5py.
"""

import sys
import os
import xml.etree.ElementTree as ET

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

SRC_XDMF = "XDMF Model and Format, xdmf.org (from memory)"
SRC_XML = "XML 1.0 well-formedness via Python xml.etree (common practice)"
CELLS = (32, 16, 8)
BOX = (2.0, 1.0, 0.5)


def recipe(precision):
    return {
        "grid": {"cells": " ".join(map(str, CELLS)), "box": " ".join(map(str, BOX))},
        "spectrum": {"shape": "power", "slope": 2.0, "kmin": 1},
        "mix": {"zeta": 0.5},
        "random": {"seed": 5},
        "output": {"precision": precision},
    }


def ints(s):
    return [int(x) for x in s.split()]


def floats(s):
    return [float(x) for x in s.split()]


def attr_ci(el, name, default=None):
    for k, v in el.attrib.items():
        if k.lower() == name.lower():
            return v
    return default


def body(args, hx, c):
    Nx, Ny, Nz = CELLS
    for prec, size in (("single", 4), ("double", 8)):
        sub = hx.path(prec)
        os.mkdir(sub)
        out = os.path.join(sub, "cube.h5")
        run = hx.make(recipe(prec), ranks=2, out=out, name=f"x_{prec}")
        if not c.check(f"[{prec}] helmix make exits 0", run.ok,
                       "" if run.ok else run.describe()):
            continue
        cands = [out + ".xmf", os.path.splitext(out)[0] + ".xmf"]
        xmf = next((p for p in cands if os.path.exists(p)), None)
        c.check(f"[{prec}] sidecar .xmf written next to the file", xmf is not None,
                f"found {os.path.basename(xmf) if xmf else None} in {sorted(os.listdir(sub))}",
                "helmix specification")
        c.check(f"[{prec}] no .partial left behind",
                not any(n.endswith(".partial") for n in os.listdir(sub)),
                sorted(os.listdir(sub)), "helmix specification")
        if xmf is None:
            continue
        try:
            root = ET.parse(xmf).getroot()
        except ET.ParseError as e:
            c.fail(f"[{prec}] .xmf parses as XML", str(e))
            continue
        c.check(f"[{prec}] .xmf parses as XML with root <Xdmf>", root.tag == "Xdmf",
                root.tag, SRC_XML + "; " + SRC_XDMF)
        grids = root.findall(".//Domain/Grid")
        c.check(f"[{prec}] one Grid in Domain", len(grids) >= 1, f"{len(grids)} grids",
                SRC_XDMF)
        if not grids:
            continue
        grid = grids[0]
        topo = grid.find("Topology")
        geom = grid.find("Geometry")
        atts = grid.findall("Attribute")
        centers = {attr_ci(a, "Center", "Node") for a in atts}
        c.check(f"[{prec}] one centring for all attributes", len(centers) == 1,
                sorted(centers), SRC_XDMF)
        center = centers.pop() if len(centers) == 1 else "?"
        ttype = attr_ci(topo, "TopologyType", "") if topo is not None else ""
        tdims = ints(attr_ci(topo, "Dimensions", "")) if topo is not None else []
        if center.lower() == "cell":
            want_t, want_o = [Nz + 1, Ny + 1, Nx + 1], [0.0, 0.0, 0.0]
        else:
            want_t = [Nz, Ny, Nx]
            want_o = [BOX[2] / Nz / 2, BOX[1] / Ny / 2, BOX[0] / Nx / 2]
        c.check(f"[{prec}] Topology 3DCoRectMesh, Dimensions (z y x) match Center={center}",
                ttype.lower() == "3dcorectmesh" and tdims == want_t,
                f"type={ttype} dims={tdims} expected {want_t}", SRC_XDMF)
        gtype = attr_ci(geom, "GeometryType", "") if geom is not None else ""
        gitems = geom.findall("DataItem") if geom is not None else []
        ok_g = gtype.upper() == "ORIGIN_DXDYDZ" and len(gitems) == 2
        origin = floats(gitems[0].text) if ok_g else []
        spacing = floats(gitems[1].text) if ok_g else []
        want_s = [BOX[2] / Nz, BOX[1] / Ny, BOX[0] / Nx]
        c.check(f"[{prec}] Geometry ORIGIN_DXDYDZ: origin and spacing (z y x) of the box",
                ok_g and np.allclose(origin, want_o, atol=1e-12)
                and np.allclose(spacing, want_s, rtol=1e-12),
                f"origin={origin} spacing={spacing} expected {want_o} {want_s}", SRC_XDMF)
        # HDF data items
        items = [d for d in grid.iter("DataItem") if attr_ci(d, "Format", "").upper() == "HDF"]
        refs = {}
        for d in items:
            txt = (d.text or "").strip()
            fname, _, dset = txt.rpartition(":")
            refs[dset] = (fname, d)
        want = [f"/data/grid_0000000000/velocity_{a}" for a in "xyz"]
        c.check(f"[{prec}] HDF DataItems reference the three velocity datasets",
                all(w in refs for w in want), sorted(refs), SRC_XDMF)
        names = {attr_ci(a, "Name", "") for a in atts}
        c.check(f"[{prec}] attributes named after the velocity components",
                {"velocity_x", "velocity_y", "velocity_z"} <= names or "velocity" in names,
                sorted(names), SRC_XDMF)
        with h5py.File(out, "r") as f:
            for w in want:
                if w not in refs:
                    continue
                fname, d = refs[w]
                target = os.path.join(os.path.dirname(xmf), fname)
                same_file = os.path.exists(target) and os.path.samefile(target, out)
                dims = ints(attr_ci(d, "Dimensions", ""))
                p = int(attr_ci(d, "Precision", "4"))
                nt = attr_ci(d, "NumberType", "Float")
                ds = f[w]
                c.check(f"[{prec}] {w.rsplit('/', 1)[1]}: file resolves, Dimensions == "
                        f"h5 shape, Precision == {size}, NumberType Float",
                        same_file and tuple(dims) == ds.shape == (Nz, Ny, Nx)
                        and p == ds.dtype.itemsize == size and nt.lower() == "float",
                        f"file={fname} dims={dims} h5={ds.shape} prec={p} "
                        f"dtype={ds.dtype} type={nt}", SRC_XDMF)


if __name__ == "__main__":
    H.run_main("test_make_xdmf", __doc__, body)
