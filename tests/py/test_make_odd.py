#!/usr/bin/python3
"""Every grid size: odd and mixed odd/even grids through `helmix make` and
`helmix inspect`, and boxes no grid can represent.

An odd N has no Nyquist index: numpy.fft.fftfreq gives 0, +-1 .. +-(N-1)/2,
every frequency with its partner, and the highest one, (N-1)/2, may carry
power (the default kmax of 45^3 is 22). Checked from the written files with
numpy.fft (helpers in hxcheck.py / hxinspect.py):
  * make on 33^3, 31x32x17 and 20x15x9 on 1-4 ranks: rms and mean of the
    cell values, the compressive share by projection on k_hat, the
    divergence of a solenoidal and the curl of a compressive field, power
    on the highest frequency of an odd axis and none beyond kmax, and rank
    invariance (2-4 ranks against 1 to 1e-12 vrms);
  * nesting: 45^3 (double) inside 135^3 (single precision, 2 ranks) with the
    same seed and kmax hold the same Fourier coefficients c_n at every
    |n| <= kmax + 1/2 (half-cell phase corrected as in test_make_nesting);
  * inspect on odd foreign cubes written by numpy: the gradient of
    phi = sin x sin 2y + cos(3z)/2 on 27^3, an Arnold-Beltrami-Childress
    flow on 25x30x21 and a non-Gaussian random field filling the whole band
    on 27x21x15 (plain and with --remove-scale): every reported number
    against the numpy reference of hxinspect.reference, and the closed
    forms (share 1 and 0, rms);
  * boxes: cells = 16 with box = 1 1 1e12 (make and plan), inspect --box
    1,1,1e12, and files whose domain edges are NaN or reach 1e308 exit 2
    with one line and leave nothing, on 1 and 3 ranks. The limit helmix
    states: the grid's largest |k|, sqrt(sum_a (floor(N_a/2) max(L)/L_a)^2)
    in units of 2 pi / max(L), at most 2^24 shells.
"""

import glob
import os
import sys

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

SRC_DFT = ("DFT of a band-limited periodic field sampled at cell centres "
           "(common practice; numpy.fft conventions)")
SRC_FREQ = "numpy.fft.fftfreq: an odd N has frequencies 0, +-1 .. +-(N-1)/2 (numpy documentation)"
SRC_HELM = X.SRC_HELM
SRC_RANKS = ("helmix specification (result independent of the rank count); "
             "round-off bound 1e-12*vrms in double precision")


def recipe(cells, seed, mix, vrms=1.0, box=None, kmax=None, precision="double"):
    r = {
        "grid": {"cells": cells},
        "spectrum": {"shape": "power", "slope": 2.0, "kmin": 1},
        "mix": mix,
        "amplitude": {"vrms": vrms},
        "random": {"seed": seed},
        "output": {"precision": precision},
    }
    if box is not None:
        r["grid"]["box"] = box
    if kmax is not None:
        r["spectrum"]["kmax"] = kmax
    return r


# label, cells, box, mix, vrms, rank counts (the first is the reference), what to check
MAKE_CASES = [
    ("33^3 shell-exact 0.3", "33", None, {"compressive_fraction": 0.3, "exact": "shell"}, 1.2,
     (1, 3), "share"),
    ("31x32x17 solenoidal", "31 32 17", "1 1 0.5", {"compressive_fraction": 0.0}, 1.0,
     (1, 2, 4), "solenoidal"),
    ("20x15x9 compressive", "20 15 9", None, {"compressive_fraction": 1.0}, 0.7,
     (1, 3), "compressive"),
]


def check_make(c, hx):
    for i, (label, cells, box, mix, vrms, counts, kind) in enumerate(MAKE_CASES):
        ref = None
        for p in counts:
            run = hx.make(recipe(cells, 900 + i, mix, vrms=vrms, box=box), ranks=p,
                          name=f"odd{i}_p{p}")
            if not c.check(f"[{label}] {p} ranks: exit 0", run.ok,
                           f"{run.seconds:.2f} s" if run.ok else run.describe()):
                continue
            cube = H.Cube(run.out)
            rms = cube.rms3()
            c.check(f"[{label}] {p} ranks: 3D rms of the cells == vrms {vrms} (1e-10)",
                    abs(rms / vrms - 1) < 1e-10, f"rms={rms:.15g}", "definition of the 3D rms, common practice")
            mean = np.abs(cube.v.reshape(3, -1).mean(axis=1)).max()
            c.check(f"[{label}] {p} ranks: mean of every component 0 (k = 0 empty)",
                    mean < 1e-12 * vrms, f"max|mean|={mean:.2e}", "arithmetic mean, common practice")
            if p != counts[0]:
                if ref is not None:
                    d = float(np.max(np.abs(cube.v - ref.v)))
                    c.check(f"[{label}] {p} ranks == {counts[0]} rank (max|dv| < 1e-12 vrms)",
                            d < 1e-12 * vrms, f"max|dv|={d:.2e}", SRC_RANKS)
                continue
            ref = cube
            sp = H.Spectral(cube.v, cube.box)
            share = sp.compressive_fraction()
            attr = float(cube.attrs["realized_compressive_fraction"])
            want = {"share": 0.3, "solenoidal": 0.0, "compressive": 1.0}[kind]
            c.check(f"[{label}] compressive share by numpy == {want} (1e-10)", abs(share - want) < 1e-10,
                    f"share={share:.15f}", SRC_HELM)
            c.check(f"[{label}] realized_compressive_fraction attr == numpy share (1e-10)",
                    abs(attr - share) < 1e-10, f"attr={attr:.15f}", SRC_HELM)
            if kind == "solenoidal":
                r = sp.divergence_ratio()
                c.check(f"[{label}] divergence by numpy: rms(k.c)/rms(|k||c|) < 1e-12", r < 1e-12,
                        f"ratio={r:.2e}", "spectral divergence, common practice")
            if kind == "compressive":
                r = sp.curl_ratio()
                c.check(f"[{label}] curl by numpy: rms(k x c)/rms(|k||c|) < 1e-12", r < 1e-12,
                        f"ratio={r:.2e}", "spectral curl, common practice")
            # the band: default kmax = min_a (ceil(N_a/2) - 1) Lmax/L_a; power up to it, none beyond
            kmax = float(cube.attrs["kmax"])
            P = sp.power()
            beyond = float(P[sp.kun > kmax * (1 + 1e-9)].sum()) / float(P.sum())
            c.check(f"[{label}] no power beyond kmax = {kmax:g} (relative < 1e-24)", beyond < 1e-24,
                    f"share of power beyond kmax {beyond:.1e}", SRC_DFT)
            # an odd axis whose highest frequency (N-1)/2 lies in the band: its modes carry power
            for a, n in enumerate(cube.cells):
                top = (n - 1) // 2
                if n % 2 == 0 or top * max(cube.box) / cube.box[a] > kmax * (1 + 1e-9):
                    continue
                sel = (np.abs(sp.n[a]) == top) & (sp.kun <= kmax * (1 + 1e-9))
                pt = float(P[sel].sum())
                c.check(f"[{label}] odd axis {'xyz'[a]} (N = {n}): modes at its top frequency "
                        f"+-{top} carry power", sel.any() and pt > 1e-8 * float(P.sum()),
                        f"{int(sel.sum())} modes, share of power {pt / float(P.sum()):.2e}", SRC_FREQ)


def coeffs(sp, kmax):
    """Integer modes with |n| <= kmax + 1/2 in a fixed order, and their coefficients."""
    m = sp.kun <= kmax + 0.5
    n = sp.n[:, m].T.astype(int)
    cv = sp.c[:, m].T
    order = np.lexsort((n[:, 0], n[:, 1], n[:, 2]))
    return n[order], cv[order]


def check_nesting(c, hx):
    kmax = 22  # the highest frequency of 45: its default kmax
    mix = {"compressive_fraction": 0.3, "exact": "total"}
    lo = hx.make(recipe("45", 4545, mix, kmax=kmax), ranks=1, name="n45")
    hi = hx.make(recipe("135", 4545, mix, kmax=kmax, precision="single"), ranks=2, name="n135", timeout=240)
    if not c.check("[nesting] 45^3 (1 rank, double) and 135^3 (2 ranks, single) exit 0", lo.ok and hi.ok,
                   f"{lo.seconds:.2f} s, {hi.seconds:.2f} s" if lo.ok and hi.ok
                   else lo.describe() + "\n" + hi.describe()):
        return
    A, B = H.Cube(lo.out), H.Cube(hi.out)
    c.check("[nesting] 135^3 stored in single precision", B.dtype == np.float32, str(B.dtype))
    spA, spB = H.Spectral(A.v, A.box), H.Spectral(B.v, B.box)
    nA, cA = coeffs(spA, kmax)
    nB, cB = coeffs(spB, kmax)
    if not c.check("[nesting] the same modes |n| <= kmax + 1/2 on both grids", np.array_equal(nA, nB),
                   f"{len(nA)} vs {len(nB)} modes", "integer lattice, common practice"):
        return
    scale = float(np.max(np.abs(cA)))
    d = float(np.max(np.abs(cA - cB)))
    c.check("[nesting] Fourier coefficients of 135^3 == 45^3 at |n| <= kmax + 1/2 "
            "(float32 values: 1e-5 of the largest)", d < 1e-5 * scale and scale > 0,
            f"max|dc|={d:.2e}, max|c|={scale:.3e}, rel={d / scale:.2e}", SRC_DFT)
    # a grid-corner convention would leave a resolution-dependent phase (control)
    ph = np.exp(1j * np.pi * (nA[:, 0] + nA[:, 1] + nA[:, 2]) * (1 / 45 - 1 / 135))
    d_wrong = float(np.max(np.abs(cA - cB * ph[:, None])))
    c.check("[nesting] the comparison sees the half-cell phase (control)", d_wrong > 100 * d,
            f"with a grid-corner convention max|dc| would be {d_wrong:.2e}", SRC_DFT)
    top = (np.abs(nA) == kmax).any(axis=1)
    pt = float(np.sum(np.abs(cA[top]) ** 2))
    c.check("[nesting] modes at the 45^3 grid's highest frequency 22 carry power in both",
            pt > 0 and float(np.sum(np.abs(cB[top]) ** 2)) > 0,
            f"{int(top.sum())} modes, power {pt:.3e}", SRC_FREQ)
    P = spB.power()
    beyond = float(P[spB.kun > kmax + 0.5].sum()) / float(P.sum())
    c.check("[nesting] 135^3 holds no power beyond kmax (float32 noise only, < 1e-10)", beyond < 1e-10,
            f"share of power beyond kmax {beyond:.1e}", SRC_DFT)


def spectral_agree(c, label, js, ref):
    """The spectral numbers of an inspect report against the numpy reference: the shells' mode
    counts exactly, shell energies, totals and gradients to 1e-10 relative (1e-12 e_total or
    1e-12 rms gradient absolute). Used for closed-form flows, whose values sit on pdf bin edges
    and whose shells are too few for a slope, so the pdf and slope of compare_report do not apply."""
    et = ref["energy"]["total"]
    gs = np.sqrt(ref["_grad2"])
    n = len(ref["shells"]["k"])
    sh = js["shells"]
    c.check(f"[{label}] shells.modes identical to numpy's count", [float(x) for x in sh["modes"][:n]] ==
            ref["shells"]["modes"] and all(float(x) == 0 for x in sh["modes"][n:]),
            f"{n} shells", "mode count per shell, numpy.fft.fftfreq")
    worst = 0.0
    pairs = [(sh[key][:n], ref["shells"][key], et) for key in ("energy", "compressive", "solenoidal")]
    pairs += [([js["energy"][key]], [ref["energy"][key]], et) for key in ("total", "compressive", "solenoidal")]
    pairs += [([js["rms_3d"]], [ref["rms_3d"]], ref["rms_3d"])]
    pairs += [([js["gradients"][key]], [ref["gradients"][key]], gs)
              for key in ("divergence_rms", "vorticity_rms")]
    for got, want, scale in pairs:
        g = np.array([0.0 if x is None else x for x in got], float)
        w = np.array(want, float)
        worst = max(worst, float(np.max(np.abs(g - w) / (1e-10 * np.abs(w) + 1e-12 * scale))))
    c.check(f"[{label}] shell energies, energies, rms_3d and gradients == numpy (1e-10)", worst <= 1.0,
            f"worst err/tol {worst:.2e}", f"{X.SRC_FFT}; {X.SRC_PARSEVAL}; {SRC_HELM}")


def check_inspect(c, hx):
    # gradient flow on 27^3, box 2 pi: v = grad(sin x sin 2y + cos(3z)/2)
    n = 27
    L = 2 * np.pi
    Xc, Yc, Zc = X.grid_coords((n, n, n), (L, L, L))
    v = np.stack([np.cos(Xc) * np.sin(2 * Yc), 2 * np.sin(Xc) * np.cos(2 * Yc), -1.5 * np.sin(3 * Zc)])
    path = hx.path("gradient27.h5")
    vec = X.write_foreign(path, v, order="zyx")
    box = ",".join(repr(L) for _ in range(3))
    run = X.inspect(hx, path, "--vector", vec, "--box", box, ranks=2)
    if c.check("[gradient 27^3] inspect exits 0 on 2 ranks", run.ok and run.json,
               run.describe() if not run.ok else ""):
        spectral_agree(c, "gradient 27^3", run.json, X.reference(v, (L, L, L)))
        share = run.json["energy"]["compressive_fraction"]
        c.check("[gradient 27^3] share == 1 (closed form, 1e-12)", abs(share - 1) < 1e-12, f"share={share:.15f}",
                "a gradient is curl-free; " + SRC_HELM)
        rms = run.json["rms_3d"]
        c.check("[gradient 27^3] rms_3d == sqrt(1/4 + 1 + 9/8) (closed form, 1e-12)",
                abs(rms / np.sqrt(2.375) - 1) < 1e-12, f"rms_3d={rms:.15f}", "mean of sin^2 = 1/2")
    # ABC flow on 25x30x21, box 1: A, B, C = 1, 0.8, 0.6, wavenumber 2 pi
    cells = (25, 30, 21)
    A_, B_, C_ = 1.0, 0.8, 0.6
    Xc, Yc, Zc = X.grid_coords(cells, (1.0, 1.0, 1.0))
    k = 2 * np.pi
    v = np.stack([A_ * np.sin(k * Zc) + C_ * np.cos(k * Yc), B_ * np.sin(k * Xc) + A_ * np.cos(k * Zc),
                  C_ * np.sin(k * Yc) + B_ * np.cos(k * Xc)])
    path = hx.path("abc.h5")
    vec = X.write_foreign(path, v, order="xyz")
    run = X.inspect(hx, path, "--vector", vec, "--order", "xyz", ranks=3)
    if c.check("[ABC 25x30x21] inspect (xyz order) exits 0 on 3 ranks", run.ok and run.json,
               run.describe() if not run.ok else ""):
        spectral_agree(c, "ABC 25x30x21", run.json, X.reference(v, (1.0, 1.0, 1.0)))
        share = run.json["energy"]["compressive_fraction"]
        c.check("[ABC 25x30x21] share == 0 (closed form, 1e-12)", abs(share) < 1e-12, f"share={share:.2e}",
                "ABC flow is divergence-free (Arnold 1965; Childress 1970); " + SRC_HELM)
        rms = run.json["rms_3d"]
        c.check("[ABC 25x30x21] rms_3d == sqrt(A^2 + B^2 + C^2) (closed form, 1e-12)",
                abs(rms / np.sqrt(A_ ** 2 + B_ ** 2 + C_ ** 2) - 1) < 1e-12, f"rms_3d={rms:.15f}",
                "mean of sin^2 = 1/2")
    # a non-Gaussian random field filling every frequency of 27x21x15, box 2 x 1.5 x 1
    cells, fbox = (27, 21, 15), (2.0, 1.5, 1.0)
    w = X.random_field(cells, fbox, 2727, mean=(0.3, -0.2, 0.5), nongauss=True)
    path = hx.path("random_odd.h5")
    vec = X.write_foreign(path, w, order="zyx")
    base = ["--vector", vec, "--box", ",".join(map(str, fbox)), "--fit", "1,7"]
    for label, extra, ell, p in (("random 27x21x15", [], 0.0, 2),
                                 ("random 27x21x15 --remove-scale 0.2", ["--remove-scale", "0.2"], 0.2, 3)):
        run = X.inspect(hx, path, *(base + extra), ranks=p)
        if c.check(f"[{label}] inspect exits 0 on {p} ranks", run.ok and run.json,
                   run.describe() if not run.ok else ""):
            X.compare_report(c, label, run.json, X.reference(w, fbox, remove_scale=ell, fit=(1.0, 7.0)))


def one_line_exit2(c, label, run, needle, created=()):
    lines = H.mpi_noise_free_lines(run.stderr)
    left = [p for p in created if os.path.exists(p)] + [p for q in created for p in glob.glob(q + ".partial*")]
    c.check(f"[{label}] exit 2, one line naming the box, nothing left",
            run.rc == 2 and len(lines) == 1 and lines[0].startswith("helmix: error:") and needle in lines[0]
            and not left, f"rc={run.rc} lines={lines} left={left}", "helmix specification (exit 2: bad input)")


def check_boxes(c, hx):
    flat = recipe("16", 7, {"zeta": 0.5}, box="1 1 1e12")
    ini = hx.path("flat.ini")
    with open(ini, "w") as f:
        f.write(H.recipe_text(flat))
    good = hx.path("good.h5")
    v = X.random_field((9, 8, 7), (1, 1, 1), 9, nongauss=False)
    X.write_foreign(good, v, order="zyx")
    for p in (1, 3):
        out = hx.path(f"flat_p{p}.h5")
        run = hx.make(flat, ranks=p, out=out, name=f"flat_p{p}")
        one_line_exit2(c, f"make cells 16, box 1 1 1e12, {p} rank(s)", run, "too elongated", [out])
        if p == 1:  # plan runs on one process and plans for --ranks
            proc, cmd, dt = hx.launch(["plan", ini, "--ranks", "3"], ranks=0)
            one_line_exit2(c, "plan cells 16, box 1 1 1e12, --ranks 3", H.Run(proc, None, cmd, dt), "too elongated")
        js = hx.path(f"box_p{p}.json")
        run = X.inspect(hx, good, "--vector", "/u,/v,/w", "--box", "1,1,1e12", ranks=p, json_name=js)
        one_line_exit2(c, f"inspect --box 1,1,1e12, {p} rank(s)", run, "too elongated", [js])
        for tag, left, right, needle in (("NaN", [0, 0, np.nan], [1, 1, 1], "nan"),
                                         ("1e308", [0, 0, 0], [1, 1, 1e308], "too elongated"),
                                         ("-1e308..1e308", [-1e308, 0, 0], [1e308, 1, 1], "inf")):
            path = hx.path(f"edges_{p}.h5")
            X.write_foreign(path, v, order="zyx")
            with h5py.File(path, "a") as f:
                g = f.require_group("/simulation_parameters")
                g.attrs["domain_left_edge"] = np.asarray(left, float)
                g.attrs["domain_right_edge"] = np.asarray(right, float)
            js = hx.path(f"edges_{p}.json")
            run = X.inspect(hx, path, "--vector", "/u,/v,/w", ranks=p, json_name=js)
            one_line_exit2(c, f"inspect, domain edges {tag}, {p} rank(s)", run, needle, [js])
    # both sides of the limit: at 16 cells an aspect ratio of 1e6 spans sqrt(2) 8e6 = 1.13e7 shells
    # (a field along z only: kmax = 7), 2e6 spans 2.26e7 > 2^24 = 1.68e7
    for aspect, ok in (("1e6", True), ("2e6", False)):
        out = hx.path(f"aspect_{aspect}.h5")
        run = hx.make(recipe("16", 7, {"zeta": 0.5}, box=f"1 1 {aspect}"), ranks=2, out=out, name=f"aspect{aspect}")
        if ok:
            good_run = run.ok and abs(H.Cube(out).rms3() - 1) < 1e-10
            c.check(f"[make box 1 1 {aspect}, 16 cells: inside the 2^24-shell limit] exit 0, rms 1",
                    good_run, f"{run.seconds:.2f} s" if run.ok else run.describe(), "helmix's stated limit")
        else:
            one_line_exit2(c, f"make box 1 1 {aspect}, 16 cells: beyond the 2^24-shell limit", run,
                           "too elongated", [out])


def body(args, hx, c):
    check_make(c, hx)
    check_nesting(c, hx)
    check_inspect(c, hx)
    check_boxes(c, hx)


if __name__ == "__main__":
    H.run_main("test_make_odd", __doc__, body)
