"""Casagrande et al. (2021) Gaia (BP-RP)_0 - Teff relation with log g and [Fe/H] (IRFM).

References
----------
Casagrande, L., Lin, J., Rains, A. D., et al. 2021, MNRAS 507, 2684, "The GALAH survey: effective
temperature calibration from the InfraRed Flux Method in the Gaia system". Coefficients for the
Gaia DR2 and DR3 photometry and the validity limits as coded in the first author's own public
implementation (formulae.md §5.4).

    Teff = c0 + c1 X + c2 X**2 + c3 X**3 + c4 X**5 + c5 g + c6 g X + c7 g X**2 + c8 g X**3
           + c9 g X**5 + c10 F + c11 F X + c12 F X**2 + c13 F X**3 + c14 F g X

with X = (BP-RP)_0, g = log g, F = [Fe/H].

Validity (enforced, NaN outside): dwarfs (log g > 3.2) 0.20 <= X <= 2.00, giants (log g <= 3.2)
0.20 <= X <= 2.55; 0 <= log g <= 5; [Fe/H] <= 0.6, values below -4 set to -4 (as the authors do).
Use the coefficient set matching the photometry (``release="dr3"`` for Gaia EDR3/DR3, ``"dr2"``
for DR2).

Uncertainty: the authors add a 20 K zero-point uncertainty to all their errors
(:data:`ZERO_POINT_SIGMA`). The scatter of the (BP-RP) relation itself, :data:`SIGMA`, is taken as
70 K — a value from memory of the order of the 60-80 K the pure-Gaia-colour relations show
(Mucciarelli et al. 2021 abstract); check it against the paper's table before relying on it.
"""

from __future__ import annotations

import numpy as np

_C = {
    "dr2": (7928.0505, -3663.1140, 803.3017, -9.3727, 0.0, 325.1324, -500.1160, 279.4832,
            -53.5062, 0.0, -2.4205, -128.0354, 49.4933, 5.9146, 41.3650),
    "dr3": (7980.8845, -4138.3457, 1264.9366, -130.4388, 0.0, 285.8393, -324.2196, 106.8511,
            -4.9825, 0.0, 4.5138, -203.7774, 126.6981, -14.7442, 40.7376),
}
RELEASES = tuple(_C)
LOGG_SPLIT = 3.2
DWARF_RANGE = (0.20, 2.00)
GIANT_RANGE = (0.20, 2.55)
LOGG_RANGE = (0.0, 5.0)
FEH_MAX = 0.6
FEH_FLOOR = -4.0
ZERO_POINT_SIGMA = 20.0  # K, Casagrande et al. 2021 (author's code)
SIGMA = 70.0             # K, from memory (see module docstring)
CITATION = "Casagrande et al. 2021, MNRAS 507, 2684"


def _evaluate(x, g, f, c):
    x2 = x * x
    x3 = x2 * x
    x5 = x3 * x2
    return (c[0] + c[1] * x + c[2] * x2 + c[3] * x3 + c[4] * x5
            + g * (c[5] + c[6] * x + c[7] * x2 + c[8] * x3 + c[9] * x5)
            + f * (c[10] + c[11] * x + c[12] * x2 + c[13] * x3 + c[14] * g * x))


def in_range(bp_rp0, logg, feh=0.0):
    """Boolean mask of the relation's validity (colour range by log g, log g range, [Fe/H] <= 0.6)."""
    x, g, f = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (bp_rp0, logg, feh)))
    dwarf = g > LOGG_SPLIT
    hi = np.where(dwarf, DWARF_RANGE[1], GIANT_RANGE[1])
    return (x >= DWARF_RANGE[0]) & (x <= hi) & (g >= LOGG_RANGE[0]) & (g <= LOGG_RANGE[1]) & (f <= FEH_MAX)


def teff(bp_rp0, logg, feh=0.0, *, release="dr3"):
    """Teff (K) from dereddened Gaia BP-RP, log g (cgs) and [Fe/H].

    Parameters
    ----------
    bp_rp0 : array_like
        Dereddened (BP-RP)_0 in mag.
    logg : array_like
        Surface gravity log10(g / cm s^-2).
    feh : array_like, default 0.0
        [Fe/H] in dex (values below -4 are set to -4).
    release : {"dr3", "dr2"}
        Coefficient set matching the Gaia photometry.

    Returns
    -------
    numpy.ndarray
        Teff in K, NaN outside the validity range.
    """
    if release not in _C:
        raise ValueError(f"release must be one of {RELEASES}, got {release!r}")
    x, g, f = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (bp_rp0, logg, feh)))
    ok = in_range(x, g, f)
    t = _evaluate(x, g, np.maximum(f, FEH_FLOOR), _C[release])
    return np.where(ok, t, np.nan)
