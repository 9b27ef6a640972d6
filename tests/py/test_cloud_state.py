#!/usr/bin/python3
"""Cloud initial conditions of `helmix make`, recomputed in physical units from the file.

Small cubes (32^3, 48^3 on 1-3 ranks) are made with physical code units; every number is then
recomputed with numpy/scipy from the datasets and the units asked for in the recipe (the
constants from scipy.constants, not from helmix):
  A  the sound speed c_s = sqrt(gamma k_B T / (mu m_H)) and the recorded code units;
  B  the amplitude rules vrms, mach, virial and linewidth, each against its definition
     (sigma_3D mass-weighted over the cells whose centre lies within R of the box centre,
     about their mass-weighted mean);
  C  the density models: sphere (tanh edge), Bonnor-Ebert (against an independent solution of
     the isothermal Lane-Emden equation with scipy.integrate.solve_ivp), lognormal (volume mean
     and width of ln rho), and clumpy clouds over an ensemble of seeds (mass kept per seed);
  D  net momentum after bulk removal and net angular momentum about the centre of mass after
     rotation removal, on 1 and 3 ranks, single and double precision;
  E  yt reads the units: velocity, domain width and density converted by yt equal the datasets
     times the units asked for;
  F  /helmix/state records c_s, vrms, sigma_3D, Mach number and virial parameter whichever rule
     set the amplitude, and they equal the recomputation.
"""

import logging
import re
import sys

import numpy as np
import h5py
import scipy.constants as sc
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

# ---------------------------------------------------------------------------- constants (cgs)
SRC_CODATA = "CODATA 2018 via scipy.constants (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010)"
SRC_AME = "Ar(1H) = 1.00782503223 (Wang et al. 2021, Chinese Phys. C 45, 030003)"
SRC_IAU = ("IAU 2012 B2 (au), IAU 2015 B2 (pc = 648000/pi au), IAU 2015 B3 "
           "(GM_sun = 1.3271244e20 m^3 s^-2, M_sun = GM_sun / G)")
SRC_CS = "isothermal/adiabatic sound speed c_s = sqrt(gamma k_B T / (mu m_H)), common practice"
SRC_VIR = "alpha_vir = 5 sigma_1D^2 R / (G M) (Bertoldi & McKee 1992, ApJ 395, 140)"
SRC_LARSON = "sigma_3D = 1.10 km/s (L/pc)^0.38 (Larson 1981, MNRAS 194, 809)"
SRC_SIGMA = "mass-weighted velocity dispersion about the mass-weighted mean, common practice"
SRC_RMS = "volume-weighted 3D rms sqrt(<|v|^2>), common practice"
SRC_LE = ("isothermal Lane-Emden equation psi'' = exp(-psi) - 2 psi'/xi (Chandrasekhar 1939, "
          "An Introduction to the Study of Stellar Structure, ch. IV), solved here with "
          "scipy.integrate.solve_ivp")
SRC_BE = "Ebert 1955, Z. Astrophys. 37, 217; Bonnor 1956, MNRAS 116, 351"
SRC_FKS = "sigma_s^2 = ln(1 + b^2 M^2) (Federrath, Klessen & Schmidt 2008, ApJ 688, L79)"
SRC_B = "b = 1 + (1/D - 1) zeta, D = 3 (Federrath et al. 2010, A&A 512, A81)"
SRC_MOM = "net momentum sum rho v dV and angular momentum sum rho Delta x v dV, common practice"
SRC_PEQ = "pressure equilibrium of an ideal gas of the same mu: rho_amb T_amb = rho_edge T (common practice)"
SRC_YT = "yt 4.x GDF frontend with /dataset_units (Turk et al. 2011, ApJS 192, 9)"
SRC_WIN = "cloud window W = (1 - tanh((r - R)/edge))/2 as the helmix recipe documents it"

CGS_G = sc.G * 1e3
CGS_KB = sc.k * 1e7
CGS_U = sc.physical_constants["atomic mass constant"][0] * 1e3
CGS_MH = 1.00782503223 * CGS_U
CGS_PC = sc.parsec * 1e2
CGS_AU = sc.au * 1e2
CGS_MSUN = 1.3271244e26 / CGS_G
KMS = 1e5

GRID = "data/grid_0000000000"


def sound_speed(T, mu=2.37, gamma=1.0):
    return float(np.sqrt(gamma * CGS_KB * T / (mu * CGS_MH)))


def rel(a, b):
    a, b = float(a), float(b)
    return abs(a - b) / abs(b) if b != 0 else abs(a)


# ---------------------------------------------------------------------------- Lane-Emden
class LaneEmden:
    """psi(xi) of the isothermal sphere, from xi = 1e-3 (series start) to 30."""

    def __init__(self):
        x0 = 1e-3  # series psi = xi^2/6 - xi^4/120 + ...; the next term is below 1e-20
        y0 = [x0 ** 2 / 6 - x0 ** 4 / 120, x0 / 3 - x0 ** 3 / 30]
        self.sol = solve_ivp(lambda x, y: [y[1], np.exp(-y[0]) - 2 * y[1] / x], (x0, 30.0), y0,
                             method="DOP853", rtol=1e-12, atol=1e-14, dense_output=True)

    def psi(self, xi):
        xi = np.asarray(xi, dtype=float)
        small = xi < 1e-3
        out = self.sol.sol(np.where(small, 1e-3, xi).ravel())[0].reshape(xi.shape)
        return np.where(small, xi ** 2 / 6, out)

    def dpsi(self, xi):
        return float(self.sol.sol(xi)[1])


# ---------------------------------------------------------------------------- reading a file
class Made:
    """A helmix file with its velocity (3, Nz, Ny, Nx), density, /helmix/state and geometry."""

    def __init__(self, path):
        with h5py.File(path, "r") as f:
            g = f[GRID]
            self.dtype = g["velocity_x"].dtype
            self.v = np.stack([g["velocity_" + a][...].astype(np.float64) for a in "xyz"])
            self.rho = g["density"][...].astype(np.float64) if "density" in g else None
            self.state = {k: H._plain(v) for k, v in f["/helmix/state"].attrs.items()}
            sp = f["/simulation_parameters"].attrs
            self.box = np.asarray(sp["domain_right_edge"], float) - np.asarray(sp["domain_left_edge"], float)
            self.units = {}
            for k, d in f["/dataset_units"].items():
                self.units[k] = (float(d[()]), H._plain(d.attrs.get("unit", "")))
        Nz, Ny, Nx = self.v.shape[1:]
        self.N = (Nx, Ny, Nz)
        self.dV = float(np.prod(self.box)) / (Nx * Ny * Nz)
        axes = [(np.arange(n) + 0.5) * L / n for n, L in zip(self.N, self.box)]  # (i + 1/2) dx
        Z, Y, X = np.meshgrid(axes[2], axes[1], axes[0], indexing="ij")
        self.pos = np.stack([X, Y, Z])
        self.r = np.sqrt(np.sum((self.pos - (self.box / 2)[:, None, None, None]) ** 2, axis=0))

    def vrms(self):
        return float(np.sqrt(np.mean(np.sum(self.v ** 2, axis=0))))

    def weight(self):
        return self.rho if self.rho is not None else np.ones(self.v.shape[1:])

    def sigma3d(self, inside):
        """Mass-weighted 3D dispersion over the cells `inside`, about their mass-weighted mean."""
        w = self.weight()[inside]
        s2 = 0.0
        for a in range(3):
            va = self.v[a][inside]
            m = np.sum(w * va) / np.sum(w)
            s2 += np.sum(w * (va - m) ** 2) / np.sum(w)
        return float(np.sqrt(s2))

    def momentum_rel(self):
        rho = self.weight()
        P = np.array([np.sum(rho * self.v[a]) for a in range(3)]) * self.dV
        return float(np.linalg.norm(P) / (np.sum(rho) * self.dV * self.vrms()))

    def angular_rel(self):
        rho = self.weight()
        cm = np.array([np.sum(rho * self.pos[a]) for a in range(3)]) / np.sum(rho)
        D = self.pos - cm[:, None, None, None]
        L = np.array([np.sum(rho * (D[(a + 1) % 3] * self.v[(a + 2) % 3] - D[(a + 2) % 3] * self.v[(a + 1) % 3]))
                      for a in range(3)]) * self.dV
        scale = np.sum(rho * np.sqrt(np.sum(D ** 2, axis=0))) * self.dV * self.vrms()
        return float(np.linalg.norm(L) / scale)


def make(hx, c, label, recipe, ranks):
    run = hx.make(recipe, ranks=ranks, name=re.sub(r"[^A-Za-z0-9_.-]", "_", label))
    if not c.check(f"[{label}] helmix make exits 0 ({ranks} rank{'s' if ranks > 1 else ''})", run.ok,
                   f"{run.seconds:.2f} s" if run.ok else run.describe()):
        return None
    return Made(run.out)


def recipe(cells=32, box=1.0, seed=1, precision="double", **sections):
    r = {"grid": {"cells": cells, "box": box},
         "spectrum": {"shape": "power", "slope": 2.0, "kmin": 1},
         "random": {"seed": seed},
         "output": {"precision": precision}}
    for sec, kv in sections.items():
        r.setdefault(sec, {}).update(kv)
    return r


PC_KMS_MSUN = {"length": "1 pc", "velocity": "1 km/s", "mass": "1 Msun"}
U_PC_KMS_MSUN = (CGS_PC, KMS, CGS_MSUN / CGS_PC ** 3)  # length, velocity, density in cgs


# ---------------------------------------------------------------------------- A: sound speed
def part_a(c):
    c.check("[A] worked value: c_s(10 K, mu 2.33) = 0.18817 km/s",
            abs(sound_speed(10.0, 2.33) / KMS - 0.18817) < 5e-6, f"{sound_speed(10.0, 2.33) / KMS:.7f} km/s",
            SRC_CS + "; " + SRC_CODATA + "; " + SRC_AME)
    c.check("[A] worked value: c_s(10 K, mu 2.37) = 0.18657 km/s",
            abs(sound_speed(10.0, 2.37) / KMS - 0.18657) < 5e-6, f"{sound_speed(10.0, 2.37) / KMS:.7f} km/s",
            SRC_CS + "; " + SRC_CODATA + "; " + SRC_AME)
    av = 5 * (1.0 * KMS) ** 2 * CGS_PC / (CGS_G * 1000 * CGS_MSUN)
    c.check("[A] worked value: alpha_vir(sigma_1D = 1 km/s, R = 1 pc, M = 1000 Msun) = 1.16254",
            abs(av - 1.16254) < 5e-6, f"{av:.7f}", SRC_VIR + "; " + SRC_CODATA + "; " + SRC_IAU)
    s1, s2 = np.log(1 + (10 / 3) ** 2), np.log(1 + 10.0 ** 2)
    c.check("[A] worked values: sigma_s^2(M = 10) = 2.4941 (b = 1/3), 4.6151 (b = 1)",
            abs(s1 - 2.4941) < 5e-5 and abs(s2 - 4.6151) < 5e-5, f"{s1:.6f}, {s2:.6f}", SRC_FKS)


def check_gas(c, label, m, T, mu, gamma, units):
    """c_s and the code units recorded in /helmix/state and /dataset_units."""
    UL, UV, UD = units
    cs = sound_speed(T, mu, gamma)
    st = m.state
    c.check(f"[{label}] c_s recorded = sqrt(gamma k_B T/(mu m_H)) (T={T} K, mu={mu}, gamma={gamma:.6g})",
            rel(st["sound_speed_cm_s"], cs) < 1e-12 and rel(st["sound_speed"] * UV, cs) < 1e-12,
            f"file {st['sound_speed_cm_s']:.12g} cm/s, scipy {cs:.12g} cm/s",
            SRC_CS + "; " + SRC_CODATA + "; " + SRC_AME)
    UM, UT = UD * UL ** 3, UL / UV
    got = (st["unit_length_cm"], st["unit_velocity_cm_s"], st["unit_density_g_cm3"], st["unit_mass_g"])
    ok = all(rel(a, b) < 1e-12 for a, b in zip(got, (UL, UV, UD, UM)))
    ok = ok and rel(st["G_code"], CGS_G * UM * UT ** 2 / UL ** 3) < 1e-12
    du = m.units
    ok = ok and rel(du["length_unit"][0], UL) < 1e-12 and du["length_unit"][1] == "cm"
    ok = ok and rel(du["mass_unit"][0], UM) < 1e-12 and du["mass_unit"][1] == "g"
    ok = ok and rel(du["time_unit"][0], UT) < 1e-12 and du["time_unit"][1] == "s"
    ok = ok and rel(du["velocity_unit"][0], UV) < 1e-12 and du["velocity_unit"][1] == "cm/s"
    c.check(f"[{label}] recorded code units (state and /dataset_units) and G_code", ok,
            f"state {got} G_code {st['G_code']:.12g}; dataset_units {du}", SRC_CODATA + "; " + SRC_IAU)


# ---------------------------------------------------------------------------- B/F: amplitudes
def check_amplitude(c, label, m, rule, want, units, T=10.0, mu=2.37, gamma=1.0, radius=None):
    """Recompute vrms, sigma_3D, Mach and alpha_vir in cgs; compare with the rule and the file.

    radius: the cloud radius in code lengths (None: no cloud, region = box, R = max(L)/2)."""
    UL, UV, UD = units
    tol = 1e-9 if m.dtype == np.float64 else 1e-5
    cs = sound_speed(T, mu, gamma)
    if radius is None:
        inside = np.ones(m.r.shape, bool)
        R = float(np.max(m.box)) / 2
    else:
        inside = m.r <= radius
        R = radius
        margin = float(np.min(np.abs(m.r - radius))) / radius
        c.check(f"[{label}] setup: no cell centre within 1e-6 R of the cloud radius", margin > 1e-6,
                f"min |r - R|/R = {margin:.2e}", "keeps the region definition unambiguous (common practice)")
    vrms = m.vrms() * UV
    sig = m.sigma3d(inside) * UV
    mach = sig / cs
    Mreg = float(np.sum(m.weight()[inside])) * m.dV * UD * UL ** 3 if m.rho is not None else np.nan
    alpha = 5 * (sig ** 2 / 3) * R * UL / (CGS_G * Mreg)
    if rule == "vrms":
        got, src = vrms, SRC_RMS
    elif rule == "mach":
        got, src = mach, SRC_SIGMA + "; " + SRC_CS
    elif rule == "virial":
        got, src = alpha, SRC_VIR + "; " + SRC_SIGMA
    else:
        got, src = sig, SRC_LARSON + "; " + SRC_SIGMA
    c.check(f"[{label}] amplitude rule {rule}: recomputed {got:.10g} == asked {want:.10g} (rel {tol:g})",
            rel(got, want) < tol, f"rel err {rel(got, want):.2e}", src)
    st = m.state
    names = {"vrms": "vrms_asked", "mach": "mach_asked", "virial": "virial_asked", "linewidth": "sigma_3d_asked"}
    asked = {"vrms": want / UV, "mach": want, "virial": want, "linewidth": want / UV}[rule]
    others = [st[n] for r, n in names.items() if r != rule]
    c.check(f"[{label}] /helmix/state: amplitude_by = {rule}, {names[rule]} = the request in code units, "
            "the other *_asked NaN",
            st["amplitude_by"] == rule and rel(st[names[rule]], asked) < 1e-12 and all(np.isnan(o) for o in others),
            f"{names[rule]} {st[names[rule]]!r} (want {asked!r})", "recipe semantics")
    recs = [("vrms", st["vrms"] * UV, vrms), ("sigma_3d", st["sigma_3d"] * UV, sig), ("mach", st["mach"], mach)]
    if m.rho is not None:
        recs.append(("virial", st["virial"], alpha))
        recs.append(("region_mass", st["region_mass"] * UD * UL ** 3, Mreg))
    errs = {k: rel(a, b) for k, a, b in recs}
    ok = all(np.isfinite(a) for _, a, _ in recs) and max(errs.values()) < tol
    if m.rho is None:  # no mass: the virial parameter is undefined
        ok = ok and np.isnan(st["virial"])
    c.check(f"[{label}] /helmix/state records vrms, sigma_3d, mach, virial == recomputed",
            ok, ", ".join(f"{k} {e:.1e}" for k, e in errs.items())
            + (" (virial NaN: no mass)" if m.rho is None else ""),
            SRC_RMS + "; " + SRC_SIGMA + "; " + SRC_VIR)
    return {"vrms": vrms, "sigma": sig, "mach": mach, "alpha": alpha}


def check_momentum(c, label, m, rotation):
    tol = 1e-12 if m.dtype == np.float64 else 1e-5
    p = m.momentum_rel()
    c.check(f"[{label}] net momentum |sum rho v dV| / (M vrms) < {tol:g}", p < tol, f"{p:.2e}", SRC_MOM)
    if rotation:
        a = m.angular_rel()
        c.check(f"[{label}] net angular momentum about the centre of mass / (sum rho|Delta| dV vrms) < {tol:g}",
                a < tol, f"{a:.2e}", SRC_MOM)


# ---------------------------------------------------------------------------- C: density models
def check_sphere(c, label, m, R, edge, rho_cloud, contrast, T=10.0):
    amb = rho_cloud / contrast
    if edge > 0:
        W = 0.5 * (1 - np.tanh((m.r - R) / edge))
    else:
        W = (m.r <= R).astype(float)
    want = amb + (rho_cloud - amb) * W
    err = float(np.max(np.abs(m.rho / want - 1)))
    c.check(f"[{label}] sphere profile rho_amb + (rho_cloud - rho_amb) W(r), every cell, rel < 1e-12",
            err < 1e-12, f"max rel err {err:.2e}; rho_cloud {rho_cloud:.6g}, rho_amb {amb:.6g}", SRC_WIN)
    st = m.state
    c.check(f"[{label}] ambient density = cloud/contrast, T_amb = contrast T",
            rel(st["density_ambient"], amb) < 1e-12 and rel(st["temperature_ambient_K"], contrast * T) < 1e-12,
            f"rho_amb {st['density_ambient']:.12g}, T_amb {st['temperature_ambient_K']} K", SRC_PEQ)


def check_bonnor(c, label, m, le, rho_c, a, xi_max, contrast, edge=0.0):
    """Cells inside R against rho_c exp(-psi(r/a)); outside against rho_edge/contrast (edge 0)."""
    R = xi_max * a
    inside = m.r <= R
    want = rho_c * np.exp(-le.psi(m.r[inside] / a))
    err = float(np.max(np.abs(m.rho[inside] / want - 1)))
    c.check(f"[{label}] Bonnor-Ebert rho(r) = rho_c exp(-psi(r/a)) for the {int(inside.sum())} cells inside R, "
            "rel < 1e-5",
            err < 1e-5, f"max rel err {err:.2e}", SRC_LE)
    rho_edge = rho_c * np.exp(-le.psi(xi_max))
    amb = rho_edge / contrast
    if edge == 0:
        e2 = float(np.max(np.abs(m.rho[~inside] / amb - 1)))
        c.check(f"[{label}] outside R the density is rho_edge/contrast (contrast {contrast:g}), rel < 1e-5",
                e2 < 1e-5, f"max rel err {e2:.2e}", SRC_LE + "; " + SRC_PEQ)
    st = m.state
    c.check(f"[{label}] recorded radius = xi_max c_s/sqrt(4 pi G rho_c) and rho_c/rho_edge = exp(psi(xi_max))",
            rel(st["cloud_radius"], R) < 1e-6
            and rel(st["density_inside"] / st["density_edge"], rho_c / rho_edge) < 1e-6,
            f"R file {st['cloud_radius']:.10g} vs {R:.10g}; rho_c/rho_edge file "
            f"{st['density_inside'] / st['density_edge']:.8g} vs {rho_c / rho_edge:.8g}", SRC_LE)


def part_c_reference(c, le):
    """The Lane-Emden solution used as the reference reproduces the published critical sphere."""
    xi_c = brentq(lambda x: np.exp(-le.psi(x)) - le.dpsi(x) ** 2 / 2, 5.0, 8.0)
    con = float(np.exp(le.psi(6.451)))
    c.check("[C] reference: critical xi (max of the bounded mass) = 6.451, contrast 14.04",
            abs(xi_c - 6.451) < 1e-3 and abs(con - 14.04) < 5e-3, f"xi_c {xi_c:.5f}, rho_c/rho_edge {con:.4f}",
            SRC_BE)


# ---------------------------------------------------------------------------- the body
def body(args, hx, c):
    part_a(c)
    le = LaneEmden()
    part_c_reference(c, le)
    U = U_PC_KMS_MSUN

    # ---- 1: sphere with a tanh edge, vrms in km/s-code units of 0.5 km/s, mu = 2.33, 2 ranks
    units1 = {"length": "1 pc", "velocity": "0.5 km/s", "mass": "1 Msun"}
    U1 = (CGS_PC, 0.5 * KMS, CGS_MSUN / CGS_PC ** 3)
    m = make(hx, c, "1 sphere vrms", recipe(box=3.0, units=units1, gas={"mu": 2.33},
                                             density={"model": "sphere", "radius": "1 pc", "mass": "1000 Msun",
                                                      "edge": "0.1 pc"},
                                             amplitude={"vrms": 2.5}, mix={"zeta": 0.5}), ranks=2)
    if m is not None:
        check_gas(c, "1 sphere vrms", m, 10.0, 2.33, 1.0, U1)
        c.check("[1 sphere vrms] c_s(10 K, mu 2.33) in the file rounds to 0.18817 km/s",
                abs(m.state["sound_speed_cm_s"] / KMS - 0.18817) < 5e-6, f"{m.state['sound_speed_cm_s'] / KMS:.7f}",
                SRC_CS + "; " + SRC_CODATA)
        check_amplitude(c, "1 sphere vrms", m, "vrms", 2.5 * 0.5 * KMS, U1, mu=2.33, radius=1.0)
        check_sphere(c, "1 sphere vrms", m, 1.0, 0.1, 1000.0 / (4 / 3 * np.pi), 100.0)
        check_momentum(c, "1 sphere vrms", m, rotation=False)
        a = m.angular_rel()
        c.check("[1 sphere vrms] control: without remove_rotation the angular momentum is not zero",
                a > 1e-3, f"{a:.2e}", SRC_MOM)

    # ---- 2: lognormal, mach = 10, zeta = 1 (b = 1/3), 1 rank, double
    units2 = {"length": "1 pc", "velocity": "1 km/s", "density": "1e-22 g/cm^3"}
    U2 = (CGS_PC, KMS, 1e-22)
    rec2 = recipe(units=units2, mix={"zeta": 1.0}, amplitude={"mach": 10},
                  density={"model": "lognormal", "mean": "1e-21 g/cm^3"})
    m = make(hx, c, "2 lognormal mach b=1/3", rec2, ranks=1)
    sig_b13 = np.sqrt(np.log(1 + (1 / 3) ** 2 * 100))
    if m is not None:
        check_gas(c, "2 lognormal mach b=1/3", m, 10.0, 2.37, 1.0, U2)
        check_amplitude(c, "2 lognormal mach b=1/3", m, "mach", 10.0, U2)
        mean = float(np.mean(m.rho)) * U2[2]
        sl = float(np.std(np.log(m.rho)))
        c.check("[2 lognormal mach b=1/3] volume mean of rho = 1e-21 g/cm^3 (rel < 1e-13)",
                rel(mean, 1e-21) < 1e-13, f"{mean:.16g}", "definition of the volume mean, common practice")
        c.check("[2 lognormal mach b=1/3] std of ln rho = sqrt(ln(1 + M^2/9)) = sqrt(2.4941) (rel < 1e-12)",
                rel(sl, sig_b13) < 1e-12, f"{sl:.15f} vs {sig_b13:.15f}", SRC_FKS + "; " + SRC_B)
        c.check("[2 lognormal mach b=1/3] recorded b = 1/3 and sigma_s = the std of ln rho",
                rel(m.state["b"], 1 / 3) < 1e-15 and rel(m.state["sigma_s"], sl) < 1e-12,
                f"b {m.state['b']!r}, sigma_s {m.state['sigma_s']!r}", SRC_B)
        check_momentum(c, "2 lognormal mach b=1/3", m, rotation=False)
    rec2c = recipe(units=units2, mix={"zeta": 1.0}, amplitude={"mach": 10}, velocity={"remove_bulk": "false"},
                   density={"model": "lognormal", "mean": "1e-21 g/cm^3"})
    m = make(hx, c, "2c lognormal remove_bulk=false", rec2c, ranks=1)
    if m is not None:
        p = m.momentum_rel()
        c.check("[2c lognormal remove_bulk=false] control: the net momentum is not zero", p > 1e-3, f"{p:.2e}",
                SRC_MOM)

    # ---- 3: lognormal, mach = 10, zeta = 0 (b = 1), 48^3 on 3 ranks, single precision
    m = make(hx, c, "3 lognormal mach b=1 single",
             recipe(cells=48, units=units2, mix={"zeta": 0.0}, amplitude={"mach": 10}, precision="single",
                    density={"model": "lognormal", "mean": "1e-21 g/cm^3"}, random={"seed": 3}), ranks=3)
    sig_b1 = np.sqrt(np.log(1 + 100.0))
    if m is not None:
        check_amplitude(c, "3 lognormal mach b=1 single", m, "mach", 10.0, U2)
        mean = float(np.mean(m.rho)) * U2[2]
        sl = float(np.std(np.log(m.rho)))
        c.check("[3 lognormal mach b=1 single] float32: volume mean = 1e-21 g/cm^3 (rel < 1e-6)",
                rel(mean, 1e-21) < 1e-6, f"{mean:.10g}", "definition of the volume mean; IEEE binary32 rounding")
        c.check("[3 lognormal mach b=1 single] float32: std of ln rho = sqrt(4.6151) (rel < 1e-6)",
                rel(sl, sig_b1) < 1e-6, f"{sl:.9f} vs {sig_b1:.9f}", SRC_FKS + "; " + SRC_B)
        check_momentum(c, "3 lognormal mach b=1 single", m, rotation=False)

    # ---- 4: sphere of 1000 Msun, R = 1 pc, virial = 1.5, bulk and rotation removed, 3 ranks
    lab = "4 sphere virial rotation"
    m = make(hx, c, lab, recipe(box=3.0, units=PC_KMS_MSUN, seed=4,
                                density={"model": "sphere", "radius": "1 pc", "mass": "1000 Msun"},
                                amplitude={"virial": 1.5}, velocity={"remove_rotation": "true"}), ranks=3)
    if m is not None:
        check_amplitude(c, lab, m, "virial", 1.5, U, radius=1.0)
        check_sphere(c, lab, m, 1.0, 0.0, 1000.0 / (4 / 3 * np.pi), 100.0)
        check_momentum(c, lab, m, rotation=True)

    # ---- 4w: the same sphere with the turbulence windowed (sharp edge), Mach 2, bulk and rotation
    #          removed under rho W: the gas outside the cloud must stay exactly at rest, 2 ranks
    lab = "4w sphere window mach"
    m = make(hx, c, lab, recipe(box=3.0, units=PC_KMS_MSUN, seed=41,
                                density={"model": "sphere", "radius": "1 pc", "mass": "1000 Msun"},
                                amplitude={"mach": 2}, velocity={"window": "true", "remove_rotation": "true"}),
             ranks=2)
    if m is not None:
        check_amplitude(c, lab, m, "mach", 2.0, U, radius=1.0)
        check_momentum(c, lab, m, rotation=True)
        outside = m.r > 1.0
        vout = float(np.max(np.abs(m.v[:, outside])))
        c.check(f"[{lab}] every cell outside the window is at rest (v = 0 exactly)", vout == 0.0, f"max |v| {vout:.1e}",
                SRC_WIN)

    # ---- 5: uniform density in a 2 x 1 x 1 pc box, virial = 2: R = 1 pc, M = box mass, 2 ranks
    lab = "5 uniform virial"
    m = make(hx, c, lab, recipe(cells="32 16 16", box="2 1 1", units=PC_KMS_MSUN, seed=5,
                                density={"model": "uniform", "mean": "1e-21 g/cm^3"}, amplitude={"virial": 2}),
             ranks=2)
    if m is not None:
        c.check(f"[{lab}] uniform density = 1e-21 g/cm^3 in every cell",
                float(np.max(np.abs(m.rho * U[2] / 1e-21 - 1))) < 1e-13,
                f"max rel err {float(np.max(np.abs(m.rho * U[2] / 1e-21 - 1))):.1e}", "recipe semantics")
        check_amplitude(c, lab, m, "virial", 2.0, U)
        check_momentum(c, lab, m, rotation=False)

    # ---- 6: critical Bonnor-Ebert sphere, rho_c = 1e-19 g/cm^3, linewidth (Larson), 2 ranks
    lab = "6 BE rho_c linewidth"
    cs = sound_speed(10.0)
    rho_c6 = 1e-19 / U[2]
    a6 = cs / np.sqrt(4 * np.pi * CGS_G * 1e-19) / CGS_PC
    m = make(hx, c, lab, recipe(box=0.4, units=PC_KMS_MSUN, seed=6,
                                density={"model": "bonnor-ebert", "central_density": "1e-19 g/cm^3"},
                                amplitude={"linewidth": "true"}), ranks=2)
    if m is not None:
        c.check(f"[{lab}] default xi_max is the critical 6.451", abs(m.state["xi_max"] - 6.451) < 1e-3,
                f"{m.state['xi_max']!r}", SRC_BE)
        xi6 = float(m.state["xi_max"])
        check_bonnor(c, lab, m, le, rho_c6, a6, xi6, 100.0)
        R6 = xi6 * a6
        check_amplitude(c, lab, m, "linewidth", 1.10 * KMS * (2 * R6) ** 0.38, U, radius=R6)

    # ---- 7: Bonnor-Ebert of 1 Msun, xi_max = 4, contrast 50, mach = 3, rotation removed,
    #         1 rank, single precision; rho_c from M = 4 pi rho_c a^3 xi^2 psi'(xi) (Bonnor 1956)
    lab = "7 BE mass mach single"
    xi7 = 4.0
    dp = le.dpsi(xi7)
    rho_c7 = (4 * np.pi * xi7 ** 2 * dp * cs ** 3 / ((4 * np.pi * CGS_G) ** 1.5 * CGS_MSUN)) ** 2
    a7 = cs / np.sqrt(4 * np.pi * CGS_G * rho_c7) / CGS_PC
    m = make(hx, c, lab, recipe(box=0.2, units=PC_KMS_MSUN, seed=7, precision="single",
                                density={"model": "bonnor-ebert", "mass": "1 Msun", "xi_max": xi7, "contrast": 50},
                                amplitude={"mach": 3}, velocity={"remove_rotation": "true"}), ranks=1)
    if m is not None:
        check_bonnor(c, lab, m, le, rho_c7 / U[2], a7, xi7, 50.0)
        check_amplitude(c, lab, m, "mach", 3.0, U, radius=xi7 * a7)
        check_momentum(c, lab, m, rotation=True)

    # ---- 8: no density, linewidth in a 3 x 2 x 2 pc box: L = 3 pc, 1 rank, single
    lab = "8 none linewidth single"
    m = make(hx, c, lab, recipe(cells="32 16 16", box="3 2 2", units=PC_KMS_MSUN, seed=8, precision="single",
                                amplitude={"linewidth": "true"}), ranks=1)
    if m is not None:
        check_amplitude(c, lab, m, "linewidth", 1.10 * KMS * 3.0 ** 0.38, U)

    # ---- 9: no density, mach = 5 at 20 K, mu = 2.33, gamma = 5/3, 1 rank
    lab = "9 none mach gamma=5/3"
    m = make(hx, c, lab, recipe(units=PC_KMS_MSUN, seed=9, amplitude={"mach": 5},
                                gas={"temperature": "20 K", "mu": 2.33, "gamma": 5 / 3}), ranks=1)
    if m is not None:
        check_gas(c, lab, m, 20.0, 2.33, 5 / 3, U)
        check_amplitude(c, lab, m, "mach", 5.0, U, T=20.0, mu=2.33, gamma=5 / 3)

    # ---- 10: clumpy clouds over 12 seeds (6 spheres, 6 critical Bonnor-Ebert spheres, on 1 and
    #          2 ranks): per seed the mass equals that of the smooth cloud's cells, the ambient
    #          medium is untouched, and the cloud part varies with the seed
    lab = "10 clumps ensemble"
    R_sph, rho_sph = 0.3, 100.0 / (4 / 3 * np.pi * 0.3 ** 3)
    xi_c = 6.451  # any value near the critical one; recorded xi_max is read back below
    worst = {"sphere": 0.0, "bonnor-ebert": 0.0}
    worst_amb, spreads, dens, n_ok = 0.0, [], [], 0
    for i, seed in enumerate(range(101, 113)):
        sphere = i < 6
        if sphere:
            dkeys = {"model": "sphere", "radius": "0.3 pc", "mass": "100 Msun"}
            box = 1.0
        else:
            dkeys = {"model": "bonnor-ebert", "central_density": "1e-19 g/cm^3"}
            box = 0.4
        dkeys.update({"clumps": "true", "sigma_s": 1.0})
        m = make(hx, c, f"{lab} seed {seed}",
                 recipe(box=box, units=PC_KMS_MSUN, seed=seed, amplitude={"vrms": 1.0}, density=dkeys),
                 ranks=1 + i % 2)
        if m is None:
            continue
        n_ok += 1
        if sphere:
            inside = m.r <= R_sph
            amb = rho_sph / 100.0
            smooth = np.where(inside, rho_sph, amb)
        else:
            xi_c = float(m.state["xi_max"])
            inside = m.r <= xi_c * a6
            amb = rho_c6 * np.exp(-le.psi(xi_c)) / 100.0
            smooth = np.where(inside, rho_c6 * np.exp(-le.psi(np.minimum(m.r / a6, xi_c))), amb)
        key = dkeys["model"]
        worst[key] = max(worst[key], rel(np.sum(m.rho), np.sum(smooth)))
        worst_amb = max(worst_amb, float(np.max(np.abs(m.rho[~inside] / amb - 1))))
        spreads.append(float(np.std(np.log(m.rho[inside] / smooth[inside]))))
        dens.append(m.rho)
    if n_ok == 12:
        c.check(f"[{lab}] 12 seeds: cloud mass = that of the smooth cloud's cells per seed "
                "(sphere rel < 1e-12, Bonnor-Ebert rel < 1e-9 against the solve_ivp profile)",
                worst["sphere"] < 1e-12 and worst["bonnor-ebert"] < 1e-9,
                f"worst rel err sphere {worst['sphere']:.2e}, Bonnor-Ebert {worst['bonnor-ebert']:.2e}",
                "mass conservation of the clump normalisation as the recipe documents it; " + SRC_LE)
        c.check(f"[{lab}] 12 seeds: ambient cells untouched (= rho_edge/contrast), rel < 1e-9", worst_amb < 1e-9,
                f"worst rel err {worst_amb:.1e}", SRC_WIN)
        c.check(f"[{lab}] 12 seeds: the cloud is clumpy (std of ln(rho/rho_smooth) inside > 0.3) and seeds differ",
                min(spreads) > 0.3 and all(not np.array_equal(dens[0], d) for d in dens[1:6])
                and all(not np.array_equal(dens[6], d) for d in dens[7:]),
                f"std ln inside {min(spreads):.3f}..{max(spreads):.3f}", "recipe semantics (sigma_s = 1)")

    # ---- 11: yt reads the units (length 1e5 au, velocity 0.5 km/s, mass 1 Msun), single
    lab = "11 yt units"
    run = hx.make(recipe(cells="32 16 16", box="2 1 1", seed=11, precision="single",
                         units={"length": "1e5 au", "velocity": "0.5 km/s", "mass": "1 Msun"},
                         density={"model": "lognormal", "sigma_s": 1.0}), ranks=2, name="yt_units")
    if c.check(f"[{lab}] helmix make exits 0 (2 ranks)", run.ok, run.describe() if not run.ok else ""):
        part_e(c, lab, run.out)


def part_e(c, lab, path):
    import yt
    yt.set_log_level(50)
    logging.getLogger("yt").setLevel(logging.CRITICAL)
    UL, UV = 1e5 * CGS_AU, 0.5 * KMS
    UD = CGS_MSUN / UL ** 3
    ds = yt.load(path)
    ad = ds.all_data()
    with h5py.File(path, "r") as f:
        raw = {k: f[GRID][k][...].astype(np.float64) for k in ("velocity_x", "velocity_y", "velocity_z", "density")}
    errs = {}
    for k in ("velocity_x", "velocity_y", "velocity_z"):
        got = np.sort(np.asarray(ad[("gdf", k)].to("km/s").d, float))
        want = np.sort(raw[k].ravel() * UV / KMS)
        errs[k] = float(np.max(np.abs(got - want)) / np.max(np.abs(want))) if got.shape == want.shape else np.inf
    c.check(f"[{lab}] yt velocity .to('km/s') == dataset x 0.5 km/s (rel < 1e-12)", max(errs.values()) < 1e-12,
            ", ".join(f"{k} {e:.1e}" for k, e in errs.items()), SRC_YT)
    # The length unit as written, in cm, is exact; yt's own parsec (unyt 2.x: 3.0856775809623245e18
    # cm) differs from the IAU 2015 B2 value by 1.1e-10, so the conversion to pc is held to 1e-9.
    want_w = np.array([2.0, 1.0, 1.0]) * UL
    wc = np.asarray(ds.domain_width.to("cm").d, float)
    wp = np.asarray(ds.domain_width.to("pc").d, float)
    ec = float(np.max(np.abs(wc / want_w - 1)))
    ep = float(np.max(np.abs(wp / (want_w / CGS_PC) - 1)))
    c.check(f"[{lab}] yt domain_width == box x 1e5 au: .to('cm') rel < 1e-13, .to('pc') rel < 1e-9",
            ec < 1e-13 and ep < 1e-9, f"cm rel err {ec:.1e}; pc {wp.tolist()} rel err {ep:.1e}",
            SRC_YT + "; " + SRC_IAU)
    got = np.sort(np.asarray(ad[("gdf", "density")].to("g/cm**3").d, float))
    want = np.sort(raw["density"].ravel() * UD)
    ed = float(np.max(np.abs(got / want - 1))) if got.shape == want.shape else np.inf
    c.check(f"[{lab}] yt density .to('g/cm**3') == dataset x Msun/(1e5 au)^3 (rel < 1e-12)", ed < 1e-12,
            f"max rel err {ed:.1e}", SRC_YT + "; " + SRC_IAU)


if __name__ == "__main__":
    H.run_main("test_cloud_state", __doc__, body)
