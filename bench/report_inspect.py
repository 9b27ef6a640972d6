#!/usr/bin/python3
"""report_inspect.py — helper of the helmix inspect benchmark (bench/run_inspect.sh).

  report_inspect.py fraction FILE.json
      Print the compressive share recorded in a `helmix inspect --json` file ("nan" if the
      file or the number is missing).
  report_inspect.py table RESULTS.tsv N REPEATS
      Read the per-run lines written by run_inspect.sh (see benchlib.py; check is the
      compressive share, or the floor's x mean) and print the Markdown table, a table of
      details, the data check and the aim.

Wall time in the main table is the end-to-end command time measured by /usr/bin/time
(includes mpiexec start-up and Python imports), minimum over repeats. Peak RSS per rank is
/usr/bin/time's %M for every row (the largest single process of the command: for an MPI job
the largest rank), maximum over repeats; the floor's and the peer's own getrusage figures
are shown in the details as a cross-check.
"""
import json
import sys

sys.dont_write_bytecode = True  # import benchlib without leaving __pycache__ in bench/
import benchlib as bl  # noqa: E402
from benchlib import finite, fmt, plural, ratio, verdict  # noqa: E402

AIM_WALL_VS_FLOOR = 1.3
# (label, ranks, row name, floor to compare with: its rank count, or (label, ranks))
ROWS = [("inspect", 1, "helmix inspect", 1), ("inspect", 2, "helmix inspect", 2),
        ("inspect_t2", 1, "helmix inspect --threads 2", ("floor_t2", 1)),
        ("inspect_plot", 2, "helmix inspect --plot", 2),
        ("floor", 1, "floor", 1), ("floor", 2, "floor", 2), ("floor_t2", 1, "floor, 2 threads", ("floor_t2", 1)),
        ("peer_numpy", 1, "numpy peer", 1)]


def fraction(path):
    try:
        with open(path) as f:
            print(float(json.load(f)["energy"]["compressive_fraction"]))
    except (OSError, ValueError, KeyError, TypeError) as e:
        print(f"report_inspect.py: no compressive share in {path}: {e}", file=sys.stderr)
        print("nan")


def table(path, n, repeats):
    get = bl.begin_report(path, n, "inspect", "input", ROWS, own_rss=False)
    peer = get("peer_numpy", 1)
    print(f"\nWall: end-to-end command time (/usr/bin/time %e, includes mpiexec start-up or"
          f" Python imports), minimum of {repeats} runs. Peak RSS per rank: /usr/bin/time %M"
          " (the largest single process, i.e. the largest rank), maximum of the runs. The"
          " floor rows and the numpy peer compare with the floor on the same rank count"
          " (numpy: 1). The file is read from the page cache (helmix make has just written"
          " it), so the figures show compute and HDF5 overhead, not disk speed.\n")

    bl.details_table(ROWS, get, "own peak RSS MiB (getrusage)", "self_rss")
    print("\nInternal wall: the floor's MPI_Wtime span after MPI_Init (max over ranks); the"
          " peer's time after its imports. helmix inspect reports neither time nor RSS of"
          " its own with --quiet (n/a).")

    i2, p2 = get("inspect", 2), get("inspect_plot", 2)
    print(f"\nCost of --plot (mid-plane slices and the report page) on 2 ranks: "
          f"{fmt(p2['wall'] - i2['wall'], '+.2f')} s wall, "
          f"{fmt((p2['rss'] - i2['rss']) * bl.MIB, '+.0f')} MiB peak RSS per rank.")

    fracs = [(name, ranks, get(label, ranks)["check"]) for label, ranks, name, _ in ROWS
             if not label.startswith("floor")]
    ref = peer["check"]
    parts = [f"{name} ({ranks}): {fmt(f, '.10f')}" for name, ranks, f in fracs]
    worst = max(finite([abs(f - ref) for _, _, f in fracs]), default=float("nan"))
    print(f"\nSame data, same answer — compressive share: {'; '.join(parts)};"
          f" largest difference {fmt(worst, '.1e')}. Floor <v_x>: "
          f"{fmt(get('floor', 1)['check'], '.6e')} (1 rank), "
          f"{fmt(get('floor', 2)['check'], '.6e')} (2 ranks).")

    print("\nAim:\n")
    for ranks in (1, 2):
        w = ratio(get("inspect", ranks)["wall"], get("floor", ranks)["wall"])
        print(f"- {plural(ranks)}: inspect wall <= {AIM_WALL_VS_FLOOR}x floor: {fmt(w, '.2f')}x"
              f" — {verdict(w, lambda x: x <= AIM_WALL_VS_FLOOR)}")
    w = ratio(get("inspect_t2", 1)["wall"], get("floor_t2", 1)["wall"])
    print(f"- 1 rank x 2 threads: inspect wall <= {AIM_WALL_VS_FLOOR}x floor with 2 threads: {fmt(w, '.2f')}x"
          f" — {verdict(w, lambda x: x <= AIM_WALL_VS_FLOOR)}")
    w = ratio(p2["wall"], get("floor", 2)["wall"])
    print(f"- (for information) inspect --plot, 2 ranks: {fmt(w, '.2f')}x floor")

    bl.machine_line()


if __name__ == "__main__":
    bl.main(__doc__, table, {"fraction": fraction})
