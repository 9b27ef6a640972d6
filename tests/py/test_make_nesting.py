#!/usr/bin/python3
"""Resolution nesting of `helmix make`: 64^3 and 128^3 with the same seed and kmax.

Both runs must hold the same Fourier coefficients c_n (|n| <= kmax), i.e. the
same band-limited periodic field sampled on two grids. numpy.fft.fftn gives
V[n] = sum_j v_j exp(-2 pi i n.j/N); with cell centres at (j+1/2) dx,
c_n = V[n]/N^3 * exp(-i pi sum_a n_a/N_a) (discrete Fourier transform of
samples of a band-limited trigonometric polynomial, exact below Nyquist:
Shannon/Whittaker sampling, common practice). A wrong cell-centre convention
shows up as a resolution-dependent phase and fails the comparison.

Also checked in real space: the 64^3 coefficients summed on the 128^3 cell
centres (zero padding in k) reproduce the 128^3 field.
"""

import sys
import numpy as np

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

SRC_DFT = ("DFT of a band-limited periodic field sampled at cell centres "
           "(common practice; numpy.fft conventions)")
KMAX = 20


def recipe(cells, seed):
    return {
        "grid": {"cells": cells, "box": 1.0},
        "spectrum": {"shape": "power", "slope": 2.0, "kmin": 1, "kmax": KMAX},
        "mix": {"compressive_fraction": 0.3, "exact": "total"},
        "amplitude": {"vrms": 1.0},
        "random": {"seed": seed},
        "output": {"precision": "double"},
    }


def coeffs_by_mode(sp, kmax):
    """dict-free representation: arrays of integer n and coefficients, |n|<=kmax+1."""
    m = sp.kun <= kmax + 1.5
    n = sp.n[:, m].T.astype(int)
    cvals = sp.c[:, m].T
    order = np.lexsort((n[:, 0], n[:, 1], n[:, 2]))
    return n[order], cvals[order]


def body(args, hx, c):
    seed = 4242
    lo = hx.make(recipe(64, seed), ranks=1, name="n64")
    hi = hx.make(recipe(128, seed), ranks=2, name="n128", timeout=300)
    if not c.check("64^3 and 128^3 runs exit 0", lo.ok and hi.ok,
                   f"{lo.seconds:.2f} s, {hi.seconds:.2f} s" if lo.ok and hi.ok
                   else lo.describe() + "\n" + hi.describe()):
        return
    A = H.Cube(lo.out)
    B = H.Cube(hi.out)
    spA = H.Spectral(A.v, A.box)
    spB = H.Spectral(B.v, B.box)
    nA, cA = coeffs_by_mode(spA, KMAX)
    nB, cB = coeffs_by_mode(spB, KMAX)
    c.check("same mode list |n| <= kmax+1.5 on both grids", np.array_equal(nA, nB),
            f"{len(nA)} vs {len(nB)} modes", "integer lattice, common practice")
    if not np.array_equal(nA, nB):
        return
    scale = float(np.max(np.abs(cA)))
    d = float(np.max(np.abs(cA - cB)))
    c.check("Fourier coefficients of 128^3 == 64^3 (|n|<=kmax, half-cell phase corrected)",
            d < 1e-10 * scale and scale > 0,
            f"max|dc|={d:.2e}, max|c|={scale:.3e}, rel={d / scale:.2e}", SRC_DFT)
    # what a wrong cell-centre convention would have looked like (information)
    ph = np.exp(1j * np.pi * (nA[:, 0] + nA[:, 1] + nA[:, 2]) * (1 / 64 - 1 / 128))
    d_wrong = float(np.max(np.abs(cA - cB * ph[:, None])))
    c.check("the comparison is sensitive to the half-cell phase (control)",
            d_wrong > 1e3 * max(d, 1e-300),
            f"with a grid-corner convention max|dc| would be {d_wrong:.2e}", SRC_DFT)
    # real space: zero-pad the 64^3 coefficients to 128^3, evaluate at cell centres
    N = 128
    big = np.zeros((3, N, N, N), dtype=complex)
    n = spA.n.astype(int)
    m = spA.kun <= KMAX + 0.5
    iz, iy, ix = n[2][m] % N, n[1][m] % N, n[0][m] % N
    for a in range(3):
        big[a, iz, iy, ix] = spA.c[a][m]
    nz1 = np.fft.fftfreq(N, 1.0 / N)
    nzz, nyy, nxx = np.meshgrid(nz1, nz1, nz1, indexing="ij")
    shift = np.exp(1j * np.pi * (nxx + nyy + nzz) / N)  # x_j = (j + 1/2)/N
    v_up = np.fft.ifftn(big * shift[None], axes=(1, 2, 3)).real * N ** 3
    dr = float(np.max(np.abs(v_up - B.v)))
    c.check("64^3 field summed on the 128^3 cell centres == 128^3 field",
            dr < 1e-10 * float(np.max(np.abs(B.v))),
            f"max|dv|={dr:.2e} (max|v|={np.max(np.abs(B.v)):.3f})", SRC_DFT)
    # both normalised to the same rms, and the same realized share
    c.check("realized compressive share identical at both resolutions",
            abs(float(A.attrs["realized_compressive_fraction"]) -
                float(B.attrs["realized_compressive_fraction"])) < 1e-12,
            f"{A.attrs['realized_compressive_fraction']} vs "
            f"{B.attrs['realized_compressive_fraction']}", SRC_DFT)


if __name__ == "__main__":
    H.run_main("test_make_nesting", __doc__, body)
