"""log g -> luminosity through the model masses along the loci (iterated to consistency)."""

from __future__ import annotations

import numpy as np

from ..models import stellar
from ._core import _group_feh
from ..stagemap import stage_map


def logl_from_logg(logt, logg, feh=None, *, max_iter: int = 40, tol: float = 1e-3, **params):
    """Luminosity from Teff and log g with the mass the stage map gives at that position.

    ``L = M (Teff/Teff_sun)^4 (g_sun/g)`` (Stefan-Boltzmann with R^2 = G M / g); M starts at
    a gravity-dependent guess and is replaced by the map's mass estimate at (log Teff, log L) until log L changes by
    less than ``tol`` dex (damped: the mean of old and new log M). Vectorised over stars; per-star
    metallicities use the same [Fe/H] grid as :func:`classify_hr`.

    Parameters
    ----------
    logt : array_like
        log10(Teff / K).
    logg : array_like
        log10(g / cm s^-2).
    feh : float or array_like, optional
        [Fe/H]; None = solar.

    Returns
    -------
    logl : ndarray
        log10(L / Lsun) (NaN where no mass could be found or inputs are not finite).
    mass : ndarray
        The mass (Msun) used for the last step.
    converged : ndarray of bool
        False where the iteration did not settle (flag LOGG_ITERATION downstream) or no mass
        relation applies at the position (subdwarfs, outside the map).
    """
    logt, logg = np.broadcast_arrays(np.asarray(logt, float), np.asarray(logg, float))
    shape = logt.shape
    logt, logg = logt.ravel(), logg.ravel()
    n = logt.size
    _, groups, _ = _group_feh(feh, n)
    logl = np.full(n, np.nan)
    mass = np.full(n, np.nan)
    conv = np.zeros(n, dtype=bool)
    teff = 10.0**logt
    for fg, idx in groups.items():
        sm = stage_map(fg, **params)
        t, g = teff[idx], logg[idx]
        ok = np.isfinite(t) & np.isfinite(g) & (t > 0)
        # starting mass: 0.6 Msun for white-dwarf gravities (log g >= 6.5; the mean white-dwarf
        # mass, common practice), the ZAMS mass of the Teff for dwarf gravities (log g >= 3.8),
        # otherwise 1.2 Msun (a typical field giant)
        m_z = sm.ms_mass_from_logt(np.log10(np.where(ok, t, 1.0)))
        m0 = np.where(g >= 6.5, 0.6, np.where((g >= 3.8) & np.isfinite(m_z), m_z, 1.2))
        logm = np.log10(m0)
        ll = stellar.logl_from_teff_logg_mass(t, g, 10**logm)
        done = ~ok
        good = np.zeros(len(idx), bool)
        for _ in range(max_iter):
            act = ~done
            if not act.any():
                break
            mnew = sm.mass_at(np.log10(t[act]), ll[act])
            fin = np.isfinite(mnew)
            lm_new = np.where(fin, np.log10(np.where(fin, mnew, 1.0)), logm[act])
            lm = 0.5 * (logm[act] + lm_new)
            lnew = stellar.logl_from_teff_logg_mass(t[act], g[act], 10**lm)
            settled = fin & (np.abs(lnew - ll[act]) < tol)
            logm[act] = lm
            ll[act] = lnew
            ai = np.nonzero(act)[0]
            good[ai[settled]] = True
            done[ai[settled]] = True
        m_final = sm.mass_at(np.log10(t), ll)
        good &= np.isfinite(m_final)
        logl[idx] = np.where(ok & np.isfinite(ll), ll, np.nan)
        mass[idx] = np.where(ok, 10**logm, np.nan)
        conv[idx] = good
    return logl.reshape(shape), mass.reshape(shape), conv.reshape(shape)
