"""Linear error propagation into correlated (log Teff, log L) errors.

Every independent error source k with 1-sigma s_k moves log Teff by a_k s_k and log L by b_k s_k;
the covariance is the sum over sources. Derivatives of the relations come from vectorised finite
differences (:func:`derivative`).
"""

from __future__ import annotations

import numpy as np


class Propagator:
    """Accumulates var(log T), var(log L) and cov(log T, log L) over independent error sources."""

    def __init__(self, n: int):
        self.var_t = np.zeros(n)
        self.var_l = np.zeros(n)
        self.cov = np.zeros(n)

    def add(self, sigma, dlogt=0.0, dlogl=0.0):
        """Add one source of 1-sigma ``sigma`` with partial derivatives ``dlogt``, ``dlogl``."""
        zero_t = np.ndim(dlogt) == 0 and float(dlogt) == 0.0
        zero_l = np.ndim(dlogl) == 0 and float(dlogl) == 0.0
        # a source that moves only one coordinate adds nothing to the other nor to the covariance
        # (except where sigma is not finite: 0 * inf = NaN must propagate as before)
        if zero_t or zero_l:
            s = np.asarray(sigma, dtype=float)
            if not np.isfinite(s).all():
                zero_t = zero_l = False
        a = None if zero_t else np.asarray(dlogt, dtype=float) * sigma
        b = None if zero_l else np.asarray(dlogl, dtype=float) * sigma
        if a is not None:
            self.var_t = self.var_t + a * a
        if b is not None:
            self.var_l = self.var_l + b * b
        if a is not None and b is not None:
            self.cov = self.cov + a * b
        else:  # 0 * NaN is NaN: keep marking the covariance where the other term is not finite
            other = a if a is not None else b
            if other is not None and not np.isfinite(other).all():
                self.cov = self.cov + np.where(np.isfinite(other), 0.0, np.nan)

    def result(self):
        """(logt_err, logl_err, corr); corr is 0 where either error vanishes."""
        st = np.sqrt(self.var_t)
        sl = np.sqrt(self.var_l)
        denom = st * sl
        with np.errstate(invalid="ignore", divide="ignore"):
            corr = np.where(denom > 0, self.cov / denom, 0.0)
        corr = np.where(np.isnan(self.cov), np.nan, np.clip(corr, -1.0, 1.0))
        return st, sl, corr


def derivative(func, x, h, f0=None):
    """d func / dx by finite differences, robust at the breaks and edges of piecewise fits.

    Central differences where both neighbours are valid; otherwise the one-sided difference that
    is valid. Where the forward and backward differences both exist, the one of smaller size is
    kept, so that a step between two pieces of a fit (e.g. a 0.004 mag jump) is never read as a
    slope. ``f0``: ``func(x)`` if already known (saves one evaluation; same result).
    """
    x = np.asarray(x, dtype=float)
    f0 = func(x) if f0 is None else np.asarray(f0, dtype=float)
    fp = func(x + h)
    fm = func(x - h)
    dp = fp - f0
    dp /= h
    dm = f0 - fm
    dm /= h
    fin_p = np.isfinite(dp)
    both = fin_p & np.isfinite(dm)
    adp, adm = np.abs(dp), np.abs(dm)
    # a jump shows up as forward and backward slopes that disagree strongly
    jump = np.abs(dp - dm) > 0.5 * (adp + adm) + 1e-12
    jump &= both
    out = dp + dm
    out *= 0.5                                  # central difference
    pick = np.where(adp < adm, dp, dm)          # the smaller one-sided slope
    np.copyto(out, pick, where=jump)
    np.copyto(out, np.where(fin_p, dp, dm), where=~both)  # one-sided where only one is valid
    return out


def derivative_rows(func, x, h, rows, f0=None, fill=0.0):
    """:func:`derivative` evaluated only on the rows ``rows`` (bool mask or indices), ``fill``
    elsewhere. ``func(xs, idx)`` evaluates the relation on the values ``xs`` of rows ``idx``
    (so that per-row parameters can be taken on the same rows); ``f0``: full-length values of
    ``func`` at ``x`` if known. Same numbers on those rows as :func:`derivative` on all rows."""
    x = np.asarray(x, dtype=float)
    idx = np.flatnonzero(rows) if np.asarray(rows).dtype == bool else np.asarray(rows, dtype=np.intp)
    out = np.full(x.shape, fill, dtype=float)
    if idx.size:
        out[idx] = derivative(lambda xs: func(xs, idx), x[idx], h, None if f0 is None else np.asarray(f0)[idx])
    return out
