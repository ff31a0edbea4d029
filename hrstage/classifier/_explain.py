"""Readable explanation of one star's classification (for ``hrstage explain``)."""

from __future__ import annotations

import numpy as np

from ..defaults import DEFAULT_DRAWS, DEFAULT_SEED
from ..errors import HrstageInputError
from ..flags import DESCRIPTIONS, names as flag_names
from ..stages import STAGES
from ..stagemap import stage_map
from ._branch import branch_text
from ._core import FEH_GRID, _split_params, classify_hr
from ._logg import logl_from_logg

#: curves worth naming in an explanation, with short names
_NAMED = {
    "ms_lower": "main-sequence lower edge",
    "zams": "ZAMS",
    "ms_upper": "main-sequence upper edge",
    "binary_upper": "top of the binary band",
    "tams": "TAMS",
    "ehg": "end of the Hertzsprung gap",
    "giant_tip": "giant-branch tip",
    "bg_lower": "bright-giant lower edge",
    "sg_lower": "supergiant lower edge",
    "wd_min": "white-dwarf band lower edge",
    "wd_max": "white-dwarf band upper edge",
    "zahb": "zero-age horizontal branch",
    "hb_lower": "core-He-burning band lower edge",
    "hb_upper": "core-He-burning band upper edge",
    "old_branch": "subgiant/giant branch of the oldest stars",
    "hayashi": "Hayashi line (cool limit)",
}

#: the curves that bound each stage's region
_RELEVANT = {
    "main_sequence": ["ms_lower", "zams", "ms_upper", "binary_upper"],
    "subgiant": ["tams", "ms_upper", "binary_upper", "ehg"],
    "giant": ["ehg", "giant_tip", "bg_lower", "hb_lower", "hb_upper"],
    "bright_giant": ["bg_lower", "sg_lower"],
    "supergiant": ["sg_lower", "tams"],
    "white_dwarf": ["wd_min", "wd_max"],
    "subdwarf": ["ms_lower", "wd_max"],
    "hot_subdwarf": ["ms_lower", "wd_max"],
    "pre_main_sequence": ["binary_upper", "old_branch", "hayashi"],
}


def _map_words(sm) -> str:
    """The stage map in words and numbers (its metallicity and the masses that bound the stages)."""
    z = f"Z = {sm.z:.4g}" + (" (clipped to the fits' range)" if sm.z_clipped else "")
    used = "" if abs(sm.feh_used - sm.feh) < 5e-4 else f", boundaries of [Fe/H] = {sm.feh_used:+.3f}"
    return (f"Stage map at [Fe/H] = {sm.feh:+.2f} ({z}{used}): supergiants from {sm.m_sg:.2f} Msun up; "
            f"helium ignites at the giant-branch tip below {sm.m_fgb:.2f} Msun; stars below "
            f"{sm.m_age:.3f} Msun have not left the main sequence within the age limit")


def explain_star(teff, lum=None, *, teff_err=None, lum_err=None, logg=None, feh=None, mass=None,
                 n_draws: int = DEFAULT_DRAWS, seed=DEFAULT_SEED, corr=None, **params) -> str:
    """Explain the label of one star: stage, probabilities, masses, flags and the boundaries.

    Parameters
    ----------
    teff : float
        Effective temperature (K).
    lum : float, optional
        Luminosity (Lsun). If omitted, ``logg`` is needed and L follows from
        :func:`logl_from_logg`.
    teff_err, lum_err : float, optional
        1-sigma errors in K and Lsun (turned into dex).
    logg : float, optional
        log10(g / cm s^-2): gives L when ``lum`` is not given; decides the giant branch on the
        Kiel position, and with ``lum`` gives the mass g R^2 / G.
    feh, mass : float, optional
        [Fe/H] (dex) and a supplied mass (Msun).
    n_draws, seed : int
        Monte Carlo draws and seed for the probabilities (when errors are given); default
        :data:`hrstage.defaults.DEFAULT_DRAWS` (128).

    Returns
    -------
    str
        Several lines of text.
    """
    try:
        teff = float(teff)
    except (TypeError, ValueError):
        raise HrstageInputError(f"explain: Teff={teff!r} is not a number") from None
    if not np.isfinite(teff) or teff <= 0:
        raise HrstageInputError(f"explain: Teff={teff!r} K must be a positive number")
    logt = np.log10(teff)
    lines = []
    if lum is None:
        if logg is None:
            raise HrstageInputError("explain: give the luminosity (Lsun) or log g")
        ll, mm, ok = logl_from_logg(logt, float(logg), feh=feh)
        logl = float(ll)
        lines.append(f"L from log g = {float(logg):.2f} with the map's mass {float(mm):.3g} Msun: "
                     f"log L = {logl:.3f}" + ("" if ok else " (iteration did not settle)"))
    else:
        lum = float(lum)
        if not np.isfinite(lum) or lum <= 0:
            raise HrstageInputError(f"explain: L={lum!r} Lsun must be a positive number")
        logl = float(np.log10(lum))
    st = None if teff_err is None else float(teff_err) / (teff * np.log(10))
    sl = None if (lum_err is None or lum is None) else float(lum_err) / (lum * np.log(10))
    has_err = bool((st or 0) > 0 or (sl or 0) > 0)
    res = classify_hr(logt, logl, logt_err=st, logl_err=sl, corr=corr, feh=feh, mass=mass,
                      n_draws=n_draws if has_err else 0, seed=seed, logg=logg,
                      gravity_mass=lum is not None, **params)
    stage_kw, _ = _split_params(params)
    fu = float(res.feh_used[0])
    sm = stage_map(fu, **stage_kw)
    code = int(res.code[0])
    lines.insert(0, f"Star: Teff = {teff:.0f} K (log Teff {logt:.4f}), log L = {logl:.3f}"
                 + (f", [Fe/H] = {float(feh):+.2f}" if feh is not None else ", [Fe/H] not given (solar assumed)"))
    lines.append(_map_words(sm))
    lines.append(f"Label: {STAGES[code]} -- {res.base_reason[0]}")
    pr = res.proba[0]
    order = np.argsort(pr)[::-1]
    ptxt = ", ".join(f"{STAGES[k]} {pr[k]:.3f}" for k in order if pr[k] > 0)
    lines.append(f"Probabilities ({res.n_draws} draws, seed {seed}): {ptxt}" if res.n_draws and has_err
                 else f"Probabilities: {ptxt} (no errors given: the point label)")
    me, mr, mm = res.mass[0], res.mass_err[0], res.mass_method[0]
    mtxt = "no mass estimate" if not np.isfinite(me) else f"{me:.3g} Msun" + (f" +- {mr:.2g}" if np.isfinite(mr) else "")
    lines.append(f"Mass: {mtxt} (method {mm}); ZAMS mass of this Teff {res.mass_ms_teff[0]:.3g} Msun, "
                 f"of this L {res.mass_ms_lum[0]:.3g} Msun")
    if res.branch is not None:
        lines.append(branch_text(res.branch, 0))
    # the boundaries around the star, along the vertical line through it
    dist = sm.distance_to_boundaries(logt, logl, names=_RELEVANT.get(STAGES[code], list(_NAMED)))
    above, below = [], []
    for name, (dl, dt) in dist.items():
        d = float(dl[0])
        if np.isfinite(d):
            (above if d >= 0 else below).append((abs(d), name))
    if above:
        d, nm = min(above)
        lines.append(f"Lies {d:.3f} dex above the {_NAMED[nm]} (at this Teff)")
    if below:
        d, nm = min(below)
        lines.append(f"Lies {d:.3f} dex below the {_NAMED[nm]} (at this Teff)")
    hz = [(abs(float(dt[0])), float(dt[0]), n) for n, (dl, dt) in dist.items() if np.isfinite(dt[0])]
    if hz:
        d, sgn, nm = min(hz)
        lines.append(f"Nearest boundary in Teff at this L: {_NAMED[nm]}, {d:.3f} dex "
                     + ("cooler" if sgn > 0 else "hotter") + " than the star")
    f = int(res.flags[0])
    if f:
        lines.append(f"Flags (value {f}):")
        bit_of = {name: bit for bit, name in ((b, flag_names(b)[0]) for b in DESCRIPTIONS)}
        lines += [f"  {name}: {DESCRIPTIONS[bit_of[name]]}" for name in flag_names(f)]
        if res.flag_detail[0]:
            lines.append(f"Reasons: {res.flag_detail[0]}")
    else:
        lines.append("Flags: none")
    lines.append("Note: the label is indicative (analytic single-star fits); it does not replace a "
                 "spectroscopic analysis.")
    return "\n".join(lines)


__all__ = ["explain_star", "FEH_GRID"]
