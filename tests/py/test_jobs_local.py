#!/usr/bin/python3
"""jobs/scaling.sh: a strong-scaling study run here, its matrix, its batch scripts.

  * --local --cells 32 --ranks "1 2" --inspect into a temporary directory (MPIEXEC = the
    tests' launcher): exit 0; timings/make_n32_p{1,2}_t1.json and inspect_... exist; scaling.md
    has one make row per rank count (32³ cells, threads 1); its efficiency and speed-up columns
    equal T1 P1 / (T P) and T1 / T recomputed with plain Python from the JSON files
    (total_seconds.max; strong-scaling definitions, common practice, from memory); scaling.png
    is a valid non-blank PNG (W3C PNG spec 2nd ed.) and scaling_inspect.md names inspect; the
    cubes were removed and no run's log holds an error;
  * --dry-run of a weak matrix: N = N0 (P/P0)^(1/3) rounded to the nearest even size, i.e.
    32, 40, 50, 64 on 1, 2, 4, 8 ranks (recomputed here);
  * --slurm with a stand-in sbatch on PATH (records its arguments, answers "ID;cluster" as
    `sbatch --parsable` does, Slurm documentation): one script per point with every
    placeholder filled, #SBATCH --ntasks/--cpus-per-task of the point, and a summary job
    submitted with --dependency=afterok on every point's id; --pbs --no-submit writes scripts
    and submits nothing;
  * bad options exit 2 with one line (odd cells, unknown mode, no mode);
  * a helmix whose make has no --timings is refused up front (exit 2, nothing created); the
    local and batch parts then wait for it (a note says so).
"""

import json
import os
import re
import shlex
import stat
import subprocess
import sys

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

HERE = os.path.dirname(os.path.abspath(__file__))
SCRIPT = os.path.normpath(os.path.join(HERE, "..", "..", "jobs", "scaling.sh"))
SRC_STRONG = "strong scaling: speed-up T1/T, efficiency T1 P1/(T P) (common practice, from memory)"


def sh(args, argv, env_extra=None, timeout=120, cwd=None):
    env = dict(os.environ, MPIEXEC=" ".join(shlex.quote(a) for a in args.mpiexec))
    env.update(env_extra or {})
    return subprocess.run(["bash", SCRIPT, *argv], capture_output=True, text=True, env=env, timeout=timeout, cwd=cwd)


def parse_table(text):
    rows, header = [], None
    for ln in text.splitlines():
        if not ln.startswith("|"):
            continue
        cells = [x.strip() for x in ln.strip().strip("|").split("|")]
        if header is None:
            header = cells
        elif not all(set(x) <= set("-:") for x in cells):
            rows.append(dict(zip(header, cells)))
    return rows


def body(args, hx, c):
    out = hx.path("study")
    help_text = subprocess.run([args.helmix, "make", "--help"], capture_output=True, text=True).stdout
    if "--timings" not in help_text:  # a helmix whose make cannot time itself: refused up front
        p = sh(args, ["--local", "--cells", "32", "--ranks", "1", "--out", out, "--helmix", args.helmix])
        c.check("without make --timings: exit 2, one line, nothing created", p.returncode == 2 and "--timings" in p.stderr
                and not os.path.exists(out), p.stderr)
        print("note: helmix make offers no --timings yet; the local study is skipped")
        return batch_and_options(args, hx, c, timed=False)
    p = sh(args, ["--local", "--cells", "32", "--ranks", "1 2", "--inspect", "--out", out, "--helmix", args.helmix])
    c.check("--local: exit 0", p.returncode == 0, f"rc={p.returncode} {p.stderr[-800:]}")
    tags = ["n32_p1_t1", "n32_p2_t1"]
    docs = {}
    for t in tags:
        for cmd in ("make", "inspect"):
            f = os.path.join(out, "timings", f"{cmd}_{t}.json")
            if os.path.exists(f):
                with open(f) as fh:
                    docs[(cmd, t)] = json.load(fh)
    c.check("--local: a make and an inspect timing file per point", len(docs) == 4, f"{sorted(docs)}")
    md = os.path.join(out, "scaling.md")
    rows = parse_table(open(md).read()) if os.path.exists(md) else []
    c.check("scaling.md: one make row per rank count, 32³ cells, 1 thread",
            [(r.get("cells"), r.get("ranks"), r.get("threads")) for r in rows] == [("32³", "1", "1"), ("32³", "2", "1")],
            f"{rows}")
    if len(docs) == 4 and len(rows) == 2:
        t1 = docs[("make", tags[0])]["total_seconds"]["max"]
        t2 = docs[("make", tags[1])]["total_seconds"]["max"]
        eff, su = t1 * 1 / (t2 * 2), t1 / t2
        c.check("scaling.md: efficiency and speed-up of 2 ranks recomputed from the JSON files",
                abs(float(rows[1]["efficiency"]) - eff) <= 0.0051 and abs(float(rows[1]["speed-up"]) - su) <= 0.0051 and
                rows[0]["efficiency"] == "1.00" and rows[0]["speed-up"] == "1.00",
                f"table {rows[1]['efficiency']} / {rows[1]['speed-up']}, recomputed {eff:.4f} / {su:.4f}", SRC_STRONG)
        c.check("scaling.md: total [s] is total_seconds.max of each file",
                all(abs(float(r["total [s]"]) - d) <= 5e-4 * d for r, d in zip(rows, (t1, t2))), f"{[r['total [s]'] for r in rows]}")
    png = os.path.join(out, "scaling.png")
    try:
        info = X.read_png(png)
        c.check("scaling.png: valid PNG, 1800 x 1000, not blank", os.path.getsize(png) > 0 and info["crc_ok"] and
                info["last_chunk"] == b"IEND" and (info["width"], info["height"]) == (1800, 1000) and len(set(info["raw"])) > 20,
                f"{os.path.getsize(png)} bytes", "W3C PNG specification 2nd ed. 2003")
    except Exception as e:  # a missing or broken file is a failed check
        c.fail("scaling.png: valid PNG", repr(e))
    mi = os.path.join(out, "scaling_inspect.md")
    c.check("scaling_inspect.md: the inspect table", os.path.exists(mi) and "helmix inspect: strong scaling" in open(mi).read()
            and os.path.exists(os.path.join(out, "scaling_inspect.png")))
    cubes = os.listdir(os.path.join(out, "cubes")) if os.path.isdir(os.path.join(out, "cubes")) else ["?"]
    logs = "".join(open(os.path.join(out, "logs", f)).read() for f in os.listdir(os.path.join(out, "logs"))) \
        if os.path.isdir(os.path.join(out, "logs")) else "?"
    c.check("cubes removed, no error in the logs", cubes == [] and "error" not in logs.lower(), f"{cubes} {logs[:300]}")
    p = sh(args, ["--local", "--cells", "32", "--ranks", "1", "--out", out, "--helmix", args.helmix])
    c.check("an output directory holding a study is refused (exit 2)", p.returncode == 2 and "already holds" in p.stderr, p.stderr)
    # threads: Open MPI's mpiexec would bind the lone rank to one core; the kit unbinds it, so
    # the rank may run on every CPU this test may (its own affinity mask)
    tout = hx.path("study_threads")
    p = sh(args, ["--local", "--cells", "32", "--ranks", "1", "--threads", "2", "--out", tout, "--helmix", args.helmix])
    tj = os.path.join(tout, "timings", "make_n32_p1_t2.json")
    notes = json.load(open(tj)).get("notes", {}) if os.path.exists(tj) else {}
    mine = len(os.sched_getaffinity(0))
    c.check("--local --threads 2: the rank runs unbound (cores_per_rank is this process's CPU count) with 2 threads",
            p.returncode == 0 and notes.get("cores_per_rank") == mine and json.load(open(tj)).get("threads") == 2,
            f"rc={p.returncode} notes {notes} own CPUs {mine} {p.stderr[-300:]}", "Open MPI mpiexec(1): --bind-to none")

    batch_and_options(args, hx, c, timed=True)


def batch_and_options(args, hx, c, timed):
    # weak matrix: nearest even size to N0 (P/P0)^(1/3)
    p = sh(args, ["--dry-run", "--kind", "weak", "--cells", "32", "--ranks", "1 2 4 8"])
    sizes = [int(m) for m in re.findall(r"^n(\d+)_p\d+_t\d+", p.stdout, re.M)]
    want = [max(4, 2 * int(32 * q ** (1 / 3) / 2 + 0.5)) for q in (1, 2, 4, 8)]
    c.check("--dry-run weak: N follows the cube root of the cores, even", p.returncode == 0 and sizes == want == [32, 40, 50, 64],
            f"{sizes} want {want}")

    for label, argv, needle in (("odd cells", ["--dry-run", "--cells", "33"], "even size"),
                                ("unknown mode", ["--cloud"], "unknown argument"),
                                ("no mode", ["--cells", "32"], "give a mode")):
        p = sh(args, argv)
        errs = [ln for ln in p.stderr.splitlines() if ln.strip()]
        c.check(f"refused: {label} (exit 2, one line)", p.returncode == 2 and len(errs) == 1 and needle in errs[0], f"{errs}")
    if not timed:
        return

    # batch: a stand-in sbatch that records what it is asked
    fake = hx.path("fakebin")
    os.makedirs(fake)
    calls = os.path.join(fake, "calls")
    with open(os.path.join(fake, "sbatch"), "w") as f:
        f.write(f'#!/bin/bash\necho "$@" >> {shlex.quote(calls)}\nn=$(wc -l < {shlex.quote(calls)})\necho "$((700 + n));testcluster"\n')
    os.chmod(os.path.join(fake, "sbatch"), stat.S_IRWXU)
    bo = hx.path("batch_study")
    p = sh(args, ["--slurm", "--cells", "64", "--ranks", "2 4", "--threads", "3", "--out", bo, "--helmix", args.helmix,
                  "--submit-args", "-p debug"], env_extra={"PATH": fake + os.pathsep + os.environ["PATH"], "MPIEXEC": "srun"})
    lines = open(calls).read().splitlines() if os.path.exists(calls) else []
    c.check("--slurm: three sbatch calls (two points, then the summary after both)", p.returncode == 0 and len(lines) == 3 and
            lines[2].startswith("--parsable -p debug --dependency=afterok:701:702 ") and lines[2].endswith("summary.slurm"),
            f"rc={p.returncode} {lines} {p.stderr[-300:]}", "sbatch --parsable / --dependency (Slurm documentation)")
    script = os.path.join(bo, "batch", "n64_p4_t3.slurm")
    text = open(script).read() if os.path.exists(script) else ""
    c.check("--slurm: the point's script has its tasks and threads, its commands, and no placeholder left",
            "#SBATCH --ntasks=4" in text and "#SBATCH --cpus-per-task=3" in text and "export OMP_NUM_THREADS=3" in text and
            "srun -n 4 " in text and "--timings" in text and "@" not in text.replace("@@", ""), text[-400:])
    summ = open(os.path.join(bo, "batch", "summary.slurm")).read() if os.path.exists(os.path.join(bo, "batch", "summary.slurm")) else ""
    c.check("--slurm: the summary job runs helmix scaling into scaling.md and scaling.png",
            "scaling timings/make_*.json --kind strong --table scaling.md --plot scaling.png" in summ, summ[-300:])
    po = hx.path("pbs_study")
    p = sh(args, ["--pbs", "--no-submit", "--cells", "64", "--ranks", "64", "--ranks-per-node", "48", "--out", po,
                  "--helmix", args.helmix], env_extra={"PATH": fake + os.pathsep + os.environ["PATH"]})
    text = open(os.path.join(po, "batch", "n64_p64_t1.pbs")).read() if os.path.exists(os.path.join(po, "batch", "n64_p64_t1.pbs")) else ""
    c.check("--pbs --no-submit: 2 nodes of 48 ranks for 64, nothing submitted", p.returncode == 0 and
            "select=2:ncpus=48:mpiprocs=48:ompthreads=1" in text and "qsub" in p.stdout and len(open(calls).read().splitlines()) == 3,
            f"rc={p.returncode} {p.stdout[-300:]}")
    po = hx.path("pbs_threads")
    p = sh(args, ["--pbs", "--no-submit", "--cells", "64", "--ranks", "8", "--threads", "4", "--out", po,
                  "--helmix", args.helmix], env_extra={"PATH": fake + os.pathsep + os.environ["PATH"]})
    f = os.path.join(po, "batch", "n64_p8_t4.pbs")
    text = open(f).read() if os.path.exists(f) else ""
    c.check("--pbs --threads 4: mpiexec gives each rank 4 cores (--map-by slot:PE=4)", p.returncode == 0 and
            "--map-by slot:PE=4 -n 8 " in text, text[-400:], "Open MPI mpiexec(1): --map-by slot:PE=n")



if __name__ == "__main__":
    H.run_main("jobs_local", __doc__, body)
