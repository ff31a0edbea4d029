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
        a = np.asarray(dlogt, dtype=float) * sigma
        b = np.asarray(dlogl, dtype=float) * sigma
        self.var_t = self.var_t + a * a
        self.var_l = self.var_l + b * b
        self.cov = self.cov + a * b

    def result(self):
        """(logt_err, logl_err, corr); corr is 0 where either error vanishes."""
        st = np.sqrt(self.var_t)
        sl = np.sqrt(self.var_l)
        denom = st * sl
        with np.errstate(invalid="ignore", divide="ignore"):
            corr = np.where(denom > 0, self.cov / denom, 0.0)
        corr = np.where(np.isnan(self.cov), np.nan, np.clip(corr, -1.0, 1.0))
        return st, sl, corr


def derivative(func, x, h):
    """d func / dx by finite differences, robust at the breaks and edges of piecewise fits.

    Central differences where both neighbours are valid; otherwise the one-sided difference that
    is valid. Where the forward and backward differences both exist, the one of smaller size is
    kept, so that a step between two pieces of a fit (e.g. a 0.004 mag jump) is never read as a
    slope.
    """
    x = np.asarray(x, dtype=float)
    f0 = func(x)
    fp = func(x + h)
    fm = func(x - h)
    dp = (fp - f0) / h
    dm = (f0 - fm) / h
    both = np.isfinite(dp) & np.isfinite(dm)
    central = 0.5 * (dp + dm)
    # a jump shows up as forward and backward slopes that disagree strongly
    jump = both & (np.abs(dp - dm) > 0.5 * (np.abs(dp) + np.abs(dm)) + 1e-12)
    pick = np.where(np.abs(dp) < np.abs(dm), dp, dm)
    out = np.where(both, np.where(jump, pick, central), np.where(np.isfinite(dp), dp, dm))
    return out
