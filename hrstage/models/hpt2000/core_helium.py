"""Core-helium burning of low-mass stars: the zero-age horizontal branch (Hurley, Pols & Tout 2000).

Citation: Hurley J. R., Pols O. R., Tout C. A., 2000, MNRAS 315, 543, section 5.3 (core-helium
burning) and section 6.1 (naked helium stars). Equation numbers as quoted in code comments of
public implementations (not checked against the paper PDF); the functional forms were compared with
the public SSE Fortran and with an independent C transcription of the paper:

- eq (77): naked-helium-star ZAMS luminosity
  ``L_ZHe(M) = 15262 M^10.25 / (M^9 + 29.54 M^7.5 + 31.18 M^6 + 0.0469)``;
- eq (78): its radius ``R_ZHe(M) = 0.2391 M^4.6 / (M^4 + 0.162 M^3 + 0.0065)``;
- eq (51): minimum luminosity during core-He burning of intermediate-mass stars
  ``L_minHe = L_HeI(M) (b14 + c M^(b15 + 0.1)) / (b16 + M^b15)``, ``c`` fixed by
  continuity at M_FGB (held in ``b[17]`` of :mod:`.coefficients`);
- eq (53): zero-age horizontal-branch luminosity of a star of (current) mass M and core mass
  Mc, M <= M_HeF::

      L_ZAHB = L_ZHe(Mc) + (1 + b20) b18 mu^b19 / ((1 + b20 mu^1.6479) (1 + alpha2 exp(15 (M - M_HeF))))
      mu = (M - Mc) / (M_HeF - Mc)
      alpha2 = (b18 + L_ZHe(Mc) - L_minHe(M_HeF)) / (L_minHe(M_HeF) - L_ZHe(Mc))

  (continuous with L_minHe at M = M_HeF and with the helium-star ZAMS as the envelope vanishes);
- eq (54): ZAHB radius ``R_ZAHB = (1 - f) R_ZHe(Mc) + f R_GB(M, L_ZAHB)`` with
  ``f = (1 + b21) mu^b22 / (1 + b21 mu^b23)``;
- eq (57): core-helium-burning lifetime (Myr)::

      t_He = (b39 + (t_HeMS(Mc) - b39) (1 - mu)^b40) (1 + alpha4 exp(15 (M - M_HeF)))   M < M_HeF
      t_He = t_BGB(M) (b41 M^b42 + b43 M^5) / (b44 + M^5)                               M >= M_HeF
      mu = M / M_HeF,  alpha4 = (t_He(M_HeF) - b39) / b39   (continuity at M_HeF)

  with the helium-star main-sequence lifetime of eq (79), ``t_HeMS(M) = (0.4129 + 18.81 M^4 +
  1.853 M^6) / M^6.5`` Myr, taken at the core mass at helium ignition. The b39..b44 special cases
  (b40 >= 1, b41 -> b41^b42, b44 -> b44^5) are in :mod:`.coefficients`. Checked against an
  independent public implementation of the paper (the COMPAS population-synthesis code, which
  cites eqs 57 and 79 for these forms), not against the paper PDF: the same provenance as the rest
  of this package (formulae.md [V-code]).

The core mass at the helium flash, needed to place the ZAHB of a star of given initial mass, comes
from the giant-branch core-mass--luminosity relation (HPT2000 eqs 37-38, low-mass branch p = 6,
q = 3) inverted at L_HeI (eq 49): :func:`mc_hei`.

Validity: initial / current masses 0.1 <= M <= M_HeF (NaN elsewhere: above M_HeF helium ignites
non-degenerately and the star has no horizontal branch in this sense); core masses 0 < Mc < M;
1e-4 <= Z <= 0.03 (``ValueError`` outside). Units: Msun, Lsun, Rsun. These are fits to single-star
models without rotation; the horizontal-branch morphology of real populations also depends on
giant-branch mass loss, helium abundance and age.
"""

from __future__ import annotations

import numpy as np

from .._common import as_float, masked
from .coefficients import coefficients
from .giant_branch import _l_hei, _r_gb
from .main_sequence import _t_bgb

#: exponent of mu in the denominator of eq (53) (printed to four decimals in the paper; SSE uses
#: 1.6479 as well)
ZAHB_MU_EXPONENT = 1.6479


def l_zhe(m) -> np.ndarray:
    """ZAMS luminosity (Lsun) of a naked helium star of mass ``m`` (Msun), HPT2000 eq (77).

    Defined for m > 0 (NaN otherwise); the fit was made for 0.32-10 Msun helium stars, the HB use
    needs core masses of 0.3-0.5 Msun.
    """
    m = as_float(m, "Msun")
    ok = m > 0
    x = np.where(ok, m, 1.0)
    val = 15262.0 * x**10.25 / (x**9 + 29.54 * x**7.5 + 31.18 * x**6 + 0.0469)
    return masked(val, ok)


def r_zhe(m) -> np.ndarray:
    """ZAMS radius (Rsun) of a naked helium star of mass ``m`` (Msun), HPT2000 eq (78). NaN for m <= 0."""
    m = as_float(m, "Msun")
    ok = m > 0
    x = np.where(ok, m, 1.0)
    val = 0.2391 * x**4.6 / (x**4 + 0.162 * x**3 + 0.0065)
    return masked(val, ok)


def _l_minhe(m, b, m_hef, alpha1):
    return _l_hei(m, b, m_hef, alpha1) * (b[14] + b[17] * m ** (b[15] + 0.1)) / (b[16] + m ** b[15])


def l_minhe(m, z=0.02) -> np.ndarray:
    """Minimum luminosity (Lsun) during core-helium burning, HPT2000 eq (51), M_HeF <= M <= M_FGB.

    NaN outside that range (below M_HeF the ZAHB luminosity, eq 53, takes its place).
    """
    m = as_float(m, "Msun")
    c = coefficients(z)
    m, zz = np.broadcast_arrays(m, c.z)
    ok = (m >= c.m_hef) & (m <= c.m_fgb)
    x = np.where(ok, m, c.m_hef)
    return masked(_l_minhe(x, c.b, c.m_hef, c.alpha1), ok)


def mc_hei(m, z=0.02) -> np.ndarray:
    """Core mass (Msun) at the helium flash of a low-mass star, M < M_HeF.

    HPT2000 eqs (37-38), low-mass branch: ``L = min(B Mc^3, D Mc^6)`` with
    ``B = max(3e4, 500 + 1.75e4 M^0.6)``, ``log10 D = 5.37 + 0.135 zeta``, inverted at
    ``L = L_HeI(M)`` (eq 49). formulae.md section 2.6 quotes 0.477 Msun (1 Msun, Z = 0.02) and
    0.495 Msun (Z = 0.001). NaN for M >= M_HeF or outside 0.1 Msun.
    """
    m = as_float(m, "Msun")
    c = coefficients(z)
    m, zz = np.broadcast_arrays(m, c.z)
    ok = (m >= 0.1) & (m < c.m_hef)
    x = np.where(ok, m, 1.0)
    lum = _l_hei(x, c.b, c.m_hef, c.alpha1)
    big_b = np.maximum(3.0e4, 500.0 + 1.75e4 * x**0.6)
    big_d = 10.0 ** (5.37 + 0.135 * c.zeta)
    # the min() switches branch at Mc_x = (B / D)^(1/3), i.e. at L_x = B Mc_x^3
    mcx = (big_b / big_d) ** (1.0 / 3.0)
    lx = big_d * mcx**6
    mc = np.where(lum <= lx, (lum / big_d) ** (1.0 / 6.0), (lum / big_b) ** (1.0 / 3.0))
    return masked(mc, ok)


def _zahb(m, mc, z):
    m = as_float(m, "Msun")
    mc = as_float(mc, "Msun")
    c = coefficients(z)
    m, mc, _ = np.broadcast_arrays(m, mc, c.z)
    b = c.b
    ok = (m >= 0.1) & (m <= c.m_hef) & (mc > 0) & (mc < m)
    x = np.where(ok, m, 1.0)
    xc = np.where(ok, mc, 0.5)
    lz = 15262.0 * xc**10.25 / (xc**9 + 29.54 * xc**7.5 + 31.18 * xc**6 + 0.0469)
    lmin_hef = _l_minhe(np.asarray(c.m_hef, float), b, c.m_hef, c.alpha1)
    alpha2 = (b[18] + lz - lmin_hef) / (lmin_hef - lz)
    mu = (x - xc) / (c.m_hef - xc)
    num = (1.0 + b[20]) * b[18] * mu ** b[19]
    den = (1.0 + b[20] * mu**ZAHB_MU_EXPONENT) * (1.0 + alpha2 * np.exp(15.0 * (x - c.m_hef)))
    lum = lz + num / den
    f = (1.0 + b[21]) * mu ** b[22] / (1.0 + b[21] * mu ** b[23])
    rz = 0.2391 * xc**4.6 / (xc**4 + 0.162 * xc**3 + 0.0065)
    rad = (1.0 - f) * rz + f * _r_gb(x, lum, b)
    return masked(lum, ok), masked(rad, ok)


def t_hems(m) -> np.ndarray:
    """Main-sequence lifetime (Myr) of a naked helium star of mass ``m`` (Msun), HPT2000 eq (79).

    NaN for m <= 0. At the 0.45-0.5 Msun cores of the helium flash this is ~100-150 Myr.
    """
    m = as_float(m, "Msun")
    ok = m > 0
    x = np.where(ok, m, 1.0)
    return masked((0.4129 + 18.81 * x**4 + 1.853 * x**6) / x**6.5, ok)


def _t_he_high(m, c):
    b = c.b
    return _t_bgb(m, c.a) * (b[41] * m ** b[42] + b[43] * m**5) / (b[44] + m**5)


def t_he(m, z=0.02) -> np.ndarray:
    """Core-helium-burning lifetime (Myr) of a star of initial mass ``m`` (Msun), HPT2000 eq (57).

    Below M_HeF the core mass is the one at the helium flash (:func:`mc_hei`); the lifetime tends
    to b39 (~130 Myr at Z = 0.02) for the lightest stars and joins the intermediate-mass form
    continuously at M_HeF (through alpha4). Valid 0.1 <= m <= M_FGB (NaN elsewhere: above M_FGB
    helium ignites before the giant branch and the form is unchanged, but this package does not
    use it there); 1e-4 <= Z <= 0.03.
    """
    m = as_float(m, "Msun")
    c = coefficients(z)
    m, _ = np.broadcast_arrays(m, c.z)
    b = c.b
    ok = (m >= 0.1) & (m <= c.m_fgb)
    low = ok & (m < c.m_hef)
    x = np.where(ok, m, c.m_hef)
    t_hef = _t_he_high(np.asarray(c.m_hef, float), c)
    alpha4 = (t_hef - b[39]) / b[39]
    xl = np.where(low, x, 1.0)
    mc = np.where(low, mc_hei(xl, c.z), 0.45)
    mu = np.where(low, xl / c.m_hef, 0.5)
    t_low = (b[39] + (t_hems(mc) - b[39]) * (1.0 - mu) ** b[40]) * (
        1.0 + alpha4 * np.exp(15.0 * np.minimum(xl - c.m_hef, 0.0)))
    val = np.where(low, t_low, _t_he_high(x, c))
    return masked(val, ok)


def l_zahb(m, mc, z=0.02) -> np.ndarray:
    """Zero-age horizontal-branch luminosity (Lsun), HPT2000 eq (53).

    Parameters
    ----------
    m : array_like
        Current total mass (Msun) at the start of core-He burning, 0.1 <= m <= M_HeF.
    mc : array_like
        Helium-core mass (Msun), 0 < mc < m (typically :func:`mc_hei` of the initial mass).
    z : array_like
        Metallicity, 1e-4..0.03.

    Returns
    -------
    ndarray
        NaN where the inputs are outside the ranges above.
    """
    return _zahb(m, mc, z)[0]


def r_zahb(m, mc, z=0.02) -> np.ndarray:
    """Zero-age horizontal-branch radius (Rsun), HPT2000 eq (54); arguments as :func:`l_zahb`."""
    return _zahb(m, mc, z)[1]


__all__ = ["l_zhe", "r_zhe", "l_minhe", "mc_hei", "l_zahb", "r_zahb", "t_hems", "t_he", "ZAHB_MU_EXPONENT"]
