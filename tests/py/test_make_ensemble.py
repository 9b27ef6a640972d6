#!/usr/bin/python3
"""Ensemble statistics of `helmix make` over many seeds, and the flip option.

For the mixture zeta*P_perp w + (1-zeta)*P_par w of an isotropic Gaussian
vector w the expected compressive share of the power is
    (1-zeta)^2 / (1 - 2 zeta + 3 zeta^2)
(Federrath et al. 2010, A&A 512, A81, eq. 9, from memory; in 3D the
longitudinal part has one of three degrees of freedom, the transverse two).
The ensemble mean of the realized share (recomputed with numpy.fft) must
agree with it within 3 standard errors of the sample mean. Also: with
compressive_fraction f and exact = none the ensemble mean share is f; with
zeta and exact = total each realization holds the eq. 9 share exactly; and
flip = true negates the field of the same seed.
"""

from concurrent.futures import ThreadPoolExecutor

import sys
import numpy as np

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

SRC_F10 = "Federrath et al. 2010, A&A 512, A81, eq. 9 (from memory)"
SRC_SEM = "standard error of the mean, 3-sigma criterion (common practice)"
NSEED = 40
CELLS = 16


def recipe(seed, mix, flip=False, cells=CELLS, slope=-2.0):
    return {
        "grid": {"cells": cells},
        # flat power per mode: many comparable modes, small scatter per seed
        "spectrum": {"shape": "power", "slope": slope, "kmin": 1},
        "mix": mix,
        "amplitude": {"vrms": 1.0},
        "random": {"seed": seed, "flip": "true" if flip else "false"},
        "output": {"precision": "double"},
    }


def expected_share(zeta):
    return (1 - zeta) ** 2 / (1 - 2 * zeta + 3 * zeta ** 2)


def ensemble(hx, c, label, mix, seeds):
    tag = "".join(ch if ch.isalnum() else "_" for ch in label)

    def one(seed):
        return hx.make(recipe(seed, mix), ranks=1, name=f"ens_{tag}_{seed}")
    with ThreadPoolExecutor(max_workers=2) as ex:
        runs = list(ex.map(one, seeds))
    bad = [r for r in runs if not r.ok]
    if not c.check(f"[{label}] {len(seeds)} runs exit 0", not bad,
                   bad[0].describe() if bad else ""):
        return None
    shares, attr_diff, expect_attr = [], 0.0, set()
    for r in runs:
        cube = H.Cube(r.out)
        cf = H.Spectral(cube.v, cube.box).compressive_fraction()
        shares.append(cf)
        attr_diff = max(attr_diff, abs(cf - float(cube.attrs["realized_compressive_fraction"])))
        expect_attr.add(float(cube.attrs["expected_compressive_fraction"]))
    shares = np.array(shares)
    c.check(f"[{label}] attr realized_compressive_fraction == numpy (all seeds)",
            attr_diff < 1e-9, f"max|diff|={attr_diff:.2e}",
            "Helmholtz projection on k_hat (common practice)")
    return shares, expect_attr


def body(args, hx, c):
    seeds = list(range(1001, 1001 + NSEED))
    for zeta in (0.25, 0.5, 0.75):
        label = f"zeta={zeta}"
        res = ensemble(hx, c, label, {"zeta": zeta}, seeds)
        if res is None:
            continue
        shares, expect_attr = res
        mean = float(shares.mean())
        sem = float(shares.std(ddof=1) / np.sqrt(len(shares)))
        ex = expected_share(zeta)
        c.check(f"[{label}] mean compressive share == (1-z)^2/(1-2z+3z^2) within 3 SEM",
                abs(mean - ex) < 3 * sem and sem > 0,
                f"mean={mean:.5f} expected={ex:.5f} SEM={sem:.5f} "
                f"z-score={(mean - ex) / sem if sem > 0 else float('nan'):+.2f}",
                SRC_F10 + "; " + SRC_SEM)
        c.check(f"[{label}] scatter is real (share varies between seeds)",
                float(shares.std()) > 1e-6, f"std={shares.std():.4f}",
                "independent seeds give independent realizations (common practice)")
        ea = sorted(expect_attr)
        c.check(f"[{label}] attr expected_compressive_fraction == eq. 9",
                len(ea) == 1 and abs(ea[0] - ex) < 1e-12, f"attr={ea} eq.9={ex:.15f}",
                SRC_F10)

    # compressive_fraction with exact = none: no rescaling of the realization,
    # but the expected share is the requested one (helmix specification).
    res = ensemble(hx, c, "cf=0.3 none",
                   {"compressive_fraction": 0.3, "exact": "none"}, seeds)
    if res is not None:
        shares, expect_attr = res
        mean = float(shares.mean())
        sem = float(shares.std(ddof=1) / np.sqrt(len(shares)))
        c.check("[cf=0.3 none] mean share == 0.3 within 3 SEM; realizations not pinned",
                abs(mean - 0.3) < 3 * sem and float(shares.std()) > 1e-6,
                f"mean={mean:.5f} SEM={sem:.5f} z-score={(mean - 0.3) / sem:+.2f} "
                f"std={shares.std():.4f}", "helmix specification; " + SRC_SEM)

    # zeta with exact = total: every realization pinned to the eq. 9 share
    for seed in (11, 12, 13):
        r = hx.make(recipe(seed, {"zeta": 0.25, "exact": "total"}, cells=24, slope=2.0),
                    ranks=2, name=f"pinned_{seed}")
        if not c.check(f"[zeta=0.25 exact=total seed {seed}] exit 0", r.ok,
                       "" if r.ok else r.describe()):
            continue
        cube = H.Cube(r.out)
        cf = H.Spectral(cube.v, cube.box).compressive_fraction()
        ex = expected_share(0.25)
        c.check(f"[zeta=0.25 exact=total seed {seed}] realized share == eq. 9 value",
                abs(cf - ex) < 1e-8, f"numpy={cf:.12f} eq.9={ex:.12f}", SRC_F10)

    # flip: same seed, negated field
    a = hx.make(recipe(77, {"zeta": 0.4}, flip=False, cells=32, slope=2.0), ranks=2)
    b = hx.make(recipe(77, {"zeta": 0.4}, flip=True, cells=32, slope=2.0), ranks=2)
    if c.check("[flip] both runs exit 0", a.ok and b.ok,
               "" if a.ok and b.ok else (a.describe() + b.describe())):
        va = H.Cube(a.out).v
        vb = H.Cube(b.out).v
        d = float(np.max(np.abs(va + vb)))
        scale = float(np.max(np.abs(va)))
        c.check("[flip] flip=true gives exactly -v of flip=false", d <= 1e-14 * scale and scale > 0,
                f"max|v_flip + v|={d:.2e} (max|v|={scale:.3f})",
                "helmix specification; IEEE negation is exact (common practice)")


if __name__ == "__main__":
    H.run_main("test_make_ensemble", __doc__, body)
