#!/usr/bin/python3
"""`helmix inspect` on a magnetic field: every number it reports recomputed with numpy.

1. `helmix make` of a magnetised cloud-free cube (32 x 32 x 48 cells, box 1 x 1 x 1.5 pc,
   uniform density 1e-20 g/cm^3, 10 K, mu 2.33, Mach 5, B0 = 10 uG along (1, 1, 0) with a
   random part of half its strength on a k^-5/3 spectrum up to k = 10, double precision):
   `inspect --check --json` on 1 and 3 ranks passes every magnetic line, and the rms, mean,
   random rms, beta, Alfven speed and Mach number, the spectrum per shell and its slope, the
   spectral divergence and the discrete divergence of the face-centred field equal numpy's
   recomputation from the file (1e-10 relative; the divergences, which are round-off, within
   1e-13 absolute and both below 1e-12).
2. Altered copies (h5py): B scaled by 1.1 fails the mean field, the random rms, beta and
   M_A but not the divergences; one face value changed on the plane where two ranks' slabs
   meet fails the face divergence only, and the divergence inspect reports on 3 ranks equals
   numpy's (the neighbouring plane across the slab boundary is read).
3. A foreign file with numpy-made fields (24 x 20 x 16 cells, box 1.0 x 0.9 x 0.7, no
   density, no units): a cell-centred B = B0 + the spectral curl of a random vector
   potential, and the face-centred B = B0 + its discrete curl by forward differences, analysed
   with --vector / --magnetic / --magnetic-face / --sound-speed / --gamma on 1 and 3 ranks,
   as one 4-D dataset, and with a gradient added (a field that is not solenoidal, whose
   spectral and face divergences are then compared relatively); bad input is refused.
4. The worked values v_A = 0.282095 km/s for B = 10 uG in rho = 1e-20 g/cm^3, and
   beta = 0.88988 at 10 K, mu 2.33, equal what inspect reports for the cube of part 1.

Sources:
  * Gaussian units: v_A = B / sqrt(4 pi rho), beta = 8 pi P / B^2, P = rho k T / (mu m_H):
    NRL Plasma Formulary (Huba 2013), "Fundamental plasma parameters".
  * Constants: CODATA 2018 through scipy.constants (Tiesinga et al. 2021, Rev. Mod. Phys. 93,
    025010); m_H = 1.00782503223 u (Wang et al. 2021, Chinese Phys. C 45, 030003).
  * The discrete divergence of a discrete curl vanishes (the differences commute): Yee 1966,
    IEEE Trans. Antennas Propag. 14, 302; Evans & Hawley 1988, ApJ 332, 659.
  * numpy.fft conventions, Parseval's theorem, shells and the compensated slope fit: as in
    hxinspect.py (numpy documentation; common practice).

Definitions (helmix specification): code magnetic unit sqrt(4 pi rho_u) v_u gauss, so in code
units v_A = |<B>| / sqrt(<rho>), beta = 2 <rho> c_s^2 / gamma / |<B>|^2 and
M_A = sigma_3D sqrt(<rho>) / |<B>|, sigma_3D the mass-weighted velocity dispersion (the
volume-weighted one without a density, where <rho> = 1); E_B(k) = 1/2 sum over the shell of
|B_hat|^2 without k = 0; random rms = rms of B - <B>; spectral divergence
rms(k . B_hat) / rms(|k| |B_hat|); face divergence max |sum_c (B_c[i_c + 1] - B_c[i_c]) / dx_c|
divided by rms|B_face| / min dx.
"""

import math
import shutil
import sys

import numpy as np
import h5py
import scipy.constants as sc

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

GRID = "/data/grid_0000000000"
KB = sc.k * 1e7                                                               # erg/K
MH = 1.00782503223 * sc.physical_constants["atomic mass constant"][0] * 1e3  # g
SRC_NRL = "NRL Plasma Formulary (Huba 2013): v_A = B / sqrt(4 pi rho), beta = 8 pi P / B^2"
SRC_CODATA = "CODATA 2018 via scipy.constants; m_H = 1.00782503223 u"
SRC_DIV = "discrete div of a discrete curl vanishes (Yee 1966; Evans & Hawley 1988)"
SRC_SPEC = X.SRC_FFT + "; " + X.SRC_PARSEVAL
MAGNETIC_LINES = ("mean field B_x", "mean field B_y", "mean field B_z", "rms of the random field",
                  "plasma beta as made", "Alfven Mach number as made", "divergence of B (spectral)",
                  "divergence of B (faces)")

RECIPE = {"grid": {"cells": "32 32 48", "box": "1 1 1.5"},
          "units": {"length": "1 pc", "velocity": "1 km/s", "density": "1e-20 g/cm^3"},
          "gas": {"temperature": "10 K", "mu": 2.33},
          "density": {"model": "uniform", "mean": 1},
          "amplitude": {"mach": 5},
          "magnetic": {"strength": "10 uG", "direction": "1 1 0", "random_ratio": 0.5},
          "magnetic_spectrum": {"shape": "power", "slope": 1.6666666666666667, "kmax": 10},
          "random": {"seed": 11},
          "output": {"precision": "double"}}


# ----------------------------------------------------------------------------
# the independent reference
# ----------------------------------------------------------------------------

def face_divergence(F, box):
    """sum_c (B_c[i_c + 1] - B_c[i_c]) / dx_c on the periodic grid; F (3, Nz, Ny, Nx)."""
    Nz, Ny, Nx = F.shape[1:]
    dx = (box[0] / Nx, box[1] / Ny, box[2] / Nz)
    return ((np.roll(F[0], -1, axis=2) - F[0]) / dx[0] + (np.roll(F[1], -1, axis=1) - F[1]) / dx[1] +
            (np.roll(F[2], -1, axis=0) - F[2]) / dx[2])


def dispersion(v, rho=None, mask=None):
    """sigma_3D: mass-weighted dispersion about the mass-weighted mean over mask (common practice);
    without rho the volume-weighted one over the box."""
    if rho is None:
        return math.sqrt(sum(float(np.var(v[c])) for c in range(3)))
    w = rho[mask]
    s2 = 0.0
    for c in range(3):
        m = float(np.sum(w * v[c][mask]) / np.sum(w))
        s2 += float(np.sum(w * (v[c][mask] - m) ** 2) / np.sum(w))
    return math.sqrt(s2)


def magnetic_reference(B, box, F=None, rho=None, v=None, cs=None, gamma=1.0, mask=None, fit=None):
    """Every number of the JSON "magnetic" block from the arrays, numpy only."""
    ref = X.reference(B, box, fit=fit)
    mean = np.array(ref["mean"])
    rho_mean = float(np.mean(rho)) if rho is not None else 1.0
    babs = float(np.linalg.norm(mean))
    sigma = dispersion(v, rho, mask) if v is not None else None
    r = {"mean": ref["mean"], "mean_magnitude": babs, "rms": ref["rms"], "rms_3d": ref["rms_3d"],
         "random_rms": float(np.sqrt(np.mean(np.sum((B - mean[:, None, None, None]) ** 2, axis=0)))),
         "skewness": ref["skewness"], "excess_kurtosis": ref["excess_kurtosis"],
         "density_mean": rho_mean, "sigma_3d": sigma,
         "alfven_speed": babs / math.sqrt(rho_mean),
         "beta": 2 * rho_mean * cs ** 2 / gamma / babs ** 2 if cs else None,
         "alfven_mach": sigma * math.sqrt(rho_mean) / babs if sigma is not None else None,
         "energy": {"total": ref["energy"]["total"], "compressive": ref["energy"]["compressive"]},
         "divergence_ratio": ref["gradients"]["divergence_ratio"],
         "shells": {k: ref["shells"][k] for k in ("k", "modes", "energy", "compressive")}}
    if fit is not None:
        r["slope"] = ref["slope"]
    if F is not None:
        Nz, Ny, Nx = F.shape[1:]
        frms = float(np.sqrt(np.mean(np.sum(F ** 2, axis=0))))
        dmax = float(np.max(np.abs(face_divergence(F, box))))
        r["face"] = {"rms_3d": frms, "divergence_max": dmax,
                     "divergence_ratio": dmax / (frms / min(box[0] / Nx, box[1] / Ny, box[2] / Nz))}
    return r


def fit_range_rule(se, cells):
    """[2, min(N/4, last shell above 1e-10 of the largest)] (helmix specification)."""
    se = np.asarray(se)
    last = max(s for s in range(1, len(se)) if se[s] > 1e-10 * se[1:].max())
    return [2.0, float(min(min(cells) // 4, last))]


def compare_magnetic(c, label, m, ref, rtol=1e-10, div_abs=None):
    """The JSON magnetic block against the reference. div_abs: the divergences are round-off,
    compared absolutely (and both must lie below it); None: relatively."""
    if not isinstance(m, dict):
        c.fail(f"[{label}] JSON holds a magnetic block", repr(m)[:200])
        return
    bs, et = ref["rms_3d"], ref["energy"]["total"]

    def one(name, got, want, rt, at, source):
        ok, q, i = X._worst(got, want, rt, at)
        g = np.ravel(np.asarray(got, dtype=object))
        w = np.ravel(np.asarray(want, dtype=object))
        det = f"worst err/tol={q:.2e}"
        if isinstance(i, int) and i < len(g) and i < len(w):
            det += f" at [{i}]: inspect={X._num(g[i]):.15g} numpy={X._num(w[i]):.15g}"
        c.check(f"[{label}] magnetic.{name} = numpy (rtol {rt:g})", ok, det, source)

    one("mean[3]", m["mean"], ref["mean"], rtol, 1e-12 * bs, "arithmetic mean, common practice")
    one("mean_magnitude", [m["mean_magnitude"]], [ref["mean_magnitude"]], rtol, 1e-12 * bs, "|<B>|")
    one("rms[3]", m["rms"], ref["rms"], rtol, 0.0, "rms, common practice")
    one("rms_3d", [m["rms_3d"]], [ref["rms_3d"]], rtol, 0.0, "rms, common practice")
    one("random_rms", [m["random_rms"]], [ref["random_rms"]], rtol, 1e-12 * bs, "rms of B - <B>; " + X.SRC_PARSEVAL)
    one("skewness[3]", m["skewness"], ref["skewness"], rtol, 1e-10, X.SRC_MOM)
    one("excess_kurtosis[3]", m["excess_kurtosis"], ref["excess_kurtosis"], rtol, 1e-10, X.SRC_MOM)
    for key, src in (("density_mean", "volume mean, common practice"), ("sigma_3d", "dispersion, common practice"),
                     ("alfven_speed", SRC_NRL), ("beta", SRC_NRL), ("alfven_mach", SRC_NRL)):
        if ref[key] is None:
            c.check(f"[{label}] magnetic.{key} is null", m[key] is None, f"inspect={m[key]}")
        else:
            one(key, [m[key]], [ref[key]], rtol, 0.0, src)
    one("energy.total", [m["energy"]["total"]], [et], rtol, 0.0, SRC_SPEC)
    one("energy.compressive", [m["energy"]["compressive"]], [ref["energy"]["compressive"]], rtol, 1e-12 * et, SRC_SPEC)
    sh, rs = m["shells"], ref["shells"]
    n = len(rs["k"])
    c.check(f"[{label}] magnetic.shells: modes per shell identical (extra shells empty)",
            [X._num(x) for x in sh["modes"][:n]] == rs["modes"] and all(X._num(x) == 0 for x in sh["energy"][n:]),
            f"modes[1..4]={sh['modes'][1:5]}", "mode count per shell")
    one("shells.energy E_B(k)", sh["energy"][:n], rs["energy"], rtol, 1e-12 * et, SRC_SPEC)
    one("shells.compressive", sh["compressive"][:n], rs["compressive"], rtol, 1e-12 * et, SRC_SPEC + "; " + X.SRC_HELM)
    if "slope" in ref:
        c.check(f"[{label}] magnetic.slope.fit_range", [X._num(x) for x in m["slope"]["fit_range"]] ==
                [float(x) for x in ref["slope"]["fit_range"]], f"{m['slope']['fit_range']} vs {ref['slope']['fit_range']}")
        one("slope.value", [m["slope"]["value"]], [ref["slope"]["value"]], rtol, 1e-12, X.SRC_LSQ)
        one("slope.stderr", [m["slope"]["stderr"]], [ref["slope"]["stderr"]], rtol, 1e-12, X.SRC_LSQ)
    pairs = [("divergence_ratio", m["divergence_ratio"], ref["divergence_ratio"], SRC_SPEC)]
    if "face" in ref:
        f = m.get("face")
        if not isinstance(f, dict):
            c.fail(f"[{label}] magnetic.face present", repr(f))
        else:
            one("face.rms_3d", [f["rms_3d"]], [ref["face"]["rms_3d"]], rtol, 0.0, "rms, common practice")
            pairs.append(("face.divergence_ratio", f["divergence_ratio"], ref["face"]["divergence_ratio"], SRC_DIV))
            if div_abs is None:
                one("face.divergence_max", [f["divergence_max"]], [ref["face"]["divergence_max"]], rtol, 0.0, SRC_DIV)
    for name, got, want, src in pairs:
        if div_abs is None:
            one(name, [got], [want], rtol, 0.0, src)
        else:
            ok = got is not None and abs(got - want) <= div_abs and got < 1e-12 and want < 1e-12
            c.check(f"[{label}] magnetic.{name} = numpy within {div_abs:g}, both < 1e-12 (round-off)", ok,
                    f"inspect={got} numpy={want:.3e}", src)


def read_made(path):
    with h5py.File(path, "r") as f:
        g = f[GRID]
        out = {"B": np.stack([g["magnetic_" + a][...].astype(np.float64) for a in "xyz"]),
               "F": np.stack([g["magnetic_face_" + a][...].astype(np.float64) for a in "xyz"]),
               "v": np.stack([g["velocity_" + a][...].astype(np.float64) for a in "xyz"]),
               "rho": g["density"][...].astype(np.float64),
               "state": {k: H._plain(x) for k, x in f["/helmix/state"].attrs.items()},
               "units": {k: float(d[()]) for k, d in f["/dataset_units"].items()}}
        sp = f["/simulation_parameters"].attrs
        out["box"] = tuple(np.asarray(sp["domain_right_edge"], float) - np.asarray(sp["domain_left_edge"], float))
    return out


# ----------------------------------------------------------------------------
# 1 and 4. a cube made by helmix
# ----------------------------------------------------------------------------

def made(c, hx):
    run = hx.make(RECIPE, ranks=2, name="magnetised")
    if not c.check("[make] the magnetised cube is written", run.ok, run.describe()[:500]):
        return None
    path = run.out
    m = read_made(path)
    st, box = m["state"], m["box"]
    Nz, Ny, Nx = m["B"].shape[1:]
    # the sound speed and gamma make recorded are inputs here; c_s itself is checked against
    # scipy.constants, so the reference does not lean on helmix's own arithmetic
    vu, ub = m["units"]["velocity_unit"], m["units"]["magnetic_unit"]
    cs_cgs = math.sqrt(st["gamma"] * KB * 10.0 / (2.33 * MH))
    c.check("[numpy] recorded sound speed = sqrt(gamma k T / (mu m_H)) (1e-9)",
            abs(st["sound_speed"] * vu / cs_cgs - 1) < 1e-9, f"{st['sound_speed'] * vu:.9g} cm/s vs {cs_cgs:.9g}",
            SRC_CODATA)
    mask = np.ones(m["rho"].shape, bool)
    c.check("[numpy] the recipe has no cloud: the state's region is the whole box", int(st.get("cloud", 0)) == 0,
            f"cloud={st.get('cloud')}")
    runs = {}
    for ranks in (1, 3):
        r = X.inspect(hx, path, "--check", ranks=ranks)
        c.check(f"[made, {ranks} rank(s)] inspect --check exits 0", r.rc == 0,
                f"rc={r.rc}" + ("" if r.rc == 0 else "\n" + r.describe() + "\n" + r.stdout[-3000:]))
        lines = X.verdict_lines(c, f"made {ranks}", r)
        X.expect_lines(c, f"made {ranks}", lines, passing=MAGNETIC_LINES)
        if r.json is not None:
            runs[ranks] = r.json
    if 1 not in runs:
        return None
    js = runs[1]["magnetic"]
    fit = fit_range_rule(X.reference(m["B"], box)["shells"]["energy"], (Nx, Ny, Nz))
    ref = magnetic_reference(m["B"], box, F=m["F"], rho=m["rho"], v=m["v"], cs=st["sound_speed"],
                             gamma=st["gamma"], mask=mask, fit=fit)
    for ranks, j in runs.items():
        compare_magnetic(c, f"made {ranks}", j["magnetic"], ref, div_abs=1e-13)
    if 3 in runs:
        ok, worst, key, missing = X.json_diff(runs[1]["magnetic"], runs[3]["magnetic"], 1e-12,
                                              floors={"mean": 1e-14, "gauss.mean": 1e-14 * ub, "energy.compressive": 1e-20,
                                                      "shells.compressive": 1e-20, "divergence_ratio": 1e-13,
                                                      "face.divergence": 1e-12})
        c.check("[made] the magnetic block on 1 and 3 ranks agrees (rtol 1e-12)", ok,
                f"worst {worst:.1e} at {key} {missing}", "reductions in double (helmix specification)")
    # units: the same numbers in gauss and cm/s
    g = js.get("gauss") or {}
    c.check("[made] unit_gauss = /dataset_units/magnetic_unit, and the gauss block = code values x unit",
            js["unit_gauss"] == ub and X._worst(g.get("mean"), np.array(ref["mean"]) * ub, 1e-12, 1e-12 * ref["rms_3d"] * ub)[0] and
            X._worst([g.get("rms_3d"), g.get("random_rms"), g.get("mean_magnitude")],
                     [ref["rms_3d"] * ub, ref["random_rms"] * ub, ref["mean_magnitude"] * ub], 1e-12, 0)[0],
            f"unit {js['unit_gauss']} gauss {g}", "code magnetic unit sqrt(4 pi rho_u) v_u (helmix specification)")
    # what make recorded agrees with what inspect measures
    b0 = np.asarray(st["magnetic_b0"], float)
    c.check("[made] mean field = recorded magnetic_b0 = 10 uG along (1, 1, 0)/sqrt 2 (1e-12)",
            np.max(np.abs(np.array(js["mean"]) - b0)) < 1e-12 * np.linalg.norm(b0) and
            abs(np.linalg.norm(b0) * ub / 1e-5 - 1) < 1e-12 and abs(b0[0] - b0[1]) < 1e-15 * b0[0] and b0[2] == 0,
            f"mean {js['mean']} b0 {b0.tolist()}", "recipe semantics")
    # 4. the worked values
    vA = 1e-5 / math.sqrt(4 * math.pi * 1e-20) / 1e5
    beta_w = 8 * math.pi * 1e-20 * KB * 10 / (2.33 * MH) / 1e-10
    c.check("[numpy] worked v_A(10 uG, 1e-20 g/cm^3) = 0.282095 km/s", abs(vA - 0.282095) < 5e-7, f"{vA:.7f}", SRC_NRL)
    c.check("[numpy] worked beta(10 uG, 1e-20 g/cm^3, 10 K, mu 2.33) = 0.88988", abs(beta_w - 0.88988) < 5e-6,
            f"{beta_w:.6f}", SRC_NRL + "; " + SRC_CODATA)
    kms = js["alfven_speed_cm_s"] / 1e5 if js["alfven_speed_cm_s"] is not None else float("nan")
    c.check("[made] inspect's Alfven speed = worked 0.282095 km/s (5e-7), = B/sqrt(4 pi rho) (1e-9)",
            abs(kms - 0.282095) < 5e-7 and abs(kms / vA - 1) < 1e-9, f"{kms:.9f} km/s", SRC_NRL)
    c.check("[made] inspect's beta = worked 0.88988 (5e-6), = 8 pi rho k T / (mu m_H) / B^2 (1e-9)",
            js["beta"] is not None and abs(js["beta"] - 0.88988) < 5e-6 and abs(js["beta"] / beta_w - 1) < 1e-9,
            f"{js['beta']}", SRC_NRL + "; " + SRC_CODATA)
    sig_cgs = ref["sigma_3d"] * vu
    c.check("[made] inspect's Alfven Mach number = sigma_3D / v_A in cgs (1e-9)",
            js["alfven_mach"] is not None and abs(js["alfven_mach"] / (sig_cgs / (vA * 1e5)) - 1) < 1e-9,
            f"{js['alfven_mach']} vs {sig_cgs / (vA * 1e5)}", SRC_NRL)
    return path, m


# ----------------------------------------------------------------------------
# 2. altered copies
# ----------------------------------------------------------------------------

def altered(c, hx, path, m):
    box = m["box"]
    # B scaled by 1.1 (cell-centred only: the face field keeps zero divergence)
    p1 = hx.path("scaled.h5")
    shutil.copy(path, p1)
    with h5py.File(p1, "r+") as f:
        for a in "xyz":
            f[GRID]["magnetic_" + a][...] *= 1.1
    r = X.inspect(hx, p1, "--check", ranks=0)
    c.check("[B x 1.1] inspect --check exits 1", r.rc == 1, f"rc={r.rc}" + ("" if r.rc == 1 else r.describe()))
    lines = X.verdict_lines(c, "B x 1.1", r)
    X.expect_lines(c, "B x 1.1", lines, failing=("mean field B_x", "mean field B_y", "rms of the random field",
                                                "plasma beta as made", "Alfven Mach number as made"),
                 passing=("mean field B_z", "divergence of B (spectral)", "divergence of B (faces)",
                          "Mach number", "dispersion sigma_3D as made"))
    if r.json and isinstance(r.json.get("magnetic"), dict):
        j = r.json["magnetic"]
        c.check("[B x 1.1] beta falls by 1.21 and M_A by 1.1 (1e-10)",
                abs(j["beta"] * 1.21 / m["state"]["beta"] - 1) < 1e-10 and
                abs(j["alfven_mach"] * 1.1 / m["state"]["alfven_mach"] - 1) < 1e-10,
                f"beta {j['beta']} M_A {j['alfven_mach']}", SRC_NRL)
    # one face value changed where the slabs of ranks 0 and 1 meet on 3 ranks (z = 16 of 48)
    p2 = hx.path("face.h5")
    shutil.copy(path, p2)
    F = m["F"].copy()
    delta = 1e-3 * float(np.sqrt(np.mean(np.sum(F ** 2, axis=0))))
    F[2, 16, 5, 7] += delta
    with h5py.File(p2, "r+") as f:
        f[GRID]["magnetic_face_z"][16, 5, 7] = F[2, 16, 5, 7]
    ref = magnetic_reference(m["B"], box, F=F)
    for ranks in (0, 3):
        r = X.inspect(hx, p2, "--check", ranks=ranks)
        tag = f"one face value, {max(ranks, 1)} rank(s)"
        c.check(f"[{tag}] inspect --check exits 1", r.rc == 1, f"rc={r.rc}" + ("" if r.rc == 1 else r.describe()))
        lines = X.verdict_lines(c, tag, r)
        X.expect_lines(c, tag, lines, failing=("divergence of B (faces)",),
                     passing=("divergence of B (spectral)", "mean field B_x", "rms of the random field",
                              "plasma beta as made"))
        f = (r.json or {}).get("magnetic", {}) or {}
        f = f.get("face") or {}
        c.check(f"[{tag}] face divergence max and ratio = numpy's (1e-10)",
                X._worst([f.get("divergence_max"), f.get("divergence_ratio")],
                         [ref["face"]["divergence_max"], ref["face"]["divergence_ratio"]], 1e-10, 0)[0],
                f"inspect {f} numpy {ref['face']}", SRC_DIV)


# ----------------------------------------------------------------------------
# 3. a foreign file
# ----------------------------------------------------------------------------

def spectral_curl(A, box):
    """B = curl A by numpy.fft (every mode, no Nyquist left: A is band-limited)."""
    Nz, Ny, Nx = A.shape[1:]
    wn = X.Wavenumbers((Nx, Ny, Nz), box)
    Ah = np.fft.fftn(A, axes=(1, 2, 3))
    k = wn.k
    Bh = 1j * np.stack([k[1] * Ah[2] - k[2] * Ah[1], k[2] * Ah[0] - k[0] * Ah[2], k[0] * Ah[1] - k[1] * Ah[0]])
    return np.real(np.fft.ifftn(Bh, axes=(1, 2, 3)))


def discrete_curl(A, box):
    """Forward-difference curl: B_x = D_y A_z - D_z A_y, ... with D_a f = (f[i_a + 1] - f[i_a]) / dx_a."""
    Nz, Ny, Nx = A.shape[1:]
    dx = (box[0] / Nx, box[1] / Ny, box[2] / Nz)

    def D(f, a):  # a: 0 x, 1 y, 2 z
        return (np.roll(f, -1, axis=2 - a) - f) / dx[a]
    return np.stack([D(A[2], 1) - D(A[1], 2), D(A[0], 2) - D(A[2], 0), D(A[1], 0) - D(A[0], 1)])


def foreign(c, hx):
    # box ratios 10/9 and 10/7 put no wavenumber exactly halfway between two shells
    cells, box = (24, 20, 16), (1.0, 0.9, 0.7)
    b0 = np.array([0.3, -0.2, 0.5])
    A = X.random_field(cells, box, seed=21, nongauss=False, slope=3.0, band=0.4)
    v = X.random_field(cells, box, seed=22)
    B = spectral_curl(A, box) + b0[:, None, None, None]
    F = discrete_curl(A, box) + b0[:, None, None, None]
    c.check("[numpy] the built fields: spectral div of B and discrete div of F are round-off",
            X.reference(B, box)["gradients"]["divergence_ratio"] < 1e-13 and
            np.max(np.abs(face_divergence(F, box))) < 1e-11 * np.sqrt(np.mean(np.sum(F ** 2, axis=0))) * 20,
            "", SRC_DIV)
    phi = X.random_field(cells, box, seed=23, nongauss=False, slope=3.0, band=0.4)[0]
    wn = X.Wavenumbers(cells, box)
    grad = np.real(np.fft.ifftn(1j * wn.k * np.fft.fftn(phi)[None], axes=(1, 2, 3)))
    B2 = B + 0.5 * grad
    F2 = F.copy()
    F2[0, 5, 7, 23] += 0.05  # on the x wrap-around face
    sets = {}
    for name, arr in (("u", v[0]), ("v", v[1]), ("w", v[2])):
        sets["/" + name] = arr
    for i, a in enumerate("xyz"):
        sets[f"/B{a}"], sets[f"/F{a}"], sets[f"/G{a}"], sets[f"/H{a}"] = B[i], F[i], B2[i], F2[i]
    sets["/B4"] = np.ascontiguousarray(np.moveaxis(B, 0, -1))  # (Nz, Ny, Nx, 3)
    sets["/short"] = np.zeros((16, 20, 23))
    path = hx.path("foreign_magnetic.h5")
    X.write_sets(path, sets)
    cs, gamma = 0.7, 1.4
    base = ["--vector", "/u,/v,/w", "--box", "1.0,0.9,0.7", "--sound-speed", cs, "--gamma", gamma]
    mag = ["--magnetic", "/Bx,/By,/Bz", "--magnetic-face", "/Fx,/Fy,/Fz"]
    fit = fit_range_rule(X.reference(B, box)["shells"]["energy"], cells)
    ref = magnetic_reference(B, box, F=F, v=v, cs=cs, gamma=gamma, fit=fit)
    js = {}
    for ranks in (1, 3):
        r = X.inspect(hx, path, *base, *mag, ranks=ranks)
        if c.check(f"[foreign, {ranks} rank(s)] inspect --magnetic --magnetic-face exits 0", r.ok, r.describe()):
            compare_magnetic(c, f"foreign {ranks}", r.json["magnetic"], ref, div_abs=1e-13)
            j = r.json["magnetic"]
            c.check(f"[foreign {ranks}] no units: gauss, unit_gauss and alfven_speed_cm_s are null",
                    j["gauss"] is None and j["unit_gauss"] is None and j["alfven_speed_cm_s"] is None, "")
            c.check(f"[foreign {ranks}] no density: state null, <rho> = 1", r.json["state"] is None and
                    j["density_mean"] == 1.0, "")
            js[ranks] = r.json["magnetic"]
    if 1 in js and 3 in js:
        ok, worst, key, missing = X.json_diff(js[1], js[3], 1e-12, floors={"mean": 1e-14, "energy.compressive": 1e-20,
                                                                           "shells.compressive": 1e-20,
                                                                           "divergence_ratio": 1e-13,
                                                                           "face.divergence": 1e-11})
        c.check("[foreign] 1 and 3 ranks agree (rtol 1e-12)", ok, f"worst {worst:.1e} at {key} {missing}",
                "reductions in double (helmix specification)")
    # one 4-D dataset (component axis last) holds the same field
    r = X.inspect(hx, path, *base, "--magnetic", "/B4", ranks=2)
    if c.check("[foreign 4-D] inspect --magnetic P (4-D) exits 0", r.ok, r.describe()) and 1 in js:
        j = r.json["magnetic"]
        ok, worst, key, missing = X.json_diff({k: x for k, x in j.items() if k != "face"},
                                              {k: x for k, x in js[1].items() if k != "face"}, 1e-12,
                                              floors={"mean": 1e-14, "energy.compressive": 1e-20,
                                                      "shells.compressive": 1e-20, "divergence_ratio": 1e-13})
        c.check("[foreign 4-D] the same numbers as three datasets, no face block", ok and j["face"] is None,
                f"worst {worst:.1e} at {key} {missing}")
    # without a sound speed there is no beta; M_A needs none
    r = X.inspect(hx, path, "--vector", "/u,/v,/w", "--box", "1.0,0.9,0.7", "--magnetic", "/Bx,/By,/Bz", ranks=0)
    if c.check("[foreign] without --sound-speed: exits 0", r.ok, r.describe()):
        j = r.json["magnetic"]
        c.check("[foreign] without --sound-speed beta is null, M_A reported",
                j["beta"] is None and X._worst([j["alfven_mach"]], [ref["alfven_mach"]], 1e-10, 0)[0],
                f"beta {j['beta']} M_A {j['alfven_mach']}", SRC_NRL)
    # a field that is not solenoidal: both divergences compared relatively
    ref2 = magnetic_reference(B2, box, F=F2)
    for ranks in (0, 3):
        r = X.inspect(hx, path, *base, "--magnetic", "/Gx,/Gy,/Gz", "--magnetic-face", "/Hx,/Hy,/Hz", ranks=ranks)
        tag = f"foreign with a gradient, {max(ranks, 1)} rank(s)"
        if c.check(f"[{tag}] exits 0", r.ok, r.describe()):
            j = r.json["magnetic"]
            f = j.get("face") or {}
            c.check(f"[{tag}] spectral divergence ratio = numpy's (1e-10), well above round-off",
                    X._worst([j["divergence_ratio"]], [ref2["divergence_ratio"]], 1e-10, 0)[0] and
                    ref2["divergence_ratio"] > 0.1, f"inspect {j['divergence_ratio']} numpy {ref2['divergence_ratio']}",
                    SRC_SPEC)
            c.check(f"[{tag}] face divergence max and ratio = numpy's (1e-10)",
                    X._worst([f.get("divergence_max"), f.get("divergence_ratio"), f.get("rms_3d")],
                             [ref2["face"]["divergence_max"], ref2["face"]["divergence_ratio"], ref2["face"]["rms_3d"]],
                             1e-10, 0)[0], f"inspect {f} numpy {ref2['face']}", SRC_DIV)
            X_shells = ref2["shells"]
            c.check(f"[{tag}] the curl-free part shows in the compressive shells (1e-10)",
                    X._worst(j["shells"]["compressive"][:len(X_shells["k"])], X_shells["compressive"], 1e-10,
                             1e-12 * ref2["energy"]["total"])[0], "", SRC_SPEC + "; " + X.SRC_HELM)
    # bad input: one clear line, exit 2
    for label, opts, words in (
            ("--magnetic-face without --magnetic", ["--magnetic-face", "/Fx,/Fy,/Fz"], "--magnetic"),
            ("--magnetic with two paths", ["--magnetic", "/Bx,/By"], "three dataset paths"),
            ("--magnetic of another shape", ["--magnetic", "/Bx,/By,/short"], "differ in shape"),
            ("--magnetic naming a missing dataset", ["--magnetic", "/Bx,/By,/nothere"], "/nothere"),
            ("--gamma 0", ["--magnetic", "/Bx,/By,/Bz", "--gamma", "0"], "--gamma")):
        r = X.inspect(hx, path, "--vector", "/u,/v,/w", *opts, ranks=0, json_name=None)
        lines = r.lines()
        c.check(f"[bad input] {label}: exit 2, one error line naming it", r.rc == 2 and len(lines) == 1 and
                words in lines[0], f"rc={r.rc} stderr={lines}", "helmix specification: exit 2 on bad input")


def body(args, hx, c):
    res = made(c, hx)
    if res:
        altered(c, hx, *res)
    foreign(c, hx)


if __name__ == "__main__":
    H.run_main("inspect_magnetic", __doc__.splitlines()[0], body)
