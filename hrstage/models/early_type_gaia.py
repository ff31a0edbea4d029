"""O-B8 stars on Gaia photometry: Teff and BC_G bluer than the dwarf sequence's Gaia colours.

The Pecaut & Mamajek (2013) mean dwarf sequence (:mod:`hrstage.models.pecaut_mamajek2013`) gives
Gaia Bp-Rp only from B9V ((Bp-Rp)_0 = -0.120, 10 700 K) on; O3V-B8V have Teff, B-V, V-Ic, BC_V and
(most) G-V, but no Bp-Rp. This module reads bluer colours.

Relation (ours, from published data)
------------------------------------
* **Teff: model-atmosphere colour scale anchored on the table.** Gaia Bp-Rp of hot stars measures
  the slope of the Paschen continuum. Its run with Teff is taken from the hydrogen model atmospheres
  of the Montreal synthetic photometry (lowest gravity tabulated, log g = 7.0; Holberg & Bergeron
  2006; Tremblay, Bergeron & Gianninas 2011; Bedard et al. 2020 -- :mod:`hrstage.models.montreal_wd`),
  and anchored on the table's B9V point::

      log Teff(c) = log Teff_B9V + [log T_7(c) - log T_7(c_B9V)]

  with T_7 the Teff of the log g = 7 sequence at colour c. The anchor removes the zero point of
  the high-gravity models (their Teff at c_B9V is 12 900 K, not 10 700 K).
* **Check against the table's own rows.** The same models give V-Ic at each Bp-Rp; through the
  table's empirical V-Ic -> Teff of B0V-B8V (offset to the table at B9V-A1V, +0.05 mag) the two
  routes agree within 5.5 % from B9V to ~22 000 K ((Bp-Rp)_0 = -0.45) and part beyond, where V-Ic
  and Bp-Rp are both nearly flat: 10 % at -0.50, 0.12 dex at -0.55 (1.7 sigma of the stated
  error; tests/models/test_early_type_gaia.py).
* **BC_G = BC_V(Teff) - (G - V)(Teff)**, both from the table (BC_V on the IAU scale; G - V given
  for O5V, O8V, B0V-B9V: +0.00 to +0.02 mag), interpolated in log Teff.

Validity and errors
-------------------
(Bp-Rp)_0 from the colour of O3V (45 900 K, the table's hottest) to -0.120 (B9V);
:func:`teff` returns NaN redder than the anchor and caps at 45 900 K bluer than the O3V colour
(``capped``: the colour is bluer than any dwarf of the table, or than the models' bluest). Bp-Rp is nearly flat above
~15 000 K (0.05 mag between 30 and 45 kK), so the Teff error is large: :data:`SIGMA_LOGT` (0.04
dex, our choice: half the log ratio of the model and table Teff at the anchor, the size of the
gravity effect the anchor removes) and :data:`SIGMA_COLOUR` (0.02 mag of colour zero point,
passband and reddening, our choice) through the slope of the relation, plus the table's 4 % dwarf
vs giant term. These are dwarf colours; giants and supergiants of the same colour differ by a few
hundred K. Indicative, never a spectroscopic Teff.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from . import montreal_wd, pecaut_mamajek2013

CITATION = ("Pecaut & Mamajek 2013 (B9V anchor, BC_V, G-V) with the Montreal DA log g=7 colour scale "
            "(Holberg & Bergeron 2006; Tremblay+2011; Bedard+2020)")
#: 1-sigma systematic of log Teff (dex), our choice (see module docstring)
SIGMA_LOGT = 0.04
#: 1-sigma colour systematic (mag) added to the measured colour error, our choice
SIGMA_COLOUR = 0.02
#: 1-sigma of BC_G (mag): the table's BC_V and G - V (0.05, 0.025 as in pecaut_mamajek2013)
SIGMA_BC = float(np.hypot(pecaut_mamajek2013.SIGMA_BC, pecaut_mamajek2013.SIGMA_GV))
#: extra 1-sigma of log Teff (dex) where the colour is bluer than the table's hottest dwarf (capped at
#: 45 900 K): our choice, 0.1 dex, the span from O3V to the hottest O2 stars and beyond
SIGMA_LOGT_CAPPED = 0.1
_MODEL_LOGG = 7.0


@lru_cache(maxsize=1)
def _nodes():
    """(colour, log Teff) nodes of the anchored scale, by increasing colour, and the anchor."""
    t = pecaut_mamajek2013.table()
    has = np.isfinite(t["bp_rp"])
    k = int(np.argmin(np.where(has, t["bp_rp"], np.inf)))        # bluest row with a Gaia colour: B9V
    c_anchor, lt_anchor = float(t["bp_rp"][k]), float(np.log10(t["teff"][k]))
    loggs, xs, mags, lts, masses, bcs = montreal_wd.sequences("H", "gaia")
    j = int(np.flatnonzero(np.isclose(loggs, _MODEL_LOGG))[0])
    x, lt = xs[j], lts[j]
    shift = lt_anchor - float(np.interp(c_anchor, x, lt))
    keep = x < c_anchor
    return (np.append(x[keep], c_anchor), np.append(lt[keep] + shift, lt_anchor), c_anchor,
            str(t["spt"][k]))


def colour_range():
    """((Bp-Rp)_0 of the table's hottest Teff on the scale, of the anchor)."""
    x, lt, c_anchor, _ = _nodes()
    lt_max = np.log10(pecaut_mamajek2013.TEFF_RANGE[1])
    return float(np.interp(lt_max, lt[::-1], x[::-1])), c_anchor


def teff(bp_rp0):
    """``(teff, capped)``: Teff (K) from dereddened Gaia Bp-Rp bluer than the anchor (NaN redder or
    not finite); ``capped`` where the colour is bluer than that of the table's hottest dwarf (Teff set
    to it)."""
    c = np.asarray(bp_rp0, dtype=float)
    x, lt, c_anchor, _ = _nodes()
    lt_max = np.log10(pecaut_mamajek2013.TEFF_RANGE[1])
    with np.errstate(invalid="ignore"):
        ok = c <= c_anchor
        val = np.interp(c, x, lt)          # bluer than the models' bluest colour: their hottest Teff
        capped = ok & ((val > lt_max) | (c < x[0]))
    out = np.where(ok, 10.0 ** np.minimum(val, lt_max), np.nan)
    return out, capped


@lru_cache(maxsize=1)
def _gv_nodes():
    t = pecaut_mamajek2013.table()
    ok = np.isfinite(t["g_v"])
    lt = np.log10(t["teff"][ok])
    order = np.argsort(lt)
    return lt[order], t["g_v"][ok][order]


def g_minus_v(teff_k):
    """G - V (mag) of the table at Teff, linear in log Teff between the rows that give it (end values
    held beyond them: O5V's +0.01 for the hottest); NaN outside the table's Teff range."""
    t = np.asarray(teff_k, dtype=float)
    lt_nodes, gv = _gv_nodes()
    with np.errstate(divide="ignore", invalid="ignore"):
        lt = np.log10(np.where(t > 0, t, np.nan))
    lo, hi = np.log10(pecaut_mamajek2013.TEFF_RANGE[0]), np.log10(pecaut_mamajek2013.TEFF_RANGE[1])
    return np.where((lt >= lo) & (lt <= hi), np.interp(lt, lt_nodes, gv), np.nan)


def bc_g(teff_k):
    """BC_G (mag, M_bol,sun = 4.74) = BC_V - (G - V) of the table at Teff."""
    return pecaut_mamajek2013.bc_v(teff_k) - g_minus_v(teff_k)


def bc_slope_hot() -> float:
    """d BC_V / d log Teff (mag/dex) between the table's two hottest rows (O3V, O4V)."""
    lt, bc = pecaut_mamajek2013._bc_nodes()
    return float((bc[-1] - bc[-2]) / (lt[-1] - lt[-2]))
