#!/usr/bin/python3
"""`--timings FILE.json` of helmix inspect (and make): the document and its numbers.

  * every document validates against docs/timings.schema.json with the independent minimal
    validator of hxschema.py (no `jsonschema` package on the reference machine; used too when
    present), and the validator rejects altered documents (so the check can fail);
  * schema name and version, command, helmix version = `helmix --version`, ranks = the -n of
    the launch, one peak RSS per rank, grid and cells of the cube;
  * min <= mean <= max for every phase's seconds and the total; inspect's phases are disjoint,
    so the sum of their means is at most the mean total (make: each phase within the total);
  * transforms: inspect executes one distributed r2c per velocity component (3), one c2r more
    per component with --remove-scale (6), and 7 two-dimensional c2r of the mid-plane spectra
    on rank 0 with --plot (speed, divergence and vorticity: v xyz, vorticity xyz, divergence;
    read from src/inspect.c, the contract in DEVELOPERS.md "How an inspect run flows"); a
    distributed transform counts once per rank in transforms_total;
  * bytes: the "read" phase moves exactly the bytes of the datasets inspect reads (size x item
    size from h5py), summed over the ranks; the busiest rank reads ceil(N/P) planes (FFTW-MPI's
    default block distribution of the first dimension, FFTW 3 manual section 6.4, from memory);
  * peak RSS: above 1 MiB and below 4 GiB per rank, and on one rank within [0.5, 1.05] of the
    peak the operating system reports for the process (getrusage(2) RUSAGE_CHILDREN ru_maxrss
    in KiB, Linux man page) taken by a wrapper whose only child is helmix;
  * a --timings path in a missing directory is refused with exit 2 and one line before any
    work (no --json report appears); the document is written through FILE.partial and a
    rename, so no .partial is left behind;
  * make (when `helmix make --help` offers --timings): schema, 3 inverse transforms for a
    plain velocity cube (one per component, DEVELOPERS.md "How a make run flows"), and its
    "write" phase moves the bytes of the field datasets under /data.
Timing values are never compared with expectations: speed is not asserted.
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
import hxschema as S  # noqa: E402

HERE = os.path.dirname(os.path.abspath(__file__))
SCHEMA_PATH = os.path.join(HERE, "..", "..", "docs", "timings.schema.json")
SRC_SCHEMA = "docs/timings.schema.json checked by hxschema.py (JSON Schema 2020-12 subset, from memory)"
SRC_FFT = "transforms inspect performs, read from src/inspect.c (DEVELOPERS.md, inspect flow)"
SRC_BYTES = "dataset bytes = size x itemsize (h5py documentation)"
SRC_SLAB = "FFTW-MPI default block distribution ceil(N/P) planes (FFTW 3 manual 6.4, from memory)"
SRC_RSS = "getrusage(2) RUSAGE_CHILDREN ru_maxrss in KiB (Linux man page)"
MIB = 1 << 20
N = 32


def load_json(path):
    with open(path) as f:
        return json.load(f, parse_constant=X._reject_constant)


def phase(doc, name):
    for p in doc["phases"]:
        if p["name"] == name:
            return p
    return None


def schema_checks(c, label, doc, schema, version, ranks, command, disjoint=True):
    errs = S.validate(doc, schema)
    c.check(f"[{label}] validates against docs/timings.schema.json", not errs, "; ".join(errs[:3]), SRC_SCHEMA)
    c.check(f"[{label}] schema, command, version, ranks", doc.get("schema") == "helmix-timings" and
            doc.get("schema_version") == 1 and doc.get("command") == command and
            doc.get("helmix_version") == version and doc.get("ranks") == ranks and
            len(doc["peak_rss_bytes"]["per_rank"]) == ranks,
            f"{doc.get('command')} {doc.get('helmix_version')} ranks={doc.get('ranks')}")
    spreads = [p["seconds"] for p in doc["phases"]] + [doc["total_seconds"]]
    bad = [s for s in spreads if not (s["min"] <= s["mean"] <= s["max"])]
    c.check(f"[{label}] min <= mean <= max for {len(spreads)} spreads", not bad, f"bad={bad[:2]}")
    if disjoint:
        # inspect's phases never overlap, so on every rank their sum is at most the rank's total,
        # and so is the sum of the means at most the mean total
        summed = sum(p["seconds"]["mean"] for p in doc["phases"])
        c.check(f"[{label}] the phases (disjoint) fit in the run's wall time", 0 < summed <= doc["total_seconds"]["mean"] * (1 + 1e-9),
                f"sum of phase means {summed:.4g} s, mean total {doc['total_seconds']['mean']:.4g} s")
    else:
        longest = max(p["seconds"]["max"] for p in doc["phases"])
        c.check(f"[{label}] every phase fits in the run's wall time", 0 <= longest <= doc["total_seconds"]["max"] * (1 + 1e-9),
                f"longest phase {longest:.4g} s, total {doc['total_seconds']['max']:.4g} s")
    rss = doc["peak_rss_bytes"]
    c.check(f"[{label}] peak RSS per rank in (1 MiB, 4 GiB), max = largest", all(MIB < r < 4096 * MIB for r in rss["per_rank"])
            and rss["max"] == max(rss["per_rank"]), f"{[round(r / MIB, 1) for r in rss['per_rank']]} MiB")


def validator_can_fail(c, doc, schema):
    """The validator rejects documents a broken writer could produce."""
    broken = []
    d = json.loads(json.dumps(doc)); del d["phases"][0]["seconds"]; broken.append(("phase without seconds", d))
    d = json.loads(json.dumps(doc)); d["ranks"] = 1.5; broken.append(("ranks not an integer", d))
    d = json.loads(json.dumps(doc)); d["schema_version"] = 2; broken.append(("another version", d))
    d = json.loads(json.dumps(doc)); d["phases"][0]["transforms"] = -1; broken.append(("negative transforms", d))
    d = json.loads(json.dumps(doc)); d["extra"] = 1; broken.append(("unknown member", d))
    d = json.loads(json.dumps(doc)); d["peak_rss_bytes"]["per_rank"] = []; broken.append(("no ranks' memory", d))
    d = json.loads(json.dumps(doc)); del d["cells"]; broken.append(("grid without cells", d))
    missed = [name for name, d in broken if not S.errors(d, schema)]
    c.check("the schema validator rejects 7 altered documents", not missed, f"accepted: {missed}", SRC_SCHEMA)


def dataset_bytes(path, names):
    with h5py.File(path, "r") as f:
        return sum(f[n].size * f[n].dtype.itemsize for n in names), [f[n].dtype.itemsize for n in names]


def body(args, hx, c):
    with open(SCHEMA_PATH) as f:
        schema = json.load(f)
    version = subprocess.run([args.helmix, "--version"], capture_output=True, text=True).stdout.split()[-1]

    # A helmix cube (single precision) and a foreign one: float64 velocity and a float32 density.
    mk = hx.make({"grid": {"cells": N}, "random": {"seed": 7}}, ranks=1, name="cube")
    c.check("helmix make writes the 32^3 cube", mk.ok, mk.describe() if not mk.ok else "")
    if not mk.ok:
        return
    vnames = [f"/data/grid_0000000000/velocity_{a}" for a in "xyz"]
    vbytes, isz = dataset_bytes(mk.out, vnames)

    docs = {}
    for ranks, extra in ((1, ["--plot", hx.path("r1.png")]), (2, [])):
        tj = hx.path(f"t_inspect_{ranks}.json")
        run = X.inspect(hx, mk.out, "--timings", tj, *extra, ranks=ranks)
        c.check(f"[inspect {ranks} rank(s)] exit 0, timings written, no .partial left", run.ok and os.path.exists(tj)
                and not os.path.exists(tj + ".partial"), run.describe() if not run.ok else "")
        if not os.path.exists(tj):
            continue
        doc = docs[ranks] = load_json(tj)
        label = f"inspect {ranks} rank(s)"
        schema_checks(c, label, doc, schema, version, ranks, "inspect")
        c.check(f"[{label}] grid and cells", doc.get("grid") == [N, N, N] and doc.get("cells") == N ** 3, f"{doc.get('grid')}")
        tr, rd = phase(doc, "transform"), phase(doc, "read")
        c.check(f"[{label}] 3 r2c transforms, once per rank each", tr and tr["transforms"] == 3 and
                tr["transforms_total"] == 3 * ranks, f"{tr and (tr['transforms'], tr['transforms_total'])}", SRC_FFT)
        sl = phase(doc, "slices")
        want_sl = 7 if "--plot" in extra else None
        c.check(f"[{label}] slices: {want_sl or 'no'} 2-D transforms on rank 0",
                (sl is None) if want_sl is None else (sl and sl["transforms"] == 7 and sl["transforms_total"] == 7),
                f"{sl and (sl['transforms'], sl['transforms_total'])}", SRC_FFT)
        total_ffts = sum(p["transforms_total"] for p in doc["phases"])
        c.check(f"[{label}] no transforms outside those phases", total_ffts == 3 * ranks + (7 if want_sl else 0), f"{total_ffts}")
        planes = min(N, math.ceil(N / ranks))
        c.check(f"[{label}] read moves the datasets' bytes ({vbytes}), busiest rank {planes} planes",
                rd and rd["bytes_total"] == vbytes and rd["bytes_max_per_rank"] == 3 * planes * N * N * isz[0] and
                sum(p["bytes_total"] for p in doc["phases"]) == vbytes,
                f"{rd and (rd['bytes_total'], rd['bytes_max_per_rank'])}", SRC_BYTES + "; " + SRC_SLAB)
    if 1 in docs:
        validator_can_fail(c, docs[1], schema)

    # Foreign cube: float64 velocity in zyx order and a float32 density; --remove-scale adds one
    # inverse transform per component.
    rng = np.random.default_rng(11)
    v = rng.standard_normal((3, N, N, N))
    rho = np.exp(0.3 * rng.standard_normal((N, N, N))).astype(np.float32)
    foreign = hx.path("foreign.h5")
    names = X.write_foreign(foreign, v, order="zyx", extra={"/rho": rho})
    fbytes, _ = dataset_bytes(foreign, ["/u", "/v", "/w", "/rho"])
    tj = hx.path("t_foreign.json")
    run = X.inspect(hx, foreign, "--vector", names, "--density", "/rho", "--remove-scale", "0.1", "--timings", tj, ranks=2)
    c.check("[foreign] exit 0 and timings written", run.ok and os.path.exists(tj), run.describe() if not run.ok else "")
    if os.path.exists(tj):
        doc = load_json(tj)
        schema_checks(c, "foreign", doc, schema, version, 2, "inspect")
        tr, rd = phase(doc, "transform"), phase(doc, "read")
        c.check("[foreign] 3 r2c + 3 c2r per rank with --remove-scale", tr and tr["transforms"] == 6 and
                tr["transforms_total"] == 12, f"{tr and (tr['transforms'], tr['transforms_total'])}", SRC_FFT)
        c.check(f"[foreign] read: 3 float64 components and a float32 density = {fbytes} bytes",
                rd and rd["bytes_total"] == fbytes, f"{rd and rd['bytes_total']}", SRC_BYTES)

    # Peak RSS against what the operating system says of the same process (one rank, no launcher).
    tj = hx.path("t_rss.json")
    wrapper = ("import resource, subprocess, sys; r = subprocess.run(sys.argv[1:]); "
               "print(r.returncode, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)")
    p = subprocess.run(["/usr/bin/python3", "-c", wrapper, args.helmix, "inspect", mk.out, "--quiet", "--timings", tj],
                       capture_output=True, text=True, cwd=hx.tmp, timeout=120)
    try:
        rc, kib = (int(x) for x in p.stdout.split()[-2:])
        got = load_json(tj)["peak_rss_bytes"]["max"]
        ratio = got / (kib * 1024.0)
        c.check("[rss] recorded peak RSS within [0.5, 1.05] of the OS's peak of the process", rc == 0 and 0.5 <= ratio <= 1.05,
                f"{got / MIB:.1f} MiB vs {kib / 1024:.1f} MiB", SRC_RSS)
    except (ValueError, OSError, KeyError) as e:
        c.fail("[rss] singleton inspect with --timings ran", f"{e!r} {p.stdout} {p.stderr[-500:]}")

    # A missing directory is refused before any work.
    jp = hx.path("never.json")
    run = X.inspect(hx, mk.out, "--timings", hx.path("no/such/dir/t.json"), json_name=jp, ranks=2)
    lines = [ln for ln in run.lines() if ln.startswith("helmix")]
    c.check("[bad path] exit 2, one error line naming the directory, nothing written",
            run.rc == 2 and len(lines) == 1 and "no/such/dir" in lines[0] and "does not exist" in lines[0] and
            not os.path.exists(jp), f"rc={run.rc} {lines}")

    # make, once it offers --timings.
    help_text = subprocess.run([args.helmix, "make", "--help"], capture_output=True, text=True).stdout
    if "--timings" not in help_text:
        print("note: helmix make offers no --timings yet; its checks are skipped")
        return
    for ranks in (1, 2):
        tj = hx.path(f"t_make_{ranks}.json")
        mk2 = hx.make({"grid": {"cells": N}, "random": {"seed": 7}}, ranks=ranks, name=f"made{ranks}",
                      extra=["--timings", tj])
        c.check(f"[make {ranks} rank(s)] exit 0 and timings written", mk2.ok and os.path.exists(tj),
                mk2.describe() if not mk2.ok else "")
        if not os.path.exists(tj):
            continue
        doc = load_json(tj)
        schema_checks(c, f"make {ranks} rank(s)", doc, schema, version, ranks, "make", disjoint=False)
        ffts = sum(p["transforms"] for p in doc["phases"])
        c.check(f"[make {ranks} rank(s)] 3 inverse transforms (one per component)", ffts == 3, f"{ffts}",
                "DEVELOPERS.md, make flow step 4")
        wb, _ = dataset_bytes(mk2.out, vnames)
        wr = phase(doc, "write")
        c.check(f"[make {ranks} rank(s)] write moves the field datasets' bytes ({wb})", wr and wr["bytes_total"] == wb,
                f"{wr and wr['bytes_total']}", SRC_BYTES)


if __name__ == "__main__":
    H.run_main("timings", __doc__, body)
