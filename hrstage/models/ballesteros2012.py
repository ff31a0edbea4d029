"""Ballesteros (2012) blackbody-based B-V <-> Teff formula.

References
----------
Ballesteros, F. J. 2012, EPL 97, 34008, "New insights into black bodies" (eq. 14 per public
transcriptions; equation number not verified). formulae.md §5.1.

    Teff = 4600 K [1 / (0.92 (B-V) + 1.7) + 1 / (0.92 (B-V) + 0.62)]

A blackbody approximation: good for colouring plot symbols, **not** for quantitative Teff of hot
or cool stars; hrstage never uses it to place stars on the HR diagram. Accepted colour range
-0.4 <= B-V <= 2.0 (our choice; the formula has a pole at B-V = -0.674); NaN outside.
"""

from __future__ import annotations

import numpy as np

COLOUR_RANGE = (-0.4, 2.0)
CITATION = "Ballesteros 2012, EPL 97, 34008"


def teff(b_v):
    """Teff (K) from B-V; NaN outside :data:`COLOUR_RANGE`."""
    c = np.asarray(b_v, dtype=float)
    ok = (c >= COLOUR_RANGE[0]) & (c <= COLOUR_RANGE[1])
    t = 4600.0 * (1.0 / (0.92 * c + 1.7) + 1.0 / (0.92 * c + 0.62))
    return np.where(ok, t, np.nan)


def b_v(teff_k):
    """Inverse of :func:`teff` (closed form): B-V from Teff in K; NaN where Teff <= 0."""
    t = np.asarray(teff_k, dtype=float)
    d = np.where(t > 0, t / 4600.0, np.nan)
    return (2.0 - 2.32 * d + np.sqrt(4.0 + 1.1664 * d * d)) / (1.84 * d)
