#!/usr/bin/python3
"""`helmix inspect --check`: the verdict and its exit status.

Passes (exit 0) on unaltered helmix cubes (32^3, slope 2): zeta 0.5 (exact
none), zeta 1, compressive_fraction 0.3 (exact total), compressive_fraction
0.6 (exact shell), in double and in single precision, and with fixed
amplitudes (no draw scatter in the shell energies). Fails (exit 1) on cubes altered
with h5py/numpy:
  * a curl-free field (gradient of a trigonometric potential) added and the
    whole field rescaled to the requested rms: only the share line fails;
  * compressive energy moved from one shell to another with the total share
    and energy kept (exact = shell): only the worst-shell line fails;
  * one component rescaled: the rms line fails.
--expect on a foreign cube of known content (alpha grad phi + beta ABC flow
with a 0.3 share, Parseval) passes and fails as the numbers say, --tolerance
moves the border, --expect slope is checked on a field whose compensated
shell spectrum is an exact power law, --check without a request is bad
input (exit 2).

Every JSON "check" block is held to its own numbers: passed = every line
with a tolerance has |measured - target| <= tolerance, and the exit code
is 0 exactly when passed. Measured values are compared with numpy. Each line
keeps what was asked (the recipe: slope 2, the ensemble share of zeta) apart
from the target it is held to (the fit expected on this grid, the share this
draw holds).
"""

import math
import shutil
import sys

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

N = 32
SRC_FED = ("expected compressive share (1-zeta)^2/(1-2 zeta+3 zeta^2), "
           "Federrath et al. 2010, A&A 512, A81")
SRC_RULE = "verdict rule: |measured - target| <= tolerance (helmix specification)"


def recipe(mix, precision="double", seed=1, slope=2.0, kmin=1, amplitudes="gaussian"):
    return {
        "grid": {"cells": N, "box": 1.0},
        "spectrum": {"shape": "power", "slope": slope, "kmin": kmin},
        "mix": mix,
        "amplitude": {"vrms": 1.0},
        "random": {"seed": seed, "amplitudes": amplitudes},
        "output": {"precision": precision},
    }


def verdict_consistent(c, label, run):
    """The check block agrees with its lines and with the exit code."""
    js = run.json
    if js is None or "check" not in js:
        c.fail(f"[{label}] JSON holds a check block", run.json_error or "no check block")
        return None
    chk = js["check"]
    bad = []
    for ln in chk["lines"]:
        tol = ln["tolerance"]
        if tol is None:
            if ln["passed"] is not None:
                bad.append(f"{ln['quantity']}: info line with a verdict")
            continue
        want = abs(ln["measured"] - ln["target"]) <= tol
        if ln["passed"] is not want:
            bad.append(f"{ln['quantity']}: passed={ln['passed']} but |{ln['measured']}-{ln['target']}| vs {tol}")
    judged = [ln["passed"] for ln in chk["lines"] if ln["tolerance"] is not None]
    overall = all(judged)
    c.check(f"[{label}] check lines follow |measured - target| <= tolerance", not bad,
            "; ".join(bad) if bad else f"{len(chk['lines'])} lines", SRC_RULE)
    c.check(f"[{label}] check.passed = all lines passed = (exit code 0)",
            chk["passed"] is overall and (run.rc == 0) == overall and run.rc in (0, 1),
            f"passed={chk['passed']} rc={run.rc}", SRC_RULE)
    return {ln["quantity"]: ln for ln in chk["lines"]}


def run_check(c, hx, label, path, opts=(), want_rc=0, ranks=None):
    # runs expected to exit non-zero go without the MPI launcher (one rank):
    # the launcher spends ~2 s tearing a job down after a non-zero exit
    if ranks is None:
        ranks = 2 if want_rc == 0 else 0
    run = X.inspect(hx, path, "--check", *opts, ranks=ranks)
    c.check(f"[{label}] inspect --check exits {want_rc}", run.rc == want_rc,
            f"rc={run.rc} {run.seconds:.2f} s" + ("" if run.rc == want_rc else "\n" + run.describe()
                                                   + "\n" + run.stdout[-1500:]))
    if run.rc not in (0, 1):
        return run, None
    return run, verdict_consistent(c, label, run)


def expected_fit(n, kmin, kmax, slope):
    """The compensated least-squares slope of the noise-free shell spectrum of a cubic n^3 grid:
    E_s = sum of |k|^-(slope+2) over the modes with kmin <= |k| <= kmax (no Nyquist index),
    N_s = all nonzero modes with round|k| = s (numpy's fftfreq), fit over shells kmin..kmax."""
    f = np.fft.fftfreq(n) * n
    kx, ky, kz = np.meshgrid(f, f, f, indexing="ij")
    k = np.sqrt(kx ** 2 + ky ** 2 + kz ** 2)
    shell = np.floor(k + 0.5).astype(int)
    nyq = (np.abs(kx) == n // 2) | (np.abs(ky) == n // 2) | (np.abs(kz) == n // 2)
    band = (k >= kmin) & (k <= kmax) & ~nyq & (k > 0)
    e = np.bincount(shell[band], weights=k[band] ** -(slope + 2), minlength=shell.max() + 1)
    modes = np.bincount(shell[k > 0], minlength=shell.max() + 1)
    s = np.arange(len(e))
    use = (s >= kmin) & (s <= kmax) & (e > 0) & (modes > 0)
    x, y = np.log(s[use]), np.log(e[use] * 4 * np.pi * s[use] ** 2 / modes[use])
    return -np.polyfit(x, y, 1)[0]


def line_is(c, label, lines, quantity, passed, measured=None, tol=1e-10, target=None):
    ln = lines.get(quantity) if lines else None
    if ln is None:
        c.fail(f"[{label}] line '{quantity}' present", str(list(lines or {})))
        return
    ok = ln["passed"] is passed
    det = (f"asked={ln['asked']} target={ln['target']} measured={ln['measured']:.12g} tol={ln['tolerance']} "
           f"passed={ln['passed']}")
    if measured is not None:
        ok &= abs(ln["measured"] - measured) <= tol * max(1.0, abs(measured))
        det += f" numpy={measured:.12g}"
    if target is not None:
        ok &= abs(ln["target"] - target) <= 1e-12 * max(1.0, abs(target))
    c.check(f"[{label}] line '{quantity}' {'passes' if passed else 'fails'}"
            + (" and its measured value = numpy" if measured is not None else ""), ok, det)


def worst_shell_share(ref, target, lo, hi, floor):
    sh = ref["shells"]
    worst, dev = target, 0.0
    for s in range(1, len(sh["energy"])):
        if s < lo or s > hi or not sh["energy"][s] > floor:
            continue
        share = sh["compressive"][s] / sh["energy"][s]
        if abs(share - target) > dev:
            dev, worst = abs(share - target), share
    return worst


def potential_gradient(cells, box, amp):
    Xc, Yc, Zc = X.grid_coords(cells, box)
    Lx, Ly, Lz = box
    a, b, cz = 2 * math.pi * 3 / Lx, 2 * math.pi * 2 / Ly, 2 * math.pi * 4 / Lz
    # phi = sin(a x) cos(b y) + cos(c z): grad by hand
    return amp * np.stack([a * np.cos(a * Xc) * np.cos(b * Yc),
                           -b * np.sin(a * Xc) * np.sin(b * Yc),
                           -cz * np.sin(cz * Zc)])


def write_velocity(path, v, dtype):
    with h5py.File(path, "a") as f:
        g = f["/data/grid_0000000000"]
        for i, a in enumerate("xyz"):
            g["velocity_" + a][...] = v[i].astype(dtype)


def move_compressive_energy(v, box, s1, s2, f1):
    """Scale the compressive part of shell s1 by f1 and that of shell s2 by the
    factor that keeps the total compressive energy (numpy FFT)."""
    Nz, Ny, Nx = v.shape[1:]
    wn = X.Wavenumbers((Nx, Ny, Nz), box)
    V = np.fft.fftn(v, axes=(1, 2, 3))
    kk = np.where(wn.k2 > 0, wn.k2, 1.0)
    kv = np.sum(wn.k * V, axis=0)
    Lpar = wn.k * (kv / kk)[None]  # longitudinal part k (k.V)/k^2
    e = lambda s: float(np.sum(np.abs(Lpar[:, wn.shell == s]) ** 2))  # noqa: E731
    e1, e2 = e(s1), e(s2)
    f2 = math.sqrt(1 - e1 * (f1 * f1 - 1) / e2)
    fac = np.ones_like(wn.k2)
    fac[wn.shell == s1] = f1
    fac[wn.shell == s2] = f2
    V = V + (fac - 1.0)[None] * Lpar
    return np.real(np.fft.ifftn(V, axes=(1, 2, 3)))


def body(args, hx, c):
    cases = [
        ("zeta=0.5 none double", {"zeta": 0.5}, "double"),
        ("zeta=1 double", {"zeta": 1.0}, "double"),
        ("cf=0.3 total double", {"compressive_fraction": 0.3, "exact": "total"}, "double"),
        ("cf=0.6 shell double", {"compressive_fraction": 0.6, "exact": "shell"}, "double"),
        ("cf=0.3 total single", {"compressive_fraction": 0.3, "exact": "total"}, "single"),
        ("zeta=0.5 none single", {"zeta": 0.5}, "single"),
        ("cf=0.3 total double, fixed amplitudes, kmin 2",
         {"compressive_fraction": 0.3, "exact": "total"}, "double"),
    ]
    made = {}
    for i, (label, mix, prec) in enumerate(cases):
        fixed = "fixed" in label
        mk = hx.make(recipe(mix, prec, seed=31 + i, kmin=2 if fixed else 1,
                            amplitudes="fixed" if fixed else "gaussian"), ranks=2)
        if not c.check(f"[{label}] helmix make exits 0", mk.ok, mk.describe() if not mk.ok else ""):
            continue
        made[label] = mk.out
        cube = H.Cube(mk.out)
        ref = X.reference(cube.v, cube.box, fit=(float(cube.attrs["kmin"]), float(cube.attrs["kmax"])))
        run, lines = run_check(c, hx, label, mk.out, want_rc=0)
        if not lines:
            continue
        line_is(c, label, lines, "rms velocity", True, ref["rms_3d"], target=1.0)
        line_is(c, label, lines, "largest mean component", True)
        # the slope is judged against what the compensated fit should give on this grid and
        # band (recorded by make), within 5 sigma of its scatter; the recipe's 2 is information
        line_is(c, label, lines, "spectral slope", True, ref["slope"]["value"],
                target=float(cube.attrs["slope_fit_expected"]))
        ln = lines.get("spectral slope")
        c.check(f"[{label}] slope line: asked 2 (the recipe), target the fit expected on this grid",
                ln is not None and ln["asked"] == 2.0 and ln["target"] != 2.0 and ln["target_is"] == "fit on this grid",
                str(ln), "helmix specification (issue 9: asked apart from derived)")
        c.check(f"[{label}] no separate recipe-slope line", "slope asked in the recipe" not in lines,
                str(sorted(lines)), "helmix specification")
        want = expected_fit(cube.v.shape[1], float(cube.attrs["kmin"]), float(cube.attrs["kmax"]), 2.0)
        c.check(f"[{label}] recorded expected fit == numpy fit of the ideal shell spectrum",
                abs(float(cube.attrs["slope_fit_expected"]) - want) < 1e-10,
                f"attr={float(cube.attrs['slope_fit_expected']):.12f} numpy={want:.12f}",
                "least squares on log E_s 4 pi s^2/N_s of E_s = sum over band modes of k^-(slope+2) (common practice)")
        sig = float(cube.attrs["slope_fit_sigma"])
        c.check(f"[{label}] slope tolerance = 5 sigma of the fit scatter recorded by make",
                abs(lines["spectral slope"]["tolerance"] - max(5 * sig, 0.01)) < 1e-12,
                f"tol={lines['spectral slope']['tolerance']} sigma={sig}", "helmix specification")
        if "zeta" in mix:
            line_is(c, label, lines, "compressive share as drawn", True,
                    ref["energy"]["compressive_fraction"])
            z = mix["zeta"]
            exp = (1 - z) ** 2 / (1 - 2 * z + 3 * z * z)
            ln = lines.get("compressive share as drawn")
            c.check(f"[{label}] share line: asked the ensemble share {exp:.6f}, target the share as drawn",
                    ln is not None and abs(ln["asked"] - exp) < 1e-12 and ln["target_is"] == "this draw"
                    and abs(ln["target"] - float(cube.attrs["realized_compressive_fraction"])) < 1e-15,
                    str(ln), SRC_FED)
        else:
            line_is(c, label, lines, "compressive share", True, ref["energy"]["compressive_fraction"],
                    target=mix["compressive_fraction"])
            if mix["exact"] == "shell":
                floor = 1e-20 * ref["energy"]["total"]
                ws = worst_shell_share(ref, 0.6, 1, int(math.floor(cube.attrs["kmax"] + 0.5)), floor)
                line_is(c, label, lines, "share, worst shell", True, ws, target=0.6)

    # ------------------------------------------------------ altered cubes
    src = made.get("cf=0.3 total double")
    if src:
        cube = H.Cube(src)
        # (1) a curl-free field added, then the whole field rescaled to rms 1
        path = hx.path("plus_gradient.h5")
        shutil.copyfile(src, path)
        v = cube.v + potential_gradient(cube.cells, cube.box, 0.004)
        v /= math.sqrt(np.mean(np.sum(v ** 2, axis=0)))
        write_velocity(path, v, np.float64)
        ref = X.reference(v, cube.box)
        label = "cf=0.3 + curl-free field"
        run, lines = run_check(c, hx, label, path, want_rc=1, ranks=2)
        if lines:
            line_is(c, label, lines, "compressive share", False, ref["energy"]["compressive_fraction"])
            line_is(c, label, lines, "rms velocity", True, ref["rms_3d"])
        # (2) one component rescaled by 1.01
        path = hx.path("vx_scaled.h5")
        shutil.copyfile(src, path)
        v = cube.v.copy()
        v[0] *= 1.01
        write_velocity(path, v, np.float64)
        ref = X.reference(v, cube.box)
        label = "cf=0.3 with vx x 1.01"
        run, lines = run_check(c, hx, label, path, want_rc=1)
        if lines:
            line_is(c, label, lines, "rms velocity", False, ref["rms_3d"])
            line_is(c, label, lines, "compressive share", False, ref["energy"]["compressive_fraction"])
    src = made.get("cf=0.6 shell double")
    if src:
        cube = H.Cube(src)
        path = hx.path("shells_moved.h5")
        shutil.copyfile(src, path)
        v = move_compressive_energy(cube.v, cube.box, 3, 5, 1.02)
        write_velocity(path, v, np.float64)
        ref = X.reference(v, cube.box)
        c.check("[numpy] moved energy keeps the total share 0.6 and e_total",
                abs(ref["energy"]["compressive_fraction"] - 0.6) < 1e-12
                and abs(ref["energy"]["total"] - 0.5) < 1e-12,
                f"share={ref['energy']['compressive_fraction']:.15f} e={ref['energy']['total']:.15f}",
                "Parseval (common practice)")
        label = "cf=0.6 shell, shells 3/5 altered"
        run, lines = run_check(c, hx, label, path, want_rc=1)
        if lines:
            ws = worst_shell_share(ref, 0.6, 1, int(math.floor(cube.attrs["kmax"] + 0.5)),
                                   1e-20 * ref["energy"]["total"])
            line_is(c, label, lines, "share, worst shell", False, ws)
            line_is(c, label, lines, "compressive share", True, ref["energy"]["compressive_fraction"])
            line_is(c, label, lines, "rms velocity", True, ref["rms_3d"])
    src = made.get("zeta=0.5 none single")
    if src:
        cube = H.Cube(src)
        path = hx.path("single_vy.h5")
        shutil.copyfile(src, path)
        v = cube.v.copy()
        v[1] *= 0.98
        write_velocity(path, v, np.float32)
        label = "zeta=0.5 single with vy x 0.98"
        run, lines = run_check(c, hx, label, path, want_rc=1)
        if lines:
            line_is(c, label, lines, "rms velocity", False)
            line_is(c, label, lines, "compressive share as drawn", False)

    # ------------------------------------------------------ --expect
    # foreign: alpha grad phi + beta ABC with share 0.3, scaled to rms 1.5
    cells, box = (32, 32, 16), (1.0, 1.0, 0.5)
    Xc, Yc, Zc = X.grid_coords(cells, box)
    g = potential_gradient(cells, box, 1.0)
    kx, ky, kz = 2 * math.pi / box[0], 2 * math.pi * 2 / box[1], 2 * math.pi / box[2]
    abc = np.stack([np.sin(kz * Zc) + 0.5 * np.cos(ky * Yc), 0.8 * np.sin(kx * Xc) + np.cos(kz * Zc),
                    0.5 * np.sin(ky * Yc) + 0.8 * np.cos(kx * Xc)])
    eg = 0.5 * np.mean(np.sum(g ** 2, axis=0))
    ea = 0.5 * np.mean(np.sum(abc ** 2, axis=0))
    beta = math.sqrt(eg * (1 / 0.3 - 1) / ea)
    v = g + beta * abc
    v *= 1.5 / math.sqrt(np.mean(np.sum(v ** 2, axis=0)))
    path = hx.path("foreign_mix.h5")
    vec = X.write_foreign(path, v, order="zyx")
    base = ["--vector", vec, "--box", ",".join(map(str, box))]
    ref = X.reference(v, box)
    run, lines = run_check(c, hx, "foreign --expect fraction=0.3,vrms=1.5", path,
                           base + ["--expect", "fraction=0.3,vrms=1.5"], want_rc=0)
    if lines:
        line_is(c, "foreign expect", lines, "compressive share", True, 0.3, tol=1e-12, target=0.3)
        line_is(c, "foreign expect", lines, "rms velocity", True, 1.5, tol=1e-12, target=1.5)
        c.check("[foreign expect] lines: exactly what --expect asked", sorted(lines) ==
                ["compressive share", "largest mean component", "rms velocity"], str(sorted(lines)))
    for lab, opts, rc in (
            ("--expect fraction=0.35 (default tolerance 0.01)", ["--expect", "fraction=0.35"], 1),
            ("--expect fraction=0.305 (default tolerance 0.01)", ["--expect", "fraction=0.305"], 0),
            ("--expect fraction=0.305 --tolerance fraction=0.001",
             ["--expect", "fraction=0.305", "--tolerance", "fraction=0.001"], 1),
            ("--expect vrms=1.6", ["--expect", "vrms=1.6"], 1),
            ("--expect vrms=1.51 (within 1 %)", ["--expect", "vrms=1.51"], 0),
            ("--expect vrms=1.6 --tolerance vrms=0.1", ["--expect", "vrms=1.6", "--tolerance", "vrms=0.1"], 0)):
        run_check(c, hx, "foreign " + lab, path, base + opts, want_rc=rc)
    # a mean fails the vrms request even when the rms matches
    path_m = hx.path("foreign_mean.h5")
    vm = v + np.array([0.1, 0.0, 0.0])[:, None, None, None]
    rms_m = math.sqrt(np.mean(np.sum(vm ** 2, axis=0)))
    X.write_foreign(path_m, vm, order="zyx")
    run, lines = run_check(c, hx, "foreign with mean 0.1, --expect vrms=rms", path_m,
                           base + ["--expect", f"vrms={rms_m!r}"], want_rc=1)
    if lines:
        line_is(c, "foreign mean", lines, "rms velocity", True, rms_m)
        line_is(c, "foreign mean", lines, "largest mean component", False, 0.1, tol=1e-12)
    # --expect slope: every mode of shell s gets power s^-(S+2) with a random
    # phase (Hermitian), so the mode-count-compensated shell spectrum
    # E_s 4 pi s^2 / modes_s = 4 pi s^-S exactly: slope S, zero residual
    S = 2.0
    cells_s = (32, 32, 32)
    wn = X.Wavenumbers(cells_s, (1.0, 1.0, 1.0))
    nyq = np.zeros(wn.k2.shape, bool)
    for a in range(3):
        nyq |= np.abs(wn.n[a]) == cells_s[a] // 2
    amp = np.where((wn.shell > 0) & ~nyq, np.maximum(wn.shell, 1) ** (-(S + 2) / 2), 0.0)
    rng = np.random.default_rng(8)
    comps = []
    for _ in range(3):
        th = rng.random(amp.shape) * 2 * np.pi
        neg = np.roll(np.flip(th), 1, axis=(0, 1, 2))  # theta at -k
        comps.append(np.fft.ifftn(amp * np.exp(0.5j * (th - neg))).real * amp.size)
    vs = np.stack(comps)
    path_s = hx.path("foreign_slope.h5")
    X.write_foreign(path_s, vs, order="zyx")
    ref_s = X.reference(vs, (1.0, 1.0, 1.0), fit=(2, 8))
    c.check("[numpy] shell-power field: compensated slope = 2, stderr ~ 0",
            abs(ref_s["slope"]["value"] - S) < 1e-10 and ref_s["slope"]["stderr"] < 1e-10,
            f"slope={ref_s['slope']['value']:.15f} stderr={ref_s['slope']['stderr']:.1e}", X.SRC_LSQ)
    run, lines = run_check(c, hx, "shell-power --expect slope=2", path_s,
                           ["--vector", "/u,/v,/w", "--expect", "slope=2"], want_rc=0)
    if lines:
        line_is(c, "shell-power", lines, "spectral slope", True, S, tol=1e-10)
        c.check("[shell-power] slope stderr ~ 0 (exact power law)",
                run.json["slope"]["stderr"] < 1e-10, f"stderr={run.json['slope']['stderr']:.2e}", X.SRC_LSQ)
    run_check(c, hx, "shell-power --expect slope=2.2 (default tolerance 0.15)", path_s,
              ["--vector", "/u,/v,/w", "--expect", "slope=2.2"], want_rc=1)
    run_check(c, hx, "shell-power --expect slope=2.2 --tolerance slope=0.25", path_s,
              ["--vector", "/u,/v,/w", "--expect", "slope=2.2", "--tolerance", "slope=0.25"], want_rc=0)
    # --expect replaces the request a helmix file records
    src = made.get("cf=0.3 total double")
    if src:
        run, lines = run_check(c, hx, "helmix cf=0.3 --expect fraction=0.5", src,
                               ["--expect", "fraction=0.5"], want_rc=1)
        if lines:
            c.check("[helmix --expect] only the expected line is judged",
                    sorted(lines) == ["compressive share"], str(sorted(lines)))
    # --check on a foreign cube without --expect: nothing to check -> bad input
    run = X.inspect(hx, path, "--check", *base, ranks=2)
    ln = run.lines()
    c.check("[foreign --check without --expect] exit 2, one 'helmix: error:' line naming --expect",
            run.rc == 2 and len(ln) == 1 and ln[0].startswith("helmix: error:") and "--expect" in ln[0],
            f"rc={run.rc} stderr={ln}", "helmix specification (exit 2 = bad input)")


if __name__ == "__main__":
    H.run_main("test_inspect_check", __doc__, body)
