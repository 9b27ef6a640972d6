#!/usr/bin/python3
"""helmix make with a [magnetic] section: the uniform field by strength, plasma beta or Alfven
Mach number, the random solenoidal part, and the face-centred field of a staggered grid,
recomputed from the written file with numpy and scipy.constants.

Sources:
  * Gaussian units, v_A = B / sqrt(4 pi rho), beta = 8 pi P / B^2: NRL Plasma Formulary
    (Huba 2013), "Fundamental plasma parameters" (textbook).
  * Constants: CODATA 2018 through scipy.constants (Tiesinga et al. 2021, Rev. Mod. Phys. 93,
    025010); m_H = 1.00782503223 u (Wang et al. 2021, Chinese Phys. C 45, 030003).
  * A face field that is the discrete curl of an edge potential has zero discrete divergence:
    the discrete div of a discrete curl telescopes (Yee 1966, IEEE Trans. Antennas Propag. 14,
    302; Evans & Hawley 1988, ApJ 332, 659 for constrained transport).
"""
import math
import os

import h5py
import numpy as np
import scipy.constants as sc

import hxcheck

KB = sc.k * 1e7                                            # erg/K
MH = 1.00782503223 * sc.physical_constants["atomic mass constant"][0] * 1e3  # g
GRID = "/data/grid_0000000000"


def worked_values(c):
    """The issue's worked example, computed here from CODATA: B = 10 uG, rho = 1e-20 g/cm^3."""
    B, rho = 10e-6, 1e-20
    vA = B / math.sqrt(4 * math.pi * rho) / 1e5
    c.check("v_A(10 uG, 1e-20 g/cm^3) = 0.282095 km/s", abs(vA - 0.282095) < 5e-7, f"{vA:.7f} km/s",
            "NRL Plasma Formulary, v_A = B / sqrt(4 pi rho)")
    cs2 = KB * 10 / (2.33 * MH)
    beta = 8 * math.pi * rho * cs2 / B ** 2
    # 0.88987 in the issue uses m_H = 1.6735575e-24 g; with 1.00782503223 u it is 0.88988
    c.check("beta(10 uG, 1e-20 g/cm^3, 10 K, mu 2.33) = 0.88988 (0.88987 with m_H = 1.6735575e-24 g)",
            abs(beta - 0.88988) < 2e-5, f"{beta:.6f}", "NRL Plasma Formulary; CODATA 2018")
    return vA, beta


def load(path):
    with h5py.File(path, "r") as f:
        g = f[GRID]
        out = {"B": np.stack([g["magnetic_" + a][()].astype(np.float64) for a in "xyz"]),
               "v": np.stack([g["velocity_" + a][()].astype(np.float64) for a in "xyz"]),
               "rho": g["density"][()].astype(np.float64) if "density" in g else None,
               "state": {k: hxcheck._plain(v) for k, v in f["/helmix/state"].attrs.items()},
               "box": tuple(np.asarray(f["/simulation_parameters"].attrs["domain_right_edge"], float)),
               "units": {k: float(d[()]) for k, d in f["/dataset_units"].items()},
               "staggering": {k: int(f["/field_types/" + k].attrs["staggering"]) for k in f["/field_types"]}}
        if "magnetic_face_x" in g:
            out["F"] = np.stack([g["magnetic_face_" + a][()].astype(np.float64) for a in "xyz"])
    return out


def face_divergence(F, box):
    """sum_c (B_c[i_c + 1] - B_c[i_c]) / dx_c on the periodic grid, arrays (Nz, Ny, Nx)."""
    Nz, Ny, Nx = F.shape[1:]
    dx = (box[0] / Nx, box[1] / Ny, box[2] / Nz)
    return ((np.roll(F[0], -1, axis=2) - F[0]) / dx[0] + (np.roll(F[1], -1, axis=1) - F[1]) / dx[1] +
            (np.roll(F[2], -1, axis=0) - F[2]) / dx[2])


def recipe(**over):
    r = {"grid": {"cells": "32 32 48", "box": "1 1 1.5"},
         "units": {"length": "1 pc", "velocity": "1 km/s", "density": "1e-20 g/cm^3"},
         "gas": {"temperature": "10 K", "mu": 2.33},
         "density": {"model": "uniform", "mean": 1},
         "amplitude": {"mach": 5},
         "magnetic": {"strength": "10 uG", "direction": "1 1 0", "random_ratio": 0.5},
         "magnetic_spectrum": {"shape": "power", "slope": 1.6666666666666667, "kmax": 10},
         "random": {"seed": 7},
         "output": {"precision": "double"}}
    for sec, kv in over.items():
        if kv is None:
            r.pop(sec, None)
        else:
            r.setdefault(sec, {}).update(kv)
    return r


def body(args, hx, c):
    vA, beta_w = worked_values(c)
    # ---- strength: B0 = 10 uG along (1,1,0)/sqrt2 in rho = 1e-20: beta and M_A as worked
    runs = {}
    for ranks in (1, 2, 3):
        run = hx.make(recipe(), ranks=ranks, name=f"strength{ranks}")
        if c.check(f"make with [magnetic] strength on {ranks} rank(s) exits 0", run.ok, run.describe()[:300]):
            runs[ranks] = load(run.out)
    if 1 not in runs:
        return
    m = runs[1]
    st, ub = m["state"], m["units"]["magnetic_unit"]
    c.check("/dataset_units/magnetic_unit = sqrt(4 pi rho_u) v_u gauss",
            abs(ub / (math.sqrt(4 * math.pi * 1e-20) * 1e5) - 1) < 1e-12, f"{ub:.6e} G", "NRL Plasma Formulary")
    mean = m["B"].mean(axis=(1, 2, 3)) * ub
    want = 10e-6 * np.array([1, 1, 0]) / math.sqrt(2)
    c.check("mean field = 10 uG along (1, 1, 0)", np.max(np.abs(mean - want)) < 1e-12 * 1e-5, f"{mean} G",
            "recipe semantics")
    dB = m["B"] - m["B"].mean(axis=(1, 2, 3))[:, None, None, None]
    ratio = math.sqrt(np.mean(np.sum(dB ** 2, axis=0))) / np.linalg.norm(want / ub)
    c.check("rms of the random part / |B0| = 0.5 (random_ratio)", abs(ratio - 0.5) < 1e-12, f"{ratio:.15f}",
            "recipe semantics, Parseval")
    rho = 1e-20
    cs2 = KB * 10 / (2.33 * MH)
    beta = 8 * math.pi * rho * cs2 / np.sum(want ** 2)
    c.check("beta of B0 recomputed (8 pi rho c_s^2 / B0^2) = recorded = worked 0.88988",
            abs(beta - st["beta"]) < 1e-10 * beta and abs(beta - beta_w) < 1e-9, f"{beta:.8f} vs {st['beta']:.8f}",
            "NRL Plasma Formulary; CODATA 2018")
    sig = math.sqrt(np.mean(np.sum(m["v"] ** 2, axis=0))) * 1e5  # uniform density: sigma_3D = vrms
    MA = sig / (np.linalg.norm(want) / math.sqrt(4 * math.pi * rho))
    c.check("Alfven Mach sigma_3D / v_A recomputed = recorded; v_A = 0.282095 km/s",
            abs(MA - st["alfven_mach"]) < 1e-9 * MA and abs(np.linalg.norm(want) / math.sqrt(4 * math.pi * rho) / 1e5 - vA) < 1e-12,
            f"M_A {MA:.6f}", "NRL Plasma Formulary")
    # ---- the magnetic field has its own stream and its own pass: the velocity and what make
    #      records of it are those of the same recipe without a [magnetic] section
    run = hx.make(recipe(magnetic=None, magnetic_spectrum=None), ranks=1, name="nomagnetic")
    if c.check("make without [magnetic] exits 0", run.ok, run.describe()[:300]):
        with h5py.File(run.out, "r") as f0, h5py.File(hx.path("strength1.h5"), "r") as f1:
            same = all(np.array_equal(f0[GRID + "/velocity_" + a][()], f1[GRID + "/velocity_" + a][()]) for a in "xyz")
            s0 = f0["/helmix"].attrs["realized_compressive_fraction"]
            s1 = f1["/helmix"].attrs["realized_compressive_fraction"]
        c.check("velocity bit-identical with and without [magnetic]; the recorded share is the velocity's",
                same and s0 == s1, f"share {s0!r} vs {s1!r}", "independent random streams (recipe semantics)")
    # ---- the random part is solenoidal, spectrally, and its spectrum slope is recovered
    S = hxcheck.Spectral(m["B"], m["box"])
    c.check("cell-centred B is divergence-free spectrally: rms(k.B) / rms(|k||B|) < 1e-13", S.divergence_ratio() < 1e-13,
            f"{S.divergence_ratio():.2e}", "spectral Helmholtz projection, common practice")
    sh = S.shells()
    P = S.power()
    P[S.kmag == 0] = 0
    ks = np.arange(2, 11)
    E = np.array([P[sh == s].sum() for s in ks])
    modes = np.array([(sh == s).sum() for s in ks])
    Ec = E * 4 * np.pi * ks ** 2 / modes  # compensated for the discrete mode count
    slope = -np.polyfit(np.log(ks), np.log(Ec), 1)[0]
    c.check("shell spectrum of the random part recovers slope 5/3 within 0.35 (one Gaussian draw, 32^3)",
            abs(slope - 5 / 3) < 0.35, f"{slope:.3f}", "least-squares fit, common practice")
    # ---- face field: discretely divergence-free on 1, 2, 3 ranks; rank-count invariant
    for ranks, mr in runs.items():
        F = mr["F"]
        Bmag = math.sqrt(np.mean(np.sum(F ** 2, axis=0)))
        dxmin = min(mr["box"][0] / 32, mr["box"][1] / 32, mr["box"][2] / 48)
        d = np.max(np.abs(face_divergence(F, mr["box"]))) / (Bmag / dxmin)
        c.check(f"face field's discrete divergence <= 1e-12 |B|/dx on {ranks} rank(s)", d <= 1e-12, f"{d:.2e}",
                "Yee 1966; Evans & Hawley 1988")
    for ranks in (2, 3):
        if ranks in runs:
            diff = max(np.max(np.abs(runs[ranks][k] - m[k])) for k in ("B", "F"))
            c.check(f"magnetic fields on {ranks} ranks equal those on 1 rank to round-off", diff < 1e-14,
                    f"{diff:.1e}", "counter-based draws keyed on the wavevector (Salmon et al. 2011)")
    c.check("field_types: magnetic_face_* have staggering 1, magnetic_* staggering 0",
            all(m["staggering"]["magnetic_face_" + a] == 1 and m["staggering"]["magnetic_" + a] == 0 for a in "xyz"),
            str({k: v for k, v in m["staggering"].items() if "magnetic" in k}), "Grid Data Format staggering")
    # ---- the face field is the discrete curl of the potential of the cell field: from the cell
    #      field's coefficients, A = i k x B / k^2 and B_face = i K x A with K = (2/dx) sin(k dx / 2)
    def predicted_face(Bcell, box, N_face):
        Sx = hxcheck.Spectral(Bcell - Bcell.mean(axis=(1, 2, 3))[:, None, None, None], box)
        k, cB = Sx.k, Sx.c
        k2 = np.sum(k ** 2, axis=0)
        k2[k2 == 0] = 1
        A = 1j * np.stack([k[1] * cB[2] - k[2] * cB[1], k[2] * cB[0] - k[0] * cB[2], k[0] * cB[1] - k[1] * cB[0]]) / k2
        Nx, Ny, Nz = N_face
        dx = (box[0] / Nx, box[1] / Ny, box[2] / Nz)
        K = np.stack([2 / dx[a] * np.sin(k[a] * dx[a] / 2) for a in range(3)])
        Bf = 1j * np.stack([K[1] * A[2] - K[2] * A[1], K[2] * A[0] - K[0] * A[2], K[0] * A[1] - K[1] * A[0]])
        return Bf, Sx

    Bf, Sx = predicted_face(m["B"], m["box"], (32, 32, 48))
    # the file's face component a sits at x_a = i dx_a (no half shift along a): undo the phase
    Ff = m["F"] - m["F"].mean(axis=(1, 2, 3))[:, None, None, None]
    got = []
    for a in range(3):
        V = np.fft.fftn(Ff[a]) / Ff[a].size
        shift = [Sx.n[b] / Sx.N[b] for b in range(3) if b != a]
        got.append(V * np.exp(-1j * np.pi * sum(shift)))
    err = max(np.max(np.abs(got[a] - Bf[a])) for a in range(3)) / np.max(np.abs(Bf))
    c.check("face coefficients = i K x (i k x B_cell / k^2), K_a = (2/dx_a) sin(k_a dx_a / 2)", err < 1e-12,
            f"max rel {err:.1e}", "central difference on a staggered grid (Yee 1966)")
    # ---- nesting: the cell field at 32 x 32 x 48 and 64 x 64 x 96 has the same coefficients,
    #      and the 64 face field is the staggered curl of the same potential
    run = hx.make(recipe(grid={"cells": "64 64 96"}), ranks=2, name="fine")
    if c.check("make at 64 x 64 x 96 exits 0", run.ok, run.describe()[:300]):
        fine = load(run.out)
        Sc, Sf = hxcheck.Spectral(m["B"], m["box"]), hxcheck.Spectral(fine["B"], fine["box"])
        small = np.abs(Sf.n[0]) <= 10
        small &= (np.abs(Sf.n[1]) <= 10) & (np.abs(Sf.n[2]) <= 15)
        idx = tuple(np.where(small))
        nx, ny, nz = (Sf.n[a][idx].astype(int) for a in range(3))
        coarse = Sc.c[:, nz % 48, ny % 32, nx % 32]
        d = np.max(np.abs(Sf.c[:, idx[0], idx[1], idx[2]] - coarse)) / np.max(np.abs(coarse))
        c.check("cell-centred B nests: the same Fourier coefficients at two resolutions", d < 1e-12, f"{d:.1e}",
                "resolution nesting of the helmix specification")
        Bf64, _ = predicted_face(fine["B"], fine["box"], (64, 64, 96))
        Ff = fine["F"] - fine["F"].mean(axis=(1, 2, 3))[:, None, None, None]
        got = [np.fft.fftn(Ff[a]) / Ff[a].size * np.exp(-1j * np.pi * sum(Sf.n[b] / Sf.N[b] for b in range(3) if b != a))
               for a in range(3)]
        err = max(np.max(np.abs(got[a] - Bf64[a])) for a in range(3)) / np.max(np.abs(Bf64))
        c.check("the fine face field is the staggered curl of the same potential", err < 1e-12, f"{err:.1e}",
                "Yee 1966")
    # ---- beta and Alfven Mach asked for: B0 follows from them
    for key, val in (("beta", 0.1), ("alfven_mach", 2.0)):
        rr = recipe()
        rr["magnetic"] = {key: val, "direction": "z", "random_rms": "2 uG"}
        run = hx.make(rr, ranks=2, name=key)
        if not c.check(f"make with [magnetic] {key} = {val} exits 0", run.ok, run.describe()[:300]):
            continue
        mm = load(run.out)
        B0 = mm["B"].mean(axis=(1, 2, 3)) * mm["units"]["magnetic_unit"]
        if key == "beta":
            got = 8 * math.pi * rho * cs2 / np.sum(B0 ** 2)
        else:
            sig = math.sqrt(np.mean(np.sum(mm["v"] ** 2, axis=0))) * 1e5
            got = sig / (np.linalg.norm(B0) / math.sqrt(4 * math.pi * rho))
        c.check(f"{key} recomputed from the written mean field = {val}", abs(got - val) < 1e-9 * val, f"{got:.12g}",
                "NRL Plasma Formulary")
        rms = math.sqrt(np.mean(np.sum((mm["B"] * mm["units"]["magnetic_unit"] - B0[:, None, None, None]) ** 2, axis=0)))
        c.check(f"[{key}] random part rms = 2 uG (random_rms)", abs(rms / 2e-6 - 1) < 1e-12, f"{rms:.6e} G",
                "recipe semantics")
        c.check(f"[{key}] B0 along z", abs(B0[0]) < 1e-20 and abs(B0[1]) < 1e-20 and B0[2] > 0, str(B0), "recipe")
    # ---- a uniform field alone (a [magnetic_spectrum] given but no random part): B = B0 in every cell
    rr = recipe()
    rr["magnetic"] = {"strength": "5 uG", "direction": "y"}
    run = hx.make(rr, ranks=2, name="uniform_only")
    if c.check("make with a uniform field only exits 0", run.ok, run.describe()[:300]):
        mu = load(run.out)
        Bg = mu["B"] * mu["units"]["magnetic_unit"]
        Fg = mu["F"] * mu["units"]["magnetic_unit"]
        want = np.array([0.0, 5e-6, 0.0])[:, None, None, None]
        err = max(float(np.max(np.abs(Bg - want))), float(np.max(np.abs(Fg - want))))
        c.check("uniform field only: every cell and face holds B0 = 5 uG along y", err < 1e-18, f"max |B - B0| {err:.1e} G",
                "recipe semantics")
    # ---- bad input: one line, exit 2, nothing written
    bad = {
        "strength and beta both": {"magnetic": {"strength": "10 uG", "beta": 1}},
        "beta <= 0": {"magnetic": {"beta": 0}},
        "zero axis vector": {"magnetic": {"direction": "0 0 0"}},
        "NaN axis vector": {"magnetic": {"direction": "nan 0 1"}},
        "random part without a spectrum": {"magnetic_spectrum": None},
        "ratio without a uniform field": {"magnetic": {"strength": None}},
    }
    for label, over in bad.items():
        rr = recipe()
        for sec, kv in over.items():
            if kv is None:
                rr.pop(sec)
            else:
                for k, v in kv.items():
                    if v is None:
                        rr[sec].pop(k)
                    else:
                        rr[sec][k] = v
        for ranks in (1, 3):
            run = hx.make(rr, ranks=ranks, name=f"bad_{label.replace(' ', '_')}_{ranks}")
            lines = [ln for ln in hxcheck.mpi_noise_free_lines(run.stderr) if ln.startswith("helmix")]
            left = [p for p in os.listdir(hx.tmp) if p.startswith(f"bad_{label.replace(' ', '_')}_{ranks}.h5")]
            c.check(f"bad input '{label}' on {ranks} rank(s): exit 2, one line, nothing written",
                    run.rc == 2 and len(lines) == 1 and not left, f"rc {run.rc}: {lines[:2]} {left}",
                    "issue requirement")


if __name__ == "__main__":
    hxcheck.run_main("make_magnetic", __doc__, body)
