"""Hot part of the Pecaut & Mamajek (2013) mean dwarf sequence: Teff, BC_V and Gaia colours.

References
----------
Pecaut, M. J. & Mamajek, E. E. 2013, ApJS 208, 9, Table 5, as extended and maintained by
E. Mamajek, "A Modern Mean Dwarf Stellar Color and Effective Temperature Sequence", version
2024.05.15. The O3V-F0V rows (Teff, BC_V, B-V, Gaia DR2 Bp-Rp and G-V, M_V, M_G) are compiled into
``hrstage/data/hot_dwarf_sequence.ecsv`` by ``tools/compile_photometric_tables.py`` (values
unchanged, citation in the file's metadata).

What hrstage uses
-----------------
* :func:`teff_from_bp_rp` -- Teff from the dereddened Gaia colour, linear interpolation in
  (Bp-Rp, log Teff) between the tabulated types. Valid (enforced, NaN outside)
  :data:`BP_RP_RANGE` = -0.120 (B9V, 10 700 K) to 0.377 (F0V): the table gives no Gaia colours for
  O3V-B8V. The Gaia path uses it bluewards of the Casagrande et al. (2021) limit (0.20).
* :func:`bc_v` -- BC_V as a function of Teff, linear in log Teff, 7220-45 900 K (F0V-O3V), on the
  IAU 2015 scale (M_bol,sun = 4.74; BC_V,sun = -0.085 in the source).
* :func:`g_minus_v` -- G - V from Bp-Rp over the same colour range as :func:`teff_from_bp_rp`.

These are dwarf (class V) sequences. Giants and subgiants of the same colour are a few hundred K
cooler at B/A types; hrstage uses them for every luminosity class and widens the errors by
:data:`SIGMA_TEFF_FRAC` (our choice: the Teff step between adjacent subtypes, 3-5 %, from the table).
The Gaia colours are DR2 (the EDR3/DR3 BP-RP scale differs by < 0.01 mag for blue stars; from
memory, common practice to ignore at this precision).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from ._common import package_table

CITATION = "Pecaut & Mamajek 2013, ApJS 208, 9 (mean dwarf sequence v2024.05.15)"
#: fractional 1-sigma Teff error adopted for the interpolated sequence (our choice, see docstring)
SIGMA_TEFF_FRAC = 0.04
#: 1-sigma of BC_V adopted (the scatter of published BC_V scales for hot stars, several 0.01 mag;
#: the source's own uBCv column is not in this version) -- our choice
SIGMA_BC = 0.05
#: 1-sigma of G - V for B9-A stars (Mamajek's note: scatter of B-V vs V-G ~0.025 mag between A0V and K0V)
SIGMA_GV = 0.025


@lru_cache(maxsize=1)
def table() -> dict:
    """The compiled O3V-F0V rows as arrays (``spt``, ``teff``, ``bc_v``, ``b_v``, ``bp_rp``, ...)."""
    return package_table("hot_dwarf_sequence.ecsv")


@lru_cache(maxsize=1)
def _gaia_nodes():
    t = table()
    ok = np.isfinite(t["bp_rp"])
    c = t["bp_rp"][ok]
    order = np.argsort(c)
    gv = t["g_v"][ok][order]
    return c[order], np.log10(t["teff"][ok][order]), gv


def _bp_rp_range():
    c, _, _ = _gaia_nodes()
    return float(c[0]), float(c[-1])


BP_RP_RANGE = (-0.120, 0.377)
TEFF_RANGE = (7220.0, 45900.0)


def teff_from_bp_rp(bp_rp0):
    """Teff (K) from dereddened Gaia Bp-Rp; NaN outside :data:`BP_RP_RANGE`."""
    x = np.asarray(bp_rp0, dtype=float)
    c, lt, _ = _gaia_nodes()
    ok = (x >= c[0]) & (x <= c[-1])
    return np.where(ok, 10.0 ** np.interp(x, c, lt), np.nan)


def g_minus_v(bp_rp0):
    """G - V (mag) from dereddened Gaia Bp-Rp, interpolated in the sequence; NaN outside its range."""
    x = np.asarray(bp_rp0, dtype=float)
    c, _, gv = _gaia_nodes()
    ok = (x >= c[0]) & (x <= c[-1])
    return np.where(ok, np.interp(x, c, gv), np.nan)


@lru_cache(maxsize=1)
def _bc_nodes():
    t = table()
    lt = np.log10(t["teff"])
    order = np.argsort(lt)
    return lt[order], t["bc_v"][order]


def bc_v(teff):
    """BC_V (mag, M_bol,sun = 4.74) at Teff (K), linear in log Teff; NaN outside :data:`TEFF_RANGE`."""
    t = np.asarray(teff, dtype=float)
    lt_nodes, bc = _bc_nodes()
    with np.errstate(divide="ignore", invalid="ignore"):
        lt = np.log10(np.where(t > 0, t, np.nan))
    ok = (lt >= lt_nodes[0]) & (lt <= lt_nodes[-1])
    return np.where(ok, np.interp(lt, lt_nodes, bc), np.nan)


def bc_g(bp_rp0):
    """BC_G = BC_V(Teff) - (G - V) from dereddened Bp-Rp (IAU scale); NaN outside the colour range."""
    return bc_v(teff_from_bp_rp(bp_rp0)) - g_minus_v(bp_rp0)
