"""Base of the giant branch, giant-branch and AGB radii, helium ignition (Hurley, Pols & Tout 2000).

Citation: Hurley J. R., Pols O. R., Tout C. A., 2000, MNRAS 315, 543, sections 5.2-5.4.
Equation numbers as quoted in code comments of public implementations (not checked against the
paper PDF):

- eq (10): ``L_BGB = (a27 M^a31 + a28 M^c2) / (a29 + a30 M^c3 + M^a32)``, c2 = 9.301992,
  c3 = 4.637345 -- only meaningful for M < M_FGB (stars with a giant branch);
- eq (46): Hayashi-line radius ``R_GB(M, L) = min(b4 M^-b5, b6 M^-b7) (L^b1 + b2 L^b3)``;
- eq (49): He-ignition luminosity, ``b9 M^b10 / (1 + alpha1 exp(15 (M - M_HeF)))`` below M_HeF
  (alpha1 fixed by continuity) and ``(b11 + b12 M^3.8) / (b13 + M^2)`` above;
- eq (50): He-ignition radius: R_GB(M, L_HeI) up to M_FGB; min(R_mHe, R_AGB(M, L_HeI)) above
  max(M_FGB, 12 Msun); for M_FGB < M < 12 (only when Z < 0.0055) the geometric blend
  ``R_mHe (R_GB / R_mHe)^mu``, ``mu = log10(M/12) / log10(M_FGB/12)``;
- eq (55): minimum radius during core-He burning ``R_mHe = (b24 M + (b25 M)^b26 M^b28)
  / (b27 + M^b28)``, defined for M >= M_HeF;
- eq (74): AGB radius ``R_AGB = A (L^b1 + b2 L^b50)`` with the mass-dependent A and b50 described
  in :func:`r_agb`;
- eq (66): core mass at the base of the AGB, ``Mc,BAGB = (b36 M^b37 + b38)^(1/4)`` (constants after
  the special cases).

Discontinuities that callers must respect: R_HeI jumps at M = M_FGB when M_FGB > 12 Msun
(Z > 0.0055): helium ignites in the blue above M_FGB (about 585 -> 63 Rsun at Z = 0.02). L_HeI
falls steeply just below M_HeF. Do not interpolate across M_FGB; sample densely below M_HeF.

The SSE code also resets the end-of-gap radius of stars above M_FGB to R_AGB when their blue-loop
fraction vanishes; with these formulae that changes nothing below about 28 Msun at Z = 0.02
(formulae.md section 2.5) and is not implemented here.

Validity: 0.1 <= M <= 100 Msun (NaN outside, masked), 1e-4 <= Z <= 0.03 (``ValueError``);
luminosity arguments must be positive (NaN otherwise). Units: Msun, Lsun, Rsun.
"""

from __future__ import annotations

import numpy as np

from .._common import as_float, mass_mask, masked
from ..tout1996 import MASS_RANGE
from .coefficients import C2, C3, coefficients

#: Initial mass above which He ignition in the Hertzsprung gap happens at the minimum CHeB radius
#: (HPT2000 eq 50; "mlp" in SSE).
M_BLUE_IGNITION = 12.0


def _setup(m, z, *extra):
    m = as_float(m, "Msun")
    c = coefficients(z)
    m_safe, ok = mass_mask(m, *MASS_RANGE)
    arrays = np.broadcast_arrays(m_safe, c.z, *[as_float(e) for e in extra])
    ok = np.broadcast_to(ok, arrays[0].shape)
    return arrays, ok, c


def _r_gb(m, lum, b):
    amp = np.minimum(b[4] / m ** b[5], b[6] / m ** b[7])
    return amp * (lum ** b[1] + b[2] * lum ** b[3])


def _l_hei(m, b, m_hef, alpha1):
    low = b[9] * m ** b[10] / (1.0 + alpha1 * np.exp(15.0 * np.minimum(m - m_hef, 0.0)))
    high = (b[11] + b[12] * m**3.8) / (b[13] + m**2)
    return np.where(m < m_hef, low, high)


def _r_mhe(m, b):
    mx = m ** b[28]
    return (b[24] * m + (b[25] * m) ** b[26] * mx) / (b[27] + mx)


def _r_agb(m, lum, b, m_hef):
    m1 = m_hef - 0.2
    expo_factor = np.where(m >= m_hef, b[55], np.where(m >= m1, 1.0 + 5.0 * (b[55] - 1.0) * (m - m1), 1.0))
    b50 = expo_factor * b[3]
    a_low = b[56] + b[57] * m
    a_high = np.minimum(b[51] / m ** b[52], b[53] / m ** b[54])
    a_m1 = b[56] + b[57] * m1
    a_hef = np.minimum(b[51] / m_hef ** b[52], b[53] / m_hef ** b[54])
    a_mid = a_m1 + 5.0 * (a_hef - a_m1) * (m - m1)
    amp = np.where(m <= m1, a_low, np.where(m >= m_hef, a_high, a_mid))
    return amp * (lum ** b[1] + b[2] * lum**b50)


def l_bgb(m, z=0.02) -> np.ndarray:
    """Luminosity at the base of the giant branch (Lsun), HPT2000 eq (10).

    The fit is only used for M < M_FGB; above M_FGB the star has no giant branch and the end of
    its Hertzsprung gap is at (L_HeI, R_HeI). Values above M_FGB are returned but carry no
    meaning. NaN outside 0.1-100 Msun.
    """
    (m, _z), ok, c = _setup(m, z)
    a = c.a
    return masked((a[27] * m ** a[31] + a[28] * m**C2) / (a[29] + a[30] * m**C3 + m ** a[32]), ok)


def r_gb(m, l, z=0.02) -> np.ndarray:
    """Giant-branch (Hayashi-line) radius (Rsun) of a star of mass ``m`` at luminosity ``l``, eq (46).

    Parameters
    ----------
    m : array_like
        Mass (Msun), 0.1-100; NaN outside.
    l : array_like
        Luminosity (Lsun), > 0; NaN otherwise. Broadcast against ``m`` and ``z``.
    z : array_like
        Metallicity, 1e-4..0.03.
    """
    (m, _z, lum), ok, c = _setup(m, z, l)
    ok = ok & (lum > 0)
    lum = np.where(ok, lum, 1.0)
    return masked(_r_gb(m, lum, c.b), ok)


def l_hei(m, z=0.02) -> np.ndarray:
    """Luminosity at helium ignition (Lsun), HPT2000 eq (49).

    For M < M_HeF this is the tip of the red-giant branch (helium flash); the low-mass branch is
    evaluated only there (the exponential is never computed above M_HeF, so no overflow up to
    100 Msun). Continuous at M_HeF but steep just below it. NaN outside 0.1-100 Msun.
    """
    (m, _z), ok, c = _setup(m, z)
    return masked(_l_hei(m, c.b, c.m_hef, c.alpha1), ok)


def r_mhe(m, z=0.02) -> np.ndarray:
    """Minimum radius during core-helium burning (Rsun), HPT2000 eq (55).

    Defined for intermediate- and high-mass stars, M_HeF <= M <= 100 Msun; NaN below M_HeF
    (low-mass stars start core-He burning on the zero-age horizontal branch instead) and outside
    the mass range.
    """
    (m, _z), ok, c = _setup(m, z)
    ok = ok & (m >= c.m_hef)
    return masked(_r_mhe(m, c.b), ok)


def r_agb(m, l, z=0.02) -> np.ndarray:
    """Radius on the asymptotic giant branch (Rsun) at luminosity ``l``, HPT2000 eq (74).

    ``R_AGB = A (L^b1 + b2 L^b50)`` with ``A = min(b51 M^-b52, b53 M^-b54)`` and ``b50 = b55 b3``
    for M >= M_HeF, ``A = b56 + b57 M`` and ``b50 = b3`` for M <= M_HeF - 0.2, linear in M between.
    NaN outside 0.1-100 Msun or for non-positive ``l``.
    """
    (m, _z, lum), ok, c = _setup(m, z, l)
    ok = ok & (lum > 0)
    lum = np.where(ok, lum, 1.0)
    return masked(_r_agb(m, lum, c.b, c.m_hef), ok)


def r_hei(m, z=0.02) -> np.ndarray:
    """Radius at helium ignition (Rsun), HPT2000 eq (50).

    - M <= M_FGB: on the giant branch, R_GB(M, L_HeI);
    - M >= max(M_FGB, 12 Msun): min(R_mHe, R_AGB(M, L_HeI)) (ignition in the blue);
    - M_FGB < M < 12 Msun (only for Z < 0.0055): R_mHe (R_GB / R_mHe)^mu with
      mu = log10(M/12) / log10(M_FGB/12).

    Jumps at M_FGB when M_FGB > 12 Msun. NaN outside 0.1-100 Msun.
    """
    (m, _z), ok, c = _setup(m, z)
    b = c.b
    with np.errstate(all="ignore"):
        lh = _l_hei(m, b, c.m_hef, c.alpha1)
        rg = _r_gb(m, lh, b)
        rmin = _r_mhe(m, b)
        blue = np.minimum(rmin, _r_agb(m, lh, b, c.m_hef))
        mu = np.log10(m / M_BLUE_IGNITION) / np.log10(c.m_fgb / M_BLUE_IGNITION)
        blend = rmin * (rg / rmin) ** mu
        out = np.where(m <= c.m_fgb, rg, np.where(m >= M_BLUE_IGNITION, blue, blend))
    return masked(out, ok)


def mc_bagb(m, z=0.02) -> np.ndarray:
    """Core mass at the base of the AGB (Msun), HPT2000 eq (66). NaN outside 0.1-100 Msun.

    Mc,BAGB < 1.6 Msun: the star ends as a CO white dwarf; 1.6-2.25: ONe white dwarf; above 2.25:
    core collapse (HPT2000 section 6; thresholds as in the public SSE and COMPAS codes).
    """
    (m, _z), ok, c = _setup(m, z)
    b = c.b
    return masked((b[36] * m ** b[37] + b[38]) ** 0.25, ok)


def carbon_ignition_mass(z=0.02, mc=1.6) -> np.ndarray:
    """Initial mass (Msun) whose core mass at the base of the AGB equals ``mc`` (inverse of eq 66).

    With the default ``mc = 1.6`` Msun (the HPT2000 CO / ONe white-dwarf threshold) this is the
    lowest initial mass that ignites carbon non-degenerately -- about 6.3 Msun at Z = 0.02 and
    5.1 Msun at Z = 0.001 (``mc = 2.25``: about 8.2 and 6.9). hrstage uses it as the threshold
    above which evolved stars are called supergiants; HPT2000 do not define that label, so the
    threshold is a documented choice (formulae.md section 6.3 item 3).

    Parameters
    ----------
    z : array_like
        Metallicity, 1e-4..0.03.
    mc : float or array_like
        Core mass (Msun); must exceed b38^(1/4) (about 0.51 Msun), otherwise ``ValueError``.

    Returns
    -------
    ndarray
        Initial mass, broadcast over ``z`` and ``mc``. Values above 100 Msun are NaN.
    """
    c = coefficients(z)
    b = c.b
    mc = as_float(mc, "Msun")
    mc4 = mc**4
    if np.any(~(mc4 > b[38])):
        raise ValueError(
            f"core mass mc = {mc!r} Msun is below the smallest core mass of HPT2000 eq (66) "
            f"(b38^(1/4) = {float(np.min(b[38])) ** 0.25:.3f} Msun)"
        )
    m = ((mc4 - b[38]) / b[36]) ** (1.0 / b[37])
    return np.where(m <= MASS_RANGE[1], m, np.nan)
