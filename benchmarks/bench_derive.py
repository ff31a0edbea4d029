"""Derive speed, single thread: rows per second of the three main paths, with ratios to numpy.

Baseline: ``np.log10(a) + b`` over float64 arrays of the same length (the cheapest full pass).
Timed (medians of repeats, 10^6 synthetic rows by default): ``from_teff_lum`` with errors,
``from_gaia`` (G, BP-RP, parallax with errors, E(BP-RP) given so the extinction curve is used,
log g estimated) and ``from_johnson`` (V, B-V, V-Ks, parallax with errors, E(B-V) given).

``--before REV`` also loads ``hrstage/derive/photometric.py`` and ``direct.py`` of git revision
REV, with that revision's ``_errors`` and ``_inputs`` helpers, as modules beside the current
ones, times them on the same arrays in the same run (so the ratio does not depend on the load of
a shared machine) and says whether the outputs are identical.
"""

import argparse
import os
import sys

for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[var] = "1"


import numpy as np  # noqa: E402
from _bench_util import exec_module, git_show, median_time  # noqa: E402

from hrstage.derive import direct, photometric  # noqa: E402

HELPERS = ("_errors", "_inputs")


def load_before(rev):
    """(photometric, direct) of revision ``rev``, using that revision's helper modules."""
    for h in HELPERS:
        exec_module(f"hrstage.derive.{h}_before", git_show(rev, f"hrstage/derive/{h}.py"), f"{rev}:{h}.py", "hrstage.derive")
    mods = []
    for m in ("photometric", "direct"):
        src = git_show(rev, f"hrstage/derive/{m}.py")
        for h in HELPERS:
            src = src.replace(f"from .{h} import", f"from .{h}_before import")
        mods.append(exec_module(f"hrstage.derive.{m}_before", src, f"{rev}:{m}.py", "hrstage.derive"))
    return tuple(mods)


def inputs(n, seed=2):
    rng = np.random.default_rng(seed)
    return {
        "teff": rng.uniform(3500, 9000, n), "lum": 10 ** rng.uniform(-2, 3, n),
        "g": rng.uniform(6, 16, n), "bp_rp": rng.uniform(0.3, 2.5, n), "plx": rng.uniform(0.5, 20, n),
        "v": rng.uniform(5, 14, n), "b_v": rng.uniform(0.0, 1.6, n), "v_ks": rng.uniform(0.8, 3.5, n),
    }


def calls(phot, dire, x):
    return {
        "from_teff_lum": lambda: dire.from_teff_lum(x["teff"], x["lum"], teff_err=50.0, lum_err=0.05 * x["lum"]),
        "from_gaia": lambda: phot.from_gaia(x["g"], x["bp_rp"], x["plx"], g_err=0.003, bp_rp_err=0.005,
                                            parallax_err=0.05, e_bp_rp=0.05, feh=0.0),
        "from_johnson": lambda: phot.from_johnson(x["v"], x["b_v"], x["plx"], v_err=0.01, b_v_err=0.01,
                                                  parallax_err=0.05, v_ks=x["v_ks"], v_ks_err=0.02,
                                                  e_b_v=0.03, feh=0.0),
    }


def same(p, q):
    keys = ("teff", "logt", "logl", "logt_err", "logl_err", "corr", "flags")
    return all(np.array_equal(getattr(p, k), getattr(q, k), equal_nan=True) for k in keys) and \
        np.array_equal(p.source, q.source)


def main(n=1_000_000, before=None, repeats=3):
    x = inputs(n)
    a, b = x["teff"], x["g"]
    base = median_time(lambda: np.log10(a) + b, 5)
    print(f"baseline np.log10(a)+b : {n / base / 1e6:8.1f} M rows/s")
    sets = [("after", calls(photometric, direct, x))]
    if before:
        sets.insert(0, (f"before ({before})", calls(*load_before(before), x)))
    res = {}
    for label, cs in sets:
        for name, fn in cs.items():
            fn()  # warm-up (extinction coefficients are cached per curve and R_V)
            t = median_time(fn, repeats)
            res[label, name] = t
            print(f"{label:>20s} {name:<14s}: {n / t / 1e6:6.2f} M rows/s (ratio to baseline {base / t:.4f})")
    if before:
        for name in sets[1][1]:
            tb, ta = res[sets[0][0], name], res["after", name]
            print(f"speed-up after/before {name:<14s}: {tb / ta:5.2f} x;  identical outputs: "
                  f"{same(sets[0][1][name](), sets[1][1][name]())}")


if __name__ == "__main__":
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--before", help="git revision whose derive paths are timed beside the current ones")
    ap.add_argument("--rows", type=int, default=1_000_000)
    args = ap.parse_args()
    main(n=args.rows, before=args.before)
