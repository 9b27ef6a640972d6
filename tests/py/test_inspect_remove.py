#!/usr/bin/python3
"""`helmix inspect --remove-scale`: bulk motions on large scales left out.

A helmix cube (64^3, compressive_fraction 0.3, exact = total, energy in
shells 8..31, double precision, vrms 1) gets a uniform flow U and a
periodic solid-body rotation added with h5py:

    v_rot = U_rot (-sin(2 pi y / L), sin(2 pi x / L), 0),  U_rot = Omega L / (2 pi),

which near the box centre line is Omega (-y, x, 0), a rigid rotation with
vorticity 2 Omega (common practice), and which lives on the four |k| = 1
modes only. Its divergence is zero, so it is all solenoidal.

Without --remove-scale the rotation counts as solenoidal energy and the
share drops to 0.3 e_turb / (e_turb + e_rot) exactly (the rotation's modes
are not the turbulence's: Parseval). With --remove-scale l the field is
multiplied in k space by 1 - exp(-k^2 l^2 / 2) (one minus a Gaussian
filter's transfer function, common practice).

Choice of l = 0.025 (code length): it must lie between the turbulence's
largest scale 1/k_min = 1/(2 pi 8) = 0.020 and the rotation's scale
1/k_rot = 1/(2 pi) = 0.159. The rotation keeps the fraction
(1 - exp(-(k_rot l)^2 / 2))^2 = 1.5e-4 of its energy, and the turbulence
keeps ~70 % of its own: l sits at the small end of the interval so that the
left-over rotation moves the share by less than 1e-3 (predicted below
from the filter formula), at the price of damping the lowest turbulent
shells unevenly.

Expected values:
  * the same filter applied with numpy to the turbulent cube alone: the
    measured share must agree to 1e-3 (the left-over rotation is all that
    separates them; its predicted effect is printed);
  * the request 0.3: the filter reweights the shells, whose own shares
    scatter around 0.3 under exact = total, so the share stays within the
    largest per-shell deviation (numpy, unfiltered cube) plus 1e-3;
  * numpy on the whole altered field with the same filter: 1e-10 (the
    implementation itself).
"""

import math
import shutil
import sys

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

N = 64
KMIN = 8
ELL = 0.025
U_ROT = 2.0
U_MEAN = (0.4, -0.3, 0.25)
SRC_ROT = "periodic solid-body rotation on the |k| = 1 modes, divergence-free (common practice)"


def body(args, hx, c):
    recipe = {
        "grid": {"cells": N, "box": 1.0},
        "spectrum": {"shape": "power", "slope": 2.0, "kmin": KMIN},
        "mix": {"compressive_fraction": 0.3, "exact": "total"},
        "amplitude": {"vrms": 1.0},
        "random": {"seed": 5},
        "output": {"precision": "double"},
    }
    mk = hx.make(recipe, ranks=2)
    if not c.check("helmix make 64^3 cf=0.3 exact=total kmin=8 exits 0", mk.ok,
                   f"{mk.seconds:.2f} s" if mk.ok else mk.describe()):
        return
    cube = H.Cube(mk.out)
    vt = cube.v
    box = cube.box
    L = box[0]
    Xc, Yc, _ = X.grid_coords((N, N, N), box)
    rot = U_ROT * np.stack([-np.sin(2 * np.pi * Yc / L), np.sin(2 * np.pi * Xc / L), 0 * Xc])
    vall = vt + rot + np.asarray(U_MEAN)[:, None, None, None]
    path = hx.path("turb_rot.h5")
    shutil.copyfile(mk.out, path)
    with h5py.File(path, "a") as f:
        g = f["/data/grid_0000000000"]
        for i, a in enumerate("xyz"):
            g["velocity_" + a][...] = vall[i]

    # turbulence alone, numpy, no filter: the request is met
    rt0 = X.reference(vt, box)
    e_turb = rt0["energy"]["total"]
    c.check("[numpy] turbulent cube alone: share 0.3 (exact = total)",
            abs(rt0["energy"]["compressive_fraction"] - 0.3) < 1e-9,
            f"share={rt0['energy']['compressive_fraction']:.12f}", X.SRC_HELM)
    e_rot = 0.5 * U_ROT ** 2  # 1/2 <v_rot^2> = 1/2 U^2 (1/2 + 1/2)

    # ------------------------------------------------ without --remove-scale
    r0 = X.inspect(hx, path, ranks=2)
    if c.check("inspect without --remove-scale exits 0", r0.ok and r0.json is not None,
               r0.describe() if not r0.ok else f"{r0.seconds:.2f} s"):
        j = r0.json
        want = 0.3 * e_turb / (e_turb + e_rot)
        c.check("[plain] share drops to 0.3 e_turb/(e_turb + e_rot) (to 1e-10)",
                abs(j["energy"]["compressive_fraction"] - want) < 1e-10,
                f"share={j['energy']['compressive_fraction']:.12f} expected {want:.12f}",
                SRC_ROT + "; Parseval (common practice)")
        c.check("[plain] e_total = e_turb + U_rot^2/2 (to 1e-12)",
                abs(j["energy"]["total"] / (e_turb + e_rot) - 1) < 1e-12,
                f"e_total={j['energy']['total']:.15g}", "Parseval (common practice)")
        c.check("[plain] mean = the uniform flow (to 1e-12)",
                max(abs(a - b) for a, b in zip(j["mean"], U_MEAN)) < 1e-12,
                f"mean={j['mean']}", "k = 0 mode is the mean (common practice)")
        rms2 = sum(u * u for u in U_MEAN) + 2 * e_turb + U_ROT ** 2
        c.check("[plain] rms_3d^2 = |U|^2 + vrms^2 + U_rot^2 (to 1e-12)",
                abs(j["rms_3d"] ** 2 / rms2 - 1) < 1e-12,
                f"rms_3d={j['rms_3d']:.15g} expected {math.sqrt(rms2):.15g}",
                "Parseval, parts on disjoint modes (common practice)")
        c.check("[plain] shell 1 holds the rotation energy (to 1e-12)",
                abs(j["shells"]["energy"][1] / e_rot - 1) < 1e-12
                and abs(j["shells"]["compressive"][1]) < 1e-12 * e_rot,
                f"E1={j['shells']['energy'][1]:.15g} Ec1={j['shells']['compressive'][1]:.2e}", SRC_ROT)

    # ------------------------------------------------ with --remove-scale
    r1 = X.inspect(hx, path, "--remove-scale", ELL, ranks=2)
    if not c.check(f"inspect --remove-scale {ELL} exits 0", r1.ok and r1.json is not None,
                   r1.describe() if not r1.ok else f"{r1.seconds:.2f} s"):
        return
    j = r1.json
    share = j["energy"]["compressive_fraction"]
    # expected: the same filter on the turbulence alone (numpy)
    rtf = X.reference(vt, box, remove_scale=ELL)
    exp_t = rtf["energy"]["compressive_fraction"]
    k_rot = 2 * math.pi / L
    res = e_rot * (1 - math.exp(-0.5 * (k_rot * ELL) ** 2)) ** 2
    predicted = exp_t * rtf["energy"]["total"] / (rtf["energy"]["total"] + res) - exp_t
    c.check("[remove] share = numpy filter on the turbulence alone (to 1e-3)",
            abs(share - exp_t) < 1e-3,
            f"inspect={share:.6f} numpy(turbulence only)={exp_t:.6f} diff={share - exp_t:+.2e}; "
            f"left-over rotation energy {res:.2e} predicts {predicted:+.2e}",
            X.SRC_GAUSS_FILTER)
    c.check("[remove] the difference is the left-over rotation (to 1e-6)",
            abs((share - exp_t) - predicted) < 1e-6,
            f"diff={share - exp_t:+.3e} predicted={predicted:+.3e}",
            "filter transfer at k_rot; parts on disjoint modes (common practice)")
    shares = [s for s, e in zip(rt0["shells"]["compressive_fraction"], rt0["shells"]["energy"])
              if e > 1e-12 * e_turb]
    bound = max(abs(s - 0.3) for s in shares) + 1e-3
    c.check(f"[remove] share back at 0.3 within the per-shell scatter + 1e-3 ({bound:.3f})",
            abs(share - 0.3) <= bound,
            f"share={share:.6f} |share-0.3|={abs(share - 0.3):.2e}; shell shares in "
            f"[{min(shares):.3f}, {max(shares):.3f}]",
            "a reweighting of shells keeps the share within their range (common practice)")
    c.check("[remove] the share moved from the unfiltered value towards 0.3 by > 0.2",
            r0.json is not None and share - r0.json["energy"]["compressive_fraction"] > 0.2,
            f"{r0.json['energy']['compressive_fraction'] if r0.json else float('nan'):.4f} -> {share:.4f}")
    vs = j["rms_3d"]
    c.check("[remove] mean removed (|mean| < 1e-12 rms)",
            max(abs(m) for m in j["mean"]) < 1e-12 * vs, f"mean={j['mean']}",
            "the filter vanishes at k = 0")
    rfull = X.reference(vall, box, remove_scale=ELL)
    for key in ("total", "compressive", "compressive_fraction"):
        c.check(f"[remove] energy.{key} = numpy, same filter on the whole field (1e-10)",
                abs(j["energy"][key] / rfull["energy"][key] - 1) < 1e-10,
                f"inspect={j['energy'][key]:.15g} numpy={rfull['energy'][key]:.15g}",
                X.SRC_GAUSS_FILTER + "; " + X.SRC_FFT)
    c.check("[remove] rms[3] of the filtered field = numpy (1e-10)",
            all(abs(a / b - 1) < 1e-10 for a, b in zip(j["rms"], rfull["rms"])),
            f"inspect={j['rms']} numpy={rfull['rms']}", X.SRC_GAUSS_FILTER)
    c.check("[remove] remove_scale recorded", j["remove_scale"] == ELL, f"{j['remove_scale']}")


if __name__ == "__main__":
    H.run_main("test_inspect_remove", __doc__, body)
