#!/usr/bin/python3
"""`helmix inspect --threads T` gives the same bits for every T.

What is asserted, and where the expectation comes from:
  * the JSON report (every number, written as the shortest text that reads back exactly) and
    the CSV table are identical, byte for byte apart from the wall time and the peak memory,
    for 1, 2 and 3 threads per rank, on 1 and on 2 ranks: a cube with a lognormal density and
    a magnetic field on faces (the velocity's state, sqrt(rho) v, the magnetic analysis, the
    mid-plane slices of --plot), the same with --remove-scale, and a 31 x 32 x 17 grid whose
    local k-space planes 2 and 3 threads do not divide. The sums are made per k-space plane
    and added in plane order whatever the thread count (helmix documentation: threads never
    change a bit of the output); FFTW's threaded transforms keep the bits at these sizes;
  * the run uses the threads asked: `--timings` records threads = T, and OMP_NUM_THREADS when
    --threads is not given (OpenMP's environment variable, common practice);
  * a rank that may run on fewer CPUs than its threads (taskset to one CPU: what Open MPI's
    default binding does to a lone rank) is warned once, naming the launcher options that give
    it more (Open MPI mpiexec(1): --bind-to none, --map-by slot:PE=n), and gives the same report;
    an unbound rank with CPUs enough is not warned; 2 unbound ranks whose threads together
    exceed the node's CPUs are warned once, with the numbers;
  * --threads 0, -1, 1.5 and x are refused with one line and exit 2.
"""

import json
import os
import shutil
import subprocess
import sys

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

SRC_BITS = "helmix inspect --help: every thread count gives the same numbers (per-plane sums in plane order)"
SRC_OMP = "OpenMP: OMP_NUM_THREADS sets the default thread count (common practice)"
VOLATILE = ("seconds", "peak_rss_bytes")


def stable(js):
    """The report without its wall time and peak memory, as canonical text."""
    def strip(o):
        if isinstance(o, dict):
            return {k: strip(v) for k, v in o.items() if k not in VOLATILE}
        if isinstance(o, list):
            return [strip(v) for v in o]
        return o
    return json.dumps(strip(js), sort_keys=True)


def first_difference(a, b):
    for i, (x, y) in enumerate(zip(a, b)):
        if x != y:
            return f"at char {i}: ...{a[max(0, i - 60):i + 40]}... vs ...{b[max(0, i - 60):i + 40]}..."
    return f"lengths {len(a)} and {len(b)}"


def compare_threads(c, hx, label, cube, opts, ranks):
    for p in ranks:
        ref = None
        for t in (1, 2, 3):
            csv = f"t_{label.replace(' ', '_')}_{p}_{t}.csv"
            r = X.inspect(hx, cube, *opts, "--threads", t, ranks=p, csv_name=csv)
            if not c.check(f"[{label}] inspect exits 0 on {p} rank(s) with {t} thread(s)", r.ok and r.json is not None,
                           f"{r.seconds:.2f} s" if r.ok else r.describe()):
                continue
            with open(r.csv_path) as f:
                got = (stable(r.json), f.read())
            if ref is None:
                ref = got
                continue
            c.check(f"[{label}] {p} rank(s): the JSON report with {t} threads is the 1-thread report, bit for bit",
                    got[0] == ref[0], "" if got[0] == ref[0] else first_difference(got[0], ref[0]), SRC_BITS)
            c.check(f"[{label}] {p} rank(s): the CSV table with {t} threads is the 1-thread table, byte for byte",
                    got[1] == ref[1], "" if got[1] == ref[1] else first_difference(got[1], ref[1]), SRC_BITS)


def timings_threads(c, hx, cube, label, extra, env, want):
    tj = hx.path(f"tim_{label}.json")
    old = {k: os.environ.get(k) for k in env}
    os.environ.update(env)
    try:
        r = X.inspect(hx, cube, "--timings", tj, *extra, json_name=None)
    finally:
        for k, v in old.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v
    if c.check(f"{label}: inspect exits 0", r.ok, r.describe() if not r.ok else ""):
        with open(tj) as f:
            got = json.load(f).get("threads")
        c.check(f"{label}: --timings records threads = {want}", got == want, f"threads = {got}", SRC_OMP)


def affinity(args, hx, c, cube):
    if not shutil.which("taskset"):
        print("SKIP  affinity warning: no taskset here", flush=True)
        return
    reports = {}
    for label, pre, want in (("taskset to one CPU", ["taskset", "-c", "0"], True), ("unbound", [], False)):
        if not want and len(os.sched_getaffinity(0)) < 2:
            print("SKIP  no warning when unbound: this process may use one CPU only", flush=True)
            continue
        jp = hx.path(f"aff_{want}.json")
        cmd = pre + list(args.mpiexec) + ["--bind-to", "none", "-n", "1", args.helmix, "inspect", cube, "--threads", "2",
                                           "--quiet", "--json", jp]
        p = subprocess.run(cmd, capture_output=True, text=True, timeout=120, cwd=hx.tmp)
        warned = [ln for ln in H.mpi_noise_free_lines(p.stderr) if "warning:" in ln]
        ok = p.returncode == 0 and (len(warned) == 1 and "only 1 CPU" in warned[0] and "--bind-to none" in warned[0]
                                    and "PE=2" in warned[0] if want else not warned)
        c.check(f"{label}: exit 0 and {'one warning naming the launcher options' if want else 'no warning'}", ok,
                f"rc={p.returncode} {warned} {p.stderr[-300:] if p.returncode else ''}", "Open MPI mpiexec(1) binding options")
        if p.returncode == 0:
            with open(jp) as f:
                reports[label] = stable(json.load(f))
    if len(reports) == 2:
        c.check("the report is the same with the threads on one CPU or on two", len(set(reports.values())) == 1, "",
                SRC_BITS)
    # 2 unbound ranks with as many threads each as the node has CPUs: twice too many threads
    ncpu = os.cpu_count() or 1
    if 2 <= ncpu <= 8:
        cmd = list(args.mpiexec) + ["--bind-to", "none", "-n", "2", args.helmix, "inspect", cube, "--threads", str(ncpu),
                                    "--quiet"]
        p = subprocess.run(cmd, capture_output=True, text=True, timeout=120, cwd=hx.tmp)
        warned = [ln for ln in H.mpi_noise_free_lines(p.stderr) if "warning:" in ln]
        c.check(f"2 ranks x {ncpu} threads on {ncpu} CPUs: exit 0 and one warning naming ranks per node and CPUs",
                p.returncode == 0 and len(warned) == 1 and f"2 ranks per node x {ncpu} threads = {2 * ncpu}" in warned[0]
                and f"a node has {ncpu} CPUs" in warned[0], f"rc={p.returncode} {warned}", "os.cpu_count (Python documentation)")
    else:
        print(f"SKIP  oversubscribed-node warning: {ncpu} CPUs here", flush=True)


def body(args, hx, c):
    cloud = {"grid": {"cells": 32}, "density": {"model": "lognormal", "sigma_s": 0.8},
             "magnetic": {"beta": 0.5, "random_ratio": 0.5, "faces": "true"},
             "magnetic_spectrum": {"shape": "power", "slope": 1.7}, "random": {"seed": 9},
             "output": {"precision": "double"}}
    run = hx.make(cloud, name="cloud")
    if not c.check("cloud cube (lognormal density, magnetic faces) written", run.ok, run.describe() if not run.ok else ""):
        return
    plot = hx.path("page.png")
    compare_threads(c, hx, "density + magnetic + slices", run.out, ("--plot", plot), (1, 2))
    compare_threads(c, hx, "remove-scale", run.out, ("--remove-scale", 0.2), (1, 2))
    odd = hx.make({"grid": {"cells": "31 32 17"}, "mix": {"zeta": 0.3}, "random": {"seed": 4}}, name="odd")
    if c.check("31 x 32 x 17 cube written", odd.ok, odd.describe() if not odd.ok else ""):
        compare_threads(c, hx, "31x32x17", odd.out, (), (1, 2))
    timings_threads(c, hx, run.out, "--threads 2", ("--threads", "2"), {}, 2)
    timings_threads(c, hx, run.out, "OMP_NUM_THREADS=2", (), {"OMP_NUM_THREADS": "2"}, 2)
    timings_threads(c, hx, run.out, "--threads 3 over OMP_NUM_THREADS=2", ("--threads", "3"), {"OMP_NUM_THREADS": "2"}, 3)
    timings_threads(c, hx, run.out, "default", (), {"OMP_NUM_THREADS": "1"}, 1)
    affinity(args, hx, c, run.out)
    for bad in ("0", "-1", "1.5", "x"):
        r = X.inspect(hx, run.out, "--threads", bad, json_name=None)
        lines = [ln for ln in H.mpi_noise_free_lines(r.stderr) if ln.startswith("helmix")]
        c.check(f"--threads {bad}: exit 2 with one line naming the option", r.rc == 2 and len(lines) == 1 and
                "--threads" in lines[0], f"rc={r.rc} {lines}", "helmix inspect --help: exit 2 bad input")


if __name__ == "__main__":
    H.run_main("inspect_threads", __doc__, body)
