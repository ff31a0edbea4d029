"""Metallicity variables of the Tout et al. (1996) and Hurley, Pols & Tout (2000) fits.

Both fits were made to the Pols et al. (1998) models, whose solar metallicity is Z = 0.02 (not
the modern 0.014-0.015). Inside hrstage a star's [Fe/H] is turned into the fits' Z with the same
scale, Z = 0.02 x 10^[Fe/H]; no rescaling to a modern solar Z is done, because the coefficients only
know their own scale (reference notes, formulae.md section 0 and 6.3 item 7).

- ``zeta = log10(Z / 0.02)`` is the papers' metallicity variable ("zeta").
- Validity: 1e-4 <= Z <= 0.03 ([Fe/H] from -2.3 to +0.18 in this scale), the range of the model
  grid behind both fits. :func:`check_z` raises outside it; :func:`clip_z` moves values to the
  nearest edge and says which ones it moved, so that the caller can flag them.

References: Tout C. A., Pols O. R., Eggleton P. P., Han Z., 1996, MNRAS 281, 257;
Hurley J. R., Pols O. R., Tout C. A., 2000, MNRAS 315, 543; Pols O. R. et al. 1998, MNRAS 298, 525.
"""

from __future__ import annotations

import numpy as np

from ..errors import HrstageInputError
from ._common import as_float

#: Solar metallicity of the fits (mass fraction); the zero point of ``zeta``.
Z_SUN_FITS = 0.02
#: Lowest metallicity covered by the fits.
Z_MIN = 1e-4
#: Highest metallicity covered by the fits.
Z_MAX = 0.03


def z_from_feh(feh) -> np.ndarray:
    """Metal mass fraction Z in the fits' scale, ``Z = 0.02 * 10**feh``.

    Parameters
    ----------
    feh : array_like
        [Fe/H] in dex. NaN stays NaN.

    Returns
    -------
    ndarray
        Z (dimensionless). Not clipped: pass it through :func:`clip_z` or :func:`check_z`.
    """
    return Z_SUN_FITS * 10.0 ** as_float(feh)


def feh_from_z(z) -> np.ndarray:
    """[Fe/H] (dex) of a metal mass fraction in the fits' scale, ``log10(Z / 0.02)``."""
    z = as_float(z)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.log10(z / Z_SUN_FITS)


def zeta(z) -> np.ndarray:
    """The papers' metallicity variable ``zeta = log10(Z / 0.02)`` (equal to :func:`feh_from_z`)."""
    return feh_from_z(z)


def clip_z(z) -> tuple[np.ndarray, np.ndarray]:
    """Move metallicities into the fits' range [Z_MIN, Z_MAX].

    Parameters
    ----------
    z : array_like
        Metal mass fraction(s).

    Returns
    -------
    z_clipped : ndarray
        ``z`` with values below ``Z_MIN`` set to ``Z_MIN`` and above ``Z_MAX`` set to ``Z_MAX``.
        NaN stays NaN (and is not reported as clipped).
    was_clipped : ndarray of bool
        True where a value was moved; flag those stars, their boundaries are those of the edge
        metallicity, not of their own.
    """
    z = as_float(z)
    low = z < Z_MIN
    high = z > Z_MAX
    return np.where(low, Z_MIN, np.where(high, Z_MAX, z)), low | high


def check_z(z) -> np.ndarray:
    """Return ``z`` as a float array after checking it lies within [Z_MIN, Z_MAX].

    Raises
    ------
    HrstageInputError
        (a ``ValueError``) naming the first offending value when any Z is outside the range or
        not finite. The relations never extrapolate in metallicity.
    """
    z = as_float(z)
    bad = ~((z >= Z_MIN) & (z <= Z_MAX))
    if np.any(bad):
        first = z[bad].flat[0] if z.ndim else float(z)
        n = int(np.count_nonzero(bad))
        more = f" ({n} values out of range)" if n > 1 else ""
        raise HrstageInputError(
            f"metallicity Z = {first!r} is outside the range of the Tout/Hurley fits "
            f"[{Z_MIN}, {Z_MAX}] (i.e. [Fe/H] {feh_from_z(Z_MIN):+.2f} to {feh_from_z(Z_MAX):+.2f} "
            f"with Z_sun = 0.02){more}; clip it with hrstage.models.metallicity.clip_z and flag the star"
        )
    return z
