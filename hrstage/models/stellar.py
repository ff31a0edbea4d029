"""Stefan-Boltzmann law, surface gravity and bolometric magnitudes in nominal solar units.

Solar values follow IAU 2015 Resolutions B2 and B3 through astropy's ``iau2015`` constants:

- IAU 2015 B3 (Prsa et al. 2016, AJ 152, 41): nominal L_sun = 3.828e26 W, R_sun = 6.957e8 m,
  Teff_sun = 5772 K, (GM)_sun = 1.3271244e20 m^3 s^-2. These are nominal *units*, used for every
  L/Lsun and R/Rsun conversion.
- IAU 2015 B2 (Mamajek et al. 2015, arXiv:1510.06262): M_bol = -2.5 log10(L / L0) with
  L0 = 3.0128e28 W, which gives M_bol,sun = 4.74 for the nominal solar luminosity.

Relations (all exact, no validity range beyond positivity; non-positive inputs give NaN):

- Stefan-Boltzmann: ``L/Lsun = (R/Rsun)^2 (Teff/Teff_sun)^4``.
- Surface gravity: ``g = G M / R^2``, so ``log g = LOGG_SUN + log10(M/Msun) - 2 log10(R/Rsun)``
  (cgs, dex).
- Bolometric magnitude: ``M_bol = MBOL_SUN - 2.5 log10(L/Lsun)``.

Units: L in Lsun, R in Rsun, M in Msun, Teff in K, log g in dex (cm s^-2).
"""

from __future__ import annotations

import numpy as np
from astropy.constants import iau2015

from ._common import as_float

#: Nominal solar effective temperature (K), IAU 2015 Resolution B3. The nominal L_sun, R_sun and
#: sigma_SB of astropy give 5772.003 K, consistent to 1e-6 (checked in the tests).
TEFF_SUN = 5772.0

#: Solar absolute bolometric magnitude, IAU 2015 Resolution B2 (4.7399959... for the nominal L_sun,
#: rounded to 4.74 by the resolution).
MBOL_SUN = 4.74

#: Solar surface gravity, log10(g / (cm s^-2)), from astropy's nominal (GM)_sun and R_sun
#: (IAU 2015 B3): 4.4380...
LOGG_SUN = float(np.log10((iau2015.GM_sun / iau2015.R_sun**2).to_value("cm s-2")))


def _positive_log10(x) -> np.ndarray:
    x = as_float(x)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(x > 0, np.log10(np.where(x > 0, x, 1.0)), np.nan)


def teff_from_lr(l, r) -> np.ndarray:
    """Effective temperature (K) from luminosity (Lsun) and radius (Rsun).

    ``Teff = Teff_sun (L / R^2)^(1/4)``; NaN where L or R is not positive.
    """
    l = as_float(l)
    r = as_float(r)
    with np.errstate(divide="ignore", invalid="ignore"):
        ok = (l > 0) & (r > 0)
        return np.where(ok, TEFF_SUN * (np.where(ok, l, 1.0) / np.where(ok, r, 1.0) ** 2) ** 0.25, np.nan)


def radius_from_lt(l, teff) -> np.ndarray:
    """Radius (Rsun) from luminosity (Lsun) and effective temperature (K).

    ``R = sqrt(L) (Teff_sun / Teff)^2``; NaN where L or Teff is not positive.
    """
    l = as_float(l)
    t = as_float(teff)
    with np.errstate(divide="ignore", invalid="ignore"):
        ok = (l > 0) & (t > 0)
        return np.where(ok, np.sqrt(np.where(ok, l, 1.0)) * (TEFF_SUN / np.where(ok, t, 1.0)) ** 2, np.nan)


def logl_from_rt(r, teff) -> np.ndarray:
    """log10(L/Lsun) from radius (Rsun) and effective temperature (K).

    ``log L = 2 log R + 4 log(Teff / Teff_sun)``; NaN where R or Teff is not positive.
    """
    return 2.0 * _positive_log10(r) + 4.0 * (_positive_log10(teff) - np.log10(TEFF_SUN))


def logg_from_mr(m, r) -> np.ndarray:
    """Surface gravity log10(g / cm s^-2) from mass (Msun) and radius (Rsun).

    ``log g = LOGG_SUN + log M - 2 log R``; NaN where M or R is not positive.
    """
    return LOGG_SUN + _positive_log10(m) - 2.0 * _positive_log10(r)


def radius_from_mlogg(m, logg) -> np.ndarray:
    """Radius (Rsun) from mass (Msun) and log g (cgs dex): ``R = sqrt(M 10^(LOGG_SUN - log g))``.

    NaN where M is not positive.
    """
    logm = _positive_log10(m)
    return 10.0 ** (0.5 * (logm + LOGG_SUN - as_float(logg)))


def logl_from_teff_logg_mass(teff, logg, m) -> np.ndarray:
    """log10(L/Lsun) from Teff (K), log g (cgs dex) and mass (Msun).

    Combines ``R^2 = G M / g`` with the Stefan-Boltzmann law:
    ``log L = log M - (log g - LOGG_SUN) + 4 log(Teff / Teff_sun)``. NaN where Teff or M is not
    positive. The result is only as good as the mass: with a mass from evolutionary models it is
    model-dependent.
    """
    return (
        _positive_log10(m)
        - (as_float(logg) - LOGG_SUN)
        + 4.0 * (_positive_log10(teff) - np.log10(TEFF_SUN))
    )


def mbol_from_logl(logl) -> np.ndarray:
    """Absolute bolometric magnitude from log10(L/Lsun): ``M_bol = 4.74 - 2.5 log L`` (IAU 2015 B2)."""
    return MBOL_SUN - 2.5 * as_float(logl)


def logl_from_mbol(mbol) -> np.ndarray:
    """log10(L/Lsun) from the absolute bolometric magnitude: ``(4.74 - M_bol) / 2.5`` (IAU 2015 B2)."""
    return (MBOL_SUN - as_float(mbol)) / 2.5
