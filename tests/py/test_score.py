#!/usr/bin/python3
"""`helmix score`: grading a tool's answers against a suite manifest.

The test writes its own small suite with numpy/h5py, following the manifest
contract (version 1): band-limited fields on 16^3 cells (|n_a| <= 4, so no
Nyquist mode holds energy) whose Helmholtz parts are known by construction,
  * pure_comp   v = grad phi (curl-free; its solenoidal part is "zero"),
  * pure_sol    v = curl A (divergence-free; compressive part "zero"),
  * analytic_tg the Taylor-Green flow (sin x cos y, -cos x sin y, 0), share 0,
  * mix_0.3     a grad phi + b curl A with a share of exactly 0.3, and a variant
                with the flow smoothed on scale 0.25 removed,
  * bulk_mean   the mix plus a uniform flow (the mean enters no energy),
  * layout_xyz  one 4-D float32 dataset, xyz order, component axis last,
  * density     sqrt(rho) v with rho = w^2 / <w^2>, w > 0 band-limited, so that
                sqrt(rho) v stays band-limited (mass weighting),
  * ladder_16, ladder_32  one Fourier series sampled at 16^3 and 32^3.
Every answer (share, shells, parts) is computed here from the stored values
with numpy.fft: Helmholtz split by projection on k_hat (common practice),
energies 1/2 sum |v_hat|^2 over n != 0 with v_hat = fftn(v) / N (Parseval,
common practice), shell s = rint(|k| / (2 pi / max L)) as helmix documents.

Then: exact answers pass (exit 0); answers moved beyond a tolerance fail
(exit 1) on that line only, and inside it still pass; every malformed input
exits 2 with one line naming the cube and the key; the documents
`helmix inspect --json` writes, given as they are, pass (helmix grading
itself, variants by their remove_scale); --json holds the table's verdicts
and the errors recomputed here; --plot writes a valid PNG and PDF. When
`helmix suite` exists, suite --quick -> inspect --json of every cube (with its
layout options, --density for mass weighting, --remove-scale for variants) ->
score passes every case, and the suite's own parts given as a tool's grade
with error 0.
"""

import json
import math
import os
import subprocess
import sys

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

N = 16
KMAX = 4
ELL = 0.25
TOL = {"compressive_share": 1e-6, "shells_relative": 1e-6, "parts_rms_relative": 1e-6,
       "reason": "double-precision values; float32 values are exact doubles too"}
SRC_HELM = "Helmholtz decomposition by projection on k_hat (common practice)"
SRC_PARS = "Parseval's theorem for the DFT, numpy.fft conventions (common practice)"
SRC_GAUSS = "Gaussian filter transfer function exp(-k^2 l^2 / 2) (common practice)"
SRC_SPEC = "helmix score --help (grading rules) and the manifest contract, version 1"
SRC_PNG = "W3C PNG specification 2nd ed. 2003"
SRC_PDF = "ISO 32000-1:2008 (%PDF- header) and poppler's pdftoppm"


# ----------------------------------------------------------------------------
# fields and their answers, by numpy
# ----------------------------------------------------------------------------

def wavevectors(shape, box=(1.0, 1.0, 1.0)):
    """k_x, k_y, k_z (physical) broadcast to shape (Nz, Ny, Nx)."""
    Nz, Ny, Nx = shape
    n = [np.fft.fftfreq(m, 1.0 / m) for m in (Nz, Ny, Nx)]
    nz, ny, nx = np.meshgrid(*n, indexing="ij")
    Lx, Ly, Lz = box
    return np.stack([2 * np.pi * nx / Lx, 2 * np.pi * ny / Ly, 2 * np.pi * nz / Lz]), max(box)


def band_limited(rng, shape, kmax=KMAX):
    """A real random field whose Fourier modes all have |n_a| <= kmax."""
    f = np.fft.fftn(rng.standard_normal(shape))
    for ax, m in enumerate(shape):
        n = np.abs(np.fft.fftfreq(m, 1.0 / m))
        sl = [None, None, None]
        sl[ax] = slice(None)
        f = f * (n <= kmax)[tuple(sl)]
    return np.real(np.fft.ifftn(f))


def spectral_grad(phi):
    k, _ = wavevectors(phi.shape)
    p = np.fft.fftn(phi)
    return np.stack([np.real(np.fft.ifftn(1j * k[a] * p)) for a in range(3)])


def spectral_curl(A):
    k, _ = wavevectors(A.shape[1:])
    a = [np.fft.fftn(A[i]) for i in range(3)]
    c = [k[1] * a[2] - k[2] * a[1], k[2] * a[0] - k[0] * a[2], k[0] * a[1] - k[1] * a[0]]
    return np.stack([np.real(np.fft.ifftn(1j * ci)) for ci in c])


def decompose(v, box=(1.0, 1.0, 1.0), remove_scale=0.0):
    """Answer of v (3, Nz, Ny, Nx): share, shells [{k, modes, e_comp, e_sol}],
    the solenoidal and compressive parts (mean left out), energies."""
    k, lmax = wavevectors(v.shape[1:], box)
    N3 = v[0].size
    vh = np.stack([np.fft.fftn(v[a]) / N3 for a in range(3)])
    k2 = np.sum(k * k, axis=0)
    if remove_scale > 0:
        vh = vh * (1 - np.exp(-0.5 * k2 * remove_scale ** 2))[None]
    kk = np.where(k2 > 0, k2, 1.0)
    kv = np.sum(k * vh, axis=0)
    comp_h = k * (kv / kk)[None]
    comp_h[:, k2 == 0] = 0
    sol_h = vh - comp_h
    sol_h[:, k2 == 0] = 0
    pc = np.sum(np.abs(comp_h) ** 2, axis=0)
    ps = np.sum(np.abs(sol_h) ** 2, axis=0)
    shell = np.rint(np.sqrt(k2) / (2 * np.pi / lmax)).astype(int)
    shells = []
    for s in range(1, shell.max() + 1):
        m = shell == s
        if m.any():
            shells.append({"k": s, "modes": int(m.sum()), "e_comp": 0.5 * float(pc[m].sum()),
                           "e_sol": 0.5 * float(ps[m].sum())})
    ec, es = 0.5 * float(pc.sum()), 0.5 * float(ps.sum())
    parts = [np.stack([np.real(np.fft.ifftn(h[a] * N3)) for a in range(3)]) for h in (sol_h, comp_h)]
    answer = {"compressive_share": ec / (ec + es), "energy_total": ec + es, "energy_compressive": ec,
              "energy_solenoidal": es, "divergence_rms": 0.0, "vorticity_rms": 0.0, "shells": shells}
    return answer, parts[0], parts[1]


class Suite:
    """The test's own manifest and cube files, in tmp/suite."""

    def __init__(self, tmp):
        self.dir = os.path.join(tmp, "suite")
        os.makedirs(self.dir, exist_ok=True)
        self.cubes = []
        self.fields = {}      # name -> (v as stored, in (3, Nz, Ny, Nx), float64)
        self.tool_parts = {}  # name -> (sol, comp) computed independently of the answer

    def add(self, name, category, v, desc, parts=True, variants=None, ladder=None, layout="zyx",
            weighting="volume", density=None, tool_parts=None):
        path = os.path.join(self.dir, name + ".h5")
        lay = {"component_axis": None, "order": "zyx", "cells": list(v.shape[:0:-1]), "box": [1.0, 1.0, 1.0],
               "precision": "double", "density": None}
        with h5py.File(path, "w") as f:
            if layout == "xyz4":  # one 4-D float32 set (Nx, Ny, Nz, 3)
                arr = np.ascontiguousarray(np.transpose(v, (3, 2, 1, 0))).astype(np.float32)
                f.create_dataset("/p", data=arr)
                v = np.transpose(arr.astype(np.float64), (3, 2, 1, 0))  # what is stored
                lay.update(vector="/p", component_axis="last", order="xyz", precision="single")
            else:
                for a, c in enumerate("xyz"):
                    f.create_dataset("/vel/" + c, data=v[a])
                lay["vector"] = ["/vel/x", "/vel/y", "/vel/z"]
            field = v
            if density is not None:
                f.create_dataset("/rho", data=density)
                lay["density"] = "/rho"
                field = np.sqrt(density)[None] * v
            ans, sol, comp = decompose(field)
            entry_parts = None
            if parts:
                entry_parts = {}
                for label, p in (("solenoidal", sol), ("compressive", comp)):
                    if np.sqrt(np.mean(np.sum(p ** 2, axis=0))) < 1e-12 * np.sqrt(np.mean(np.sum(field ** 2, axis=0))):
                        entry_parts[label] = "zero"
                        continue
                    names = []
                    for a, c in enumerate("xyz"):
                        dname = f"/parts/{label}_{c}"
                        # the parts keep the cube's axis order
                        f.create_dataset(dname, data=X.to_xyz(p[a]) if lay["order"] == "xyz" else p[a])
                        names.append(dname)
                    entry_parts[label] = names
        var = {}
        for vname, scale in (variants or {}).items():
            a, _, _ = decompose(field, remove_scale=scale)
            var[vname] = {"description": f"flow smoothed on {scale} removed", "remove_scale": scale, "answer": a}
        cube = {"name": name, "category": category, "description": desc, "source": "written by test_score.py",
                "file": name + ".h5", "layout": lay, "weighting": weighting, "answer": ans, "variants": var,
                "parts": entry_parts, "tolerance": dict(TOL)}
        if ladder:
            cube["ladder"] = ladder
        self.cubes.append(cube)
        self.fields[name] = field
        if tool_parts is not None:
            self.tool_parts[name] = tool_parts
        return cube

    def write(self, name="manifest.json", version=1):
        doc = {"suite": "test_score suite", "suite_version": version, "helmix_version": "test",
               "conventions": {"shells": "round(|k| / (2 pi / max L))"}, "cubes": self.cubes}
        path = os.path.join(self.dir, name)
        with open(path, "w") as f:
            json.dump(doc, f, indent=1)
        return path


def build_suite(hx):
    rng = np.random.default_rng(20240611)
    s = Suite(hx.tmp)
    shape = (N, N, N)
    vc = spectral_grad(band_limited(rng, shape))
    vs = spectral_curl(np.stack([band_limited(rng, shape) for _ in range(3)]))
    z = np.zeros_like(vc)
    s.add("pure_comp", "pure", vc, "gradient of a band-limited potential", tool_parts=(z, vc))
    s.add("pure_sol", "pure", vs, "curl of a band-limited vector potential", tool_parts=(vs, z))
    X3, Y3, _ = X.grid_coords((N, N, N), (1, 1, 1))
    tg = np.stack([np.sin(2 * np.pi * X3) * np.cos(2 * np.pi * Y3), -np.cos(2 * np.pi * X3) * np.sin(2 * np.pi * Y3),
                   0 * X3])
    s.add("analytic_tg", "analytic", tg, "Taylor-Green flow", tool_parts=(tg, z))
    ec, es = np.mean(np.sum(vc ** 2, 0)), np.mean(np.sum(vs ** 2, 0))
    a, b = math.sqrt(0.3 / ec), math.sqrt(0.7 / es)
    mix = a * vc + b * vs
    s.add("mix_0.3", "mix", mix, "a grad phi + b curl A, share 0.3", variants={"remove_0.25": ELL},
          tool_parts=(b * vs, a * vc))
    bulk = mix + np.array([0.5, -0.25, 0.0])[:, None, None, None]
    s.add("bulk_mean", "bulk", bulk, "the mix plus a uniform flow", tool_parts=(b * vs, a * vc))
    s.add("layout_xyz", "layout", mix, "one 4-D float32 set, xyz, component last", parts=False, layout="xyz4")
    f = band_limited(rng, shape, 2)
    w = 1 + 0.4 * f / np.max(np.abs(f))  # > 0, so sqrt(w^2) = w stays band-limited
    rho = w ** 2 / np.mean(w ** 2)
    dens = mix / np.sqrt(rho)[None] * np.sqrt(rho).mean()  # sqrt(rho) v = mix * const: band-limited
    s.add("density", "density", dens, "sqrt(rho) v band-limited, mass weighting", parts=False, weighting="mass",
          density=rho)
    # one Fourier series at two resolutions: zero-pad the 16^3 coefficients to 32^3
    for lvl, n in enumerate((16, 32)):
        comps = []
        for comp in mix:
            F = np.fft.fftshift(np.fft.fftn(comp))
            pad = (n - N) // 2
            G = np.pad(F, pad) * (n ** 3 / N ** 3)
            comps.append(np.real(np.fft.ifftn(np.fft.ifftshift(G))))
        s.add(f"ladder_{n}", "ladder", np.stack(comps), "the mix sampled at N", parts=False,
              ladder={"group": "ladder", "level": lvl, "cells": n})
    return s


# ----------------------------------------------------------------------------
# running score
# ----------------------------------------------------------------------------

def score(hx, manifest, results, *opts, ranks=1, name=None):
    """Write results (dict or text) and run `helmix score`; returns (Run, results path)."""
    hx.count += 1
    rpath = os.path.join(hx.tmp, name or f"results_{hx.count:03d}.json")
    with open(rpath, "w") as f:
        f.write(results if isinstance(results, str) else json.dumps(results))
    proc, cmd, dt = hx.launch(["score", manifest, rpath] + [str(o) for o in opts] + ["--quiet"], ranks=ranks)
    return H.Run(proc, rpath, cmd, dt), rpath


def write_tool_parts(hx, suite, fname="tool_parts.h5", perturb=None):
    """The tool's parts of every cube with parts into one file; references for RESULTS."""
    refs = {}
    with h5py.File(os.path.join(hx.tmp, fname), "w") as f:
        for cube in suite.cubes:
            if cube["name"] not in suite.tool_parts or not cube["parts"]:
                continue
            order = cube["layout"]["order"]
            refs[cube["name"]] = {}
            for label, p in zip(("solenoidal", "compressive"), suite.tool_parts[cube["name"]]):
                p = p.copy()
                if perturb and perturb[0] == cube["name"] and perturb[1] == label:
                    p[0] += perturb[2]
                names = []
                for a, c in enumerate("xyz"):
                    d = f"/{cube['name']}/{label}_{c}"
                    f.create_dataset(d, data=X.to_xyz(p[a]) if order == "xyz" else p[a])
                    names.append(f"{fname}:{d}")
                refs[cube["name"]][label] = names
    return refs


def exact_results(suite, refs, shells=True):
    res = {}
    for cube in suite.cubes:
        r = {"compressive_share": cube["answer"]["compressive_share"]}
        if shells:
            r["shells"] = [{"k": s["k"], "e_comp": s["e_comp"], "e_sol": s["e_sol"]} for s in cube["answer"]["shells"]]
        if cube["name"] in refs:
            r["parts"] = refs[cube["name"]]
        res[cube["name"]] = r
    return res


def table_rows(stdout):
    """Rows of the scorecard table: (cube or '' for a continuation, check text, verdict)."""
    rows, inside = [], False
    for ln in stdout.splitlines():
        if ln.startswith("cube ") and "verdict" in ln:
            inside = True
            continue
        if inside:
            if not ln.strip():
                break
            rows.append((ln.split("  ")[0].strip() if not ln.startswith(" ") else "", ln, ln.split()[-1]))
    return rows


def verdicts_by_cube(stdout):
    out, cur = {}, None
    for cube, _, v in table_rows(stdout):
        if cube:
            cur = cube.split(" [")[0]
            out[cur] = True
        out[cur] = out[cur] and v == "PASS"
    return out


def helmix_err(run, full=False):
    """helmix's own stderr lines (the launcher's banner left out); with full, the command
    too when the run did not exit as the check expects."""
    text = " | ".join(H.mpi_noise_free_lines(run.stderr))
    return (f"rc {run.rc}: {' '.join(run.cmd)} {text}" if full else text)[:600]


def one_line(run):
    lines = H.mpi_noise_free_lines(run.stderr)
    return lines[0] if len(lines) == 1 else " | ".join(lines)


# ----------------------------------------------------------------------------
# the checks
# ----------------------------------------------------------------------------

def check_exact(hx, c, suite, manifest):
    refs = write_tool_parts(hx, suite)
    res = exact_results(suite, refs)
    run, _ = score(hx, manifest, res, "--json", hx.path("exact.json"))
    c.check("exact answers (share, shells, parts): exit 0", run.rc == 0, run.describe() if run.rc else
            f"{run.seconds:.2f} s", SRC_SPEC)
    rows = table_rows(run.stdout)
    c.check("every table row says PASS", rows and all(v == "PASS" for _, _, v in rows),
            f"{len(rows)} rows: " + "; ".join(r[1] for r in rows if r[2] != "PASS")[:300])
    want = sum(1 + 1 + 2 * (cube["name"] in refs) for cube in suite.cubes)
    c.check("one share row per cube, one shells row, two parts rows where parts were given", len(rows) == want,
            f"{len(rows)} rows, expected {want}", SRC_SPEC)
    c.check("stdout ends with 'verdict: PASS'", "verdict: PASS" in run.stdout.splitlines()[-1] if run.stdout else False,
            run.stdout.splitlines()[-1] if run.stdout else "")
    with open(hx.path("exact.json")) as f:
        js = json.load(f)
    parts_err = max(max(k["parts"]["solenoidal"]["error"], k["parts"]["compressive"]["error"])
                    for k in js["cases"] if k["parts"])
    c.check("tool parts built apart from the answer differ from it by round-off only (< 1e-13 rms)",
            parts_err < 1e-13, f"largest {parts_err:.3g}", SRC_HELM)
    # the same under two ranks and as a plain process (an MPI singleton)
    run2, _ = score(hx, manifest, res, ranks=2, name=os.path.basename(run.out))
    run0, _ = score(hx, manifest, res, ranks=0, name=os.path.basename(run.out))
    c.check("the same on 2 ranks and without mpiexec: exit 0, same table", run2.rc == 0 and run0.rc == 0 and
            run2.stdout == run.stdout and run0.stdout == run.stdout,
            f"rc {run2.rc}, {run0.rc}; {run2.stderr[:200]} {run0.stderr[:200]}")
    return refs, res


def check_beyond(hx, c, suite, manifest, refs, res):
    tol = TOL["compressive_share"]
    # share: 10 x tolerance fails, 0.5 x passes
    for factor, rc in ((10, 1), (0.5, 0)):
        r = json.loads(json.dumps(res))
        r["mix_0.3"]["compressive_share"] += factor * tol
        run, _ = score(hx, manifest, r, "--json", hx.path("beyond.json"))
        verdicts = verdicts_by_cube(run.stdout)
        others = all(v for k, v in verdicts.items() if k != "mix_0.3")
        c.check(f"share moved by {factor} x tolerance: exit {rc}, mix_0.3 {'FAIL' if rc else 'PASS'}, others PASS",
                run.rc == rc and verdicts.get("mix_0.3") == (rc == 0) and others,
                f"rc {run.rc}, mix_0.3 {verdicts.get('mix_0.3')} {helmix_err(run)}", SRC_SPEC)
        with open(hx.path("beyond.json")) as f:
            js = json.load(f)
        case = [k for k in js["cases"] if k["name"] == "mix_0.3"][0]
        c.check(f"--json: share error = measured - answer = {factor} x tolerance",
                abs(case["share"]["error"] - factor * tol) < 1e-12 and case["share"]["tolerance"] == tol,
                f"{case['share']['error']:.6g}")
    # shells: e_sol of shell 2 of pure_comp raised by 1e-4 E_s fails, by 1e-7 E_s passes
    ans = [s for s in suite.cubes[0]["answer"]["shells"] if s["k"] == 2][0]
    e2 = ans["e_comp"] + ans["e_sol"]
    for rel, rc in ((1e-4, 1), (1e-7, 0)):
        r = json.loads(json.dumps(res))
        for s in r["pure_comp"]["shells"]:
            if s["k"] == 2:
                s["e_sol"] += rel * e2
        run, _ = score(hx, manifest, r, "--json", hx.path("shells.json"))
        rows = [row for row in table_rows(run.stdout) if "shells" in row[1]]
        with open(hx.path("shells.json")) as f:
            js = json.load(f)
        case = js["cases"][0]
        c.check(f"e_sol of one shell moved by {rel:g} of its energy: exit {rc}, shells line "
                f"{'FAIL' if rc else 'PASS'}", run.rc == rc and rows[0][2] == ("FAIL" if rc else "PASS"),
                f"rc {run.rc}; {rows[0][1] if rows else run.stderr[:200]}", SRC_SPEC)
        c.check(f"--json: that shell's relative error is {rel:g}, at k = 2", case["shells"]["max_error_k"] == 2 and
                abs(case["shells"]["max_error"] - rel) < 1e-9 * rel + 1e-15,
                f"max_error {case['shells']['max_error']:.6g} at k = {case['shells']['max_error_k']}", SRC_SPEC)
    # parts: a wave of amplitude eps added to x of the tool's solenoidal part of mix_0.3
    field = suite.fields["mix_0.3"]
    frms = np.sqrt(np.mean(np.sum(field ** 2, axis=0)))
    eps = 1e-4 * frms
    X3, _, _ = X.grid_coords((N, N, N), (1, 1, 1))
    bump = eps * np.sin(2 * np.pi * X3)
    refs2 = write_tool_parts(hx, suite, "tool_bad.h5", perturb=("mix_0.3", "solenoidal", bump))
    r = exact_results(suite, refs2)
    run, _ = score(hx, manifest, r, "--json", hx.path("parts.json"))
    if not c.check("a perturbed part: score runs (exit 1)", run.rc == 1, helmix_err(run, full=True)):
        return
    rows = [row for row in table_rows(run.stdout) if "part" in row[1]]
    mixrows = []
    cur = None
    for cube, text, v in table_rows(run.stdout):
        cur = cube or cur
        if cur == "mix_0.3" and "part" in text:
            mixrows.append(v)
    with open(hx.path("parts.json")) as f:
        js = json.load(f)
    case = [k for k in js["cases"] if k["name"] == "mix_0.3"][0]
    expect = np.sqrt(np.mean(bump ** 2)) / frms  # rms over cells of |delta| / rms |field|
    c.check("tool's solenoidal part off by 7e-5 of the field rms: exit 1, mix_0.3 solenoidal FAIL, compressive PASS",
            run.rc == 1 and mixrows == ["FAIL", "PASS"] and sum(v == "FAIL" for _, _, v in rows) == 1,
            f"rc {run.rc}, mix_0.3 parts {mixrows}", SRC_SPEC)
    c.check("--json: the solenoidal part's error = rms(delta) / rms(field), recomputed by numpy",
            abs(case["parts"]["solenoidal"]["error"] - expect) < 1e-6 * expect
            and abs(case["parts"]["field_rms"] - frms) < 1e-12 * frms,
            f"{case['parts']['solenoidal']['error']:.9g} vs {expect:.9g}", "rms of a difference, common practice")
    # a variant named in RESULTS is graded against its own answer
    var = suite.cubes[3]["variants"]["remove_0.25"]["answer"]
    r = json.loads(json.dumps(res))
    r["mix_0.3"] = {"compressive_share": var["compressive_share"], "variant": "remove_0.25",
                    "shells": [{"k": s["k"], "e_comp": s["e_comp"], "e_sol": s["e_sol"]} for s in var["shells"]]}
    run, _ = score(hx, manifest, r)
    c.check("\"variant\": \"remove_0.25\" with the variant's answer: exit 0", run.rc == 0 and "mix_0.3 [remove_0.25]"
            in run.stdout, run.describe() if run.rc else "", SRC_SPEC)
    r["mix_0.3"]["compressive_share"] = suite.cubes[3]["answer"]["compressive_share"]
    r["mix_0.3"].pop("shells")
    run, _ = score(hx, manifest, r)
    c.check("the main answer's share given for that variant: exit 1 (the variant's answer differs by "
            f"{abs(var['compressive_share'] - 0.3):.3g})", run.rc == 1, helmix_err(run, full=True))


def check_bad_input(hx, c, suite, manifest, res):
    def bad(label, results, needles, man=None, ranks=1):
        run, _ = score(hx, man or manifest, results, ranks=ranks)
        lines = H.mpi_noise_free_lines(run.stderr)
        ok = run.rc == 2 and len(lines) == 1 and all(n in lines[0] for n in needles) and run.stdout == ""
        c.check(f"{label}: exit 2, one line naming {', '.join(needles)}, nothing on stdout", ok,
                f"rc {run.rc}: {one_line(run)[:300]}", SRC_SPEC)

    r = json.loads(json.dumps(res))
    del r["pure_sol"]
    bad("a cube missing from RESULTS", r, ["pure_sol", "missing"])
    r = json.loads(json.dumps(res))
    r["mix_0.3"]["compressive_share"] = "0.3"
    bad("a string where the share belongs", r, ["mix_0.3", "compressive_share", "number"])
    r = json.loads(json.dumps(res))
    r["pure_comp"]["shells"][1]["e_comp"] = None
    bad("null where a shell energy belongs", r, ["pure_comp", "shells[1].e_comp", "number"])
    r = json.loads(json.dumps(res))
    r["nonesuch"] = {"compressive_share": 0.5}
    bad("an unknown cube name", r, ["nonesuch", "not in the manifest"])
    r = json.loads(json.dumps(res))
    r["mix_0.3"]["variant"] = "remove_9"
    bad("an unknown variant", r, ["mix_0.3", "variant", "remove_9"])
    bad("an unknown variant, on 2 ranks", r, ["mix_0.3", "variant", "remove_9"], ranks=2)
    bad("RESULTS an array, not an object", "[1, 2]", ["results", "object"])
    bad("RESULTS not JSON", "{\"pure_comp\": ", ["results", "JSON"])
    r = json.loads(json.dumps(res))
    r["layout_xyz"] = 0.3
    bad("a bare number as a cube's value", r, ["layout_xyz", "object"])
    r = json.loads(json.dumps(res))
    r["mix_0.3"]["parts"] = {"solenoidal": ["tool_parts.h5:/nope/x"] * 3, "compressive": "zero"}
    bad("a part dataset that does not exist", r, ["mix_0.3", "parts.solenoidal[0]", "/nope/x"])
    r = json.loads(json.dumps(res))
    r["pure_comp"]["shells"] = [s for s in r["pure_comp"]["shells"] if s["k"] != 3]
    bad("a shell holding energy left out", r, ["pure_comp", "shells", "k = 3"])
    m2 = suite.write("manifest_v2.json", version=2)
    bad("manifest suite_version 2", res, ["suite_version", "version 1"], man=m2)
    bad("an unreadable manifest", res, ["manifest", "cannot read"], man=hx.path("no_such_manifest.json"))
    run, _ = score(hx, manifest, res, "--plot", hx.path("x.svg"))
    c.check("--plot with another extension: exit 2 before grading", run.rc == 2 and ".png or .pdf" in run.stderr,
            one_line(run))


def inspect_json(hx, c, cube, suite_dir, extra=()):
    """`helmix inspect --json` of a manifest cube with its layout options."""
    lay = cube["layout"]
    opts = ["--vector", ",".join(lay["vector"]) if isinstance(lay["vector"], list) else lay["vector"],
            "--order", lay["order"], "--box", ",".join(str(b) for b in lay["box"])]
    if cube["weighting"] == "mass":
        opts += ["--density", lay["density"]]
    run = X.inspect(hx, os.path.join(suite_dir, cube["file"]), *(opts + list(extra)), ranks=2)
    if not run.ok or run.json is None:
        c.fail(f"inspect of {cube['name']} {' '.join(extra)} exits 0 with JSON", run.describe())
        return None
    return run.json


def check_inspect(hx, c, manifest, cubes, suite_dir, label):
    """Every cube's inspect --json given directly; then each variant's by its remove_scale."""
    res, by_var = {}, []
    for cube in cubes:
        res[cube["name"]] = inspect_json(hx, c, cube, suite_dir)
        for vname, v in (cube.get("variants") or {}).items():
            if v.get("remove_scale"):
                by_var.append((cube["name"], vname, v["remove_scale"]))
    if any(v is None for v in res.values()):
        return
    run, _ = score(hx, manifest, res, "--json", hx.path("self.json"))
    rows = table_rows(run.stdout)
    c.check(f"[{label}] `helmix inspect --json` of every cube as RESULTS: exit 0, every row PASS",
            run.rc == 0 and rows and all(v == "PASS" for _, _, v in rows),
            (f"{len(cubes)} cubes, {run.seconds:.2f} s" if run.rc == 0 else
             run.describe() + " " + "; ".join(r[1] for r in rows if r[2] != "PASS")[:600]),
            SRC_SPEC)
    if by_var:
        r = dict(res)
        for name, vname, scale in by_var:
            js = inspect_json(hx, c, [k for k in cubes if k["name"] == name][0], suite_dir,
                              ("--remove-scale", str(scale)))
            if js is None:
                return
            r[name] = js
            run, _ = score(hx, manifest, r)
            c.check(f"[{label}] inspect --remove-scale {scale} of {name} grades against variant {vname}: exit 0",
                    run.rc == 0 and f"{name} [{vname}]" in run.stdout,
                    run.describe() + run.stdout[-600:] if run.rc else "", SRC_GAUSS)
            r[name] = res[name]
    return res


def check_outputs(hx, c, manifest, res):
    png, pdf, jpath = hx.path("score.png"), hx.path("score.pdf"), hx.path("score.json")
    r = json.loads(json.dumps(res))
    r["mix_0.3"]["compressive_share"] += 3e-6  # one failing case, so the page shows one
    run, _ = score(hx, manifest, r, "--plot", png, "--json", jpath)
    c.check("--plot F.png --json F: exit 1 (one case fails), files written", run.rc == 1 and os.path.isfile(png)
            and os.path.isfile(jpath), helmix_err(run, full=True))
    try:
        info = X.read_png(png)
        c.check("PNG signature, IHDR, valid CRCs, IEND; 1800 x 1300 pixels",
                info["crc_ok"] and info["last_chunk"] == b"IEND" and (info["width"], info["height"]) == (1800, 1300),
                f"{info['width']}x{info['height']}", SRC_PNG)
        raw = np.frombuffer(info["raw"], dtype=np.uint8)
        c.check("the page is not blank (> 16 distinct filtered byte values)", len(np.unique(raw)) > 16,
                f"{len(np.unique(raw))} distinct values", SRC_PNG)
    except Exception as e:  # noqa: BLE001
        c.fail("PNG parses", repr(e))
    run, _ = score(hx, manifest, r, "--plot", pdf)
    ok = run.rc == 1 and os.path.isfile(pdf)
    if ok:
        with open(pdf, "rb") as f:
            data = f.read()
        ok = data.startswith(b"%PDF-") and data.rstrip().endswith(b"%%EOF")
        out = hx.path("score_pdf")
        pr = subprocess.run(["pdftoppm", "-png", "-r", "40", pdf, out], capture_output=True, text=True)
        pages = sorted(f for f in os.listdir(hx.tmp) if f.startswith("score_pdf"))
        ok = ok and pr.returncode == 0 and len(pages) == 1
        if ok:
            info = X.read_png(os.path.join(hx.tmp, pages[0]))
            ok = info["width"] > info["height"]
    c.check("--plot F.pdf: %PDF- ... %%EOF, pdftoppm renders one landscape page", ok, helmix_err(run, full=True), SRC_PDF)
    with open(jpath) as f:
        js = json.load(f)
    verdicts = verdicts_by_cube(run.stdout)
    jv = {k["name"]: k["passed"] for k in js["cases"]}
    c.check("--json: per-cube verdicts equal the table's", verdicts == jv and jv["mix_0.3"] is False,
            f"table {verdicts} json {jv}", SRC_SPEC)
    cats = {g["category"]: g for g in js["categories"]}
    c.check("--json: the category summary says mix fails on its share, the rest passes",
            cats["mix"]["failed"] == 1 and cats["mix"]["failed_share"] == 1 and cats["mix"]["failing"] == ["mix_0.3"]
            and all(g["failed"] == 0 for n, g in cats.items() if n != "mix") and js["passed"] is False,
            json.dumps(js["categories"])[:400], SRC_SPEC)


def check_suite(hx, c):
    probe = subprocess.run([hx.exe, "suite", "--help"], capture_output=True, text=True)
    if probe.returncode != 0:
        print("note: `helmix suite` does not exist in this build; the suite round trip is not run")
        return
    sdir = hx.path("hxsuite")
    proc, cmd, dt = hx.launch(["suite", sdir, "--quick", "--quiet"], ranks=2, timeout=170)
    if not c.check("helmix suite --quick exits 0", proc.returncode == 0, f"{dt:.1f} s {proc.stderr[-400:]}"):
        return
    man = os.path.join(sdir, "manifest.json")
    with open(man) as f:
        cubes = json.load(f)["cubes"]
    res = check_inspect(hx, c, man, cubes, sdir, "suite --quick")
    if not res:
        return
    # the suite's own parts given as the tool's: every part is read in its layout and matches
    r, graded = json.loads(json.dumps(res)), 0
    for cube in cubes:
        if cube.get("parts"):
            graded += 1
            r[cube["name"]] = {"compressive_share": cube["answer"]["compressive_share"], "parts": {
                label: v if v == "zero" else [os.path.relpath(os.path.join(sdir, cube["file"]), hx.tmp) + ":" + d
                                              for d in v] for label, v in cube["parts"].items()}}
    run, _ = score(hx, man, r, "--json", hx.path("suite_parts.json"))
    with open(hx.path("suite_parts.json")) as f:
        js = json.load(f)
    errs = [k["parts"][p]["error"] for k in js["cases"] if k["parts"] for p in ("solenoidal", "compressive")]
    c.check(f"[suite --quick] its own parts of {graded} cubes as the tool's parts: exit 0, every error 0",
            run.rc == 0 and len(errs) == 2 * graded and graded > 0 and max(errs) == 0,
            f"{graded} cubes, largest error {max(errs) if errs else None} {helmix_err(run)}", SRC_SPEC)


def body(args, hx, c):
    suite = build_suite(hx)
    manifest = suite.write()
    c.check("the test's own mix has share 0.3 by numpy", abs(suite.cubes[3]["answer"]["compressive_share"] - 0.3) < 1e-12
            and suite.cubes[0]["answer"]["compressive_share"] > 1 - 1e-12
            and suite.cubes[1]["answer"]["compressive_share"] < 1e-12,
            f"{suite.cubes[3]['answer']['compressive_share']!r}", SRC_HELM)
    refs, res = check_exact(hx, c, suite, manifest)
    check_beyond(hx, c, suite, manifest, refs, res)
    check_bad_input(hx, c, suite, manifest, res)
    check_inspect(hx, c, manifest, suite.cubes, suite.dir, "own suite")
    check_outputs(hx, c, manifest, res)
    check_suite(hx, c)


if __name__ == "__main__":
    H.run_main("test_score", __doc__.splitlines()[0], body)
