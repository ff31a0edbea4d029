"""The giant branches on the HR and Kiel diagrams: loci drawn and labelled, giants coloured by branch.

The loci are those the classifier weighs (:mod:`hrstage.classifier._branch`): the first-ascent
giant branch of the oldest stars (age-limit mass) and of a 2 Msun star up to their tips
(HPT2000 eqs 46, 49), the core-helium-burning band (ZAHB / minimum core-He luminosity, eqs 51,
53-54, -0.10 / +0.15 dex) and the RGB tip of the oldest stars, above which a cool giant can only
be on the AGB.
"""

from __future__ import annotations

import numpy as np

from ..branches import BRANCHES, LABELS as BRANCH_LABELS, NOT_GIANT
from ..classifier._branch import branch_grids
from ..errors import HrstageInputError
from ..models.stellar import LOGG_SUN, TEFF_SUN

LOGT_SUN = float(np.log10(TEFF_SUN))

#: colours of the branches (ours: warm for the first ascent, greens for helium burning, blues for
#: the AGB, grey for unresolved)
BRANCH_COLOURS = {
    "red_giant_branch": "#c0392b",
    "red_clump": "#d4a017",
    "horizontal_branch": "#2e8b57",
    "blue_loop": "#17a589",
    "early_agb": "#4a90d9",
    "thermally_pulsing_agb": "#1f3f8f",
    "post_agb": "#8e44ad",
    "unresolved": "#9a9a9a",
}


def _y(logt, logl, m, kiel):
    return LOGG_SUN + np.log10(m) + 4.0 * (logt - LOGT_SUN) - logl if kiel else logl


def draw_branches(ax, feh: float = 0.0, *, kiel: bool = False, max_age_myr: float = 13800.0, labels: bool = True):
    """Draw and label the branch loci at ``feh`` on ``ax`` (HR: log Teff vs log L; ``kiel``: vs log g).

    Returns the list of artists added (gid ``branch-*``).
    """
    g = branch_grids(round(float(feh), 4), float(max_age_myr))
    lgrid = g.logl["hr"][0, 0]
    out = []
    k_old = int(np.searchsorted(g.mass, g.m_age))   # lightest grid mass that has evolved
    # first-ascent giant branch: oldest stars and 2 Msun
    for k, ls in ((k_old, "-"), (int(np.argmin(np.abs(g.mass - 2.0))), "--")):
        t = g.logt["hr"][0, k]
        ok = np.isfinite(t)
        if ok.sum() > 1:
            (ln,) = ax.plot(t[ok], _y(t[ok], lgrid[ok], g.mass[k], kiel), ls, color="#5a0f08",
                            lw=1.2, zorder=4, gid=f"branch-rgb-{g.mass[k]:.2f}")
            out.append(ln)
            if labels:
                j = np.flatnonzero(ok)[len(np.flatnonzero(ok)) // 2]
                out.append(ax.annotate(f"RGB {g.mass[k]:.2g} Msun", (t[j], _y(t[j], lgrid[j], g.mass[k], kiel)),
                                       fontsize=7, color="#5a0f08", xytext=(4, 0), zorder=5,
                                       textcoords="offset points", gid="branch-label-rgb"))
    # core-He band: each mass's band from its faintest to brightest point
    t_he = g.logt["hr"][1]
    lo_t, lo_y, hi_t, hi_y = [], [], [], []
    for k in range(len(g.mass)):
        ok = np.flatnonzero(np.isfinite(t_he[k]))
        if len(ok) < 2:
            continue
        a, b = ok[0], ok[-1]
        lo_t.append(t_he[k, a])
        lo_y.append(_y(t_he[k, a], lgrid[a], g.mass[k], kiel))
        hi_t.append(t_he[k, b])
        hi_y.append(_y(t_he[k, b], lgrid[b], g.mass[k], kiel))
    if lo_t:
        poly = ax.fill(np.r_[lo_t, hi_t[::-1]], np.r_[lo_y, hi_y[::-1]], color=BRANCH_COLOURS["red_clump"],
                       alpha=0.25, lw=0, zorder=1, gid="branch-core-he")
        out.extend(poly)
        if labels:
            i = int(np.argmin(lo_t))
            out.append(ax.annotate("core-He burning\n(clump / HB)", (lo_t[i], lo_y[i]), fontsize=7,
                                   color="#7a5c00", xytext=(0, -12), textcoords="offset points",
                                   gid="branch-label-core-he"))
    # RGB tip of the oldest stars
    tip = g.logl_tip[k_old]
    if np.isfinite(tip) and not kiel:
        ln = ax.axhline(tip, color=BRANCH_COLOURS["early_agb"], lw=0.8, ls=":", gid="branch-rgb-tip")
        out.append(ln)
        if labels:
            out.append(ax.annotate("RGB tip: AGB above", (0.02, tip), xycoords=("axes fraction", "data"), fontsize=7,
                                   color=BRANCH_COLOURS["early_agb"], xytext=(0, 2), textcoords="offset points",
                                   gid="branch-label-tip"))
    return out


def branch_diagram(data, *, kiel: bool = False, feh: float | None = None, ax=None, figsize=(7.0, 6.5),
                   title=None, legend: bool = True):
    """Giants of a classified table coloured by branch, with the branch loci (HR or Kiel diagram).

    ``data`` is the output of :func:`hrstage.classify` (columns ``branch``, ``teff_used``,
    ``logl_used``; for ``kiel`` also ``logg`` or ``mass_est``). Stars that are not giants are left
    out. ``feh``: metallicity of the drawn loci (default: median ``feh_used`` of the giants).
    """
    import matplotlib.pyplot as plt

    for c in ("branch", "teff_used", "logl_used"):
        if c not in data.colnames:
            raise HrstageInputError(f"branch_diagram needs the column {c!r}: classify the table first (hrstage.classify)")
    br = np.asarray(data["branch"]).astype(str)
    giant = (br != BRANCHES[NOT_GIANT]) & (br != "")
    x = np.log10(np.asarray(data["teff_used"], float))
    ll = np.asarray(data["logl_used"], float)
    if kiel:
        if "logg" in data.colnames:
            y = np.asarray(data["logg"], float)
        elif "mass_est" in data.colnames:
            y = LOGG_SUN + np.log10(np.asarray(data["mass_est"], float)) + 4.0 * (x - LOGT_SUN) - ll
        else:
            raise HrstageInputError("branch_diagram(kiel=True) needs a 'logg' or 'mass_est' column")
    else:
        y = ll
    if feh is None:
        f = np.asarray(data["feh_used"], float)[giant] if "feh_used" in data.colnames else np.zeros(1)
        feh = float(np.nanmedian(f)) if np.isfinite(f).any() else 0.0
    if ax is None:
        _, ax = plt.subplots(figsize=figsize)
    draw_branches(ax, feh, kiel=kiel)
    for b in BRANCHES[:NOT_GIANT]:
        m = giant & (br == b)
        if m.any():
            ax.scatter(x[m], y[m], s=8, color=BRANCH_COLOURS[b], label=f"{BRANCH_LABELS[b]} ({int(m.sum())})",
                       lw=0, gid=f"branch-points-{b}")
    ax.set_xlim(3.85, 3.45) if not ax.xaxis_inverted() else None
    ax.set_ylim(*(4.0, -0.5) if kiel else (-0.2, 4.6))
    ax.set_xlabel(r"$\log_{10}\,(T_\mathrm{eff}\,/\,\mathrm{K})$")
    ax.set_ylabel(r"$\log_{10}\,(g\,/\,\mathrm{cm\,s^{-2}})$" if kiel else r"$\log_{10}\,(L\,/\,L_\odot)$")
    ax.set_title(title if title is not None else f"Giants by branch ([Fe/H] = {feh:+.2f}; indicative)")
    if legend:
        ax.legend(fontsize=7, loc="lower left" if not kiel else "upper left")
    return ax


__all__ = ["draw_branches", "branch_diagram", "BRANCH_COLOURS"]
