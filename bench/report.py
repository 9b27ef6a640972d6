#!/usr/bin/python3
"""report.py — helper of the helmix make benchmark (bench/run.sh).

  report.py attrs FILE
      Print "timing_total_s peak_rss_kib" from the /helmix group attributes `timing_total`
      and `peak_rss_bytes` of a helmix output file ("nan" for an attribute that is missing).
  report.py table RESULTS.tsv N REPEATS
      Read the per-run lines written by run.sh (see benchlib.py; check is unused here) and
      print the Markdown table, a table of details and the verdict on the aims.

Wall time in the main table is the end-to-end command time measured by /usr/bin/time
(includes mpiexec start-up and Python imports), minimum over repeats. Peak RSS per rank is
what each program reports about itself (maximum over its ranks, then over repeats).
"""
import math
import os
import sys

sys.dont_write_bytecode = True  # import benchlib without leaving __pycache__ in bench/
import benchlib as bl  # noqa: E402
from benchlib import fmt, plural, ratio, verdict  # noqa: E402

AIM_WALL_VS_FLOOR = 1.5
AIM_SPEEDUP_VS_NUMPY = 5.0
AIM_RSS_VS_NUMPY = 0.25
# (label, ranks, row name, floor rank count to compare with)
ROWS = [("helmix", 1, "helmix make", 1), ("helmix", 2, "helmix make", 2),
        ("floor", 1, "floor", 1), ("floor", 2, "floor", 2), ("peer_numpy", 1, "numpy peer", 1)]


def attrs(path):
    import h5py
    wall = rss = math.nan
    try:
        with h5py.File(path, "r") as f:
            g = f.get("helmix")
            if g is not None:
                if "timing_total" in g.attrs:
                    wall = float(g.attrs["timing_total"])
                if "peak_rss_bytes" in g.attrs:
                    rss = float(g.attrs["peak_rss_bytes"]) / 1024.0
    except OSError as e:
        print(f"report.py: cannot read {path}: {e}", file=sys.stderr)
    print(f"{wall} {rss}")


def table(path, n, repeats):
    get = bl.begin_report(path, n, "make", "output", ROWS, own_rss=True)
    peer = get("peer_numpy", 1)
    print(f"\nWall: end-to-end command time (/usr/bin/time, includes mpiexec start-up or Python"
          f" imports), minimum of {repeats} runs. Peak RSS per rank: as each program reports"
          " it (getrusage ru_maxrss, maximum over ranks), maximum of the runs. The floor and"
          " the numpy peer rows compare with the floor on the same rank count (numpy: 1).\n")

    bl.details_table(ROWS, get, "largest process RSS MiB (/usr/bin/time)", "cmd_rss")
    print("\nInternal wall: helmix's `timing_total` attribute in /helmix; the floor's MPI_Wtime"
          " span after MPI_Init (max over ranks); the peer's time after its imports.")
    for label, ranks, name, _ in ROWS:
        r = get(label, ranks)
        if r["n_ok"] and not r["rss_from_self"]:
            print(f"Note: {name} on {ranks} rank(s) reported no peak RSS of its own; the"
                  " /usr/bin/time figure is used instead.")

    print("\nAims:\n")
    for ranks in (1, 2):
        h = get("helmix", ranks)
        w = ratio(h["wall"], get("floor", ranks)["wall"])
        sp = ratio(peer["wall"], h["wall"])
        rr = ratio(h["rss"], peer["rss"])
        print(f"- {plural(ranks)}: wall <= {AIM_WALL_VS_FLOOR}x floor: {fmt(w, '.2f')}x — "
              f"{verdict(w, lambda x: x <= AIM_WALL_VS_FLOOR)}")
        print(f"- {plural(ranks)}: >= {AIM_SPEEDUP_VS_NUMPY:g}x faster than numpy: "
              f"{fmt(sp, '.1f')}x — {verdict(sp, lambda x: x >= AIM_SPEEDUP_VS_NUMPY)}")
        extra = ""
        if ranks > 1 and not math.isnan(rr):
            extra = f" (all {ranks} ranks together: {fmt(rr * ranks, '.2f')} of numpy's)"
        print(f"- {plural(ranks)}: peak RSS per rank <= 1/4 of numpy's: {fmt(rr, '.2f')} of"
              f" numpy's{extra} — {verdict(rr, lambda x: x <= AIM_RSS_VS_NUMPY)}")

    bl.machine_line()
    env = [f"{k}={os.environ[k]}" for k in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE")
           if k in os.environ]
    if env:
        print(f"\nEnvironment: {', '.join(env)} set (left as is; numpy's FFT does not use BLAS).")


if __name__ == "__main__":
    bl.main(__doc__, table, {"attrs": attrs})
