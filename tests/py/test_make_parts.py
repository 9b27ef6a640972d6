#!/usr/bin/python3
"""helmix make with [output] parts = true: the solenoidal and compressive parts of the velocity
are written beside it, add up to it, and are each pure; their energies give the share.

Sources: the Helmholtz decomposition of a periodic field by projection in Fourier space (common
practice); numpy.fft for the spectral derivatives (numpy documentation, numpy.fft conventions).
"""
import h5py
import numpy as np

import hxcheck

GRID = "/data/grid_0000000000"


def body(args, hx, c):
    for exact, frac, prec, ranks in (("none", "0.3", "double", 2), ("total", "0.3", "double", 3),
                                     ("shell", "0.6", "single", 1)):
        rec = {"grid": {"cells": "32 32 16", "box": "1 1 0.5"},
               "mix": {"compressive_fraction": frac, "exact": exact},
               "output": {"precision": prec, "parts": "true"}, "random": {"seed": 11}}
        run = hx.make(rec, ranks=ranks, name=f"parts_{exact}")
        if not c.check(f"[{exact}] make with parts exits 0", run.ok, run.describe()[:300]):
            continue
        with h5py.File(run.out, "r") as f:
            g = f[GRID]
            v = np.stack([g["velocity_" + a][()].astype(np.float64) for a in "xyz"])
            s = np.stack([g["velocity_solenoidal_" + a][()].astype(np.float64) for a in "xyz"])
            p = np.stack([g["velocity_compressive_" + a][()].astype(np.float64) for a in "xyz"])
            recorded = float(f["/helmix"].attrs["realized_compressive_fraction"])
        tol = 1e-12 if prec == "double" else 1e-6
        err = np.max(np.abs(s + p - v)) / np.max(np.abs(v))
        c.check(f"[{exact}] solenoidal + compressive = velocity", err < tol, f"max rel {err:.1e}", "Helmholtz decomposition")
        box = (1.0, 1.0, 0.5)
        S, P = hxcheck.Spectral(s, box), hxcheck.Spectral(p, box)
        c.check(f"[{exact}] the solenoidal part is divergence-free", S.divergence_ratio() < tol,
                f"{S.divergence_ratio():.1e}", "spectral divergence, numpy.fft")
        c.check(f"[{exact}] the compressive part is curl-free", P.curl_ratio() < tol, f"{P.curl_ratio():.1e}",
                "spectral curl, numpy.fft")
        share = np.sum(p ** 2) / (np.sum(p ** 2) + np.sum(s ** 2))
        c.check(f"[{exact}] <|v_comp|^2> / (<|v_comp|^2> + <|v_sol|^2>) = the recorded share", abs(share - recorded) < 10 * tol,
                f"{share:.12f} vs {recorded:.12f}", "Parseval: the parts are orthogonal")
    rec = {"grid": {"cells": 16}, "density": {"model": "lognormal", "sigma_s": 1}, "output": {"parts": "true"}}
    run = hx.make(rec, ranks=1, name="parts_shaped")
    lines = [ln for ln in hxcheck.mpi_noise_free_lines(run.stderr) if ln.startswith("helmix")]
    c.check("parts with a shaped velocity (bulk removal in a lognormal density) are refused: exit 2, one line",
            run.rc == 2 and len(lines) == 1 and "parts" in lines[0], f"rc {run.rc}: {lines}", "recipe semantics")


if __name__ == "__main__":
    hxcheck.run_main("make_parts", __doc__, body)
