"""Model loci of one metallicity, sampled on a mass grid (layer 2, built on hrstage.models).

Every locus is a curve in (log Teff, log L) parametrised by initial mass:

- ``zams``: Tout et al. (1996) eqs 1-2;
- ``tams``: HPT2000 eqs 8-9 (masses that leave the main sequence within ``max_age_myr``);
- ``ms_upper``: the main-sequence upper edge -- the TAMS, or for masses whose t_MS (HPT2000
  eqs 4-7) is longer than ``max_age_myr`` their position at that age (HPT2000 eqs 12-24);
- ``ehg``: end of the Hertzsprung gap -- base of the giant branch (eq 10 with eq 46) below M_FGB,
  He ignition (eqs 49-50) above it;
- ``hei``: He ignition (tip of the giant branch below M_FGB, blue ignition above; NaN row at the
  M_FGB jump), ``agb``: the AGB radius (eq 74) at the He-ignition luminosity;
- ``zahb_*``: zero-age horizontal branch of low-mass stars (HPT2000 eqs 53-54) for initial masses
  from the age-limit mass to M_HeF, core mass at the helium flash, every envelope mass between
  none and the full initial envelope (giant-branch mass loss sets which part a population fills);
- white-dwarf constant-radius lines from eq 91.
"""

from __future__ import annotations

import numpy as np

from ..models import hpt2000 as hpt
from ..models import stellar, tout1996

LOG_TSUN = float(np.log10(stellar.TEFF_SUN))


def logt_from_lr(logl, logr):
    """log Teff from log L and log R (Stefan-Boltzmann, through hrstage.models.stellar)."""
    return np.log10(stellar.teff_from_lr(10.0 ** np.asarray(logl), 10.0 ** np.asarray(logr)))


def _log(x):
    x = np.asarray(x, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(x > 0, np.log10(np.where(x > 0, x, 1.0)), np.nan)


class Loci:
    """All loci of one metallicity on one mass grid (plain arrays, log units)."""

    def __init__(self, z: float, params):
        self.z = float(z)
        p = params
        self._max_age = float(p.max_age_myr)
        m_hook, m_hef, m_fgb = (float(v) for v in hpt.critical_masses(z))
        self.m_hook, self.m_hef, self.m_fgb = m_hook, m_hef, m_fgb
        if p.supergiant_mass is None:
            m_sg = float(hpt.carbon_ignition_mass(z, mc=p.supergiant_core_mass))
        else:
            m_sg = float(p.supergiant_mass)
        self.m_sg = m_sg
        # mass that just reaches its TAMS at max_age (t_MS decreases with mass)
        fine = np.geomspace(0.3, 3.0, 3000)
        tf = np.asarray(hpt.t_ms(fine, z), dtype=float)
        self.m_age = float(10 ** np.interp(np.log10(p.max_age_myr), np.log10(tf[::-1]), np.log10(fine[::-1])))
        extra = [
            np.linspace(max(m_hef - 0.4, 0.1), m_hef, 41),
            [m_fgb * (1 - 1e-6), m_fgb * (1 + 1e-6), m_sg, self.m_age, m_hook],
        ]
        m = np.unique(np.concatenate([np.geomspace(0.1, 100.0, int(p.n_mass)), *extra]))
        m = m[(m >= 0.1) & (m <= 100.0)]
        self.m = m
        lz, rz = tout1996.zams_luminosity(m, z), tout1996.zams_radius(m, z)
        self.zams = self._pos(lz, rz)
        tms = np.asarray(hpt.t_ms(m, z), dtype=float)
        self.t_ms = tms
        lt, rt = hpt.l_tms(m, z), hpt.r_tms(m, z)
        self.tams = self._pos(lt, rt)
        young = tms > p.max_age_myr
        la, ra = hpt.ms_luminosity_radius(m, z, np.where(young, p.max_age_myr, 0.0))
        up_l = np.where(young, la, lt)
        up_r = np.where(young, ra, rt)
        self.ms_upper = self._pos(up_l, up_r)
        self.evolved = ~young  # masses that reach the TAMS within max_age
        lb = hpt.l_bgb(m, z)
        rb = hpt.r_gb(m, lb, z)
        lh = hpt.l_hei(m, z)
        rh = hpt.r_hei(m, z)
        below = m < m_fgb
        self.bgb = self._pos(lb, rb)
        self.hei = self._pos(lh, rh)
        self.ehg = self._pos(np.where(below, lb, lh), np.where(below, rb, rh))
        self.agb = self._pos(lh, hpt.r_agb(m, lh, z))
        self.below_fgb = below
        # mean post-main-sequence luminosity of a track (for supergiant masses from L)
        self.logl_post = (self.tams[1] + self.ehg[1] + self.hei[1]) / 3.0
        self._zahb()

    def _zahb(self, n_init: int = 24, n_env: int = 160):
        """Zero-age horizontal-branch samples: initial mass x envelope fraction (flattened arrays).

        ``zahb_logt, zahb_logl`` positions, ``zahb_mass`` current (HB) mass, ``zahb_minit`` initial
        mass; ``zahb_ref`` is the ZAHB of the age-limit mass (the oldest stars) for drawing.
        """
        z = self.z
        lo = min(max(self.m_age, 0.5), 0.98 * self.m_hef)
        mi = np.linspace(lo, 0.999 * self.m_hef, n_init)
        mc = np.asarray(hpt.mc_hei(mi, z), dtype=float)
        q = np.geomspace(1e-4, 1.0, n_env)
        m_now = mc[:, None] + q[None, :] * (mi - mc)[:, None]
        mcb = np.broadcast_to(mc[:, None], m_now.shape)
        lz, rz = hpt.l_zahb(m_now, mcb, z), hpt.r_zahb(m_now, mcb, z)
        t, l = self._pos(lz, rz)
        self.zahb_logt, self.zahb_logl = t.ravel(), l.ravel()
        self.zahb_mass = m_now.ravel()
        self.zahb_minit = np.broadcast_to(mi[:, None], m_now.shape).ravel()
        self.zahb_ref = (t[0], l[0], m_now[0])

    @staticmethod
    def _pos(l, r):
        logl, logr = _log(l), _log(r)
        return logt_from_lr(logl, logr), logl

    def hg_track(self, mass: float, n: int = 40):
        """Positions across the Hertzsprung gap of one mass (HPT2000 eqs 26-27, log-linear in tau)."""
        z = self.z
        lt, rt = _log(hpt.l_tms(mass, z)), _log(hpt.r_tms(mass, z))
        if mass < self.m_fgb:
            le = _log(hpt.l_bgb(mass, z))
            re = _log(hpt.r_gb(mass, 10**le, z))
        else:
            le, re = _log(hpt.l_hei(mass, z)), _log(hpt.r_hei(mass, z))
        tau = np.linspace(0.0, 1.0, n)
        logl = lt + tau * (le - lt)
        logr = rt + tau * (re - rt)
        return logt_from_lr(logl, logr), logl

    def ms_tracks(self, masses, n: int = 17):
        """Main-sequence tracks (logt, logl) of shape (len(masses), n), ZAMS to the upper edge."""
        masses = np.asarray(masses, dtype=float)
        tend = np.minimum(np.asarray(hpt.t_ms(masses, self.z), dtype=float), self._max_age)
        f = np.linspace(0.0, 1.0, n) * (1 - 1e-9)
        l, r = hpt.ms_luminosity_radius(masses[:, None], self.z, tend[:, None] * f[None, :])
        return self._pos(l, r)

    def hg_tracks(self, masses, n: int = 17):
        """Hertzsprung-gap tracks (logt, logl), TAMS to the end of the gap, shape (len, n)."""
        masses = np.asarray(masses, dtype=float)
        z = self.z
        lt, rt = _log(hpt.l_tms(masses, z)), _log(hpt.r_tms(masses, z))
        below = masses < self.m_fgb
        lb = hpt.l_bgb(masses, z)
        le = np.where(below, _log(lb), _log(hpt.l_hei(masses, z)))
        re = np.where(below, _log(hpt.r_gb(masses, lb, z)), _log(hpt.r_hei(masses, z)))
        tau = np.linspace(0.0, 1.0, n)[None, :]
        logl = lt[:, None] + tau * (le - lt)[:, None]
        logr = rt[:, None] + tau * (re - rt)[:, None]
        return logt_from_lr(logl, logr), logl

    def giant_tracks(self, masses, logl_max: float, n: int = 60):
        """Giant-branch + AGB tracks: R_GB (eq 46) from the BGB to L_HeI, R_AGB (eq 74) above."""
        masses = np.asarray(masses, dtype=float)
        z = self.z
        lb = _log(hpt.l_bgb(masses, z))
        lh = _log(hpt.l_hei(masses, z))
        f = np.linspace(0.0, 1.0, n)[None, :]
        logl = lb[:, None] + f * (logl_max - lb)[:, None]
        mm = np.broadcast_to(masses[:, None], logl.shape)
        on_gb = logl <= lh[:, None]
        rg = _log(hpt.r_gb(mm, 10**logl, z))
        ra = _log(hpt.r_agb(mm, 10**logl, z))
        logr = np.where(on_gb, rg, ra)
        return logt_from_lr(logl, logr), logl

