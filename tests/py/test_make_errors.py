#!/usr/bin/python3
"""Bad input to `helmix make`: exit status 2, one clear line, nothing written.

Every case runs on 1 and on 3 ranks. The Open MPI launcher's own banner for
a non-zero exit is not helmix output and is stripped before counting lines
(hxcheck.mpi_noise_free_lines). Also: an existing output file is refused
without --force and replaced with it, and `helmix template` is INI that
Python's configparser reads and that `helmix make` accepts.
"""

import sys
import hashlib
import os

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

SRC = "helmix specification (exit 2, one line naming file/line/key, nothing written)"
SRC_INI = "Python configparser (INI format), common practice"


def good():
    return {
        "grid": {"cells": 16, "box": 1.0},
        "spectrum": {"shape": "power", "slope": 2.0, "kmin": 1},
        "mix": {"zeta": 0.5},
        "amplitude": {"vrms": 1.0},
        "random": {"seed": 3},
        "output": {"precision": "double"},
    }


def with_(sec, key, val, drop=None):
    r = good()
    r.setdefault(sec, {})[key] = val
    if drop:
        del r[drop[0]][drop[1]]
    return r


def text_line_of(text, needle):
    for i, ln in enumerate(text.splitlines(), 1):
        if needle in ln:
            return i
    return None


# label, recipe (dict or text), --set overrides, words the message must hold,
# needle whose line number the message must name (None: no line required)
CASES = [
    ("unknown key with suggestion", with_("spectrum", "slpoe", 2.0), (),
     ["slpoe", "slope"], "slpoe"),
    ("unknown section", H.recipe_text(good()) + "\n[spectrom]\nslope = 2\n", (),
     ["spectrom"], "[spectrom]"),
    ("kmax beyond Nyquist (cells 16: max 7)", with_("spectrum", "kmax", 8), (),
     ["kmax"], None),
    ("kmin > kmax", {**good(), "spectrum": {"shape": "power", "kmin": 6, "kmax": 3}}, (),
     ["kmin"], None),
    ("zeta > 1", with_("mix", "zeta", 1.5), (), ["zeta"], "zeta"),
    ("zeta < 0", with_("mix", "zeta", -0.1), (), ["zeta"], "zeta"),
    ("compressive_fraction > 1", {**good(), "mix": {"compressive_fraction": 1.2}}, (),
     ["compressive_fraction"], "compressive_fraction"),
    ("both zeta and compressive_fraction",
     {**good(), "mix": {"zeta": 0.5, "compressive_fraction": 0.3}}, (),
     ["zeta", "compressive_fraction"], None),
    ("non-number vrms", with_("amplitude", "vrms", "fast"), (), ["vrms"], "vrms"),
    ("non-number seed", with_("random", "seed", "1.5x"), (), ["seed"], "seed"),
    ("cells < 4", with_("grid", "cells", 2), (), ["cells"], None),
    ("cells 3 on one axis", with_("grid", "cells", "16 3 16"), (), ["cells"], None),
    ("box too elongated for its grid (more than 2^24 shells)", with_("grid", "box", "1 1 1e12"), (),
     ["box", "elongated"], None),
    ("box = 0", with_("grid", "box", 0), (), ["box"], None),
    ("box negative", with_("grid", "box", "1 -1 1"), (), ["box"], None),
    ("unreadable table", {**good(), "spectrum": {"shape": "table",
                                                 "table": "/nonexistent/helmix_k_E.txt"}},
     (), ["table"], None),
    ("bad enum exact", {**good(), "mix": {"compressive_fraction": 0.3, "exact": "sometimes"}},
     (), ["exact"], "exact"),
    ("malformed table row", {**good(), "spectrum": {"shape": "table", "table": "bad_k_E.dat"}},
     (), ["table"], None, {"bad_k_E.dat": "1 1\n2 0.25\nthree 0.1\n"}),
    ("table k not increasing", {**good(), "spectrum": {"shape": "table",
                                                       "table": "dec_k_E.dat"}},
     (), ["table"], None, {"dec_k_E.dat": "1 1\n4 0.1\n2 0.25\n"}),
    ("table with one row", {**good(), "spectrum": {"shape": "table", "table": "one_k_E.dat"}},
     (), ["table"], None, {"one_k_E.dat": "1 1\n"}),
    ("bad --set key", good(), ("spectrum.slpoe=2",), ["slpoe"], None),
    ("bad --set value", good(), ("amplitude.vrms=abc",), ["vrms"], None),
]


def _write(d, name, text):
    path = os.path.join(d, name)
    with open(path, "w") as f:
        f.write(text)
    return path


def dir_entries(d):
    return set(os.listdir(d))


def body(args, hx, c):
    for i, case in enumerate(CASES):
        label, rec, sets, words, needle = case[:5]
        files = case[5] if len(case) > 5 else {}
        text = H.recipe_text(rec)
        # 1 rank as an MPI singleton (no launcher: its banner on non-zero exit
        # costs ~2 s per run), plus the launcher with -n 1 for the first case.
        for p in ((0, 1, 3) if i == 0 else (0, 3)):
            sub = hx.path(f"case{i}_p{p}")
            os.mkdir(sub)
            ini = os.path.join(sub, "bad.ini")
            with open(ini, "w") as f:
                f.write(text)
            for fname, content in files.items():
                with open(os.path.join(sub, fname), "w") as f:
                    f.write(content)
            out = os.path.join(sub, "out.h5")
            argv = ["make", ini, "-o", out]
            for s in sets:
                argv += ["--set", s]
            before = dir_entries(sub)
            proc, cmd, _ = hx.launch(argv, ranks=p, cwd=sub)
            if p == 0:  # no launcher: stderr must be exactly helmix's one line
                lines = [ln for ln in proc.stderr.splitlines() if ln.strip()]
            else:
                lines = H.mpi_noise_free_lines(proc.stderr)
            msg = lines[0] if lines else ""
            low = msg.lower()
            ok_words = all(w.lower() in low for w in words)
            ok_line = True
            if needle is not None:
                ln = text_line_of(text, needle)
                ok_line = ("bad.ini" in msg) and (f":{ln}" in msg)
            new = dir_entries(sub) - before
            where = "1 rank (singleton)" if p == 0 else f"{p} rank(s) via launcher"
            c.check(f"[{label}] {where}: exit 2, one stderr line naming "
                    f"{'/'.join(words)}{' and bad.ini:line' if needle else ''}, nothing written",
                    proc.returncode == 2 and len(lines) == 1 and ok_words and ok_line
                    and not new,
                    f"rc={proc.returncode} lines={len(lines)} msg={msg!r} new files={sorted(new)}"
                    + ("" if len(lines) <= 1 else f" all={lines!r}"), SRC)

    # missing recipe file
    for p in (0, 3):
        proc, cmd, _ = hx.launch(["make", hx.path("no_such_recipe.ini"),
                                  "-o", hx.path("never.h5")], ranks=p)
        lines = H.mpi_noise_free_lines(proc.stderr)
        c.check(f"[missing recipe file] {max(p, 1)} rank(s): exit 2, one line naming it",
                proc.returncode == 2 and len(lines) == 1 and "no_such_recipe.ini" in lines[0]
                and not os.path.exists(hx.path("never.h5")),
                f"rc={proc.returncode} lines={lines!r}", SRC)

    # output into a directory that does not exist: a failure, nothing left behind
    # (exit status 2 or 3: the specification does not say which)
    sub = hx.path("nodir")
    os.mkdir(sub)
    for p in (0, 3):
        out = os.path.join(sub, "missing", "cube.h5")
        proc, cmd, _ = hx.launch(["make", _write(sub, "ok.ini", H.recipe_text(good())),
                                  "-o", out, "--quiet"], ranks=p, cwd=sub)
        lines = (H.mpi_noise_free_lines(proc.stderr) if p else
                 [ln for ln in proc.stderr.splitlines() if ln.strip()])
        left = sorted(set(os.listdir(sub)) - {"ok.ini"})
        c.check(f"[output dir missing] {max(p, 1)} rank(s): non-zero exit, one line, "
                f"no file or .partial", proc.returncode in (2, 3) and len(lines) == 1
                and not left and not os.path.exists(os.path.dirname(out)),
                f"rc={proc.returncode} lines={lines!r} left={left}", SRC)

    # no -o: the name comes from [output] file, relative to the current directory
    sub = hx.path("nameless")
    os.mkdir(sub)
    rec = good()
    rec["output"]["file"] = "from_recipe.h5"
    proc, cmd, _ = hx.launch(["make", _write(sub, "named.ini", H.recipe_text(rec)),
                              "--quiet"], ranks=2, cwd=sub)
    c.check("[output] without -o the file named in [output] file is written in the cwd",
            proc.returncode == 0 and os.path.exists(os.path.join(sub, "from_recipe.h5")),
            f"rc={proc.returncode} files={sorted(os.listdir(sub))} "
            f"{proc.stderr.strip()[:200]}", "helmix specification ([output] file)")

    # existing output: refused without --force, replaced with it
    sub = hx.path("force")
    os.mkdir(sub)
    out = os.path.join(sub, "cube.h5")
    r1 = hx.make(good(), ranks=2, out=out, name="force1")
    if c.check("[force] first run exits 0", r1.ok, r1.describe() if not r1.ok else ""):
        h1 = hashlib.sha256(open(out, "rb").read()).hexdigest()
        st1 = os.stat(out)
        r2 = hx.make(with_("random", "seed", 4), ranks=2, out=out, name="force2")
        lines = H.mpi_noise_free_lines(r2.stderr)
        h2 = hashlib.sha256(open(out, "rb").read()).hexdigest()
        c.check("[force] existing file refused: exit 2, one line, file untouched",
                r2.rc == 2 and len(lines) == 1 and h1 == h2
                and os.stat(out).st_mtime_ns == st1.st_mtime_ns
                and not os.path.exists(out + ".partial"),
                f"rc={r2.rc} lines={lines!r} unchanged={h1 == h2}", SRC)
        r3 = hx.make(with_("random", "seed", 4), ranks=2, out=out, name="force3",
                     extra=["--force"])
        ok3 = r3.ok
        seed = None
        if ok3:
            seed = int(H.Cube(out).attrs.get("seed", -1))
        c.check("[force] --force replaces the file (new seed stored)",
                ok3 and seed == 4 and not os.path.exists(out + ".partial"),
                f"rc={r3.rc} seed attr={seed} {'' if ok3 else r3.stderr.strip()[:300]}", SRC)

    # template: annotated INI that configparser reads and make accepts
    proc, cmd, _ = hx.launch(["template"], ranks=1)
    tpl = proc.stdout
    try:
        cp = H.ini_parses(tpl)
        secs = set(cp.sections())
        ok = {"grid", "spectrum", "mix", "amplitude", "random", "output"} <= secs
        detail = sorted(secs)
    except Exception as e:  # noqa: BLE001
        ok, detail = False, repr(e)[:300]
    c.check("helmix template exits 0 and is INI with all six sections",
            proc.returncode == 0 and ok, detail, SRC_INI)
    comments = sum(1 for ln in tpl.splitlines() if ln.strip().startswith((";", "#")))
    c.check("helmix template is annotated (comment lines present)", comments >= 6,
            f"{comments} comment lines", "helmix specification")
    tpath = hx.path("template.ini")
    with open(tpath, "w") as f:
        f.write(tpl)
    proc, cmd, _ = hx.launch(["make", tpath, "-o", hx.path("template.h5"),
                              "--set", "grid.cells=16", "--quiet"], ranks=2)
    c.check("helmix make accepts the template (with --set grid.cells=16)",
            proc.returncode == 0 and os.path.exists(hx.path("template.h5")),
            f"rc={proc.returncode} {proc.stderr.strip()[:300]}", "helmix specification")


if __name__ == "__main__":
    H.run_main("test_make_errors", __doc__, body)
