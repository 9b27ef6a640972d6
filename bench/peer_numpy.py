#!/usr/bin/python3
"""peer_numpy.py — the comparison point for `helmix make`: the same velocity cube made the
plain serial numpy way.

Steps, as one would write them by hand with numpy's half-space (rfftn) layout:
  1. wavenumbers of an N^3 periodic grid, |k| on the (Nz, Ny, Nx/2+1) half space;
  2. shell-integrated power spectrum E(k) ~ k^-2 on 1 <= |k| <= N/2 - 1, so each mode gets
     amplitude sqrt(E(k) / (4 pi k^2));
  3. an isotropic complex Gaussian vector per mode (numpy.random.default_rng);
  4. Helmholtz mix zeta * P_perp + (1 - zeta) * P_par with zeta = 0.5;
  5. numpy.fft.irfftn per component, then scale the real field to rms |v| = 1;
  6. write three float32 (Nz, Ny, Nx) datasets with h5py.

Usage:  /usr/bin/python3 peer_numpy.py N OUTFILE [SEED]
Prints one line:
  BENCH name=peer_numpy n=N ranks=1 wall_s=T peak_rss_kib=K
wall_s spans steps 1-6 (imports excluded); peak_rss_kib is getrusage ru_maxrss of the process.
"""
import resource
import sys
import time

import h5py
import numpy as np


def make_cube(n, seed, slope=2.0, zeta=0.5, vrms=1.0):
    """Return the three real velocity components, each float64 (Nz, Ny, Nx)."""
    kfull = np.fft.fftfreq(n, d=1.0 / n)
    khalf = np.fft.rfftfreq(n, d=1.0 / n)
    kz = kfull[:, None, None]
    ky = kfull[None, :, None]
    kx = khalf[None, None, :]
    k2 = kz**2 + ky**2 + kx**2
    kmag = np.sqrt(k2)

    # Amplitude of each mode from the shell-integrated spectrum, zero outside the band.
    band = (kmag >= 1.0) & (kmag <= n / 2 - 1)
    amp = np.zeros_like(kmag)
    amp[band] = np.sqrt(kmag[band] ** (-slope) / (4.0 * np.pi * k2[band]))

    # Isotropic complex Gaussian vector: independent real and imaginary parts per component.
    rng = np.random.default_rng(seed)
    shape = (3,) + kmag.shape
    v = (rng.standard_normal(shape) + 1j * rng.standard_normal(shape)) * amp

    # Helmholtz projection: longitudinal part along k, transverse part the rest.
    k2safe = np.where(k2 > 0, k2, 1.0)
    kdotv = (kz * v[2] + ky * v[1] + kx * v[0]) / k2safe
    v_par = np.stack([kx * kdotv, ky * kdotv, kz * kdotv])
    v_perp = v - v_par
    v = zeta * v_perp + (1.0 - zeta) * v_par
    del v_par, v_perp, kdotv

    # Back to real space, component by component, then normalise the rms speed.
    comps = [np.fft.irfftn(v[i], s=(n, n, n)) for i in range(3)]
    rms = np.sqrt(sum(np.mean(c**2) for c in comps))
    return [c * (vrms / rms) for c in comps]


def main():
    if len(sys.argv) not in (3, 4):
        sys.exit("usage: peer_numpy.py N OUTFILE [SEED]")
    n = int(sys.argv[1])
    out = sys.argv[2]
    seed = int(sys.argv[3]) if len(sys.argv) == 4 else 1

    t0 = time.perf_counter()
    comps = make_cube(n, seed)
    with h5py.File(out, "w") as f:
        for name, c in zip(("vx", "vy", "vz"), comps):
            f.create_dataset(name, data=c.astype(np.float32))
    wall = time.perf_counter() - t0

    rss_kib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss  # KiB on Linux
    print(f"BENCH name=peer_numpy n={n} ranks=1 wall_s={wall:.4f} peak_rss_kib={rss_kib}",
          flush=True)


if __name__ == "__main__":
    main()
