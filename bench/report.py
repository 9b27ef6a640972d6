#!/usr/bin/python3
"""report.py — helper of the helmix make benchmark (bench/run.sh).

  report.py attrs FILE
      Print "timing_total_s peak_rss_kib kept_draw_bytes" from the /helmix group attributes
      `timing_total`, `peak_rss_bytes` and `kept_draw_bytes` of a helmix output file ("nan"
      for an attribute that is missing).
  report.py table RESULTS.tsv N REPEATS
      Read the per-run lines written by run.sh (see benchlib.py; labels are KIND@N, e.g.
      make_single_keep@256, floor_double@512, peer_numpy@256; check is helmix's
      kept_draw_bytes) and print the Markdown tables and the verdict on the aims.

Wall time is the end-to-end command time measured by /usr/bin/time (includes mpiexec start-up
and Python imports), minimum over repeats; the internal walls (helmix's timing_total, the
floor's MPI_Wtime span) are shown beside it. Peak RSS per rank is what each program reports
about itself (maximum over its ranks, then over repeats). Memory is judged as bytes per cell
of the rank: (peak RSS - 80 MiB) / (N^3 / ranks).
"""
import math
import os
import sys

sys.dont_write_bytecode = True  # import benchlib without leaving __pycache__ in bench/
import benchlib as bl  # noqa: E402
from benchlib import fmt, plural, ratio, verdict  # noqa: E402

MIB = 1048576.0
AIM_WALL = {256: 1.3, 512: 1.2}          # make wall over floor wall, by N (others: 1.3)
AIM_SPEEDUP_VS_NUMPY = 10.0
AIM_BYTES_PER_CELL = {"double": 12.0, "single": 7.0}
FIXED_MIB = 80.0                          # the allowance on top of the bytes per cell
PRECISIONS = ("single", "double")
DRAWS = ("keep", "regenerate")


def attrs(path):
    import h5py
    out = [math.nan] * 3
    try:
        with h5py.File(path, "r") as f:
            g = f.get("helmix")
            if g is not None:
                for i, (name, scale) in enumerate((("timing_total", 1.0), ("peak_rss_bytes", 1024.0),
                                                   ("kept_draw_bytes", 1.0))):
                    if name in g.attrs:
                        out[i] = float(g.attrs[name]) / scale
    except OSError as e:
        print(f"report.py: cannot read {path}: {e}", file=sys.stderr)
    print(" ".join(str(x) for x in out))


def split(label):
    kind, _, n = label.partition("@")
    return kind, int(n) if n.isdigit() else 0


def per_cell(rss_kib, n, ranks):
    """Bytes per cell of the rank above the fixed allowance."""
    if math.isnan(rss_kib):
        return math.nan
    return (rss_kib * 1024.0 - FIXED_MIB * MIB) / (n ** 3 / ranks)


def table(path, n_first, repeats):
    runs = bl.load(path)
    summ = bl.summary(runs, own_rss=True)
    get = bl.getter(summ)
    sizes = sorted({split(label)[1] for label, _ in summ if split(label)[1]})
    peer_key = next(((lab, r) for lab, r in summ if split(lab)[0] == "peer_numpy"), None)
    peer = summ.get(peer_key, bl.NOTHING)
    peer_n = split(peer_key[0])[1] if peer_key else 0

    print(f"### helmix make benchmark, N = {', '.join(map(str, sizes))} (cells N^3, 3 components)\n")
    print("| N | ranks | precision | draws | make wall s | floor wall s | ratio vs floor |"
          " internal ratio | peak RSS per rank MiB | bytes/cell over 80 MiB (aim) |"
          " speed-up vs numpy |")
    print("|---:|---:|---|---|---:|---:|---:|---:|---:|---:|---:|")
    aims = []
    for n in sizes:
        ranks_here = sorted({r for lab, r in summ
                             if split(lab)[1] == n and split(lab)[0].startswith(("make_", "floor_"))})
        for ranks in ranks_here:
            for prec in PRECISIONS:
                fl = get(f"floor_{prec}@{n}", ranks)
                for draws in DRAWS:
                    h = get(f"make_{prec}_{draws}@{n}", ranks)
                    if h["n"] == 0:
                        continue
                    took = "n/a" if math.isnan(h["check"]) else ("kept" if h["check"] > 0 else "regenerated")
                    w = ratio(h["wall"], fl["wall"])
                    wi = ratio(h["self_wall"], fl["self_wall"])
                    bpc = per_cell(h["rss"], n, ranks)
                    sp = ratio(peer["wall"], h["wall"]) if n == peer_n else math.nan
                    cells = [fmt(h["wall"], ".2f"), fmt(fl["wall"], ".2f"), fmt(w, ".2f"),
                             fmt(wi, ".2f"), fmt(h["rss"] / 1024.0, ".0f"),
                             f"{fmt(bpc, '.2f')} (≤ {AIM_BYTES_PER_CELL[prec]:g}: budget"
                             f" {AIM_BYTES_PER_CELL[prec] * n ** 3 / ranks / MIB + FIXED_MIB:.0f} MiB)",
                             fmt(sp, ".1f")]
                    if h["n_ok"] == 0:
                        cells = ["failed"] + ["n/a"] * 6
                    shown = draws if took in ("n/a", "kept" if draws == "keep" else "regenerated") \
                        else f"{draws} (ran: {took})"
                    print(f"| {n} | {ranks} | {prec} | {shown} | " + " | ".join(cells) + " |")
                    aims.append((n, ranks, prec, draws, w, wi, bpc, sp))

    print(f"\nWall: end-to-end command time (/usr/bin/time, includes mpiexec start-up), minimum of"
          f" {repeats} runs, every command of a repeat run one after the other. Internal ratio:"
          " helmix's `timing_total` over the floor's MPI_Wtime span. The floor of each row has the"
          " row's precision (fftwf_mpi + float32 or fftw_mpi + float64), rank count and bytes"
          " written. Bytes/cell: (peak RSS per rank − 80 MiB) / (N³ / ranks).\n")

    print("Floors and the numpy peer:\n")
    print("| run | N | ranks | wall s | internal wall s | peak RSS per rank MiB | bytes/cell over 80 MiB |")
    print("|---|---:|---:|---:|---:|---:|---:|")
    for (label, ranks), r in sorted(summ.items(), key=lambda kv: (split(kv[0][0])[1], kv[0][1], kv[0][0])):
        kind, n = split(label)
        if kind.startswith("make_"):
            continue
        print(f"| {kind} | {n} | {ranks} | {fmt(r['wall'], '.2f')} | {fmt(r['self_wall'], '.2f')} |"
              f" {fmt(r['rss'] / 1024.0, '.0f')} | {fmt(per_cell(r['rss'], n, ranks), '.2f')} |")

    print("\nDetails (every wall, s):\n")
    print("| run | N | ranks | runs ok | all walls |")
    print("|---|---:|---:|---:|---|")
    for (label, ranks), r in sorted(summ.items(), key=lambda kv: (split(kv[0][0])[1], kv[0][1], kv[0][0])):
        kind, n = split(label)
        walls = ", ".join(format(w, ".2f") for w in r["walls"]) or "n/a"
        print(f"| {kind} | {n} | {ranks} | {r['n_ok']}/{r['n']} | {walls} |")

    print("\nAims:\n")
    for n, ranks, prec, draws, w, wi, bpc, sp in aims:
        aim = AIM_WALL.get(n, 1.3)
        if n >= 512 and ranks != 2:
            continue
        print(f"- N={n}, {plural(ranks)}, {prec}, draws {draws}: wall ≤ {aim}× floor:"
              f" {fmt(w, '.2f')}× (internal {fmt(wi, '.2f')}×) — {verdict(w, lambda x: x <= aim)};"
              f" memory ≤ {AIM_BYTES_PER_CELL[prec]:g} B/cell + 80 MiB: {fmt(bpc, '.2f')} B/cell —"
              f" {verdict(bpc, lambda x: x <= AIM_BYTES_PER_CELL[prec])}"
              + (f"; ≥ {AIM_SPEEDUP_VS_NUMPY:g}× faster than numpy: {fmt(sp, '.1f')}× —"
                 f" {verdict(sp, lambda x: x >= AIM_SPEEDUP_VS_NUMPY)}" if not math.isnan(sp) else ""))

    bl.machine_line()
    env = [f"{k}={os.environ[k]}" for k in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE")
           if k in os.environ]
    if env:
        print(f"\nEnvironment: {', '.join(env)} set (left as is; numpy's FFT does not use BLAS).")


if __name__ == "__main__":
    bl.main(__doc__, table, {"attrs": attrs})
