#!/usr/bin/python3
"""`helmix scaling`: the table and page from timing documents, and every refusal.

The test writes its own timing documents (invented runs with chosen times, valid against
docs/timings.schema.json by hxschema.py) and recomputes what the table must say with plain
Python:
  * strong scaling (common practice, e.g. any HPC scaling tutorial; from memory): for runs of
    one command and cells, P = ranks x threads, reference = fewest cores (P1, T1):
    speed-up T1/T, efficiency T1 P1 / (T P);
  * weak scaling: series of about equal cells per core, efficiency (T1 P1 / C1) / (T P / C),
    speed-up = efficiency x P / P1;
  * auto picks strong when one command and cells appear on two core counts, else weak;
  * every time in the table is the slowest rank's (seconds.max), per phase and in total;
  * the page is a PNG of 1800 x 1000 pixels with valid chunks (W3C PNG spec 2nd ed.), a PDF
    starts with %PDF- and ends with %%EOF (ISO 32000-1);
  * refusals, each with exit 2 and one line naming the cause: no files, a missing file, a
    directory, text that is not JSON, JSON of another schema (inspect's --json report), another
    schema version, a member missing or mistyped, min > max, an output directory that does not
    exist (--table, --plot), a plot name without .png/.pdf, an unknown --kind or option; nothing
    written; under mpiexec -n 2 the same statuses (rank 0 works, every rank exits alike).
"""

import copy
import json
import os
import sys

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402
import hxschema as S  # noqa: E402

HERE = os.path.dirname(os.path.abspath(__file__))
SCHEMA_PATH = os.path.join(HERE, "..", "..", "docs", "timings.schema.json")
SRC_STRONG = "strong scaling: speed-up T1/T, efficiency T1 P1/(T P) (common practice, from memory)"
SRC_WEAK = "weak scaling: efficiency T1/T at equal work per core, per cell when C/P differs (common practice)"
SRC_PNG = "W3C PNG specification 2nd ed. 2003 / RFC 2083"


def doc(command, n, ranks, threads, phases, rss=50e6):
    """A timing document: phases {name: (min, mean, max)}; the total is the sum of the maxima plus 0.1 s."""
    ph = [{"name": k, "seconds": {"min": a, "mean": b, "max": c}, "bytes_total": 0, "bytes_max_per_rank": 0,
           "transforms": 0, "transforms_total": 0} for k, (a, b, c) in phases.items()]
    tot = sum(c for a, b, c in phases.values()) + 0.1
    return {"schema": "helmix-timings", "schema_version": 1, "command": command, "helmix_version": "0.0.0",
            "ranks": ranks, "threads": threads, "grid": [n, n, n], "cells": n ** 3,
            "notes": {"scenario": "invented test run"}, "phases": ph,
            "total_seconds": {"min": tot * 0.9, "mean": tot * 0.95, "max": tot},
            "peak_rss_bytes": {"per_rank": [rss] * ranks, "max": rss}}


def parse_tables(text):
    """Markdown tables -> list of (heading, [row dicts])."""
    out, heading, header = [], None, None
    for ln in text.splitlines():
        if ln.startswith("## "):
            heading, header = ln[3:], None
            out.append((heading, []))
        elif ln.startswith("|"):
            cells = [x.strip() for x in ln.strip().strip("|").split("|")]
            if header is None:
                header = cells
            elif not all(set(x) <= set("-:") for x in cells):
                out[-1][1].append(dict(zip(header, cells)))
    return out


def write(hx, name, d):
    p = hx.path(name)
    with open(p, "w") as f:
        f.write(d if isinstance(d, str) else json.dumps(d))
    return p


def run(hx, *argv):
    proc, cmd, _ = hx.launch(["scaling", *argv], ranks=0)  # serial: one rank without the launcher
    return proc.returncode, proc.stdout, H.mpi_noise_free_lines(proc.stderr)


def body(args, hx, c):
    with open(SCHEMA_PATH) as f:
        schema = json.load(f)

    # ---- strong: 64^3 on 1, 2, 4 ranks and 2 ranks x 2 threads; 32^3 on 1 and 4 ranks; one inspect run
    runs = [("make", 64, 1, 1, 8.0), ("make", 64, 2, 1, 4.4), ("make", 64, 4, 1, 2.6), ("make", 64, 2, 2, 2.5),
            ("make", 32, 1, 1, 1.2), ("make", 32, 4, 1, 0.5), ("inspect", 64, 1, 1, 3.0), ("inspect", 64, 2, 1, 1.7)]
    files, docs = [], []
    for i, (cmd, n, p, t, tmax) in enumerate(runs):
        d = doc(cmd, n, p, t, {"plan": (0.01, 0.02, 0.03), "draw": (tmax * 0.5, tmax * 0.55, tmax * 0.6),
                               "write": (0.1, 0.15, 0.2 + i * 0.01)})
        docs.append(d)
        files.append(write(hx, f"strong_{i}.json", d))
    bad = [i for i, d in enumerate(docs) if S.errors(d, schema)]
    c.check("the invented documents are valid timings", not bad, f"{bad}")
    table, png, pdf = hx.path("strong.md"), hx.path("strong.png"), hx.path("strong.pdf")
    rc, out, err = run(hx, *files, "--table", table, "--plot", png)
    c.check("strong: exit 0, table printed and written", rc == 0 and os.path.exists(table) and
            open(table).read() == out, f"rc={rc} {err}")
    tables = parse_tables(out)
    c.check("strong: one table per command (inspect, make), auto chose strong",
            [h for h, _ in tables] == ["helmix inspect: strong scaling", "helmix make: strong scaling"], f"{[h for h, _ in tables]}")
    want = {}
    for (cmd, n, p, t, _), d in zip(runs, docs):
        ref = min((r for r in zip(runs, docs) if r[0][0] == cmd and r[0][1] == n), key=lambda r: r[0][2] * r[0][3])
        t1, p1 = ref[1]["total_seconds"]["max"], ref[0][2] * ref[0][3]
        tt = d["total_seconds"]["max"]
        want[(cmd, f"{n}³", p, t)] = (t1 / tt, t1 * p1 / (tt * p * t), tt, d["phases"][2]["seconds"]["max"])
    got = {}
    for h, rows in tables:
        cmd = h.split()[1].rstrip(":")
        for r in rows:
            got[(cmd, r["cells"], int(r["ranks"]), int(r["threads"]))] = r
    c.check("strong: one row per run", set(got) == set(want), f"{sorted(got)}")
    worst = 0.0
    for k, (su, ef, tt, wr) in want.items():
        r = got.get(k)
        if r is None:
            worst = float("inf")
            continue
        worst = max(worst, abs(float(r["speed-up"]) - su), abs(float(r["efficiency"]) - ef),
                    abs(float(r["total [s]"]) - tt) / tt, abs(float(r["write [s]"]) - wr) / wr,
                    abs(int(r["cores"]) - k[2] * k[3]))
    c.check("strong: speed-up, efficiency (2 decimals), total and phase times (slowest rank) recomputed",
            worst <= 0.0051, f"worst difference {worst:.3g}", SRC_STRONG)
    c.check("strong: make rows sorted by cells then cores", [(k[1], int(r["cores"])) for k, r in got.items() if k[0] == "make"] ==
            sorted([(k[1], int(r["cores"])) for k, r in got.items() if k[0] == "make"], key=lambda x: (int(x[0][:-1]), x[1])))
    try:
        info = X.read_png(png)
        ok = info["crc_ok"] and info["last_chunk"] == b"IEND" and (info["width"], info["height"]) == (1800, 1000)
        ok = ok and len(set(info["raw"])) > 20  # a drawn page, not a blank one
        c.check("strong: --plot writes a valid, non-blank 1800 x 1000 PNG", ok, f"{info['width']}x{info['height']}", SRC_PNG)
    except Exception as e:  # a broken file is a failed check
        c.fail("strong: --plot writes a valid PNG", repr(e))
    rc, _, err = run(hx, *files, "--plot", pdf, "--quiet")
    data = open(pdf, "rb").read() if os.path.exists(pdf) else b""
    c.check("strong: --plot F.pdf writes a PDF", rc == 0 and data.startswith(b"%PDF-") and data.rstrip().endswith(b"%%EOF"),
            f"rc={rc} {len(data)} bytes", "ISO 32000-1:2008")

    # ---- weak: cells per core about constant (even sizes: 32, 40, 50, 64 on 1, 2, 4, 8 ranks)
    wruns = [(32, 1, 1.00), (40, 2, 1.10), (50, 4, 1.25), (64, 8, 1.60)]
    wfiles, wdocs = [], []
    for i, (n, p, tmax) in enumerate(wruns):
        d = doc("make", n, p, 1, {"draw": (tmax * 0.4, tmax * 0.45, tmax * 0.5), "transform": (0.2, 0.25, 0.3)})
        wdocs.append(d)
        wfiles.append(write(hx, f"weak_{i}.json", d))
    rc, out, err = run(hx, *wfiles)
    tables = parse_tables(out)
    c.check("weak: auto chose weak for one run per size", rc == 0 and [h for h, _ in tables] == ["helmix make: weak scaling"],
            f"rc={rc} {[h for h, _ in tables]} {err}")
    t1, c1, p1 = wdocs[0]["total_seconds"]["max"], 32 ** 3, 1
    worst = 0.0
    rows = tables[0][1] if tables else []
    for (n, p, _), d, r in zip(wruns, wdocs, rows):
        tt = d["total_seconds"]["max"]
        ef = (t1 * p1 / c1) / (tt * p / n ** 3)
        worst = max(worst, abs(float(r["efficiency"]) - ef), abs(float(r["speed-up"]) - ef * p / p1),
                    0 if r["cells"] == f"{n}³" else 1)
    c.check("weak: efficiency per cell and speed-up recomputed, one series", len(rows) == 4 and worst <= 0.0051,
            f"worst {worst:.3g}", SRC_WEAK)
    rc, out, _ = run(hx, *wfiles, "--kind", "strong")
    c.check("--kind strong on the weak runs: four groups, each its own reference (efficiency 1.00)",
            rc == 0 and [r["efficiency"] for _, rows in parse_tables(out) for r in rows] == ["1.00"] * 4, out[-300:])

    # ---- refusals
    sane = files[0]
    insp = write(hx, "inspect_report.json", {"helmix_version": "0.1.0", "file": "x.h5", "energy": {"total": 1}})
    v2 = copy.deepcopy(docs[0]); v2["schema_version"] = 2
    noph = copy.deepcopy(docs[0]); del noph["phases"]
    strph = copy.deepcopy(docs[0]); strph["phases"][1]["seconds"]["max"] = "fast"
    inverted = copy.deepcopy(docs[0]); inverted["total_seconds"] = {"min": 3, "mean": 2, "max": 1}
    cases = [
        ("no files", [], "no timing files"),
        ("a missing file", [hx.path("absent.json")], "absent.json: cannot read"),
        ("a directory", [hx.tmp], "cannot read"),
        ("not JSON", [write(hx, "garbage.json", "plan: 1 s\n")], "garbage.json: not JSON"),
        ("another schema (an inspect report)", [insp], "not a helmix timings file"),
        ("schema version 2", [write(hx, "v2.json", v2)], "schema version 2"),
        ("no phases", [write(hx, "noph.json", noph)], "\"phases\" is missing"),
        ("a time that is text", [write(hx, "strph.json", strph)], "is not a number"),
        ("min > max", [write(hx, "inv.json", inverted)], "min <= mean <= max"),
        ("a good and a bad file", [sane, write(hx, "empty.json", "")], "empty.json: not JSON"),
        ("--table in a missing directory", [sane, "--table", hx.path("nodir/t.md")], "does not exist"),
        ("--plot in a missing directory", [sane, "--plot", hx.path("nodir/p.png")], "does not exist"),
        ("--plot without .png/.pdf", [sane, "--plot", hx.path("p.svg")], "must end in .png or .pdf"),
        ("--kind sideways", [sane, "--kind", "sideways"], "must be strong, weak or auto"),
        ("an unknown option", [sane, "--fast"], "unknown option"),
    ]
    for label, argv, needle in cases:
        rc, out, err = run(hx, *argv)
        lines = [ln for ln in err if ln.startswith("helmix")]
        c.check(f"refused: {label} (exit 2, one line)", rc == 2 and len(lines) == 1 and needle in lines[0] and not out,
                f"rc={rc} {lines}")
    # under the launcher rank 0 works alone and every rank leaves with its status
    proc, _, _ = hx.launch(["scaling", *files, "--quiet"], ranks=2)
    proc2, _, _ = hx.launch(["scaling", hx.path("absent.json")], ranks=2)
    lines = [ln for ln in H.mpi_noise_free_lines(proc2.stderr) if ln.startswith("helmix")]
    c.check("on 2 ranks: exit 0 for good files, exit 2 and one line for a missing one",
            proc.returncode == 0 and proc2.returncode == 2 and len(lines) == 1, f"{proc.returncode} {proc2.returncode} {lines}")
    c.check("refusals wrote nothing", not os.path.exists(hx.path("p.svg")) and not os.path.exists(hx.path("nodir")))


if __name__ == "__main__":
    H.run_main("scaling", __doc__, body)
