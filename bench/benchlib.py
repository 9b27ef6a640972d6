"""benchlib.py — what the two helmix benchmark reports share (bench/report.py for
`helmix make`, bench/report_inspect.py for `helmix inspect`): reading the per-run lines that
bench/lib.sh writes, reducing the repeats (minimum wall, maximum RSS), the Markdown tables,
the aims' verdicts, the machine line and the command-line dispatch.

A results file has one tab-separated line per run:
  label ranks rep rc cmd_wall_s cmd_maxrss_kib self_wall_s self_rss_kib check
cmd_*: /usr/bin/time's %e and %M for the whole command; self_*: what the program reports
about itself; check: a number that shows which data a run saw (or nan). Missing values are
"nan"; rc is the exit status (only rc = 0 runs count).
"""
import math
import os
import sys

MIB = 1.0 / 1024.0
FIELDS = 9

# What a row shows when its command never ran.
NOTHING = dict(n_ok=0, n=0, walls=[], wall=math.nan, rss=math.nan, rss_from_self=False,
               cmd_rss=math.nan, self_wall=math.nan, self_rss=math.nan, check=math.nan)


def num(s):
    try:
        return float(s)
    except ValueError:
        return math.nan


def finite(xs):
    return [x for x in xs if not math.isnan(x)]


def load(path):
    """(label, ranks) -> list of runs, each a dict of the columns after rep."""
    runs = {}
    with open(path) as f:
        for line in f:
            parts = line.rstrip("\n").split("\t")
            if len(parts) != FIELDS:
                continue
            label, ranks, rc = parts[0], int(parts[1]), int(parts[3])
            runs.setdefault((label, ranks), []).append(
                dict(rc=rc, cmd_wall=num(parts[4]), cmd_rss=num(parts[5]),
                     self_wall=num(parts[6]), self_rss=num(parts[7]), check=num(parts[8])))
    return runs


def summary(runs, own_rss):
    """Per (label, ranks): minimum walls, maximum RSS, the last check value, counts; nan
    where nothing was measured. `rss` is the figure of the main table: with own_rss the
    program's own report (falling back on /usr/bin/time's where there is none), else
    /usr/bin/time's."""
    out = {}
    for key, rs in runs.items():
        ok = [r for r in rs if r["rc"] == 0]
        walls = finite([r["cmd_wall"] for r in ok])
        cmdr = finite([r["cmd_rss"] for r in ok])
        selfw = finite([r["self_wall"] for r in ok])
        selfr = finite([r["self_rss"] for r in ok])
        checks = finite([r["check"] for r in ok])
        s = dict(
            n_ok=len(ok), n=len(rs), walls=walls,
            wall=min(walls) if walls else math.nan,
            cmd_rss=max(cmdr) if cmdr else math.nan,
            self_wall=min(selfw) if selfw else math.nan,
            self_rss=max(selfr) if selfr else math.nan,
            check=checks[-1] if checks else math.nan,
            rss_from_self=own_rss and bool(selfr))
        s["rss"] = s["self_rss"] if s["rss_from_self"] else s["cmd_rss"]
        out[key] = s
    return out


def getter(summ):
    """get(label, ranks) -> that row's summary, NOTHING if it never ran."""
    return lambda label, ranks: summ.get((label, ranks), NOTHING)


def fmt(x, spec):
    return "n/a" if x is None or math.isnan(x) else format(x, spec)


def ratio(a, b):
    return a / b if b and not math.isnan(a) and not math.isnan(b) else math.nan


def plural(ranks):
    return f"{ranks} rank" if ranks == 1 else f"{ranks} ranks"


def verdict(x, good):
    """'met' / 'not met' for a measured ratio x and its test, else 'n/a (not measured)'."""
    return "n/a (not measured)" if math.isnan(x) else ("met" if good(x) else "not met")


# ROWS of a report: (label, ranks, row name, floor to compare with: the rank count of the
# "floor" rows, or a (label, ranks) pair such as ("floor_t2", 1)).

def begin_report(path, n, command, io, rows, own_rss):
    """Read a results file, print the title and the main table of `helmix COMMAND` (float32
    IO: "output" or "input"); return get(label, ranks) for the rest of the report."""
    get = getter(summary(load(path), own_rss))
    main_table(f"### helmix {command} benchmark, N = {n} (cells {n}^3, 3 components, float32"
               f" {io})", rows, get)
    return get


def main_table(title, rows, get):
    """The Markdown table: wall, peak RSS per rank, against the floor and the numpy peer."""
    peer = get("peer_numpy", 1)
    print(f"{title}\n")
    print("| run | ranks | wall s | peak RSS per rank MiB | ratio vs floor | speed-up vs numpy"
          " | RSS ratio vs numpy |")
    print("|---|---:|---:|---:|---:|---:|---:|")
    for label, ranks, name, floor_ranks in rows:
        r = get(label, ranks)
        fl = get(*floor_ranks) if isinstance(floor_ranks, tuple) else get("floor", floor_ranks)
        cells = [fmt(r["wall"], ".2f"), fmt(r["rss"] * MIB, ".0f"),
                 fmt(ratio(r["wall"], fl["wall"]), ".2f"),
                 fmt(ratio(peer["wall"], r["wall"]), ".1f"),
                 fmt(ratio(r["rss"], peer["rss"]), ".2f")]
        if r["n_ok"] == 0:
            cells = ["failed" if r["n"] else "not run"] + ["n/a"] * 4
        print(f"| {name} | {ranks} | " + " | ".join(cells) + " |")


def details_table(rows, get, rss_title, rss_key):
    """Every wall, the programs' internal walls and the other RSS figure (rss_key)."""
    print("Details:\n")
    print("| run | ranks | runs ok | all walls s | internal wall s | internal ratio vs floor"
          f" | {rss_title} |")
    print("|---|---:|---:|---|---:|---:|---:|")
    for label, ranks, name, floor_ranks in rows:
        r = get(label, ranks)
        fl = get(*floor_ranks) if isinstance(floor_ranks, tuple) else get("floor", floor_ranks)
        walls = ", ".join(format(w, ".2f") for w in r["walls"]) or "n/a"
        print(f"| {name} | {ranks} | {r['n_ok']}/{r['n']} | {walls} | "
              f"{fmt(r['self_wall'], '.2f')} | "
              f"{fmt(ratio(r['self_wall'], fl['self_wall']), '.2f')} | "
              f"{fmt(r[rss_key] * MIB, '.0f')} |")


def machine_line():
    """Cores and load average before and after, as bench/lib.sh passes them."""
    if os.environ.get("BENCH_LOAD_START"):
        print(f"\nMachine: {os.environ.get('BENCH_CORES', '?')} cores; load average (1, 5, 15"
              f" min) before {os.environ['BENCH_LOAD_START']}, after"
              f" {os.environ.get('BENCH_LOAD_END', '?')}. A busy machine inflates the 2-rank"
              " rows most.")


def main(doc, table, probes):
    """`NAME table RESULTS.tsv N REPEATS` calls table(path, n, repeats); `NAME WHAT FILE`
    calls probes[WHAT](FILE); anything else prints the usage (doc) and exits."""
    argv = sys.argv
    if len(argv) == 5 and argv[1] == "table":
        table(argv[2], int(argv[3]), int(argv[4]))
    elif len(argv) == 3 and argv[1] in probes:
        probes[argv[1]](argv[2])
    else:
        sys.exit(doc)
