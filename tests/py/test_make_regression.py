#!/usr/bin/python3
"""Regression: the velocity of recipes written before the cloud features is bit-identical.

The SHA-256 digests below (first 32 hex digits of dataset[()].tobytes() of velocity_x, _y, _z)
were recorded from helmix as it was before the density, units and amplitude rules were added,
on this machine, each cube made on 2 ranks with `helmix make RECIPE -o FILE`. The recipes (and
the spectrum table) are copied here as they were then, so later edits of ics/ cannot move the
reference (they are the texts of ics/ at commit ee65451; later commits dropped their explicit
kmax lines, which equal the defaults). Then:
  * demo64 without its kmax line (kmax defaults to N/2 - 1 = 31) gives the same digests;
  * adding [density] model = uniform leaves the velocity bit-identical (a uniform density needs
    no bulk removal and has its own random stream);
  * adding [density] model = lognormal, sigma_s = 1 with remove_bulk = false leaves the velocity
    bit-identical, the lognormal density depends on the seed, and it does not change when the
    velocity's recipe changes (each field its own random stream);
  * with remove_bulk left at auto (on for a lognormal density) the velocity is the old one minus
    its mass-weighted mean, rescaled to the asked rms: v = s (v_old - v_b), recomputed with numpy
    from the written density.
Bit-identity needs the same FFTW and MPI build as the recording; the rank count is 2 throughout.
Every case runs with [output] compute = double (helmix then computed every field in double; the
default now follows the file's precision), and with the draws kept (the default here), which
must give the bits of regenerated draws.
"""

import hashlib
import sys

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

SRC_REC = ("digests recorded from the previous helmix (before the cloud features), 2 ranks, "
           "this machine")
SRC_STREAM = "helmix recipe documentation: each field (velocity, density) has its own random stream"
SRC_BULK = ("removal of the mass-weighted mean velocity, then the volume 3D rms rescaled to vrms "
            "(common practice; helmix recipe documentation of remove_bulk and vrms)")
GRID = "data/grid_0000000000"

# ---------------------------------------------------------------------------- recipes, verbatim
DEMO64 = """\
# helmix demo (an invented scenario): a 64^3 patch of a made-up quiescent molecular cloud,
# driven by nothing in particular, with the "natural" mix of an isotropic random field
# (zeta = 0.5, about one third of the kinetic energy in compressive modes) and a
# Burgers-like spectrum E(k) ~ k^-2. Box and velocities in code units (box side 1, rms 1).
[grid]
cells = 64
box = 1.0

[spectrum]
shape = power
slope = 2.0
kmin = 1
kmax = 31

[mix]
zeta = 0.5

[amplitude]
vrms = 1.0

[random]
seed = 2026

[output]
file = demo64.h5
precision = single
"""

MERGER = """\
# helmix example (an invented scenario): gas in the overlap region of two made-up colliding
# galaxies, where tidal compression pushes the turbulence toward curl-free modes. We ask for
# exactly 70 % of the kinetic energy in compressive modes in every shell, energy injected
# on large scales only (a band between k = 1 and k = 4), at 128^3 in a box of 2 code lengths.
[grid]
cells = 128
box = 2.0

[spectrum]
shape = band
kmin = 1
kmax = 4

[mix]
compressive_fraction = 0.7
exact = shell

[amplitude]
vrms = 1.0

[random]
seed = 77

[output]
file = merger_compressive.h5
precision = single
"""

SHEET = """\
# helmix example (an invented scenario): a thin sheet of post-shock gas, 128 x 128 x 32 cells
# in a 4 x 4 x 1 box, with a user-measured spectrum read from a table (sheet_spectrum.dat,
# also invented) and purely solenoidal motions (zeta = 1), in double precision.
[grid]
cells = 128 128 32
box = 4 4 1

[spectrum]
shape = table
table = sheet_spectrum.dat
kmin = 1
kmax = 60

[mix]
zeta = 1.0

[amplitude]
vrms = 0.5

[random]
seed = 9
amplitudes = gaussian

[output]
file = sheet_table.h5
precision = double
"""

SHEET_TABLE = """\
# invented spectrum for ics/sheet_table.ini: E(k), k in units of 2 pi / max(L)
# a flat injection range that steepens to k^-5/3 and then to k^-3
1    1.0
4    1.0
16   0.0992
40   0.0159
64   0.0039
"""

CASES = [
    # label, recipe name, recipe text, --set overrides, digests of velocity_x, _y, _z
    ("1 demo64", "demo64", DEMO64, (),
     ("6db6228accaacb0b9f1f80c4f0e54fb9", "81393e529428df860638dc1f385199c0", "94c0e9bd13789d7ebf81c1247c11738a")),
    ("2 merger_compressive 32^3", "merger_compressive", MERGER, ("grid.cells=32",),
     ("86b2a5080e06fe074b57ea1a942a0266", "078cb502a7b4f69373b5017593829163", "054138578e93d7543168becd8e768333")),
    ("3 sheet_table 32^3 kmax 15", "sheet_table", SHEET, ("grid.cells=32", "spectrum.kmax=15"),
     ("a2cc3b4a00b4059789f992d8a83a3608", "e778e758392a70edea810dfdf10b2ed0", "bca7696f84ddfe655cd9e3a1dce94df3")),
    ("4 demo64 exact=total double", "demo64", DEMO64, ("mix.exact=total", "output.precision=double"),
     ("8597fd8c7402cd46ae9f9972d3be8d72", "c5b93d1cdfc2a70ce4c089164c57c1e5", "83a529a66052fbdf199722ed14217fad")),
]
DEMO_DIGESTS = CASES[0][4]

UNIFORM = "\n[density]\nmodel = uniform\n"
LOGNORMAL = "\n[density]\nmodel = lognormal\nsigma_s = 1\n"
NO_BULK = "\n[velocity]\nremove_bulk = false\n"


def digests(path):
    with h5py.File(path, "r") as f:
        return tuple(hashlib.sha256(f[f"{GRID}/velocity_{a}"][()].tobytes()).hexdigest()[:32] for a in "xyz")


def read(path, name):
    with h5py.File(path, "r") as f:
        return f[f"{GRID}/{name}"][()]


def velocity(path):
    with h5py.File(path, "r") as f:
        return np.stack([f[f"{GRID}/velocity_{a}"][()].astype(np.float64) for a in "xyz"])


def make(hx, c, label, name, text, sets=()):
    # the digests were recorded when every field was computed in double: a single-precision
    # file of that time is reproduced with compute = double (the default follows the file)
    run = hx.make(text, ranks=2, sets=tuple(sets) + ("output.compute=double",), name=name)
    ok = c.check(f"[{label}] helmix make exits 0 (2 ranks)", run.ok,
                 f"{run.seconds:.2f} s" if run.ok else run.describe())
    return run.out if ok else None


def body(args, hx, c):
    with open(hx.path("sheet_spectrum.dat"), "w") as f:  # the table beside its recipe
        f.write(SHEET_TABLE)

    out4 = None
    for i, (label, name, text, sets, want) in enumerate(CASES):
        out = make(hx, c, label, f"case{i + 1}_{name}", text, sets)
        if out is None:
            continue
        got = digests(out)
        c.check(f"[{label}] velocity_x, _y, _z bit-identical to the recorded digests", got == want,
                "got " + " ".join(got) + (" (want " + " ".join(want) + ")" if got != want else ""), SRC_REC)
        if i == 3:
            out4 = out

    # ---- the kmax default (N/2 - 1 = 31 at 64 cells) equals the explicit kmax = 31
    lab = "1b demo64 without its kmax line"
    out = make(hx, c, lab, "demo64_no_kmax", DEMO64.replace("kmax = 31\n", ""))
    if out is not None:
        got = digests(out)
        c.check(f"[{lab}] velocity bit-identical to demo64's recorded digests", got == DEMO_DIGESTS,
                " ".join(got), SRC_REC + "; largest wavenumber below Nyquist as the default kmax (common practice)")

    # ---- a uniform density beside the demo: velocity unchanged, density = 1 everywhere
    lab = "U demo64 + uniform density"
    out = make(hx, c, lab, "demo64_uniform", DEMO64 + UNIFORM)
    if out is not None:
        got = digests(out)
        c.check(f"[{lab}] velocity bit-identical to demo64's recorded digests", got == DEMO_DIGESTS,
                " ".join(got), SRC_REC + "; " + SRC_STREAM)
        rho = read(out, "density")
        c.check(f"[{lab}] density dataset (64,64,64) and 1 (the default mean) in every cell",
                rho.shape == (64, 64, 64) and bool(np.all(rho == 1.0)),
                f"shape {rho.shape}, min {rho.min()}, max {rho.max()}", "helmix recipe documentation ([density] mean)")

    # ---- a lognormal density without bulk removal: velocity unchanged; density by seed
    lab = "L demo64 + lognormal, remove_bulk=false"
    outs = {}
    for tag, sets in (("seed 2026", ()), ("seed 2027", ("random.seed=2027",)),
                      ("seed 2026, zeta 1", ("mix.zeta=1.0",))):
        outs[tag] = make(hx, c, f"{lab}, {tag}", "demo64_lognormal_" + tag.replace(" ", "").replace(",", "_"),
                         DEMO64 + LOGNORMAL + NO_BULK, sets)
    o1, o2, o3 = outs["seed 2026"], outs["seed 2027"], outs["seed 2026, zeta 1"]
    if o1 is not None:
        got = digests(o1)
        c.check(f"[{lab}] velocity bit-identical to demo64's recorded digests", got == DEMO_DIGESTS,
                " ".join(got), SRC_REC + "; " + SRC_STREAM)
        rho = read(o1, "density").astype(np.float64)
        sl = float(np.std(np.log(rho)))
        c.check(f"[{lab}] density: volume mean 1 and std of ln rho = sigma_s = 1 (float32, rel < 1e-6)",
                abs(np.mean(rho) - 1) < 1e-6 and abs(sl - 1) < 1e-6, f"mean {np.mean(rho):.9f}, std ln {sl:.9f}",
                "definition of the lognormal recipe: rho = mean exp(s)/<exp(s)>, std(s) = sigma_s")
    if o1 is not None and o2 is not None:
        r1, r2 = read(o1, "density"), read(o2, "density")
        d = float(np.max(np.abs(np.log(r1.astype(float)) - np.log(r2.astype(float)))))
        c.check(f"[{lab}] the density differs between seeds 2026 and 2027", d > 0.5,
                f"max |ln rho_2026 - ln rho_2027| = {d:.3f}", SRC_STREAM)
    if o1 is not None and o3 is not None:
        same = np.array_equal(read(o1, "density"), read(o3, "density"))
        vdiff = digests(o3) != digests(o1)
        c.check(f"[{lab}] changing the velocity's mix (zeta 0.5 -> 1) changes the velocity but not the density",
                same and vdiff, f"density bit-identical {same}, velocity changed {vdiff}", SRC_STREAM)

    # ---- remove_bulk at auto (on for a lognormal density): v = s (v_old - v_b)
    lab = "A demo64 exact=total double + lognormal, remove_bulk=auto"
    out = make(hx, c, lab, "demo64_lognormal_auto", DEMO64 + LOGNORMAL, CASES[3][3])
    if out is not None and out4 is not None:
        v_old = velocity(out4)
        v_new = velocity(out)
        rho = read(out, "density").astype(np.float64)
        vb = np.array([np.sum(rho * v_old[a]) for a in range(3)]) / np.sum(rho)
        u = v_old - vb[:, None, None, None]
        s = 1.0 / np.sqrt(np.mean(np.sum(u ** 2, axis=0)))  # vrms = 1 in the recipe
        err = float(np.max(np.abs(v_new - s * u)) / np.max(np.abs(v_new)))
        c.check(f"[{lab}] velocity = s (v_old - v_b), v_b the mass-weighted mean, s the vrms rescale "
                "(max rel err < 1e-12)", err < 1e-12 and np.linalg.norm(vb) > 1e-4,
                f"max err {err:.2e}, |v_b| {np.linalg.norm(vb):.4f}, s {s:.9f}", SRC_BULK)


if __name__ == "__main__":
    H.run_main("test_make_regression", __doc__, body)
