#!/usr/bin/python3
"""helmix suite: the known-answer cubes and their manifest, checked from the files alone.

`helmix suite --quick` runs on 1 and on 3 ranks. Then:
  * the manifest validates against docs/manifest.schema.json (JSON Schema draft 2020-12; a small
    validator for the keywords the schema uses is below, since no jsonschema package is at hand);
  * both runs hold the same cubes, bit for bit, and the same answers;
  * every stated answer (and variant) equals the numpy recomputation of suite_oracle.py from the
    file: to 1e-10 for double-precision data, 1e-6 for single (the rms vorticity beyond its
    resolution of 1e-7 of the rms gradient, see suite_oracle.py);
  * the real-space parts add up to the field and each is pure (spectral divergence or curl);
  * the textbook flows match their closed forms: Arnold-Beltrami-Childress divergence-free with
    v = curl v / k (Dombre et al. 1986, J. Fluid Mech. 167, 353), Taylor-Green divergence-free
    (Taylor & Green 1937, Proc. R. Soc. A 158, 499), the gradient flow curl-free (common practice);
  * the exact shares, the rising share, the ladder, the layouts, the noise, the bulk flow and
    the mass-weighted density each hold what their description says;
  * bad input and an existing manifest are refused with one line and exit status 2.
"""
import json
import os
import re
import sys

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import suite_oracle as O  # noqa: E402

SCHEMA = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "docs", "manifest.schema.json")
SRC_FFT = "numpy.fft conventions (numpy documentation); Parseval's theorem (common practice)"
SRC_HELM = "Helmholtz decomposition by projection on k (common practice)"
SRC_ABC = "Dombre et al. 1986, J. Fluid Mech. 167, 353"
SRC_TG = "Taylor & Green 1937, Proc. R. Soc. A 158, 499"


# ----------------------------------------------------------------------------
# a validator for the subset of JSON Schema 2020-12 the manifest schema uses
# ----------------------------------------------------------------------------

def _type_ok(x, t):
    if isinstance(t, list):
        return any(_type_ok(x, u) for u in t)
    if t == "object":
        return isinstance(x, dict)
    if t == "array":
        return isinstance(x, list)
    if t == "string":
        return isinstance(x, str)
    if t == "null":
        return x is None
    if t == "boolean":
        return isinstance(x, bool)
    if t == "integer":
        return (isinstance(x, int) and not isinstance(x, bool)) or (isinstance(x, float) and x.is_integer())
    if t == "number":
        return isinstance(x, (int, float)) and not isinstance(x, bool)
    raise ValueError(f"schema type {t} not supported by this validator")


SUPPORTED = {"$schema", "title", "description", "type", "required", "additionalProperties", "properties", "$defs",
             "$ref", "const", "enum", "items", "minItems", "maxItems", "pattern", "minLength", "minimum",
             "exclusiveMinimum", "oneOf", "allOf", "not", "if", "then", "else", "propertyNames"}


def validate(x, schema, root, path="$"):
    """Errors (a list of strings) of instance x against schema (JSON Schema 2020-12 subset)."""
    errs = []
    unknown = set(schema) - SUPPORTED
    if unknown:
        return [f"{path}: schema keywords {sorted(unknown)} not supported by this validator"]
    if "$ref" in schema:
        ref = schema["$ref"]
        assert ref.startswith("#/$defs/"), ref
        errs += validate(x, root["$defs"][ref[len("#/$defs/"):]], root, path)
    if "type" in schema and not _type_ok(x, schema["type"]):
        return errs + [f"{path}: {type(x).__name__} is not of type {schema['type']}"]
    if "const" in schema and not (x == schema["const"] and type(x) is type(schema["const"])):
        errs.append(f"{path}: {x!r} != const {schema['const']!r}")
    if "enum" in schema and not any(x == e and type(x) is type(e) for e in schema["enum"]):
        errs.append(f"{path}: {x!r} not in {schema['enum']}")
    if isinstance(x, str):
        if "pattern" in schema and not re.search(schema["pattern"], x):
            errs.append(f"{path}: {x!r} does not match {schema['pattern']}")
        if "minLength" in schema and len(x) < schema["minLength"]:
            errs.append(f"{path}: shorter than {schema['minLength']}")
    if _type_ok(x, "number"):
        if "minimum" in schema and x < schema["minimum"]:
            errs.append(f"{path}: {x} < minimum {schema['minimum']}")
        if "exclusiveMinimum" in schema and x <= schema["exclusiveMinimum"]:
            errs.append(f"{path}: {x} <= exclusiveMinimum {schema['exclusiveMinimum']}")
    if isinstance(x, list):
        if "minItems" in schema and len(x) < schema["minItems"]:
            errs.append(f"{path}: fewer than {schema['minItems']} items")
        if "maxItems" in schema and len(x) > schema["maxItems"]:
            errs.append(f"{path}: more than {schema['maxItems']} items")
        if "items" in schema:
            for i, y in enumerate(x):
                errs += validate(y, schema["items"], root, f"{path}[{i}]")
    if isinstance(x, dict):
        for key in schema.get("required", []):
            if key not in x:
                errs.append(f"{path}: required key {key!r} missing")
        props = schema.get("properties", {})
        for key, y in x.items():
            if "propertyNames" in schema:
                errs += validate(key, schema["propertyNames"], root, f"{path}.<name {key}>")
            if key in props:
                errs += validate(y, props[key], root, f"{path}.{key}")
            elif "additionalProperties" in schema:
                ap = schema["additionalProperties"]
                if ap is False:
                    errs.append(f"{path}: key {key!r} not allowed")
                elif isinstance(ap, dict):
                    errs += validate(y, ap, root, f"{path}.{key}")
    if "oneOf" in schema:
        n = sum(1 for s in schema["oneOf"] if not validate(x, s, root, path))
        if n != 1:
            errs.append(f"{path}: matches {n} of the oneOf alternatives, not exactly one")
    for s in schema.get("allOf", []):
        errs += validate(x, s, root, path)
    if "not" in schema and not validate(x, schema["not"], root, path):
        errs.append(f"{path}: matches a schema it must not match")
    if "if" in schema:
        branch = "then" if not validate(x, schema["if"], root, path) else "else"
        if branch in schema:
            errs += validate(x, schema[branch], root, path)
    return errs


# ----------------------------------------------------------------------------
# helpers
# ----------------------------------------------------------------------------

def suite(hx, directory, ranks, extra=()):
    proc, cmd, dt = hx.launch(["suite", directory, "--quick", "--quiet"] + list(extra), ranks=ranks, timeout=120)
    return H.Run(proc, directory, cmd, dt)


def load(directory):
    with open(os.path.join(directory, "manifest.json")) as f:
        return json.load(f)


def field_datasets(path):
    """{name: array} of the datasets with three or more axes (the fields, not the small tables)."""
    out = {}
    with h5py.File(path, "r") as f:
        f.visititems(lambda name, obj: out.__setitem__(name, obj[()]) if isinstance(obj, h5py.Dataset) and obj.ndim >= 3 else None)
    return out


def by_name(m):
    return {c["name"]: c for c in m["cubes"]}


def centres(cube):
    """Cell-centre coordinates broadcast to (Nz, Ny, Nx): x, y, z."""
    nx, ny, nz = cube["layout"]["cells"]
    lx, ly, lz = cube["layout"]["box"]
    z, y, x = np.meshgrid(O.cell_centres(nz, lz), O.cell_centres(ny, ly), O.cell_centres(nx, lx), indexing="ij")
    return x, y, z


# ----------------------------------------------------------------------------
# the checks
# ----------------------------------------------------------------------------

def check_schema(c, m, label):
    with open(SCHEMA) as f:
        schema = json.load(f)
    c.check("docs/manifest.schema.json declares JSON Schema draft 2020-12",
            schema.get("$schema") == "https://json-schema.org/draft/2020-12/schema", schema.get("$schema"),
            "JSON Schema 2020-12 specification")
    errs = validate(m, schema, schema)
    c.check(f"[{label}] the manifest validates against docs/manifest.schema.json", not errs, "; ".join(errs[:5]),
            "JSON Schema 2020-12 (core and validation vocabularies)")
    # the validator must be able to say no
    bad = json.loads(json.dumps(m))
    del bad["cubes"][0]["answer"]["shells"]
    bad["cubes"][1]["category"] = "other"
    bad["cubes"][2]["layout"]["component_axis"] = "first"  # three datasets take no component axis
    errs = validate(bad, schema, schema)
    c.check("the validator rejects a manifest with a missing key, a bad category and a stray component axis",
            len(errs) >= 3, f"{len(errs)} errors", "JSON Schema 2020-12")


def check_ranks(c, d1, d3, m1, m3):
    """The same cubes and answers on 1 and 3 ranks."""
    n1, n3 = by_name(m1), by_name(m3)
    c.check("1 and 3 ranks write the same cubes", list(n1) == list(n3), f"{len(n1)} vs {len(n3)}",
            "helmix specification: results independent of the rank count")
    same = total = 0
    worst = 0.0
    for name, cube in n1.items():
        a, b = field_datasets(os.path.join(d1, cube["file"])), field_datasets(os.path.join(d3, cube["file"]))
        if not c.check(f"[{name}] the same datasets on 1 and 3 ranks", sorted(a) == sorted(b), f"{len(a)} / {len(b)}",
                       "helmix specification"):
            continue
        for k in a:
            total += 1
            if np.array_equal(a[k], b[k]):
                same += 1
            else:
                scale = max(float(np.max(np.abs(a[k]))), 1e-300)
                worst = max(worst, float(np.max(np.abs(a[k].astype(np.float64) - b[k]))) / scale)
        if cube["category"] == "analytic":  # closed forms per cell: no reduction enters
            c.check(f"[{name}] closed-form cube bit for bit the same on 1 and 3 ranks",
                    all(np.array_equal(a[k], b[k]) for k in a), "", "helmix specification")
            c.check(f"[{name}] its answer is the same, bit for bit, on 1 and 3 ranks",
                    cube["answer"] == n3[name]["answer"], "", "helmix specification (answers taken on one rank)")
    c.check("every field dataset on 3 ranks equals the 1-rank one bit for bit (sums over ranks are double-double)",
            same == total, f"{same}/{total} bit for bit, largest difference {worst:.1e} of max|v|",
            "helmix specification (issue: suite --quick on 1 and 3 ranks gives identical files)")
    worst_a = 0.0
    for name, cube in n1.items():
        if name in n3:
            for ans1, ans3 in [(cube["answer"], n3[name]["answer"])] + \
                    [(cube["variants"][k]["answer"], n3[name]["variants"][k]["answer"]) for k in cube["variants"]]:
                # compare() allows the vorticity its resolution: here every number must agree exactly
                worst_a = max(worst_a, O.compare(ans1, ans3)[0], abs(ans1["vorticity_rms"] - ans3["vorticity_rms"]))
    c.check("every answer on 3 ranks equals the 1-rank answer exactly", worst_a == 0.0,
            f"largest {worst_a:.1e}", "helmix specification")


def check_oracle(c, d, m, stats):
    """Every stated answer and variant against the numpy recomputation from the file."""
    for cube in m["cubes"]:
        v, rho, dtype, box = O.read_cube(d, cube)
        tol = 1e-10 if cube["layout"]["precision"] == "double" else 1e-6
        c.check(f"[{cube['name']}] stored precision is {cube['layout']['precision']}",
                dtype == (np.float64 if cube["layout"]["precision"] == "double" else np.float32), str(dtype),
                "manifest layout")
        ours = O.answer(v, box, rho=rho if cube["weighting"] == "mass" else None)
        worst, where, modes_ok = O.compare(cube["answer"], ours)
        stats.append((cube["name"], worst))
        c.check(f"[{cube['name']}] the stated answer equals the numpy recomputation (tolerance {tol:g})",
                worst <= tol and modes_ok, f"largest deviation {worst:.1e} ({where}); modes {'ok' if modes_ok else 'DIFFER'}",
                SRC_FFT + "; " + SRC_HELM)
        for key, var in cube["variants"].items():
            vec = None
            if key == "clean":
                vec = ["/data/grid_0000000000/velocity_clean_" + a for a in "xyz"]
            vv, rr, _, _ = O.read_cube(d, cube, vector=vec)
            ours = O.answer(vv, box, remove_scale=var["remove_scale"], rho=rr if cube["weighting"] == "mass" else None)
            worst, where, modes_ok = O.compare(var["answer"], ours)
            stats.append((cube["name"] + ":" + key, worst))
            c.check(f"[{cube['name']}] variant {key} equals the numpy recomputation", worst <= tol and modes_ok,
                    f"largest deviation {worst:.1e} ({where})",
                    SRC_FFT + ("; Gaussian filter exp(-k^2 L^2/2), common practice" if var["remove_scale"] else ""))


def check_parts(c, d, m):
    for cube in m["cubes"]:
        if cube["parts"] is None:
            continue
        name = cube["name"]
        v, _, _, box = O.read_cube(d, cube)
        sol = O.read_part(d, cube, "solenoidal", v.shape)
        comp = O.read_part(d, cube, "compressive", v.shape)
        single = cube["layout"]["precision"] == "single"
        tol = 1e-6 if single else 1e-12
        mean = v.mean(axis=(1, 2, 3), keepdims=True)  # the k = 0 mode belongs to neither part
        err = float(np.max(np.abs(sol + comp - (v - mean))) / np.max(np.abs(v)))
        c.check(f"[{name}] solenoidal + compressive part = the field less its mean", err < tol, f"max rel {err:.1e}",
                SRC_HELM)
        ds = O.divergence_ratio(sol, box) if np.any(sol) else 0.0
        cc = O.curl_ratio(comp, box) if np.any(comp) else 0.0
        c.check(f"[{name}] the solenoidal part is divergence-free", ds < tol, f"rms(k.v)/rms(|k||v|) = {ds:.1e}",
                SRC_FFT)
        c.check(f"[{name}] the compressive part is curl-free", cc < tol, f"rms(k x v)/rms(|k||v|) = {cc:.1e}", SRC_FFT)
        e_c, e_t = O.energy_of(comp, box), cube["answer"]["energy_total"]
        d_e = abs(e_c - cube["answer"]["energy_compressive"]) / e_t
        c.check(f"[{name}] the compressive part's energy is the stated compressive energy", d_e < (1e-6 if single else 1e-10),
                f"{e_c:.12g} vs {cube['answer']['energy_compressive']:.12g}", "Parseval: the parts are orthogonal")


def check_analytic(c, d, m):
    cubes = by_name(m)
    # closed forms worked by hand: ABC <|v|^2> = 3 (A = B = C = 1), so E = 3/2, and curl v = k v gives
    # rms vorticity k sqrt(3); Taylor-Green <|v|^2> = 1/4, E = 1/8, <|w|^2> = 3/4; grad phi:
    # <|v|^2> = 1/4 + 1 + 9/8, E = 19/16, <(lap phi)^2> = 25/4 + 81/8 = 131/8.
    for name, k in (("analytic_abc_k1", 1.0), ("analytic_abc_k2", 2.0)):
        cube = cubes[name]
        v, _, _, box = O.read_cube(d, cube)
        x, y, z = centres(cube)
        ref = np.stack([np.sin(k * z) + np.cos(k * y), np.sin(k * x) + np.cos(k * z), np.sin(k * y) + np.cos(k * x)])
        c.check(f"[{name}] the file holds (sin kz + cos ky, sin kx + cos kz, sin ky + cos kx) at cell centres",
                np.max(np.abs(v - ref)) < 1e-13, f"max diff {np.max(np.abs(v - ref)):.1e}", SRC_ABC)
        c.check(f"[{name}] divergence-free", O.divergence_ratio(v, box) < 1e-13, f"{O.divergence_ratio(v, box):.1e}", SRC_ABC)
        w = O.spectral_curl(v, box)
        err = float(np.max(np.abs(w / k - v)))
        c.check(f"[{name}] v = curl v / k (Beltrami)", err < 1e-12, f"max |curl v / k - v| = {err:.1e}", SRC_ABC)
        a = cube["answer"]
        c.check(f"[{name}] stated share 0, energy 3/2, rms vorticity k sqrt 3, no divergence",
                abs(a["compressive_share"]) < 1e-14 and abs(a["energy_total"] - 1.5) < 1e-12
                and abs(a["vorticity_rms"] - k * np.sqrt(3)) < 1e-11 and a["divergence_rms"] < 1e-11,
                f"{a['compressive_share']:.1e}, {a['energy_total']!r}, {a['vorticity_rms']!r}, {a['divergence_rms']:.1e}",
                SRC_ABC + "; closed form worked by hand")
        sh = a["shells"][int(k) - 1]
        c.check(f"[{name}] all the energy in shell {int(k)}, in its 6 modes", abs(sh["e_sol"] - 1.5) < 1e-12,
                f"{sh['e_sol']!r}", SRC_ABC)
    cube = cubes["analytic_taylor_green"]
    v, _, _, box = O.read_cube(d, cube)
    x, y, z = centres(cube)
    ref = np.stack([np.sin(x) * np.cos(y) * np.cos(z), -np.cos(x) * np.sin(y) * np.cos(z), 0 * x])
    a = cube["answer"]
    c.check("[taylor_green] the file holds the Taylor-Green vortex at cell centres", np.max(np.abs(v - ref)) < 1e-13,
            f"{np.max(np.abs(v - ref)):.1e}", SRC_TG)
    c.check("[taylor_green] divergence-free", O.divergence_ratio(v, box) < 1e-13, f"{O.divergence_ratio(v, box):.1e}", SRC_TG)
    c.check("[taylor_green] stated share 0, energy 1/8 in shell 2, rms vorticity sqrt(3)/2",
            abs(a["compressive_share"]) < 1e-14 and abs(a["energy_total"] - 0.125) < 1e-13
            and abs(a["shells"][1]["e_sol"] - 0.125) < 1e-13 and abs(a["vorticity_rms"] - np.sqrt(3) / 2) < 1e-12,
            f"{a['compressive_share']:.1e}, {a['energy_total']!r}, {a['vorticity_rms']!r}",
            SRC_TG + "; closed form worked by hand")
    cube = cubes["analytic_gradient"]
    v, _, _, box = O.read_cube(d, cube)
    x, y, z = centres(cube)
    ref = np.stack([np.cos(x) * np.sin(2 * y), 2 * np.sin(x) * np.cos(2 * y), -1.5 * np.sin(3 * z)])
    a = cube["answer"]
    c.check("[gradient] the file holds grad(sin x sin 2y + cos(3z)/2) at cell centres", np.max(np.abs(v - ref)) < 1e-13,
            f"{np.max(np.abs(v - ref)):.1e}", "calculus, common practice")
    c.check("[gradient] curl-free", O.curl_ratio(v, box) < 1e-13, f"{O.curl_ratio(v, box):.1e}", "curl grad = 0, common practice")
    c.check("[gradient] stated share 1, energy 19/16 (5/8 in shell 2, 9/16 in shell 3), rms divergence sqrt(131/8)",
            abs(a["compressive_share"] - 1) < 1e-14 and abs(a["energy_total"] - 19 / 16) < 1e-12
            and abs(a["shells"][1]["e_comp"] - 0.625) < 1e-12 and abs(a["shells"][2]["e_comp"] - 0.5625) < 1e-12
            and abs(a["divergence_rms"] - np.sqrt(131 / 8)) < 1e-11 and a["vorticity_rms"] < 1e-11,
            f"{a['compressive_share']!r}, {a['energy_total']!r}, {a['divergence_rms']!r}", "closed form worked by hand")


def check_shares(c, d, m):
    cubes = by_name(m)
    for name, want in (("pure_solenoidal", 0.0), ("pure_compressive", 1.0), ("mix_0.1", 0.1), ("mix_0.5", 0.5),
                       ("mix_0.9", 0.9)):
        v, _, _, box = O.read_cube(d, cubes[name])
        got = O.answer(v, box)["compressive_share"]
        c.check(f"[{name}] the file's compressive share is {want}", abs(got - want) < 1e-12, f"{got!r}",
                "the share asked of helmix (zeta = 1 / 0, or compressive_fraction with exact = total); " + SRC_FFT)
    cube = cubes["mix_rising"]
    v, _, _, box = O.read_cube(d, cube)
    shares = O.shell_shares(O.answer(v, box))
    kmax = max(shares)
    want = {s: 0.1 + 0.8 * (s - 1) / (kmax - 1) for s in shares}
    err = max(abs(shares[s] - want[s]) for s in shares)
    c.check(f"[mix_rising] the share of shell s is 0.1 + 0.8 (s - 1)/(kmax - 1), s = 1..{kmax}", err < 1e-10,
            f"largest deviation {err:.1e}", "the formula the manifest states; " + SRC_FFT)
    c.check("[mix_rising] the share rises: last shell minus first > 0.5", shares[kmax] - shares[1] > 0.5,
            f"{shares[1]:.4f} -> {shares[kmax]:.4f}", "brief of the suite")
    total = O.answer(v, box)["compressive_share"]
    c.check("[mix_rising] no single share describes it: the cube's share lies strictly between the first and last shell's",
            shares[1] + 0.05 < total < shares[kmax] - 0.05, f"{total:.4f}", "definition of the share")


def check_ladder(c, d, m):
    ladder = sorted((cu for cu in m["cubes"] if cu["category"] == "ladder"), key=lambda cu: cu["ladder"]["level"])
    c.check("three ladder levels N/4, N/2, N", [cu["ladder"]["cells"] for cu in ladder] == [8, 16, 32],
            str([cu["ladder"]["cells"] for cu in ladder]), "brief of the suite")
    answers = []
    for cu in ladder:
        v, _, _, box = O.read_cube(d, cu)
        answers.append(O.answer(v, box))
    top = answers[-1]
    kmax = max(O.shell_shares(answers[0]))
    for lvl, a in enumerate(answers[:-1]):
        dev = max(abs(a["shells"][s - 1][key] - top["shells"][s - 1][key]) / top["energy_total"]
                  for s in range(1, kmax + 1) for key in ("e_comp", "e_sol"))
        dev = max(dev, abs(a["energy_total"] - top["energy_total"]), abs(a["compressive_share"] - top["compressive_share"]))
        modes = all(a["shells"][s - 1]["modes"] == top["shells"][s - 1]["modes"] for s in range(1, kmax + 1))
        c.check(f"[ladder] level {lvl} holds the finest level's shells 1..{kmax} (same coefficients)", dev < 1e-12 and modes,
                f"largest deviation {dev:.1e}", "helmix resolution nesting; " + SRC_FFT)


def check_layouts(c, d, m):
    cubes = by_name(m)
    ref, _, _, box = O.read_cube(d, cubes["layout_zyx"])
    for name in ("layout_xyz", "layout_4d_first", "layout_4d_last"):
        v, _, dtype, _ = O.read_cube(d, cubes[name])
        c.check(f"[{name}] holds the values of layout_zyx exactly", np.array_equal(v, ref) and dtype == np.float64, "",
                "manifest layout (axis order, component axis)")
        c.check(f"[{name}] its stated answer is layout_zyx's", cubes[name]["answer"] == cubes["layout_zyx"]["answer"], "",
                "the same values give the same answer")
    v, _, dtype, _ = O.read_cube(d, cubes["layout_single"])
    c.check("[layout_single] holds float32(layout_zyx) exactly", dtype == np.float32 and
            np.array_equal(v, ref.astype(np.float32).astype(np.float64)), str(dtype), "IEEE 754 round to nearest")
    with h5py.File(os.path.join(d, cubes["layout_xyz"]["file"]), "r") as f:
        c.check("[layout_xyz] datasets are (Nx, Ny, Nz) and the file records its box",
                f[cubes["layout_xyz"]["layout"]["vector"][0]].shape == tuple(cubes["layout_xyz"]["layout"]["cells"])
                and np.allclose(f.attrs["box"], cubes["layout_xyz"]["layout"]["box"]), "", "manifest layout")
    cu = cubes["layout_noncubic"]
    nx, ny, nz = cu["layout"]["cells"]
    c.check("[layout_noncubic] a non-cubic grid and box, Nz not a multiple of the default ranks hint 4",
            len({nx, ny, nz}) == 3 and len(set(cu["layout"]["box"])) == 3 and nz % 4 != 0,
            f"{cu['layout']['cells']} in {cu['layout']['box']}", "brief of the suite")


def check_noise(c, d, m):
    cube = by_name(m)["noise_0.2"]
    v, _, _, box = O.read_cube(d, cube)
    clean, _, _, _ = O.read_cube(d, cube, vector=["/data/grid_0000000000/velocity_clean_" + a for a in "xyz"])
    with h5py.File(os.path.join(d, cube["file"]), "r") as f:
        sigma = float(f["/suite"].attrs["noise_sigma"])
    noise = (v - clean).ravel()
    n = noise.size
    var = float(np.var(noise, ddof=1))
    se = sigma ** 2 * np.sqrt(2.0 / (n - 1))
    c.check("[noise] the noise has the stated variance (within 5 standard errors)", abs(var - sigma ** 2) < 5 * se,
            f"{var:.5f} vs {sigma ** 2:.5f} +- {se:.5f}", "sampling distribution of a Gaussian variance (common practice)")
    c.check("[noise] the noise has zero mean (within 5 standard errors)", abs(noise.mean()) < 5 * sigma / np.sqrt(n),
            f"{noise.mean():.2e}", "common practice")
    vc = O.answer(clean, box)["compressive_share"]
    c.check("[noise] the clean field's share is 0.2 and the noisy one's differs", abs(vc - 0.2) < 1e-12
            and abs(cube["answer"]["compressive_share"] - 0.2) > 1e-3, f"{vc!r} / {cube['answer']['compressive_share']!r}",
            "helmix compressive_fraction, exact = total; " + SRC_FFT)


def check_bulk(c, d, m):
    cube = by_name(m)["bulk_0.3"]
    v, _, _, box = O.read_cube(d, cube)
    clean, _, _, _ = O.read_cube(d, cube, vector=["/data/grid_0000000000/velocity_clean_" + a for a in "xyz"])
    with h5py.File(os.path.join(d, cube["file"]), "r") as f:
        om, u, mid = (np.asarray(f["/suite"].attrs[k], dtype=float) for k in ("omega", "uniform_flow", "rotation_centre"))
    x, y, z = centres(cube)
    dx, dy, dz = x - mid[0], y - mid[1], z - mid[2]
    rot = np.stack([om[1] * dz - om[2] * dy + u[0], om[2] * dx - om[0] * dz + u[1], om[0] * dy - om[1] * dx + u[2]])
    err = float(np.max(np.abs(v - clean - rot)))
    c.check("[bulk] velocity - clean = Omega x (r - centre) + U at cell centres", err < 1e-13, f"max diff {err:.1e}",
            "solid-body rotation, common practice")
    a, b = cube["answer"]["compressive_share"], cube["variants"]["clean"]["answer"]["compressive_share"]
    r = cube["variants"]["bulk_removed"]["answer"]["compressive_share"]
    c.check("[bulk] the rotation adds solenoidal energy only: clean share 0.3, stored share below it, and the "
            "stated compressive energy equals the clean field's",
            abs(b - 0.3) < 1e-12 and a < 0.3 - 1e-3 and abs(cube["answer"]["energy_compressive"] -
                                                          cube["variants"]["clean"]["answer"]["energy_compressive"]) < 1e-12,
            f"clean {b!r}, stored {a:.6f}, bulk removed {r:.6f}", "a rigid rotation is divergence-free (common practice)")


def check_density(c, d, m):
    cube = by_name(m)["density_lognormal"]
    v, rho, _, box = O.read_cube(d, cube)
    ln = np.log(rho)
    c.check("[density] rho > 0 with mean 1 and sigma of ln rho 1", rho.min() > 0 and abs(rho.mean() - 1) < 1e-12
            and abs(ln.std() - 1) < 1e-10, f"mean {rho.mean()!r}, sigma_s {ln.std()!r}",
            "lognormal density with its mean and width as asked (common practice)")
    weighted = O.answer(v, box, rho=rho)["compressive_share"]
    plain = O.answer(v, box)["compressive_share"]
    c.check("[density] sqrt(rho) v holds a share of 0.4; v itself another", abs(weighted - 0.4) < 1e-12
            and abs(plain - 0.4) > 1e-3, f"{weighted!r} / {plain:.6f}", "mass weighting sqrt(rho) v (common practice)")


def check_bad_input(c, hx, d1):
    mtime = os.path.getmtime(os.path.join(d1, "manifest.json"))
    run = suite(hx, d1, 1)
    lines = [ln for ln in H.mpi_noise_free_lines(run.stderr) if ln.startswith("helmix")]
    c.check("an existing manifest is refused without --force: exit 2, one line naming --force",
            run.rc == 2 and len(lines) == 1 and "--force" in lines[0]
            and os.path.getmtime(os.path.join(d1, "manifest.json")) == mtime, f"rc {run.rc}: {lines}", "brief of the suite")
    for argv, what in ((["--cells", "20"], "--cells 20 (not a multiple of 8)"), (["--cells", "x"], "--cells x"),
                       (["--ranks-hint", "0"], "--ranks-hint 0"), (["--bogus"], "an unknown option")):
        proc, cmd, dt = hx.launch(["suite", hx.path("never"), "--quick"] + argv, ranks=1)
        lines = [ln for ln in H.mpi_noise_free_lines(proc.stderr) if ln.startswith("helmix")]
        c.check(f"{what} is refused: exit 2, one line, nothing written", proc.returncode == 2 and len(lines) == 1
                and not os.path.exists(hx.path("never")), f"rc {proc.returncode}: {lines}", "helmix exit codes (README)")
    run = suite(hx, d1, 1, ["--force"])
    c.check("--force replaces the suite", run.ok and os.path.getmtime(os.path.join(d1, "manifest.json")) >= mtime,
            run.describe()[:300], "brief of the suite")


def body(args, hx, c):
    d1, d3 = hx.path("suite_p1"), hx.path(os.path.join("nested", "dir", "suite_p3"))
    r1, r3 = suite(hx, d1, 1), suite(hx, d3, 3)
    for run, p in ((r1, 1), (r3, 3)):
        c.check(f"helmix suite --quick on {p} rank{'s' if p > 1 else ''} exits 0 (a missing directory is created)",
                run.ok, f"{run.seconds:.2f} s" if run.ok else run.describe()[:600], "brief of the suite")
    if not (r1.ok and r3.ok):
        return
    for d in (d1, d3):
        left = [f for f in os.listdir(d) if f.endswith(".partial") or f.startswith(".work")]
        c.check(f"no partial or scratch files left in {os.path.basename(d)}", not left, str(left), "helmix output rules")
    m1, m3 = load(d1), load(d3)
    check_schema(c, m1, "1 rank")
    check_schema(c, m3, "3 ranks")
    check_ranks(c, d1, d3, m1, m3)
    stats = []
    check_oracle(c, d3, m3, stats)
    worst = max(stats, key=lambda t: t[1])
    print(f"numpy agreement: largest deviation {worst[1]:.2e} ({worst[0]}) over {len(stats)} answers")
    check_parts(c, d3, m3)
    check_analytic(c, d3, m3)
    check_shares(c, d3, m3)
    check_ladder(c, d3, m3)
    check_layouts(c, d3, m3)
    check_noise(c, d3, m3)
    check_bulk(c, d3, m3)
    check_density(c, d3, m3)
    check_bad_input(c, hx, d1)


if __name__ == "__main__":
    H.run_main("test_suite", __doc__, body)
