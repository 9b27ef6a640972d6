#!/usr/bin/python3
"""report_inspect.py — helper of the helmix inspect benchmark (bench/run_inspect.sh).

  report_inspect.py fraction FILE.json
      Print the compressive share recorded in a `helmix inspect --json` file ("nan" if the
      file or the number is missing).
  report_inspect.py table RESULTS.tsv N REPEATS
      Read the per-run lines written by run_inspect.sh
        (label ranks rep rc cmd_wall_s cmd_maxrss_kib self_wall_s self_rss_kib check)
      and print the Markdown table, a table of details, the data check and the aim.

Wall time in the main table is the end-to-end command time measured by /usr/bin/time
(includes mpiexec start-up and Python imports), minimum over repeats. Peak RSS per rank is
/usr/bin/time's %M for every row (the largest single process of the command: for an MPI job
the largest rank), maximum over repeats; the floor's and the peer's own getrusage figures
are shown in the details as a cross-check.
"""
import json
import math
import os
import sys

AIM_WALL_VS_FLOOR = 1.5
# (label, ranks, row name, floor rank count to compare with)
ROWS = [("inspect", 1, "helmix inspect", 1), ("inspect", 2, "helmix inspect", 2),
        ("inspect_plot", 2, "helmix inspect --plot", 2),
        ("floor", 1, "floor", 1), ("floor", 2, "floor", 2),
        ("peer_numpy", 1, "numpy peer", 1)]
NOTHING = dict(n_ok=0, n=0, wall=math.nan, walls=[], self_wall=math.nan, rss=math.nan,
               self_rss=math.nan, check=math.nan)


def fraction(path):
    try:
        with open(path) as f:
            print(float(json.load(f)["energy"]["compressive_fraction"]))
    except (OSError, ValueError, KeyError, TypeError) as e:
        print(f"report_inspect.py: no compressive share in {path}: {e}", file=sys.stderr)
        print("nan")


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
            if len(parts) != 9:
                continue
            label, ranks, rc = parts[0], int(parts[1]), int(parts[3])
            runs.setdefault((label, ranks), []).append(
                dict(rc=rc, cmd_wall=num(parts[4]), cmd_rss=num(parts[5]),
                     self_wall=num(parts[6]), self_rss=num(parts[7]), check=num(parts[8])))
    return runs


def finite(xs):
    return [x for x in xs if not math.isnan(x)]


def summary(runs):
    """Per (label, ranks): min walls, max RSS, the check values; nan where nothing was measured."""
    out = {}
    for key, rs in runs.items():
        ok = [r for r in rs if r["rc"] == 0]
        walls = finite([r["cmd_wall"] for r in ok])
        rss = finite([r["cmd_rss"] for r in ok])
        selfw = finite([r["self_wall"] for r in ok])
        selfr = finite([r["self_rss"] for r in ok])
        checks = finite([r["check"] for r in ok])
        out[key] = dict(
            n_ok=len(ok), n=len(rs), walls=walls,
            wall=min(walls) if walls else math.nan,
            rss=max(rss) if rss else math.nan,
            self_wall=min(selfw) if selfw else math.nan,
            self_rss=max(selfr) if selfr else math.nan,
            check=checks[-1] if checks else math.nan)
    return out


def fmt(x, spec):
    return "n/a" if x is None or math.isnan(x) else format(x, spec)


def ratio(a, b):
    return a / b if b and not math.isnan(a) and not math.isnan(b) else math.nan


def table(path, n, repeats):
    s = summary(load(path))
    get = lambda label, ranks: s.get((label, ranks), NOTHING)
    peer = get("peer_numpy", 1)
    mib = 1.0 / 1024.0

    print(f"### helmix inspect benchmark, N = {n} (cells {n}^3, 3 components, float32 input)\n")
    print("| run | ranks | wall s | peak RSS per rank MiB | ratio vs floor | speed-up vs numpy"
          " | RSS ratio vs numpy |")
    print("|---|---:|---:|---:|---:|---:|---:|")
    for label, ranks, name, fr in ROWS:
        r = get(label, ranks)
        fl = get("floor", fr)
        cells = [fmt(r["wall"], ".2f"), fmt(r["rss"] * mib, ".0f"),
                 fmt(ratio(r["wall"], fl["wall"]), ".2f"),
                 fmt(ratio(peer["wall"], r["wall"]), ".1f"),
                 fmt(ratio(r["rss"], peer["rss"]), ".2f")]
        if r["n_ok"] == 0:
            cells = ["failed" if r["n"] else "not run"] + ["n/a"] * 4
        print(f"| {name} | {ranks} | " + " | ".join(cells) + " |")

    print(f"\nWall: end-to-end command time (/usr/bin/time %e, includes mpiexec start-up or"
          f" Python imports), minimum of {repeats} runs. Peak RSS per rank: /usr/bin/time %M"
          " (the largest single process, i.e. the largest rank), maximum of the runs. The"
          " floor rows and the numpy peer compare with the floor on the same rank count"
          " (numpy: 1). The file is read from the page cache (helmix make has just written"
          " it), so the figures show compute and HDF5 overhead, not disk speed.\n")

    print("Details:\n")
    print("| run | ranks | runs ok | all walls s | internal wall s | internal ratio vs floor"
          " | own peak RSS MiB (getrusage) |")
    print("|---|---:|---:|---|---:|---:|---:|")
    for label, ranks, name, fr in ROWS:
        r = get(label, ranks)
        fl = get("floor", fr)
        walls = ", ".join(format(w, ".2f") for w in r["walls"]) or "n/a"
        print(f"| {name} | {ranks} | {r['n_ok']}/{r['n']} | {walls} | "
              f"{fmt(r['self_wall'], '.2f')} | "
              f"{fmt(ratio(r['self_wall'], fl['self_wall']), '.2f')} | "
              f"{fmt(r['self_rss'] * mib, '.0f')} |")
    print("\nInternal wall: the floor's MPI_Wtime span after MPI_Init (max over ranks); the"
          " peer's time after its imports. helmix inspect reports neither time nor RSS of"
          " its own with --quiet (n/a).")

    i2, p2 = get("inspect", 2), get("inspect_plot", 2)
    print(f"\nCost of --plot (mid-plane slices and the report page) on 2 ranks: "
          f"{fmt(p2['wall'] - i2['wall'], '+.2f')} s wall, "
          f"{fmt((p2['rss'] - i2['rss']) * mib, '+.0f')} MiB peak RSS per rank.")

    fracs = [(name, ranks, get(label, ranks)["check"]) for label, ranks, name, _ in ROWS
             if label != "floor"]
    ref = peer["check"]
    parts = [f"{name} ({ranks}): {fmt(f, '.10f')}" for name, ranks, f in fracs]
    worst = max(finite([abs(f - ref) for _, _, f in fracs]), default=math.nan)
    print(f"\nSame data, same answer — compressive share: {'; '.join(parts)};"
          f" largest difference {fmt(worst, '.1e')}. Floor <v_x>: "
          f"{fmt(get('floor', 1)['check'], '.6e')} (1 rank), "
          f"{fmt(get('floor', 2)['check'], '.6e')} (2 ranks).")

    print("\nAim:\n")
    plural = lambda r: f"{r} rank" if r == 1 else f"{r} ranks"
    for ranks in (1, 2):
        w = ratio(get("inspect", ranks)["wall"], get("floor", ranks)["wall"])
        verdict = "n/a (not measured)" if math.isnan(w) else (
            "met" if w <= AIM_WALL_VS_FLOOR else "not met")
        print(f"- {plural(ranks)}: inspect wall <= {AIM_WALL_VS_FLOOR}x floor: {fmt(w, '.2f')}x"
              f" — {verdict}")
    w = ratio(p2["wall"], get("floor", 2)["wall"])
    print(f"- (for information) inspect --plot, 2 ranks: {fmt(w, '.2f')}x floor")

    if os.environ.get("BENCH_LOAD_START"):
        print(f"\nMachine: {os.environ.get('BENCH_CORES', '?')} cores; load average (1, 5, 15"
              f" min) before {os.environ['BENCH_LOAD_START']}, after"
              f" {os.environ.get('BENCH_LOAD_END', '?')}. A busy machine inflates the 2-rank"
              " rows most.")


def main():
    if len(sys.argv) == 3 and sys.argv[1] == "fraction":
        fraction(sys.argv[2])
    elif len(sys.argv) == 5 and sys.argv[1] == "table":
        table(sys.argv[2], int(sys.argv[3]), int(sys.argv[4]))
    else:
        sys.exit(__doc__)


if __name__ == "__main__":
    main()
