#!/usr/bin/python3
"""peer_numpy_inspect.py — the comparison point for `helmix inspect`: the same analysis of a
velocity cube written the plain serial numpy/h5py way.

Steps, as one would write them by hand with numpy's half-space (rfftn) layout:
  1. read the three (Nz, Ny, Nx) datasets /data/grid_0000000000/velocity_{x,y,z} as float64;
  2. per component: mean, rms, skewness, excess kurtosis and the PDF of the standardized
     value (100 bins over [-5, 5]), then v̂ = numpy.fft.rfftn(v) / N;
  3. wavenumber vectors of the periodic grid on the (Nz, Ny, Nx/2+1) half space (box from
     the file's domain edges, else 1), |k|, k̂ and the shell index round(|k|) in units of
     2π/L; the half-space weight is 2 except the kx = 0 and Nyquist planes;
  4. Helmholtz decomposition by projection: compressive part |k̂·v̂|^2, total |v̂|^2;
  5. shell sums of total and compressive energy (numpy.bincount), their totals and the
     compressive share; rms divergence and vorticity from Σ|k·v̂|^2 and Σ|k|^2|v̂|^2;
  6. the mode-count-compensated slope fit of the shell spectrum over the band the file
     records in /helmix (kmin, kmax), else [2, N/4].
The k = 0 mode (mean flow) enters no energy, spectrum or gradient.

Usage:  /usr/bin/python3 peer_numpy_inspect.py FILE [OUT.json]
Prints one line:
  BENCH name=peer_numpy_inspect n=N ranks=1 wall_s=T peak_rss_kib=K fraction=F
wall_s spans steps 1-6 (imports excluded); peak_rss_kib is getrusage ru_maxrss of the
process. With OUT.json the results are also written there (for checking against helmix).
"""
import json
import resource
import sys
import time

import h5py
import numpy as np

NAMES = [f"/data/grid_0000000000/velocity_{a}" for a in "xyz"]
BINS, PDF_RANGE = 100, 5.0


def moments(v):
    """mean, rms, skewness, excess kurtosis and PDF (density) of one real component."""
    m = v.mean()
    rms = np.sqrt(np.mean(v * v))
    x = v - m
    x2 = x * x
    var = x2.mean()
    sd = np.sqrt(var)
    skew = np.mean(x2 * x) / (var * sd)
    kurt = np.mean(x2 * x2) / (var * var) - 3.0
    width = 2.0 * PDF_RANGE / BINS
    hist, _ = np.histogram(x / sd, bins=BINS, range=(-PDF_RANGE, PDF_RANGE))
    return m, rms, skew, kurt, hist / (v.size * width)


def analyse(path):
    with h5py.File(path, "r") as f:
        box = np.ones(3)
        sp = f.get("simulation_parameters")
        if sp is not None and "domain_right_edge" in sp.attrs:
            edge = np.asarray(sp.attrs["domain_right_edge"], float) - \
                np.asarray(sp.attrs["domain_left_edge"], float)
            box = np.where(edge > 0, edge, 1.0)
        band = None
        g = f.get("helmix")
        if g is not None and "kmin" in g.attrs and "kmax" in g.attrs:
            band = (float(g.attrs["kmin"]), float(g.attrs["kmax"]))

        # Real space moments, then the forward transform of each component.
        stats, vhat = [], []
        for name in NAMES:
            v = f[name][...].astype(np.float64)
            stats.append(moments(v))
            vhat.append(np.fft.rfftn(v) / v.size)
            del v
    nz, ny, nxc = vhat[0].shape
    nx = 2 * (nxc - 1)

    # Wavenumbers: integer frequencies n_a (Nyquist negative on every axis), physical
    # k_a = 2π n_a / L_a, shells in units of 2π / max L.
    lmax = box.max()
    fz = np.fft.fftfreq(nz, 1.0 / nz)
    fy = np.fft.fftfreq(ny, 1.0 / ny)
    fx = np.fft.rfftfreq(nx, 1.0 / nx)
    fx[-1] = -fx[-1]
    kx = (2 * np.pi * fx / box[0])[None, None, :]
    ky = (2 * np.pi * fy / box[1])[None, :, None]
    kz = (2 * np.pi * fz / box[2])[:, None, None]
    k2 = kx**2 + ky**2 + kz**2
    kmag = np.sqrt(k2)
    shell = np.rint(kmag * lmax / (2 * np.pi)).astype(np.intp).ravel()
    weight = np.full(nxc, 2.0)
    weight[0] = weight[-1] = 1.0
    weight = np.broadcast_to(weight[None, None, :], k2.shape)
    nonzero = k2 > 0
    kinv = np.where(nonzero, 1.0 / np.where(nonzero, kmag, 1.0), 0.0)

    # Helmholtz projection onto k̂ and the energies per mode (k = 0 left out).
    vk = (kx * vhat[0] + ky * vhat[1] + kz * vhat[2]) * kinv
    e_comp = 0.5 * weight * np.abs(vk) ** 2 * nonzero
    e_tot = 0.5 * weight * sum(np.abs(c) ** 2 for c in vhat) * nonzero
    del vhat, vk

    nshell = int(shell.max()) + 1
    shell_e = np.bincount(shell, weights=e_tot.ravel(), minlength=nshell)
    shell_c = np.bincount(shell, weights=e_comp.ravel(), minlength=nshell)
    modes = np.bincount(shell, weights=(weight * nonzero).ravel(), minlength=nshell)
    et, ec = shell_e.sum(), shell_c.sum()
    div2 = 2.0 * np.sum(k2 * e_comp)
    grad2 = 2.0 * np.sum(k2 * e_tot)

    # Slope: fit log(E_s 4π s^2 / modes_s) against log s over the band.
    kmin, kmax = band if band else (2.0, float(min(nx, ny, nz) // 4))
    s = np.arange(nshell)
    ok = (s >= max(kmin, 1)) & (s <= kmax) & (shell_e > 0) & (modes > 0)
    slope = float("nan")
    if ok.sum() >= 3:
        x = np.log(s[ok])
        y = np.log(shell_e[ok] * 4 * np.pi * s[ok] ** 2 / modes[ok])
        slope = -np.polyfit(x, y, 1)[0]

    return dict(
        cells=[nx, ny, nz],
        mean=[st[0] for st in stats], rms=[st[1] for st in stats],
        skewness=[st[2] for st in stats], excess_kurtosis=[st[3] for st in stats],
        pdf=[st[4].tolist() for st in stats],
        total=et, compressive=ec, solenoidal=et - ec, compressive_fraction=ec / et,
        divergence_rms=np.sqrt(div2), vorticity_rms=np.sqrt(max(grad2 - div2, 0.0)),
        slope=slope, fit_range=[kmin, kmax],
        shell_energy=shell_e.tolist(), shell_compressive=shell_c.tolist(),
        shell_modes=modes.tolist())


def main():
    if len(sys.argv) not in (2, 3):
        sys.exit("usage: peer_numpy_inspect.py FILE [OUT.json]")
    t0 = time.perf_counter()
    res = analyse(sys.argv[1])
    wall = time.perf_counter() - t0
    rss_kib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss  # KiB on Linux
    if len(sys.argv) == 3:
        with open(sys.argv[2], "w") as f:
            json.dump(res, f, default=float)
    print(f"BENCH name=peer_numpy_inspect n={res['cells'][0]} ranks=1 wall_s={wall:.4f} "
          f"peak_rss_kib={rss_kib} fraction={res['compressive_fraction']:.12g}", flush=True)


if __name__ == "__main__":
    main()
