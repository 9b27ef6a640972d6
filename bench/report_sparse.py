#!/usr/bin/python3
"""report_sparse.py — the table of the sparse FFT evaluation (bench/run_sparse.sh).

  report_sparse.py PROBE.txt
      Read the PROBE lines of bench/sparse_probe.c and print, per rank count and kmax, each
      method's planning, fill and transform time (the fastest process; each process already
      keeps its fastest execution), the transform time against FFTW's dense double, the bytes
      one rank sends to the others per transform (maximum over ranks), the peak RSS and the
      largest difference of the single and sparse fields from the dense double one.
"""
import math
import sys

sys.dont_write_bytecode = True  # import benchlib without leaving __pycache__ in bench/
import benchlib as bl  # noqa: E402
from benchlib import fmt, ratio  # noqa: E402

MIB = 1048576.0
METHODS = [("dense_double", "FFTW-MPI dense c2r, double"), ("dense_single", "FFTW-MPI dense c2r, single"),
           ("sparse_double", "SpFFT sparse c2r, double")]


def fields(line):
    return dict(kv.split("=", 1) for kv in line.split()[1:] if "=" in kv)


def main(path):
    runs, checks = {}, {}
    with open(path) as f:
        for line in f:
            if not line.startswith("PROBE "):
                continue
            d = fields(line)
            key = (int(d["ranks"]), float(d["kmax"]))
            if line.split()[1] == "check":
                checks[key] = d
                continue
            runs.setdefault(key + (d["method"],), []).append(d)
    n = next(iter(checks.values()))["n"] if checks else "?"
    print(f"### Sparse versus dense inverse transform, N = {n}\n")
    print("| ranks | kmax | in-band modes | method | plan s | fill s | transform s | transform vs dense double |"
          " sent per rank MiB | peak RSS MiB | max abs diff vs dense double |")
    print("|---:|---:|---:|---|---:|---:|---:|---:|---:|---:|---:|")
    for key in sorted({k[:2] for k in runs}):
        best = {}
        for m, _ in METHODS:
            rs = runs.get(key + (m,), [])
            if rs:
                best[m] = {x: min(float(r[x]) for r in rs) for x in ("plan_s", "fill_s", "exec_s")}
                best[m].update(sent=max(float(r["sent_bytes"]) for r in rs),
                               rss=max(float(r["peak_rss_kib"]) for r in rs), modes=float(rs[0]["modes"]))
        ck = checks.get(key, {})
        maxabs = float(ck.get("max_abs", "nan"))
        diffs = {"dense_double": 0.0, "dense_single": float(ck.get("diff_single", "nan")),
                 "sparse_double": float(ck.get("diff_sparse", "nan"))}
        for m, name in METHODS:
            b = best.get(m)
            if not b:
                continue
            rel = diffs[m] / maxabs if maxabs else math.nan
            print(f"| {key[0]} | {key[1]:g} | {b['modes']:.0f} | {name} | {fmt(b['plan_s'], '.3f')} |"
                  f" {fmt(b['fill_s'], '.3f')} | {fmt(b['exec_s'], '.3f')} |"
                  f" {fmt(ratio(b['exec_s'], best.get('dense_double', {}).get('exec_s', math.nan)), '.2f')} |"
                  f" {fmt(b['sent'] / MIB, '.1f')} | {fmt(b['rss'] / 1024.0, '.0f')} |"
                  f" {diffs[m]:.2e} ({fmt(rel, '.1e')} of max) |")
    print("\nTimes: the fastest of the processes, each the fastest of its executions; fill: zeroing"
          " (dense) and writing the in-band coefficients; sent: bytes one rank sends to the others in"
          " one transform, counted by PMPI wrappers of MPI_Send/Isend/Sendrecv/Alltoall(v,w); modes:"
          " coefficients stored (the sparse input holds only the x = 0 plane's y >= 0 half).")
    bl.machine_line()


if __name__ == "__main__":
    if len(sys.argv) != 2:
        sys.exit(__doc__)
    main(sys.argv[1])
