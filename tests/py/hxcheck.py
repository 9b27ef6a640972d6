"""Shared helpers for the helmix cross-check tests.

Runs `helmix make`, reads the cube it writes with h5py, builds the wavevector
grid of a periodic box and does the spectral bookkeeping (Helmholtz projection,
shell spectra) with numpy.fft, independently of the C code.

Conventions used here (all from the helmix specification):
  * arrays in the file have shape (Nz, Ny, Nx), x fastest;
  * cell centres sit at x_i = (i + 1/2) dx;
  * a mode n = (nx, ny, nz) has wavevector k_i = 2 pi n_i / L_i, and its
    wavenumber "in units" is |k| / (2 pi / Lmax).

numpy.fft.fftn computes V[n] = sum_j v_j exp(-2 pi i n.j / N) (numpy
documentation, "numpy.fft" module conventions), so for a field
v(x) = sum_n c_n exp(i k_n . x) sampled at cell centres,
c_n = V[n] / (Nx Ny Nz) * exp(-i pi sum_a n_a / N_a).
"""

import argparse
import configparser
import os
import shlex
import shutil
import subprocess
import sys
import tempfile
import time
import traceback

import numpy as np
import h5py

TWO_PI = 2.0 * np.pi


# ----------------------------------------------------------------------------
# command line of the test scripts
# ----------------------------------------------------------------------------

def parse_args(description):
    ap = argparse.ArgumentParser(description=description)
    ap.add_argument("--helmix",
                    default=os.environ.get("HELMIX", "/work/main/build/helmix"),
                    help="path to the helmix executable")
    ap.add_argument("--mpiexec",
                    default=os.environ.get(
                        "HX_MPIEXEC",
                        "mpiexec --allow-run-as-root --oversubscribe"),
                    help="MPI launcher and its options, as one string")
    ap.add_argument("--keep", action="store_true",
                    help="keep the temporary directory (for debugging)")
    args = ap.parse_args()
    args.mpiexec = shlex.split(args.mpiexec)
    return args


# ----------------------------------------------------------------------------
# pass / fail bookkeeping
# ----------------------------------------------------------------------------

class Checks:
    """Collects checks; each check names its external source."""

    def __init__(self, name):
        self.name = name
        self.passed = 0
        self.failed = 0
        self.t0 = time.time()

    def check(self, label, ok, measured="", source=""):
        ok = bool(ok)
        if ok:
            self.passed += 1
        else:
            self.failed += 1
        tag = "PASS" if ok else "FAIL"
        line = f"{tag}  {label}"
        if measured != "":
            line += f"  | {measured}"
        if source:
            line += f"  [source: {source}]"
        print(line, flush=True)
        return ok

    def fail(self, label, detail=""):
        return self.check(label, False, detail)

    def finish(self):
        dt = time.time() - self.t0
        print(f"{self.name}: runtime {dt:.1f} s")
        print(f"{self.passed} passed, {self.failed} failed", flush=True)
        sys.exit(1 if (self.failed or not self.passed) else 0)


def run_main(name, description, body):
    """Parse args, make a temp dir, run body(args, hx, checks), report."""
    args = parse_args(description)
    checks = Checks(name)
    tmp = tempfile.mkdtemp(prefix="helmix_" + name + "_")
    try:
        if not os.access(args.helmix, os.X_OK):
            checks.fail("helmix executable present", args.helmix)
        else:
            hx = Helmix(args, tmp)
            body(args, hx, checks)
    except Exception:  # an exception is a failed check, not a crash
        traceback.print_exc()
        checks.fail("test body ran without exception")
    finally:
        if not args.keep:
            import shutil
            shutil.rmtree(tmp, ignore_errors=True)
        else:
            print("kept", tmp)
    checks.finish()


# ----------------------------------------------------------------------------
# running helmix
# ----------------------------------------------------------------------------

def recipe_text(recipe):
    """dict {section: {key: value}} -> INI text; strings pass through."""
    if isinstance(recipe, str):
        return recipe
    out = []
    for sec, keys in recipe.items():
        out.append(f"[{sec}]")
        for k, v in keys.items():
            out.append(f"{k} = {v}")
        out.append("")
    return "\n".join(out)


class Run:
    def __init__(self, proc, out, cmd, seconds):
        self.rc = proc.returncode
        self.stdout = proc.stdout
        self.stderr = proc.stderr
        self.out = out
        self.cmd = cmd
        self.seconds = seconds

    @property
    def ok(self):
        return self.rc == 0

    def describe(self):
        return (f"rc={self.rc} cmd={' '.join(self.cmd)}\n"
                f"stderr: {self.stderr.strip()[:2000]}")


class Helmix:
    def __init__(self, args, tmpdir):
        self.exe = args.helmix
        self.mpiexec = args.mpiexec
        self.tmp = tmpdir
        self.count = 0

    def path(self, name):
        return os.path.join(self.tmp, name)

    def launch(self, argv, ranks=1, cwd=None, timeout=180):
        """ranks=0: run the executable directly (an MPI singleton, one rank,
        no launcher); otherwise through the MPI launcher with -n ranks."""
        if ranks == 0:
            cmd = [self.exe] + list(argv)
        else:
            cmd = list(self.mpiexec) + ["-n", str(ranks), self.exe] + list(argv)
        # Each launch gets its own MPI session directory: launches that start at the same
        # moment (the ensemble test runs two at a time) otherwise race to create the same one.
        session = tempfile.mkdtemp(prefix="ompi-", dir=self.tmp)
        env = dict(os.environ, OMPI_MCA_orte_tmpdir_base=session)
        t0 = time.time()
        proc = subprocess.run(cmd, cwd=cwd or self.tmp, capture_output=True,
                              text=True, timeout=timeout, env=env)
        shutil.rmtree(session, ignore_errors=True)
        return proc, cmd, time.time() - t0

    def make(self, recipe, ranks=1, out=None, sets=(), extra=(), name=None,
             timeout=180, quiet=True):
        """Write the recipe into the temp dir and run `helmix make` on it."""
        self.count += 1
        tag = name or f"r{self.count:03d}"
        ini = self.path(tag + ".ini")
        with open(ini, "w") as f:
            f.write(recipe_text(recipe))
        if out is None:
            out = self.path(tag + ".h5")
        argv = ["make", ini, "-o", out]
        for s in sets:
            argv += ["--set", s]
        argv += list(extra)
        if quiet:
            argv.append("--quiet")
        proc, cmd, dt = self.launch(argv, ranks=ranks, timeout=timeout)
        return Run(proc, out, cmd, dt)


def mpi_noise_free_lines(stderr):
    """stderr lines written by helmix itself.

    The Open MPI launcher adds its own banner (blocks fenced by lines of
    dashes) when a rank exits non-zero; that text is not helmix's, so it is
    removed here. Blank lines are dropped."""
    lines = []
    inside = False
    for ln in stderr.splitlines():
        s = ln.strip()
        if len(s) >= 10 and set(s) == {"-"}:
            inside = not inside
            continue
        if inside or not s:
            continue
        lines.append(s)
    return lines


# ----------------------------------------------------------------------------
# reading cubes
# ----------------------------------------------------------------------------

class Cube:
    """A helmix output cube: v has shape (3, Nz, Ny, Nx) in float64."""

    def __init__(self, path):
        self.path = path
        with h5py.File(path, "r") as f:
            g = f["/data/grid_0000000000"]
            comps = [g["velocity_" + c] for c in "xyz"]
            self.dtype = comps[0].dtype
            self.v = np.stack([c[...].astype(np.float64) for c in comps])
            self.attrs = {k: _plain(v) for k, v in f["/helmix"].attrs.items()}
            self.sim = {k: _plain(v) for k, v in
                        f["/simulation_parameters"].attrs.items()}
        Nz, Ny, Nx = self.v.shape[1:]
        self.cells = (Nx, Ny, Nz)
        left = np.asarray(self.sim["domain_left_edge"], dtype=float)
        right = np.asarray(self.sim["domain_right_edge"], dtype=float)
        self.box = tuple(right - left)  # (Lx, Ly, Lz)

    def rms3(self):
        return float(np.sqrt(np.mean(np.sum(self.v ** 2, axis=0))))


def _plain(v):
    if isinstance(v, bytes):
        return v.decode()
    if isinstance(v, np.ndarray) and v.dtype.kind in "SO":
        return [x.decode() if isinstance(x, bytes) else x for x in v.tolist()]
    return v


# ----------------------------------------------------------------------------
# spectral tools
# ----------------------------------------------------------------------------

class Spectral:
    """numpy.fft view of a cube: coefficients and wavevectors.

    c[a, iz, iy, ix] is the Fourier coefficient c_n of component a (so that
    v(x) = sum_n c_n exp(i k_n.x)), already corrected for the half-cell
    offset of the cell centres. n[a] and k[a] are integer mode numbers and
    physical wavevectors, in x, y, z order, broadcast to (Nz, Ny, Nx)."""

    def __init__(self, v, box):
        Nz, Ny, Nx = v.shape[1:]
        Lx, Ly, Lz = box
        self.N = (Nx, Ny, Nz)
        self.box = (Lx, Ly, Lz)
        nz1 = np.fft.fftfreq(Nz, 1.0 / Nz)
        ny1 = np.fft.fftfreq(Ny, 1.0 / Ny)
        nx1 = np.fft.fftfreq(Nx, 1.0 / Nx)
        nz, ny, nx = np.meshgrid(nz1, ny1, nx1, indexing="ij")
        self.n = np.stack([nx, ny, nz])
        self.k = np.stack([TWO_PI * nx / Lx, TWO_PI * ny / Ly, TWO_PI * nz / Lz])
        self.kmag = np.sqrt(np.sum(self.k ** 2, axis=0))
        self.kunit = TWO_PI / max(box)
        self.kun = self.kmag / self.kunit  # |k| in units of 2 pi / Lmax
        self.nyquist = ((np.abs(nx) == Nx // 2) | (np.abs(ny) == Ny // 2) |
                        (np.abs(nz) == Nz // 2))
        phase = np.exp(-1j * np.pi * (nx / Nx + ny / Ny + nz / Nz))
        V = np.fft.fftn(v, axes=(1, 2, 3)) / float(Nx * Ny * Nz)
        self.c = V * phase[None]

    def power(self):
        """|c_n|^2 summed over components: energy per mode (Parseval)."""
        return np.sum(np.abs(self.c) ** 2, axis=0)

    def longitudinal(self):
        """|k_hat . c|^2 per mode (curl-free, compressive part); 0 at k=0."""
        with np.errstate(invalid="ignore", divide="ignore"):
            kc = np.sum(self.k * self.c, axis=0)
            out = np.abs(kc) ** 2 / self.kmag ** 2
        out[self.kmag == 0] = 0.0
        return out

    def compressive_fraction(self):
        P = self.power()
        P[self.kmag == 0] = 0.0
        return float(np.sum(self.longitudinal()) / np.sum(P))

    def shells(self):
        """Shell index round(|k| / (2 pi / Lmax)), as in the specification."""
        return np.rint(self.kun).astype(int)

    def divergence_ratio(self):
        """rms(k . c) / rms(|k| |c|): 0 for a divergence-free field."""
        kc = np.sum(self.k * self.c, axis=0)
        num = np.sum(np.abs(kc) ** 2)
        den = np.sum(self.kmag ** 2 * self.power())
        return float(np.sqrt(num / den))

    def curl_ratio(self):
        """rms(k x c) / rms(|k| |c|): 0 for a curl-free field."""
        kx, ky, kz = self.k
        cx, cy, cz = self.c
        curl = [ky * cz - kz * cy, kz * cx - kx * cz, kx * cy - ky * cx]
        num = sum(np.sum(np.abs(q) ** 2) for q in curl)
        den = np.sum(self.kmag ** 2 * self.power())
        return float(np.sqrt(num / den))


def ini_parses(text):
    """True if Python's configparser reads the text as INI (with ; and # comments)."""
    cp = configparser.ConfigParser(inline_comment_prefixes=(";", "#"),
                                   comment_prefixes=(";", "#"), strict=False)
    cp.read_string(text)
    return cp
