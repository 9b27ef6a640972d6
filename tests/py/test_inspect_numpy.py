#!/usr/bin/python3
"""Every number `helmix inspect` reports, recomputed with numpy.fft.

Two cubes of 32 x 24 x 16 cells in a non-cubic box, double precision:
  * a helmix cube (compressive_fraction 0.3, box 1 x 0.75 x 0.5 recorded in
    the file), analysed in the default helmix layout;
  * a foreign non-Gaussian random field with a nonzero mean, written with
    h5py under other dataset names (--vector), box 2 x 1.5 x 1 given by --box.
Each is analysed plainly, with --remove-scale, with --density (a positive
density written with h5py) and both together, on 1-3 ranks. These fields
carry no power on the Nyquist planes (the helmix cube by its kmax, the
foreign field and the densities by construction); a last foreign field
fills the whole band, Nyquist planes included, and is held to the same
definition (Nyquist index = -N/2 on every axis of the full spectrum), as is
an 8^3 field with power on one Nyquist plane and its copy with the x and y
axes swapped (the share must not depend on the labelling). The JSON report
must agree with the numpy reference of hxinspect.reference (independent of
helmix: numpy.fft, scipy.stats) to 1e-10 relative; the CSV table must hold
the JSON shell arrays.

Box ratios 1 : 4/3 : 2 keep |k|^2 in units of (2 pi / Lmax)^2 a multiple of
1/9, so no mode sits within round-off of a half-integer shell border.
"""

import sys

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

CELLS = (32, 24, 16)
HX_BOX = (1.0, 0.75, 0.5)
FOREIGN_BOX = (2.0, 1.5, 1.0)


def sqrt_density_xy(cells, box):
    """sqrt(rho) with only the |n| <= 1 modes in x and y: multiplied with the
    helmix cube (modes up to kmax = 14, i.e. n_x <= 14, n_y <= 10, n_z <= 7)
    it adds no Nyquist-plane content."""
    X_, Y_, _ = X.grid_coords(cells, box)
    return (1.0 + 0.3 * np.cos(2 * np.pi * X_ / box[0] + 0.4)
            + 0.2 * np.sin(2 * np.pi * Y_ / box[1]))


def sqrt_density_band(cells, box, seed):
    """A positive random sqrt(rho) with modes |n_a| < N_a/4 only."""
    g = X.random_field(cells, box, seed, nongauss=False, band=0.25)[0]
    return 1.2 + 0.8 * g / np.max(np.abs(g))


def csv_equals_json(c, label, run):
    try:
        tab = np.genfromtxt(run.csv_path, delimiter=",", names=True)
    except Exception as e:  # noqa: BLE001
        c.fail(f"[{label}] CSV parses", repr(e))
        return
    sh = run.json["shells"]
    n = len(sh["k"])
    cols = ["k", "modes", "energy", "compressive", "solenoidal", "compressive_fraction"]
    c.check(f"[{label}] CSV header", list(tab.dtype.names) == cols, str(tab.dtype.names),
            "helmix CSV layout")
    c.check(f"[{label}] CSV rows are the JSON's shells 0..n-1", tab.shape[0] == n
            and np.array_equal(tab["k"], np.arange(0, n)), f"{tab.shape[0]} rows, {n} shells")
    worst = 0.0
    for col in cols:
        js = np.array([np.nan if x is None else x for x in sh[col]], float)
        cv = tab[col]
        both = np.isnan(js) & np.isnan(cv)
        d = np.where(both, 0.0, np.abs(js - cv) / np.maximum(np.abs(js), 1e-300))
        d = np.where(np.isnan(d), np.inf, d)
        worst = max(worst, float(d.max()))
    c.check(f"[{label}] CSV columns == JSON shells (%.17g text)", worst <= 1e-15,
            f"worst relative difference {worst:.1e}")


def one_case(c, hx, label, path, opts, ranks, v, box, rho=None, ell=0.0, fit=None,
             csv=False):
    run = X.inspect(hx, path, *opts, ranks=ranks,
                    csv_name=f"{label.split()[0]}.csv" if csv else None)
    if not c.check(f"[{label}] inspect exits 0 on {ranks} rank(s)", run.ok,
                   f"{run.seconds:.2f} s" if run.ok else run.describe()):
        return None
    if run.json is None:
        c.fail(f"[{label}] JSON parses", run.json_error or "no file")
        return None
    ref = X.reference(v, box, remove_scale=ell, rho=rho, fit=fit)
    X.compare_report(c, label, run.json, ref)
    c.check(f"[{label}] ranks recorded", run.json["ranks"] == ranks, f"ranks={run.json['ranks']}")
    if csv:
        csv_equals_json(c, label, run)
    return run


def body(args, hx, c):
    # ------------------------------------------------------------ helmix cube
    recipe = {
        "grid": {"cells": " ".join(map(str, CELLS)), "box": " ".join(map(str, HX_BOX))},
        "spectrum": {"shape": "power", "slope": 1.8, "kmin": 2},
        "mix": {"compressive_fraction": 0.3},
        "amplitude": {"vrms": 1.7},
        "random": {"seed": 20240},
        "output": {"precision": "double"},
    }
    mk = hx.make(recipe, ranks=2)
    if c.check("helmix make of the 32x24x16 cube exits 0", mk.ok,
               f"{mk.seconds:.2f} s" if mk.ok else mk.describe()):
        cube = H.Cube(mk.out)
        c.check("cube stored in double precision", cube.dtype == np.float64, str(cube.dtype))
        fit = (float(cube.attrs["kmin"]), float(cube.attrs["kmax"]))
        rho = sqrt_density_xy(CELLS, HX_BOX) ** 2
        with h5py.File(mk.out, "a") as f:
            f.create_dataset("/rho", data=rho)
        A = one_case(c, hx, "A helmix plain", mk.out, [], 2, cube.v, cube.box, fit=fit, csv=True)
        if A is not None:
            c.check("[A] box read from /simulation_parameters",
                    np.allclose(A.json["box"], HX_BOX, rtol=1e-15, atol=0), f"box={A.json['box']}",
                    "Grid Data Format domain edges")
            c.check("[A] default fit range = recorded band [kmin, kmax]",
                    A.json["slope"]["fit_range"] == list(fit), f"{A.json['slope']['fit_range']}")
        one_case(c, hx, "B helmix --remove-scale 0.04", mk.out, ["--remove-scale", "0.04"], 3,
                 cube.v, cube.box, ell=0.04, fit=fit)
        one_case(c, hx, "C helmix --density", mk.out, ["--density", "/rho"], 1,
                 cube.v, cube.box, rho=rho, fit=fit)

    # ------------------------------------------------------------ foreign cube
    # band-limited to |n_a| < N_a/4, so that sqrt(rho) v has no Nyquist content
    mean = (0.7, -0.4, 1.3)
    v = X.random_field(CELLS, FOREIGN_BOX, 99, mean=mean, nongauss=True, band=0.25)
    rho = sqrt_density_band(CELLS, FOREIGN_BOX, 5) ** 2
    path = hx.path("foreign.h5")
    vec = X.write_foreign(path, v, order="zyx", names=("/flow/vx", "/flow/vy", "/flow/vz"),
                          extra={"/flow/density": rho})
    ref0 = X.reference(v, FOREIGN_BOX)
    c.check("[foreign] field is non-Gaussian (numpy skewness/kurtosis)",
            min(abs(s) for s in ref0["skewness"]) > 0.3 and min(ref0["excess_kurtosis"]) > 0.3,
            f"skew={np.round(ref0['skewness'], 3)} kurt={np.round(ref0['excess_kurtosis'], 3)}",
            X.SRC_MOM)
    base = ["--vector", vec, "--box", ",".join(map(str, FOREIGN_BOX))]
    fdef = (2.0, float(min(CELLS) // 4))
    D = one_case(c, hx, "D foreign plain", path, base, 2, v, FOREIGN_BOX, fit=fdef, csv=True)
    if D is not None:
        c.check("[D] nonzero mean of the written field recovered",
                np.allclose(D.json["mean"], mean, rtol=1e-12, atol=0), f"mean={D.json['mean']}")
        c.check("[D] default fit range of a foreign cube = [2, min(N)/4]",
                D.json["slope"]["fit_range"] == list(fdef), f"{D.json['slope']['fit_range']}")
    # the box from Grid Data Format domain edges (left edge not at 0), and
    # --box taking precedence over them
    if D is not None:
        with h5py.File(path, "a") as f:
            g = f.require_group("/simulation_parameters")
            g.attrs["domain_left_edge"] = -0.5 * np.asarray(FOREIGN_BOX)
            g.attrs["domain_right_edge"] = 0.5 * np.asarray(FOREIGN_BOX)
        r = X.inspect(hx, path, "--vector", vec, ranks=2)
        if c.check("[D'] box from /simulation_parameters edges (-L/2 .. L/2): exit 0", r.ok and r.json,
                   r.describe() if not r.ok else ""):
            ok, worst, key, missing = X.json_diff(r.json, D.json, 1e-14)
            c.check("[D'] box = right - left edge; every number as with --box", ok and
                    r.json["box"] == list(FOREIGN_BOX), f"box={r.json['box']} worst diff {worst:.1e} {key}",
                    "Grid Data Format domain edges")
        r = X.inspect(hx, path, "--vector", vec, "--box", "1,1,1", ranks=1)
        c.check("[D''] --box overrides the file's domain edges", r.ok and r.json and r.json["box"] == [1, 1, 1],
                f"box={r.json['box'] if r.json else None}")
    one_case(c, hx, "E foreign --fit 1,11", path, base + ["--fit", "1,11"], 3, v, FOREIGN_BOX,
             fit=(1.0, 11.0))
    one_case(c, hx, "F foreign --density", path, base + ["--density", "/flow/density"], 2,
             v, FOREIGN_BOX, rho=rho, fit=fdef)
    one_case(c, hx, "G foreign --remove-scale 0.3", path, base + ["--remove-scale", "0.3"], 1,
             v, FOREIGN_BOX, ell=0.3, fit=fdef)
    one_case(c, hx, "H foreign --remove-scale 0.2 --density", path,
             base + ["--remove-scale", "0.2", "--density", "/flow/density"], 3,
             v, FOREIGN_BOX, ell=0.2, rho=rho, fit=fdef)

    # ------------------------------------------------ full band, Nyquist planes
    # The definition counts the Nyquist index as -N/2 on every axis of the full
    # numpy.fft.fftn spectrum; a field with power on the Nyquist planes tells
    # whether that is what is computed there too.
    w = X.random_field(CELLS, FOREIGN_BOX, 123, mean=mean, nongauss=True)
    pathn = hx.path("foreign_nyquist.h5")
    vecn = X.write_foreign(pathn, w, order="zyx", names=("/flow/vx", "/flow/vy", "/flow/vz"))
    one_case(c, hx, "N foreign full band (Nyquist planes filled)", pathn,
             ["--vector", vecn, "--box", ",".join(map(str, FOREIGN_BOX))], 2, w, FOREIGN_BOX,
             fit=fdef)

    # Nyquist planes and axis relabelling: v_x = v_y = cos(2 pi x / L) (-1)^j
    # (mode 1 along x, Nyquist along y) and the same field with the x and y
    # axes swapped. A Helmholtz split does not depend on how the axes are
    # labelled (a reflection x <-> y of positions and components; common
    # practice), and by the definition (Nyquist index -N/2 on every axis) both
    # hold modes (+-1, -4, 0) with |k.v|^2 = (1 - 4)^2 and (-1 - 4)^2 (times
    # a^2): share (9 + 25) / (2 * 17) = 1/2.
    n = 8
    ii = np.arange(n)
    Zi, Yi, Xi = np.meshgrid(ii, ii, ii, indexing="ij")
    s_y = np.cos(2 * np.pi * Xi / n) * (-1.0) ** Yi
    s_x = np.cos(2 * np.pi * Yi / n) * (-1.0) ** Xi
    shares = []
    for tag, s in (("Nyquist along y", s_y), ("Nyquist along x", s_x)):
        p = hx.path(f"nyquist_{tag[-1]}.h5")
        X.write_sets(p, {"/u": s, "/v": s, "/w": 0 * s})
        r = X.inspect(hx, p, "--vector", "/u,/v,/w", ranks=1)
        if c.check(f"[S {tag}] inspect exits 0", r.ok and r.json, r.describe() if not r.ok else ""):
            sh = r.json["energy"]["compressive_fraction"]
            shares.append(sh)
            c.check(f"[S {tag}] share = 1/2 by the definition (to 1e-12)", abs(sh - 0.5) < 1e-12,
                    f"share={sh:.15f}", "numpy.fft.fftfreq Nyquist index -N/2; " + X.SRC_HELM)
    if len(shares) == 2:
        c.check("[S] share unchanged when the x and y axes are swapped (to 1e-12)",
                abs(shares[0] - shares[1]) < 1e-12, f"shares {shares[0]:.15f} vs {shares[1]:.15f}",
                "invariance of the Helmholtz split under relabelling of axes (common practice)")


if __name__ == "__main__":
    H.run_main("test_inspect_numpy", __doc__, body)
