#!/usr/bin/python3
"""report_io.py — helper of the helmix write benchmark (bench/run_io.sh).

  report_io.py writes FILE
      Print the write time of a helmix file: the sum of the /helmix attribute timing_write
      (one value per velocity component, as make records it) — "nan" if it is missing.
  report_io.py table RESULTS.tsv N REPEATS
      Read the per-run lines written by run_io.sh (see benchlib.py; self_wall is the write
      time, check the bytes written) and print the Markdown table.

The write time is the minimum over repeats; bandwidth is bytes over that time. Ratios compare
each row with `dd` of the same bytes into the same directory without fdatasync (both go to the
page cache); the fdatasync row is the disk's own speed, for information.
"""
import math
import sys

sys.dont_write_bytecode = True  # import benchlib without leaving __pycache__ in bench/
import benchlib as bl  # noqa: E402
from benchlib import fmt, ratio  # noqa: E402

MIB = 1048576.0
ROWS = [("helmix_default", 1, "helmix make, default"), ("helmix_tuned", 1, "helmix make, aligned + hints"),
        ("helmix_tuned_romio", 1, "helmix make, aligned + hints, ROMIO"),
        ("helmix_default", 2, "helmix make, default"), ("helmix_tuned", 2, "helmix make, aligned + hints"),
        ("helmix_tuned_romio", 2, "helmix make, aligned + hints, ROMIO"),
        ("dd", 1, "dd bs=1M"), ("dd_fdatasync", 1, "dd bs=1M conv=fdatasync")]


def writes(path):
    import h5py
    t = math.nan
    try:
        with h5py.File(path, "r") as f:
            if "timing_write" in f["helmix"].attrs:
                t = float(sum(f["helmix"].attrs["timing_write"]))
    except (OSError, KeyError) as e:
        print(f"report_io.py: cannot read {path}: {e}", file=sys.stderr)
    print(t)


def table(path, n, repeats):
    get = bl.getter(bl.summary(bl.load(path), own_rss=False))
    dd = get("dd", 1)
    nbytes = next((get(l, r)["check"] for l, r, _ in ROWS if not math.isnan(get(l, r)["check"])), math.nan)
    print(f"### helmix write bandwidth, N = {n} ({fmt(nbytes / MIB, '.1f')} MiB: 3 components)\n")
    print("| run | ranks | write s | MiB/s | time vs dd | command wall s |")
    print("|---|---:|---:|---:|---:|---:|")
    for label, ranks, name in ROWS:
        r = get(label, ranks)
        if r["n"] == 0:
            continue
        if r["n_ok"] == 0:
            print(f"| {name} | {ranks} | failed | n/a | n/a | n/a |")
            continue
        bw = nbytes / r["self_wall"] / MIB if r["self_wall"] else math.nan
        print(f"| {name} | {ranks} | {fmt(r['self_wall'], '.3f')} | {fmt(bw, '.0f')} |"
              f" {fmt(ratio(r['self_wall'], dd['self_wall']), '.2f')} | {fmt(r['wall'], '.2f')} |")
    print(f"\nWrite s: helmix's recorded write phase (sum of `timing_write` over the three"
          f" components) or dd's own figure; minimum of {repeats} runs. Both helmix and plain dd"
          " leave the data in the page cache; `conv=fdatasync` adds the flush to the disk.")
    bl.machine_line()


if __name__ == "__main__":
    bl.main(__doc__, table, {"writes": writes})
