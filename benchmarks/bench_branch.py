"""Cost of the giant-branch work, single thread: classify_hr with and without ``branches``.

Invented field of giants (log Teff from 3600-5200 K, log L 0.5-3.2, [Fe/H] -1..+0.3, errors 0.005 /
0.03 dex) and the same number of main-sequence stars (no branch work). Printed: medians over
repeats of the stage classification alone, with the branches, and their ratio, side by side in one
run; and the HR route against the Kiel route (log g given).

``--before REV`` instead times ``classify_branch`` of ``hrstage/classifier/_branch.py`` at git
revision REV (loaded as a second module) beside the current one on the same invented giants, with
per-star errors, on the HR and the Kiel route: repeats interleaved (before, after, before, ...),
medians of CPU time (``time.process_time``) and wall time, their ratios, and whether the two give
identical codes, probabilities, masses, mass spreads and off-locus distances (else the largest
differences).
"""

import argparse
import os
import time

for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[var] = "1"

import numpy as np  # noqa: E402
from _bench_util import exec_module, git_show, median_time  # noqa: E402

from hrstage.classifier import _branch, classify_hr  # noqa: E402
from hrstage.stages import GIANT  # noqa: E402


def main(n=200_000, repeats=5):
    rng = np.random.default_rng(1)
    lt = np.log10(rng.uniform(3600, 5200, n))
    ll = rng.uniform(0.5, 3.2, n)
    feh = np.round(rng.uniform(-1.0, 0.3, n) * 4) / 4
    lg = 4.438 + np.log10(1.2) + 4 * (lt - np.log10(5772.0)) - ll
    kw = dict(feh=feh, logt_err=0.005, logl_err=0.03)
    warm = dict(feh=feh[:2000], logt_err=0.005, logl_err=0.03)
    classify_hr(lt[:2000], ll[:2000], **warm)   # build the maps and grids once
    classify_hr(lt[:2000], ll[:2000], logg=lg[:2000], logg_err=0.05, **warm)
    t0 = median_time(lambda: classify_hr(lt, ll, branches=False, **kw), repeats)
    t1 = median_time(lambda: classify_hr(lt, ll, **kw), repeats)
    t2 = median_time(lambda: classify_hr(lt, ll, logg=lg, logg_err=0.05, **kw), repeats)
    ms_t = np.log10(rng.uniform(4000, 9000, n))
    ms_l = 4.0 * (ms_t - np.log10(5772.0)) * 1.8
    t3 = median_time(lambda: classify_hr(ms_t, ms_l, branches=False, **kw), repeats)
    t4 = median_time(lambda: classify_hr(ms_t, ms_l, **kw), repeats)
    print(f"{n} giants: stages {t0:.3f} s, + branches (HR) {t1:.3f} s (x{t1 / t0:.1f}), "
          f"+ branches (Kiel) {t2:.3f} s (x{t2 / t0:.1f})")
    print(f"{n} main-sequence stars: stages {t3:.3f} s, + branches {t4:.3f} s (x{t4 / t3:.2f})")


def _differences(a, b):
    """Names of the BranchResult arrays that differ, with the largest relative difference."""
    out = []
    for name in ("code", "proba", "mass_hyp", "mass_hyp_sd", "off_locus"):
        x, y = np.asarray(getattr(a, name)), np.asarray(getattr(b, name))
        if np.array_equal(x, y, equal_nan=True):
            continue
        if x.dtype.kind in "iub" or not np.array_equal(np.isnan(x), np.isnan(y)):
            out.append(f"{name} (values or NaN pattern)")
            continue
        ok = np.isfinite(x) & np.isfinite(y)
        rel = np.abs(x[ok] - y[ok]) / np.maximum(np.abs(x[ok]), 1e-300)
        out.append(f"{name} (max relative difference {rel.max():.1e})")
    return out


def side_by_side(rev, n=200_000, repeats=7):
    """``classify_branch`` at git revision ``rev`` against the working tree, interleaved."""
    before = exec_module("hrstage.classifier._branch_before", git_show(rev, "hrstage/classifier/_branch.py"),
                         f"{rev}:_branch.py", "hrstage.classifier")
    rng = np.random.default_rng(2)
    lt = np.log10(rng.uniform(3600, 5200, n))
    ll = rng.uniform(0.5, 3.2, n)
    feh = np.round(rng.uniform(-1.0, 0.3, n) * 4) / 4
    lg = 4.438 + np.log10(rng.uniform(0.8, 2.5, n)) + 4 * (lt - np.log10(5772.0)) - ll
    kw = dict(feh=feh, logt_err=rng.uniform(0.002, 0.012, n), logl_err=rng.uniform(0.02, 0.09, n))
    code = np.full(n, GIANT)
    routes = {"HR": {}, "Kiel": dict(logg=lg, logg_err=rng.uniform(0.02, 0.1, n))}
    for route, extra in routes.items():
        runs = {"before": lambda: before.classify_branch(lt, ll, code, **kw, **extra),
                "after": lambda: _branch.classify_branch(lt, ll, code, **kw, **extra)}
        res = {k: f() for k, f in runs.items()}     # warm: grids and cell tables built
        res = {k: f() for k, f in runs.items()}
        cpu = {k: [] for k in runs}
        wall = {k: [] for k in runs}
        for _ in range(repeats):
            for k, f in runs.items():
                c0, w0 = time.process_time(), time.perf_counter()
                f()
                cpu[k].append(time.process_time() - c0)
                wall[k].append(time.perf_counter() - w0)
        c = {k: float(np.median(v)) for k, v in cpu.items()}
        w = {k: float(np.median(v)) for k, v in wall.items()}
        diff = _differences(res["before"], res["after"])
        print(f"{route:>4s} route, {n} giants, classify_branch: before ({rev}) CPU {c['before']:.3f} s / wall "
              f"{w['before']:.3f} s, after CPU {c['after']:.3f} s / wall {w['after']:.3f} s; after/before CPU "
              f"{c['after'] / c['before']:.2f}, wall {w['after'] / w['before']:.2f}; "
              + ("identical results" if not diff else "differ: " + ", ".join(diff)))


if __name__ == "__main__":
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("rows", nargs="?", type=int, default=200_000)
    ap.add_argument("--before", help="git revision whose _branch.py is timed beside the current one")
    args = ap.parse_args()
    if args.before:
        side_by_side(args.before, args.rows)
    else:
        main(args.rows)
