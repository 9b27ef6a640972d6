#!/usr/bin/python3
"""`helmix inspect` on a velocity in a density: the state it reports and judges.

1. Foreign cubes written with numpy/h5py (16 x 16 x 32 cells, box 1 x 1 x 2
   given by --box, double precision): ln rho = mu + sigma_s g with g a
   standardized random field, so the std of ln rho is sigma_s to round-off;
   a velocity whose mass-weighted mean is removed, scaled so that
   sigma_3D = Mach * c_s, plus a uniform flow that gives the net momentum P0.
   Every number of the JSON "state" block must equal (1e-10) both the value
   built in and an independent numpy recomputation; without --sound-speed
   and --gravity the Mach number and the virial parameter are null, and a
   cube without a density has no state. The same file on 1 and 3 ranks gives
   the same state. A single-precision copy agrees with numpy on the stored
   values (1e-10).
2. `helmix make` of a cloud (uniform sphere of 50 Msun in a 1 pc box, contrast
   10, virial parameter 1, 32^3, single precision): inspect finds the density
   itself, its state equals numpy's over the recorded cloud (1e-10) and
   --check passes; copies altered with h5py fail on the lines that must fail
   and pass on the others: velocity x 1.1 (dispersion, Mach, virial), density
   x 1.1 (virial, mean density), a uniform flow added (net momentum).
3. `helmix make` of a lognormal density (sigma_s 1.2) whose mix was asked
   for sqrt(rho) v (compressive share 0.4, double precision): inspect
   decomposes sqrt(rho) v without being told, --check passes with the asked
   sigma_s and the recorded share, and the share it measures equals numpy's
   share of sqrt(rho) v (while the share of v itself is a different number).
4. `helmix make` of a windowed Bonnor-Ebert cloud (Mach 2, rotation removed,
   double precision): --check passes with the asked Mach number at 1e-9, the
   state equals numpy's, and the spectral slope, which a window does not
   keep, is shown for information only.
5. Bad input (exit 2, one error line): --sound-speed and --gravity that are not
   numbers > 0, and a file whose mix was asked for sqrt(rho) v without its
   density.

Definitions (helmix specification, matching make): cell centres
x_i = (i + 1/2) dx; the region is the cloud (centre distance <= R) or the box
with R = max(L)/2; sigma_3D^2 = sum_c of the mass-weighted variance over the
region (common practice for mass weighting); Mach = sigma_3D / c_s;
alpha_vir = 5 (sigma_3D^2 / 3) R / (G M_R) (Bertoldi & McKee 1992, ApJ 395,
140); P = sum rho v dV; mean and std of ln rho volume-weighted over the box.
"""

import math
import shutil
import sys

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

SRC_BM = "alpha_vir = 5 sigma_1D^2 R / (G M), Bertoldi & McKee 1992, ApJ 395, 140"
SRC_MASS = "mass-weighted dispersion about the mass-weighted mean (common practice)"
SRC_LN = "mean and population std of ln rho, numpy.mean / numpy.std (numpy documentation)"
SRC_MOM = "net momentum sum rho v dV (common practice)"
SRC_HELM = X.SRC_HELM
GRID = "/data/grid_0000000000"


# ----------------------------------------------------------------------------
# the independent reference
# ----------------------------------------------------------------------------

def state_reference(v, rho, box, cs=None, G=None, center=None, radius=None):
    """The state of v (3, Nz, Ny, Nx) in rho (Nz, Ny, Nx), float64, numpy only.
    center/radius: the cloud region; None: the whole box, R = max(L)/2."""
    v = np.asarray(v, np.float64)
    rho = np.asarray(rho, np.float64)
    Nz, Ny, Nx = rho.shape
    cells = (Nx, Ny, Nz)
    dV = box[0] * box[1] * box[2] / (Nx * Ny * Nz)
    if center is None:
        mask = np.ones(rho.shape, bool)
        R = 0.5 * max(box)
    else:
        Xc, Yc, Zc = X.grid_coords(cells, box)
        dist = np.sqrt((Xc - center[0]) ** 2 + (Yc - center[1]) ** 2 + (Zc - center[2]) ** 2)
        mask = dist <= radius
        R = radius
    MR = float(np.sum(rho[mask]))
    mean_R = [float(np.sum(rho[mask] * v[c][mask]) / MR) for c in range(3)]
    s2 = sum(float(np.sum(rho[mask] * (v[c][mask] - mean_R[c]) ** 2)) / MR for c in range(3))
    sigma = math.sqrt(s2)
    M = float(np.sum(rho)) * dV
    vrms = float(np.sqrt(np.mean(np.sum(v ** 2, axis=0))))
    P = [float(np.sum(rho * v[c])) * dV for c in range(3)]
    ln = np.log(rho)
    r = {"mass": M, "density_mean": float(np.mean(rho)),
         "ln_density_mean": float(np.mean(ln)), "sigma_s": float(np.std(ln)),
         "velocity_mean": [float(np.mean(v[c])) for c in range(3)], "velocity_rms": vrms,
         "radius": R, "region_mass": MR * dV, "sigma_3d": sigma,
         "mach": sigma / cs if cs else None,
         "virial": 5.0 * (s2 / 3.0) * R / (G * MR * dV) if G else None,
         "momentum": P, "momentum_relative": math.sqrt(sum(p * p for p in P)) / (M * vrms),
         "_cells_in_region": int(np.count_nonzero(mask))}
    return r


def compare_state(c, label, st, ref, rtol=1e-10, skip=()):
    """Every number of the JSON state block against the reference."""
    if not isinstance(st, dict):
        c.fail(f"[{label}] JSON holds a state block", repr(st)[:200])
        return
    srcs = {"sigma_3d": SRC_MASS, "mach": SRC_MASS, "virial": SRC_BM, "sigma_s": SRC_LN,
            "ln_density_mean": SRC_LN, "momentum": SRC_MOM, "momentum_relative": SRC_MOM}
    vscale = ref["velocity_rms"]
    pscale = ref["mass"] * vscale
    for key, want in ref.items():
        if key.startswith("_") or key in skip:
            continue
        got = st.get(key, "missing")
        if want is None:
            c.check(f"[{label}] state.{key} is null", got is None, f"inspect={got}")
            continue
        # values that vanish by construction get a floor on the scale they are small against
        floor = 1e-12 * {"momentum": pscale, "velocity_mean": vscale, "momentum_relative": 1.0}.get(key, 0.0)
        ok, q, i = X._worst(got, want, rtol, floor)
        g = np.ravel(np.asarray(got, dtype=object))
        w = np.ravel(np.asarray(want, dtype=object))
        det = f"worst err/tol={q:.2e}"
        if isinstance(i, int) and i < len(g):
            det += f" inspect={X._num(g[i]):.15g} numpy={X._num(w[i]):.15g}"
        c.check(f"[{label}] state.{key} = numpy (rtol {rtol:g})", ok, det, srcs.get(key, "common practice"))


def read_file(path):
    with h5py.File(path, "r") as f:
        g = f[GRID]
        v = np.stack([g["velocity_" + a][...].astype(np.float64) for a in "xyz"])
        rho = g["density"][...].astype(np.float64)
        st = {k: H._plain(x) for k, x in f["/helmix/state"].attrs.items()}
        box = tuple(np.asarray(f["/simulation_parameters"].attrs["domain_right_edge"], float)
                    - np.asarray(f["/simulation_parameters"].attrs["domain_left_edge"], float))
    return v, rho, st, box


def check_run(c, hx, label, path, opts=(), want_rc=0):
    # runs expected to fail go without the launcher (one rank): its teardown after a
    # non-zero exit costs seconds
    run = X.inspect(hx, path, "--check", *opts, ranks=2 if want_rc == 0 else 0)
    c.check(f"[{label}] inspect --check exits {want_rc}", run.rc == want_rc,
            f"rc={run.rc}" + ("" if run.rc == want_rc else "\n" + run.describe() + "\n" + run.stdout[-2500:]))
    return run, X.verdict_lines(c, label, run) if run.rc in (0, 1) else {}


# ----------------------------------------------------------------------------
# 1. foreign cubes
# ----------------------------------------------------------------------------

def foreign(c, hx):
    cells, box = (16, 16, 32), (1.0, 1.0, 2.0)
    Nx, Ny, Nz = cells
    dV = box[0] * box[1] * box[2] / (Nx * Ny * Nz)
    sigma_s, mu, cs, mach, G = 0.8, 0.3, 0.2, 4.0, 0.05
    P0 = np.array([0.7, -0.4, 0.25])
    g = X.random_field(cells, box, seed=5, nongauss=False)[0]
    g = (g - g.mean()) / g.std()
    rho = np.exp(mu + sigma_s * g)
    M = float(np.sum(rho)) * dV
    u = X.random_field(cells, box, seed=6)
    u -= (np.sum(rho[None] * u, axis=(1, 2, 3)) / np.sum(rho))[:, None, None, None]
    u *= mach * cs / math.sqrt(float(np.sum(rho[None] * u ** 2)) / float(np.sum(rho)))
    v = u + (P0 / M)[:, None, None, None]
    path = hx.path("foreign_state.h5")
    X.write_foreign(path, v, order="zyx", extra={"/rho": rho})
    base = ["--vector", "/u,/v,/w", "--density", "/rho", "--box", "1,1,2"]
    ref = state_reference(v, rho, box, cs=cs, G=G)
    # the construction itself, in numpy (so the reference is known to mean what it says)
    built = {"sigma_s": sigma_s, "ln_density_mean": mu, "sigma_3d": mach * cs, "mach": mach, "momentum": P0.tolist(),
             "virial": 5.0 * ((mach * cs) ** 2 / 3.0) * 1.0 / (G * M), "radius": 1.0}
    ok = all(np.allclose(ref[k], w, rtol=1e-12, atol=0) for k, w in built.items())
    c.check("[numpy] the foreign cube holds what was built in (sigma_s, Mach, P, alpha_vir, R = max(L)/2)", ok,
            f"sigma_s={ref['sigma_s']:.15g} mach={ref['mach']:.15g} P={ref['momentum']}", SRC_BM)
    run = X.inspect(hx, path, *base, "--sound-speed", cs, "--gravity", G, ranks=2)
    if c.check("[foreign] inspect --density --sound-speed --gravity exits 0", run.ok, "" if run.ok else run.describe()):
        st = run.json["state"] if run.json else None
        compare_state(c, "foreign 2 ranks", st, ref)
        if isinstance(st, dict):
            srcs = {"virial": SRC_BM, "sigma_3d": SRC_MASS, "mach": SRC_MASS, "momentum": SRC_MOM,
                    "radius": "R = max(L)/2 without a cloud (helmix specification)"}
            for k, w in built.items():
                ok, q, _ = X._worst(st[k], w, 1e-10, 0.0)
                c.check(f"[foreign] state.{k} = the value built in (rtol 1e-10)", ok, f"inspect={st[k]} built={w}",
                        srcs.get(k, SRC_LN))
            c.check("[foreign] region is the whole box (cloud false, centre = box centre)",
                    st["cloud"] is False and np.allclose(st["cloud_center"], [0.5, 0.5, 1.0], rtol=0, atol=1e-15),
                    f"cloud={st['cloud']} centre={st['cloud_center']}")
        # --density keeps its meaning: the decomposition is of sqrt(rho) v
        c.check("[foreign] --density: sqrt(rho) v decomposed (mass_weighted, share = numpy's of sqrt(rho) v)",
                run.json is not None and run.json["mass_weighted"] is True and
                abs(run.json["energy"]["compressive_fraction"] -
                    X.reference(v, box, rho=rho)["energy"]["compressive_fraction"]) < 1e-10,
                f"share={run.json['energy']['compressive_fraction'] if run.json else None}", SRC_HELM)
    # one and three ranks: the same sums
    r1 = X.inspect(hx, path, *base, "--sound-speed", cs, "--gravity", G, ranks=1)
    r3 = X.inspect(hx, path, *base, "--sound-speed", cs, "--gravity", G, ranks=3)
    if r1.ok and r3.ok and run.ok:
        ok, worst, key, missing = X.json_diff(r1.json["state"], r3.json["state"], 1e-12,
                                              floors={"momentum": 1e-13 * ref["mass"] * ref["velocity_rms"]})
        c.check("[foreign] state on 1 and 3 ranks agrees (rtol 1e-12)", ok, f"worst {worst:.1e} at {key} {missing}",
                "reductions in double (helmix specification)")
    else:
        c.fail("[foreign] inspect on 1 and 3 ranks exits 0", r1.describe() + r3.describe())
    # --expect judges a foreign cube's state: the values built in pass, 10 % off fails
    exp = f"mach={mach},sigma_s={sigma_s},virial={built['virial']!r}"
    run = X.inspect(hx, path, *base, "--sound-speed", cs, "--gravity", G, "--check", "--expect", exp, ranks=2)
    lines = X.verdict_lines(c, "foreign --expect", run)
    X.expect_lines(c, "foreign --expect", lines, passing=("Mach number", "virial parameter", "sigma_s of ln rho"))
    c.check("[foreign --expect] exit 0 when the state is what was built in", run.rc == 0, run.describe()[:300],
            X.SRC_RULE)
    run = X.inspect(hx, path, *base, "--sound-speed", cs, "--gravity", G, "--check", "--expect", f"mach={1.1 * mach}",
                    ranks=2)
    lines = X.verdict_lines(c, "foreign --expect 1.1 mach", run)
    X.expect_lines(c, "foreign --expect 1.1 mach", lines, failing=("Mach number",))
    c.check("[foreign --expect] exit 1 when the Mach number asked for is 10 % off", run.rc == 1, f"rc {run.rc}",
            X.SRC_RULE)
    # no sound speed, no G: no Mach number, no virial parameter
    run = X.inspect(hx, path, *base, ranks=2)
    if c.check("[foreign] inspect --density alone exits 0", run.ok, "" if run.ok else run.describe()):
        compare_state(c, "foreign without c_s and G", run.json["state"], state_reference(v, rho, box))
    # no density: no state
    run = X.inspect(hx, path, "--vector", "/u,/v,/w", "--box", "1,1,2", "--sound-speed", cs, ranks=2)
    c.check("[foreign] without a density the state is null", run.ok and run.json["state"] is None,
            run.describe() if not run.ok else str(run.json["state"])[:100])
    # single precision: the stored values, read in double
    path32 = hx.path("foreign_state32.h5")
    X.write_foreign(path32, v, order="zyx", extra={"/rho": rho.astype(np.float32)}, dtype=np.float32)
    v32 = v.astype(np.float32).astype(np.float64)
    rho32 = rho.astype(np.float32).astype(np.float64)
    run = X.inspect(hx, path32, *base, "--sound-speed", cs, "--gravity", G, ranks=2)
    if c.check("[foreign float32] inspect exits 0", run.ok, "" if run.ok else run.describe()):
        compare_state(c, "foreign float32", run.json["state"], state_reference(v32, rho32, box, cs=cs, G=G))


# ----------------------------------------------------------------------------
# 2. a cloud made by helmix
# ----------------------------------------------------------------------------

CLOUD = """[grid]
cells = 32
box = 1
[units]
length = 1 pc
velocity = 1 km/s
mass = 1 Msun
[density]
model = sphere
radius = 0.3
mass = 50
contrast = 10
[amplitude]
virial = 1
[gas]
temperature = 10 K
"""


def altered(hx, src, name, change):
    """A copy of src whose datasets {name: function of the stored values} are replaced."""
    dst = hx.path(name)
    shutil.copyfile(src, dst)
    with h5py.File(dst, "a") as f:
        for key, fn in change.items():
            ds = f[GRID][key]
            ds[...] = fn(ds[...].astype(np.float64)).astype(ds.dtype)
    return dst


def cloud(c, hx):
    mk = hx.make(CLOUD, ranks=2, name="cloud")
    if not c.check("[cloud] helmix make exits 0", mk.ok, "" if mk.ok else mk.describe()):
        return
    v, rho, st, box = read_file(mk.out)
    ref = state_reference(v, rho, box, cs=st["sound_speed"], G=st["G_code"], center=st["cloud_center"],
                          radius=st["cloud_radius"])
    c.check("[numpy] the cloud region holds cells, fewer than the box", 0 < ref["_cells_in_region"] < rho.size,
            f"{ref['_cells_in_region']} of {rho.size} cells")
    c.check("[numpy] the file holds the asked virial parameter 1 (float32: 1e-5)",
            abs(ref["virial"] - 1.0) < 1e-5 and st["virial_asked"] == 1.0, f"alpha_vir={ref['virial']:.9f}", SRC_BM)
    run, lines = check_run(c, hx, "cloud", mk.out)
    if run.json:
        c.check("[cloud] no --density needed: state present, v itself decomposed (mix weight volume)",
                isinstance(run.json["state"], dict) and run.json["mass_weighted"] is False,
                f"mass_weighted={run.json['mass_weighted']}")
        compare_state(c, "cloud", run.json["state"], ref)
        if isinstance(run.json["state"], dict):
            c.check("[cloud] region = the recorded cloud", run.json["state"]["cloud"] is True and
                    run.json["state"]["radius"] == st["cloud_radius"], str(run.json["state"]["cloud_center"]))
    X.expect_lines(c, "cloud", lines, passing=("virial parameter", "Mach number as made", "dispersion sigma_3D as made",
                                             "sigma_s of ln rho as made", "mean density as made",
                                             "net momentum |P|/(M vrms)", "rms velocity"))
    ln = lines.get("virial parameter")
    if ln:
        c.check("[cloud] the virial line judges the asked value 1 at 1e-5 (float32)",
                ln["target"] == 1.0 and ln["asked"] == 1.0 and abs(ln["tolerance"] - 1e-5) < 1e-12 and abs(ln["measured"] - ref["virial"]) < 1e-10,
                str(ln), SRC_BM)
    # velocity x 1.1: sigma_3D and Mach x 1.1, alpha_vir x 1.21; the density lines still pass
    p = altered(hx, mk.out, "cloud_v11.h5", {"velocity_" + a: (lambda x: 1.1 * x) for a in "xyz"})
    run, lines = check_run(c, hx, "cloud velocity x 1.1", p, want_rc=1)
    X.expect_lines(c, "cloud velocity x 1.1", lines,
                 passing=("sigma_s of ln rho as made", "mean density as made", "net momentum |P|/(M vrms)"),
                 failing=("Mach number as made", "virial parameter", "dispersion sigma_3D as made"))
    # density x 1.1: alpha_vir / 1.1 and the mean density fail; Mach and sigma_s do not move
    p = altered(hx, mk.out, "cloud_rho11.h5", {"density": lambda x: 1.1 * x})
    run, lines = check_run(c, hx, "cloud density x 1.1", p, want_rc=1)
    X.expect_lines(c, "cloud density x 1.1", lines,
                 passing=("Mach number as made", "sigma_s of ln rho as made", "net momentum |P|/(M vrms)"),
                 failing=("virial parameter", "mean density as made"))
    # a uniform flow of 1 % of vrms: the net momentum fails, the dispersion about the mean does not
    vb = 0.01 * ref["velocity_rms"]
    p = altered(hx, mk.out, "cloud_bulk.h5", {"velocity_x": lambda x: x + vb})
    run, lines = check_run(c, hx, "cloud with a uniform flow", p, want_rc=1)
    X.expect_lines(c, "cloud with a uniform flow", lines, passing=("Mach number as made", "virial parameter"),
                 failing=("net momentum |P|/(M vrms)",))


# ----------------------------------------------------------------------------
# 3. a lognormal density with the mix asked for sqrt(rho) v
# ----------------------------------------------------------------------------

LOGNORMAL = """[grid]
cells = 32
[density]
model = lognormal
sigma_s = 1.2
[mix]
weight = mass
compressive_fraction = 0.4
[output]
precision = double
"""


def lognormal(c, hx):
    mk = hx.make(LOGNORMAL, ranks=2, name="lognormal")
    if not c.check("[lognormal] helmix make exits 0", mk.ok, "" if mk.ok else mk.describe()):
        return
    v, rho, st, box = read_file(mk.out)
    with h5py.File(mk.out, "r") as f:
        rec = float(f["/helmix"].attrs["realized_compressive_fraction"])
        weight = H._plain(f["/helmix"].attrs["mix_weight"])
    share_w = X.reference(v, box, rho=rho)["energy"]["compressive_fraction"]
    share_v = X.reference(v, box)["energy"]["compressive_fraction"]
    c.check("[numpy] the share of sqrt(rho) v is the recorded one; the share of v is not",
            weight == "mass" and abs(share_w - rec) < 1e-9 and abs(share_v - rec) > 1e-3,
            f"sqrt(rho) v {share_w:.12f}, v {share_v:.6f}, recorded {rec:.12f}", SRC_HELM)
    run, lines = check_run(c, hx, "lognormal", mk.out)
    js = run.json
    if js:
        c.check("[lognormal] sqrt(rho) v decomposed without --density (mix_weight = mass)",
                js["mass_weighted"] is True and abs(js["energy"]["compressive_fraction"] - share_w) < 1e-10,
                f"inspect {js['energy']['compressive_fraction']:.12f} numpy {share_w:.12f}", SRC_HELM)
        compare_state(c, "lognormal", js["state"], state_reference(v, rho, box, cs=st["sound_speed"], G=st["G_code"]))
    X.expect_lines(c, "lognormal", lines, passing=("compressive share as drawn", "sigma_s of ln rho", "rms velocity",
                                                 "net momentum as made", "dispersion sigma_3D as made"))
    ln = lines.get("sigma_s of ln rho")
    if ln:
        c.check("[lognormal] sigma_s judged against the asked 1.2 at 1e-9 x 1.2 (double)",
                ln["target"] == 1.2 and ln["asked"] == 1.2 and abs(ln["tolerance"] - 1.2e-9) < 1e-20, str(ln), SRC_LN)
    ln = lines.get("rms velocity")
    if ln:
        c.check("[lognormal] the rms line is of v itself, not of sqrt(rho) v",
                abs(ln["measured"] - float(np.sqrt(np.mean(np.sum(v ** 2, axis=0))))) < 1e-12, str(ln),
                "rms, common practice")
    # a file whose mix was asked for sqrt(rho) v but that lost its density: bad input, one line
    p = hx.path("lognormal_no_density.h5")
    shutil.copyfile(mk.out, p)
    with h5py.File(p, "a") as f:
        del f[GRID + "/density"]
    run = X.inspect(hx, p, ranks=0, json_name=None)
    ln = run.lines()
    c.check("[lognormal without its density] exit 2, one error line naming --density",
            run.rc == 2 and len(ln) == 1 and ln[0].startswith("helmix: error:") and "--density" in ln[0],
            f"rc={run.rc} {ln}", "helmix specification (exit 2 = bad input)")


def bad_options(c, hx, path):
    for opt, val in (("--sound-speed", "0"), ("--sound-speed", "-1"), ("--gravity", "abc"), ("--gravity", "1,2")):
        run = X.inspect(hx, path, opt, val, ranks=0, json_name=None)
        ln = run.lines()
        c.check(f"[bad input] {opt} {val}: exit 2, one error line naming the option",
                run.rc == 2 and len(ln) == 1 and ln[0].startswith("helmix: error:") and opt in ln[0],
                f"rc={run.rc} {ln}", "helmix specification (exit 2 = bad input)")


# ----------------------------------------------------------------------------
# 4. a windowed Bonnor-Ebert cloud with its rotation removed
# ----------------------------------------------------------------------------

WINDOWED = CLOUD.replace("model = sphere\nradius = 0.3\nmass = 50\n", "model = bonnor-ebert\nmass = 5\n") \
    .replace("virial = 1", "mach = 2") + "[velocity]\nwindow = true\nremove_rotation = true\n[output]\nprecision = double\n"


def windowed(c, hx):
    mk = hx.make(WINDOWED, ranks=2, name="windowed")
    if not c.check("[windowed] helmix make exits 0", mk.ok, "" if mk.ok else mk.describe()):
        return
    v, rho, st, box = read_file(mk.out)
    ref = state_reference(v, rho, box, cs=st["sound_speed"], G=st["G_code"], center=st["cloud_center"],
                          radius=st["cloud_radius"])
    run, lines = check_run(c, hx, "windowed", mk.out)
    if run.json:
        compare_state(c, "windowed", run.json["state"], ref)
    X.expect_lines(c, "windowed", lines, passing=("Mach number", "virial parameter as made", "net momentum |P|/(M vrms)",
                                                "sigma_s of ln rho as made", "compressive share as drawn"))
    ln = lines.get("spectral slope")
    c.check("[windowed] the slope of a windowed velocity is information only (tolerance null)",
            ln is not None and ln["tolerance"] is None and ln["passed"] is None, str(ln),
            "a real-space window convolves the spectrum (convolution theorem, common practice)")
    ln = lines.get("Mach number")
    if ln:
        c.check("[windowed] the Mach line judges the asked 2 at 1e-9 (double)",
                ln["target"] == 2.0 and ln["asked"] == 2.0 and abs(ln["measured"] - ref["mach"]) < 1e-12, str(ln), SRC_MASS)


def body(args, hx, c):
    foreign(c, hx)
    cloud(c, hx)
    lognormal(c, hx)
    windowed(c, hx)
    bad_options(c, hx, hx.path("foreign_state.h5"))


if __name__ == "__main__":
    H.run_main("test_inspect_state", __doc__, body)
