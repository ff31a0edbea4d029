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
  Teff error;
* the **early-type reading** (Gaia): bluer than -0.12 and brighter than that, O-B8 stars: the same
  colour scale anchored on the sequence's B9V point, BC_G from the sequence's BC_V and G - V
  (:mod:`hrstage.models.early_type_gaia`), flagged COLOUR_SATURATED (Bp-Rp is nearly flat above
  ~15 000 K: wide Teff error).

Which reading: the probability that the star lies on the white-dwarf side of the bright edge of
the white-dwarf reading (the log g = 6.5 sequence, M_edge(colour)) given its absolute-magnitude
error, p_wd = Phi((M - M_edge) / sigma_M). The more probable reading gives the HR position; where
the other one keeps at least :data:`P_AMBIGUOUS` of the probability and can be computed, it is
returned too (``other_*`` extras, TWO_READINGS flag), so that the classifier can mix the stage
probabilities of both (see ``docs/derive.md``).
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from ..models import bolometric, early_type_gaia, montreal_wd, pecaut_mamajek2013
from ._constants import LN10
from ._errors import Propagator

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

#: the complementary error function of the standard library, element-wise (``math.erfc`` is the C
#: library's, correct to double precision, also far in the tails)
_ERFC = np.frompyfunc(math.erfc, 1, 1)


def _ndtr(x):
    """Standard normal CDF, Phi(x) = erfc(-x / sqrt(2)) / 2 (common practice): the standard
    library's erfc element by element, so that no run pays scipy's import (~0.1-0.2 s) for it. The
    erfc form keeps full relative precision in the lower tail, where 1 + erf would cancel; agrees
    with ``scipy.special.ndtr`` to a few units of the last place (tests/derive)."""
    return 0.5 * np.asarray(_ERFC(np.asarray(x, dtype=float) / -_SQRT2), dtype=float)


@lru_cache(maxsize=None)
def _edge_nodes(system):
    """The bright edge of the white-dwarf reading (log g 6.5, brighter of DA and DB) on a colour grid."""
    c = np.linspace(-0.7, 1.8, 101)
    m = np.fmin(montreal_wd.sequence_mag(c, montreal_wd.LOGG_EXTRAPOLATE[0], atmosphere="H", system=system),
                montreal_wd.sequence_mag(c, montreal_wd.LOGG_EXTRAPOLATE[0], atmosphere="He", system=system))
    ok = np.isfinite(m)
    return c[ok], m[ok]


def quick_screen(colour, abs_mag, p_sig, plx, sig_m_dist=None, system="gaia"):
    """Rows that may need another reading, from a bound that costs a few passes over the arrays:
    Gaia (BP-RP)_0 < 0.20 (the hot-star and hot-subdwarf readings), or fainter than a line under
    the white-dwarf edge (Gaia: M_G > 9.8 + 2.7 (BP-RP)_0, below the log g 6.5 sequences of both
    grids for 0.2 <= BP-RP <= 1.8; Johnson: M_V > 8.0 + 4.0 (B-V)_0, and > 4.5 bluer than -0.25, under
    the edge at every B-V of the grids) minus a margin
    of max(1 mag, 3 sigma of the distance term). ``sig_m_dist``: that sigma if known on every row,
    else it follows from the parallax error ``p_sig`` and parallax ``plx`` (mas). NaN rows are never
    selected."""
    with np.errstate(invalid="ignore", divide="ignore"):
        if system == "gaia":
            gap = 2.7 * colour
            gap += 9.8
        else:
            gap = 4.0 * colour
            gap += 8.0
            np.copyto(gap, 4.5, where=colour < -0.25)
        gap -= abs_mag                       # > 0: brighter than the line by that much
        near = gap < 1.0
        if sig_m_dist is not None:
            near |= gap < 3.0 * sig_m_dist
        else:                                # gap < 3 (5 / ln 10) p_sig / plx, without dividing
            gap *= plx
            near |= gap < (3.0 * 5.0 / math.log(10.0)) * p_sig
        if system == "gaia":
            near |= colour < HOT_GAIA_LIMIT
        return near


def edge_screen(colour, abs_mag, sig_m, system="gaia"):
    """Cheap pre-selection of the rows that may have a white-dwarf reading: fainter than the bright
    edge of the reading minus 1 mag or 3 sigma, inside its colour span. Only these rows are read
    through the grid (one interpolation per row)."""
    c, m = _edge_nodes(system)
    edge = np.interp(colour, c, m)
    return (abs_mag > edge - np.maximum(1.0, 3.0 * sig_m)) & (colour >= c[0] - 0.1) & (colour <= c[-1])


def _slopes(fn, c, m, h=1e-3):
    """``fn(c, m) -> (logt, bc)`` and its partial derivatives, in one batched evaluation of 3 n
    points (forward differences: exact inside a segment of the interpolated tables); where the
    forward point falls off a table, the backward difference on those rows; 0 where neither exists."""
    n = c.size
    vals = fn(np.concatenate([c, c + h, c]), np.concatenate([m, m, m + h]))
    outs = []
    for v in vals:
        v0, vc, vm = v[:n], v[n:2 * n], v[2 * n:]
        outs.append([v0, (vc - v0) / h, (vm - v0) / h])
    fin0 = np.isfinite(outs[0][0])
    redo_c = np.flatnonzero(fin0 & ~(np.isfinite(outs[0][1]) & np.isfinite(outs[1][1])))
    redo_m = np.flatnonzero(fin0 & ~(np.isfinite(outs[0][2]) & np.isfinite(outs[1][2])))
    if redo_c.size or redo_m.size:
        back = fn(np.concatenate([c[redo_c] - h, c[redo_m]]), np.concatenate([m[redo_c], m[redo_m] - h]))
        for o, v in zip(outs, back):
            o[1][redo_c] = (o[0][redo_c] - v[:redo_c.size]) / h
            o[2][redo_m] = (o[0][redo_m] - v[redo_c.size:]) / h
    for o in outs:
        o[1] = np.where(np.isfinite(o[1]), o[1], 0.0)
        o[2] = np.where(np.isfinite(o[2]), o[2], 0.0)
    return [tuple(o) for o in outs]


def _position(fn, c, m, sig_c, sig_m, sig_lt_sys, sig_bc_sys, mbol_sun):
    """(logt, logl, logt_err, logl_err, corr) of a reading given as ``fn(colour, M) -> (logt, bc)``."""
    (logt, dlt_dc, dlt_dm), (bc, dbc_dc, dbc_dm) = _slopes(fn, c, m)
    logl = bolometric.logl_from_mbol(m + bc, mbol_sun)
    prop = Propagator(c.size)
    prop.add(sig_c, dlt_dc, -0.4 * dbc_dc)
    prop.add(sig_m, dlt_dm, -0.4 * (1.0 + dbc_dm))
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

    def fn(x, y):
        r = montreal_wd.read(x, y, atmosphere=atmosphere, system=system)
        return np.log10(r["teff"]), r["bc"]

    def grid_values(x, y):
        r = montreal_wd.read(x, y, atmosphere=atmosphere, system=system)
        return r["mass"], r["logg"], r["extrapolated"]

    out = dict(zip(("logt", "logl", "logt_err", "logl_err", "corr"),
                   _position(fn, cg, mg, sig_c, sig_m, montreal_wd.SIGMA_TEFF_FRAC / LN10,
                             montreal_wd.SIGMA_BC, bolometric.IAU_MBOL_SUN)))
    edge = montreal_wd.sequence_mag(cg, montreal_wd.LOGG_EXTRAPOLATE[0], atmosphere=atmosphere, system=system)
    s = np.hypot(sig_m, _EDGE_SLOPE * sig_c)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(s > 0, (mg - edge) / s, np.where(mg >= edge, np.inf, -np.inf))
    p = _ndtr(z)
    out["p"] = np.where(np.isfinite(edge), p, np.where(np.isfinite(out["logt"]), 1.0, 0.0))
    mass, logg, extrapolated = grid_values(cg, mg)
    out.update(mass=mass, logg=logg, extrapolated=extrapolated)
    # brighter than the edge, yet within the errors of it: the white-dwarf share of the probability
    # lies on the white-dwarf side, near the edge; its position is read at the edge ("clamped"), to
    # serve only as the other reading
    out["clamped"] = np.zeros(c.size, dtype=bool)
    missing = ~np.isfinite(out["logt"]) & np.isfinite(edge)
    near = np.flatnonzero(missing & (mg < edge) & (out["p"] >= P_AMBIGUOUS))
    # fainter than the log g 9.5 sequence (beyond the grid's extrapolation): read at that faint edge,
    # flagged as extrapolated -- still a white dwarf, not a reason to try a main-sequence relation
    faint_edge = montreal_wd.sequence_mag(cg, montreal_wd.LOGG_EXTRAPOLATE[1], atmosphere=atmosphere, system=system)
    faint = np.flatnonzero(missing & np.isfinite(faint_edge) & (mg > faint_edge))
    for rows, at, clamp in ((near, edge, True), (faint, faint_edge, False)):
        if not rows.size:
            continue
        shift = 1e-6 if clamp else -1e-6
        r = dict(zip(("logt", "logl", "logt_err", "logl_err", "corr"),
                     _position(fn, cg[rows], at[rows] + shift, sig_c[rows], sig_m[rows],
                               montreal_wd.SIGMA_TEFF_FRAC / LN10, montreal_wd.SIGMA_BC, bolometric.IAU_MBOL_SUN)))
        if not clamp:   # L from the star's own magnitude, with the BC at the faint edge
            r["logl"] = r["logl"] - 0.4 * (mg[rows] - at[rows] - shift)
            mass, logg, _ = grid_values(cg[rows], at[rows] + shift)
            out["mass"][rows] = mass
            out["logg"][rows] = logg
            out["extrapolated"][rows] = True
        for key, val in r.items():
            out[key][rows] = val
        if clamp:
            out["clamped"][rows] = np.isfinite(r["logt"])
    return out


def hot_star(c, m, sig_c, sig_m):
    """Gaia hot-star reading (Pecaut & Mamajek 2013 dwarf sequence) on the given rows."""
    pm = pecaut_mamajek2013

    def fn(x, y):
        return np.log10(pm.teff_from_bp_rp(x)), pm.bc_g(x)

    sig_bc = math.hypot(pm.SIGMA_BC, pm.SIGMA_GV)
    return dict(zip(("logt", "logl", "logt_err", "logl_err", "corr"),
                    _position(fn, c, m, sig_c, sig_m, pm.SIGMA_TEFF_FRAC / LN10, sig_bc,
                              bolometric.IAU_MBOL_SUN)))


def early_type(c, m, sig_c, sig_m):
    """Gaia O-B8 reading bluer than the dwarf sequence's Gaia colours (:mod:`hrstage.models.early_type_gaia`)
    on the given rows; ``capped`` where the colour is bluer than the table's hottest dwarf."""
    et = early_type_gaia

    def fn(x, y):
        t, _ = et.teff(x)
        return np.log10(t), et.bc_g(t)

    sig_lt = math.hypot(et.SIGMA_LOGT, pecaut_mamajek2013.SIGMA_TEFF_FRAC / LN10)
    out = dict(zip(("logt", "logl", "logt_err", "logl_err", "corr"),
                   _position(fn, c, m, np.hypot(sig_c, et.SIGMA_COLOUR), sig_m, sig_lt, et.SIGMA_BC,
                             bolometric.IAU_MBOL_SUN)))
    capped = et.teff(c)[1]
    out["capped"] = capped
    if capped.any():   # bluer than the hottest dwarf: Teff only bounded below, L moving with it via BC
        k = -0.4 * et.bc_slope_hot()
        s = np.where(capped, et.SIGMA_LOGT_CAPPED, 0.0)
        var_t = out["logt_err"] ** 2 + s ** 2
        var_l = out["logl_err"] ** 2 + (k * s) ** 2
        cov = out["corr"] * out["logt_err"] * out["logl_err"] + k * s ** 2
        out["logt_err"], out["logl_err"] = np.sqrt(var_t), np.sqrt(var_l)
        with np.errstate(invalid="ignore", divide="ignore"):
            out["corr"] = np.clip(cov / np.sqrt(var_t * var_l), -1.0, 1.0)
    return out


def hot_subdwarf(c, m, sig_c, sig_m, *, release):
    """Gaia hot-subdwarf reading: colour scale of the log g = 7 DA sequence (approximate)."""
    cg, mg = montreal_wd.to_grid_passbands(c, m, release)

    def fn(x, y):
        t, bc = montreal_wd.at_logg(x, 7.0)
        return np.log10(t), bc

    return dict(zip(("logt", "logl", "logt_err", "logl_err", "corr"),
                    _position(fn, cg, mg, sig_c, sig_m, SUBDWARF_SIGMA_TEFF_FRAC / LN10,
                              SUBDWARF_SIGMA_BC, bolometric.IAU_MBOL_SUN)))
