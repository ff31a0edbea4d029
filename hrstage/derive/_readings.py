"""Readings of blue and faint photometry: white dwarf, hot star, hot subdwarf (Gaia and Johnson).

A *reading* is one way of turning (dereddened colour, absolute magnitude) into (Teff, L). The cool
relations of :mod:`hrstage.derive.photometric` are one reading; this module adds

* the **white-dwarf reading**: the Montreal DA (or DB) synthetic photometry inverted in
  (colour, absolute magnitude) (:mod:`hrstage.models.montreal_wd`), for stars on or near the
  white-dwarf sequence;
* the **hot-star reading** (Gaia): the Pecaut & Mamajek (2013) dwarf sequence for
  -0.12 <= (BP-RP)_0 < 0.20, bluer than the Casagrande et al. (2021) limit;
* the **hot-subdwarf reading** (Gaia): bluer than -0.12, where the dwarf sequence has no Gaia
  colours, for stars fainter than M_G = :data:`SUBDWARF_MIN_ABS_G`: the colour scale of the
  lowest-gravity DA sequence (log g = 7), an approximation flagged OUTSIDE_VALIDITY with a wide
  Teff error.

Which reading: the probability that the star lies on the white-dwarf side of the bright edge of
the white-dwarf reading (the log g = 6.5 sequence, M_edge(colour)) given its absolute-magnitude
error, p_wd = Phi((M - M_edge) / sigma_M). The more probable reading gives the HR position; where
the other one keeps at least :data:`P_AMBIGUOUS` of the probability and can be computed, it is
returned too (``other_*`` extras, TWO_READINGS flag), so that the classifier can mix the stage
probabilities of both (see ``docs/derive.md``).
"""

from __future__ import annotations

import math

import numpy as np

from ..models import bolometric, montreal_wd, pecaut_mamajek2013
from ._constants import LN10
from ._errors import Propagator, derivative

#: minimum probability of the other reading for it to be reported (and TWO_READINGS flagged)
P_AMBIGUOUS = 0.05
#: Gaia: (BP-RP)_0 below which the hot-star reading (Pecaut & Mamajek) replaces Casagrande 2021
HOT_GAIA_LIMIT = 0.20
#: Gaia: bluer than the dwarf sequence's Gaia colours, stars fainter than this (M_G) are read as hot
#: subdwarfs (B9V has M_G = 0.5 in the sequence; hotter dwarfs are brighter; sdB/sdO stars have
#: M_G ~ 3-6 -- common practice); brighter ones have no Gaia-only Teff
SUBDWARF_MIN_ABS_G = 2.0
SUBDWARF_SIGMA_TEFF_FRAC = 0.15   # our choice: the log g 7 H-atmosphere colours are not sdB models
SUBDWARF_SIGMA_BC = 0.10
#: magnitude slope of the white-dwarf edge with colour, for its share of sigma_M (from the grid: ~3.3)
_EDGE_SLOPE = 3.3
_SQRT2 = math.sqrt(2.0)

def _ndtr(x):
    """Standard normal CDF: scipy's, imported on first use (scipy.special costs ~0.2 s of start-up
    to every run, also those that never need it)."""
    try:
        from scipy.special import ndtr
    except ImportError:  # pragma: no cover - scipy is a dependency
        from math import erf
        return 0.5 * (1.0 + np.vectorize(erf)(np.asarray(x) / _SQRT2))
    return ndtr(x)


def edge_screen(colour, abs_mag, sig_m):
    """Cheap pre-selection of the rows that may have a white-dwarf reading (a linear bound under
    the bright edge, 1 mag or 3 sigma of margin): only these are read through the grid."""
    bound = 9.6 + 3.0 * colour - np.maximum(1.0, 3.0 * sig_m)
    return (abs_mag > bound) & (colour < 1.7) & (colour > -0.8)


def _position(logt_fn, bc_fn, c, m, sig_c, sig_m, sig_lt_sys, sig_bc_sys, mbol_sun):
    """(logt, logl, logt_err, logl_err, corr) of a reading given as functions of (colour, M)."""
    logt = logt_fn(c, m)
    bc = bc_fn(c, m)
    logl = bolometric.logl_from_mbol(m + bc, mbol_sun)
    dlt_dc = derivative(lambda x: logt_fn(x, m), c, 1e-3, f0=logt)
    dlt_dm = derivative(lambda x: logt_fn(c, x), m, 1e-3, f0=logt)
    dbc_dc = derivative(lambda x: bc_fn(x, m), c, 1e-3, f0=bc)
    dbc_dm = derivative(lambda x: bc_fn(c, x), m, 1e-3, f0=bc)
    fix = lambda a: np.where(np.isfinite(a), a, 0.0)  # noqa: E731 - edge of a table: no slope known
    prop = Propagator(c.size)
    prop.add(sig_c, fix(dlt_dc), -0.4 * fix(dbc_dc))
    prop.add(sig_m, fix(dlt_dm), -0.4 * (1.0 + fix(dbc_dm)))
    prop.add(sig_lt_sys, 1.0, 0.0)
    prop.add(sig_bc_sys, 0.0, -0.4)
    elt, ell, corr = prop.result()
    bad = ~(np.isfinite(logt) & np.isfinite(logl))
    return (np.where(bad, np.nan, logt), np.where(bad, np.nan, logl), np.where(bad, np.nan, elt),
            np.where(bad, np.nan, ell), np.where(bad, np.nan, corr))


def white_dwarf(c, m, sig_c, sig_m, *, system, release, atmosphere):
    """The white-dwarf reading on the given rows: dict with ``logt, logl, logt_err, logl_err, corr,
    p, mass, logg, extrapolated``."""
    if system == "gaia":
        cg, mg = montreal_wd.to_grid_passbands(c, m, release)
    else:
        cg, mg = c, m

    def logt_fn(x, y):
        return np.log10(montreal_wd.read(x, y, atmosphere=atmosphere, system=system)["teff"])

    def bc_fn(x, y):
        return montreal_wd.read(x, y, atmosphere=atmosphere, system=system)["bc"]

    base = montreal_wd.read(cg, mg, atmosphere=atmosphere, system=system)
    out = dict(zip(("logt", "logl", "logt_err", "logl_err", "corr"),
                   _position(logt_fn, bc_fn, cg, mg, sig_c, sig_m, montreal_wd.SIGMA_TEFF_FRAC / LN10,
                             montreal_wd.SIGMA_BC, bolometric.IAU_MBOL_SUN)))
    edge = montreal_wd.sequence_mag(cg, montreal_wd.LOGG_EXTRAPOLATE[0], atmosphere=atmosphere, system=system)
    s = np.hypot(sig_m, _EDGE_SLOPE * sig_c)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(s > 0, (mg - edge) / s, np.where(mg >= edge, np.inf, -np.inf))
    p = _ndtr(z)
    out["p"] = np.where(np.isfinite(edge), p, np.where(np.isfinite(out["logt"]), 1.0, 0.0))
    out.update(mass=base["mass"], logg=base["logg"], extrapolated=base["extrapolated"])
    return out


def hot_star(c, m, sig_c, sig_m):
    """Gaia hot-star reading (Pecaut & Mamajek 2013 dwarf sequence) on the given rows."""
    pm = pecaut_mamajek2013

    def logt_fn(x, y):
        return np.log10(pm.teff_from_bp_rp(x))

    def bc_fn(x, y):
        return pm.bc_g(x)

    sig_bc = math.hypot(pm.SIGMA_BC, pm.SIGMA_GV)
    return dict(zip(("logt", "logl", "logt_err", "logl_err", "corr"),
                    _position(logt_fn, bc_fn, c, m, sig_c, sig_m, pm.SIGMA_TEFF_FRAC / LN10, sig_bc,
                              bolometric.IAU_MBOL_SUN)))


def hot_subdwarf(c, m, sig_c, sig_m, *, release):
    """Gaia hot-subdwarf reading: colour scale of the log g = 7 DA sequence (approximate)."""
    cg, mg = montreal_wd.to_grid_passbands(c, m, release)

    def logt_fn(x, y):
        return np.log10(montreal_wd.at_logg(x, 7.0)[0])

    def bc_fn(x, y):
        return montreal_wd.at_logg(x, 7.0)[1]

    return dict(zip(("logt", "logl", "logt_err", "logl_err", "corr"),
                    _position(logt_fn, bc_fn, cg, mg, sig_c, sig_m, SUBDWARF_SIGMA_TEFF_FRAC / LN10,
                              SUBDWARF_SIGMA_BC, bolometric.IAU_MBOL_SUN)))
