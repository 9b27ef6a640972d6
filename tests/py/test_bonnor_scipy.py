#!/usr/bin/python3
"""Bonnor-Ebert spheres: helmix's isothermal Lane-Emden table against scipy.

Runs `test_bonnor --dump XI_MAX STEP` (rows "xi psi dpsi" from helmix's table) for
xi_max = 6.451 and 20, solves the same equation independently with
scipy.integrate.solve_ivp,
    psi'' = exp(-psi) - 2 psi' / xi,   psi(0) = psi'(0) = 0
(Chandrasekhar 1939, An Introduction to the Study of Stellar Structure, ch. IV),
in xi itself (helmix integrates in ln xi with fixed-step RK4), starting at a small
xi from the series psi = xi^2/6 - xi^4/120 + xi^6/1890, and compares every row.
The critical sphere is found from scipy's solution as the zero of
dm/dxi ~ exp(-psi) - psi'^2 / 2 and checked against Ebert (1955) and Bonnor (1956).

The module is serial, so test_bonnor runs without a launcher; --helmix and
--mpiexec are accepted so that every script in tests/py takes the same arguments.
"""

import argparse
import os
import shlex
import subprocess
import sys
import traceback

import numpy as np
from scipy.integrate import solve_ivp

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

SRC_LE = "Chandrasekhar 1939, An Introduction to the Study of Stellar Structure, ch. IV"
SRC_BE = "Ebert 1955, Z. Astrophys. 37, 217; Bonnor 1956, MNRAS 116, 351"
SRC_ODE = "independent scipy solve_ivp solution (common practice)"
REPO = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

XI_START = 1e-3  # the omitted series term, 61 xi^8 / 1632960, is 4e-29 here
STEP = 0.01      # row spacing of the dump; not aligned with helmix's nodes (uniform in ln xi)
TOL = 1e-6       # required agreement in psi and psi' at every row


def parse_args(description):
    ap = argparse.ArgumentParser(description=description)
    ap.add_argument("--helmix",
                    default=os.environ.get("HELMIX", "/work/main/build/helmix"),
                    help="path to the helmix executable (unused: the module is serial)")
    ap.add_argument("--mpiexec",
                    default=os.environ.get(
                        "HX_MPIEXEC",
                        "mpiexec --allow-run-as-root --oversubscribe"),
                    help="MPI launcher and its options, as one string (unused: serial)")
    ap.add_argument("--bonnor-test",
                    default=os.path.join(REPO, "build", "tests", "test_bonnor"),
                    help="path to the test_bonnor executable")
    args = ap.parse_args()
    args.mpiexec = shlex.split(args.mpiexec)
    return args


def pressure_mass(xi, psi, dpsi):
    """m = M G^(3/2) P^(1/2) / c_s^4 = (4 pi)^(-1/2) xi^2 psi' exp(-psi/2) (Bonnor 1956)."""
    return xi * xi * dpsi * np.exp(-0.5 * psi) / np.sqrt(4.0 * np.pi)


def scipy_solution(xi):
    """psi, psi' at the increasing points xi, and the critical (xi, psi, psi')."""
    def rhs(x, y):
        return [y[1], np.exp(-y[0]) - 2.0 * y[1] / x]

    def growth(x, y):  # dm/dxi has the sign of this (derivative of pressure_mass)
        return np.exp(-y[0]) - 0.5 * y[1] ** 2
    growth.direction = -1

    x0 = XI_START
    y0 = [x0 ** 2 / 6 - x0 ** 4 / 120 + x0 ** 6 / 1890, x0 / 3 - x0 ** 3 / 30 + x0 ** 5 / 315]
    inside = xi >= x0
    sol = solve_ivp(rhs, (x0, max(xi[-1], 10.0)), y0, method="DOP853", rtol=1e-12,
                    atol=1e-14, t_eval=xi[inside], events=growth)
    if not sol.success:
        raise RuntimeError("solve_ivp: " + sol.message)
    psi = np.empty_like(xi)
    dpsi = np.empty_like(xi)
    psi[inside], dpsi[inside] = sol.y
    c = xi[~inside]  # rows at the very centre come from the series too
    psi[~inside] = c ** 2 / 6 - c ** 4 / 120
    dpsi[~inside] = c / 3 - c ** 3 / 30
    crit = (sol.t_events[0][0], *sol.y_events[0][0])
    return psi, dpsi, crit


def dump(exe, xi_max):
    """Run the dump; return the '#' header as a dict of floats and the rows."""
    proc = subprocess.run([exe, "--dump", repr(xi_max), repr(STEP)], capture_output=True,
                          text=True, timeout=60)
    if proc.returncode != 0:
        raise RuntimeError(f"{exe} --dump {xi_max} {STEP}: rc={proc.returncode} "
                           f"{proc.stderr.strip()}")
    head = {}
    for line in proc.stdout.splitlines():
        if line.startswith("#"):
            w = line[1:].split()
            for k, v in zip(w[0::2], w[1::2]):
                try:
                    head[k] = float(v)
                except ValueError:
                    pass
    rows = np.loadtxt(proc.stdout.splitlines(), comments="#", ndmin=2)
    return head, rows


def body(args, c):
    crit_c = None
    for xi_max in (6.451, 20.0):
        head, rows = dump(args.bonnor_test, xi_max)
        xi, psi, dpsi = rows.T
        want = int(np.ceil(xi_max / STEP - 1e-9)) + 1
        c.check(f"[xi_max {xi_max}] dump has rows 0, {STEP}, ... and xi_max",
                len(xi) == want and xi[0] == 0 and xi[-1] == xi_max,
                f"{len(xi)} rows (expected {want}), from {xi[0]} to {xi[-1]}", "test_bonnor --dump")
        ps, ds, crit = scipy_solution(xi)
        dp, dd = np.abs(psi - ps).max(), np.abs(dpsi - ds).max()
        c.check(f"[xi_max {xi_max}] psi agrees with scipy at every row to {TOL:g}", dp < TOL,
                f"max |psi - scipy| = {dp:.2e}", SRC_ODE + "; " + SRC_LE)
        c.check(f"[xi_max {xi_max}] dpsi/dxi agrees with scipy at every row to {TOL:g}", dd < TOL,
                f"max |dpsi - scipy| = {dd:.2e}", SRC_ODE + "; " + SRC_LE)
        # the header's pressure-bounded mass is the definition applied to the last row
        m_row = pressure_mass(xi[-1], psi[-1], dpsi[-1])
        c.check(f"[xi_max {xi_max}] hx_bonnor_pressure_mass equals (4 pi)^-1/2 xi^2 psi' "
                f"exp(-psi/2) of the last row", abs(head.get("pressure_mass", np.nan) - m_row) < 1e-12,
                f"{head.get('pressure_mass')} vs {m_row}", SRC_BE)
        if xi_max == 6.451:
            contrast, m = np.exp(psi[-1]), m_row
            c.check("helmix at xi_max = 6.451: rho_c / rho_edge = 14.04 (to 0.01)",
                    abs(contrast - 14.04) <= 0.01, f"{contrast:.5f}", SRC_BE)
            c.check("helmix at xi_max = 6.451: m = 1.1822 (to 1e-3)",
                    abs(m - 1.1822) <= 1e-3, f"{m:.6f}", SRC_BE)
            crit_c = head.get("critical_xi", np.nan)

    xc, psic, dpsic = crit
    contrast_s, m_s = np.exp(psic), pressure_mass(xc, psic, dpsic)
    c.check("scipy: xi_crit (maximum of m) = 6.451 (to 1e-3)", abs(xc - 6.451) <= 1e-3,
            f"{xc:.8f}", SRC_BE)
    c.check("scipy: rho_c / rho_edge at xi_crit = 14.04 (to 0.01)",
            abs(contrast_s - 14.04) <= 0.01, f"{contrast_s:.6f}", SRC_BE)
    c.check("scipy: m at xi_crit = 1.1822 (to 1e-3)", abs(m_s - 1.1822) <= 1e-3,
            f"{m_s:.7f}", SRC_BE)
    c.check("hx_bonnor_critical_xi equals scipy's maximum of m (to 1e-6)",
            crit_c is not None and abs(crit_c - xc) < 1e-6,
            f"helmix {crit_c!r}, scipy {xc!r}, diff {abs((crit_c or np.nan) - xc):.1e}",
            SRC_ODE + "; " + SRC_BE)


def main():
    args = parse_args(__doc__)
    c = H.Checks("test_bonnor_scipy")
    try:
        if not os.access(args.bonnor_test, os.X_OK):
            c.fail("test_bonnor executable present", args.bonnor_test)
        else:
            body(args, c)
    except Exception:  # an exception is a failed check, not a crash
        traceback.print_exc()
        c.fail("test body ran without exception")
    c.finish()


if __name__ == "__main__":
    main()
