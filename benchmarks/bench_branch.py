"""Cost of the giant-branch work, single thread: classify_hr with and without ``branches``.

Invented field of giants (log Teff from 3600-5200 K, log L 0.5-3.2, [Fe/H] -1..+0.3, errors 0.005 /
0.03 dex) and the same number of main-sequence stars (no branch work). Printed: medians over
repeats of the stage classification alone, with the branches, and their ratio, side by side in one
run; and the HR route against the Kiel route (log g given).
"""

import os
import sys

for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[var] = "1"

import numpy as np  # noqa: E402
from _bench_util import median_time  # noqa: E402

from hrstage.classifier import classify_hr  # noqa: E402


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


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 200_000)
