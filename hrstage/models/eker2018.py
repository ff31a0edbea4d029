"""Empirical main-sequence relations of Eker et al. (2018) from detached eclipsing binaries.

Citation: Eker Z., Bakis V., Bilir S., Soydugan F., Steer I., Soydugan E., Bakis H., Aliçavus F.,
Aslan G., Alpsoy M., 2018, "Interrelated main-sequence mass-luminosity, mass-radius, and
mass-effective temperature relations", MNRAS 479, 5491. 509 main-sequence components of detached
double-lined eclipsing binaries with 0.179 <= M <= 31 Msun.

- Mass-luminosity relation (their Table 4), ``log L = alpha log M + beta`` in six mass intervals
  (0.179-0.45, 0.45-0.72, 0.72-1.05, 1.05-2.40, 2.40-7, 7-31 Msun; upper ends inclusive).
- Mass-radius relation (their Table 5), ``R = 0.438 M^2 + 0.479 M + 0.075`` for M <= 1.5 Msun.
- Mass-Teff relation (their Table 5), ``log Teff = -0.170 (log M)^2 + 0.888 log M + 3.671`` for
  M > 1.5 Msun.
- The missing halves follow from L = 4 pi R^2 sigma Teff^4 (Teff for M <= 1.5 from MLR + MRR,
  R for M > 1.5 from MLR + MTR), as the paper does, with the IAU 2015 nominal Teff_sun = 5772 K.

Coefficients typed in from the verified transcription in the project's reference notes
(formulae.md section 3.1).

The MLR pieces do not join: L jumps at 0.45 (0.0209 -> 0.0205 Lsun), 0.72 (0.176 -> 0.149),
1.05 (1.302 -> 1.264), 2.4 (45.3 -> 39.9) and 7 Msun (2789 -> 3359). :func:`mass_from_luminosity`
handles the overlaps and the gap explicitly (see there).

Validity: 0.179 <= M <= 31 Msun (:data:`MASS_RANGE`), NaN outside (masked); these are mean
relations for main-sequence stars of roughly solar metallicity (no metallicity term). Units: Msun,
Lsun, Rsun, K.
"""

from __future__ import annotations

import numpy as np

from ._common import as_float, mass_mask, masked
from .stellar import TEFF_SUN

#: Mass range of the calibrating sample (Msun).
MASS_RANGE = (0.179, 31.0)

#: Upper mass of each MLR interval (Msun); the first interval starts at MASS_RANGE[0].
MLR_BREAKS = (0.45, 0.72, 1.05, 2.40, 7.0, 31.0)
#: (alpha, beta) of log L = alpha log M + beta per interval, Eker et al. 2018 Table 4.
MLR_COEFFS = ((2.028, -0.976), (4.572, -0.102), (5.743, -0.007), (4.329, 0.010), (3.967, 0.093), (2.865, 1.105))
#: Mass dividing the MRR (below) from the MTR (above), Msun.
M_SPLIT = 1.5

_EDGES = np.array((MASS_RANGE[0],) + MLR_BREAKS)
_ALPHA = np.array([c[0] for c in MLR_COEFFS])
_BETA = np.array([c[1] for c in MLR_COEFFS])


def _piece(m):
    """Index of the MLR interval of each mass (upper ends inclusive)."""
    return np.clip(np.searchsorted(_EDGES, m, side="left") - 1, 0, len(_ALPHA) - 1)


def _logl(m):
    i = _piece(m)
    return _ALPHA[i] * np.log10(m) + _BETA[i]


def luminosity(m) -> np.ndarray:
    """Main-sequence luminosity (Lsun) from the six-piece MLR (Table 4). NaN outside 0.179-31 Msun."""
    m, ok = mass_mask(as_float(m, "Msun"), *MASS_RANGE)
    return masked(10.0 ** _logl(m), ok)


def _mrr(m):
    return 0.438 * m**2 + 0.479 * m + 0.075


def _mtr(m):
    x = np.log10(m)
    return 10.0 ** (-0.170 * x**2 + 0.888 * x + 3.671)


def radius(m) -> np.ndarray:
    """Main-sequence radius (Rsun): MRR (Table 5) up to 1.5 Msun, from MLR + MTR above.

    NaN outside 0.179-31 Msun.
    """
    m, ok = mass_mask(as_float(m, "Msun"), *MASS_RANGE)
    r_high = np.sqrt(10.0 ** _logl(m)) * (TEFF_SUN / _mtr(m)) ** 2
    return masked(np.where(m <= M_SPLIT, _mrr(m), r_high), ok)


def teff(m) -> np.ndarray:
    """Main-sequence effective temperature (K): from MLR + MRR up to 1.5 Msun, MTR (Table 5) above.

    NaN outside 0.179-31 Msun.
    """
    m, ok = mass_mask(as_float(m, "Msun"), *MASS_RANGE)
    t_low = TEFF_SUN * (10.0 ** _logl(m) / _mrr(m) ** 2) ** 0.25
    return masked(np.where(m <= M_SPLIT, t_low, _mtr(m)), ok)


def mass_from_luminosity(l) -> np.ndarray:
    """Invert the MLR: main-sequence mass (Msun) from luminosity (Lsun).

    Because the six pieces do not join, some luminosities have two solutions and one range has
    none. This function returns a single, continuous, non-decreasing mass:

    - where two adjacent pieces both contain ``L`` (at the downward jumps at 0.45, 0.72, 1.05 and
      2.4 Msun), the two solutions are blended linearly in log L across the overlap, so that the
      result meets the lower piece at the bottom of the overlap and the upper piece at its top;
    - in the gap of the upward jump at 7 Msun (2789 < L < 3359 Lsun) the break mass 7 Msun is
      returned.

    Compared with the forward relation of the piece a mass belongs to, the blend moves masses by
    at most about 3.5 per cent (just above 0.72 Msun), inside the scatter of the relation.

    Parameters
    ----------
    l : array_like
        Luminosity (Lsun). NaN outside [L(0.179), L(31)] (about 0.0032 to 2.4e5 Lsun) or when not
        positive.

    Returns
    -------
    ndarray
        Mass (Msun).
    """
    l = as_float(l, "Lsun")
    with np.errstate(divide="ignore", invalid="ignore"):
        logl = np.where(l > 0, np.log10(np.where(l > 0, l, 1.0)), np.nan)
    lo_edges = np.log10(_EDGES[:-1])
    hi_edges = np.log10(_EDGES[1:])
    # log L range covered by each piece
    piece_lo = _ALPHA * lo_edges + _BETA
    piece_hi = _ALPHA * hi_edges + _BETA
    n = len(_ALPHA)
    logm = np.full(np.shape(logl), np.nan)
    inside = np.zeros(np.shape(logl), dtype=bool)
    for i in range(n):  # six pieces: a loop over pieces, not over stars
        cand = (logl - _BETA[i]) / _ALPHA[i]
        in_i = (logl >= piece_lo[i]) & (logl <= piece_hi[i])
        # Overlap with the next piece (downward jump at its upper break).
        if i + 1 < n and piece_lo[i + 1] < piece_hi[i]:
            ov_lo, ov_hi = piece_lo[i + 1], piece_hi[i]
            cand_next = (logl - _BETA[i + 1]) / _ALPHA[i + 1]
            w = np.clip((logl - ov_lo) / (ov_hi - ov_lo), 0.0, 1.0)
            blend = (1.0 - w) * cand + w * cand_next
            in_ov = (logl >= ov_lo) & (logl <= ov_hi)
            logm = np.where(in_ov, blend, logm)
            inside |= in_ov
            in_i = in_i & ~in_ov
        # Overlap with the previous piece was handled by the previous iteration.
        if i > 0 and piece_lo[i] < piece_hi[i - 1]:
            in_i = in_i & (logl > piece_hi[i - 1])
        logm = np.where(in_i & ~inside, cand, logm)
        inside |= in_i
        # Gap above this piece (upward jump): return the break mass.
        if i + 1 < n and piece_lo[i + 1] > piece_hi[i]:
            in_gap = (logl > piece_hi[i]) & (logl < piece_lo[i + 1])
            logm = np.where(in_gap, hi_edges[i], logm)
            inside |= in_gap
    return np.where(inside, 10.0**logm, np.nan)
