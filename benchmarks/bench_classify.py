"""Classification speed, single thread: ratios against a plain numpy pass over the same arrays.

Baseline: ``np.log10(t) + l`` over the same (log Teff, log L) float64 arrays -- one elementwise
transcendental plus one add, the cheapest full pass a catalogue tool makes. Printed: medians over
repeats of (1) the baseline, (2) point labels (``StageMap.locate``), (3) the full
``classify_hr`` without draws (labels, masses, flags), (4) probabilities with 128 draws, (5) the
Monte Carlo core alone (the stage counts of those draws), (6) building the reason texts
(``to_columns``; they are built lazily, on first access).
"""

import os

for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[var] = "1"

import time  # noqa: E402

import numpy as np  # noqa: E402

from hrstage.classifier import _core, classify_hr  # noqa: E402
from hrstage.stagemap import stage_map  # noqa: E402


def median_time(fn, repeats=5):
    ts = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        ts.append(time.perf_counter() - t0)
    return float(np.median(ts))


def main(n_point=4_000_000, n_full=1_000_000, n_mc=200_000):
    rng = np.random.default_rng(1)
    lt = rng.uniform(3.45, 4.5, n_point)
    ll = rng.uniform(-3, 5, n_point)
    sm = stage_map(0.0)
    sm.locate(lt[:10], ll[:10])
    base = median_time(lambda: np.log10(lt) + ll)
    loc = median_time(lambda: sm.locate(lt, ll))
    print(f"baseline np.log10(a)+b     : {n_point / base / 1e6:8.1f} M stars/s")
    print(f"point labels (locate)      : {n_point / loc / 1e6:8.1f} M stars/s   ratio to baseline {base / loc:5.2f}")
    f = median_time(lambda: classify_hr(lt[:n_full], ll[:n_full], feh=0.0), repeats=3)
    b1 = median_time(lambda: np.log10(lt[:n_full]) + ll[:n_full])
    print(f"classify_hr, no draws      : {n_full / f / 1e6:8.2f} M stars/s   ratio to baseline {b1 / f:5.3f}")
    st = np.full(n_mc, 0.01)
    sl = np.full(n_mc, 0.05)
    mc = median_time(lambda: classify_hr(lt[:n_mc], ll[:n_mc], logt_err=st, logl_err=sl, corr=0.3,
                                         n_draws=128, feh=0.0), repeats=3)
    b2 = median_time(lambda: np.log10(lt[:n_mc]) + ll[:n_mc])
    print(f"classify_hr, 128 draws     : {n_mc / mc / 1e6:8.2f} M stars/s   ratio to baseline {b2 / mc:6.4f}")
    z1, z2 = _core._draws(128, 20240601)
    rho = np.full(n_mc, 0.3)
    core = median_time(lambda: _core._mc_counts(sm, lt[:n_mc], ll[:n_mc], st, sl, rho, z1, z2), repeats=3)
    print(f"Monte Carlo core alone     : {n_mc / core / 1e6:8.2f} M stars/s   ratio to baseline {b2 / core:6.4f}")
    res = classify_hr(lt[:n_mc], ll[:n_mc], logt_err=st, logl_err=sl, corr=0.3, n_draws=128, feh=0.0)
    t0 = time.perf_counter()
    res.to_columns()
    tc = time.perf_counter() - t0
    print(f"to_columns (reason texts)  : {n_mc / tc / 1e6:8.2f} M stars/s   (once per result)")


if __name__ == "__main__":
    main()
