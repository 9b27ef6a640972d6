#!/usr/bin/python3
"""The catalogue of bad inputs (tests/catalogue): every entry refused cleanly, on 1 and 3 ranks.

Each entry of tests/catalogue/make/manifest.json (a recipe file beside it, extra arguments) and
of tests/catalogue/inspect/manifest.json (a bad cube written at test time by
tests/catalogue/inspect/generate.py, extra arguments) must give, as the helmix specification
says for bad input (README "Bad input gets one line naming the file, line and key, exit status
2, and nothing is written"; `helmix --help`: exit 2 bad input, 3 run-time failure):

  * the exit status the entry states (2 unless it says otherwise), within 60 s (no hang);
  * exactly one line from helmix on stderr, "helmix: error: ...", naming the entry's words
    (and, where the entry gives line_of, the recipe file and the line the culprit is on);
    the Open MPI launcher's own banner is not helmix's and is removed first
    (hxcheck.mpi_noise_free_lines), but no abort trace may appear anywhere (MPI_ABORT,
    "Abort(", a segmentation fault, a backtrace, a sanitizer report);
  * nothing written: the entry's directory (its recipe, data files and input cube, copied
    there) is the same afterwards, file by file and byte by byte: no output, no .partial,
    no sidecar, no report, the input untouched; and nothing on stdout.

One rank is the executable run directly (an MPI singleton), three ranks go through the
launcher. An entry marked expected_failure (with the item of issue 9 it belongs to, and the
rank counts it fails on) is reported XFAIL while it fails and as a FAILURE once it passes
("now passing: remove the expected_failure mark"), so a fixed bug cannot stay marked.
Entries run three at a time (a launch mostly waits on MPI start-up); each has its own MPI session directory.
"""

import argparse
import concurrent.futures as cf
import hashlib
import json
import os
import shlex
import shutil
import signal
import subprocess
import sys
import tempfile
import time

sys.dont_write_bytecode = True  # keep tests/ free of __pycache__
HERE = os.path.dirname(os.path.abspath(__file__))
CATALOGUE = os.path.normpath(os.path.join(HERE, "..", "catalogue"))
sys.path.insert(0, HERE)
sys.path.insert(0, os.path.join(CATALOGUE, "inspect"))
import hxcheck as H  # noqa: E402

SRC = ("helmix specification: exit 2 = bad input, one line 'helmix: error: ...', nothing "
       "written (README, `helmix --help`; issue 9, systematic measures)")
TIMEOUT = 60
ABORT_MARKS = ("MPI_ABORT", "Abort(", "Segmentation", "segmentation fault", "backtrace", "Backtrace",
               "core dumped", "AddressSanitizer", "LeakSanitizer", "runtime error:", "Signal:")
# The transport is irrelevant to input checking; shared memory alone starts ranks fastest.
FAST_MPI = {"OMPI_MCA_btl": "self,vader", "OMPI_MCA_pml": "ob1"}
RECIPE = "bad.ini"  # every entry's recipe is copied under this name
CUBE = "cube.h5"  # and every inspect entry's input under this one


def parse_args():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--helmix", default=os.environ.get("HELMIX", "/work/main/build/helmix"))
    ap.add_argument("--mpiexec", default=os.environ.get("HX_MPIEXEC", "mpiexec --allow-run-as-root --oversubscribe"))
    ap.add_argument("--keep", action="store_true", help="keep the temporary directory")
    ap.add_argument("--only", default="", help="run only entries whose name contains this text")
    ap.add_argument("--ranks", default="1,3", help="rank counts, comma-separated (1 = singleton)")
    ap.add_argument("--jobs", type=int, default=3, help="entries run at a time (mostly waiting on MPI start-up)")
    a = ap.parse_args()
    a.mpiexec = shlex.split(a.mpiexec)
    a.ranks = [int(x) for x in a.ranks.split(",")]
    return a


def snapshot(d):
    """relative path -> (kind, size, sha256) of everything below d."""
    out = {}
    for root, dirs, files in os.walk(d):
        for n in dirs:
            out[os.path.relpath(os.path.join(root, n), d)] = ("dir",)
        for n in files:
            p = os.path.join(root, n)
            with open(p, "rb") as f:
                out[os.path.relpath(p, d)] = ("file", os.path.getsize(p), hashlib.sha256(f.read()).hexdigest())
    return out


def changes(before, after):
    new = sorted(set(after) - set(before))
    gone = sorted(set(before) - set(after))
    altered = sorted(k for k in set(before) & set(after) if before[k] != after[k])
    return [f"new {k}" for k in new] + [f"removed {k}" for k in gone] + [f"altered {k}" for k in altered]


def descendants(pid):
    """pids of every process below pid (from /proc), so a hung launch leaves nothing behind."""
    kids = {}
    for e in os.listdir("/proc"):
        if e.isdigit():
            try:
                with open(f"/proc/{e}/stat") as f:
                    ppid = int(f.read().rsplit(")", 1)[1].split()[1])
                kids.setdefault(ppid, []).append(int(e))
            except (OSError, IndexError, ValueError):
                pass
    out, todo = [], [pid]
    while todo:
        p = todo.pop()
        for k in kids.get(p, []):
            out.append(k)
            todo.append(k)
    return out


def run(cmd, cwd, session):
    env = dict(os.environ, OMPI_MCA_orte_tmpdir_base=session, **FAST_MPI)
    t0 = time.time()
    p = subprocess.Popen(cmd, cwd=cwd, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                         text=True, errors="replace", start_new_session=True)
    try:
        out, err = p.communicate(timeout=TIMEOUT)
        hung = False
    except subprocess.TimeoutExpired:
        hung = True
        pids = descendants(p.pid)
        for sig in (signal.SIGTERM, signal.SIGKILL):
            for q in [p.pid] + pids:
                try:
                    os.kill(q, sig)
                except OSError:
                    pass
            time.sleep(2)
        out, err = p.communicate()
    return p.returncode, out, err, hung, time.time() - t0


def fill(s, m):
    for k, v in m.items():
        s = s.replace("{" + k + "}", v)
    return s


class Case:
    """One entry on one rank count: prepared in its own directory, run, judged."""

    def __init__(self, kind, index, entry, ranks, top):
        self.kind, self.e, self.ranks = kind, entry, ranks
        self.name = f"{kind}/{entry['name']}"
        # Neutral names (bad.ini, cube.h5, a numbered directory), so that the words an error
        # message must hold cannot be found in the path of the entry instead.
        tag = f"{kind[0]}{index:03d}_p{ranks}"
        self.dir = os.path.join(top, "work", tag)
        self.session = os.path.join(top, "sessions", tag)
        os.makedirs(self.dir)
        os.makedirs(self.session)

    def prepare(self, args, inputs):
        e, d = self.e, self.dir
        m = {"dir": d, "inputs": d, "out": os.path.join(d, "out.h5")}
        for sub in e.get("setup", {}).get("mkdir", []):
            os.mkdir(os.path.join(d, sub))
        for name in e.get("setup", {}).get("touch", []):
            open(os.path.join(d, name), "w").close()
        if self.kind == "make":
            src = os.path.join(CATALOGUE, "make")
            argv = ["make"]
            if e.get("recipe"):
                m["recipe"] = os.path.join(d, RECIPE)
                shutil.copyfile(os.path.join(src, e["recipe"]), m["recipe"])
                argv.append(m["recipe"])
            for fname in e.get("files", []):
                shutil.copyfile(os.path.join(src, "data", fname), os.path.join(d, fname))
            argv.append("--quiet")
            if e.get("output", True):
                argv += ["-o", m["out"]]
        else:
            argv = ["inspect"]
            copies = [(a.split("{inputs}/", 1)[1], None) for a in e["argv"] if "{inputs}/" in a]
            if e.get("input"):
                # the input is copied as cube.h5; a name that is not among the inputs stays missing
                present = os.path.exists(os.path.join(inputs, e["input"]))
                m["in"] = os.path.join(d, CUBE if present else e["input"])
                copies.append((e["input"], m["in"]))
                argv.append(m["in"])
            for n, dst in copies:
                src, dst = os.path.join(inputs, n), dst or os.path.join(d, n)
                if os.path.isdir(src):
                    shutil.copytree(src, dst)
                elif os.path.exists(src):
                    shutil.copy2(src, dst)
            argv.append("--quiet")
            if e.get("outputs", True):
                argv += ["--json", os.path.join(d, "report.json"), "--csv", os.path.join(d, "shells.csv")]
        argv += [fill(a, m) for a in e["argv"]]
        self.cmd = ([args.helmix] if self.ranks == 1 else args.mpiexec + ["-n", str(self.ranks), args.helmix]) + argv
        self.recipe_text = None
        if self.kind == "make" and e.get("recipe"):
            with open(m["recipe"], "rb") as f:
                self.recipe_text = f.read().decode("utf-8", "replace")

    def execute(self):
        before = snapshot(self.dir)
        self.rc, self.out, self.err, self.hung, self.seconds = run(self.cmd, self.dir, self.session)
        self.changed = changes(before, snapshot(self.dir))
        shutil.rmtree(self.session, ignore_errors=True)
        return self

    def judge(self):
        """(ok, what was expected, what happened)"""
        e = self.e
        lines = H.mpi_noise_free_lines(self.err)
        msg = lines[0] if lines else ""
        low = msg.lower()
        problems = []
        if self.hung:
            problems.append(f"no exit within {TIMEOUT} s")
        if self.rc != e.get("exit", 2):
            problems.append(f"exit {self.rc}")
        marks = [k for k in ABORT_MARKS if k in self.err or k in self.out]
        if marks:
            problems.append(f"abort trace {marks}")
        if len(lines) != 1 or not msg.startswith("helmix: error:"):
            problems.append(f"{len(lines)} stderr lines")
        missing = [w for w in e.get("words", []) if w.lower() not in low]
        if missing:
            problems.append(f"message lacks {missing}")
        if e.get("line_of") and self.recipe_text is not None:
            ln = next((i for i, t in enumerate(self.recipe_text.splitlines(), 1) if e["line_of"] in t), None)
            want = f"{RECIPE}:{ln}"
            if want not in msg:
                problems.append(f"message lacks {want}")
        if self.changed:
            problems.append(f"written: {self.changed[:4]}")
        if self.out.strip():
            problems.append(f"stdout {self.out.strip()[:80]!r}")
        expect = (f"exit {e.get('exit', 2)}, one 'helmix: error:' line"
                  + (f" naming {e['words']}" if e.get("words") else "")
                  + (f" and {RECIPE}:line" if e.get("line_of") else "") + ", nothing written")
        detail = "; ".join(problems) if problems else "ok"
        shown = lines[:3] if len(lines) != 1 else [msg]
        return not problems, expect, f"{detail} | {shown!r} ({self.seconds:.1f} s)"


def expected_failure(entry, ranks):
    x = entry.get("expected_failure")
    if x and ranks in x.get("ranks", [1, 3]):
        return x
    return None


def body(args, c, top):
    man = {}
    for kind in ("make", "inspect"):
        with open(os.path.join(CATALOGUE, kind, "manifest.json")) as f:
            man[kind] = [e for e in json.load(f)["entries"] if args.only in e["name"]]
    c.check(f"catalogue holds at least 60 make and 30 inspect entries",
            args.only or (len(man["make"]) >= 60 and len(man["inspect"]) >= 30),
            f"make {len(man['make'])}, inspect {len(man['inspect'])}", "issue 9, systematic measures")

    inputs = os.path.join(top, "inputs")
    os.makedirs(inputs)
    if man["inspect"]:
        import generate  # tests/catalogue/inspect/generate.py
        base = os.path.join(inputs, "base.h5")
        rc, out, err, hung, _ = run([args.helmix, "make", os.path.join(CATALOGUE, "inspect", "base.ini"),
                                     "-o", base, "--quiet"], inputs, os.path.join(top, "sessions"))
        if not c.check("the base cube for the inspect entries is made (exit 0)", rc == 0 and not hung,
                       f"rc={rc} {err.strip()[:300]}"):
            man["inspect"] = []
        else:
            generate.write_inputs(inputs, base)

    cases = []
    for kind in ("make", "inspect"):
        for i, e in enumerate(man[kind]):
            for r in args.ranks:
                k = Case(kind, i, e, r, top)
                k.prepare(args, inputs)
                cases.append(k)
    counts = {"pass": 0, "xfail": 0, "fail": 0, "fixed": 0}
    # Longer (launcher) runs first so the two workers finish together.
    cases.sort(key=lambda k: -k.ranks)
    with cf.ThreadPoolExecutor(max_workers=max(1, args.jobs)) as pool:
        done = list(pool.map(Case.execute, cases))
    done.sort(key=lambda k: (k.kind, k.e["name"], k.ranks))
    for k in done:
        ok, expect, what = k.judge()
        where = "1 rank (singleton)" if k.ranks == 1 else f"{k.ranks} ranks (launcher)"
        label = f"[{k.name}] {k.e['about']}; {where}: {expect}"
        x = expected_failure(k.e, k.ranks)
        if x is None:
            c.check(label, ok, what, SRC)
            counts["pass" if ok else "fail"] += 1
        elif ok:
            c.check(f"{label} -- NOW PASSING: remove the expected_failure mark (issue 9 item {x['item']})",
                    False, what, SRC)
            counts["fixed"] += 1
        else:
            print(f"XFAIL {label}  | {what}  [expected failure: issue 9 item {x['item']}: {x.get('seen', '')}]",
                  flush=True)
            c.passed += 1
            counts["xfail"] += 1
    print(f"catalogue: {len(man['make'])} make and {len(man['inspect'])} inspect entries on ranks "
          f"{args.ranks}: {counts['pass']} runs refused cleanly, {counts['xfail']} expected failures, "
          f"{counts['fail']} failures, {counts['fixed']} marked but now passing", flush=True)


def main():
    args = parse_args()
    c = H.Checks("test_catalogue")
    top = tempfile.mkdtemp(prefix="helmix_catalogue_")
    try:
        if not os.access(args.helmix, os.X_OK):
            c.fail("helmix executable present", args.helmix)
        else:
            body(args, c, top)
    except Exception:  # an exception is a failed check, not a crash
        import traceback
        traceback.print_exc()
        c.fail("test body ran without exception")
    finally:
        if args.keep:
            print("kept", top)
        else:
            shutil.rmtree(top, ignore_errors=True)
    c.finish()


if __name__ == "__main__":
    main()
