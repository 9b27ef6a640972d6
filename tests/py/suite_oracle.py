"""Independent numpy recomputation of what the helmix known-answer suite states.

The manifest's answer of a cube is recomputed here from the file alone (h5py + numpy.fft),
with the definitions the manifest spells out in its "conventions" (common practice for a
periodic box; numpy.fft conventions from the numpy documentation):

  v_hat = numpy.fft.fftn(v) / N over the three spatial axes (z, y, x), N cells;
  k_a = 2 pi n_a / L_a with n_a = numpy.fft.fftfreq(N_a, 1/N_a) (the Nyquist index is -N_a/2);
  shell s = floor(|k| / (2 pi / max L) + 1/2), the k = 0 mode in no sum;
  E = 1/2 sum |v_hat|^2, E_comp = 1/2 sum |k_hat . v_hat|^2, E_sol = E - E_comp;
  divergence_rms = (sum |k . v_hat|^2)^(1/2), vorticity_rms = (sum |k x v_hat|^2)^(1/2)
      (Parseval's theorem for the DFT, common practice);
  remove_scale L: v_hat times 1 - exp(-|k|^2 L^2 / 2) (a Gaussian filter subtracted,
      common practice);
  weighting = mass: the field decomposed is sqrt(rho) v (common practice).

Every mode of the full complex transform is used as it is (no half-spectrum bookkeeping),
so this is a different computation from helmix's r2c sums, not a copy of them.
"""

import os

import numpy as np
import h5py

TWO_PI = 2.0 * np.pi
ANSWER_KEYS = ("compressive_share", "energy_total", "energy_compressive", "energy_solenoidal",
               "divergence_rms", "vorticity_rms")


# ----------------------------------------------------------------------------
# reading a cube as the manifest lays it out
# ----------------------------------------------------------------------------

def _to_zyx(a, order):
    """A 3-D array in file order as (Nz, Ny, Nx)."""
    return np.asarray(a) if order == "zyx" else np.transpose(np.asarray(a), (2, 1, 0))


def read_vector(h5, vector, component_axis, order):
    """The three components, shape (3, Nz, Ny, Nx), float64, and the stored dtype."""
    if isinstance(vector, str):
        d = h5[vector]
        a = d[()]
        comps = [a[c] if component_axis == "first" else a[..., c] for c in range(3)]
        dtype = d.dtype
    else:
        comps = [h5[p][()] for p in vector]
        dtype = h5[vector[0]].dtype
    v = np.stack([_to_zyx(x, order).astype(np.float64) for x in comps])
    return v, dtype


def read_cube(directory, cube, vector=None):
    """v (3, Nz, Ny, Nx) float64, rho (Nz, Ny, Nx) or None, dtype, box (Lx, Ly, Lz)."""
    lay = cube["layout"]
    with h5py.File(os.path.join(directory, cube["file"]), "r") as f:
        v, dtype = read_vector(f, vector or lay["vector"], lay["component_axis"], lay["order"])
        rho = _to_zyx(f[lay["density"]][()], lay["order"]).astype(np.float64) if lay["density"] else None
    return v, rho, dtype, tuple(float(x) for x in lay["box"])


def read_part(directory, cube, which, shape):
    """A part (3, Nz, Ny, Nx) float64: its datasets, or zeros for "zero"."""
    spec = cube["parts"][which]
    if spec == "zero":
        return np.zeros(shape)
    lay = cube["layout"]
    with h5py.File(os.path.join(directory, cube["file"]), "r") as f:
        return read_vector(f, spec, None, lay["order"])[0]


# ----------------------------------------------------------------------------
# spectral bookkeeping
# ----------------------------------------------------------------------------

class Modes:
    """Wavevectors of a (Nz, Ny, Nx) grid in a box (Lx, Ly, Lz), x, y, z order."""

    def __init__(self, shape, box):
        nz, ny, nx = shape
        lx, ly, lz = box
        fz = np.fft.fftfreq(nz, 1.0 / nz)
        fy = np.fft.fftfreq(ny, 1.0 / ny)
        fx = np.fft.fftfreq(nx, 1.0 / nx)
        z, y, x = np.meshgrid(fz, fy, fx, indexing="ij")
        self.k = np.stack([TWO_PI * x / lx, TWO_PI * y / ly, TWO_PI * z / lz])
        self.k2 = np.sum(self.k ** 2, axis=0)
        unit = TWO_PI / max(box)
        self.shell = np.floor(np.sqrt(self.k2) / unit + 0.5).astype(int)
        self.nonzero = self.k2 > 0


def transform(v):
    """v_hat = fftn(v) / N per component."""
    n = v[0].size
    return np.fft.fftn(v, axes=(1, 2, 3)) / n


def answer(v, box, remove_scale=None, rho=None):
    """The answer dictionary of the manifest (same keys), from the data only."""
    if rho is not None:
        v = v * np.sqrt(rho)[None]
    m = Modes(v.shape[1:], box)
    vh = transform(v)
    if remove_scale:
        vh = vh * (1.0 - np.exp(-0.5 * m.k2 * remove_scale ** 2))[None]
    nz = m.nonzero
    e_mode = 0.5 * np.sum(np.abs(vh) ** 2, axis=0)
    kdotv = np.sum(m.k * vh, axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        c_mode = np.where(nz, 0.5 * np.abs(kdotv) ** 2 / m.k2, 0.0)
    e_mode = np.where(nz, e_mode, 0.0)
    kx, ky, kz = m.k
    cx, cy, cz = vh
    curl2 = np.abs(ky * cz - kz * cy) ** 2 + np.abs(kz * cx - kx * cz) ** 2 + np.abs(kx * cy - ky * cx) ** 2
    ns = int(m.shell.max()) + 1
    sh = m.shell[nz]
    modes = np.bincount(sh, minlength=ns)
    e_s = np.bincount(sh, weights=e_mode[nz], minlength=ns)
    c_s = np.bincount(sh, weights=c_mode[nz], minlength=ns)
    last = int(np.nonzero(modes)[0].max())
    et, ec = float(e_s.sum()), float(c_s.sum())
    return {
        "compressive_share": ec / et,
        "energy_total": et,
        "energy_compressive": ec,
        "energy_solenoidal": et - ec,
        "divergence_rms": float(np.sqrt(np.sum(np.abs(kdotv) ** 2))),
        "vorticity_rms": float(np.sqrt(np.sum(curl2))),
        "shells": [{"k": s, "modes": int(modes[s]), "e_comp": float(c_s[s]), "e_sol": float(e_s[s] - c_s[s])}
                   for s in range(1, last + 1)],
    }


# helmix states vorticity_rms as (sum |k|^2 |v_hat|^2 - sum |k . v_hat|^2)^(1/2): a difference
# of two sums of positive terms, each exact to a few n eps of the squared rms gradient, so the
# root is exact only to about sqrt(n eps) ~ 1e-7 of the rms gradient where the field is (nearly)
# curl-free (Higham 2002, Accuracy and Stability of Numerical Algorithms, ch. 4, from memory).
# Its deviation is judged beyond that resolution; numpy takes |k x v_hat| mode by mode.
VORTICITY_RESOLUTION = 1e-7


def compare(stated, ours):
    """Largest deviation of a stated answer from ours, each scaled as the test judges it:
    the share absolutely, energies and shell energies relative to the total energy, the rms
    divergence and vorticity relative to the rms gradient (sum |k|^2 |v_hat|^2)^(1/2), the
    vorticity's less VORTICITY_RESOLUTION; mode counts must agree exactly. Returns (worst,
    where, modes_ok)."""
    et = max(ours["energy_total"], 1e-300)
    grad = max(np.hypot(ours["divergence_rms"], ours["vorticity_rms"]), 1e-300)
    scale = {"compressive_share": 1.0, "energy_total": et, "energy_compressive": et, "energy_solenoidal": et,
             "divergence_rms": grad, "vorticity_rms": grad}
    worst, where = 0.0, ""
    for key in ANSWER_KEYS:
        d = abs(stated[key] - ours[key]) / scale[key]
        if key == "vorticity_rms":
            d = max(d - VORTICITY_RESOLUTION, 0.0)
        if d > worst:
            worst, where = d, key
    modes_ok = len(stated["shells"]) == len(ours["shells"])
    for a, b in zip(stated["shells"], ours["shells"]):
        modes_ok &= a["k"] == b["k"] and a["modes"] == b["modes"]
        for key in ("e_comp", "e_sol"):
            d = abs(a[key] - b[key]) / et
            if d > worst:
                worst, where = d, f"shell {b['k']} {key}"
    return worst, where, bool(modes_ok)


def shell_shares(ans, floor=1e-10):
    """{k: e_comp / (e_comp + e_sol)} for the shells holding at least `floor` of the energy."""
    et = ans["energy_total"]
    return {s["k"]: s["e_comp"] / (s["e_comp"] + s["e_sol"]) for s in ans["shells"]
            if s["e_comp"] + s["e_sol"] >= floor * et}


# ----------------------------------------------------------------------------
# purity of real-space fields
# ----------------------------------------------------------------------------

def divergence_ratio(v, box):
    """rms(k . v_hat) / rms(|k| |v_hat|) over k != 0: 0 for a divergence-free field."""
    m = Modes(v.shape[1:], box)
    vh = transform(v)
    num = np.sum(np.abs(np.sum(m.k * vh, axis=0)) ** 2)
    den = np.sum(m.k2 * np.sum(np.abs(vh) ** 2, axis=0))
    return float(np.sqrt(num / den)) if den > 0 else 0.0


def curl_ratio(v, box):
    """rms(k x v_hat) / rms(|k| |v_hat|) over k != 0: 0 for a curl-free field."""
    m = Modes(v.shape[1:], box)
    vh = transform(v)
    kx, ky, kz = m.k
    cx, cy, cz = vh
    num = (np.sum(np.abs(ky * cz - kz * cy) ** 2) + np.sum(np.abs(kz * cx - kx * cz) ** 2)
           + np.sum(np.abs(kx * cy - ky * cx) ** 2))
    den = np.sum(m.k2 * np.sum(np.abs(vh) ** 2, axis=0))
    return float(np.sqrt(num / den)) if den > 0 else 0.0


def spectral_curl(v, box):
    """curl v in real space through i k x v_hat (exact for band-limited periodic fields)."""
    m = Modes(v.shape[1:], box)
    vh = transform(v) * v[0].size
    kx, ky, kz = m.k
    cx, cy, cz = vh
    w = np.stack([1j * (ky * cz - kz * cy), 1j * (kz * cx - kx * cz), 1j * (kx * cy - ky * cx)])
    return np.real(np.fft.ifftn(w, axes=(1, 2, 3)))


def energy_of(v, box):
    """1/2 sum over k != 0 of |v_hat|^2: the energy of a part, the mean left out."""
    m = Modes(v.shape[1:], box)
    e = 0.5 * np.sum(np.abs(transform(v)) ** 2, axis=0)
    return float(np.sum(e[m.nonzero]))


def cell_centres(n, length):
    """(i + 1/2) L / N, i = 0 .. N-1."""
    return (np.arange(n) + 0.5) * (length / n)
