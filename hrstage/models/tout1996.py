"""Zero-age main sequence of Tout, Pols, Eggleton & Han (1996).

Citation: Tout C. A., Pols O. R., Eggleton P. P., Han Z., 1996, "Zero-age main-sequence radii and
luminosities as analytic functions of mass and metallicity", MNRAS 281, 257.

- Eq. (1): ``L = (alpha M^5.5 + beta M^11) / (gamma + M^3 + delta M^5 + epsilon M^7 + zeta_L M^8
  + eta M^9.5)``
- Eq. (2): ``R = (theta M^2.5 + iota M^6.5 + kappa M^11 + lambda M^19 + mu M^19.5)
  / (nu + xi M^2 + omicron M^8.5 + M^18.5 + pi M^19.5)``
- Eqs. (3)-(4): each coefficient is a quartic in ``zeta = log10(Z/0.02)``.
- Coefficients: Tables 1 (luminosity) and 2 (radius) of the paper, typed in from the verified
  transcription in the project's reference notes (formulae.md section 1.2, checked against two
  independent public implementations and against original-code output to 10 significant digits).
  Equation numbers come from code comments, not from the paper PDF.

Validity: 0.1 <= M <= 100 Msun and 1e-4 <= Z <= 0.03 (the Pols et al. 1998 model grid).
Masses outside give NaN (masked, never extrapolated); Z outside raises
(:func:`hrstage.models.metallicity.check_z`), so clip it first with
:func:`~hrstage.models.metallicity.clip_z` and flag the star.

Units: M in Msun, L in Lsun (the models' solar luminosity), R in Rsun, Teff in K (with the IAU 2015
nominal Teff_sun = 5772 K).
"""

from __future__ import annotations

import numpy as np

from ._common import as_float, mass_mask, masked
from .metallicity import check_z, zeta as _zeta
from .stellar import teff_from_lr

#: Masses (Msun) covered by the fits.
MASS_RANGE = (0.1, 100.0)

# Table 1: rows alpha, beta, gamma, delta, epsilon, zeta_L, eta; columns a..e (zeta^0..zeta^4).
_L_TABLE = np.array(
    [
        [0.3970417, -0.32913574, 0.34776688, 0.37470851, 0.09011915],
        [8.527626, -24.41225973, 56.43597107, 37.06152575, 5.4562406],
        [0.00025546, -0.00123461, -0.00023246, 0.00045519, 0.00016176],
        [5.432889, -8.62157806, 13.44202049, 14.51584135, 3.39793084],
        [5.563579, -10.32345224, 19.4432298, 18.97361347, 4.16903097],
        [0.7886606, -2.90870942, 6.54713531, 4.05606657, 0.53287322],
        [0.00586685, -0.01704237, 0.03872348, 0.02570041, 0.00383376],
    ]
)

# Table 2: rows theta, iota, kappa, lambda, mu, nu, xi, omicron, pi.
_R_TABLE = np.array(
    [
        [1.715359, 0.62246212, -0.92557761, -1.16996966, -0.30631491],
        [6.597788, -0.42450044, -12.13339427, -10.73509484, -2.51487077],
        [10.08855, -7.11727086, -31.67119479, -24.24848322, -5.33608972],
        [1.012495, 0.3269969, -0.00923418, -0.03876858, -0.0041275],
        [0.07490166, 0.02410413, 0.07233664, 0.03040467, 0.00197741],
        [0.01077422, 0.0, 0.0, 0.0, 0.0],
        [3.082234, 0.9447205, -2.15200882, -2.49219496, -0.63848738],
        [17.84778, -7.4534569, -48.96066856, -40.05386135, -9.09331816],
        [0.00022582, -0.00186899, 0.00388783, 0.00142402, -7.671e-05],
    ]
)


def _quartic(table: np.ndarray, zt: np.ndarray) -> list[np.ndarray]:
    """Evaluate every row ``a + b zeta + c zeta^2 + d zeta^3 + e zeta^4`` (Horner)."""
    out = []
    for a, b, c, d, e in table:
        out.append(a + zt * (b + zt * (c + zt * (d + zt * e))))
    return out


def _prepare(m, z):
    m = as_float(m, "Msun")
    z = check_z(z)
    m_safe, ok = mass_mask(m, *MASS_RANGE)
    return m_safe, ok, _zeta(z)


def zams_luminosity(m, z=0.02) -> np.ndarray:
    """ZAMS luminosity (Lsun), Tout et al. 1996 eq. (1) with Table 1.

    Parameters
    ----------
    m : array_like
        Initial mass (Msun). NaN outside 0.1-100 Msun (masked).
    z : array_like, optional
        Metal mass fraction in the fits' scale (Z_sun = 0.02), 1e-4..0.03; broadcast against ``m``.
        Raises ``ValueError`` outside the range.

    Returns
    -------
    ndarray
        L_ZAMS / Lsun, shape ``broadcast(m, z)``.
    """
    m, ok, zt = _prepare(m, z)
    alpha, beta, gamma, delta, eps, zeta_l, eta = _quartic(_L_TABLE, zt)
    sm = np.sqrt(m)
    num = alpha * m**5 * sm + beta * m**11
    den = gamma + m**3 + delta * m**5 + eps * m**7 + zeta_l * m**8 + eta * m**9 * sm
    return masked(num / den, ok)


def zams_radius(m, z=0.02) -> np.ndarray:
    """ZAMS radius (Rsun), Tout et al. 1996 eq. (2) with Table 2.

    Parameters and validity as :func:`zams_luminosity` (NaN outside 0.1-100 Msun).
    """
    m, ok, zt = _prepare(m, z)
    theta, iota, kappa, lam, mu, nu, xi, omicron, pi = _quartic(_R_TABLE, zt)
    sm = np.sqrt(m)
    num = (theta * m**2 + iota * m**6) * sm + kappa * m**11 + (lam + mu * sm) * m**19
    den = nu + xi * m**2 + (omicron * m**8 + m**18 + pi * m**19) * sm
    return masked(num / den, ok)


def zams_teff(m, z=0.02) -> np.ndarray:
    """ZAMS effective temperature (K) from eqs. (1)-(2) and the Stefan-Boltzmann law.

    Uses Teff_sun = 5772 K (IAU 2015 Resolution B3). NaN outside 0.1-100 Msun.
    """
    return teff_from_lr(zams_luminosity(m, z), zams_radius(m, z))
