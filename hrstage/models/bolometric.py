"""Bolometric corrections: Flower (1996) / Torres (2010) BC_V and Andrae et al. (2018) BC_G.

References
----------
Flower, P. J. 1996, ApJ 469, 355, "Transformations from theoretical Hertzsprung-Russell diagrams
to color-magnitude diagrams: effective temperatures, B-V colors, and bolometric corrections".
Torres, G. 2010, AJ 140, 1158, "On the use of empirical bolometric corrections for stars",
Table 1 (the corrected re-print of Flower's BC_V(log Teff) polynomial coefficients).
Andrae, R., Fouesneau, M., Creevey, O., et al. 2018, A&A 616, A8, "Gaia Data Release 2: first
stellar parameters from Apsis", the FLAME bolometric correction BC_G(Teff) and its uncertainty
(Gaia DR2 documentation §8.3.3, eq. 8.6 for its use with M_bol,sun = 4.74).
Coefficients as transcribed and cross-checked in the project's ``reference/formulae.md`` §4.1–4.2.

Zero points (important)
-----------------------
* Flower's BC_V scale gives BC_V,sun = -0.080 mag; with the measured V_sun = -26.76 ± 0.03
  (Torres 2010) the consistent solar bolometric magnitude is :data:`FLOWER_MBOL_SUN` = 4.73, not
  the IAU 4.74. Use ``log L = -0.4 (M_V + BC_V - 4.73)`` with these coefficients (using 4.74
  instead shifts L by 0.9 %). The exact derivation is from memory (formulae.md §4.1 [M]).
* Andrae's BC_G goes with :data:`IAU_MBOL_SUN` = 4.74 (IAU 2015 Resolution B2), as in the Gaia DR2
  FLAME documentation.

Validity
--------
* Flower BC_V: fitted to stars of all luminosity classes from M to O type. This module accepts
  :data:`FLOWER_LOGT_RANGE` = 3.30 <= log Teff <= 4.78 (about 2000-60 000 K; the limits are
  ours, chosen to bracket Flower's calibrating sample, from memory) and returns NaN outside it.
  The cool branch (log Teff < 3.70) is poorly constrained; Torres warns against it for M dwarfs.
  The three polynomial pieces do not join: jumps of 0.022 mag at log Teff = 3.70 and 0.003 mag at
  3.90; the upper piece owns each break point here.
* Andrae BC_G: defined only for 3300 <= Teff <= 8000 K (:data:`ANDRAE_TEFF_RANGE`); NaN outside.
  Two pieces (3300-4000 K and 4000-8000 K) with a 0.004 mag step at 4000 K; the hot piece owns
  4000 K. The sigma coefficients b_i come from a single transcription (formulae.md §4.2:
  provisional).

All functions take plain float arrays (Teff in K) and are vectorised; NaN in gives NaN out.
"""

from __future__ import annotations

import numpy as np

#: Solar bolometric magnitude consistent with Flower's BC_V scale and V_sun = -26.76 (Torres 2010).
FLOWER_MBOL_SUN = 4.73
#: IAU 2015 Resolution B2 nominal solar bolometric magnitude (L0 = 3.0128e28 W, L_sun = 3.828e26 W).
IAU_MBOL_SUN = 4.74
#: log10 Teff range over which :func:`bc_v_flower` is evaluated (outside: NaN).
FLOWER_LOGT_RANGE = (3.30, 4.78)
#: Teff range (K) of the Andrae et al. 2018 BC_G fit (outside: NaN).
ANDRAE_TEFF_RANGE = (3300.0, 8000.0)
#: Reference temperature of the Andrae polynomial (K).
ANDRAE_TEFF_REF = 5772.0

# Torres (2010) Table 1, BC_V = sum_i c_i x**i with x = log10 Teff; three Teff pieces.
_FLOWER_BREAKS = (3.70, 3.90)
_FLOWER_COOL = (-0.190537291496456e05, 0.155144866764412e05, -0.421278819301717e04,
                0.381476328422343e03)
_FLOWER_MID = (-0.370510203809015e05, 0.385672629965804e05, -0.150651486316025e05,
               0.261724637119416e04, -0.170623810323864e03)
_FLOWER_HOT = (-0.118115450538963e06, 0.137145973583929e06, -0.636233812100225e05,
               0.147412923562646e05, -0.170587278406872e04, 0.788731721804990e02)

# Andrae et al. (2018): BC_G = sum_i a_i (Teff - 5772)**i, sigma = sum_i b_i (Teff - 5772)**i.
_ANDRAE_A_HOT = (6.000e-02, 6.731e-05, -6.647e-08, 2.859e-11, -7.197e-15)    # 4000-8000 K
_ANDRAE_A_COOL = (1.749e00, 1.977e-03, 3.737e-07, -8.966e-11, -4.183e-14)    # 3300-4000 K
_ANDRAE_B_HOT = (2.634e-02, 2.438e-05, -1.129e-09, -6.722e-12, 1.635e-15)
_ANDRAE_B_COOL = (-2.487e00, -1.876e-03, 2.128e-07, 3.807e-10, 6.570e-14)
_ANDRAE_BREAK = 4000.0


def _poly(coeffs, x):
    """Horner evaluation of sum_i coeffs[i] * x**i on an array."""
    out = np.full_like(x, coeffs[-1])
    for c in coeffs[-2::-1]:
        out = out * x + c
    return out


def bc_v_flower(teff):
    """Flower (1996) V-band bolometric correction, Torres (2010) Table 1 coefficients.

    Parameters
    ----------
    teff : array_like
        Effective temperature in K.

    Returns
    -------
    numpy.ndarray
        BC_V in mag (to be used with M_bol,sun = :data:`FLOWER_MBOL_SUN` = 4.73); NaN where
        log10 Teff lies outside :data:`FLOWER_LOGT_RANGE` or Teff is not finite and positive.
    """
    t = np.asarray(teff, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        x = np.log10(np.where(t > 0, t, np.nan))
    lo, hi = FLOWER_LOGT_RANGE
    ok = (x >= lo) & (x <= hi)
    x = np.where(ok, x, np.nan)
    cool = _poly(_FLOWER_COOL, x)
    mid = _poly(_FLOWER_MID, x)
    hot = _poly(_FLOWER_HOT, x)
    out = np.where(x < _FLOWER_BREAKS[0], cool, np.where(x < _FLOWER_BREAKS[1], mid, hot))
    return np.where(ok, out, np.nan)


def _andrae(teff, hot_coeffs, cool_coeffs):
    t = np.asarray(teff, dtype=float)
    lo, hi = ANDRAE_TEFF_RANGE
    ok = (t >= lo) & (t <= hi)
    dt = np.where(ok, t - ANDRAE_TEFF_REF, np.nan)
    out = np.where(t >= _ANDRAE_BREAK, _poly(hot_coeffs, dt), _poly(cool_coeffs, dt))
    return np.where(ok, out, np.nan)


def bc_g_andrae(teff):
    """Andrae et al. (2018) Gaia G-band bolometric correction.

    Parameters
    ----------
    teff : array_like
        Effective temperature in K.

    Returns
    -------
    numpy.ndarray
        BC_G in mag (to be used with M_bol,sun = :data:`IAU_MBOL_SUN` = 4.74); NaN outside
        3300-8000 K. The fit knows nothing of log g or [Fe/H].
    """
    return _andrae(teff, _ANDRAE_A_HOT, _ANDRAE_A_COOL)


def bc_g_andrae_sigma(teff):
    """Uncertainty (1 sigma, mag) of :func:`bc_g_andrae` from the Andrae et al. (2018) b_i.

    The b_i come from a single public transcription (formulae.md §4.2, provisional); the
    polynomial is clipped at 0 from below. NaN outside 3300-8000 K.
    """
    return np.maximum(_andrae(teff, _ANDRAE_B_HOT, _ANDRAE_B_COOL), 0.0)


def mbol_from_lum(logl, mbol_sun=IAU_MBOL_SUN):
    """Absolute bolometric magnitude from log10(L/Lsun): M_bol = M_bol,sun - 2.5 log L."""
    return mbol_sun - 2.5 * np.asarray(logl, dtype=float)


def logl_from_mbol(mbol, mbol_sun=IAU_MBOL_SUN):
    """log10(L/Lsun) from an absolute bolometric magnitude: -0.4 (M_bol - M_bol,sun)."""
    return -0.4 * (np.asarray(mbol, dtype=float) - mbol_sun)
