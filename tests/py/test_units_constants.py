#!/usr/bin/python3
"""The physical constants of helmix (include/helmix/units.h) against independent sources.

Runs `test_units --dump`, which prints "name value" lines, and compares:
  * G, k_B, c, u, m_p with scipy.constants, which in scipy 1.10 (Debian 12) carries the
    CODATA 2018 adjustment (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010), to 1e-12;
  * m_H with u x 1.00782503223 (relative atomic mass of 1H, Wang et al. 2021,
    Chinese Phys. C 45, 030003);
  * the au and parsec with their IAU definitions computed here (IAU 2012 Resolution B2,
    IAU 2015 Resolution B2), the nominal solar values with IAU 2015 Resolution B3 and
    M_sun = (GM)_sun / G with scipy's G, the Julian year with scipy.constants.Julian_year;
  * the parser's "1 pc" and "1 Msun" and the 10 K sound speed sqrt(k_B T / (mu m_H)),
    recomputed from scipy's constants.
test_units does not initialise MPI, so it runs without the launcher; --mpiexec is accepted
for the common command line of the scripts in tests/py.
"""

import argparse
import math
import os
import shlex
import subprocess
import sys

import scipy
import scipy.constants as sc

sys.dont_write_bytecode = True  # keep tests/py free of __pycache__
import hxcheck as H  # noqa: E402

SRC_CODATA = "CODATA 2018 via scipy.constants (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010)"
SRC_AME = "Ar(1H) = 1.00782503223 (Wang et al. 2021, Chinese Phys. C 45, 030003)"
SRC_AU = "IAU 2012 Resolution B2: au = 149597870700 m"
SRC_PC = "IAU 2015 Resolution B2: pc = (648000/pi) au"
SRC_SUN = "IAU 2015 Resolution B3 nominal solar values"
SRC_YR = "Julian year 365.25 d (IAU common practice; scipy.constants.Julian_year)"
REL = 1e-12


def parse_args():
    ap = argparse.ArgumentParser(description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--helmix",
                    default=os.environ.get("HELMIX", "/work/main/build/helmix"),
                    help="path to the helmix executable (locates the build directory)")
    ap.add_argument("--mpiexec",
                    default=os.environ.get(
                        "HX_MPIEXEC",
                        "mpiexec --allow-run-as-root --oversubscribe"),
                    help="MPI launcher and its options, as one string (not needed here)")
    ap.add_argument("--units-test", default=None,
                    help="path to the test_units executable "
                         "(default: tests/test_units in the helmix binary's build directory)")
    args = ap.parse_args()
    args.mpiexec = shlex.split(args.mpiexec)
    if args.units_test is None:
        args.units_test = os.path.join(os.path.dirname(os.path.abspath(args.helmix)),
                                       "tests", "test_units")
    return args


def dump(path):
    """name -> value from `test_units --dump`."""
    run = subprocess.run([path, "--dump"], capture_output=True, text=True, timeout=60)
    if run.returncode != 0:
        raise RuntimeError(f"{path} --dump exited {run.returncode}: {run.stderr.strip()}")
    out = {}
    for line in run.stdout.splitlines():
        name, value = line.split()
        out[name] = float(value)
    return out


def main():
    args = parse_args()
    c = H.Checks("test_units_constants")
    print(f"scipy {scipy.__version__}; test_units = {args.units_test}")
    if not os.access(args.units_test, os.X_OK):
        c.fail("test_units executable present", args.units_test)
        c.finish()
    try:
        got = dump(args.units_test)
    except Exception as e:  # a crash of the dump is a failed check, not a traceback
        c.fail("test_units --dump runs", str(e))
        c.finish()

    def same(name, want, source, rel=REL):
        have = got.get(name)
        ok = have is not None and abs(have - want) <= rel * abs(want)
        c.check(f"{name} = {want:.12g} to {rel:g} relative", ok,
                f"helmix {have!r}, expected {want!r}", source)

    pc = sc.physical_constants
    G = pc["Newtonian constant of gravitation"][0] * 1e3       # m^3 kg^-1 s^-2 -> cgs
    kB = pc["Boltzmann constant"][0] * 1e7                     # J/K -> erg/K
    u = pc["atomic mass constant"][0] * 1e3                    # kg -> g
    same("G", G, SRC_CODATA)
    same("k_B", kB, SRC_CODATA)
    same("c", pc["speed of light in vacuum"][0] * 1e2, SRC_CODATA)
    same("u", u, SRC_CODATA)
    same("m_p", pc["proton mass"][0] * 1e3, SRC_CODATA)
    mH = 1.00782503223 * u
    same("m_H", mH, SRC_AME + "; u from " + SRC_CODATA)

    au = 149597870700.0 * 1e2
    parsec = 648000.0 / math.pi * au
    same("au", au, SRC_AU)
    same("pc", parsec, SRC_PC, 1e-15)
    same("parsed_1_pc", parsec, SRC_PC + " (through the unit parser)", 1e-15)
    gm_sun = 1.3271244e20 * 1e6                                # m^3 s^-2 -> cm^3 s^-2
    same("GM_sun", gm_sun, SRC_SUN)
    same("R_sun", 6.957e8 * 1e2, SRC_SUN)
    same("L_sun", 3.828e26 * 1e7, SRC_SUN)
    same("M_sun", gm_sun / G, SRC_SUN + "; M = (GM)/G with G from " + SRC_CODATA)
    same("parsed_1_Msun", gm_sun / G, SRC_SUN + " (through the unit parser)")
    same("yr", sc.Julian_year, SRC_YR)
    same("Myr", 1e6 * sc.Julian_year, SRC_YR)
    same("sound_speed_10K_mu2.33", math.sqrt(kB * 10.0 / (2.33 * mH)),
         "c_s = sqrt(k_B T / (mu m_H)) (definition), constants from " + SRC_CODATA)

    # the dump must hold nothing this script does not check (a new constant needs a source)
    checked = {"G", "k_B", "c", "u", "m_p", "m_H", "au", "pc", "parsed_1_pc", "GM_sun", "R_sun",
               "L_sun", "M_sun", "parsed_1_Msun", "yr", "Myr", "sound_speed_10K_mu2.33"}
    c.check("every dumped constant is checked against a source", set(got) == checked,
            f"unchecked {sorted(set(got) - checked)}, missing {sorted(checked - set(got))}",
            "common practice")
    c.finish()


if __name__ == "__main__":
    main()
