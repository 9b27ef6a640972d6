#!/usr/bin/python3
"""The command line of every helmix command: one option table per command drives parsing and
--help, and every command-line mistake is refused before any work.

What is asserted, and where each expectation comes from:
- help lists every option a command documents, and the parser accepts each of them, in the
  --name VALUE and the --name=VALUE form (the issue's "one table per command": help and
  parsing cannot drift; --name=VALUE is the GNU long-option convention, common practice);
- an option that takes a value never swallows the next option (`--json --quiet` must not
  write a file named --quiet), a missing value names the option, a misspelt option gets
  "did you mean" the nearest one (issue 9, usability);
- inspect --expect implies --check: a failing expectation exits 1 without --check (issue 9;
  README exit codes: 1 a check found a difference);
- a wrong --expect/--tolerance key is refused with exit 2 before the analysis: the error is
  the only line, no table, no progress line, no output file (issue 9);
- no output may be an input or another output, whatever the spelling (./x, absolute path,
  symbolic link, hard link: device and inode decide), and an output whose directory does not
  exist is refused for every output option of every command: exit 2, one line, nothing
  created (issue 9, items 7 and 8);
- inspect, score and scaling refuse a directory as input with one helmix line and exit 2 (no
  MPI trace), on 1 and 3 ranks for inspect (issue 9, item 12);
- --verbose prints more than the default, --quiet nothing (issue 9: "--verbose either prints
  more or is removed");
- "--" ends the options (POSIX utility syntax guideline 10, common practice).
"""

import sys
import hashlib
import os
import re
import shutil

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

SRC_EXIT = "README: exit 0 ok, 1 --check found a difference, 2 bad input, 3 run-time failure"
SRC_ISSUE = "issue 9 (hardening): options that cannot be misread"
SRC_FILES = "issue 9 items 7, 8: no output may be an input; outputs checked before any work, nothing left"
SRC_DIR = "issue 9 item 12: file type checked before MPI-IO, one line"
SRC_GNU = "GNU long options --name=value (common practice)"
SRC_POSIX = "POSIX utility syntax guideline 10: '--' ends the options (common practice)"

RECIPE = {
    "grid": {"cells": 16, "box": 1.0},
    "spectrum": {"shape": "power", "slope": 2.0, "kmin": 1},
    "mix": {"zeta": 0.5},
    "amplitude": {"vrms": 1.0},
    "random": {"seed": 3},
    "output": {"precision": "double"},
}

# The documented options of each command (README, the commands' --help before the table) with
# a value each would accept; None marks a flag. Short forms are listed as they are documented.
OPTIONS = {
    "make": {"--output": "OUT.h5", "--set": "random.seed=5", "--force": None, "--timings": "t.json",
             "--threads": "2", "--fftw-effort": "measure", "--wisdom": "w.fftw", "--mem-per-rank": "2G",
             "--quiet": None, "--verbose": None, "--help": None},
    "inspect": {"--vector": "/u,/v,/w", "--order": "xyz", "--box": "1,2,3", "--density": "/rho",
                "--magnetic": "/a,/b,/c", "--magnetic-face": "/d,/e,/f", "--sound-speed": "1",
                "--gravity": "1", "--gamma": "1.4", "--remove-scale": "0.1", "--fit": "2,6", "--check": None, "--verify": None,
                "--expect": "fraction=0.3", "--tolerance": "fraction=0.01", "--json": "r.json", "--csv": "r.csv",
                "--plot": "r.png", "--timings": "t.json", "--threads": "2", "--quiet": None, "--verbose": None, "--help": None},
    "suite": {"--cells": "32", "--ranks-hint": "3", "--quick": None, "--force": None, "--quiet": None,
              "--verbose": None, "--help": None},
    "score": {"--json": "s.json", "--plot": "s.png", "--quiet": None, "--help": None},
    "scaling": {"--table": "t.md", "--plot": "p.png", "--kind": "weak", "--quiet": None, "--help": None},
    "plan": {"--ranks": "4", "--threads": "2", "--mem-per-rank": "2G", "--set": "random.seed=5",
             "--output": "OUT.h5", "--json": None, "--help": None},
}
SHORT = {"make": {"-o": "OUT.h5", "-q": None, "-v": None, "-h": None},
         "inspect": {"-q": None, "-v": None, "-h": None},
         "suite": {"-q": None, "-v": None, "-h": None},
         "score": {"-q": None, "-h": None},
         "scaling": {"-q": None, "-h": None},
         "plan": {"-n": "4", "-o": "OUT.h5", "-h": None}}


def helmix_lines(stderr):
    return [ln for ln in H.mpi_noise_free_lines(stderr)]


def sha(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def run(hx, argv, cwd, ranks=0):
    proc, _, _ = hx.launch(argv, ranks=ranks, cwd=cwd)
    return proc.returncode, proc.stdout, helmix_lines(proc.stderr)


def help_options(text):
    """The options the help's option column lists: lines '  -x, --name VALUE' or '  --name VALUE'."""
    found = set()
    for ln in text.splitlines():
        m = re.match(r"^  (?:(-[a-zA-Z]), )?(--[a-z][a-z-]*)\b", ln)
        if m:
            found.add(m.group(2))
            if m.group(1):
                found.add(m.group(1))
    return found


def argv_of(opts, eq=False):
    out = []
    for name, val in opts.items():
        if name in ("--help", "-h"):
            continue
        if val is None:
            out.append(name)
        elif eq and name.startswith("--"):
            out.append(f"{name}={val}")
        else:
            out += [name, val]
    return out


def operands(cmd, f):
    return {"make": [f["recipe"]], "inspect": [f["cube"]], "suite": [f["suitedir"]], "score": [f["dummy"], f["dummy2"]],
            "scaling": [f["dummy"]], "plan": [f["recipe"]]}[cmd]


def check_tables(c, hx, f, work):
    for cmd, opts in OPTIONS.items():
        rc, out, err = run(hx, [cmd, "--help"], work)
        listed = help_options(out)
        documented = set(opts) | set(SHORT[cmd])
        c.check(f"[{cmd}] --help exits 0 and lists every documented option, and only those",
                rc == 0 and listed == documented,
                f"rc={rc} missing {sorted(documented - listed)} extra {sorted(listed - documented)}", SRC_ISSUE)
        for eq in (False, True):
            argv = [cmd] + operands(cmd, f) + argv_of(opts, eq) + ["--help"]
            rc, out, err = run(hx, argv, work)
            c.check(f"[{cmd}] the parser accepts every option at once ({'--name=VALUE' if eq else '--name VALUE'})",
                    rc == 0 and "usage:" in out and not err, f"rc={rc} {err}", SRC_GNU if eq else SRC_ISSUE)
        argv = [cmd] + operands(cmd, f) + argv_of(SHORT[cmd]) + ["-h"]
        rc, out, err = run(hx, argv, work)
        c.check(f"[{cmd}] the parser accepts the short forms {sorted(SHORT[cmd])}", rc == 0 and "usage:" in out,
                f"rc={rc} {err}", SRC_ISSUE)
    left = sorted(os.listdir(work))
    c.check("accepting options with --help wrote nothing", left == [], f"{left}", SRC_ISSUE)


def check_swallow(c, hx, f, work):
    # value-taking options followed by another option: refused, naming the option, nothing written.
    # The parser is one function for all rows: the first and last such row of each table keep the
    # run short (every row is parsed with its value in check_tables).
    bad = []
    for cmd, opts in OPTIONS.items():
        valued = [n for n, v in opts.items() if v is not None]
        for name in sorted({valued[0], valued[-1]}):
            argv = [cmd] + operands(cmd, f) + [name, "--help"]
            rc, out, err = run(hx, argv, work)
            if not (rc == 2 and len(err) == 1 and err[0].startswith("helmix: error:") and name in err[0]
                    and "needs a value" in err[0] and not out):
                bad.append(f"{cmd} {name}: rc={rc} {err} {out[:80]!r}")
    c.check("a value-taking option followed by an option is refused, naming the option (every command)",
            not bad, "; ".join(bad[:4]), SRC_ISSUE)
    # the issue's own case, a short option as the value, and a missing last value
    for argv, needle in ((["inspect", f["cube"], "--json", "--quiet"], "--json"),
                         (["make", f["recipe"], "-o", "-q"], "-o"),
                         (["inspect", f["cube"], "--box"], "--box"),
                         (["make", f["recipe"], "--set"], "--set"),
                         (["inspect", f["cube"], "--json="], "--json")):
        rc, out, err = run(hx, argv, work)
        c.check(f"{' '.join(a if a not in f.values() else os.path.basename(a) for a in argv)}: exit 2, one line "
                f"naming {needle}", rc == 2 and len(err) == 1 and needle in err[0] and "value" in err[0],
                f"rc={rc} {err}", SRC_ISSUE)
    left = sorted(os.listdir(work))
    c.check("no file named after an option was written", left == [], f"{left}", SRC_ISSUE)
    rc, out, err = run(hx, ["inspect", f["cube"], "--json", "a.json", "--json", "b.json"], work)
    c.check("an option given twice is refused, not silently the last", rc == 2 and len(err) == 1 and "twice" in err[0],
            f"rc={rc} {err}", SRC_ISSUE)
    rc, out, err = run(hx, ["inspect", f["cube"], "--check=yes"], work)
    c.check("a flag given a value is refused", rc == 2 and len(err) == 1 and "--check" in err[0], f"rc={rc} {err}",
            SRC_GNU)


def check_did_you_mean(c, hx, f, work):
    cases = [(["inspect", f["cube"], "--chek"], "unknown option '--chek' (did you mean --check?)"),
             (["make", f["recipe"], "--ouput", "x.h5"], "did you mean --output?"),
             (["plan", f["recipe"], "--rank", "2"], "did you mean --ranks?"),
             (["suite", f["suitedir"], "--quik"], "did you mean --quick?"),
             (["score", f["dummy"], f["dummy2"], "--jsn", "x"], "did you mean --json?"),
             (["scaling", f["dummy"], "--tabel", "t.md"], "did you mean --table?"),
             (["inspect", f["cube"], "-check"], "did you mean --check?")]
    for argv, needle in cases:
        rc, out, err = run(hx, argv, work)
        typo = next(a for a in argv[1:] if a.startswith("-"))
        c.check(f"[{argv[0]}] {typo}: exit 2, '{needle}'", rc == 2 and len(err) == 1 and needle in err[0],
                f"rc={rc} {err}", SRC_ISSUE)
    rc, out, err = run(hx, ["inspect", f["cube"], "--frobnicate"], work)
    c.check("an option close to none gets no guess, a pointer to --help", rc == 2 and len(err) == 1
            and "did you mean" not in err[0] and "--help" in err[0], f"rc={rc} {err}", SRC_ISSUE)
    rc, out, err = run(hx, ["template", "--bogus"], work)
    rc2, out2, _ = run(hx, ["template", "--help"], work)
    c.check("template refuses an option and has --help", rc == 2 and len(err) == 1 and rc2 == 0 and "usage:" in out2,
            f"rc={rc} {err} rc2={rc2}", SRC_ISSUE)


def measured_share(hx, f, work):
    import json
    rc, out, err = run(hx, ["inspect", f["cube"], "--quiet", "--json", "m.json"], work)
    with open(os.path.join(work, "m.json")) as fp:
        share = json.load(fp)["energy"]["compressive_fraction"]
    os.remove(os.path.join(work, "m.json"))
    return share


def check_expect(c, hx, f, work):
    share = measured_share(hx, f, work)
    far = 0.9 if share < 0.5 else 0.1
    rc, out, err = run(hx, ["inspect", f["cube"], "--quiet", "--expect", f"fraction={far}"], work)
    c.check("--expect without --check: a failing expectation exits 1 and prints the verdict",
            rc == 1 and "verdict: FAIL" in out, f"rc={rc} share {share:.4f} vs {far}", SRC_EXIT)
    rc, out, err = run(hx, ["inspect", f["cube"], "--quiet", "--expect", f"fraction={share:.6f}"], work)
    c.check("--expect without --check: a met expectation exits 0 with verdict PASS", rc == 0 and "verdict: PASS" in out,
            f"rc={rc}", SRC_EXIT)
    outs = ["--json", "e.json", "--csv", "e.csv", "--timings", "e_t.json", "--plot", "e.png"]
    for bad, needle in ((["--expect", "frac=0.3"], "frac"), (["--expect", "0.3"], "--expect"),
                        (["--tolerance", "fraction=-1"], "--tolerance"), (["--tolerance", "slop=0.1"], "slop"),
                        (["--fit", "6,3"], "--fit"), (["--box", "1,1"], "--box")):
        rc, out, err = run(hx, ["inspect", f["cube"]] + bad + outs, work)  # not --quiet: a progress line would show
        c.check(f"{' '.join(bad)}: exit 2, the error the only output, before any analysis, nothing written",
                rc == 2 and len(err) == 1 and err[0].startswith("helmix: error:") and needle in err[0] and not out
                and os.listdir(work) == [], f"rc={rc} {err} {out[:60]!r} {os.listdir(work)}", SRC_ISSUE)


def check_same_file(c, hx, f, work):
    cube = f["cube"]
    before = sha(cube)
    d = os.path.dirname(cube)
    sym, hard = os.path.join(work, "sym.h5"), os.path.join(work, "hard.h5")
    os.symlink(cube, sym)
    os.link(cube, hard)
    for label, path, cwd in (("the same name", os.path.basename(cube), d), ("./ spelling", "./" + os.path.basename(cube), d),
                             ("an absolute path", cube, work), ("a symbolic link", sym, work), ("a hard link", hard, work)):
        for opt in (("--json", "--csv") if label == "a hard link" else ("--json",)):
            rc, out, err = run(hx, ["inspect", os.path.basename(cube) if cwd == d else cube, opt, path], cwd)
            c.check(f"inspect CUBE {opt} <{label} of CUBE>: exit 2, one line, cube unchanged",
                    rc == 2 and len(err) == 1 and "input" in err[0] and sha(cube) == before, f"rc={rc} {err}", SRC_FILES)
    os.remove(sym)
    os.remove(hard)
    rc, out, err = run(hx, ["inspect", cube, "--json", "r.json", "--csv", "./r.json"], work)
    c.check("two outputs naming one file (r.json, ./r.json) are refused", rc == 2 and len(err) == 1 and "same file" in err[0]
            and not os.listdir(work), f"rc={rc} {err}", SRC_FILES)
    rec = f["recipe"]
    rbefore = sha(rec)
    rc, out, err = run(hx, ["make", rec, "-o", rec, "--force"], work)
    c.check("make -o RECIPE --force is refused, the recipe unchanged", rc == 2 and len(err) == 1 and sha(rec) == rbefore,
            f"rc={rc} {err}", SRC_FILES)
    rc, out, err = run(hx, ["make", rec, "-o", "m.h5", "--timings", "./m.h5"], work)
    c.check("make --timings naming the cube is refused", rc == 2 and len(err) == 1 and not os.listdir(work),
            f"rc={rc} {err}", SRC_FILES)
    rc, out, err = run(hx, ["make", rec, "-o", "m.h5", "--timings", "m.h5.xmf"], work)
    c.check("make --timings naming the XDMF sidecar is refused", rc == 2 and len(err) == 1 and not os.listdir(work),
            f"rc={rc} {err}", SRC_FILES)
    dummy = f["dummy"]
    dbefore = sha(dummy)
    rc, out, err = run(hx, ["scaling", dummy, "--table", dummy], work)
    c.check("scaling --table onto an input is refused", rc == 2 and len(err) == 1 and sha(dummy) == dbefore,
            f"rc={rc} {err}", SRC_FILES)
    rc, out, err = run(hx, ["score", f["dummy"], f["dummy2"], "--json", f["dummy2"]], work)
    c.check("score --json onto RESULTS is refused", rc == 2 and len(err) == 1 and "input" in err[0], f"rc={rc} {err}",
            SRC_FILES)


def check_missing_dirs(c, hx, f, work):
    nd = os.path.join(work, "nodir")
    cases = [("make", [f["recipe"], "-o", "{}/c.h5"], "-o"),
             ("make", [f["recipe"], "-o", "m.h5", "--timings", "{}/t.json"], "--timings"),
             ("make", [f["recipe"], "-o", "m.h5", "--wisdom", "{}/w"], "--wisdom"),
             ("inspect", [f["cube"], "--json", "{}/r.json"], "--json"),
             ("inspect", [f["cube"], "--csv", "{}/r.csv"], "--csv"),
             ("inspect", [f["cube"], "--plot", "{}/r.png", "--json", "r.json"], "--plot"),
             ("inspect", [f["cube"], "--json", "r.json", "--timings", "{}/t.json"], "--timings"),
             ("score", [f["dummy"], f["dummy2"], "--json", "{}/s.json"], "--json"),
             ("score", [f["dummy"], f["dummy2"], "--plot", "{}/s.png"], "--plot"),
             ("scaling", [f["dummy"], "--table", "{}/t.md"], "--table"),
             ("scaling", [f["dummy"], "--plot", "{}/p.png", "--table", "t.md"], "--plot")]
    for cmd, args, opt in cases:
        argv = [cmd] + [a.format(nd) for a in args]
        rc, out, err = run(hx, argv, work)
        c.check(f"[{cmd} {opt} in a missing directory] exit 2, one line naming {opt}, nothing created",
                rc == 2 and len(err) == 1 and f"{opt} " in err[0] and "does not exist" in err[0] and not os.listdir(work),
                f"rc={rc} {err} left {os.listdir(work)}", SRC_FILES)
    rc, out, err = run(hx, ["make", f["recipe"], "-o", work, "--force"], work)
    c.check("make -o DIRECTORY --force is refused up front: exit 2, nothing created", rc == 2 and len(err) == 1
            and "directory" in err[0] and not os.listdir(work), f"rc={rc} {err}", SRC_FILES)


def check_directory_input(c, hx, f, work):
    for ranks in (1, 3):
        rc, out, err = run(hx, ["inspect", work], work, ranks=ranks)
        c.check(f"inspect DIRECTORY on {ranks} rank(s): exit 2, exactly one line, helmix's", rc == 2 and len(err) == 1
                and err[0].startswith("helmix: error:") and "directory" in err[0], f"rc={rc} {err[:4]}", SRC_DIR)
    rc, out, err = run(hx, ["inspect", "/dev/null"], work)
    c.check("inspect /dev/null: exit 2, one line (not a regular file)", rc == 2 and len(err) == 1, f"rc={rc} {err}", SRC_DIR)
    for argv, what in ((["score", work, f["dummy2"]], "score MANIFEST a directory"),
                       (["score", f["dummy"], work], "score RESULTS a directory"),
                       (["scaling", f["dummy"], work], "scaling FILE a directory"),
                       (["make", work], "make RECIPE a directory")):
        rc, out, err = run(hx, argv, work)
        c.check(f"{what}: exit 2, one line", rc == 2 and len(err) == 1 and "directory" in err[0], f"rc={rc} {err}", SRC_DIR)


def check_verbose_and_dashdash(c, hx, f, work):
    counts = {}
    for mode in ("--quiet", None, "--verbose"):
        argv = ["make", f["recipe"], "-o", "v.h5", "--force"] + ([mode] if mode else [])
        rc, out, err = run(hx, argv, work)
        counts[mode] = (rc, len(err))
    c.check("make: --quiet prints nothing, --verbose more than the default",
            all(r == 0 for r, _ in counts.values()) and counts["--quiet"][1] == 0
            and counts["--verbose"][1] > counts[None][1] > 0, f"{counts}", SRC_ISSUE)
    counts = {}
    for mode in ("--quiet", None, "--verbose"):
        rc, out, err = run(hx, ["inspect", "v.h5"] + ([mode] if mode else []), work)
        counts[mode] = (rc, len(err))
    c.check("inspect: --quiet prints nothing, --verbose more than the default",
            all(r == 0 for r, _ in counts.values()) and counts["--quiet"][1] == 0
            and counts["--verbose"][1] > counts[None][1] > 0, f"{counts}", SRC_ISSUE)
    shutil.copy(os.path.join(work, "v.h5"), os.path.join(work, "-v.h5"))
    rc, out, err = run(hx, ["inspect", "--quiet", "--", "-v.h5"], work)
    c.check("inspect -- -v.h5 reads the file named -v.h5", rc == 0 and "-v.h5" in out, f"rc={rc} {err}", SRC_POSIX)
    for name in os.listdir(work):
        os.remove(os.path.join(work, name))


def body(args, hx, c):
    inputs = hx.path("inputs")
    os.mkdir(inputs)
    f = {"recipe": os.path.join(inputs, "r.ini"), "cube": os.path.join(inputs, "c.h5"),
         "dummy": os.path.join(inputs, "d.json"), "dummy2": os.path.join(inputs, "d2.json"),
         "suitedir": hx.path("suite_never")}
    with open(f["recipe"], "w") as fp:
        fp.write(H.recipe_text(RECIPE))
    for k in ("dummy", "dummy2"):
        with open(f[k], "w") as fp:
            fp.write("{}\n")
    rc, out, err = run(hx, ["make", f["recipe"], "-o", f["cube"], "--quiet"], inputs)
    if not c.check("a 16^3 cube to inspect is made", rc == 0, f"rc={rc} {err}"):
        return
    work = hx.path("work")  # every run's cwd: anything left in it is a file a refusal created
    os.mkdir(work)
    check_tables(c, hx, f, work)
    check_swallow(c, hx, f, work)
    check_did_you_mean(c, hx, f, work)
    check_expect(c, hx, f, work)
    check_same_file(c, hx, f, work)
    check_missing_dirs(c, hx, f, work)
    check_directory_input(c, hx, f, work)
    check_verbose_and_dashdash(c, hx, f, work)
    c.check("no suite directory was created by option checks", not os.path.exists(f["suitedir"]))


if __name__ == "__main__":
    H.run_main("test_cli_options", __doc__, body)
