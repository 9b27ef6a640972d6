#!/usr/bin/python3
"""Data `helmix inspect` cannot analyse, and what its reports say (issue 9, item 11 and
"Usability").

  * Non-finite values: a NaN or an infinity anywhere in a velocity, density or
    magnetic dataset is bad input (exit 2) with one line naming the dataset, the
    count of NaN and infinite values (numpy.isnan / numpy.isinf) and the first one
    in the dataset's storage order (numpy.argwhere, C order), as cell (i, j, k)
    and as dataset index; on 1 and 3 ranks, where the first value and the others
    sit on different ranks (an xyz-ordered file puts a later z plane first), so
    the position must be agreed across ranks. No JSON is written.
  * Impossible --fit ranges: beyond the largest shell that holds modes, or with
    fewer than 3 shells that carry energy (the least-squares slope and its
    standard error need 3); shell contents recomputed with numpy.fft. A range
    with 3 shells still gives a finite slope.
  * Malformed /helmix attributes of a helmix file (a string vrms, two values for
    kmax, a NaN slope, no recipe, an unknown mix_mode, a text state attribute):
    exit 2, one line naming the attribute; the unaltered copy passes --check.
  * JSON and CSV agree: the same shells from the same k, every value equal, and
    an empty shell's share is null in JSON and an empty field in CSV (Python's
    csv module reads the literal field).
  * The verdict table keeps asked, target and measured apart: for zeta = 0.5
    with exact = none the share line shows the ensemble expectation
    (1-zeta)^2/(1-2 zeta+3 zeta^2) (Federrath et al. 2010, A&A 512, A81) as
    asked and the share as drawn (h5py: realized_compressive_fraction) as
    target; the slope line shows the recipe's 2 as asked and the fit expected
    on this grid (h5py: slope_fit_expected) as target. make's closing line shows
    the same two shares.
"""

import csv
import json
import math
import os
import re
import shutil
import sys

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

SRC_EXIT = "helmix specification: exit 2 = bad input, one line 'helmix: error: ...'"
SRC_NP = "numpy.isnan / numpy.isinf / numpy.argwhere (C order), numpy documentation"
SRC_FED = "expected compressive share (1-zeta)^2/(1-2 zeta+3 zeta^2), Federrath et al. 2010, A&A 512, A81"
GRID = "/data/grid_0000000000"


def refused(c, label, run, words):
    """exit 2, one 'helmix: error:' line holding every word, no JSON report."""
    lines = run.lines()
    low = lines[0] if lines else ""
    missing = [w for w in words if w not in low]
    no_json = not (run.json_path and os.path.exists(run.json_path))
    c.check(f"[{label}] exit 2, one error line naming {words}, no JSON",
            run.rc == 2 and len(lines) == 1 and low.startswith("helmix: error:") and not missing and no_json,
            f"rc={run.rc} lines={lines[:3]}" + (f" missing {missing}" if missing else ""), SRC_EXIT)
    return low


def first_bad(a):
    """count of NaN, count of infinities, first non-finite index in C order (numpy)."""
    bad = ~np.isfinite(a)
    return int(np.count_nonzero(np.isnan(a))), int(np.count_nonzero(np.isinf(a))), \
        tuple(int(x) for x in np.argwhere(bad)[0])


def nonfinite_cases(c, hx):
    cells = (12, 10, 9)  # Nx, Ny, Nz: 9 planes, 3 per rank on 3 ranks
    Nx, Ny, Nz = cells
    v = X.random_field(cells, (1.0, 1.0, 1.0), 5, nongauss=False)
    # zyx file: a NaN in /v at z = 7 (rank 2 of 3) and an infinity at z = 8
    zyx = hx.path("nan_zyx.h5")
    vv = v.copy()
    vv[1, 7, 3, 4] = np.nan
    vv[1, 8, 0, 0] = np.inf
    X.write_foreign(zyx, vv, order="zyx")
    with h5py.File(zyx, "r") as f:
        nn, ni, idx = first_bad(f["/v"][...])
    k, j, i = idx
    words = ["/v", f"{nn + ni} non-finite values", f"{nn} NaN", f"{ni} infinite",
             f"({i}, {j}, {k})", f"[{k}][{j}][{i}]"]
    for ranks in (0, 3):
        run = X.inspect(hx, zyx, "--vector", "/u,/v,/w", ranks=ranks)
        refused(c, f"NaN in /v, zyx, {ranks or 1} rank(s)", run, words)
    # xyz file: the first value in storage order (x slowest) lies in the last z plane (rank 2),
    # a later one in the first plane (rank 0): the smallest index must win across ranks
    xyz = hx.path("nan_xyz.h5")
    vv = v.copy()
    vv[2, Nz - 1, 2, 1] = np.nan   # (z, y, x) -> dataset index [x][y][z] = [1][2][8]
    vv[2, 0, 0, 5] = -np.inf       # [5][0][0]
    vv[2, 4, 6, 7] = np.nan
    X.write_foreign(xyz, vv, order="xyz")
    with h5py.File(xyz, "r") as f:
        nn, ni, idx = first_bad(f["/w"][...])
    i, j, k = idx
    c.check("[numpy] the first non-finite value of the xyz file sits in the last z plane", k == Nz - 1,
            f"first at {idx}", SRC_NP)
    words = ["/w", f"{nn} NaN", f"{ni} infinite", f"({i}, {j}, {k})", f"[{i}][{j}][{k}]"]
    for ranks in (0, 3):
        run = X.inspect(hx, xyz, "--vector", "/u,/v,/w", "--order", "xyz", ranks=ranks)
        refused(c, f"NaN and -Inf in /w, xyz, {ranks or 1} rank(s)", run, words)
    # one 4-D dataset, component axis last: the component is named and indexed
    four = hx.path("inf_4d.h5")
    a = np.ascontiguousarray(np.moveaxis(v, 0, -1))  # (Nz, Ny, Nx, 3)
    a[2, 3, 4, 1] = np.inf
    X.write_sets(four, {"/vel": a})
    run = X.inspect(hx, four, "--vector", "/vel", ranks=0)
    refused(c, "Inf in a 4-D dataset", run, ["/vel (component 1)", "1 non-finite value ", "(4, 3, 2)", "[2][3][4][1]"])
    # a density with a NaN (the state needs it): named as the density
    dens = hx.path("nan_rho.h5")
    rho = np.ones((Nz, Ny, Nx))
    rho[5, 1, 2] = np.nan
    X.write_foreign(dens, v, order="zyx", extra={"/rho": rho})
    run = X.inspect(hx, dens, "--vector", "/u,/v,/w", "--density", "/rho", ranks=3)
    refused(c, "NaN in the density, 3 ranks", run, ["/rho", "(2, 1, 5)"])
    # a helmix file with a NaN in velocity_z, under --check
    mk = hx.make({"grid": {"cells": 16}, "mix": {"zeta": 0.5}, "output": {"precision": "single"}})
    if c.check("helmix make (single precision) exits 0", mk.ok, mk.describe()):
        path = hx.path("made_nan.h5")
        shutil.copyfile(mk.out, path)
        with h5py.File(path, "a") as f:
            d = f[GRID + "/velocity_z"]
            a = d[...]
            a[15, 0, 3] = np.nan
            d[...] = a
            nn, ni, idx = first_bad(d[...])
        run = X.inspect(hx, path, "--check", ranks=0)
        refused(c, "NaN in a helmix velocity_z, --check", run, ["velocity_z", "1 non-finite value ", "(3, 0, 15)"])


def fit_cases(c, hx):
    mk = hx.make({"grid": {"cells": 16}, "spectrum": {"kmax": 5}, "mix": {"zeta": 0.5},
                  "output": {"precision": "double"}}, name="fit")
    if not c.check("helmix make (kmax 5) exits 0", mk.ok, mk.describe()):
        return
    cube = H.Cube(mk.out)
    ref = X.reference(cube.v, cube.box)
    modes = np.asarray(ref["shells"]["modes"])
    energy = np.asarray(ref["shells"]["energy"])
    top = int(np.nonzero(modes)[0].max())
    floor = 1e-28 * energy.sum()  # the round-off floor the fit leaves out (helmix/diag.h)
    carry = [s for s in range(1, len(energy)) if energy[s] > floor]
    c.check("[numpy] band-limited cube: shells 1..5 (and 6, the corners of |k| <= 5.5) carry energy",
            carry[0] == 1 and carry[-1] <= 6, f"shells with energy {carry}, largest shell {top}",
            "numpy.fft shell sums")

    def n_in(lo, hi):
        return sum(1 for s in carry if lo <= s <= hi)

    run = X.inspect(hx, mk.out, "--fit", f"2,{top + 3}", ranks=0)
    refused(c, f"--fit 2,{top + 3} beyond the largest shell {top}", run, ["--fit", f"1 to {top}"])
    lo, hi = carry[-1] + 1, top
    run = X.inspect(hx, mk.out, "--fit", f"{lo},{hi}", ranks=0)
    refused(c, f"--fit {lo},{hi}: no shell with energy", run, ["--fit", f"{n_in(lo, hi)} shells",
                                                            f"shells {carry[0]} to {carry[-1]}"])
    lo, hi = carry[-1] - 1, carry[-1] + 4
    run = X.inspect(hx, mk.out, "--fit", f"{lo},{hi}", ranks=3)
    refused(c, f"--fit {lo},{hi}: {n_in(lo, hi)} shells with energy, 3 ranks", run,
            ["--fit", f"{n_in(lo, hi)} shells", "need 3"])
    run = X.inspect(hx, mk.out, "--fit", "3,3", ranks=0)
    refused(c, "--fit 3,3 (KMIN = KMAX)", run, ["--fit"])
    lo, hi = carry[-1] - 2, carry[-1]
    run = X.inspect(hx, mk.out, "--fit", f"{lo},{hi}", ranks=0)
    ok = run.rc == 0 and run.json is not None and run.json["slope"]["value"] is not None
    want = X.fit_slope(energy, modes, lo, hi)[0]
    c.check(f"--fit {lo},{hi} (3 shells with energy): exit 0, slope = numpy least squares",
            ok and abs(run.json["slope"]["value"] - want) < 1e-9,
            f"rc={run.rc} slope={run.json['slope']['value'] if run.json else None} numpy={want}", X.SRC_LSQ)
    out = run.stdout if run.rc == 0 else ""
    c.check("no 'nan' in the table of a valid run", "nan" not in out.lower(), out[:200])


def malformed_cases(c, hx):
    mk = hx.make({"grid": {"cells": 16}, "mix": {"zeta": 0.5}, "output": {"precision": "double"}}, name="attrs")
    if not c.check("helmix make for the attribute cases exits 0", mk.ok, mk.describe()):
        return
    run = X.inspect(hx, mk.out, "--check", ranks=0)
    c.check("the unaltered cube passes --check", run.rc == 0, run.describe())

    def altered(tag, fn):
        path = hx.path(f"attr_{tag}.h5")
        shutil.copyfile(mk.out, path)
        with h5py.File(path, "a") as f:
            fn(f["/helmix"])
        return path

    def set_attr(name, value, group=None):
        def fn(g):
            g = g[group] if group else g
            del g.attrs[name]
            g.attrs[name] = value
        return fn

    def drop(name):
        def fn(g):
            del g.attrs[name]
        return fn

    cases = [
        ("string vrms", set_attr("vrms", "1.0"), ["/helmix vrms", "is text", "one number"], 3),
        ("kmax of 2 values", set_attr("kmax", np.array([1.0, 7.0])), ["/helmix kmax", "holds 2 values"], 0),
        ("NaN slope", set_attr("slope", np.nan), ["/helmix slope", "is NaN"], 0),
        ("no recipe", drop("recipe"), ["/helmix recipe", "is missing"], 0),
        ("unknown mix_mode", set_attr("mix_mode", "halfway"), ["/helmix mix_mode", "'halfway'",
                                                               "zeta, compressive_fraction"], 0),
        ("zeta of 1.5", set_attr("zeta", 1.5), ["/helmix zeta", "[0, 1]"], 0),
        ("text mach_asked in /helmix/state", set_attr("mach_asked", "2", group="state"),
         ["/helmix/state mach_asked", "is text"], 0),
    ]
    for label, fn, words, ranks in cases:
        path = altered(re.sub(r"\W+", "_", label), fn)
        run = X.inspect(hx, path, "--check", ranks=ranks)
        refused(c, f"{label}{' (3 ranks)' if ranks else ''}", run, words)


def json_csv_cases(c, hx):
    # a foreign cube with one Fourier mode per axis leaves most shells empty
    cells, box = (16, 16, 16), (1.0, 1.0, 1.0)
    Xc, Yc, Zc = X.grid_coords(cells, box)
    tp = 2 * math.pi
    v = np.stack([np.sin(tp * 3 * Yc), np.sin(tp * 5 * Zc), np.cos(tp * 2 * Xc)])
    path = hx.path("sparse.h5")
    vec = X.write_foreign(path, v, order="zyx")
    mk = hx.make({"grid": {"cells": 16}, "mix": {"zeta": 0.3}}, name="jc")
    targets = [("sparse foreign cube", path, ["--vector", vec])]
    if mk.ok:
        targets.append(("helmix cube", mk.out, []))
    for label, p, opts in targets:
        run = X.inspect(hx, p, *opts, ranks=2, csv_name=f"{re.sub(r'W+', '_', label)}.csv".replace(" ", "_"))
        if not c.check(f"[{label}] inspect --json --csv exits 0", run.rc == 0 and run.json is not None,
                       run.describe()):
            continue
        with open(run.csv_path, newline="") as f:
            rows = list(csv.reader(f))
        head, body = rows[0], rows[1:]
        sh = run.json["shells"]
        cols = ["k", "modes", "energy", "compressive", "solenoidal", "compressive_fraction"]
        c.check(f"[{label}] CSV header", head == cols, str(head), "helmix CSV layout (README)")
        c.check(f"[{label}] the same shells: CSV k == JSON k, both from 0",
                [int(r[0]) for r in body] == [int(k) for k in sh["k"]] and int(sh["k"][0]) == 0,
                f"CSV k {[r[0] for r in body[:3]]}.. ({len(body)}), JSON k {sh['k'][:3]}.. ({len(sh['k'])})")
        bad, empty = [], 0
        for n, r in enumerate(body):
            for col, text in zip(cols[1:], r[1:]):
                jv = sh[col][n] if n < len(sh[col]) else "absent"
                if jv is None:
                    empty += 1
                    if text != "":
                        bad.append(f"k={n} {col}: JSON null, CSV {text!r}")
                elif text == "" or float(text) != float(jv):
                    bad.append(f"k={n} {col}: JSON {jv!r}, CSV {text!r}")
        c.check(f"[{label}] every shell value equal in JSON and CSV; null <-> empty field",
                not bad and len(body) == len(sh["k"]), "; ".join(bad[:4]) or f"{len(body)} shells, {empty} nulls",
                "RFC 8259 (JSON null); RFC 4180 (CSV empty field)")
        # the empty shells are those numpy finds without energy; their shares are null/empty
        ref = X.reference(v if p == path else H.Cube(p).v, box)
        e = ref["shells"]["energy"]
        nulls = [n for n, x in enumerate(sh["compressive_fraction"]) if x is None]
        want = [n for n in range(len(sh["k"])) if n >= len(e) or e[n] == 0]
        c.check(f"[{label}] null shares exactly where numpy finds no energy (shell 0, empty shells)",
                nulls == want, f"null at {nulls[:8]}.., numpy empty at {want[:8]}..", X.SRC_FFT)


def table_cases(c, hx):
    zeta = 0.5
    mk = hx.make({"grid": {"cells": 16}, "spectrum": {"slope": 2}, "mix": {"zeta": zeta, "exact": "none"},
                  "output": {"precision": "double"}}, name="table", quiet=False)
    if not c.check("helmix make (zeta 0.5, exact none) exits 0", mk.ok, mk.describe()):
        return
    cube = H.Cube(mk.out)
    expected = (1 - zeta) ** 2 / (1 - 2 * zeta + 3 * zeta * zeta)
    drawn = float(cube.attrs["realized_compressive_fraction"])
    ref = X.reference(cube.v, cube.box)
    close = [ln for ln in mk.stderr.splitlines() if "wrote" in ln]
    c.check("make's closing line: the share as drawn next to the ensemble expectation",
            len(close) == 1 and f"compressive share {drawn:.6f} as drawn" in close[0]
            and f"ensemble expectation {expected:.6f} for zeta 0.5" in close[0], close[:1], SRC_FED)
    run = X.inspect(hx, mk.out, "--check", ranks=0)
    if not c.check("inspect --check exits 0", run.rc == 0, run.describe()):
        return
    out = run.stdout.splitlines()
    head = [ln for ln in out if ln.startswith("check ")]
    c.check("table header: check, asked, target, measured, tolerance, verdict; no 'requested'",
            len(head) == 1 and head[0].split()[:6] == ["check", "asked", "target", "measured", "tolerance", "verdict"]
            and "requested" not in run.stdout, head[:1], "issue 9: asked apart from derived")

    def row(name):
        for ln in out:
            if ln.startswith(name + " "):
                return ln[len(name):].split()
        return None

    r = row("compressive share as drawn")
    ok = r is not None and abs(float(r[0]) - expected) < 1e-8 and abs(float(r[1]) - drawn) < 1e-8 \
        and abs(float(r[2]) - ref["energy"]["compressive_fraction"]) < 1e-8
    c.check("share row: asked = ensemble expectation, target = share as drawn (h5py), measured = numpy", ok,
            f"row {r}, expected {expected:.8f}, drawn {drawn:.8f}, numpy {ref['energy']['compressive_fraction']:.8f}",
            SRC_FED)
    r = row("spectral slope")
    fit = float(cube.attrs["slope_fit_expected"])
    c.check("slope row: asked 2 (the recipe), target the fit expected on this grid (h5py)",
            r is not None and float(r[0]) == 2.0 and abs(float(r[1]) - fit) < 1e-7 and abs(fit - 2.0) > 1e-3,
            f"row {r}, slope_fit_expected {fit}", "helmix specification")
    r = row("largest mean component")
    c.check("mean row: nothing asked ('-'), target 0", r is not None and r[0] == "-" and float(r[1]) == 0.0,
            f"row {r}")


def body(args, hx, c):
    nonfinite_cases(c, hx)
    fit_cases(c, hx)
    malformed_cases(c, hx)
    json_csv_cases(c, hx)
    table_cases(c, hx)


if __name__ == "__main__":
    H.run_main("test_inspect_data", __doc__, body)
