#!/usr/bin/python3
"""report.py — helper of the helmix benchmark (bench/run.sh).

  report.py attrs FILE
      Print "timing_total_s peak_rss_kib" from the /helmix group attributes `timing_total`
      and `peak_rss_bytes` of a helmix output file ("nan" for an attribute that is missing).
  report.py table RESULTS.tsv N REPEATS
      Read the per-run lines written by run.sh
        (label ranks rep rc cmd_wall_s cmd_maxrss_kib self_wall_s self_rss_kib)
      and print the Markdown table, a table of details and the verdict on the aims.

Wall time in the main table is the end-to-end command time measured by /usr/bin/time
(includes mpiexec start-up and Python imports), minimum over repeats. Peak RSS per rank is
what each program reports about itself (maximum over its ranks, then over repeats).
"""
import math
import os
import sys

AIM_WALL_VS_FLOOR = 1.5
AIM_SPEEDUP_VS_NUMPY = 5.0
AIM_RSS_VS_NUMPY = 0.25
ROWS = [("helmix", 1, "helmix make"), ("helmix", 2, "helmix make"),
        ("floor", 1, "floor"), ("floor", 2, "floor"), ("peer_numpy", 1, "numpy peer")]


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


def num(s):
    try:
        return float(s)
    except ValueError:
        return math.nan


def load(path):
    runs = {}
    with open(path) as f:
        for line in f:
            parts = line.rstrip("\n").split("\t")
            if len(parts) != 8:
                continue
            label, ranks, _rep, rc = parts[0], int(parts[1]), parts[2], int(parts[3])
            runs.setdefault((label, ranks), []).append(
                dict(rc=rc, cmd_wall=num(parts[4]), cmd_rss=num(parts[5]),
                     self_wall=num(parts[6]), self_rss=num(parts[7])))
    return runs


def finite(xs):
    return [x for x in xs if not math.isnan(x)]


def summary(runs):
    """Per (label, ranks): min walls, max RSS, counts; nan where nothing was measured."""
    out = {}
    for key, rs in runs.items():
        ok = [r for r in rs if r["rc"] == 0]
        walls = finite([r["cmd_wall"] for r in ok])
        selfw = finite([r["self_wall"] for r in ok])
        selfr = finite([r["self_rss"] for r in ok])
        cmdr = finite([r["cmd_rss"] for r in ok])
        out[key] = dict(
            n_ok=len(ok), n=len(rs),
            wall=min(walls) if walls else math.nan,
            walls=walls,
            self_wall=min(selfw) if selfw else math.nan,
            rss=max(selfr) if selfr else math.nan,
            rss_from_self=bool(selfr),
            cmd_rss=max(cmdr) if cmdr else math.nan)
        if not selfr and cmdr:  # fall back on /usr/bin/time's figure
            out[key]["rss"] = max(cmdr)
    return out


def fmt(x, spec):
    return "n/a" if x is None or math.isnan(x) else format(x, spec)


def ratio(a, b):
    return a / b if b and not math.isnan(a) and not math.isnan(b) else math.nan


def table(path, n, repeats):
    s = summary(load(path))
    nan = dict(n_ok=0, n=0, wall=math.nan, walls=[], self_wall=math.nan, rss=math.nan,
               rss_from_self=False, cmd_rss=math.nan)
    get = lambda label, ranks: s.get((label, ranks), nan)
    peer = get("peer_numpy", 1)
    mib = 1.0 / 1024.0

    print(f"### helmix make benchmark, N = {n} (cells {n}^3, 3 components, float32 output)\n")
    print("| run | ranks | wall s | peak RSS per rank MiB | ratio vs floor | speed-up vs numpy"
          " | RSS ratio vs numpy |")
    print("|---|---:|---:|---:|---:|---:|---:|")
    for label, ranks, name in ROWS:
        r = get(label, ranks)
        fl = get("floor", ranks)
        cells = [fmt(r["wall"], ".2f"), fmt(r["rss"] * mib, ".0f"),
                 fmt(ratio(r["wall"], fl["wall"]), ".2f"),
                 fmt(ratio(peer["wall"], r["wall"]), ".1f"),
                 fmt(ratio(r["rss"], peer["rss"]), ".2f")]
        if r["n_ok"] == 0:
            cells = ["failed" if r["n"] else "not run"] + ["n/a"] * 4
        print(f"| {name} | {ranks} | " + " | ".join(cells) + " |")

    print(f"\nWall: end-to-end command time (/usr/bin/time, includes mpiexec start-up or Python"
          f" imports), minimum of {repeats} runs. Peak RSS per rank: as each program reports"
          " it (getrusage ru_maxrss, maximum over ranks), maximum of the runs. The floor and"
          " the numpy peer rows compare with the floor on the same rank count (numpy: 1).\n")

    print("Details:\n")
    print("| run | ranks | runs ok | all walls s | internal wall s | internal ratio vs floor"
          " | largest process RSS MiB (/usr/bin/time) |")
    print("|---|---:|---:|---|---:|---:|---:|")
    for label, ranks, name in ROWS:
        r = get(label, ranks)
        fl = get("floor", ranks)
        walls = ", ".join(format(w, ".2f") for w in r["walls"]) or "n/a"
        print(f"| {name} | {ranks} | {r['n_ok']}/{r['n']} | {walls} | "
              f"{fmt(r['self_wall'], '.2f')} | "
              f"{fmt(ratio(r['self_wall'], fl['self_wall']), '.2f')} | "
              f"{fmt(r['cmd_rss'] * mib, '.0f')} |")
    print("\nInternal wall: helmix's `timing_total` attribute in /helmix; the floor's MPI_Wtime"
          " span after MPI_Init (max over ranks); the peer's time after its imports.")
    for label, ranks, name in ROWS:
        r = get(label, ranks)
        if r["n_ok"] and not r["rss_from_self"]:
            print(f"Note: {name} on {ranks} rank(s) reported no peak RSS of its own; the"
                  " /usr/bin/time figure is used instead.")

    print("\nAims:\n")
    plural = lambda r: f"{r} rank" if r == 1 else f"{r} ranks"
    verdict = lambda ok: "n/a (not measured)" if ok is None else ("met" if ok else "not met")
    for ranks in (1, 2):
        h = get("helmix", ranks)
        fl = get("floor", ranks)
        w = ratio(h["wall"], fl["wall"])
        sp = ratio(peer["wall"], h["wall"])
        rr = ratio(h["rss"], peer["rss"])
        chk = lambda x, good: None if math.isnan(x) else good(x)
        print(f"- {plural(ranks)}: wall <= {AIM_WALL_VS_FLOOR}x floor: {fmt(w, '.2f')}x — "
              f"{verdict(chk(w, lambda x: x <= AIM_WALL_VS_FLOOR))}")
        print(f"- {plural(ranks)}: >= {AIM_SPEEDUP_VS_NUMPY:g}x faster than numpy: "
              f"{fmt(sp, '.1f')}x — {verdict(chk(sp, lambda x: x >= AIM_SPEEDUP_VS_NUMPY))}")
        extra = ""
        if ranks > 1 and not math.isnan(rr):
            extra = f" (all {ranks} ranks together: {fmt(rr * ranks, '.2f')} of numpy's)"
        print(f"- {plural(ranks)}: peak RSS per rank <= 1/4 of numpy's: {fmt(rr, '.2f')} of"
              f" numpy's{extra} — {verdict(chk(rr, lambda x: x <= AIM_RSS_VS_NUMPY))}")

    if os.environ.get("BENCH_LOAD"):
        print(f"\nMachine: {os.environ.get('BENCH_CORES', '?')} cores; load average (1, 5, 15 min)"
              f" {os.environ['BENCH_LOAD']}. A busy machine inflates the 2-rank rows most.")
    env = [f"{k}={os.environ[k]}" for k in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE")
           if k in os.environ]
    if env:
        print(f"\nEnvironment: {', '.join(env)} set (left as is; numpy's FFT does not use BLAS).")


def main():
    if len(sys.argv) == 3 and sys.argv[1] == "attrs":
        attrs(sys.argv[2])
    elif len(sys.argv) == 5 and sys.argv[1] == "table":
        table(sys.argv[2], int(sys.argv[3]), int(sys.argv[4]))
    else:
        sys.exit(__doc__)


if __name__ == "__main__":
    main()
