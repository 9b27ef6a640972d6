#!/usr/bin/python3
"""`helmix inspect` on textbook flows with known answers.

Foreign files written with h5py in xyz order (datasets of shape (Nx, Ny, Nz),
z fastest), read with --order xyz, --vector and --box, on a 48 x 32 x 16 grid
in a 2 x 1.5 x 1 box (so a wrong axis order or a wrong box changes the
numbers):
  (a) v = grad(phi) of a trigonometric potential: 100 % compressive;
      energy, rms divergence and the shell holding each term worked by hand;
  (b) Arnold-Beltrami-Childress flow and (c) Taylor-Green vortex:
      divergence-free, so no compressive energy; energy and vorticity by hand;
  (d) alpha grad(phi) + beta ABC: the compressive share follows from
      Parseval, the two parts being orthogonal mode by mode;
  (e) Parseval: e_total = 1/2 <|v - <v>|^2> for a random field with a mean.
Also: the same field as one 4-D dataset, component axis first and last, in
zyx and xyz order, gives the numbers of the three-dataset file.

Averages over a period used below (common practice): <sin^2> = <cos^2> = 1/2,
products of distinct Fourier modes average to zero. A trigonometric
polynomial whose modes lie below the Nyquist index is sampled exactly by a
uniform grid, so the discrete sums equal the continuous averages to round-off
(discrete orthogonality of the DFT basis, common practice).
"""

import math
import sys

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

CELLS = (48, 32, 16)
BOX = (2.0, 1.5, 1.0)
TP = 2.0 * math.pi

SRC_GRAD = "curl(grad phi) = 0: a gradient field is purely compressive (vector calculus, common practice)"
SRC_ABC = ("Arnold-Beltrami-Childress flow: Arnold 1965, C. R. Acad. Sci. Paris 261, 17; "
           "Dombre et al. 1986, J. Fluid Mech. 167, 353 (divergence-free, from memory)")
SRC_TG = ("Taylor-Green vortex: Taylor & Green 1937, Proc. R. Soc. A 158, 499 "
          "(divergence-free when U a + V b + W c = 0, from memory)")
SRC_AVG = "period averages of trigonometric products (common practice)"


def potential_flow(Xc, Yc, Zc, p):
    """grad of phi = A sin(a x) cos(b y) + C cos(c z) + D sin(a2 x + c2 z)."""
    A, C, D, a, b, c, a2, c2 = (p[k] for k in ("A", "C", "D", "a", "b", "c", "a2", "c2"))
    vx = A * a * np.cos(a * Xc) * np.cos(b * Yc) + D * a2 * np.cos(a2 * Xc + c2 * Zc)
    vy = -A * b * np.sin(a * Xc) * np.sin(b * Yc)
    vz = -C * c * np.sin(c * Zc) + D * c2 * np.cos(a2 * Xc + c2 * Zc)
    return np.stack([vx, vy, vz])


def potential_params():
    Lx, Ly, Lz = BOX
    return {"A": 0.8, "C": 0.5, "D": 0.3, "a": TP / Lx, "b": 2 * TP / Ly, "c": TP / Lz,
            "a2": 2 * TP / Lx, "c2": TP / Lz}


def potential_answers(p):
    A, C, D, a, b, c, a2, c2 = (p[k] for k in ("A", "C", "D", "a", "b", "c", "a2", "c2"))
    # <|v|^2>: A-term cos*cos and sin*sin average 1/4; single cosines 1/2
    e_A = 0.5 * A * A * (a * a + b * b) / 4
    e_C = 0.5 * C * C * c * c / 2
    e_D = 0.5 * D * D * (a2 * a2 + c2 * c2) / 2
    # div v = lap(phi): each term times -|k|^2
    div2 = (A * A * (a * a + b * b) ** 2 / 4 + C * C * c ** 4 / 2
            + D * D * (a2 * a2 + c2 * c2) ** 2 / 2)
    return e_A, e_C, e_D, div2


def abc_flow(Xc, Yc, Zc, A=1.0, B=0.7, C=0.4):
    Lx, Ly, Lz = BOX
    kx, ky, kz = 2 * TP / Lx, TP / Ly, TP / Lz
    v = np.stack([A * np.sin(kz * Zc) + C * np.cos(ky * Yc),
                  B * np.sin(kx * Xc) + A * np.cos(kz * Zc),
                  C * np.sin(ky * Yc) + B * np.cos(kx * Xc)])
    e = 0.5 * (A * A + B * B + C * C)
    # vorticity: each term of each component contributes (amplitude k)^2 / 2
    vort2 = A * A * kz * kz + B * B * kx * kx + C * C * ky * ky
    return v, e, vort2


def taylor_green(Xc, Yc, Zc, U=1.0, V=-0.6):
    Lx, Ly, Lz = BOX
    a, b, c = TP / Lx, TP / Ly, TP / Lz
    W = -(U * a + V * b) / c  # U a + V b + W c = 0: divergence-free
    v = np.stack([U * np.cos(a * Xc) * np.sin(b * Yc) * np.sin(c * Zc),
                  V * np.sin(a * Xc) * np.cos(b * Yc) * np.sin(c * Zc),
                  W * np.sin(a * Xc) * np.sin(b * Yc) * np.cos(c * Zc)])
    e = 0.5 * (U * U + V * V + W * W) / 8  # <cos^2 sin^2 sin^2> = 1/8
    return v, e


def rel(a, b):
    return abs(a - b) / abs(b)


def run_xyz(c, hx, label, v, ranks=2, extra=()):
    path = hx.path(label.split()[0] + ".h5")
    vec = X.write_foreign(path, v, order="xyz", names=("/vel/u", "/vel/v", "/vel/w"))
    with h5py.File(path, "r") as f:
        shape = f["/vel/u"].shape
    c.check(f"[{label}] written in xyz order, shape (Nx, Ny, Nz)", shape == CELLS, str(shape))
    run = X.inspect(hx, path, "--vector", vec, "--order", "xyz", "--box",
                    ",".join(map(str, BOX)), *extra, ranks=ranks)
    ok = c.check(f"[{label}] inspect exits 0 ({ranks} ranks)", run.ok and run.json is not None,
                 f"{run.seconds:.2f} s" if run.ok else run.describe())
    if ok:
        c.check(f"[{label}] cells reported as [Nx, Ny, Nz] = {list(CELLS)}",
                run.json["cells"] == list(CELLS), str(run.json["cells"]))
    return run.json if ok else None


def body(args, hx, c):
    Xc, Yc, Zc = X.grid_coords(CELLS, BOX, centred=True)

    # ---------------------------------------------------------------- (a)
    p = potential_params()
    vg = potential_flow(Xc, Yc, Zc, p)
    e_A, e_C, e_D, div2 = potential_answers(p)
    ja = run_xyz(c, hx, "a grad phi", vg)
    if ja:
        en, gr = ja["energy"], ja["gradients"]
        c.check("[a] compressive share = 1 (to 1e-12)", abs(en["compressive_fraction"] - 1) < 1e-12,
                f"share={en['compressive_fraction']:.16f}", SRC_GRAD)
        c.check("[a] solenoidal energy ~ 0 (< 1e-12 e_total)", abs(en["solenoidal"]) < 1e-12 * en["total"],
                f"e_sol={en['solenoidal']:.3e}", SRC_GRAD)
        # helmix's vorticity is sqrt(sum|k|^2|v|^2 - sum|k.v|^2): for a curl-free
        # field the difference is round-off of the two sums, ~1e-16 of each, so
        # the ratio is ~sqrt(1e-16) = 1e-8; 1e-6 leaves a margin
        c.check("[a] vorticity ratio ~ 0 (< 1e-6, sqrt of round-off)", gr["vorticity_ratio"] < 1e-6,
                f"vort_ratio={gr['vorticity_ratio']:.2e}", SRC_GRAD)
        c.check("[a] divergence ratio = 1 (to 1e-12)", abs(gr["divergence_ratio"] - 1) < 1e-12,
                f"div_ratio={gr['divergence_ratio']:.16f}", SRC_GRAD)
        et = e_A + e_C + e_D
        c.check("[a] e_total = analytic (to 1e-12)", rel(en["total"], et) < 1e-12,
                f"inspect={en['total']:.15g} analytic={et:.15g}", SRC_AVG)
        c.check("[a] rms divergence = <(lap phi)^2>^1/2 analytic (to 1e-12)",
                rel(gr["divergence_rms"], math.sqrt(div2)) < 1e-12,
                f"inspect={gr['divergence_rms']:.15g} analytic={math.sqrt(div2):.15g}", SRC_AVG)
        # shells: |k| in units of 2 pi / Lmax = 2 pi / 2: C-term mode (0,0,1) at
        # |k| = 2; A-term (1,2,0) at sqrt(1 + (8/3)^2) = 2.85 and D-term (2,0,1)
        # at sqrt(8) = 2.83, both shell 3
        se = ja["shells"]["energy"]
        others = max(abs(x) for s, x in enumerate(se) if s not in (2, 3))
        c.check("[a] shell 2 holds the cos(2 pi z / Lz) term, shell 3 the others (1e-12)",
                rel(se[2], e_C) < 1e-12 and rel(se[3], e_A + e_D) < 1e-12
                and others < 1e-14 * et,
                f"E2={se[2]:.15g} (analytic {e_C:.15g}), E3={se[3]:.15g} (analytic {e_A + e_D:.15g}), "
                f"largest other {others:.1e}", "shell = round(|k| Lmax / 2 pi), definition")
        c.check("[a] mean ~ 0", max(abs(m) for m in ja["mean"]) < 1e-13, f"mean={ja['mean']}",
                "grad of a periodic potential has zero mean (common practice)")

    # ---------------------------------------------------------------- (b)
    vabc, e_abc, vort2 = abc_flow(Xc, Yc, Zc)
    jb = run_xyz(c, hx, "b ABC flow", vabc, ranks=3)
    if jb:
        en, gr = jb["energy"], jb["gradients"]
        c.check("[b] compressive share < 1e-12", abs(en["compressive_fraction"]) < 1e-12,
                f"share={en['compressive_fraction']:.2e}", SRC_ABC)
        c.check("[b] divergence ratio < 1e-12", abs(gr["divergence_ratio"]) < 1e-12,
                f"div_ratio={gr['divergence_ratio']:.2e}", SRC_ABC)
        c.check("[b] e_total = (A^2 + B^2 + C^2)/2 (to 1e-12)", rel(en["total"], e_abc) < 1e-12,
                f"inspect={en['total']:.15g} analytic={e_abc:.15g}", SRC_AVG)
        c.check("[b] rms vorticity = (A^2 kz^2 + B^2 kx^2 + C^2 ky^2)^1/2 (to 1e-12)",
                rel(gr["vorticity_rms"], math.sqrt(vort2)) < 1e-12,
                f"inspect={gr['vorticity_rms']:.15g} analytic={math.sqrt(vort2):.15g}", SRC_AVG)
        c.check("[b] vorticity ratio = 1 (to 1e-12)", abs(gr["vorticity_ratio"] - 1) < 1e-12,
                f"vort_ratio={gr['vorticity_ratio']:.16f}", SRC_ABC)

    # ---------------------------------------------------------------- (c)
    vtg, e_tg = taylor_green(Xc, Yc, Zc)
    jc = run_xyz(c, hx, "c Taylor-Green", vtg)
    if jc:
        en, gr = jc["energy"], jc["gradients"]
        c.check("[c] compressive share < 1e-12", abs(en["compressive_fraction"]) < 1e-12,
                f"share={en['compressive_fraction']:.2e}", SRC_TG)
        c.check("[c] divergence ratio < 1e-12", abs(gr["divergence_ratio"]) < 1e-12,
                f"div_ratio={gr['divergence_ratio']:.2e}", SRC_TG)
        c.check("[c] e_total = (U^2 + V^2 + W^2)/16 (to 1e-12)", rel(en["total"], e_tg) < 1e-12,
                f"inspect={en['total']:.15g} analytic={e_tg:.15g}", SRC_AVG)
        # all 8 modes (+-1, +-1, +-1): |k| = sqrt(1 + 16/9 + 4) = 2.60 -> shell 3
        se = jc["shells"]["energy"]
        c.check("[c] all energy in shell 3 (|k| = sqrt(1 + 16/9 + 4) = 2.60)",
                rel(se[3], e_tg) < 1e-12, f"E3={se[3]:.15g}", "shell definition")

    # ---------------------------------------------------------------- (d)
    # alpha grad(phi) + beta ABC, with beta chosen for a 0.3 compressive share:
    # per mode, k_hat.v of ABC is 0 and grad(phi) is parallel to k, so
    # e_comp = alpha^2 E_phi and e_total = alpha^2 E_phi + beta^2 E_abc (Parseval)
    e_phi = e_A + e_C + e_D
    alpha, target = 1.3, 0.3
    beta = math.sqrt(alpha ** 2 * e_phi * (1 / target - 1) / e_abc)
    vmix = alpha * vg + beta * vabc
    jd = run_xyz(c, hx, "d alpha gradphi + beta ABC", vmix)
    if jd:
        en = jd["energy"]
        ec, et = alpha ** 2 * e_phi, alpha ** 2 * e_phi + beta ** 2 * e_abc
        c.check("[d] compressive energy = alpha^2 E_phi (to 1e-12)", rel(en["compressive"], ec) < 1e-12,
                f"inspect={en['compressive']:.15g} analytic={ec:.15g}", SRC_PARSEVAL_ORTH)
        c.check("[d] solenoidal energy = beta^2 E_abc (to 1e-12)",
                rel(en["solenoidal"], beta ** 2 * e_abc) < 1e-12,
                f"inspect={en['solenoidal']:.15g} analytic={beta ** 2 * e_abc:.15g}", SRC_PARSEVAL_ORTH)
        c.check("[d] compressive share = 0.3 (to 1e-12)", abs(en["compressive_fraction"] - target) < 1e-12,
                f"share={en['compressive_fraction']:.16f}", SRC_PARSEVAL_ORTH)
        c.check("[d] e_total = sum of the parts (to 1e-12)", rel(en["total"], et) < 1e-12,
                f"inspect={en['total']:.15g} analytic={et:.15g}", SRC_PARSEVAL_ORTH)

    # ---------------------------------------------------------------- (e)
    mean = (0.25, -1.1, 0.6)
    vr = X.random_field(CELLS, BOX, 4242, mean=mean, nongauss=True)
    je = run_xyz(c, hx, "e random field with a mean", vr)
    if je:
        fl = vr.reshape(3, -1)
        e_real = 0.5 * float(np.mean(np.sum((fl - fl.mean(axis=1)[:, None]) ** 2, axis=0)))
        c.check("[e] Parseval: e_total = 1/2 <|v - <v>|^2> from real space (to 1e-12)",
                rel(je["energy"]["total"], e_real) < 1e-12,
                f"inspect={je['energy']['total']:.15g} real space={e_real:.15g}",
                "Parseval's theorem for the DFT (common practice)")
        c.check("[e] mean = the written mean (to 1e-12)",
                max(abs(a - b) for a, b in zip(je["mean"], fl.mean(axis=1))) < 1e-12,
                f"mean={je['mean']}", "arithmetic mean")
        c.check("[e] rms_3d^2 = |mean|^2 + 2 e_total (to 1e-12)",
                rel(je["rms_3d"] ** 2, float(np.sum(fl.mean(axis=1) ** 2)) + 2 * je["energy"]["total"]) < 1e-12,
                f"rms_3d={je['rms_3d']:.15g}", "Parseval; k=0 mode is the mean (common practice)")

    # ------------------------------------------------------- 4-D layouts
    ref = jd
    if ref:
        path = hx.path("vec4d.h5")
        zyx = [np.ascontiguousarray(vmix[i]) for i in range(3)]
        xyz = [X.to_xyz(vmix[i]) for i in range(3)]
        X.write_sets(path, {"/zyx_first": np.stack(zyx), "/zyx_last": np.stack(zyx, axis=-1),
                            "/xyz_first": np.stack(xyz), "/xyz_last": np.stack(xyz, axis=-1)})
        for name, order in (("zyx_first", "zyx"), ("zyx_last", "zyx"),
                            ("xyz_first", "xyz"), ("xyz_last", "xyz")):
            run = X.inspect(hx, path, "--vector", "/" + name, "--order", order, "--box",
                            ",".join(map(str, BOX)), ranks=2)
            if not c.check(f"[4-D {name}] inspect exits 0", run.ok and run.json is not None,
                           run.describe() if not run.ok else f"{run.seconds:.2f} s"):
                continue
            ok, worst, key, missing = X.json_diff(run.json, ref, 1e-14)
            c.check(f"[4-D {name}, --order {order}] same numbers as the three xyz datasets",
                    ok, f"max relative difference {worst:.1e} ({key or 'none'}), "
                        f"bitwise={'yes' if worst == 0 else 'no'}; missing keys {missing[:3]}",
                    "same data, same grid: same analysis")


SRC_PARSEVAL_ORTH = ("Parseval's theorem with parts orthogonal mode by mode: k_hat.v_abc = 0, "
                     "grad phi parallel to k (common practice)")

if __name__ == "__main__":
    H.run_main("test_inspect_analytic", __doc__, body)
