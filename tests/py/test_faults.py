#!/usr/bin/python3
"""Faults during `helmix make`: none may hang, crash, or leave a file that looks complete.

What is asserted, and where the expectation comes from:
  * injected faults (HELMIX_FAULT=RANK:PHASE[:N], include/helmix/fault.h): for every phase
    (alloc, plan, create, write 1 and 3, close, rename, xdmf) on 1 rank and on rank 2 of 3,
    exit status 3 (documented: 3 run-time failure), exactly one line from helmix naming the
    phase, no signal or abort trace, within a timeout, and the output directory empty;
    a fault point that is never reached changes nothing (exit 0); a malformed switch exits 2;
  * a full disk (a 20 MiB tmpfs, root only): a 48 MiB cube is refused at once with the numbers,
    and with the space reservation switched off (HELMIX_NO_RESERVE=1) the failure in the middle
    of the writes still ends every rank with one line, exit 3 and nothing left, on 1-3 ranks in
    single and double; a cube that fits is written and read back;
  * a read-only file system (tmpfs remounted ro) is refused with exit 2 before any work; a
    directory removed while the run writes ends it with exit 3 and one line;
  * two runs on one output: the second is refused (exit 2, one line) and the first's file is
    its own; after SIGKILL the next run says it removed the stale partial and succeeds;
  * SIGTERM to mpiexec and SIGINT to one rank (POSIX: the default action ends the process;
    helmix removes its partial first): exit non-zero, no partial or lock left. Open MPI 4.1's
    mpiexec passes SIGTERM on only after odls_base_sigkill_timeout (1 s, ompi_info) and sends
    SIGKILL as soon as the first rank ends, so every rank removes the run's files. Runs that
    must still be running when a signal, a second run or a removal lands pause at their first
    write (HELMIX_STALL=write:S, include/helmix/fault.h), whatever the machine's speed;
  * paths of 600 characters (Open MPI 4.1 overflows at ~240) with a 230-character file name:
    written; a 250-character name refused with one line; --force onto a directory exit 2;
  * integrity: each dataset's helmix_checksum equals the sum io_digest.h defines, recomputed
    here with numpy; a byte flipped in a copy changes exactly that dataset's sum, and
    hx_io_verify (test_io verify) reports the MISMATCH and exits 1, the original 0.
"""

import os
import shutil
import signal
import subprocess
import sys
import tempfile
import time

import numpy as np
import h5py

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

SRC_EXIT = "helmix --help: exit 2 bad input, 3 run-time failure"
SRC_FAULT = "include/helmix/fault.h: HELMIX_FAULT=RANK:PHASE[:N]"
SRC_POSIX = "POSIX signal(7): SIGTERM/SIGINT default action terminates; common practice: remove temporaries"
SRC_DIGEST = "src/io_digest.h: sum of splitmix64 finaliser(bits xor i*0x9E3779B97F4A7C15) mod 2^64"
SRC_LOCK = "include/helmix/io.h: one run per output (FILE.lock, flock)"
GRID = "/data/grid_0000000000"
TIMEOUT = 60
# every rank pauses this long at its first write, after the partial file and the lock exist
STALL = "write:30"


def recipe(cells=16, precision="double", seed=5):
    return {"grid": {"cells": cells}, "mix": {"zeta": 0.5}, "random": {"seed": seed},
            "output": {"precision": precision}}


class Runner:
    """Launch make with a chosen environment, in the foreground or the background."""

    def __init__(self, args, hx):
        self.args, self.hx, self.n = args, hx, 0

    def argv(self, rec, out, ranks, extra=()):
        self.n += 1
        ini = self.hx.path(f"f{self.n:03d}.ini")
        with open(ini, "w") as f:
            f.write(H.recipe_text(rec))
        return (list(self.args.mpiexec) + ["-n", str(ranks), "-x", "HELMIX_FAULT", "-x", "HELMIX_NO_RESERVE",
                                           "-x", "HELMIX_STALL",
                                           self.args.helmix, "make", ini, "-o", out, "--quiet"] + list(extra))

    def env(self, fault="", noreserve="", stall=""):
        session = tempfile.mkdtemp(prefix="ompi-", dir=self.hx.tmp)
        return dict(os.environ, OMPI_MCA_orte_tmpdir_base=session, HELMIX_FAULT=fault, HELMIX_NO_RESERVE=noreserve,
                    HELMIX_STALL=stall)

    def run(self, rec, out, ranks=1, fault="", noreserve="", extra=(), stall=""):
        t0 = time.time()
        try:
            p = subprocess.run(self.argv(rec, out, ranks, extra), capture_output=True, text=True, timeout=TIMEOUT,
                               env=self.env(fault, noreserve, stall), start_new_session=True)
            return p.returncode, p.stdout, p.stderr, time.time() - t0
        except subprocess.TimeoutExpired as e:
            return "timeout", "", (e.stderr or b"").decode(errors="replace") if isinstance(e.stderr, bytes) else "", TIMEOUT

    def start(self, rec, out, ranks=1, extra=(), stall=STALL):
        return subprocess.Popen(self.argv(rec, out, ranks, extra), stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                                text=True, env=self.env(stall=stall), start_new_session=True)


def finish(p):
    try:
        out, err = p.communicate(timeout=TIMEOUT)
        return p.returncode, err
    except subprocess.TimeoutExpired:
        os.killpg(p.pid, signal.SIGKILL)
        p.communicate()
        return "timeout", ""


def wait_for(path, p, seconds=30):
    t0 = time.time()
    while time.time() - t0 < seconds and p.poll() is None:
        if os.path.exists(path):
            return True
        time.sleep(0.05)
    return False


def kill_all(p, out, sig):
    """Send sig to mpiexec's process group and to every rank writing out (ranks may sit in
    groups of their own), and wait until they are gone."""
    pids = [int(x) for x in subprocess.run(["pgrep", "-f", out], capture_output=True, text=True).stdout.split()]
    for pid in pids + [p.pid]:
        try:
            os.kill(pid, sig)
        except ProcessLookupError:
            pass
    p.communicate()
    t0 = time.time()
    while time.time() - t0 < 10 and subprocess.run(["pgrep", "-f", out], capture_output=True).returncode == 0:
        time.sleep(0.05)


def helmix_lines(stderr):
    return [ln for ln in H.mpi_noise_free_lines(stderr) if not ln.startswith("mca_") and "_write_all" not in ln]


def traces(stderr):
    return [ln for ln in stderr.splitlines() if "Signal:" in ln or "MPI_ABORT" in ln or "Segmentation" in ln
            or "buffer overflow" in ln or "assertion" in ln]


def one_error(c, label, rc, err, code, words):
    lines = helmix_lines(err)
    c.check(f"{label}: exit {code}", rc == code, f"rc={rc}", SRC_EXIT)
    c.check(f"{label}: one line from helmix naming {words}",
            len(lines) == 1 and lines[0].startswith("helmix: error:") and all(w in lines[0] for w in words),
            " | ".join(lines)[:400])
    c.check(f"{label}: no signal or abort trace", not traces(err), "; ".join(traces(err))[:200])


def left(d):
    return sorted(x for x in os.listdir(d)) if os.path.isdir(d) else []


def checksum(a):
    """The checksum of src/io_digest.h, recomputed independently with numpy."""
    a = np.ascontiguousarray(a)
    w = (a.view("<u8") if a.dtype.itemsize == 8 else a.view("<u4")).ravel().astype(np.uint64)
    i = np.arange(w.size, dtype=np.uint64)
    with np.errstate(over="ignore"):
        z = w ^ (i * np.uint64(0x9E3779B97F4A7C15))
        z = (z ^ (z >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
        z = (z ^ (z >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
        z = z ^ (z >> np.uint64(31))
        return int(z.sum(dtype=np.uint64))


def faults(R, hx, c):
    phases = [("alloc", 1), ("plan", 1), ("create", 1), ("write", 1), ("write", 3), ("close", 1), ("rename", 1),
              ("xdmf", 1)]
    for ranks, who in ((1, 0), (3, 2)):
        for phase, n in phases:
            d = hx.path(f"fault_{ranks}_{phase}_{n}")
            os.mkdir(d)
            rc, _, err, _ = R.run(recipe(), os.path.join(d, "o.h5"), ranks, fault=f"{who}:{phase}:{n}")
            label = f"{ranks} rank(s), rank {who} fails in {phase} (pass {n})"
            one_error(c, label, rc, err, 3, ["injected fault", f"'{phase}'"])
            c.check(f"{label}: nothing left", left(d) == [], left(d), SRC_FAULT)
    d = hx.path("fault_unreached")
    os.mkdir(d)
    rc, _, err, _ = R.run(recipe(), os.path.join(d, "o.h5"), 3, fault="1:write:99")
    c.check("a fault point never reached changes nothing: exit 0, file and sidecar", rc == 0 and
            left(d) == ["o.h5", "o.h5.xmf"], f"rc={rc} {left(d)} {err[-300:]}", SRC_FAULT)
    rc, _, err, _ = R.run(recipe(), os.path.join(d, "x.h5"), 1, fault="0:nosuch")
    one_error(c, "malformed HELMIX_FAULT", rc, err, 2, ["HELMIX_FAULT=0:nosuch"])
    for bad in ("write", "write:0", "write:-1", "write:1x", "nosuch:1", "write:4000"):
        rc, _, err, _ = R.run(recipe(), os.path.join(d, "x.h5"), 1, stall=bad)
        one_error(c, f"malformed HELMIX_STALL={bad}", rc, err, 2, [f"HELMIX_STALL={bad}:"])
    os.remove(os.path.join(d, "o.h5"))
    os.remove(os.path.join(d, "o.h5.xmf"))
    rc, _, err, t = R.run(recipe(), os.path.join(d, "o.h5"), 2, stall="write:1.5")
    c.check("a stall only delays: exit 0 after at least 1.5 s, file and sidecar", rc == 0 and t >= 1.5 and
            left(d) == ["o.h5", "o.h5.xmf"], f"rc={rc} {t:.2f} s {left(d)} {err[-300:]}", SRC_FAULT)


def can_mount():
    return os.geteuid() == 0 and shutil.which("mount") is not None


def disk(R, hx, c):
    if not can_mount():
        print("SKIP  disk-full and read-only tests: they mount a tmpfs, which needs root", flush=True)
        return
    d = hx.path("tmpfs")
    os.mkdir(d)
    if subprocess.run(["mount", "-t", "tmpfs", "-o", "size=20m", "tmpfs", d]).returncode != 0:
        print("SKIP  disk-full and read-only tests: mount -t tmpfs failed here", flush=True)
        return
    try:
        out = os.path.join(d, "o.h5")
        rc, _, err, _ = R.run(recipe(128, "double"), out, 3)
        one_error(c, "48 MiB into 20 MiB, 3 ranks", rc, err, 3, ["no room", "MiB free"])
        c.check("48 MiB into 20 MiB: nothing left", left(d) == [], left(d))
        for ranks, prec, cells in ((1, "double", 128), (2, "single", 128), (3, "double", 128), (3, "single", 128)):
            rc, _, err, t = R.run(recipe(cells, prec), out, ranks, noreserve="1")
            label = f"full disk mid-write, {ranks} rank(s), {prec} {cells}^3, no reservation"
            one_error(c, label, rc, err, 3, ["disk full or quota"])
            c.check(f"{label}: nothing left, no hang", left(d) == [] and rc != "timeout", f"{left(d)} {t:.1f} s")
        rc, _, err, _ = R.run(recipe(64, "double"), out, 3, noreserve="1")
        c.check("a 6 MiB cube fits without reservation: written and read back (exit 0)", rc == 0 and
                left(d) == ["o.h5", "o.h5.xmf"], f"rc={rc} {left(d)} {err[-300:]}")
        for x in left(d):
            os.remove(os.path.join(d, x))
        if subprocess.run(["mount", "-o", "remount,ro", d]).returncode == 0:
            rc, _, err, _ = R.run(recipe(), out, 2)
            one_error(c, "read-only file system", rc, err, 2, [d])
            c.check("read-only file system: nothing created", left(d) == [], left(d))
        else:
            print("SKIP  read-only test: remount,ro failed", flush=True)
    finally:
        subprocess.run(["umount", d])


def removed_dir(R, hx, c):
    d = hx.path("doomed")
    os.mkdir(d)
    p = R.start(recipe(32, "double"), os.path.join(d, "o.h5"), 2, stall="write:3")
    seen = wait_for(os.path.join(d, "o.h5.partial"), p)
    shutil.rmtree(d, ignore_errors=True)
    rc, err = finish(p)
    c.check("directory removed while writing: the run had started", seen)
    one_error(c, "directory removed while writing", rc, err, 3, [])
    c.check("directory removed while writing: nothing recreated", not os.path.exists(d))


def concurrent(R, hx, c):
    d = hx.path("shared")
    os.mkdir(d)
    out = os.path.join(d, "o.h5")
    a = R.start(recipe(32, "double", seed=1), out, 1, stall="write:5")
    seen = wait_for(out + ".lock", a)
    rc_b, _, err_b, _ = R.run(recipe(16, "double", seed=2), out, 2, extra=["--force"])
    rc_a, err_a = finish(a)
    c.check("two runs on one output: the first had started", seen)
    one_error(c, "second run on the same output", rc_b, err_b, 2, ["another helmix run is writing"])
    c.check("the first run ends well", rc_a == 0, f"rc={rc_a} {err_a[-300:]}", SRC_LOCK)
    if rc_a == 0:
        with h5py.File(out, "r") as f:
            c.check("the file holds the first run's field (seed 1)", int(f["/helmix"].attrs["seed"]) == 1,
                    int(f["/helmix"].attrs["seed"]), SRC_LOCK)
    c.check("two runs: only the file and its sidecar", left(d) == ["o.h5", "o.h5.xmf"], left(d))
    # a run killed outright leaves its partial and lock; the next run says so and proceeds
    os.remove(out)
    k = R.start(recipe(32, "double", seed=3), out, 2)
    seen = wait_for(out + ".partial", k)
    time.sleep(0.3)
    kill_all(k, out, signal.SIGKILL)
    c.check("SIGKILL leaves a partial that is not the file", seen and os.path.exists(out + ".partial") and
            not os.path.exists(out), left(d))
    rc, _, err, _ = R.run(recipe(16, "double", seed=4), out, 2)
    c.check("the next run succeeds", rc == 0, f"rc={rc}")
    # printed even with --quiet: a warning, not progress
    c.check("the next run names the stale partial it removed", "interrupted run" in err and "warning" in err,
            err.strip()[:300])
    c.check("after it: only the file and its sidecar", left(d) == ["o.h5", "o.h5.xmf"], left(d))


def signals(R, hx, c):
    for how in ("SIGTERM to mpiexec", "SIGINT to rank 1"):
        d = hx.path("sig_" + how.split()[0])
        os.mkdir(d)
        out = os.path.join(d, "o.h5")
        # mpiexec passes SIGTERM on 1 s after it gets it: the run pauses at its first write
        p = R.start(recipe(32, "double"), out, 2)
        seen = wait_for(out + ".partial", p)
        time.sleep(0.05)
        if how.startswith("SIGTERM"):
            p.send_signal(signal.SIGTERM)
        else:
            ranks = subprocess.run(["pgrep", "-f", out], capture_output=True, text=True).stdout.split()
            ranks = [int(x) for x in ranks if int(x) != p.pid]
            if ranks:
                os.kill(max(ranks), signal.SIGINT)
        rc, err = finish(p)
        c.check(f"{how}: the run was writing", seen)
        c.check(f"{how}: exit non-zero, no hang", rc not in (0, "timeout"), f"rc={rc}", SRC_POSIX)
        c.check(f"{how}: no partial, no lock left", left(d) == [], left(d), SRC_POSIX)


def names(R, hx, c):
    d = hx.path("l")
    for i in range(3):
        d = os.path.join(d, chr(ord("a") + i) * 200)
    os.makedirs(d)
    out = os.path.join(d, "n" * 230 + ".h5")
    rc, _, err, _ = R.run(recipe(), out, 2)
    c.check(f"a {len(out)}-character path with a 230-character name is written", rc == 0 and os.path.exists(out),
            f"rc={rc} {err[-300:]}")
    c.check("long name: only the file and its sidecar", left(d) == [os.path.basename(out), os.path.basename(out) + ".xmf"],
            [x[:12] for x in left(d)])
    if rc == 0:
        with h5py.File(out, "r") as f:
            g = f[GRID]
            c.check("long name: checksums intact", all(int(g[k].attrs["helmix_checksum"]) == checksum(g[k][...])
                                                       for k in g), "", SRC_DIGEST)
    for x in left(d):
        os.remove(os.path.join(d, x))
    rc, _, err, _ = R.run(recipe(), os.path.join(d, "m" * 250 + ".h5"), 2)
    one_error(c, "a 250-character file name", rc, err, 2, ["characters"])
    c.check("a 250-character file name: nothing created", left(d) == [], left(d))
    e = hx.path("forcedir")
    os.makedirs(os.path.join(e, "x.h5"))
    rc, _, err, _ = R.run(recipe(), os.path.join(e, "x.h5"), 2, extra=["--force"])
    one_error(c, "--force onto a directory", rc, err, 2, ["is a directory"])
    c.check("--force onto a directory: nothing created", left(e) == ["x.h5"] and left(os.path.join(e, "x.h5")) == [],
            left(e))


def integrity(R, hx, c, args):
    d = hx.path("integrity")
    os.mkdir(d)
    out = os.path.join(d, "o.h5")
    rc, _, err, _ = R.run(recipe(24, "single"), out, 2)
    if not c.check("integrity cube written", rc == 0, err[-300:]):
        return
    with h5py.File(out, "r") as f:
        g = f[GRID]
        sums = {k: (int(g[k].attrs["helmix_checksum"]), checksum(g[k][...]), g[k].id.get_offset()) for k in g}
    c.check("every dataset's stored checksum is the numpy sum", all(s == m for s, m, _ in sums.values()),
            {k: (hex(s), hex(m)) for k, (s, m, _) in sums.items()}, SRC_DIGEST)
    bad = os.path.join(d, "flipped.h5")
    shutil.copy(out, bad)
    with open(bad, "r+b") as f:
        f.seek(sums["velocity_y"][2] + 100)
        b = f.read(1)
        f.seek(sums["velocity_y"][2] + 100)
        f.write(bytes([b[0] ^ 0x01]))
    with h5py.File(bad, "r") as f:
        g = f[GRID]
        differ = sorted(k for k in g if checksum(g[k][...]) != int(g[k].attrs["helmix_checksum"]))
    c.check("one flipped bit: exactly velocity_y's sum differs", differ == ["velocity_y"], differ, SRC_DIGEST)
    test_io = os.path.join(os.path.dirname(os.path.abspath(args.helmix)), "tests", "test_io")
    if not os.access(test_io, os.X_OK):
        print(f"SKIP  hx_io_verify through {test_io}: not built", flush=True)
        return
    for path, code in ((out, 0), (bad, 1)):
        p = subprocess.run(list(args.mpiexec) + ["-n", "2", test_io, "verify", path], capture_output=True, text=True,
                           timeout=TIMEOUT, env=R.env())
        mism = [ln for ln in p.stdout.splitlines() if "MISMATCH" in ln]
        want = [] if code == 0 else ["velocity_y"]
        c.check(f"hx_io_verify on the {'original' if code == 0 else 'flipped copy'}: exit {code}, mismatches {want}",
                p.returncode == code and [m.split()[1] for m in mism] == want, p.stdout.strip()[-400:])


def body(args, hx, c):
    R = Runner(args, hx)
    faults(R, hx, c)
    disk(R, hx, c)
    removed_dir(R, hx, c)
    concurrent(R, hx, c)
    signals(R, hx, c)
    names(R, hx, c)
    integrity(R, hx, c, args)


if __name__ == "__main__":
    H.run_main("faults", __doc__, body)
