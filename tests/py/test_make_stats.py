#!/usr/bin/python3
"""Single-realization statistics of `helmix make`, recomputed with numpy/scipy.

Checks: 3D rms and mean, attributes against numpy, the Helmholtz split
(compressive share, divergence, curl) by projection on k_hat, the mode set
(kmin <= |k| <= kmax, Nyquist empty), the fitted spectral slope, the
Gaussian one-point PDF, single vs double precision, non-cubic boxes, and the
table and band spectrum shapes against their formulas.
"""

import sys
import numpy as np
import scipy.stats as st

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

SRC_RMS = "definition of the 3D rms, common practice"
SRC_PARSEVAL = "Parseval's theorem for the DFT (common practice; numpy.fft docs)"
SRC_HELM = ("Helmholtz decomposition by projection on k_hat, "
            "P_par = k k^T/k^2 (common practice; cf. Federrath et al. 2010, "
            "A&A 512, A81, eq. 7, from memory)")
SRC_SHELL = ("shell-integrated spectrum E(k) = 4 pi k^2 x power per mode "
             "(common practice)")
SRC_GAUSS = ("sum of independent Gaussian Fourier modes is Gaussian (common "
             "practice); D'Agostino & Pearson 1973, Biometrika 60, 613 "
             "(scipy.stats.normaltest); Kolmogorov-Smirnov test (scipy.stats.kstest)")
SRC_SPEC = "helmix specification (mode set / recipe semantics)"


def base(seed, **over):
    r = {
        "grid": {"cells": 64, "box": 1.0},
        "spectrum": {"shape": "power", "slope": 2.0, "kmin": 1},
        "mix": {"zeta": 0.5},
        "amplitude": {"vrms": 1.0},
        "random": {"seed": seed, "amplitudes": "gaussian"},
        "output": {"precision": "double"},
    }
    for sec, kv in over.items():
        if kv is None:
            continue
        r.setdefault(sec, {})
        if sec == "mix":
            r[sec] = dict(kv)  # replace the mix section entirely
        else:
            r[sec].update(kv)
    return r


def fitted_slope(sp, P, mask, lo, hi):
    """Slope of E(k) from per-shell geometric means.

    For each shell s in [lo, hi] the mean of log P over its modes and the
    mean of log |k| are taken; log P = -(slope+2) log k + c is linear, so the
    fit is free of the mode-count discreteness of small shells."""
    s = sp.shells()
    xs, ys = [], []
    for i in range(lo, hi + 1):
        m = mask & (s == i) & (P > 0)
        if np.count_nonzero(m) == 0:
            continue
        xs.append(np.mean(np.log(sp.kun[m])))
        ys.append(np.mean(np.log(P[m])))
    b = np.polyfit(xs, ys, 1)[0]
    return -b - 2.0


def raw_shell_slope(sp, P, lo, hi):
    """Plain least-squares slope of the shell-summed spectrum (for information)."""
    s = sp.shells()
    E = np.bincount(s.ravel(), P.ravel())
    idx = np.arange(len(E))
    m = (idx >= lo) & (idx <= hi)
    return -np.polyfit(np.log(idx[m]), np.log(E[m]), 1)[0]


def included_modes(sp, kmin, kmax):
    eps = 1e-9
    return (sp.kun >= kmin - eps) & (sp.kun <= kmax + eps) & ~sp.nyquist


def load(hx, c, label, recipe, ranks=2, sets=()):
    run = hx.make(recipe, ranks=ranks, sets=sets)
    if not c.check(f"[{label}] helmix make exits 0", run.ok,
                   f"{run.seconds:.2f} s" if run.ok else run.describe()):
        return None
    return H.Cube(run.out)


def check_basic(c, label, cube, vrms, tol_rms=1e-10):
    rms = cube.rms3()
    c.check(f"[{label}] 3D rms == vrms", abs(rms / vrms - 1) < tol_rms,
            f"rms={rms:.15g} vrms={vrms} rel.err={abs(rms / vrms - 1):.2e} (tol {tol_rms})",
            SRC_RMS)
    means = cube.v.reshape(3, -1).mean(axis=1)
    tol = 1e-12 * vrms if cube.dtype == np.float64 else 1e-6 * vrms
    c.check(f"[{label}] mean of each component ~ 0", np.all(np.abs(means) < tol),
            f"means={means} (tol {tol:.1e})",
            "k=0 mode empty => zero mean, common practice")
    rv = float(cube.attrs["realized_vrms"])
    c.check(f"[{label}] attr realized_vrms matches numpy rms",
            abs(rv / rms - 1) < max(tol_rms, 1e-10),
            f"attr={rv:.15g} numpy={rms:.15g}", SRC_RMS)
    return rms


def body(args, hx, c):
    # ---------------------------------------------------------------- A
    # compressive_fraction = 0.3, exact = total (default), vrms = 2.5
    A = load(hx, c, "A cf=0.3 total", base(11, mix={"compressive_fraction": 0.3},
                                             amplitude={"vrms": 2.5}))
    if A is not None:
        check_basic(c, "A", A, 2.5)
        sp = H.Spectral(A.v, A.box)
        cf = sp.compressive_fraction()
        c.check("[A] compressive share (numpy) == 0.3", abs(cf - 0.3) < 1e-8,
                f"numpy={cf:.12f} |diff|={abs(cf - 0.3):.2e}", SRC_HELM)
        cfa = float(A.attrs["realized_compressive_fraction"])
        c.check("[A] attr realized_compressive_fraction == numpy", abs(cfa - cf) < 1e-9,
                f"attr={cfa:.12f} numpy={cf:.12f}", SRC_HELM + "; " + SRC_PARSEVAL)
        # Parseval: sum |c_n|^2 over modes equals <|v|^2>
        P = sp.power()
        e_spec = float(np.sum(P))
        e_real = float(np.mean(np.sum(A.v ** 2, axis=0)))
        c.check("[A] Parseval: sum|c_n|^2 == <|v|^2> (sanity of the analysis)",
                abs(e_spec / e_real - 1) < 1e-12, f"{e_spec:.15g} vs {e_real:.15g}",
                SRC_PARSEVAL)
        # mode set
        inc = included_modes(sp, 1, 31)
        out_frac = float(np.sum(P[~inc]) / e_spec)
        c.check("[A] no power outside 1<=|k|<=31 nor on Nyquist planes", out_frac < 1e-20,
                f"fraction outside={out_frac:.2e}", SRC_SPEC)
        empty = int(np.count_nonzero(P[inc] <= 1e-12 * np.mean(P[inc])))
        c.check("[A] every included mode carries power", empty == 0,
                f"{empty} of {np.count_nonzero(inc)} included modes empty", SRC_SPEC)
        # slope (gaussian amplitudes)
        sl = fitted_slope(sp, P, inc, 2, 20)
        c.check("[A] fitted slope (k in [2,20]) == 2.0 +- 0.15 (gaussian amplitudes)",
                abs(sl - 2.0) < 0.15,
                f"fit={sl:.4f}; raw shell-sum fit={raw_shell_slope(sp, P, 2, 20):.4f} "
                f"(raw fit is biased ~-0.05 by shell mode counts at 64^3)", SRC_SHELL)
        # attributes echo the recipe
        at = A.attrs
        ok = (str(at.get("mix_mode")) == "compressive_fraction"
              and str(at.get("exact")) == "total"
              and abs(float(at.get("compressive_fraction_target")) - 0.3) < 1e-15
              and np.isnan(float(at.get("zeta")))
              and int(at.get("seed")) == 11 and int(at.get("ranks")) == 2
              and list(np.asarray(at.get("cells")).tolist()) == [64, 64, 64]
              and np.allclose(np.asarray(at.get("box"), float), [1, 1, 1])
              and abs(float(at.get("vrms")) - 2.5) < 1e-15
              and abs(float(at.get("slope")) - 2.0) < 1e-15
              and abs(float(at.get("kmin")) - 1) < 1e-15
              and abs(float(at.get("kmax")) - 31) < 1e-12
              and str(at.get("spectrum_shape")) == "power")
        c.check("[A] /helmix attributes echo the recipe (kmax default N/2-1 = 31)", ok,
                {k: at.get(k) for k in ("mix_mode", "exact", "compressive_fraction_target",
                                        "zeta", "seed", "ranks", "cells", "box", "vrms",
                                        "slope", "kmin", "kmax", "spectrum_shape")},
                SRC_SPEC)
        rec = str(at.get("recipe", ""))
        try:
            cp = H.ini_parses(rec)
            okr = (abs(float(cp["mix"]["compressive_fraction"]) - 0.3) < 1e-15
                   and int(float(cp["random"]["seed"])) == 11)
        except Exception as e:  # noqa: BLE001
            okr, cp = False, e
        c.check("[A] attr recipe is INI (Python configparser) holding the values used", okr,
                "" if okr else repr(cp)[:300], "Python configparser (INI), common practice")

    # ---------------------------------------------------------------- B
    B = load(hx, c, "B cf=0.3 shell", base(12, spectrum={"kmax": 24},
                                           mix={"compressive_fraction": 0.3,
                                                "exact": "shell"}))
    if B is not None:
        check_basic(c, "B", B, 1.0)
        sp = H.Spectral(B.v, B.box)
        P = sp.power()
        L = sp.longitudinal()
        s = sp.shells()
        Es = np.bincount(s.ravel(), P.ravel())
        Ls = np.bincount(s.ravel(), L.ravel())
        nz = np.nonzero(Es > 1e-20 * Es.sum())[0]
        shares = Ls[nz] / Es[nz]
        worst = float(np.max(np.abs(shares - 0.3)))
        c.check("[B] every shell's compressive share == 0.3 (exact=shell)", worst < 1e-8,
                f"shells {nz.min()}..{nz.max()} ({len(nz)}), max|share-0.3|={worst:.2e}",
                SRC_HELM)
        inc = included_modes(sp, 1, 24)
        out_frac = float(np.sum(P[~inc]) / np.sum(P))
        c.check("[B] kmax=24 respected: no power at |k|>24", out_frac < 1e-20,
                f"fraction outside={out_frac:.2e}", SRC_SPEC)
        c.check("[B] shell 24 (partially included) is non-empty", 24 in nz,
                f"top shell={nz.max()}", SRC_SPEC)

    # ---------------------------------------------------------------- C, D
    C = load(hx, c, "C zeta=1", base(13, mix={"zeta": 1.0}))
    if C is not None:
        check_basic(c, "C", C, 1.0)
        sp = H.Spectral(C.v, C.box)
        d = sp.divergence_ratio()
        c.check("[C] zeta=1 is divergence-free: rms(k.c)/rms(|k||c|) < 1e-10", d < 1e-10,
                f"ratio={d:.2e}", SRC_HELM)
        cfa = float(C.attrs["realized_compressive_fraction"])
        c.check("[C] zeta=1: attr realized compressive share ~ 0", abs(cfa) < 1e-10,
                f"attr={cfa:.2e}", SRC_HELM)
        e = float(C.attrs["expected_compressive_fraction"])
        c.check("[C] zeta=1: expected share attr == 0", abs(e) < 1e-12, f"{e}",
                "Federrath et al. 2010, A&A 512, A81, eq. 9 (from memory)")
    D = load(hx, c, "D zeta=0", base(14, mix={"zeta": 0.0}))
    if D is not None:
        check_basic(c, "D", D, 1.0)
        sp = H.Spectral(D.v, D.box)
        r = sp.curl_ratio()
        c.check("[D] zeta=0 is curl-free: rms(k x c)/rms(|k||c|) < 1e-10", r < 1e-10,
                f"ratio={r:.2e}", SRC_HELM)
        cf = sp.compressive_fraction()
        c.check("[D] zeta=0: compressive share (numpy) == 1", abs(cf - 1) < 1e-10,
                f"{cf:.15f}", SRC_HELM)

    # ---------------------------------------------------------------- E
    # fixed amplitudes with zeta = 0.5: P_perp + P_par = 1, so c_n = w_n/2 * A(k)
    # and every component of c_n has the same modulus A(k)/2.
    slope_e = 5.0 / 3.0
    E = load(hx, c, "E fixed zeta=0.5 slope=5/3",
             base(15, spectrum={"slope": slope_e}, random={"amplitudes": "fixed"}))
    if E is not None:
        check_basic(c, "E", E, 1.0)
        sp = H.Spectral(E.v, E.box)
        P = sp.power()
        inc = included_modes(sp, 1, 31)
        sl = fitted_slope(sp, P, inc, 2, 20)
        c.check("[E] fitted slope (k in [2,20]) == 5/3 +- 0.05 (fixed amplitudes)",
                abs(sl - slope_e) < 0.05,
                f"fit={sl:.5f}; raw shell-sum fit={raw_shell_slope(sp, P, 2, 20):.4f}",
                SRC_SHELL)
        # per mode: P(k) * |k|^(slope+2) constant
        q = P[inc] * sp.kun[inc] ** (slope_e + 2.0)
        spread = float(q.std() / q.mean())
        c.check("[E] fixed amplitudes: power per mode ~ k^-(slope+2) exactly", spread < 1e-8,
                f"relative spread of P*k^(slope+2) = {spread:.2e}",
                "helmix specification (power per mode ~ k^-(slope+2); amplitudes=fixed)")
        mod = np.abs(sp.c[:, inc])
        comp_spread = float(np.max(np.abs(mod / mod.mean(axis=0, keepdims=True) - 1)))
        c.check("[E] fixed amplitudes: |c_x|=|c_y|=|c_z| per mode (zeta=0.5)",
                comp_spread < 1e-8, f"max rel. deviation = {comp_spread:.2e}",
                "helmix specification (unit-modulus components) + P_perp+P_par = I "
                "(common practice)")

    # ---------------------------------------------------------------- F
    # flat power per mode (slope = -2, white in k): nearly uncorrelated cells,
    # so single-realization PDF tests are meaningful. Stride 2 thins residual
    # correlation from the band limit.
    F = load(hx, c, "F white gaussian", base(16, spectrum={"slope": -2.0}))
    if F is not None:
        check_basic(c, "F", F, 1.0)
        for a, name in enumerate("xyz"):
            x = F.v[a, ::2, ::2, ::2].ravel()
            z = (x - x.mean()) / x.std()
            p_nt = st.normaltest(z).pvalue
            p_ks = st.kstest(z, "norm").pvalue
            sk = st.skew(z)
            ku = st.kurtosis(z)
            c.check(f"[F] v{name} one-point PDF Gaussian (normaltest, KS p > 1e-3; "
                    f"|skew|<0.05, |excess kurtosis|<0.1)",
                    p_nt > 1e-3 and p_ks > 1e-3 and abs(sk) < 0.05 and abs(ku) < 0.1,
                    f"normaltest p={p_nt:.3g} KS p={p_ks:.3g} skew={sk:.4f} "
                    f"kurt={ku:.4f} n={z.size}", SRC_GAUSS)
        sp = H.Spectral(F.v, F.box)
        P = sp.power()
        inc = included_modes(sp, 1, 31)
        sl = fitted_slope(sp, P, inc, 2, 20)
        c.check("[F] fitted slope == -2 +- 0.15 (gaussian amplitudes)", abs(sl + 2) < 0.15,
                f"fit={sl:.4f}", SRC_SHELL)

    # ---------------------------------------------------------------- G
    G = load(hx, c, "G single precision", base(11, mix={"compressive_fraction": 0.3},
                                                 amplitude={"vrms": 2.5},
                                                 output={"precision": "single"}))
    if G is not None:
        c.check("[G] precision=single writes float32", G.dtype == np.float32, str(G.dtype),
                SRC_SPEC)
        check_basic(c, "G", G, 2.5, tol_rms=1e-6)
        if A is not None:
            # computed in single precision (the default for a single file): the FFT's
            # round-off grows like log N (Schatzman 1996, SIAM J. Sci. Comput. 17, 1150, from
            # memory), so the bound is the unit round-off times log2 of the cell count
            d = float(np.max(np.abs(G.v - A.v)))
            e = float(np.sqrt(np.mean((G.v.astype(np.float64) - A.v) ** 2)))
            ncell = np.log2(A.v[0].size)
            lim = 2.0 ** -23 * ncell * float(np.max(np.abs(A.v)))
            c.check("[G] single compute == double field to single round-off (max)", d <= lim,
                    f"max|v32-v64|={d:.2e} (limit {lim:.2e})",
                    "IEEE 754 binary32 round-off times log2(cells), FFT error growth")
            lim2 = 2.0 ** -23 * np.sqrt(ncell) * float(np.sqrt(np.mean(A.v ** 2)))
            c.check("[G] single compute == double field to single round-off (rms)", e <= lim2,
                    f"rms|v32-v64|={e:.2e} (limit {lim2:.2e})",
                    "IEEE 754 binary32 round-off times sqrt(log2(cells)), FFT error growth")
    G2 = load(hx, c, "G2 single file computed in double", base(11, mix={"compressive_fraction": 0.3},
                                                               amplitude={"vrms": 2.5},
                                                               output={"precision": "single",
                                                                       "compute": "double"}))
    if G2 is not None and A is not None:
        d = float(np.max(np.abs(G2.v - A.v)))
        lim = 2.0 ** -23 * float(np.max(np.abs(A.v)))
        c.check("[G2] compute = double: single file == double field rounded (same seed)", d <= lim,
                f"max|v32-v64|={d:.2e} (limit {lim:.2e})",
                "IEEE 754 binary32 rounding, common practice")

    # ---------------------------------------------------------------- H, I
    # non-cubic box: k_i = 2 pi n_i / L_i matters for the projection
    nc = {"cells": "32 32 16", "box": "2 2 1"}
    Hc = load(hx, c, "H box 2x2x1 cf=0.3", base(17, grid=nc, spectrum={"kmax": 12},
                                                 mix={"compressive_fraction": 0.3}))
    if Hc is not None:
        check_basic(c, "H", Hc, 1.0)
        sp = H.Spectral(Hc.v, Hc.box)
        cf = sp.compressive_fraction()
        c.check("[H] non-cubic box: compressive share with k_i=2pi n_i/L_i == 0.3",
                abs(cf - 0.3) < 1e-8, f"numpy={cf:.12f}", SRC_HELM)
        P = sp.power()
        inc = included_modes(sp, 1, 12)
        out_frac = float(np.sum(P[~inc]) / np.sum(P))
        empty = int(np.count_nonzero(P[inc] <= 1e-12 * np.mean(P[inc])))
        c.check("[H] non-cubic box: mode set is 1 <= |k|/(2pi/Lmax) <= 12",
                out_frac < 1e-20 and empty == 0,
                f"fraction outside={out_frac:.2e}, empty included modes={empty} "
                f"of {np.count_nonzero(inc)}", SRC_SPEC)
    I = load(hx, c, "I box 2x2x1 zeta=1", base(18, grid=nc, mix={"zeta": 1.0}))
    if I is not None:
        sp = H.Spectral(I.v, I.box)
        d = sp.divergence_ratio()
        c.check("[I] non-cubic box, zeta=1: divergence-free with physical k", d < 1e-10,
                f"ratio={d:.2e}", SRC_HELM)

    # ---------------------------------------------------------------- J
    # shape = table holding E = k^-2 on a log-spaced grid: interpolation that
    # is linear in log k - log E reproduces a power law exactly, so the field
    # must equal the shape = power, slope = 2 field of the same seed.
    small = {"cells": 32}
    tab = hx.path("e_k_minus2.dat")
    with open(tab, "w") as f:
        f.write("# k  E(k) = k^-2\n")
        for kk in (0.5, 1.0, 2.0, 4.0, 8.0, 16.0, 32.0):
            f.write(f"{kk!r} {kk ** -2.0!r}\n")
    J1 = load(hx, c, "J power slope=2 32^3", base(19, grid=small))
    J2 = load(hx, c, "J table E=k^-2 32^3",
              base(19, grid=small, spectrum={"shape": "table", "table": tab}))
    if J1 is not None and J2 is not None:
        d = float(np.max(np.abs(J1.v - J2.v)))
        c.check("[J] shape=table with E=k^-2 rows == shape=power slope=2 (same seed)",
                d < 1e-10, f"max|dv|={d:.2e}",
                "a power law is linear in log k - log E, so log-log interpolation is "
                "exact (common practice)")

    # ---------------------------------------------------------------- K
    # shape = band: E(k) ~ (k - kmin)(kmax - k) (as helmix documents it);
    # with fixed amplitudes and zeta = 0.5 the power per mode is E(|k|)/|k|^2.
    K = load(hx, c, "K band fixed 32^3",
             base(20, grid=small, spectrum={"shape": "band", "kmin": 2, "kmax": 12},
                  random={"amplitudes": "fixed"}))
    if K is not None:
        check_basic(c, "K", K, 1.0)
        sp = H.Spectral(K.v, K.box)
        P = sp.power()
        k = sp.kun
        inner = (k > 2 + 1e-9) & (k < 12 - 1e-9) & ~sp.nyquist
        q = P[inner] * k[inner] ** 2 / ((k[inner] - 2) * (12 - k[inner]))
        spread = float(q.std() / q.mean())
        outside = float(np.sum(P[(k > 12 + 1e-9) | (k < 2 - 1e-9)]) / np.sum(P))
        c.check("[K] band: power per mode == E(|k|)/|k|^2 with E ~ (k-kmin)(kmax-k)",
                spread < 1e-8 and outside < 1e-20,
                f"relative spread={spread:.2e}, power outside [2,12]={outside:.2e}",
                SRC_SHELL + "; band formula as stated by `helmix template`")

    # ---------------------------------------------------------------- L
    # non-integer kmin/kmax, --set override, largest seed
    big_seed = 2 ** 64 - 1
    Lc = load(hx, c, "L kmin=1.5 kmax=7.3 32^3",
              base(1, grid=small, spectrum={"kmin": 1.5, "kmax": 7.3}),
              sets=(f"random.seed={big_seed}",))
    if Lc is not None:
        sp = H.Spectral(Lc.v, Lc.box)
        P = sp.power()
        inc = included_modes(sp, 1.5, 7.3)
        out_frac = float(np.sum(P[~inc]) / np.sum(P))
        empty = int(np.count_nonzero(P[inc] <= 1e-12 * np.mean(P[inc])))
        c.check("[L] non-integer band: power exactly on modes with 1.5 <= |k| <= 7.3",
                out_frac < 1e-20 and empty == 0,
                f"fraction outside={out_frac:.2e}, empty included={empty} of "
                f"{np.count_nonzero(inc)}", SRC_SPEC)
        seed_attr = int(Lc.attrs.get("seed", -1))
        try:
            cp = H.ini_parses(str(Lc.attrs.get("recipe", "")))
            rec_seed = int(cp["random"]["seed"].split()[0])
        except Exception as e:  # noqa: BLE001
            rec_seed = repr(e)[:200]
        c.check("[L] --set random.seed=2^64-1 lands in seed attr (uint64) and recipe attr",
                seed_attr == big_seed and rec_seed == big_seed,
                f"seed attr={seed_attr} recipe seed={rec_seed}", SRC_SPEC)
    if I is not None:
        at = float(I.attrs.get("kmax", -1))
        sp = H.Spectral(I.v, I.box)
        P = sp.power()
        inc = included_modes(sp, 1, 14)
        out_frac = float(np.sum(P[~inc]) / np.sum(P))
        c.check("[I] non-cubic default kmax = min_i (N_i/2-1) Lmax/L_i = 14, mode set obeys it",
                abs(at - 14) < 1e-12 and out_frac < 1e-20,
                f"kmax attr={at} fraction outside 1..14={out_frac:.2e}",
                "largest wavenumber below Nyquist on every axis (common practice)")

    # ---------------------------------------------------------------- version
    proc, cmd, _ = hx.launch(["--version"], ranks=1)
    ver_ok = proc.returncode == 0 and proc.stdout.strip() != ""
    same = A is not None and str(A.attrs.get("version", "")) in proc.stdout
    c.check("helmix --version exits 0 and names the version stored in /helmix",
            ver_ok and same and str(A.attrs.get("version", "")) != "",
            f"stdout={proc.stdout.strip()!r} attr={A.attrs.get('version') if A else None!r}",
            SRC_SPEC)


if __name__ == "__main__":
    H.run_main("test_make_stats", __doc__, body)
