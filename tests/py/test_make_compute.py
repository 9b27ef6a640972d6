#!/usr/bin/python3
"""helmix make: how a run computes must not change what it computes.

  * kept draws ([output] draws = keep) and regenerated draws give the same bits, in single and
    double compute, on 1 and 2 ranks, for the whole field with exact = total and exact = none,
    for the parts, and for a lognormal density with a magnetic field and its face values;
  * 1, 2 and 3 threads per rank (--threads) give the same bits;
  * a single-precision synthesis ([output] compute = single, the default of a single file)
    agrees with the double one to single-precision round-off: values, rms, compressive share
    and the divergence of a purely solenoidal field, measured with numpy from the files;
  * FFTW wisdom (--wisdom, --fftw-effort measure) round-trips: the first run writes it in FFTW's
    own text format, runs that read the same wisdom give the same bits, a damaged wisdom file
    is refused with exit 2 and nothing written;
  * the file records the compute precision and whether draws were kept.

Sources: IEEE 754 binary32 unit round-off 2^-24 (common practice); the growth of FFT round-off
like sqrt(log N) in rms (Schatzman 1996, SIAM J. Sci. Comput. 17, 1150, from memory); FFTW's
wisdom format, an s-expression starting "(fftw-VERSION fftw_wisdom" / "fftwf_wisdom" (FFTW 3
manual, "Words of Wisdom"); numpy.fft for the spectral divergence (numpy documentation).
"""
import os

import h5py
import numpy as np

import hxcheck

GRID = "/data/grid_0000000000"
SRC_BITS = "helmix documentation: kept draws, threads and wisdom never change a bit of the output"
SRC_ROUND = "IEEE 754 binary32 round-off times sqrt(log2 cells) (Schatzman 1996, from memory)"


def fields(path, names=("velocity",)):
    out = {}
    with h5py.File(path, "r") as f:
        g = f[GRID]
        for n in names:
            keys = [n + "_" + a for a in "xyz"] if n + "_x" in g else [n]
            out[n] = np.stack([g[k][()] for k in keys])
        attrs = dict(f["/helmix"].attrs)
    return out, attrs


def same_bits(a, b):
    return all(np.array_equal(a[k], b[k]) and a[k].dtype == b[k].dtype for k in a)


def body(args, hx, c):
    base = {"grid": {"cells": 32}, "spectrum": {"slope": 2}, "mix": {"compressive_fraction": 0.4},
            "random": {"seed": 5}}
    cloud = {"grid": {"cells": 32}, "density": {"model": "lognormal", "sigma_s": 0.8},
             "magnetic": {"beta": 0.5, "random_ratio": 0.5, "faces": "true"},
             "magnetic_spectrum": {"shape": "power", "slope": 1.7}, "random": {"seed": 9}}
    cases = [("exact total", base, ("velocity",)),
             ("exact none", base, ("velocity",), ("mix.exact=none",)),
             ("parts", base, ("velocity", "velocity_solenoidal", "velocity_compressive"), ("output.parts=true",)),
             ("lognormal + magnetic faces", cloud, ("velocity", "density", "magnetic", "magnetic_face"))]
    for case in cases:
        label, rec, names = case[0], case[1], case[2]
        extra = case[3] if len(case) > 3 else ()
        for compute in ("single", "double"):
            runs = {}
            for draws, ranks, threads in (("regenerate", 1, 1), ("keep", 1, 1), ("keep", 2, 1), ("regenerate", 2, 1),
                                          ("keep", 1, 2), ("regenerate", 1, 3)):
                sets = extra + (f"output.compute={compute}", f"output.draws={draws}")
                run = hx.make(rec, ranks=ranks, sets=sets, extra=("--threads", str(threads)),
                              name=f"c_{label.replace(' ', '_').replace('+', 'p')}_{compute}_{draws}_{ranks}_{threads}")
                if not c.check(f"[{label}, {compute}] make exits 0 ({draws}, {ranks} rank(s), {threads} thread(s))",
                               run.ok, run.describe()[:300]):
                    continue
                runs[(draws, ranks, threads)] = fields(run.out, names)
            ref = runs.get(("regenerate", 1, 1))
            if ref is None:
                continue
            c.check(f"[{label}, {compute}] the file records compute precision {compute}",
                    ref[1].get("compute_precision") == compute, str(ref[1].get("compute_precision")), SRC_BITS)
            for key in (("keep", 1, 1), ("keep", 1, 2), ("regenerate", 1, 3)):
                if key in runs:
                    c.check(f"[{label}, {compute}] {key[0]} draws, {key[2]} thread(s) == regenerated, 1 thread: same bits",
                            same_bits(ref[0], runs[key][0]), "", SRC_BITS)
            if ("keep", 2, 1) in runs and ("regenerate", 2, 1) in runs:
                c.check(f"[{label}, {compute}] 2 ranks: kept == regenerated draws, same bits",
                        same_bits(runs[("keep", 2, 1)][0], runs[("regenerate", 2, 1)][0]), "", SRC_BITS)
            kept = runs.get(("keep", 1, 1))
            if kept is not None:
                c.check(f"[{label}, {compute}] the file says the draws were kept, and how many bytes",
                        kept[1].get("draws") == "kept" and float(kept[1].get("kept_draw_bytes", 0)) > 0
                        and ref[1].get("draws") == "regenerated",
                        f"{kept[1].get('draws')} {kept[1].get('kept_draw_bytes')}", SRC_BITS)

    # single against double compute: the same field to single-precision round-off
    n = 64
    for frac, tag in ((0.4, "mixed"), (0.0, "solenoidal")):
        rec = {"grid": {"cells": n}, "spectrum": {"slope": 2}, "mix": {"compressive_fraction": frac},
               "random": {"seed": 21}}
        r1 = hx.make(rec, ranks=2, sets=("output.compute=single",), name=f"prec_single_{tag}")
        r2 = hx.make(rec, ranks=2, sets=("output.precision=double",), name=f"prec_double_{tag}")
        if not (c.check(f"[{tag}] single and double compute runs exit 0", r1.ok and r2.ok,
                        (r1.describe() + r2.describe())[:300])):
            continue
        vs = fields(r1.out)[0]["velocity"].astype(np.float64)
        vd = fields(r2.out)[0]["velocity"]
        eps, lg = 2.0 ** -24, np.log2(n ** 3)
        rms_d = np.sqrt(np.mean(vd ** 2))
        err = np.sqrt(np.mean((vs - vd) ** 2)) / rms_d
        c.check(f"[{tag}] rms of the difference / rms <= 4 eps sqrt(log2 N^3)", err <= 4 * eps * np.sqrt(lg),
                f"{err:.2e} (limit {4 * eps * np.sqrt(lg):.2e})", SRC_ROUND)
        drms = abs(np.sqrt(np.mean(vs ** 2)) - rms_d) / rms_d
        c.check(f"[{tag}] the rms agrees to 4 eps sqrt(log2 N^3)", drms <= 4 * eps * np.sqrt(lg), f"{drms:.2e}", SRC_ROUND)
        Ss, Sd = hxcheck.Spectral(vs, (1, 1, 1)), hxcheck.Spectral(vd, (1, 1, 1))
        dshare = abs(Ss.compressive_fraction() - Sd.compressive_fraction())
        c.check(f"[{tag}] the compressive share agrees to 10 eps sqrt(log2 N^3)", dshare <= 10 * eps * np.sqrt(lg),
                f"{dshare:.2e}", SRC_ROUND)
        if frac == 0.0:
            c.check("[solenoidal] single compute: divergence / gradient rms <= 10 eps sqrt(log2 N^3)",
                    Ss.divergence_ratio() <= 10 * eps * np.sqrt(lg),
                    f"{Ss.divergence_ratio():.2e} (double {Sd.divergence_ratio():.2e})", SRC_ROUND + "; numpy.fft")

    # wisdom round-trip
    wis = hx.path("helmix.wisdom")
    rec = {"grid": {"cells": 32}, "random": {"seed": 3}}
    runs = []
    for i in range(3):
        run = hx.make(rec, ranks=2, extra=("--wisdom", wis, "--fftw-effort", "measure"), name=f"wisdom_{i}")
        c.check(f"[wisdom] run {i + 1} with --wisdom exits 0", run.ok, run.describe()[:300])
        runs.append(run)
    text = open(wis).read() if os.path.exists(wis) else ""
    c.check("[wisdom] the wisdom file is FFTW's text for both precisions",
            "fftw_wisdom" in text and "fftwf_wisdom" in text and text.lstrip().startswith("(fftw-"),
            text[:60].replace("\n", " "), "FFTW 3 manual, wisdom format")
    if all(r.ok for r in runs[1:]):
        c.check("[wisdom] two runs that read the same wisdom give the same bits",
                same_bits(fields(runs[1].out)[0], fields(runs[2].out)[0]), "", SRC_BITS)
    bad = hx.path("bad.wisdom")
    with open(bad, "w") as f:
        f.write("this is not wisdom\n")
    out = hx.path("bad_wisdom.h5")
    run = hx.make(rec, ranks=2, out=out, extra=("--wisdom", bad), name="wisdom_bad")
    c.check("[wisdom] a damaged wisdom file: exit 2, nothing written", run.rc == 2 and not os.path.exists(out)
            and not os.path.exists(out + ".partial"), f"rc {run.rc}", "helmix exit codes")


if __name__ == "__main__":
    hxcheck.run_main("make_compute", __doc__, body)
