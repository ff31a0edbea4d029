"""Secondary scales of the HR diagram: dwarf spectral type (top) and M_bol / M_V (right).

Spectral type
-------------
The top axis marks where dwarfs of a given MK type sit in log Teff. The anchors below are the
dwarf temperatures of Pecaut & Mamajek (2013, ApJS 208, 9, Table 5; the values of E. Mamajek's
updated online version of that table), typed in by us for the O5..M8 types we tick. They are a
*dwarf* scale: giants and supergiants of the same type are cooler (by up to a few hundred K for
G/K giants), so read the top axis as "temperature of a dwarf of this type".

Absolute magnitudes
-------------------
``M_bol = M_bol,sun - 2.5 log10(L / L_sun)`` with ``M_bol,sun = 4.74`` (IAU 2015 Resolution B2,
consistent with the nominal L_sun of Resolution B3). M_V needs a bolometric correction, which
depends on temperature, so an M_V scale on an HR diagram holds for one temperature only:
``M_V = 4.73 - 2.5 log10(L / L_sun) - BC_V(T_ref)``, with BC_V from Flower (1996) as re-printed
by Torres (2010) and the solar bolometric magnitude 4.73 consistent with that BC scale
(``hrstage.models.bolometric``). The axis label says which T_ref was used.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "SPTYPE_ANCHORS",
    "MBOL_SUN",
    "LOGG_SUN",
    "sptype_ticks",
    "logl_to_mbol",
    "mbol_to_logl",
    "add_sptype_axis",
    "add_magnitude_axis",
]

#: Dwarf spectral type -> Teff [K]; Pecaut & Mamajek 2013, ApJS 208, 9, Table 5 (online 2024 version).
SPTYPE_ANCHORS = (
    ("O5", 41400.0),
    ("B0", 31400.0),
    ("B5", 15700.0),
    ("A0", 9700.0),
    ("A5", 8100.0),
    ("F0", 7220.0),
    ("F5", 6550.0),
    ("G0", 5930.0),
    ("G5", 5660.0),
    ("K0", 5270.0),
    ("K5", 4440.0),
    ("M0", 3850.0),
    ("M3", 3430.0),
    ("M5", 3060.0),
    ("M8", 2570.0),
)

#: Bolometric magnitude of the nominal Sun, IAU 2015 Resolution B2.
MBOL_SUN = 4.74


def _logg_sun() -> float:
    from astropy import constants as const

    g = const.GM_sun / const.R_sun**2  # IAU 2015 B3 nominal values
    return float(np.log10(g.to_value("cm s-2")))


#: log10 of the nominal solar surface gravity in cgs (IAU 2015 B3 GM_sun and R_sun), 4.438.
LOGG_SUN = _logg_sun()


def logl_to_mbol(logl):
    """Bolometric absolute magnitude from log10(L/L_sun) (IAU 2015 B2)."""
    return MBOL_SUN - 2.5 * np.asarray(logl, dtype=float)


def mbol_to_logl(mbol):
    """Inverse of :func:`logl_to_mbol`."""
    return (MBOL_SUN - np.asarray(mbol, dtype=float)) / 2.5


def sptype_ticks(lo_logt: float, hi_logt: float, min_spacing: float = 0.035):
    """Positions (log Teff) and labels of the spectral-type anchors between two log Teff values.

    Anchors closer than ``min_spacing`` times the axis range to one already kept are dropped
    (the whole classes O5, B0, A0, F0, G0, K0, M0 are kept first), so the labels never collide.
    """
    lo, hi = sorted((lo_logt, hi_logt))
    min_sep = min_spacing * (hi - lo)
    cand = [(name, np.log10(teff)) for name, teff in SPTYPE_ANCHORS if lo <= np.log10(teff) <= hi]
    # whole classes (X0) first, then the other subtypes where there is room
    order = sorted(range(len(cand)), key=lambda i: (cand[i][0][1:] != "0", i))
    keep = []
    for i in order:
        if all(abs(cand[i][1] - cand[j][1]) >= min_sep for j in keep):
            keep.append(i)
    keep.sort()
    return np.array([cand[i][1] for i in keep]), [cand[i][0] for i in keep]


def add_sptype_axis(ax, *, label="Dwarf spectral type (Pecaut & Mamajek 2013)"):
    """Add a top axis with dwarf spectral types at their log Teff; returns the secondary axis."""
    sec = ax.secondary_xaxis("top")
    pos, lab = sptype_ticks(*ax.get_xlim())
    sec.set_xticks(pos, lab)
    sec.tick_params(axis="x", which="minor", top=False)
    sec.set_xlabel(label, fontsize="small")
    sec.set_gid("hrstage:sptype_axis")
    return sec


def add_magnitude_axis(ax, kind="mbol", *, mv_teff=5772.0):
    """Add a right-hand absolute-magnitude scale to an axis whose y is log10(L/L_sun).

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    kind : {"mbol", "mv"}
        ``"mbol"``: M_bol = 4.74 - 2.5 log L. ``"mv"``: M_V = 4.73 - 2.5 log L - BC_V(mv_teff)
        (Flower/Torres scale).
    mv_teff : float
        Reference temperature of the BC_V for ``kind="mv"`` (K).

    Returns
    -------
    matplotlib.axes.Axes
        The secondary axis.
    """
    if kind == "mbol":
        zero, shift = MBOL_SUN, 0.0
        label = r"$M_\mathrm{bol}$ (IAU 2015, $M_\mathrm{bol,\odot}=4.74$)"
    elif kind == "mv":
        from ..models import bolometric

        zero = bolometric.FLOWER_MBOL_SUN
        shift = float(np.asarray(bolometric.bc_v_flower(np.asarray([mv_teff], dtype=float))).ravel()[0])
        if not np.isfinite(shift):
            from ..errors import HrstageInputError

            raise HrstageInputError(f"mv_teff={mv_teff} K is outside the range of the Flower BC_V fit")
        label = rf"$M_V$ (BC$_V$ at {mv_teff:.0f} K: {shift:+.2f})"
    else:
        from ..errors import HrstageInputError

        raise HrstageInputError(f"right_axis must be 'mbol', 'mv' or None, not {kind!r}")

    def forward(logl):
        return zero - 2.5 * np.asarray(logl, dtype=float) - shift

    def inverse(mag):
        return (zero - shift - np.asarray(mag, dtype=float)) / 2.5

    sec = ax.secondary_yaxis("right", functions=(forward, inverse))
    sec.set_ylabel(label)
    sec.set_gid(f"hrstage:{kind}_axis")
    return sec
