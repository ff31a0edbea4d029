"""The Monte Carlo stage probabilities, before/after a change, side by side in one run.

``--before REV`` loads ``hrstage/classifier/_core.py`` of git revision REV as a second module
(the stage maps, layer 2, are the current ones) and times it beside the working tree on the same
stars, interleaved (the order alternates from one repeat to the next), reporting medians of the
wall-clock time and of the CPU time of this process (``time.process_time``: the machine may be
shared, and in a file run the writer thread uses the other core, so CPU time is the figure that
matters). Two levels are timed:

1. ``classify_hr(..., feh=per-star array, n_draws=DEFAULT_DRAWS)`` on chunks of ``--chunk-rows``
   stars, as the command line does (labels, probabilities, masses, flags; no texts);
2. the Monte Carlo counts alone (``_mc_counts``) on the stars with errors of each [Fe/H] map.

The stars are the invented population of ``bench_pipeline.py`` (``synthetic_batch``: 1-3 % Teff
and 5-20 % L errors, [Fe/H] spread over the grid). Both sides must give identical counts,
probabilities, labels, masses and flags: the script says so, and exits non-zero if not.
"""

from __future__ import annotations

import argparse
import os
import sys
import time

for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[var] = "1"

import numpy as np  # noqa: E402
from bench_classify import load_before  # noqa: E402
from bench_pipeline import synthetic_batch  # noqa: E402

from hrstage.classifier import _core  # noqa: E402
from hrstage.defaults import DEFAULT_DRAWS  # noqa: E402
from hrstage.stagemap import stage_map  # noqa: E402


def catalogue(rows: int, seed: int = 20240611):
    """(log Teff, log L, their errors, [Fe/H]) of ``rows`` synthetic stars."""
    b = synthetic_batch(rows, np.random.default_rng(seed))
    teff, teff_err = b["teff"].to_numpy(), b["teff_err"].to_numpy()
    lum, lum_err = b["lum"].to_numpy(), b["lum_err"].to_numpy()
    ln10 = np.log(10.0)
    return (np.log10(teff), np.log10(lum), teff_err / (teff * ln10), lum_err / (lum * ln10),
            b["feh"].to_numpy())


def timed(fn):
    """(wall s, CPU s) of one call."""
    w0, c0 = time.perf_counter(), time.process_time()
    fn()
    return time.perf_counter() - w0, time.process_time() - c0


def side_by_side(fns: dict, repeats: int) -> dict:
    """Median (wall, CPU) of each function, runs interleaved, order alternating per repeat."""
    names = list(fns)
    got = {k: [] for k in names}
    for r in range(repeats):
        for k in (names if r % 2 == 0 else names[::-1]):
            got[k].append(timed(fns[k]))
    return {k: tuple(np.median(np.array(v), axis=0)) for k, v in got.items()}


def same(a, b) -> bool:
    return np.array_equal(a, b, equal_nan=a.dtype.kind == "f")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--before", default="HEAD", help="git revision timed beside the working tree (default HEAD)")
    ap.add_argument("--rows", type=lambda s: int(float(s)), default=500_000, help="stars (default 500000)")
    ap.add_argument("--chunk-rows", type=lambda s: int(float(s)), default=100_000,
                    help="stars per classify_hr call (default 100000, the command line's chunk)")
    ap.add_argument("--repeats", type=int, default=5, help="repeats; medians are printed (default 5)")
    args = ap.parse_args(argv)
    lt, ll, st, sl, feh = catalogue(args.rows)
    before = load_before(args.before)
    mods = {f"before ({args.before})": before, "after (working tree)": _core}
    chunks = [slice(s, min(args.rows, s + args.chunk_rows)) for s in range(0, args.rows, args.chunk_rows)]

    def classify(mod, keep=False):
        out = []
        for c in chunks:
            r = mod.classify_hr(lt[c], ll[c], logt_err=st[c], logl_err=sl[c], feh=feh[c], n_draws=DEFAULT_DRAWS,
                                branches=False)
            if keep:
                out.append(r)
        return out

    # identical results (this also builds or loads every map before the timing)
    ok = True
    for ra, rb in zip(classify(before, True), classify(_core, True)):
        for name in ("code", "proba", "mass", "mass_err", "mass_code", "flags"):
            ok &= same(getattr(ra, name), getattr(rb, name))
    # the Monte Carlo counts alone, per [Fe/H] map of the first chunk's grouping
    z1, z2 = _core._draws(DEFAULT_DRAWS, 20240601)
    _, groups, _ = _core._group_feh(feh, args.rows)
    jobs = [(stage_map(f), lt[i], ll[i], st[i], sl[i], np.zeros(len(i))) for f, i in groups.items()]
    counts = {k: [m._mc_counts(*j, z1, z2) for j in jobs] for k, m in mods.items()}
    ok &= all(same(a, b) for a, b in zip(*counts.values()))
    del counts
    print(f"{args.rows} stars, {len(chunks)} chunks, {len(jobs)} [Fe/H] maps, {DEFAULT_DRAWS} draws; "
          f"identical results before/after: {ok}")
    for title, fns in (
        ("classify_hr per chunk (no texts, no branches)", {k: (lambda m=m: classify(m)) for k, m in mods.items()}),
        ("Monte Carlo counts alone (_mc_counts)",
         {k: (lambda m=m: [m._mc_counts(*j, z1, z2) for j in jobs]) for k, m in mods.items()}),
    ):
        res = side_by_side(fns, args.repeats)
        (kb, (wb, cb)), (ka, (wa, ca)) = res.items()
        print(f"{title}, median of {args.repeats}:")
        for k, (w, c) in res.items():
            print(f"  {k:>24s}: wall {w:7.3f} s  CPU {c:7.3f} s  ({args.rows / c / 1e6:5.2f} M stars per CPU s)")
        print(f"  {'before / after':>24s}: wall {wb / wa:5.2f} x  CPU {cb / ca:5.2f} x")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
