#!/usr/bin/python3
"""The files `helmix inspect` writes: JSON, CSV, PNG and PDF.

  * JSON: strict JSON (RFC 8259: no NaN/Infinity tokens; an undefined number
    is null), every documented key with its shape and type; "check" only
    with --check; helmix_version = `helmix --version`; the pdf densities
    integrate to the fraction of values inside [-5, 5]; the table printed on
    stdout shows the JSON's share;
  * CSV: numpy.genfromtxt reads it; header and rows as documented (the JSON's
    shells from k = 0; an empty shell's share is an empty field, JSON's null);
  * --plot F.png: PNG signature, IHDR first, valid chunk CRCs, IEND last
    (W3C PNG specification 2nd ed., 2003; RFC 2083), 1800 x 1300 pixels
    (helmix/plot.h), the zlib stream of the IDAT chunks inflates to exactly
    height x (1 + bytes per row) with filter types 0-4, and the page is not
    blank: a uniform page filters to almost all zero bytes, a drawn one has
    many distinct byte values;
  * --plot F.pdf: starts with %PDF- and ends with %%EOF (ISO 32000-1:2008),
    and poppler's pdftoppm renders it (exit 0) to a non-blank PNG of one
    landscape page 842 x 608 pt (helmix/plot.h) at 40 dpi.
"""

import glob
import math
import os
import subprocess
import sys

import numpy as np

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

SRC_JSON = "RFC 8259 (JSON): no NaN/Infinity literals"
SRC_PNG = "W3C PNG specification 2nd ed. 2003 / RFC 2083"
SRC_PDF = "ISO 32000-1:2008 (PDF): header %PDF-, trailer %%EOF"

KEYS = {
    "helmix_version": str, "file": str, "cells": (list, 3), "box": (list, 3), "ranks": int,
    "remove_scale": (int, float), "mass_weighted": bool, "mean": (list, 3), "rms": (list, 3),
    "rms_3d": (int, float), "skewness": (list, 3), "excess_kurtosis": (list, 3),
    "energy": {"total", "compressive", "solenoidal", "compressive_fraction"},
    "gradients": {"divergence_rms", "vorticity_rms", "divergence_ratio", "vorticity_ratio"},
    "slope": {"fit_range", "value", "stderr"},
    "shells": {"k", "modes", "energy", "compressive", "solenoidal", "compressive_fraction"},
    "pdf": {"edges", "density"},
}


def key_problems(js, with_check):
    bad = []
    for k, spec in KEYS.items():
        if k not in js:
            bad.append(f"missing {k}")
            continue
        v = js[k]
        if isinstance(spec, set):
            if not isinstance(v, dict) or set(v) != spec:
                bad.append(f"{k} keys {sorted(v) if isinstance(v, dict) else type(v)}")
        elif isinstance(spec, tuple) and spec[0] is list:
            if not (isinstance(v, list) and len(v) == spec[1]):
                bad.append(f"{k} not a list of {spec[1]}")
        elif spec is bool:
            if not isinstance(v, bool):
                bad.append(f"{k} not bool")
        elif isinstance(spec, tuple):
            if isinstance(v, bool) or not isinstance(v, spec):
                bad.append(f"{k} not a number")
        elif not isinstance(v, spec):
            bad.append(f"{k} not {spec.__name__}")
    if not bad:
        n = len(js["shells"]["k"])
        if any(len(js["shells"][a]) != n for a in KEYS["shells"]):
            bad.append("shell arrays of unequal length")
        if len(js["pdf"]["edges"]) != 101 or len(js["pdf"]["density"]) != 3 or \
                any(len(d) != 100 for d in js["pdf"]["density"]):
            bad.append("pdf shapes")
        if len(js["slope"]["fit_range"]) != 2:
            bad.append("fit_range")
    if with_check:
        chk = js.get("check")
        if not (isinstance(chk, dict) and set(chk) == {"passed", "lines"} and isinstance(chk["lines"], list)
                and all(set(ln) == {"quantity", "asked", "target", "target_is", "measured", "tolerance", "passed"}
                        for ln in chk["lines"])):
            bad.append(f"check block {chk!r:.200}")
    elif "check" in js:
        bad.append("check block without --check")
    return bad


def png_checks(c, label, path, want_size=None):
    if not c.check(f"[{label}] PNG file written", os.path.isfile(path) and os.path.getsize(path) > 0,
                   path):
        return
    try:
        info = X.read_png(path)
    except Exception as e:  # noqa: BLE001
        c.fail(f"[{label}] PNG parses (signature, chunks, zlib)", repr(e))
        return
    c.check(f"[{label}] PNG signature, IHDR first, IEND last, chunk CRCs valid",
            info["crc_ok"] and info["last_chunk"] == b"IEND",
            f"{info['width']}x{info['height']} depth {info['bit_depth']} colour type {info['color_type']}",
            SRC_PNG)
    if want_size:
        c.check(f"[{label}] image is {want_size[0]} x {want_size[1]} pixels",
                (info["width"], info["height"]) == want_size, f"{info['width']}x{info['height']}",
                "helmix/plot.h")
    raw = np.frombuffer(info["raw"], dtype=np.uint8)
    rowlen = 1 + info["row_bytes"]
    ok = info["interlace"] == 0 and raw.size == info["height"] * rowlen
    if ok:
        filters = raw.reshape(info["height"], rowlen)[:, 0]
        ok = bool(np.all(filters <= 4))
        body = raw.reshape(info["height"], rowlen)[:, 1:]
    c.check(f"[{label}] IDAT inflates to height x (1 + row bytes), filter types 0-4", ok,
            f"{raw.size} bytes, expected {info['height'] * rowlen}", SRC_PNG)
    if ok:
        distinct = len(np.unique(body))
        nonzero = float(np.count_nonzero(body)) / body.size
        c.check(f"[{label}] not blank (> 16 distinct filtered byte values, > 0.5 % nonzero)",
                distinct > 16 and nonzero > 0.005, f"{distinct} distinct values, {100 * nonzero:.1f} % nonzero",
                "a uniform image filters to zeros (PNG filter types, " + SRC_PNG + ")")


def body(args, hx, c):
    recipe = {
        "grid": {"cells": "32 32 16", "box": "1 1 0.5"},
        "spectrum": {"shape": "power", "slope": 2.0, "kmin": 1},
        "mix": {"compressive_fraction": 0.4},
        "random": {"seed": 12},
        "output": {"precision": "single"},
    }
    mk = hx.make(recipe, ranks=2)
    if not c.check("helmix make exits 0", mk.ok, mk.describe() if not mk.ok else ""):
        return
    ver = subprocess.run([args.helmix, "--version"], capture_output=True, text=True)

    # ------------------------------------------------------------ JSON + CSV
    run = X.inspect(hx, mk.out, ranks=2, csv_name="shells.csv")
    if c.check("inspect --json --csv exits 0", run.ok, run.describe() if not run.ok else f"{run.seconds:.2f} s"):
        js = run.json
        c.check("JSON parses as strict JSON (no NaN/Infinity)", js is not None, run.json_error or "", SRC_JSON)
        if js is not None:
            bad = key_problems(js, with_check=False)
            c.check("JSON holds every documented key, shape and type; no check block", not bad,
                    "; ".join(bad) or f"{len(js)} top-level keys")
            c.check("helmix_version = `helmix --version`", ver.stdout.strip() == f"helmix {js['helmix_version']}",
                    f"{js['helmix_version']!r} vs {ver.stdout.strip()!r}")
            c.check("file = the path inspected", js["file"] == mk.out, js["file"])
            tot = [sum(d) * 0.1 for d in js["pdf"]["density"]]
            c.check("pdf densities integrate to <= 1 and > 0.999 (a Gaussian field within +-5 sigma)",
                    all(0.999 < t <= 1 + 1e-12 for t in tot), f"integrals {tot}",
                    "probability density, common practice")
            share_txt = [ln for ln in run.stdout.splitlines() if "compressive share" in ln]
            c.check("stdout table shows the JSON compressive share (8 decimals)",
                    len(share_txt) == 1 and f"{js['energy']['compressive_fraction']:.8f}" in share_txt[0],
                    share_txt[0].strip() if share_txt else run.stdout[:300])
            c.check("--quiet: nothing on stderr", run.stderr.strip() == "", run.stderr[:200])
            try:
                tab = np.genfromtxt(run.csv_path, delimiter=",", names=True)
                cols = ["k", "modes", "energy", "compressive", "solenoidal", "compressive_fraction"]
                n = len(js["shells"]["k"])
                ok = list(tab.dtype.names) == cols and tab.shape[0] == n  # the same shells, from k = 0
                for col in cols:
                    jv = np.array([np.nan if x is None else x for x in js["shells"][col]], float)
                    ok = ok and np.allclose(tab[col], jv, rtol=1e-15, atol=0, equal_nan=True)
                c.check("CSV: numpy.genfromtxt reads header + one row per JSON shell (from k = 0), = JSON shells", ok,
                        f"{tab.shape[0]} rows, columns {tab.dtype.names}")
            except Exception as e:  # noqa: BLE001
                c.fail("CSV parses with numpy.genfromtxt", repr(e))
    # --check adds the check block; without --quiet progress goes to stderr
    run = X.inspect(hx, mk.out, "--check", ranks=2, quiet=False)
    if c.check("inspect --check (no --quiet) exits 0 or 1", run.rc in (0, 1), run.describe()):
        bad = key_problems(run.json or {}, with_check=True)
        c.check("with --check the JSON holds a check block of documented lines", not bad and run.json,
                "; ".join(bad))
        c.check("without --quiet, progress lines on stderr", len(run.lines()) >= 1, f"{len(run.lines())} lines")

    # undefined numbers are null: a fit over two shells has no slope; shell 0
    # (k = 0 left out) has no share; a constant component has no skewness
    cells, box = (16, 16, 16), (1.0, 1.0, 1.0)
    Xc, Yc, Zc = X.grid_coords(cells, box)
    v = np.stack([np.sin(2 * math.pi * Yc), np.sin(2 * math.pi * 2 * Zc), 0 * Xc])
    path2 = hx.path("two_shells.h5")
    X.write_foreign(path2, v, order="zyx")
    # the default fit band [2, N/4] holds one shell with energy: no slope (an explicit --fit
    # with fewer than 3 such shells is refused, test_inspect_data)
    run = X.inspect(hx, path2, "--vector", "/u,/v,/w", ranks=1)
    if c.check("inspect of a two-shell field exits 0", run.ok, run.describe() if not run.ok else ""):
        js = run.json
        c.check("slope over 1 shell undefined -> JSON null, still strict JSON",
                js is not None and js["slope"]["value"] is None and js["slope"]["stderr"] is None,
                (f"slope={js['slope']}" if js is not None else run.json_error or "no JSON"), SRC_JSON)
        if js is not None:
            c.check("no --box and no domain edges in the file: box 1, 1, 1", js["box"] == [1, 1, 1],
                    f"box={js['box']}", "helmix specification")
            c.check("share of shell 0 (k = 0 left out) -> null", js["shells"]["compressive_fraction"][0] is None,
                    f"shell 0: {js['shells']['compressive_fraction'][0]}", SRC_JSON)
            c.check("a constant component: skewness/kurtosis null, pdf zeros",
                    js["skewness"][2] is None and js["excess_kurtosis"][2] is None
                    and sum(js["pdf"]["density"][2]) == 0,
                    f"skew={js['skewness']} kurt={js['excess_kurtosis']}", "0/0 undefined")
    # a field at rest: every ratio is 0/0
    path0 = hx.path("at_rest.h5")
    X.write_foreign(path0, np.zeros((3,) + cells[::-1]), order="zyx")
    run = X.inspect(hx, path0, "--vector", "/u,/v,/w", ranks=1)
    if c.check("inspect of a field at rest exits 0", run.ok, run.describe() if not run.ok else ""):
        js = run.json
        ok = js is not None and js["energy"]["total"] == 0 and js["energy"]["compressive_fraction"] is None \
            and js["gradients"]["divergence_ratio"] is None and js["gradients"]["vorticity_ratio"] is None \
            and js["slope"]["value"] is None and all(s is None for s in js["skewness"])
        c.check("field at rest: energies 0, share/ratios/slope/skewness null (strict JSON)", ok,
                (f"energy={js['energy']} gradients={js['gradients']}" if js is not None
                 else run.json_error or "no JSON"), SRC_JSON)

    # ------------------------------------------------------------ PNG
    png = hx.path("report.png")
    run = X.inspect(hx, mk.out, "--plot", png, "--check", ranks=2, json_name=None)
    if c.check("inspect --plot report.png exits 0", run.rc == 0, run.describe()):
        png_checks(c, "png", png, want_size=(1800, 1300))
    png1 = hx.path("report_one_rank.PNG")
    run = X.inspect(hx, mk.out, "--plot", png1, ranks=1, json_name=None)
    if c.check("inspect --plot report_one_rank.PNG (upper-case extension, 1 rank) exits 0", run.rc == 0,
               run.describe()):
        png_checks(c, "PNG upper-case", png1, want_size=(1800, 1300))

    # ------------------------------------------------------------ PDF
    pdf = hx.path("report.pdf")
    run = X.inspect(hx, mk.out, "--plot", pdf, ranks=2, json_name=None)
    if c.check("inspect --plot report.pdf exits 0", run.rc == 0, run.describe()):
        if c.check("[pdf] file written", os.path.isfile(pdf) and os.path.getsize(pdf) > 0, pdf):
            with open(pdf, "rb") as f:
                data = f.read()
            c.check("[pdf] starts with %PDF- and ends with %%EOF",
                    data.startswith(b"%PDF-") and data.rstrip().endswith(b"%%EOF"),
                    f"{data[:8]!r} ... {data.rstrip()[-6:]!r}, {len(data)} bytes", SRC_PDF)
            out = hx.path("rendered")
            pr = subprocess.run(["pdftoppm", "-png", "-r", "40", pdf, out], capture_output=True, text=True)
            pages = sorted(glob.glob(out + "*.png"))
            c.check("[pdf] pdftoppm -png -r 40 renders it: exit 0, one page", pr.returncode == 0 and len(pages) == 1,
                    f"rc={pr.returncode} pages={[os.path.basename(p) for p in pages]} {pr.stderr.strip()[:200]}",
                    "poppler-utils pdftoppm")
            if pages:
                # 842 x 608 pt at 40 dpi: 842 * 40 / 72 = 467.8, 608 * 40 / 72 = 337.8
                png_checks(c, "pdf rendered", pages[0], want_size=(468, 338))


if __name__ == "__main__":
    H.run_main("test_inspect_outputs", __doc__, body)
