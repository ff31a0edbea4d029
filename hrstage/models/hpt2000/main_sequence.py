"""Main-sequence lifetimes, terminal-age main sequence and MS evolution of Hurley, Pols & Tout (2000).

Citation: Hurley J. R., Pols O. R., Tout C. A., 2000, MNRAS 315, 543, section 5.1.
Equation numbers as quoted in code comments of public implementations (not checked against the
paper PDF):

- eq (4): time to the base of the giant branch (to He ignition if the star has no giant branch),
  ``t_BGB = (a1 + a2 M^4 + a3 M^5.5 + M^7) / (a4 M^2 + a5 M^7)`` (Myr);
- eqs (5)-(7): ``t_hook = mu t_BGB``, ``t_MS = max(t_hook, x t_BGB)``,
  ``mu = max(0.5, 1 - 0.01 max(a6 / M^a7, a8 + a9 / M^a10))``; x in the SSE linear-in-Z form
  ``max(0.95, max(0.95 - (10/3)(Z - 0.01), min(0.99, 0.98 - (100/7)(Z - 0.001))))`` (the COMPAS
  log form differs by <= 0.008 for 0.001 < Z < 0.01; the SSE form is the one the authors
  distributed);
- eq (8): L_TMS; eq (9): R_TMS (two rational functions joined linearly between a17 and a17 + 0.1,
  with the floor R_TMS >= 1.5 R_ZAMS for M <= a17, as in SSE);
- eqs (12)-(24): evolution on the MS, ``log(L/L_ZAMS) = alpha_L tau + beta_L tau^eta
  + (log(L_TMS/L_ZAMS) - alpha_L - beta_L) tau^2 - Delta_L (tau1^2 - tau2^2)`` and
  ``log(R/R_ZAMS) = alpha_R tau + beta_R tau^10 + gamma tau^40 + (log(R_TMS/R_ZAMS) - alpha_R
  - beta_R - gamma) tau^3 - Delta_R (tau1^3 - tau2^3)``, with ``tau = t/t_MS``,
  ``tau1 = min(1, t/t_hook)``, ``tau2 = clip((t - (1 - eps) t_hook)/(eps t_hook), 0, 1)``,
  eps = 0.01, and the mass dependences of alpha_L, beta_L, eta, Delta_L, alpha_R, beta_R, gamma,
  Delta_R as piecewise functions of M (the hook terms vanish below M_hook). Low-mass stars that are
  substantially degenerate (M < M_hook - 0.3) keep R >= 0.0258 (1 + X)^(5/3) M^(-1/3) with
  X = 0.76 - 3Z. The functional forms follow the paper as implemented in the public SSE code
  (read, not copied).

Validity: 0.1 <= M <= 100 Msun (NaN outside, masked), 1e-4 <= Z <= 0.03 (``ValueError``
outside). :func:`ms_luminosity_radius` gives NaN for ages outside [0, t_MS]. Stars below about
0.8-0.9 Msun do not leave the MS in a Hubble time: their TAMS is a formal locus.

Units: M in Msun, t in Myr, L in Lsun, R in Rsun.
"""

from __future__ import annotations

import numpy as np

from .._common import as_float, mass_mask, masked
from ..tout1996 import MASS_RANGE, zams_luminosity, zams_radius
from .coefficients import C1, coefficients


def _setup(m, z):
    m = as_float(m, "Msun")
    c = coefficients(z)
    m_safe, ok = mass_mask(m, *MASS_RANGE)
    m_safe, zz = np.broadcast_arrays(m_safe, c.z)
    ok = np.broadcast_to(ok, m_safe.shape)
    return m_safe, ok, c


def _t_bgb(m, a):
    return (a[1] + a[2] * m**4 + a[3] * m**5.5 + m**7) / (a[4] * m**2 + a[5] * m**7)


def _mu_hook(m, a):
    return np.maximum(0.5, 1.0 - 0.01 * np.maximum(a[6] / m ** a[7], a[8] + a[9] / m ** a[10]))


def _l_tms(m, a):
    return (a[11] * m**3 + a[12] * m**4 + a[13] * m ** (a[16] + 1.8)) / (a[14] + a[15] * m**5 + m ** a[16])


def _r_tms_low(m, a):
    return (a[18] + a[19] * m ** a[21]) / (a[20] + m ** a[22])


def _r_tms_high(m, a):
    return (C1 * m**3 + a[23] * m ** a[26] + a[24] * m ** (a[26] + 1.5)) / (a[25] + m**5)


def _r_tms(m, a, r_zams):
    m1 = a[17]
    m2 = a[17] + 0.1
    low = np.maximum(1.5 * r_zams, _r_tms_low(m, a))
    high = _r_tms_high(m, a)
    r1 = _r_tms_low(m1, a)
    r2 = _r_tms_high(m2, a)
    mid = r1 + (r2 - r1) / 0.1 * (m - m1)
    return np.where(m <= m1, low, np.where(m >= m2, high, mid))


def t_bgb(m, z=0.02) -> np.ndarray:
    """Time to the base of the giant branch (Myr), HPT2000 eq (4).

    For M > M_FGB (no giant branch) this is the time of helium ignition. NaN outside 0.1-100 Msun.
    """
    m, ok, c = _setup(m, z)
    return masked(_t_bgb(m, c.a), ok)


def t_hook(m, z=0.02) -> np.ndarray:
    """Time of the main-sequence hook (Myr), ``mu t_BGB``, HPT2000 eqs (5), (7).

    Physically meaningful only above M_hook (stars with a convective core); below it the value
    still enters ``t_MS = max(t_hook, x t_BGB)``. NaN outside 0.1-100 Msun.
    """
    m, ok, c = _setup(m, z)
    return masked(_mu_hook(m, c.a) * _t_bgb(m, c.a), ok)


def t_ms(m, z=0.02) -> np.ndarray:
    """Main-sequence lifetime (Myr), HPT2000 eqs (4)-(7) with the SSE form of x (eq 6).

    NaN outside 0.1-100 Msun.
    """
    m, ok, c = _setup(m, z)
    tb = _t_bgb(m, c.a)
    return masked(np.maximum(_mu_hook(m, c.a) * tb, c.x_ms * tb), ok)


def l_tms(m, z=0.02) -> np.ndarray:
    """Luminosity at the end of the main sequence (Lsun), HPT2000 eq (8). NaN outside 0.1-100 Msun."""
    m, ok, c = _setup(m, z)
    return masked(_l_tms(m, c.a), ok)


def r_tms(m, z=0.02) -> np.ndarray:
    """Radius at the end of the main sequence (Rsun), HPT2000 eq (9).

    Below M = a17 the low-mass fit with the SSE floor R_TMS >= 1.5 R_ZAMS; above a17 + 0.1 the
    high-mass fit; linear in M between. NaN outside 0.1-100 Msun.
    """
    m, ok, c = _setup(m, z)
    return masked(_r_tms(m, c.a, zams_radius(m, c.z)), ok)


# ----- MS evolution: mass dependences of the coefficients (eqs 15-23) -----


def _alpha_l(m, a):
    b2 = (a[45] + a[46] * 2.0 ** a[48]) / (2.0**0.4 + a[47] * 2.0**1.9)
    hi = (a[45] + a[46] * m ** a[48]) / (m**0.4 + a[47] * m**1.9)
    return np.select(
        [m >= 2.0, m <= 0.5, m <= 0.7, m <= a[52], m <= a[53]],
        [
            hi,
            a[49],
            a[49] + (0.3 - a[49]) / 0.2 * (m - 0.5),
            0.3 + (a[50] - 0.3) / (a[52] - 0.7) * (m - 0.7),
            a[50] + (a[51] - a[50]) / (a[53] - a[52]) * (m - a[52]),
        ],
        a[51] + (b2 - a[51]) / (2.0 - a[53]) * (m - a[53]),
    )


def _beta_l(m, a):
    beta = np.maximum(0.0, a[54] - a[55] * m ** a[56])
    b1 = a[54] - a[55] * a[57] ** a[56]
    ramp = np.maximum(0.0, b1 - 10.0 * b1 * (m - a[57]))
    return np.where((m > a[57]) & (beta > 0.0), ramp, beta)


def _eta_l(m, z):
    eta = np.where(m <= 1.0, 10.0, np.where(m >= 1.1, 20.0, 10.0 + 100.0 * (m - 1.0)))
    # SSE: eta is capped at 10 for Z > 0.0009.
    return np.where(z > 0.0009, np.minimum(eta, 10.0), eta)


def _delta_l(m, a, m_hook):
    b = np.minimum(a[34] / a[33] ** a[35], a[36] / a[33] ** a[37])
    hi = np.minimum(a[34] / m ** a[35], a[36] / m ** a[37])
    frac = np.clip((m - m_hook) / (a[33] - m_hook), 0.0, None)
    return np.where(m <= m_hook, 0.0, np.where(m >= a[33], hi, b * frac**0.4))


def _alpha_r(m, a):
    b = a[58] * a[66] ** a[60] / (a[59] + a[66] ** a[61])
    c = a[58] * a[67] ** a[60] / (a[59] + a[67] ** a[61])
    return np.select(
        [m <= 0.5, m <= 0.65, m <= a[68], m <= a[66], m <= a[67]],
        [
            a[62],
            a[62] + (a[63] - a[62]) / 0.15 * (m - 0.5),
            a[63] + (a[64] - a[63]) / (a[68] - 0.65) * (m - 0.65),
            a[64] + (b - a[64]) / (a[66] - a[68]) * (m - a[68]),
            a[58] * m ** a[60] / (a[59] + m ** a[61]),
        ],
        c + a[65] * (m - a[67]),
    )


def _beta_r(m, a):
    def rat(x):
        return a[69] * x**3.5 / (a[70] + x ** a[71])

    b2 = rat(2.0)
    b16 = rat(16.0)
    beta1 = np.select(
        [m <= 1.0, m <= a[74], m <= 2.0, m <= 16.0],
        [
            1.06,
            1.06 + (a[72] - 1.06) / (a[74] - 1.0) * (m - 1.0),
            a[72] + (b2 - a[72]) / (2.0 - a[74]) * (m - a[74]),
            rat(m),
        ],
        b16 + a[73] * (m - 16.0),
    )
    return beta1 - 1.0


def _gamma_r(m, a):
    b1 = np.maximum(0.0, a[76] + a[77] * np.abs(1.0 - a[78]) ** a[79])
    c = np.where(a[75] > 1.0, a[80], b1)
    frac = np.clip((m - 1.0) / (a[75] - 1.0), 0.0, None)
    g = np.select(
        [m <= 1.0, m <= a[75]],
        [a[76] + a[77] * np.abs(m - a[78]) ** a[79], b1 + (a[80] - b1) * frac ** a[81]],
        c - 10.0 * c * (m - a[75]),
    )
    return np.where(m > a[75] + 0.1, 0.0, np.maximum(g, 0.0))


def _delta_r(m, a, m_hook):
    def rat(x):
        return (a[38] + a[39] * x**3.5) / (a[40] * x**3 + x ** a[41]) - 1.0

    b2 = rat(2.0)
    f1 = np.clip((m - m_hook) / (a[42] - m_hook), 0.0, None)
    f2 = np.clip((m - a[42]) / (2.0 - a[42]), 0.0, None)
    return np.select(
        [m <= m_hook, m <= a[42], m <= 2.0],
        [0.0, a[43] * np.sqrt(f1), a[43] + (b2 - a[43]) * f2 ** a[44]],
        rat(m),
    )


def ms_luminosity_radius(m, z=0.02, t_myr=0.0) -> tuple[np.ndarray, np.ndarray]:
    """Luminosity and radius of a main-sequence star of age ``t_myr``, HPT2000 eqs (12)-(24).

    Parameters
    ----------
    m : array_like
        Initial mass (Msun), 0.1-100; NaN outside.
    z : array_like
        Metallicity (Z_sun = 0.02 scale), 1e-4..0.03; ``ValueError`` outside.
    t_myr : array_like
        Age (Myr), broadcast against ``m`` and ``z``. NaN where the age is negative or beyond
        t_MS (the star has left the main sequence: the relation is not extrapolated).

    Returns
    -------
    L, R : ndarray
        Luminosity (Lsun) and radius (Rsun). At t = 0 they equal the Tout et al. (1996) ZAMS
        (except the radius below about 0.13 Msun, where the degenerate-radius floor of HPT2000 binds), at
        t = t_MS they equal (L_TMS, R_TMS).

    Notes
    -----
    Used for the upper edge of the main-sequence band for masses whose t_MS exceeds the age of the
    Universe (evaluate at 13.8 Gyr).
    """
    m_in = as_float(m, "Msun")
    t = as_float(t_myr, "Myr")
    c = coefficients(z)
    m_safe, ok = mass_mask(m_in, *MASS_RANGE)
    m_safe, zz, t = np.broadcast_arrays(m_safe, c.z, t)
    ok = np.broadcast_to(ok, m_safe.shape)
    a = c.a
    m = m_safe
    with np.errstate(all="ignore"):
        tb = _t_bgb(m, a)
        th = _mu_hook(m, a) * tb
        tm = np.maximum(th, c.x_ms * tb)
        ok = ok & (t >= 0.0) & (t <= tm)
        t = np.where(ok, t, 0.0)
        lz = zams_luminosity(m, zz)
        rz = zams_radius(m, zz)
        lt = _l_tms(m, a)
        rt = _r_tms(m, a, rz)

        tau = t / tm
        eps = 0.01
        tau1 = np.minimum(1.0, t / th)
        tau2 = np.clip((t - (1.0 - eps) * th) / (eps * th), 0.0, 1.0)

        al = _alpha_l(m, a)
        bl = _beta_l(m, a)
        eta = _eta_l(m, zz)
        dl = _delta_l(m, a, c.m_hook)
        lx = np.log10(lt / lz)
        logl = al * tau + bl * tau**eta + (lx - al - bl) * tau**2 - dl * (tau1**2 - tau2**2)

        ar = _alpha_r(m, a)
        br = _beta_r(m, a)
        gr = _gamma_r(m, a)
        dr = _delta_r(m, a, c.m_hook)
        rx = np.log10(rt / rz)
        logr = (
            ar * tau + br * tau**10 + gr * tau**40 + (rx - ar - br - gr) * tau**3
            - dr * (tau1**3 - tau2**3)
        )
        lum = lz * 10.0**logl
        rad = rz * 10.0**logr
        # Degenerate low-mass stars (HPT2000 eq 24 as in SSE): X = 0.76 - 3 Z.
        r_degen = 0.0258 * (1.0 + (0.76 - 3.0 * zz)) ** (5.0 / 3.0) * m ** (-1.0 / 3.0)
        rad = np.where(m < c.m_hook - 0.3, np.maximum(rad, r_degen), rad)
    return masked(lum, ok), masked(rad, ok)
