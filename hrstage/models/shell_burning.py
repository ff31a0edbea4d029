"""Time a giant spends per dex of luminosity while its core grows by hydrogen shell burning.

A hydrogen-burning shell turns a mass ``dMc`` of hydrogen (mass fraction X) into helium, releasing
``X Q dMc`` with ``Q = 0.0071 c^2`` (the 0.71 % mass defect of 4 H -> He, common practice), so

    dMc/dt = L / (X Q)

and with a core-mass--luminosity relation ``L ∝ Mc^p`` (Hurley, Pols & Tout 2000, MNRAS 315, 543,
eqs 37-38: p = 6 on the low-mass giant branch)

    dt / dlog10 L = ln(10) X Q Mc / (p L).

At L = 50 Lsun (Mc ~ 0.35 Msun, X = 0.7) this is about 2e8 yr per dex. Used for the relative
weight of the red-giant-branch and AGB hypotheses against core-helium burning. Units: Msun, Lsun,
years. Valid for shell-burning giants with degenerate cores (low-mass RGB, AGB); an approximation
above M_HeF.
"""

from __future__ import annotations

import numpy as np
from astropy import constants as const
from astropy import units as u

from ._common import as_float

#: energy per unit mass of hydrogen burnt to helium (erg/g): 0.0071 c^2 (common practice)
Q_H = 0.0071 * const.c.cgs.value**2
#: hydrogen mass fraction of the envelope (common practice, near-solar)
X_H = 0.7
_MSUN_G = const.M_sun.cgs.value
_LSUN_CGS = const.L_sun.cgs.value
_YEAR_S = u.yr.to(u.s)
#: the core growth rate this implies, dMc/dt = A L with A = 1 / (X Q), in Msun per Lsun per Myr
#: (1.36e-5; Hurley, Pols & Tout 2000 fit A_H = 1.58e-5 for low-mass giants)
A_H = _LSUN_CGS * 1.0e6 * _YEAR_S / (X_H * Q_H * _MSUN_G)


def years_per_dex(lum, mc, p=6.0) -> np.ndarray:
    """Years per dex of luminosity at luminosity ``lum`` (Lsun) and core mass ``mc`` (Msun).

    NaN where ``lum`` or ``mc`` is not positive.
    """
    lum = as_float(lum, "Lsun")
    mc = as_float(mc, "Msun")
    ok = (lum > 0) & (mc > 0)
    val = np.log(10.0) * X_H * Q_H * np.where(ok, mc, 1.0) * _MSUN_G / (p * np.where(ok, lum, 1.0) * _LSUN_CGS)
    return np.where(ok, val / _YEAR_S, np.nan)


__all__ = ["years_per_dex", "Q_H", "X_H", "A_H"]
