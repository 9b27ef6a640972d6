#!/usr/bin/python3
"""helmix make records in /helmix/diagnostics the same summary helmix inspect measures.

make takes the shell energies, mode counts and gradient sums from its own k-space pass and
the moments from the values it writes; inspect reads the file back and transforms it. The two
routes share no arithmetic beyond the definitions in include/helmix/diag.h, so agreement to
round-off on double-precision cubes shows both implement the same definitions (Parseval's
theorem makes the k-space sums of the generator equal to the transform of the data; common
practice). Cases: a cubic box (the tabulated amplitude path), a non-cubic box with a table
spectrum (the evaluated path) and a pinned shell mix.
"""

import os
import sys

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

SRC = "Parseval's theorem: k-space sums of the generator = transform of the written data (common practice)"

CASES = [
    ("cube zeta 0.4", {"grid": {"cells": 32}, "spectrum": {"shape": "power", "slope": 5 / 3},
                       "mix": {"zeta": 0.4}, "random": {"seed": 3}}),
    ("sheet table", {"grid": {"cells": "32 24 8", "box": "4 3 1"},
                     "spectrum": {"shape": "table", "table": "TABLE", "kmin": 1, "kmax": 9},
                     "mix": {"compressive_fraction": 0.45, "exact": "total"}, "random": {"seed": 8}}),
    ("cube shell 0.7", {"grid": {"cells": 24}, "spectrum": {"shape": "band", "kmin": 2, "kmax": 9},
                        "mix": {"compressive_fraction": 0.7, "exact": "shell"}, "random": {"seed": 4}}),
]


def close(a, b, rtol, atol):
    a, b = np.asarray(a, float), np.asarray(b, float)
    return a.shape == b.shape and bool(np.all(np.abs(a - b) <= atol + rtol * np.abs(b)))


def body(args, hx, c):
    table = hx.path("sheet_spectrum.dat")
    with open(table, "w") as f:
        f.write("# invented spectrum: flat, then k^-3\n1 1\n3 1\n30 0.001\n")
    for label, rec in CASES:
        rec = {k: dict(v) for k, v in rec.items()}
        if rec["spectrum"].get("table") == "TABLE":
            rec["spectrum"]["table"] = table
        rec["output"] = {"precision": "double"}
        mk = hx.make(rec, ranks=2, name="d_" + label.replace(" ", "_"))
        if not c.check(f"[{label}] helmix make exits 0", mk.ok, "" if mk.ok else mk.describe()):
            continue
        with h5py.File(mk.out, "r") as f:
            g = f["/helmix/diagnostics"]
            a = {k: g.attrs[k] for k in g.attrs}
            t = {k: g[k][()] for k in g}
        run = X.inspect(hx, mk.out, ranks=3)
        if not c.check(f"[{label}] helmix inspect exits 0", run.ok, "" if run.ok else run.describe()):
            continue
        j = run.json
        ns = len(t["shell_energy"])
        e = j["energy"]
        et = e["total"]
        pairs = [
            ("energy total", a["energy_total"], e["total"], 1e-10, 0),
            ("energy compressive", a["energy_compressive"], e["compressive"], 1e-10, 1e-14 * et),
            ("compressive share", a["compressive_fraction"], e["compressive_fraction"], 1e-10, 1e-14),
            ("rms divergence", a["divergence_rms"], j["gradients"]["divergence_rms"], 1e-9, 1e-7 * j["gradients"]["vorticity_rms"]),
            ("rms vorticity", a["vorticity_rms"], j["gradients"]["vorticity_rms"], 1e-9, 1e-7 * j["gradients"]["divergence_rms"]),
            ("mean", a["mean"], j["mean"], 0, 1e-12),
            ("rms per axis", a["rms"], j["rms"], 1e-12, 0),
            ("skewness", a["skewness"], j["skewness"], 1e-8, 1e-10),
            ("excess kurtosis", a["excess_kurtosis"], j["excess_kurtosis"], 1e-8, 1e-10),
            ("shell energies", t["shell_energy"], j["shells"]["energy"][:ns], 1e-9, 1e-14 * et),
            ("shell compressive energies", t["shell_energy_compressive"], j["shells"]["compressive"][:ns], 1e-9, 1e-14 * et),
            ("shell mode counts", t["shell_modes"], j["shells"]["modes"][:ns], 0, 0),
            ("slope fit", a["slope"], j["slope"]["value"], 1e-9, 1e-12),
        ]
        for what, mine, theirs, rtol, atol in pairs:
            c.check(f"[{label}] {what}: make's record == inspect's measurement", close(mine, theirs, rtol, atol),
                    f"make={np.ravel(mine)[:4]} inspect={np.ravel(theirs)[:4]}", SRC)
        c.check(f"[{label}] no energy beyond make's shells", sum(j["shells"]["energy"][ns:]) <= 1e-14 * et,
                f"{sum(j['shells']['energy'][ns:]):.2e}", SRC)


if __name__ == "__main__":
    H.run_main("test_make_diagnostics", __doc__, body)
