"""Core mass of a shell-burning giant from its luminosity (Hurley, Pols & Tout 2000 eqs 37-38).

Citation: Hurley J. R., Pols O. R., Tout C. A., 2000, MNRAS 315, 543, section 5.2: the giant-branch
core-mass--luminosity relation ``L = min(B Mc^q, D Mc^p)``, low-mass branch p = 6, q = 3, with
``B = max(3e4, 500 + 1.75e4 M^0.6)`` and ``log10 D = 5.37 + 0.135 zeta`` (zeta = log10(Z/0.02)),
the same form and constants as :func:`hrstage.models.hpt2000.mc_hei` (equation numbers as quoted in
public implementations). HPT2000 use the same relation on the early AGB with the CO-core mass.

Validity: degenerate-core giants, M < M_HeF (the low-mass exponents are used for all masses here:
an approximation above M_HeF, where HPT2000 switch to p = 5, q = 2); L > 0; 1e-4 <= Z <= 0.03.
"""

from __future__ import annotations

import numpy as np

from .._common import as_float, masked
from .coefficients import coefficients

P_LOW, Q_LOW = 6.0, 3.0


def _bd(m, zeta):
    big_b = np.maximum(3.0e4, 500.0 + 1.75e4 * m**0.6)
    big_d = 10.0 ** (5.37 + 0.135 * zeta)
    return big_b, big_d


def mc_from_luminosity(l, m, z=0.02) -> np.ndarray:
    """Core mass (Msun) of a giant of mass ``m`` (Msun) at luminosity ``l`` (Lsun): eq (37) inverted.

    NaN where ``l`` or ``m`` is not positive.
    """
    l = as_float(l, "Lsun")
    m = as_float(m, "Msun")
    c = coefficients(z)
    l, m, zeta = np.broadcast_arrays(l, m, c.zeta)
    ok = (l > 0) & (m > 0)
    lx_, mx_ = np.where(ok, l, 1.0), np.where(ok, m, 1.0)
    big_b, big_d = _bd(mx_, zeta)
    mc_x = (big_b / big_d) ** (1.0 / (P_LOW - Q_LOW))   # where the two branches meet
    l_x = big_d * mc_x**P_LOW
    mc = np.where(lx_ <= l_x, (lx_ / big_d) ** (1.0 / P_LOW), (lx_ / big_b) ** (1.0 / Q_LOW))
    return masked(mc, ok)


def luminosity_from_mc(mc, m, z=0.02) -> np.ndarray:
    """Luminosity (Lsun) of a giant of mass ``m`` with core mass ``mc``, eq (37). NaN for non-positive input."""
    mc = as_float(mc, "Msun")
    m = as_float(m, "Msun")
    c = coefficients(z)
    mc, m, zeta = np.broadcast_arrays(mc, m, c.zeta)
    ok = (mc > 0) & (m > 0)
    x, mx_ = np.where(ok, mc, 1.0), np.where(ok, m, 1.0)
    big_b, big_d = _bd(mx_, zeta)
    return masked(np.minimum(big_b * x**Q_LOW, big_d * x**P_LOW), ok)


def mc_tpagb(mc_bagb) -> np.ndarray:
    """Core mass (Msun) at the start of the thermally pulsing AGB (HPT2000 section 5.4, eq 69).

    Above Mc,BAGB = 0.8 Msun the second dredge-up sets it, ``Mc,DU = 0.44 Mc,BAGB + 0.448``; below,
    the early AGB ends when the CO core has grown to the helium-core mass, ``Mc,BAGB`` itself
    (continuous at 0.8). Checked against an independent public implementation of the paper (the
    COMPAS population-synthesis code, which gives the same form and constants and cites eq 69),
    not against the paper PDF: the provenance of the rest of this package. NaN for non-positive
    input.
    """
    x = as_float(mc_bagb, "Msun")
    return np.where(x > 0, np.where(x > 0.8, 0.44 * x + 0.448, x), np.nan)


#: rate of core growth by helium-shell burning on the early AGB, dMc/dt = A_He L (HPT2000 eq 68;
#: Msun per Lsun per Myr): 5-6x the hydrogen-burning rate A_H of a low-mass giant (HPT2000 section
#: 5.2: A_H = 10^-4.8 = 1.58e-5 below ~1.1 Msun), because helium burning releases about 1/7 of the
#: energy per gram that hydrogen burning does
A_HE = 7.66e-5


def agb_time_factor(a_h, thermally_pulsing) -> np.ndarray:
    """Time an AGB star spends per dex of L over that of a first-ascent giant at the same L and core mass.

    Both follow the same core-mass--luminosity relation (eq 37, HPT2000 use it on the AGB with the
    CO-core mass), so the times per dex scale inversely with the core growth rate: ``a_h / A_He`` on
    the early AGB (eq 68: the CO core grows by helium burning) and ``a_h / A_H,He = 1 + a_h / A_He``
    on the thermally pulsing AGB (eq 71, ``A_H,He = A_H A_He / (A_H + A_He)``: the two shells
    alternate). ``a_h`` is the hydrogen-burning rate of the giant-branch model it is compared with
    (Msun / Lsun / Myr). For 1.36e-5 (``1 / (X Q)``, :mod:`hrstage.models.shell_burning`): 0.18 and
    1.18.
    """
    a_h = np.asarray(a_h, dtype=float)
    return np.where(np.asarray(thermally_pulsing, dtype=bool), 1.0 + a_h / A_HE, a_h / A_HE)


__all__ = ["mc_from_luminosity", "luminosity_from_mc", "mc_tpagb", "agb_time_factor", "A_HE",
           "P_LOW", "Q_LOW"]
