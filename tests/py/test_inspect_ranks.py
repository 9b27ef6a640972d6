#!/usr/bin/python3
"""`helmix inspect` gives the same numbers on 1, 2, 3 and 4 ranks.

Grids whose sizes 3 does not divide (32 x 20 x 10: z slabs of 4, 4, 2 planes
on 3 ranks, k-space y slabs of 7, 7, 6), and a small grid (16 x 4 x 4) on
which the third rank owns no plane at all in real space nor in k space.
Cases: a helmix cube in its own layout, plain and with --remove-scale; a
foreign field in xyz order with --density and --remove-scale.

Every number of the JSON report must agree with the 1-rank report to 1e-12
relative (the sums are the same up to the order of additions, i.e. round-off;
common practice). Values that are zero up to round-off are compared
absolutely: means below 1e-14 rms, shell energies below 1e-14 e_total,
skewness and kurtosis to 1e-12 absolute, and in the state of v in the density
the mean velocity below 1e-14 of its rms, the mean of ln rho below
1e-14 (1 + sigma_s), the momentum below 1e-14 M vrms; the share of a shell
holding only round-off (< 1e-10 e_total) is a ratio of noise and is left out.
"""

import sys

import numpy as np

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

SRC = "rank-count invariance: same sums in another order (round-off only, common practice)"


def floors(js):
    et = js["energy"]["total"]
    vs = js["rms_3d"]
    out = {"mean": 1e-14 * vs, "shells.energy": 1e-14 * et, "shells.compressive": 1e-14 * et,
           "shells.solenoidal": 1e-14 * et, "skewness": 1e-12, "excess_kurtosis": 1e-12}
    st = js.get("state")
    if isinstance(st, dict):  # the state in a density: values zero by construction, on their scales
        sv = st["velocity_rms"]
        out.update({"state.velocity_mean": 1e-14 * sv, "state.ln_density_mean": 1e-14 * (1.0 + st["sigma_s"]),
                    "state.momentum": 1e-14 * st["mass"] * sv, "state.momentum_relative": 1e-14})
    return out


def noise_shells(js):
    et = js["energy"]["total"]
    return {f"shells.compressive_fraction[{s}]" for s, e in enumerate(js["shells"]["energy"])
            if e is not None and e < 1e-10 * et}


def compare_ranks(c, hx, label, path, opts, ranks):
    runs = {}
    for p in ranks:
        r = X.inspect(hx, path, *opts, ranks=p)
        if c.check(f"[{label}] inspect exits 0 on {p} rank(s)", r.ok and r.json is not None,
                   f"{r.seconds:.2f} s" if r.ok else r.describe()):
            runs[p] = r.json
            c.check(f"[{label}] report says ranks = {p}", r.json["ranks"] == p, str(r.json["ranks"]))
    if ranks[0] not in runs:
        return
    ref = runs[ranks[0]]
    skip = noise_shells(ref)
    for p in ranks[1:]:
        if p not in runs:
            continue
        a = {k: v for k, v in X.flatten_numbers(runs[p]).items() if k not in skip}
        b = {k: v for k, v in X.flatten_numbers(ref).items() if k not in skip}
        ok, worst, key, missing = X.json_diff(a, b, 1e-12, floors=floors(ref))
        # json_diff works on nested objects; a flat dict passes through flatten unchanged
        c.check(f"[{label}] {p} ranks == {ranks[0]} rank: all {len(b)} numbers (1e-12)", ok,
                f"worst relative difference {worst:.1e} at {key or '-'}; "
                f"share={runs[p]['energy']['compressive_fraction']:.15f}; missing {missing[:3]}", SRC)


def body(args, hx, c):
    recipe = {
        "grid": {"cells": "32 20 10", "box": "1 0.625 0.3125"},
        "spectrum": {"shape": "power", "slope": 5.0 / 3.0, "kmin": 1},
        "mix": {"zeta": 0.5},
        "amplitude": {"vrms": 1.0},
        "random": {"seed": 77},
        "output": {"precision": "double"},
    }
    mk = hx.make(recipe, ranks=2)
    if c.check("helmix make 32x20x10 exits 0", mk.ok, f"{mk.seconds:.2f} s" if mk.ok else mk.describe()):
        compare_ranks(c, hx, "helmix 32x20x10", mk.out, [], [1, 2, 3, 4])
        compare_ranks(c, hx, "helmix 32x20x10 --remove-scale 0.03", mk.out,
                      ["--remove-scale", "0.03"], [1, 3])

    for cells, ranks in (((32, 20, 10), [1, 2, 3]), ((16, 4, 4), [1, 3, 4])):
        box = (1.0, 0.75, 0.5)
        v = X.random_field(cells, box, 3, mean=(0.2, 0.1, -0.3), nongauss=True)
        g = X.random_field(cells, box, 4, nongauss=False)[0]
        rho = np.exp(0.5 * g / g.std())
        path = hx.path("foreign_%dx%dx%d.h5" % cells)
        vec = X.write_foreign(path, v, order="xyz", extra={"/rho": X.to_xyz(rho)})
        label = "foreign %dx%dx%d xyz --density --remove-scale" % cells
        compare_ranks(c, hx, label, path, ["--vector", vec, "--order", "xyz", "--box",
                                           ",".join(map(str, box)), "--density", "/rho",
                                           "--remove-scale", "0.1"], ranks)


if __name__ == "__main__":
    H.run_main("test_inspect_ranks", __doc__, body)
