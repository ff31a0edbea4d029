"""Classification speed, single thread: ratios against a plain numpy pass over the same arrays.

Baseline: ``np.log10(t) + l`` over the same (log Teff, log L) float64 arrays -- one elementwise
transcendental plus one add, the cheapest full pass a catalogue tool makes. Printed: medians over
repeats of (1) the baseline, (2) point labels (``StageMap.locate``), (3) ``classify_hr(...)
.to_columns()`` with errors and no draws (labels, masses, flags and the reason texts), (4) the
same with 128 draws, (5) the Monte Carlo core alone.

``--before REV`` also loads ``hrstage/classifier/_core.py`` of git revision REV (e.g. a commit
before the speed work) as a second module and times it on the same arrays in the same run, so the
before/after ratio does not depend on the load of a shared machine.
"""

import argparse
import os
import subprocess
import sys

for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[var] = "1"


import numpy as np  # noqa: E402
from _bench_util import exec_module, git_show, median_time  # noqa: E402

from hrstage.classifier import _core, classify_hr  # noqa: E402
from hrstage.stagemap import stage_map  # noqa: E402


def load_before(rev):
    """``hrstage.classifier._core`` as it was at git revision ``rev`` (a module beside ours), with
    the text helpers ``_text`` of the same revision; the stage map (layer 2) is the current one."""
    src = git_show(rev, "hrstage/classifier/_core.py")
    try:
        text_src = git_show(rev, "hrstage/classifier/_text.py")
    except subprocess.CalledProcessError:
        text_src = None
    if text_src is not None and "from ._text import" in src:
        exec_module("hrstage.classifier._text_before", text_src, f"{rev}:_text.py", "hrstage.classifier")
        src = src.replace("from ._text import", "from ._text_before import")
    return exec_module("hrstage.classifier._core_before", src, f"{rev}:_core.py", "hrstage.classifier")


def same_outputs(mod_a, mod_b, a, b, **kw):
    """Whether two classifier cores give identical columns (labels, probabilities, texts...)."""
    ca = mod_a.classify_hr(a, b, **kw).to_columns()
    cb = mod_b.classify_hr(a, b, **kw).to_columns()
    for k in ca:
        x, y = ca[k], cb[k]
        eq = np.array_equal(x, y) if x.dtype == object else np.array_equal(x, y, equal_nan=True)
        if not eq:
            return False
    return True


def main(n_point=4_000_000, n_full=1_000_000, n_mc=200_000, before=None, repeats=3):
    n_mc = min(n_mc, n_full)  # the Monte Carlo core runs on a slice of the n_full error arrays
    rng = np.random.default_rng(1)
    lt = rng.uniform(3.45, 4.5, n_point)
    ll = rng.uniform(-3, 5, n_point)
    sm = stage_map(0.0)
    sm.locate(lt[:10], ll[:10])
    print(f"stage map build (uncached, [Fe/H]=-1): {median_time(lambda: type(sm)(-1.0), repeats=3):8.3f} s")
    base = median_time(lambda: np.log10(lt) + ll)
    loc = median_time(lambda: sm.locate(lt, ll))
    print(f"baseline np.log10(a)+b          : {n_point / base / 1e6:8.1f} M stars/s")
    print(f"point labels (locate)           : {n_point / loc / 1e6:8.1f} M stars/s   ratio to baseline {base / loc:5.2f}")
    mods = [("after", _core)]
    if before:
        mods.insert(0, (f"before ({before})", load_before(before)))
    a, b = lt[:n_full], ll[:n_full]
    st, sl = np.full(n_full, 0.01), np.full(n_full, 0.05)
    b1 = median_time(lambda: np.log10(a) + b)
    res = {}
    for label, mod in mods:
        f0 = median_time(lambda: mod.classify_hr(a, b, logt_err=st, logl_err=sl, corr=0.3, feh=0.0).to_columns(),
                         repeats=repeats)
        f1 = median_time(lambda: mod.classify_hr(a, b, logt_err=st, logl_err=sl, corr=0.3, feh=0.0,
                                                 n_draws=128).to_columns(), repeats=repeats)
        res[label] = (f0, f1)
        print(f"{label:>22s}: classify_hr+to_columns, errors, 0 draws : {n_full / f0 / 1e6:6.2f} M stars/s "
              f"(ratio to baseline {b1 / f0:.4f});  128 draws : {n_full / f1 / 1e6:6.2f} M stars/s "
              f"(ratio {b1 / f1:.4f})")
    if before:
        (f0b, f1b), (f0a, f1a) = res[mods[0][0]], res["after"]
        print(f"speed-up after/before: 0 draws {f0b / f0a:5.2f} x, 128 draws {f1b / f1a:5.2f} x")
        m = min(n_full, 200_000)
        same = same_outputs(mods[0][1], _core, a[:m], b[:m], logt_err=st[:m], logl_err=sl[:m], corr=0.3,
                            feh=0.0, n_draws=128)
        print(f"identical columns before/after ({m} stars, 128 draws): {same}")
    z1, z2 = _core._draws(128, 20240601)
    rho = np.full(n_mc, 0.3)
    core = median_time(lambda: _core._mc_counts(sm, lt[:n_mc], ll[:n_mc], st[:n_mc], sl[:n_mc], rho, z1, z2),
                       repeats=repeats)
    print(f"Monte Carlo core alone (128)    : {n_mc / core / 1e6:8.2f} M stars/s")


if __name__ == "__main__":
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--before", help="git revision whose classifier core is timed beside the current one")
    ap.add_argument("--rows", type=int, default=1_000_000)
    args = ap.parse_args()
    main(n_full=args.rows, before=args.before)
