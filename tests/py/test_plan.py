#!/usr/bin/python3
"""helmix plan predicts what helmix make then measures: for plain single and double cubes, a
lognormal density, the shaped cloud recipe of ics/, a magnetic field with faces and the velocity's
parts, at 96^3-128^3 on 1 and 2 ranks, the predicted peak memory per rank (for the draws make used)
is within 10 % of the peak RSS make records in /helmix peak_rss_bytes, the file size within 2 % of
os.path.getsize, and the transform count equals the one this test derives from the recipe (and the
c2r count make's --timings records). A --mem-per-rank budget too small for the run exits 2 with
the numbers, for plan and for make, and make creates nothing.

Sources: peak RSS as getrusage ru_maxrss of every rank, reduced to the largest (recorded by make;
Linux getrusage(2)); file sizes by the operating system (os.path.getsize); the transforms of each
phase from the pipeline DEVELOPERS.md describes ("How a make run flows", cloud and magnetic
sections), counted here from the recipe, not from plan's code.
"""
import json
import os

import h5py

import hxcheck

ICS = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "ics")

PLAIN = {"grid": {"cells": 96}, "spectrum": {"slope": 2, "kmin": 1}, "mix": {"zeta": 0.5},
         "amplitude": {"vrms": 1}, "random": {"seed": 5}}
LOGNORMAL = {"grid": {"cells": 96}, "density": {"model": "lognormal", "mean": 1, "sigma_s": 1},
             "density_spectrum": {"slope": 2}, "spectrum": {"slope": 2}, "mix": {"zeta": 0.5},
             "velocity": {"remove_bulk": "false"}, "amplitude": {"vrms": 1}, "random": {"seed": 6}}


def ini_with(recipe, **sections):
    """A copy of a recipe dict with some sections' keys replaced or added."""
    out = {s: dict(k) for s, k in recipe.items()}
    for s, keys in sections.items():
        out.setdefault(s, {}).update(keys)
    return out


def expected_transforms(kind):
    """c2r transforms of make and r2c of its analysis, from the recipe's semantics."""
    if kind == "plain":
        return 3, 0                     # one pass: x, y, z
    if kind == "parts":
        return 3 + 6, 0                 # the velocity, then its two parts of three components
    if kind == "lognormal":
        return 1 + 3, 0                 # s = ln(rho / rho_0), then the velocity in one pass
    if kind == "shaped":                # window and removal: correction, measuring, writing passes
        return 3 * 3, 3                 # and inspect's three r2c of the written velocity
    if kind == "magnetic":              # uniform density: one-pass velocity, B cell and face
        return 3 + 3 + 3, 0
    raise ValueError(kind)


CASES = [
    # name, recipe (dict or ics file), --set, kind, ranks, draws
    ("plain single", PLAIN, [], "plain", 1, "keep"),
    ("plain single", PLAIN, ["grid.cells=128"], "plain", 2, "regenerate"),
    ("plain double", ini_with(PLAIN, output={"precision": "double"}), [], "plain", 2, "keep"),
    ("plain double", ini_with(PLAIN, output={"precision": "double"}), ["grid.cells=128"], "plain", 1, "regenerate"),
    ("lognormal density", LOGNORMAL, [], "lognormal", 1, "regenerate"),
    ("lognormal density", LOGNORMAL, ["grid.cells=128"], "lognormal", 2, "keep"),
    ("shaped cloud (ics/be_core_subsonic)", "be_core_subsonic.ini", ["grid.cells=96"], "shaped", 2, "regenerate"),
    ("shaped cloud (ics/be_core_subsonic)", "be_core_subsonic.ini", ["grid.cells=128"], "shaped", 1, "keep"),
    ("magnetic with faces (ics/magnetised_filament)", "magnetised_filament.ini", ["grid.cells=96"], "magnetic", 1,
     "keep"),
    ("magnetic with faces (ics/magnetised_filament)", "magnetised_filament.ini", ["grid.cells=96"], "magnetic", 2,
     "regenerate"),
    ("parts", ini_with(PLAIN, output={"parts": "true"}), [], "parts", 2, "keep"),
    ("parts", ini_with(PLAIN, output={"parts": "true"}), ["grid.cells=128"], "parts", 1, "regenerate"),
]


def recipe_file(hx, recipe, tag):
    if isinstance(recipe, str):
        return os.path.join(ICS, recipe)
    path = hx.path(tag + ".ini")
    with open(path, "w") as f:
        f.write(hxcheck.recipe_text(recipe))
    return path


def plan(hx, ini, sets, ranks, extra=()):
    argv = ["plan", ini, "--ranks", str(ranks), "--json"] + list(extra)
    for s in sets:
        argv += ["--set", s]
    proc, cmd, _ = hx.launch(argv, ranks=0)
    return proc


def body(args, hx, c):
    for i, (name, recipe, sets, kind, ranks, draws) in enumerate(CASES):
        tag = f"case{i:02d}"
        ini = recipe_file(hx, recipe, tag)
        sets = sets + [f"output.draws={draws}"]
        label = f"[{name}, {' '.join(s for s in sets)}, {ranks} rank{'s' if ranks > 1 else ''}]"
        proc = plan(hx, ini, sets, ranks)
        if not c.check(f"{label} plan --json exits 0", proc.returncode == 0, proc.stderr.strip()[:300]):
            continue
        p = json.loads(proc.stdout)
        out = hx.path(tag + ".h5")
        timings = hx.path(tag + ".json")
        argv = ["make", ini, "-o", out, "--quiet", "--timings", timings] + sum((["--set", s] for s in sets), [])
        mproc, _, _ = hx.launch(argv, ranks=ranks)
        if not c.check(f"{label} make exits 0", mproc.returncode == 0, mproc.stderr.strip()[:300]):
            continue
        with h5py.File(out, "r") as f:
            a = f["/helmix"].attrs
            rss = float(a["peak_rss_bytes"])
            used = a.get("draws", "regenerated")
            used = used.decode() if isinstance(used, bytes) else str(used)
        mem = p["memory_keep"] if used == "kept" else p["memory_regenerate"]
        c.check(f"{label} make used the draws asked for", used == {"keep": "kept", "regenerate": "regenerated"}[draws],
                used, "recipe [output] draws")
        err = mem["peak"] / rss - 1
        c.check(f"{label} predicted peak per rank within 10 % of make's peak RSS", abs(err) <= 0.10,
                f"{mem['peak'] / 2**20:.1f} MiB vs {rss / 2**20:.1f} MiB ({100 * err:+.1f} %)",
                "getrusage ru_maxrss, largest rank")
        size = os.path.getsize(out)
        ferr = p["file"]["bytes"] / size - 1
        c.check(f"{label} predicted file size within 2 %", abs(ferr) <= 0.02,
                f"{p['file']['bytes']:.0f} vs {size} bytes ({100 * ferr:+.3f} %)", "os.path.getsize")
        c2r, r2c = expected_transforms(kind)
        t = p["transforms"]
        c.check(f"{label} transforms: {c2r} c2r + {r2c} r2c", t["total"] == c2r + r2c and t["analysis"] == r2c,
                f"plan {t}", "DEVELOPERS.md: how a make run flows")
        if os.path.exists(timings):
            with open(timings) as f:
                phases = json.load(f).get("phases", [])
            done = sum(int(ph.get("transforms", 0)) for ph in phases if ph.get("name") == "transform")
            c.check(f"{label} make's --timings counted the planned c2r transforms", done == c2r,
                    f"{done} vs {c2r}", "make --timings")

    # A budget the run cannot fit: plan and make exit 2 with the numbers; make creates nothing.
    ini = recipe_file(hx, ini_with(PLAIN, output={"precision": "double"}), "budget")
    sets = ["grid.cells=128"]
    proc = plan(hx, ini, sets, 1, extra=["--mem-per-rank", "30MiB"])
    lines = [ln for ln in hxcheck.mpi_noise_free_lines(proc.stderr) if ln.startswith("helmix")]
    c.check("plan with --mem-per-rank 30MiB below the peak exits 2 with one line naming peak and budget",
            proc.returncode == 2 and len(lines) == 1 and "MiB" in lines[0] and "30.0 MiB" in lines[0],
            f"rc {proc.returncode}: {lines}", "plan.h: hx_plan_verdict")
    out = hx.path("budget.h5")
    mproc, _, _ = hx.launch(["make", ini, "-o", out, "--quiet", "--mem-per-rank", "30MiB", "--set", sets[0]], ranks=1)
    left = [f for f in os.listdir(hx.tmp) if f.startswith("budget.h5")]
    c.check("make with the same budget exits 2 and leaves no file", mproc.returncode == 2 and not left,
            f"rc {mproc.returncode}, files {left}: {mproc.stderr.strip()[:200]}", "make refuses before creating")
    proc = plan(hx, ini, sets, 1, extra=["--mem-per-rank", "1Gi"])
    c.check("plan with a budget that fits exits 0 and keeps the draws (auto)",
            proc.returncode == 0 and json.loads(proc.stdout)["draws"] == "keep", proc.stderr.strip()[:200])
    proc = plan(hx, ini, sets, 1, extra=["--mem-per-rank", "lots"])
    c.check("a malformed --mem-per-rank exits 2", proc.returncode == 2, proc.stderr.strip()[:200])
    proc, _, _ = hx.launch(["plan", ini, "--ranks", "2"], ranks=2)
    c.check("plan launched on two processes is refused with exit 2", proc.returncode == 2, proc.stderr.strip()[:200])


if __name__ == "__main__":
    hxcheck.run_main("plan", __doc__, body)
