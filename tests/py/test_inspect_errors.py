#!/usr/bin/python3
"""Bad input to `helmix inspect`: exit 2, one clear line, no crash, no files.

Each case must end with exit status 2 (not a signal, not the launcher's own
code), print exactly one line "helmix: error: ..." on stderr that names the
culprit (file, dataset, option or value), and write no JSON report. Most
cases run the executable directly (an MPI singleton, one rank); a few run
under the launcher on 1 and on 3 ranks, where every rank must agree on the
verdict and only rank 0 may speak (the launcher's own banner is not helmix
output and is removed, hxcheck.mpi_noise_free_lines).

Also: an unwritable --json path is a failure (exit 2 or 3, one line), and a
valid call after all that still works (exit 0), so the cases above fail for
their stated reason and not because the file or binary is unusable.
"""

import os
import sys

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402
import hxinspect as X  # noqa: E402

SRC = "helmix specification: exit 2 = bad input, one line 'helmix: error: ...' on stderr"


def expect_error(c, hx, label, path, opts, words, ranks=0, rc=(2,)):
    run = X.inspect(hx, path, *opts, ranks=ranks)
    lines = run.lines()
    ok_rc = run.rc in rc
    ok_line = len(lines) == 1 and lines[0].startswith("helmix: error:")
    low = lines[0].lower() if lines else ""
    missing = [w for w in words if w.lower() not in low]
    no_json = not (run.json_path and os.path.exists(run.json_path))
    where = "singleton" if ranks == 0 else f"{ranks} rank(s)"
    c.check(f"[{label}] ({where}) exit {'/'.join(map(str, rc))}, one 'helmix: error:' line naming {words}, no JSON",
            ok_rc and ok_line and not missing and no_json,
            f"rc={run.rc} lines={lines[:3]}" + (f" missing words {missing}" if missing else "")
            + ("" if no_json else " JSON written!"), SRC)
    return run


def body(args, hx, c):
    tmp = hx.tmp
    cells = (16, 16, 8)
    v = X.random_field(cells, (1.0, 1.0, 1.0), 1)
    good = hx.path("good.h5")
    vec = X.write_foreign(good, v, order="zyx")

    # files -----------------------------------------------------------------
    missing = os.path.join(tmp, "no_such_cube.h5")
    text = hx.path("notes.h5")
    with open(text, "w") as f:
        f.write("this is a text file, not HDF5\n" * 50)
    mk = hx.make({"grid": {"cells": 32}, "mix": {"zeta": 0.5}, "output": {"precision": "double"}}, ranks=1)
    trunc = hx.path("truncated.h5")
    if c.check("helmix make of a cube to truncate exits 0", mk.ok, mk.describe() if not mk.ok else ""):
        with open(mk.out, "rb") as f:
            data = f.read()
        with open(trunc, "wb") as f:
            f.write(data[:len(data) // 2])
        c.check("truncated copy is half the size", os.path.getsize(trunc) == len(data) // 2,
                f"{os.path.getsize(trunc)} of {len(data)} bytes")
    # datasets --------------------------------------------------------------
    shapes = hx.path("shapes.h5")
    X.write_sets(shapes, {"/u": np.zeros((8, 16, 16)), "/v": np.zeros((8, 16, 16)), "/w": np.zeros((8, 16, 8)),
                          "/flat": np.zeros((16, 16)), "/four": np.zeros((8, 16, 16, 2)),
                          "/text": np.array([b"abc"] * 4), "/rho_neg": -np.ones((8, 16, 16)),
                          "/rho_small": np.ones((8, 8, 16))})

    cases = [
        ("missing file", missing, [], ["no_such_cube.h5"]),
        ("not an HDF5 file", text, [], ["notes.h5"]),
        ("truncated HDF5 file", trunc, [], ["truncated.h5"]),
        ("helmix layout absent (no --vector)", good, [], ["velocity_x", "--vector"]),
        ("--vector names a missing dataset", good, ["--vector", "/u,/v,/nothing"], ["/nothing"]),
        ("--vector with two paths", good, ["--vector", "/u,/v"], ["--vector"]),
        ("--vector 4-D name that is missing", good, ["--vector", "/vel4"], ["/vel4"]),
        ("mismatched shapes", shapes, ["--vector", "/u,/v,/w"], ["shape"]),
        ("2-D dataset", shapes, ["--vector", "/flat,/flat,/flat"], ["/flat"]),
        ("4-D dataset without an axis of length 3", shapes, ["--vector", "/four"], ["/four"]),
        ("dataset of strings", shapes, ["--vector", "/text,/text,/text"], ["/text"]),
        ("--box too elongated for the grid (more than 2^24 shells)", good, ["--vector", vec, "--box", "1,1,1e12"],
         ["--box", "elongated"]),
        ("--density names a missing dataset", good, ["--vector", vec, "--density", "/rho"], ["/rho"]),
        ("--density of another shape", shapes, ["--vector", "/u,/v,/u", "--density", "/rho_small"],
         ["density"]),
        ("--density with negative values", shapes, ["--vector", "/u,/v,/u", "--density", "/rho_neg"],
         ["negative"]),
        # options
        ("--box a,b,c", good, ["--vector", vec, "--box", "a,b,c"], ["--box", "a,b,c"]),
        ("--box with two numbers", good, ["--vector", vec, "--box", "1,2"], ["--box"]),
        ("--box with a zero side", good, ["--vector", vec, "--box", "1,0,1"], ["--box"]),
        ("--remove-scale x", good, ["--vector", vec, "--remove-scale", "x"], ["--remove-scale"]),
        ("--remove-scale -0.1", good, ["--vector", vec, "--remove-scale", "-0.1"], ["--remove-scale"]),
        ("--fit 5", good, ["--vector", vec, "--fit", "5"], ["--fit"]),
        ("--fit 6,3 (kmin > kmax)", good, ["--vector", vec, "--fit", "6,3"], ["--fit"]),
        ("unknown option", good, ["--vector", vec, "--frobnicate", "1"], ["--frobnicate"]),
        ("--order abc", good, ["--vector", vec, "--order", "abc"], ["--order", "abc"]),
        ("--plot with a .jpg name", good, ["--vector", vec, "--plot", hx.path("x.jpg")], ["--plot", ".png"]),
        ("--plot without an extension", good, ["--vector", vec, "--plot", hx.path("report")], ["--plot"]),
        ("--expect fraction=2", good, ["--vector", vec, "--check", "--expect", "fraction=2"], ["fraction"]),
        ("--expect unknown key", good, ["--vector", vec, "--check", "--expect", "share=0.3"], ["share"]),
        ("--expect not key=value", good, ["--vector", vec, "--check", "--expect", "0.3"], ["--expect"]),
        ("--tolerance fraction=-1", good, ["--vector", vec, "--check", "--expect", "fraction=0.3",
                                           "--tolerance", "fraction=-1"], ["tolerance"]),
        ("two files", good, [good, "--vector", vec], ["more than one file"]),
    ]
    for label, path, opts, words in cases:
        expect_error(c, hx, label, path, opts, words)
    # an option last on the line, without its value
    run = X.inspect(hx, good, "--vector", vec, "--box", ranks=0, json_name=None, quiet=False)
    ln = run.lines()
    c.check("[--box last, without its value] exit 2, one line naming --box",
            run.rc == 2 and len(ln) == 1 and ln[0].startswith("helmix: error:") and "--box" in ln[0],
            f"rc={run.rc} {ln}", SRC)
    # no file at all
    run = X.inspect(hx, "--quiet", ranks=0, json_name=None)
    ln = run.lines()
    c.check("[no file given] exit 2, one line", run.rc == 2 and len(ln) == 1 and ln[0].startswith("helmix: error:"),
            f"rc={run.rc} {ln}", SRC)

    # under the launcher on 1 and 3 ranks ------------------------------------
    for ranks in (1, 3):
        expect_error(c, hx, "missing file", missing, [], ["no_such_cube.h5"], ranks=ranks)
        expect_error(c, hx, "truncated HDF5 file", trunc, [], ["truncated.h5"], ranks=ranks)
        expect_error(c, hx, "mismatched shapes", shapes, ["--vector", "/u,/v,/w"], ["shape"], ranks=ranks)
        expect_error(c, hx, "--box 1,1,1e12", good, ["--vector", vec, "--box", "1,1,1e12"], ["elongated"], ranks=ranks)
        expect_error(c, hx, "--box a,b,c", good, ["--vector", vec, "--box", "a,b,c"], ["--box"], ranks=ranks)
        expect_error(c, hx, "--density with negative values", shapes,
                     ["--vector", "/u,/v,/u", "--density", "/rho_neg"], ["negative"], ranks=ranks)

    # output that cannot be written: a run-time failure or bad input, one line
    bad_json = os.path.join(tmp, "no_such_dir", "report.json")
    run = X.inspect(hx, good, "--vector", vec, ranks=0, json_name=bad_json)
    ln = run.lines()
    c.check("[--json into a missing directory] exit 2 or 3, one line naming the path",
            run.rc in (2, 3) and len(ln) == 1 and ln[0].startswith("helmix: error:") and "report.json" in ln[0],
            f"rc={run.rc} {ln}", "helmix specification: 3 = run-time failure")

    # the same file and binary still work
    run = X.inspect(hx, good, "--vector", vec, ranks=2)
    c.check("a valid call on the same file exits 0 and writes the JSON", run.ok and run.json is not None,
            run.describe() if not run.ok else "")
    with h5py.File(good, "r") as f:
        c.check("the inspected file is unchanged (read-only access)", set(f.keys()) == {"u", "v", "w"},
                str(list(f.keys())))


if __name__ == "__main__":
    H.run_main("test_inspect_errors", __doc__, body)
