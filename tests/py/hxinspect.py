"""Shared helpers for the cross-checks of `helmix inspect`.

Runs `helmix inspect` under the MPI launcher (through hxcheck's Helmix
runner), writes foreign HDF5 cubes with h5py, and recomputes every number of
the inspect report independently with numpy.fft / scipy.stats:

  * v_hat_n = numpy.fft.fftn(v) / N over the axes (z, y, x), N cells
    (numpy.fft conventions, numpy documentation);
  * physical k_a = 2 pi n_a / L_a, n_a = numpy.fft.fftfreq(N_a) * N_a (the
    Nyquist index counts as -N_a/2);
  * shell s = floor(|k| / (2 pi / max L) + 1/2); k = 0 enters no energy,
    spectrum or gradient;
  * Helmholtz split by projection on k_hat (common practice);
  * gradient sums by Parseval's theorem for the DFT (common practice);
  * population skewness and excess kurtosis (scipy.stats.skew / kurtosis
    with bias=True, fisher=True);
  * slope by ordinary least squares with the n-2 degrees-of-freedom
    standard error of the slope (scipy.stats.linregress).

Nothing here reads helmix's own numbers to build an expected value: the
reference is a function of the velocity array, the box and the options only.
"""

import json
import math
import os
import struct
import sys
import zlib

import numpy as np
import h5py
import scipy.stats

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

TWO_PI = 2.0 * np.pi
BINS = 100
PDF_RANGE = 5.0

SRC_FFT = "numpy.fft.fftn conventions (numpy documentation)"
SRC_PARSEVAL = "Parseval's theorem for the DFT (common practice)"
SRC_HELM = ("Helmholtz decomposition by projection on k_hat (common practice; "
            "cf. Federrath et al. 2010, A&A 512, A81, from memory)")
SRC_MOM = ("population skewness / excess kurtosis, scipy.stats.skew and "
           "scipy.stats.kurtosis with bias=True (scipy documentation)")
SRC_LSQ = ("ordinary least squares, slope standard error with n-2 dof "
           "(scipy.stats.linregress documentation; common practice)")
SRC_GAUSS_FILTER = ("Gaussian filter transfer function exp(-k^2 l^2 / 2) "
                    "(common practice)")


# ----------------------------------------------------------------------------
# running inspect
# ----------------------------------------------------------------------------

class InspectRun(H.Run):
    """A finished `helmix inspect` (exit status, output, command) with its JSON report parsed."""

    def __init__(self, proc, cmd, seconds, json_path, csv_path):
        super().__init__(proc, json_path, cmd, seconds)
        self.json_path = json_path
        self.csv_path = csv_path
        self.json = None
        self.json_error = None
        if json_path and os.path.exists(json_path):
            try:
                with open(json_path) as f:
                    self.json = json.load(f, parse_constant=_reject_constant)
            except Exception as e:  # reported by the caller's checks
                self.json_error = repr(e)

    def lines(self):
        """helmix's own stderr lines (the launcher's banner removed)."""
        return H.mpi_noise_free_lines(self.stderr)


def _reject_constant(name):
    # NaN / Infinity are not JSON (RFC 8259); helmix must print null instead
    raise ValueError(f"non-standard JSON constant {name}")


def inspect(hx, path, *opts, ranks=1, json_name="auto", csv_name=None,
            quiet=True, timeout=150):
    """Run `helmix inspect path opts...` on `ranks` ranks.

    json_name "auto" writes the report to a fresh file in the temp dir and
    parses it; None asks for no JSON."""
    hx.count += 1
    argv = ["inspect", path] + [str(o) for o in opts]
    jp = cp = None
    if json_name == "auto":
        jp = hx.path(f"inspect_{hx.count:03d}.json")
    elif json_name:
        jp = json_name
    if jp:
        if os.path.exists(jp):
            os.remove(jp)
        argv += ["--json", jp]
    if csv_name:
        cp = csv_name if os.path.isabs(csv_name) else hx.path(csv_name)
        argv += ["--csv", cp]
    if quiet:
        argv.append("--quiet")
    proc, cmd, dt = hx.launch(argv, ranks=ranks, timeout=timeout)
    return InspectRun(proc, cmd, dt, jp, cp)


# ----------------------------------------------------------------------------
# writing foreign cubes
# ----------------------------------------------------------------------------

def to_xyz(a):
    """(Nz, Ny, Nx) array -> (Nx, Ny, Nz) array (z fastest in memory)."""
    return np.ascontiguousarray(np.transpose(a, (2, 1, 0)))


def write_sets(path, sets, mode="w"):
    """Write {dataset path: array} with h5py (float64 unless the array says)."""
    with h5py.File(path, mode) as f:
        for name, arr in sets.items():
            if name in f:
                del f[name]
            f.create_dataset(name, data=np.asarray(arr))


def write_foreign(path, v, order="xyz", names=("/u", "/v", "/w"), extra=None,
                  dtype=np.float64):
    """Write a velocity v (3, Nz, Ny, Nx) as three datasets in the given order."""
    conv = to_xyz if order == "xyz" else (lambda a: np.ascontiguousarray(a))
    sets = {n: conv(v[i]).astype(dtype) for i, n in enumerate(names)}
    if extra:
        sets.update(extra)
    write_sets(path, sets)
    return ",".join(names)


def grid_coords(cells, box, centred=True):
    """Cell coordinates broadcast to (Nz, Ny, Nx): returns x, y, z."""
    Nx, Ny, Nz = cells
    Lx, Ly, Lz = box
    off = 0.5 if centred else 0.0
    x = (np.arange(Nx) + off) * Lx / Nx
    y = (np.arange(Ny) + off) * Ly / Ny
    z = (np.arange(Nz) + off) * Lz / Nz
    Z, Y, X = np.meshgrid(z, y, x, indexing="ij")
    return X, Y, Z


def band_limit(a, band):
    """Zero every Fourier mode of a (Nz, Ny, Nx) array with |n_a| >= band * N_a
    on some axis (band = 0.5 removes just the Nyquist planes)."""
    Nz, Ny, Nx = a.shape
    keep = np.ones(a.shape, dtype=bool)
    for ax, n in enumerate((Nz, Ny, Nx)):
        f = np.abs(np.fft.fftfreq(n) * n) < band * n
        shape = [1, 1, 1]
        shape[ax] = n
        keep &= f.reshape(shape)
    return np.real(np.fft.ifftn(np.fft.fftn(a) * keep))


def random_field(cells, box, seed, mean=(0.0, 0.0, 0.0), nongauss=True,
                 slope=2.0, band=None):
    """A random periodic field with a power-law spectrum, made non-Gaussian by
    a pointwise nonlinear map, plus a mean. (3, Nz, Ny, Nx). band: keep only
    modes with |n_a| < band * N_a on every axis (applied last)."""
    Nx, Ny, Nz = cells
    rng = np.random.default_rng(seed)
    sp = Wavenumbers(cells, box)
    kk = np.where(sp.kun > 0, sp.kun, 1.0)
    amp = np.where(sp.kun > 0, kk ** (-(slope + 2.0) / 2.0), 0.0)
    out = np.empty((3, Nz, Ny, Nx))
    for c in range(3):
        w = rng.standard_normal((Nz, Ny, Nx))
        g = np.real(np.fft.ifftn(np.fft.fftn(w) * amp))
        g /= g.std()
        if nongauss:
            # skewed, heavy-tailed: a shifted exponential of a Gaussian
            g = np.exp(0.6 * g) - np.exp(0.18)
            g += (0.3 * (c + 1)) * g ** 2
        if band is not None:
            g = band_limit(g, band)
        g -= g.mean()
        out[c] = g / g.std() * (0.5 + 0.25 * c) + mean[c]
    return out


# ----------------------------------------------------------------------------
# the independent reference analysis
# ----------------------------------------------------------------------------

class Wavenumbers:
    """Integer modes, physical wavevectors and shells of a periodic box,
    broadcast to (Nz, Ny, Nx)."""

    def __init__(self, cells, box):
        Nx, Ny, Nz = cells
        Lx, Ly, Lz = box
        nz1 = np.fft.fftfreq(Nz) * Nz
        ny1 = np.fft.fftfreq(Ny) * Ny
        nx1 = np.fft.fftfreq(Nx) * Nx
        nz, ny, nx = np.meshgrid(nz1, ny1, nx1, indexing="ij")
        self.n = np.stack([nx, ny, nz])
        self.k = np.stack([TWO_PI * nx / Lx, TWO_PI * ny / Ly, TWO_PI * nz / Lz])
        self.k2 = np.sum(self.k ** 2, axis=0)
        lmax = max(box)
        self.kun = np.sqrt((nx * lmax / Lx) ** 2 + (ny * lmax / Ly) ** 2 +
                           (nz * lmax / Lz) ** 2)
        self.shell = np.floor(self.kun + 0.5).astype(int)


def reference(v, box, remove_scale=0.0, rho=None, fit=None):
    """Every number of the inspect JSON, from v (3, Nz, Ny, Nx) float64.

    rho: density (Nz, Ny, Nx) -> the field analysed is sqrt(rho) v.
    remove_scale l: v_hat <- v_hat (1 - exp(-|k|^2 l^2 / 2)) first; the
    real-space statistics are of the filtered field (inverse numpy FFT).
    fit: (kmin, kmax) of the slope fit."""
    v = np.asarray(v, dtype=np.float64)
    Nz, Ny, Nx = v.shape[1:]
    cells = (Nx, Ny, Nz)
    N = Nx * Ny * Nz
    w = v * np.sqrt(rho)[None] if rho is not None else v
    wn = Wavenumbers(cells, box)
    V = np.fft.fftn(w, axes=(1, 2, 3)) / N
    if remove_scale > 0:
        V = V * (1.0 - np.exp(-0.5 * wn.k2 * remove_scale ** 2))[None]
        real = np.real(np.fft.ifftn(V * N, axes=(1, 2, 3)))
    else:
        real = w
    r = {"cells": [Nx, Ny, Nz], "box": list(box)}
    # real space
    flat = real.reshape(3, -1)
    mean = flat.mean(axis=1)
    r["mean"] = mean.tolist()
    r["rms"] = np.sqrt(np.mean(flat ** 2, axis=1)).tolist()
    r["rms_3d"] = float(np.sqrt(np.mean(np.sum(flat ** 2, axis=0))))
    r["skewness"] = [float(scipy.stats.skew(flat[c], bias=True)) for c in range(3)]
    r["excess_kurtosis"] = [float(scipy.stats.kurtosis(flat[c], fisher=True, bias=True))
                            for c in range(3)]
    dens, counts = [], []
    width = 2.0 * PDF_RANGE / BINS
    for c in range(3):
        sd = np.sqrt(np.mean((flat[c] - mean[c]) ** 2))
        z = (flat[c] - mean[c]) / sd
        b = np.floor((z + PDF_RANGE) / width)
        b = b[(b >= 0) & (b < BINS)].astype(int)
        h = np.bincount(b, minlength=BINS).astype(float)
        counts.append(h)
        dens.append((h / (N * width)).tolist())
    r["pdf"] = {"edges": [-PDF_RANGE + width * i for i in range(BINS + 1)],
                "density": dens}
    r["_pdf_counts"] = counts
    # k space
    m = wn.k2 > 0
    P = np.sum(np.abs(V) ** 2, axis=0)
    kV = np.sum(wn.k * V, axis=0)
    Lp = np.zeros_like(P)
    Lp[m] = np.abs(kV[m]) ** 2 / wn.k2[m]
    cross = np.stack([wn.k[1] * V[2] - wn.k[2] * V[1],
                      wn.k[2] * V[0] - wn.k[0] * V[2],
                      wn.k[0] * V[1] - wn.k[1] * V[0]])
    ns = int(wn.shell.max()) + 1
    s = wn.shell[m]
    se = 0.5 * np.bincount(s, P[m], minlength=ns)
    sc = 0.5 * np.bincount(s, Lp[m], minlength=ns)
    sm = np.bincount(s, minlength=ns).astype(float)
    et, ec = float(np.sum(0.5 * P[m])), float(np.sum(0.5 * Lp[m]))
    r["energy"] = {"total": et, "compressive": ec, "solenoidal": et - ec,
                   "compressive_fraction": ec / et if et > 0 else float("nan")}
    with np.errstate(invalid="ignore", divide="ignore"):
        share = np.where(se > 0, sc / np.where(se > 0, se, 1.0), np.nan)
    r["shells"] = {"k": list(range(ns)), "modes": sm.tolist(), "energy": se.tolist(),
                   "compressive": sc.tolist(), "solenoidal": (se - sc).tolist(),
                   "compressive_fraction": share.tolist()}
    grad2 = float(np.sum(wn.k2[m] * P[m]))
    div2 = float(np.sum(np.abs(kV) ** 2))
    vort2 = float(np.sum(np.abs(cross) ** 2))
    r["gradients"] = {"divergence_rms": math.sqrt(div2), "vorticity_rms": math.sqrt(vort2),
                      "divergence_ratio": math.sqrt(div2 / grad2) if grad2 > 0 else float("nan"),
                      "vorticity_ratio": math.sqrt(vort2 / grad2) if grad2 > 0 else float("nan")}
    r["_grad2"] = grad2
    if fit is not None:
        val, err = fit_slope(se, sm, fit[0], fit[1])
        r["slope"] = {"fit_range": list(fit), "value": val, "stderr": err}
    r["remove_scale"] = float(remove_scale)
    r["mass_weighted"] = rho is not None
    r["_filtered_real"] = real
    return r


def fit_slope(se, sm, kmin, kmax):
    xs, ys = [], []
    for s in range(1, len(se)):
        if s < kmin or s > kmax or not (se[s] > 0) or not (sm[s] > 0):
            continue
        xs.append(math.log(s))
        ys.append(math.log(se[s] * 4.0 * math.pi * s * s / sm[s]))
    if len(xs) < 3:
        return float("nan"), float("nan")
    lr = scipy.stats.linregress(xs, ys)
    return float(-lr.slope), float(lr.stderr)


# ----------------------------------------------------------------------------
# comparing a report with the reference
# ----------------------------------------------------------------------------

def _num(x):
    return float("nan") if x is None else float(x)


def _worst(got, ref, rtol, atol):
    """(ok, worst |diff|/(rtol|ref|+atol), index) over paired values."""
    g = np.array([_num(x) for x in np.ravel(np.asarray(got, dtype=object))], dtype=float)
    f = np.array([_num(x) for x in np.ravel(np.asarray(ref, dtype=object))], dtype=float)
    if g.shape != f.shape:
        return False, float("inf"), f"shape {g.shape} vs {f.shape}"
    both_nan = np.isnan(g) & np.isnan(f)
    d = np.where(both_nan, 0.0, np.abs(g - f))
    lim = rtol * np.abs(f) + atol
    with np.errstate(invalid="ignore", divide="ignore"):
        q = np.where(both_nan | (d == 0), 0.0, d / lim)
    q = np.where(np.isnan(q), np.inf, q)
    i = int(np.argmax(q)) if q.size else 0
    return bool(np.all(q <= 1.0)), float(q.max()) if q.size else 0.0, i


def compare_report(c, label, js, ref, rtol=1e-10, atol=1e-12, share_floor=1e-5):
    """Check every number of the JSON report js against the reference.

    Tolerances: relative rtol, plus an absolute floor for values that are
    zero up to round-off, scaled to the quantity: atol * rms_3d for means and
    rms, atol * e_total for energies, atol for dimensionless moments. The
    vorticity is sqrt(sum|k|^2|v|^2 - sum|k.v|^2) in helmix, whose
    cancellation leaves ~sqrt(eps) of the rms gradient: absolute floor
    1e-7 * rms gradient. Per-shell shares are compared only in shells holding
    more than share_floor * e_total (elsewhere the share is a ratio of small
    numbers; the energies themselves are still compared)."""
    if js is None:
        c.fail(f"[{label}] JSON report present")
        return False
    allok = True
    vs = max(ref["rms_3d"], 1e-300)
    et = max(ref["energy"]["total"], 1e-300)
    gs = math.sqrt(max(ref["_grad2"], 1e-300))
    src = f"{SRC_FFT}; {SRC_PARSEVAL}; {SRC_HELM}"

    def one(name, got, want, rt, at, source):
        nonlocal allok
        ok, q, i = _worst(got, want, rt, at)
        g = np.ravel(np.asarray(got, dtype=object))
        w = np.ravel(np.asarray(want, dtype=object))
        detail = f"worst err/tol={q:.2e}"
        if isinstance(i, int) and i < len(g) and i < len(w):
            detail += f" at [{i}]: inspect={_num(g[i]):.15g} numpy={_num(w[i]):.15g}"
        else:
            detail += f" ({i})"
        allok &= c.check(f"[{label}] {name} (rtol {rt:g})", ok, detail, source)

    one("mean[3]", js["mean"], ref["mean"], rtol, atol * vs, "arithmetic mean, common practice")
    one("rms[3]", js["rms"], ref["rms"], rtol, atol * vs, "rms, common practice")
    one("rms_3d", [js["rms_3d"]], [ref["rms_3d"]], rtol, atol * vs, "rms, common practice")
    one("skewness[3]", js["skewness"], ref["skewness"], rtol, atol, SRC_MOM)
    one("excess_kurtosis[3]", js["excess_kurtosis"], ref["excess_kurtosis"], rtol, atol, SRC_MOM)
    ok_counts = True
    width = 2.0 * PDF_RANGE / BINS
    N = float(np.prod(ref["cells"]))
    for comp in range(3):
        got = np.rint(np.asarray(js["pdf"]["density"][comp], float) * N * width)
        ok_counts &= bool(np.array_equal(got, ref["_pdf_counts"][comp]))
    allok &= c.check(f"[{label}] pdf bin counts identical (bin = floor((z+5)/0.1))", ok_counts,
                     f"total counted x: {int(np.sum(ref['_pdf_counts'][0]))} of {int(N)}",
                     "histogram of the standardized value, common practice")
    one("pdf density[3][100]", js["pdf"]["density"], ref["pdf"]["density"], rtol, 0.0,
        "histogram density = count / (N * width), common practice")
    one("pdf edges[101]", js["pdf"]["edges"], ref["pdf"]["edges"], 1e-14, 1e-14, "bins on [-5, 5]")
    for key in ("total", "compressive", "solenoidal"):
        one(f"energy.{key}", [js["energy"][key]], [ref["energy"][key]], rtol, atol * et, src)
    one("energy.compressive_fraction", [js["energy"]["compressive_fraction"]],
        [ref["energy"]["compressive_fraction"]], rtol, atol, src)
    # shells: helmix may carry trailing empty shells beyond the largest one
    sh = js["shells"]
    rs = ref["shells"]
    n = len(rs["k"])
    okn = len(sh["k"]) >= n and all(_num(x) == 0 for x in sh["modes"][n:]) \
        and all(_num(x) == 0 for x in sh["energy"][n:])
    allok &= c.check(f"[{label}] shells cover every occupied shell (extra ones empty)", okn,
                     f"inspect {len(sh['k'])} shells, numpy {n}")
    allok &= c.check(f"[{label}] shells.k == 0..n-1", [_num(x) for x in sh["k"]] ==
                     list(range(len(sh["k"]))), "")
    allok &= c.check(f"[{label}] shells.modes identical", [_num(x) for x in sh["modes"][:n]] ==
                     rs["modes"], f"modes[1..4]={sh['modes'][1:5]}", "mode count per shell")
    for key in ("energy", "compressive", "solenoidal"):
        one(f"shells.{key}", sh[key][:n], rs[key], rtol, atol * et, src)
    se = np.asarray(rs["energy"])
    sel = [s for s in range(n) if se[s] > share_floor * et]
    one(f"shells.compressive_fraction ({len(sel)} shells > {share_floor:g} e_total)",
        [sh["compressive_fraction"][s] for s in sel],
        [rs["compressive_fraction"][s] for s in sel], rtol, atol, src)
    empty = [s for s in range(n) if rs["energy"][s] == 0]
    allok &= c.check(f"[{label}] shells.compressive_fraction null where a shell is empty",
                     all(sh["compressive_fraction"][s] is None for s in empty),
                     f"{len(empty)} empty shells", "0/0 undefined")
    g, rg = js["gradients"], ref["gradients"]
    one("gradients.divergence_rms", [g["divergence_rms"]], [rg["divergence_rms"]], rtol,
        atol * gs, SRC_PARSEVAL)
    one("gradients.vorticity_rms", [g["vorticity_rms"]], [rg["vorticity_rms"]], rtol,
        1e-7 * gs, SRC_PARSEVAL + "; |k x v|^2 summed directly")
    one("gradients.divergence_ratio", [g["divergence_ratio"]], [rg["divergence_ratio"]], rtol,
        atol, SRC_PARSEVAL)
    one("gradients.vorticity_ratio", [g["vorticity_ratio"]], [rg["vorticity_ratio"]], rtol,
        1e-7, SRC_PARSEVAL)
    if "slope" in ref:
        fr = [_num(x) for x in js["slope"]["fit_range"]]
        allok &= c.check(f"[{label}] slope.fit_range", fr == [float(x) for x in ref["slope"]["fit_range"]],
                         f"inspect {fr} expected {ref['slope']['fit_range']}")
        one("slope.value", [js["slope"]["value"]], [ref["slope"]["value"]], rtol, atol, SRC_LSQ)
        one("slope.stderr", [js["slope"]["stderr"]], [ref["slope"]["stderr"]], rtol, atol, SRC_LSQ)
    allok &= c.check(f"[{label}] cells / box / remove_scale / mass_weighted",
                     [_num(x) for x in js["cells"]] == [float(x) for x in ref["cells"]]
                     and np.allclose([_num(x) for x in js["box"]], ref["box"], rtol=1e-15, atol=0)
                     and _num(js["remove_scale"]) == ref["remove_scale"]
                     and js["mass_weighted"] is ref["mass_weighted"],
                     f"cells={js['cells']} box={js['box']} remove_scale={js['remove_scale']} "
                     f"mass_weighted={js['mass_weighted']}")
    return allok


def flatten_numbers(obj, prefix=""):
    """{dotted.path[i]: number or None} of every number in a JSON object,
    leaving out the strings (file, version)."""
    out = {}
    if isinstance(obj, dict):
        for k, v in obj.items():
            out.update(flatten_numbers(v, f"{prefix}.{k}" if prefix else k))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            out.update(flatten_numbers(v, f"{prefix}[{i}]"))
    elif isinstance(obj, bool) or obj is None:
        out[prefix] = obj
    elif isinstance(obj, (int, float)):
        out[prefix] = float(obj)
    return out


def json_diff(a, b, rtol, skip=("ranks", "file", "helmix_version", "seconds", "peak_rss_bytes"), floors=None):
    """Largest relative difference between the numbers of two JSON reports.

    floors: {key prefix: absolute floor}; a difference below the floor of
    the longest matching prefix counts as zero. Returns (ok, worst, key,
    missing keys)."""
    fa, fb = flatten_numbers(a), flatten_numbers(b)
    missing = sorted(set(fa) ^ set(fb))
    worst, wkey = 0.0, ""
    for k in fa:
        if k not in fb or k.split(".")[0].split("[")[0] in skip:
            continue
        x, y = fa[k], fb[k]
        if isinstance(x, bool) or isinstance(y, bool) or x is None or y is None:
            if x != y:
                return False, float("inf"), k, missing
            continue
        d = abs(x - y)
        fl = 0.0
        for p, v in (floors or {}).items():
            if k.startswith(p):
                fl = v
        if d <= fl:
            continue
        q = d / max(abs(x), abs(y)) if d > 0 else 0.0
        if q > worst:
            worst, wkey = q, k
    return worst <= rtol and not missing, worst, wkey, missing


# ----------------------------------------------------------------------------
# PNG reading (W3C PNG specification, 2nd ed. 2003 / RFC 2083)
# ----------------------------------------------------------------------------

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


def read_png(path):
    """Parse a PNG with struct/zlib: returns dict with width, height,
    bit_depth, color_type, interlace, raw (the decompressed IDAT stream:
    per row one filter-type byte and the filtered pixel bytes), row_bytes,
    crc_ok (every chunk CRC right) and the last chunk's type."""
    with open(path, "rb") as f:
        data = f.read()
    if data[:8] != PNG_MAGIC:
        raise ValueError("no PNG signature")
    pos, chunks, crc_ok = 8, [], True
    while pos + 8 <= len(data):
        length, typ = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        crc = struct.unpack(">I", data[pos + 8 + length:pos + 12 + length])[0]
        crc_ok &= (zlib.crc32(typ + body) & 0xffffffff) == crc
        chunks.append((typ, body))
        pos += 12 + length
        if typ == b"IEND":
            break
    if not chunks or chunks[0][0] != b"IHDR":
        raise ValueError("first chunk is not IHDR")
    w, h, depth, ctype, comp, filt, inter = struct.unpack(">IIBBBBB", chunks[0][1])
    raw = zlib.decompress(b"".join(b for t, b in chunks if t == b"IDAT"))
    channels = {0: 1, 2: 3, 3: 1, 4: 2, 6: 4}[ctype]
    stride = (w * channels * depth + 7) // 8
    return {"width": w, "height": h, "bit_depth": depth, "color_type": ctype,
            "interlace": inter, "raw": raw, "row_bytes": stride, "crc_ok": crc_ok,
            "last_chunk": chunks[-1][0]}


# ----------------------------------------------------------------------------
# the verdict block of `inspect --check --json`
# ----------------------------------------------------------------------------

SRC_RULE = "verdict rule: |measured - target| <= tolerance (helmix specification)"


def verdict_lines(c, label, run):
    """The check block follows the verdict rule and the exit code; returns {quantity: line}."""
    js = run.json
    if js is None or "check" not in js:
        c.fail(f"[{label}] JSON holds a check block", run.json_error or run.describe())
        return {}
    lines = js["check"]["lines"]
    bad = [ln["quantity"] for ln in lines if ln["tolerance"] is not None and
           ln["passed"] is not (abs(ln["measured"] - ln["target"]) <= ln["tolerance"])]
    judged = all(ln["passed"] for ln in lines if ln["tolerance"] is not None)
    c.check(f"[{label}] check lines follow the rule and the exit code", not bad and
            (run.rc == 0) == judged and js["check"]["passed"] is judged, f"bad={bad} rc={run.rc}", SRC_RULE)
    return {ln["quantity"]: ln for ln in lines}


def expect_lines(c, label, lines, passing=(), failing=()):
    """Each quantity in passing has a line that passes, each in failing one that fails."""
    for q in passing:
        ln = lines.get(q)
        c.check(f"[{label}] line '{q}' passes", ln is not None and ln["passed"] is True,
                f"{ln}" if ln else f"absent; lines {sorted(lines)}", SRC_RULE)
    for q in failing:
        ln = lines.get(q)
        c.check(f"[{label}] line '{q}' fails", ln is not None and ln["passed"] is False,
                f"{ln}" if ln else f"absent; lines {sorted(lines)}", SRC_RULE)
