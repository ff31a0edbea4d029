"""Photometry + parallax -> (Teff, L): the Gaia-style and Johnson-style paths.

See ``docs/derive.md`` for the relations, the choice rules, fallbacks and the error model.
"""

from __future__ import annotations

import numpy as np
from astropy import units as u

from .. import flags as F
from ..errors import HrstageInputError
from ..models import (bolometric, casagrande2010, casagrande2021, flower_teff, giant_bv_turnover, mucciarelli2021,
                      pecaut_mamajek2013, riello2021)
from . import _readings, extinction
from ._constants import LN10, LOGG_SUN, TEFF_SUN
from ._errors import Propagator, derivative_rows
from ._inputs import broadcast, check_values, error_or_zero, or_flag, to_float
from ._position import HRPosition

#: log g split between the "dwarf" and "giant" branches of the colour relations
#: (Casagrande et al. 2021 use 3.2 for their validity ranges; we use it for every Gaia relation).
GAIA_LOGG_SPLIT = casagrande2021.LOGG_SPLIT
#: log g above which a Johnson-path star counts as dwarf/subgiant (Casagrande 2010 applies).
JOHNSON_DWARF_LOGG = 3.5
#: Mass (Msun) assumed when estimating log g from (Teff, L) to pick a colour relation.
ASSUMED_MASS = 1.0
#: log g estimates above this are far below the main sequence (white-dwarf-like): flagged.
LOGG_FAR_BELOW_MS = 6.0
#: log g used when no luminosity is available to estimate one (dwarf assumed).
DEFAULT_DWARF_LOGG = 4.4
#: Johnson path: log L at or above which cool stars ((B-V)_0 >= 0.3) use Flower's supergiant branch.
SUPERGIANT_LOGL = 4.0
SUPERGIANT_MIN_BV = 0.3
#: Johnson path: dwarfs redder than this in (B-V)_0 get Flower's Teff flagged COLOUR_OUT_OF_RANGE
#: (B-V no longer tracks Teff for M dwarfs; supply V-Ks or a Teff).
DWARF_MAX_BV_FLOWER = 1.40
#: Offset bringing Flower's BC_V scale (M_bol,sun = 4.73) onto the IAU scale (4.74) of BC_G.
_FLOWER_TO_IAU = bolometric.IAU_MBOL_SUN - bolometric.FLOWER_MBOL_SUN
_N_ITER = 2  # log g estimate updates (then one final evaluation): converged to ~1 K


# --------------------------------------------------------------------------------------------
# shared pieces
# --------------------------------------------------------------------------------------------

def _parallax(plx, plx_err, zp, min_snr, flags):
    """Corrected parallax, distance modulus term and flags (NaN where no distance)."""
    plx_c = plx - zp
    ok = check_values(flags, plx_c)
    nonpos = ok & (plx_c <= 0)
    or_flag(flags, nonpos, F.NONPOSITIVE_PARALLAX)
    good = ok & (plx_c > 0)
    safe = np.where(good, plx_c, np.nan)
    with np.errstate(divide="ignore", invalid="ignore"):
        snr = np.where(plx_err > 0, safe / plx_err, np.inf)
    or_flag(flags, good & (snr < min_snr), F.LOW_PARALLAX_SNR)
    dist_pc = 1000.0 / safe
    mu_term = 5.0 * np.log10(safe) - 10.0          # M = m + 5 log10(plx / mas) - 10
    dlogl_dplx = -2.0 / (safe * LN10)
    return safe, dist_pc, mu_term, dlogl_dplx, snr


def _distance(a, n, flags, flags_pre, p_sig, plx_c, dist_pc, mu_term):
    """Published distances (median, 16th/84th percentiles, pc) where a row has one, else the parallax.

    Returns ``(dist_pc, mu_term, sig_m_dist, dist_rows, d_lo, d_hi)``: ``sig_m_dist`` is the distance
    share of the absolute-magnitude error (mag) on every row (parallax or distance; None without
    distance input: :func:`_sig_m_distance` computes it on the rows that need it), ``dist_rows`` the
    rows that use a published distance (None: no distance input), ``d_lo``/``d_hi`` the half-widths in
    log10 d below and above the median (0 where no interval). In log d the 16-84 % interval is used as
    a Gaussian of 1-sigma (log d_hi - log d_lo) / 2 for the covariance; each side's own width gives the
    asymmetric ``logl_err_lo`` / ``logl_err_hi`` extras. NONPOSITIVE_PARALLAX is cleared on rows
    placed by a distance, and so are the parallax's MISSING_INPUT / BAD_INPUT (``flags_pre``: the
    flags before the parallax was read); an interval that does not bracket the median is BAD_INPUT
    (ignored). LOW_PARALLAX_SNR stays: such a distance leans on its prior.
    """
    d = a.get("dist")
    if d is None:    # parallaxes only: the distance share of sigma_M is computed where needed
        return dist_pc, mu_term, None, None, None, None
    with np.errstate(divide="ignore", invalid="ignore"):
        sig_m_plx = np.where(p_sig > 0, 5.0 / LN10 * p_sig / plx_c, 0.0)
    use = np.isfinite(d) & (d > 0)
    plx_bits = np.int64(F.NONPOSITIVE_PARALLAX | F.MISSING_INPUT | F.BAD_INPUT)
    flags[use] = flags_pre[use] | (flags[use] & ~plx_bits)
    or_flag(flags, np.isinf(d) | (d <= 0), F.BAD_INPUT)
    lo = a.get("dist_lo")
    hi = a.get("dist_hi")
    lo = np.full(n, np.nan) if lo is None else lo
    hi = np.full(n, np.nan) if hi is None else hi
    with np.errstate(divide="ignore", invalid="ignore"):
        ld = np.log10(np.where(use, d, np.nan))
        dlo = ld - np.log10(np.where(lo > 0, lo, np.nan))
        dhi = np.log10(np.where(hi > 0, hi, np.nan)) - ld
    given_lo, given_hi = np.isfinite(lo), np.isfinite(hi)
    bad = use & ((given_lo & ~(dlo >= 0)) | (given_hi & ~(dhi >= 0)))
    or_flag(flags, bad, F.BAD_INPUT)
    dlo = np.where(use & ~bad & np.isfinite(dlo), dlo, 0.0)
    dhi = np.where(use & ~bad & np.isfinite(dhi), dhi, 0.0)
    # one side only: the other taken equal to it
    dlo = np.where((dlo == 0) & (dhi > 0), dhi, dlo)
    dhi = np.where((dhi == 0) & (dlo > 0), dlo, dhi)
    sig_logd = 0.5 * (dlo + dhi)
    dist_pc = np.where(use, d, dist_pc)
    mu_term = np.where(use, 5.0 - 5.0 * ld, mu_term)
    sig_m = np.where(use, 5.0 * sig_logd, sig_m_plx)
    return dist_pc, mu_term, sig_m, use, dlo, dhi


def _distance_raw(distance, distance_lo, distance_hi):
    """The distance inputs as plain pc arrays (absent: not in the dict)."""
    out = {}
    for key, value, name in (("dist", distance, "distance"), ("dist_lo", distance_lo, "distance_lo"),
                             ("dist_hi", distance_hi, "distance_hi")):
        if value is not None:
            out[key] = to_float(value, name, u.pc)
    if "dist" not in out and out:
        raise HrstageInputError("distance_lo / distance_hi given without distance (the median)")
    return out


def _sig_m_distance(dist_err, idx):
    """The distance share of the absolute-magnitude error (mag) on rows ``idx``."""
    p_sig, plx_c, sig_m_dist = dist_err
    if sig_m_dist is not None:
        return sig_m_dist[idx]
    ps, pc = p_sig[idx], plx_c[idx]
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(ps > 0, 5.0 / LN10 * ps / pc, 0.0)


def _add_distance_errors(prop, p_sig, dlogl_dplx, sig_m_dist, dist_rows):
    """The distance share of the (log T, log L) covariance: parallax rows as before, distance rows
    through 1-sigma log d = sig_m_dist / 5 (d log L / d log d = 2)."""
    if dist_rows is None:
        prop.add(p_sig, 0.0, dlogl_dplx)
        return
    prop.add(np.where(dist_rows, 0.0, p_sig), 0.0, np.where(dist_rows, 0.0, dlogl_dplx))
    prop.add(np.where(dist_rows, sig_m_dist / 5.0, 0.0), 0.0, 2.0)


def _distance_labels(ext_label, dist_rows):
    """Third part of the provenance: extinction, and whether a published distance replaced 1/parallax."""
    if dist_rows is None:
        return [ext_label], 0
    return [ext_label, f"{ext_label}; distance: published median (16-84 %) instead of 1/parallax"], \
        dist_rows.astype(np.int64)


def _asymmetric_logl(pos, sig_m_dist, dist_rows, d_lo, d_hi):
    """``logl_err_lo`` / ``logl_err_hi`` extras: the log L error with the distance term of each side."""
    if dist_rows is None:
        return pos
    base = np.maximum(pos.logl_err ** 2 - (0.4 * sig_m_dist) ** 2, 0.0)
    for key, side in (("logl_err_lo", d_lo), ("logl_err_hi", d_hi)):
        pos.extra[key] = np.where(dist_rows, np.sqrt(base + (2.0 * side) ** 2), pos.logl_err)
    return pos


def _logg_estimate(teff, logl):
    """log g from (Teff, L) for an assumed mass of :data:`ASSUMED_MASS` Msun (cgs)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return LOGG_SUN + np.log10(ASSUMED_MASS) + 4.0 * np.log10(teff / TEFF_SUN) - logl


def _source_table(teff_labels, lum_labels, ext_labels):
    table = [f"{t}; {l}; {e}" for t in teff_labels for l in lum_labels for e in ext_labels]
    return np.array(table, dtype=object)


def _finish(n, teff, logl, prop, flags, source, extra, replace=None):
    """``source`` is ``(texts, codes)``: the provenance table and an index per row. ``replace``:
    ``(rows, logt, logl, logt_err, logl_err, corr)`` of rows placed by another reading."""
    texts, codes = source
    logt_err, logl_err, corr = prop.result()
    if replace is not None:
        rows, r_lt, r_ll, r_elt, r_ell, r_corr = replace
        teff[rows] = 10.0 ** r_lt
        logl[rows] = r_ll
        logt_err[rows] = r_elt
        logl_err[rows] = r_ell
        corr[rows] = r_corr
    with np.errstate(divide="ignore", invalid="ignore"):
        logt = np.log10(teff)
    tbad = ~np.isfinite(teff)
    lbad = ~np.isfinite(logl)
    logt_err = np.where(tbad, np.nan, logt_err)
    logl_err = np.where(lbad, np.nan, logl_err)
    corr = np.where(tbad | lbad, np.nan, corr)
    # no NaN without a flag: a row whose value is NaN but carries no derive/input flag gets MISSING_INPUT
    reason = (F.MISSING_INPUT | F.BAD_INPUT | F.NONPOSITIVE_PARALLAX | F.COLOUR_OUT_OF_RANGE
              | F.OUTSIDE_VALIDITY)
    or_flag(flags, (tbad | lbad) & ((flags & reason) == 0), F.MISSING_INPUT)
    return HRPosition(teff=teff, logt=logt, logl=logl, logt_err=logt_err, logl_err=logl_err,
                      corr=corr, flags=flags.astype(np.int64), source=texts[codes], extra=extra,
                      source_codes=(texts, codes))


# --------------------------------------------------------------------------------------------
# Gaia
# --------------------------------------------------------------------------------------------

def _gaia_bc(teff, c0):
    """BC_G on the IAU scale: Andrae 2018 inside 3300-8000 K, else Flower BC_V - (G-V)(Riello)."""
    bc = bolometric.bc_g_andrae(teff)
    use_fb = ~np.isfinite(bc)
    idx = np.flatnonzero(use_fb & np.isfinite(teff))   # evaluate the fallback only where needed
    if idx.size:
        bc[idx] = bolometric.bc_v_flower(teff[idx]) - riello2021.g_minus_v(c0[idx]) + _FLOWER_TO_IAU
    return bc, use_fb



def _shared_inputs(a, n, flags):
    """Inputs the Gaia and Johnson paths read alike: parallax and supplied-Teff errors, the [Fe/H]
    used (solar where missing), and a supplied Teff with its validity (bad values flagged)."""
    p_sig = error_or_zero(a["plx_err"], n, flags, "parallax_err")
    t_sig_in = error_or_zero(a["teff_err"], n, flags, "teff_err")
    feh_used = np.where(np.isfinite(a["feh"]), a["feh"], 0.0) if a["feh"] is not None else np.zeros(n)
    teff_in = a["teff"] if a["teff"] is not None else np.full(n, np.nan)
    or_flag(flags, np.isinf(teff_in) | (teff_in <= 0), F.BAD_INPUT)
    teff_given = np.isfinite(teff_in) & (teff_in > 0)
    return p_sig, t_sig_in, feh_used, teff_in, teff_given


def from_gaia(g, bp_rp, parallax, *, g_err=None, bp_rp_err=None, parallax_err=None, parallax_zp=0.0,
              a_g=None, e_bp_rp=None, a_v=None, r_v=3.1, feh=None, logg=None, teff=None, teff_err=None,
              min_parallax_snr=5.0, teff_relation="casagrande2021", gaia_release="dr3",
              extinction_curve="G23", wd_atmosphere="H", distance=None, distance_lo=None,
              distance_hi=None) -> HRPosition:
    """(Teff, L) from Gaia G, BP-RP and parallax.

    Parameters
    ----------
    g, bp_rp : array_like or Quantity [mag]
        Gaia G magnitude and BP-RP colour (observed, i.e. reddened).
    parallax : array_like or Quantity [angle]
        Parallax, mas if plain numbers. ``parallax - parallax_zp`` is used.
    g_err, bp_rp_err, parallax_err : array_like, optional
        1-sigma errors (default 0). ``parallax_err`` also sets the parallax signal-to-noise.
    parallax_zp : float or array_like, default 0.0
        Parallax zero-point offset (mas) subtracted from ``parallax`` (Gaia EDR3 parallaxes are
        too small by a few hundredths of a mas; pass e.g. ``-0.017`` for the global offset, so that
        corrected = parallax + 0.017).
    a_g, e_bp_rp, a_v : array_like, optional
        Extinction A_G, colour excess E(BP-RP) and/or A_V (mag). Whatever is given is used
        directly; the rest follows from the extinction curve (:mod:`hrstage.derive.extinction`).
        NaN in a row means "not known" for that row. No extinction at all: none applied and
        NO_EXTINCTION flagged.
    r_v : float, default 3.1
        R_V of the extinction curve.
    feh : array_like, optional
        [Fe/H] for the colour relation (default 0).
    logg : array_like, optional
        log g (cgs) for the colour relation; where missing it is estimated (see Notes).
    teff, teff_err : array_like or Quantity [K], optional
        Teff to use instead of the colour relation where given (e.g. spectroscopic, or a white
        dwarf's model Teff); the colour is then used only for the BC fallback.
    min_parallax_snr : float, default 5.0
        Parallax_over_error below which LOW_PARALLAX_SNR is flagged (the value is still given).
    teff_relation : {"casagrande2021", "mucciarelli2021"}
        Colour-Teff relation (default Casagrande et al. 2021).
    gaia_release : {"dr3", "dr2"}
        Photometry release, selects the Casagrande et al. 2021 coefficient set.
    extinction_curve : {"G23", "F99"}
        Extinction curve of dust_extinction.
    wd_atmosphere : {"H", "He"}
        Atmosphere of the white-dwarf reading: Montreal DA (pure H, default) or DB (pure He) grid.
    distance, distance_lo, distance_hi : array_like or Quantity [length], optional
        Published distance estimates (pc if plain numbers): median and 16th / 84th percentiles
        (e.g. Bailer-Jones et al. 2021 geometric or photo-geometric). Where a row has a distance it
        replaces 1/parallax; the interval's asymmetric errors give ``logl_err_lo`` / ``logl_err_hi``
        in ``extra`` (the symmetric ``logl_err`` uses half the interval in log d).

    Returns
    -------
    HRPosition

    Notes
    -----
    Blue and faint stars (no ``teff`` given) have other readings (:mod:`hrstage.derive._readings`,
    ``docs/derive.md``): the white-dwarf reading (Montreal grids in (BP-RP)_0, M_G) for stars on or
    near the white-dwarf sequence, the hot-star reading (Pecaut & Mamajek 2013) for
    -0.12 <= (BP-RP)_0 < 0.20 and the hot-subdwarf reading bluer than that and fainter than
    M_G = 2. The more probable reading gives Teff and L; the other, where it keeps >= 5 % of the
    probability, is returned in ``extra["other_reading"]`` (a dict: ``rows``, ``logt``, ``logl``,
    ``logt_err``, ``logl_err``, ``corr`` and its probability ``p``, on those rows only) and the row is
    flagged TWO_READINGS. ``extra["white_dwarf"]`` holds, for the rows read as white dwarfs,
    ``rows``, the reading probability ``p``, ``mass`` (Msun), ``logg`` and ``radius`` (Rsun).

    Teff: (BP-RP)_0 through the chosen relation. Where log g is not given it is estimated from
    (Teff, L) assuming 1 Msun, updated twice starting from 4.4 (the relations depend on log g by
    only ~20-90 K per dex); rows without a luminosity keep log g = 4.4 (or 2.0 where the dwarf colour range is exceeded but the giant one is not). The estimated log g is
    clipped to 0-5; estimates above 6 (far below the main sequence: white dwarfs) are flagged
    OUTSIDE_VALIDITY because the colour relations do not apply there — supply ``teff``.
    Outside the colour range: Teff NaN and COLOUR_OUT_OF_RANGE (with ``mucciarelli2021`` the
    Casagrande 2021 relation is tried first as fallback).
    L: -2.5 log L = M_G + BC_G - 4.74 (IAU 2015 B2) with BC_G of Andrae et al. 2018 inside
    3300-8000 K; outside, BC_G = BC_V(Flower/Torres) - (G-V)(Riello et al. 2021, from (BP-RP)_0)
    + 0.01 (the 4.73 -> 4.74 zero-point shift), flagged BC_FALLBACK.
    """
    if teff_relation not in ("casagrande2021", "mucciarelli2021"):
        raise HrstageInputError(f"teff_relation must be 'casagrande2021' or 'mucciarelli2021', got {teff_relation!r}")
    if gaia_release not in casagrande2021.RELEASES:
        raise HrstageInputError(f"gaia_release must be one of {casagrande2021.RELEASES}, got {gaia_release!r}")
    if wd_atmosphere not in ("H", "He"):
        raise HrstageInputError(f"wd_atmosphere must be 'H' or 'He', got {wd_atmosphere!r}")
    mas = u.mas
    raw = {
        "g": to_float(g, "g", u.mag), "bp_rp": to_float(bp_rp, "bp_rp", u.mag),
        "plx": to_float(parallax, "parallax", mas), "g_err": to_float(g_err, "g_err", u.mag),
        "bp_rp_err": to_float(bp_rp_err, "bp_rp_err", u.mag),
        "plx_err": to_float(parallax_err, "parallax_err", mas),
        "zp": to_float(parallax_zp, "parallax_zp", mas),
        "a_g": to_float(a_g, "a_g", u.mag), "e_bp_rp": to_float(e_bp_rp, "e_bp_rp", u.mag),
        "a_v": to_float(a_v, "a_v", u.mag), "feh": to_float(feh, "feh"), "logg": to_float(logg, "logg"),
        "teff": to_float(teff, "teff", u.K), "teff_err": to_float(teff_err, "teff_err", u.K),
        **_distance_raw(distance, distance_lo, distance_hi),
    }
    n, a = broadcast(raw)
    flags = np.zeros(n, dtype=np.int64)
    nan = np.full(n, np.nan)

    gmag = a["g"]
    colour = a["bp_rp"]
    g_ok = check_values(flags, gmag)
    colour_finite = np.isfinite(colour)
    or_flag(flags, np.isinf(colour), F.BAD_INPUT)
    g_sig = error_or_zero(a["g_err"], n, flags, "g_err")
    c_sig = error_or_zero(a["bp_rp_err"], n, flags, "bp_rp_err")
    p_sig, t_sig_in, feh_used, teff_in, teff_given = _shared_inputs(a, n, flags)

    # --- extinction ---------------------------------------------------------------------------
    ext_given = np.zeros(n, dtype=bool)
    a_g_arr = np.zeros(n)
    e_arr = np.zeros(n)
    if any(a[k] is not None for k in ("a_g", "e_bp_rp", "a_v")):
        k = extinction.coefficients(extinction_curve, r_v)
        kg, kbr = k["G"], k["BP"] - k["RP"]
        av = a["a_v"] if a["a_v"] is not None else nan.copy()
        ag = a["a_g"] if a["a_g"] is not None else nan.copy()
        ebr = a["e_bp_rp"] if a["e_bp_rp"] is not None else nan.copy()
        # A_V where only one of the others is known
        av_est = np.where(np.isfinite(av), av, np.where(np.isfinite(ag), ag / kg, ebr / kbr))
        a_g_arr = np.where(np.isfinite(ag), ag, kg * av_est)
        e_arr = np.where(np.isfinite(ebr), ebr, kbr * av_est)
        ext_given = np.isfinite(a_g_arr) & np.isfinite(e_arr)
        a_g_arr = np.where(ext_given, a_g_arr, 0.0)
        e_arr = np.where(ext_given, e_arr, 0.0)
        ext_label = f"ext: {extinction_curve} R_V={float(r_v):g}"
    else:
        ext_label = "ext: none"
    or_flag(flags, ~ext_given, F.NO_EXTINCTION)
    c0 = np.where(colour_finite, colour - e_arr, np.nan)
    g0 = np.where(g_ok, gmag - a_g_arr, np.nan)

    # --- distance -----------------------------------------------------------------------------
    flags_pre = flags.copy() if "dist" in a else None
    plx_c, dist_pc, mu_term, dlogl_dplx, snr = _parallax(a["plx"], p_sig, a["zp"] if a["zp"] is not None else 0.0,
                                                         min_parallax_snr, flags)
    dist_pc, mu_term, sig_m_dist, dist_rows, d_lo, d_hi = _distance(a, n, flags, flags_pre, p_sig, plx_c, dist_pc,
                                                                    mu_term)
    abs_g = g0 + mu_term

    # --- Teff from colour, with the log g choice ----------------------------------------------
    logg_in = a["logg"] if a["logg"] is not None else nan.copy()
    logg_known = np.isfinite(logg_in)
    c21 = casagrande2021
    rel_kw = {"release": gaia_release}

    def c21_teff(x, gg):
        return c21.teff(x, np.clip(gg, *c21.LOGG_RANGE), feh_used, **rel_kw)

    # starting log g: the input, else a dwarf; where the dwarf branch is out of range, a giant
    gw = np.where(logg_known, logg_in, DEFAULT_DWARF_LOGG)
    t_try = c21_teff(c0, gw)
    gw = np.where(~logg_known & ~np.isfinite(t_try), 2.0, gw)
    far_below = np.zeros(n, dtype=bool)
    # first pass: t_try already holds the Teff at the starting log g except where it moved to 2.0
    t_c = t_try.copy()
    moved = np.flatnonzero(~logg_known & ~np.isfinite(t_try))
    if moved.size:
        t_c[moved] = c21.teff(c0[moved], np.clip(gw[moved], *c21.LOGG_RANGE), feh_used[moved], **rel_kw)
    for it in range(_N_ITER):
        if it:
            t_c = c21_teff(c0, gw)
        t_for_l = np.where(teff_given, teff_in, t_c)
        bc, _ = _gaia_bc(t_for_l, c0)
        logl_iter = bolometric.logl_from_mbol(abs_g + bc, bolometric.IAU_MBOL_SUN)
        g_est = _logg_estimate(t_c, logl_iter)
        upd = ~logg_known & np.isfinite(g_est)
        far_below = upd & (g_est > LOGG_FAR_BELOW_MS)
        gw = np.where(upd, np.clip(g_est, *c21.LOGG_RANGE), gw)
    gw_eval = np.clip(gw, *c21.LOGG_RANGE)

    if teff_relation == "casagrande2021":
        t_col = c21_teff(c0, gw_eval)
        sig_cal = np.full(n, np.hypot(c21.SIGMA, c21.ZERO_POINT_SIGMA))
        tcode = np.where(logg_known, 2, 3)

        def t_of_c(x, i):
            return c21.teff(x, np.clip(gw_eval[i], *c21.LOGG_RANGE), feh_used[i], **rel_kw)
    else:
        giant = gw_eval <= GAIA_LOGG_SPLIT
        t_d = mucciarelli2021.teff(c0, feh_used, kind="dwarf")
        t_g = mucciarelli2021.teff(c0, feh_used, kind="giant")
        t_m = np.where(giant, t_g, t_d)
        t_c21 = c21_teff(c0, gw_eval)
        fb = ~np.isfinite(t_m) & np.isfinite(t_c21)
        t_col = np.where(fb, t_c21, t_m)
        sig_cal = np.where(fb, np.hypot(c21.SIGMA, c21.ZERO_POINT_SIGMA),
                           np.where(giant, mucciarelli2021.SIGMA["giant"], mucciarelli2021.SIGMA["dwarf"]))
        tcode = np.where(fb, 6, np.where(giant, 5, 4))
        or_flag(flags, fb & ~teff_given, F.COLOUR_OUT_OF_RANGE)

        def t_of_c(x, i):
            fi = feh_used[i]
            td = mucciarelli2021.teff(x, fi, kind="dwarf")
            tg = mucciarelli2021.teff(x, fi, kind="giant")
            tm = np.where(giant[i], tg, td)
            return np.where(fb[i], c21.teff(x, np.clip(gw_eval[i], *c21.LOGG_RANGE), fi, **rel_kw), tm)

    need_colour = ~teff_given
    or_flag(flags, need_colour & ~colour_finite & ~np.isinf(colour), F.MISSING_INPUT)
    col_out = need_colour & colour_finite & ~np.isfinite(t_col)
    or_flag(flags, col_out, F.COLOUR_OUT_OF_RANGE)
    or_flag(flags, need_colour & far_below & np.isfinite(t_col), F.OUTSIDE_VALIDITY)
    teff_out = np.where(teff_given, teff_in, t_col)
    tcode = np.where(teff_given, 1, np.where(np.isfinite(teff_out), tcode, 0))

    # --- bolometric correction and luminosity ------------------------------------------------
    bc, use_fb = _gaia_bc(teff_out, c0)
    t_ok = np.isfinite(teff_out)
    fb_used = t_ok & use_fb & np.isfinite(bc)
    or_flag(flags, fb_used, F.BC_FALLBACK)
    or_flag(flags, t_ok & ~np.isfinite(bc) & ~colour_finite, F.MISSING_INPUT)
    or_flag(flags, t_ok & ~np.isfinite(bc) & colour_finite, F.OUTSIDE_VALIDITY)
    logl = bolometric.logl_from_mbol(abs_g + bc, bolometric.IAU_MBOL_SUN)
    lcode = np.where(np.isfinite(logl), np.where(fb_used, 2, 1), 0)
    bc_sig = np.where(fb_used, riello2021.SIGMA, bolometric.bc_g_andrae_sigma(teff_out))
    bc_sig = np.where(np.isfinite(bc_sig), bc_sig, 0.0)

    # --- errors -------------------------------------------------------------------------------
    # each derivative only on the rows that use it, from the values already computed
    t_fin = np.isfinite(teff_out)
    dbc_dt = derivative_rows(lambda t, i: _gaia_bc(t, c0[i])[0], teff_out, 0.5, t_fin, f0=bc, fill=np.nan)
    dtdc = derivative_rows(t_of_c, c0, 1e-3, ~teff_given & np.isfinite(t_col), f0=t_col)
    dgv_dc = derivative_rows(lambda x, i: riello2021.g_minus_v(x), c0, 1e-3, fb_used)
    with np.errstate(divide="ignore", invalid="ignore"):
        inv_tln = 1.0 / (teff_out * LN10)
    prop = Propagator(n)
    prop.add(g_sig, 0.0, -0.4)
    prop.add(c_sig, dtdc * inv_tln, -0.4 * (dbc_dt * dtdc - dgv_dc))
    prop.add(np.where(teff_given, t_sig_in, sig_cal), inv_tln, -0.4 * dbc_dt)
    _add_distance_errors(prop, p_sig, dlogl_dplx, sig_m_dist, dist_rows)
    prop.add(bc_sig, 0.0, -0.4)

    # --- blue and faint stars: the white-dwarf, hot-star and hot-subdwarf readings -------------
    extra_readings = {}
    replace, tcode, lcode = _other_readings("gaia", c0, abs_g, c_sig, g_sig, (p_sig, plx_c, sig_m_dist), need_colour,
                                            tcode, lcode,
                                                 flags, gaia_release, wd_atmosphere, extra_readings,
                                                 (teff_out, logl, prop))

    rel_name = f"Casagrande+2021 {gaia_release.upper()}"
    teff_labels = ["Teff: none", "Teff: input",
                   f"Teff: {rel_name} (BP-RP)0, logg input",
                   f"Teff: {rel_name} (BP-RP)0, logg est. (1 Msun)",
                   "Teff: Mucciarelli+2021 dwarf (BP-RP)0",
                   "Teff: Mucciarelli+2021 giant (BP-RP)0",
                   f"Teff: {rel_name} (BP-RP)0 [fallback]",
                   *_GAIA_READING_TEFF]
    lum_labels = ["L: none", "L: G+BC_G(Andrae+2018)+parallax",
                  "L: G+BC_V(Flower/Torres)-(G-V)(Riello+2021)+parallax [BC fallback]",
                  *_GAIA_READING_LUM]
    ext_labels, dcode = _distance_labels(ext_label, dist_rows)
    table = _source_table(teff_labels, lum_labels, ext_labels)
    source = (table, (tcode * len(lum_labels) + lcode) * len(ext_labels) + dcode)
    extra = {
        "distance_pc": dist_pc, "parallax_corrected": plx_c, "parallax_snr": np.where(np.isfinite(snr), snr, np.nan),
        "abs_mag": abs_g, "bc": bc, "extinction": a_g_arr, "colour_excess": e_arr, "colour0": c0,
        "logg_used": np.where(teff_given, np.nan, gw_eval), "feh_used": feh_used, **extra_readings,
    }
    if replace is not None:   # rows placed by another reading did not use the log g estimate
        extra["logg_used"][replace[0]] = np.nan
    return _asymmetric_logl(_finish(n, teff_out, logl, prop, flags, source, extra, replace), sig_m_dist,
                            dist_rows, d_lo, d_hi)


#: provenance of the other Gaia readings (Teff codes 7-11, L codes 3-6)
_GAIA_READING_TEFF = ["Teff: Pecaut+Mamajek 2013 dwarf sequence (BP-RP)0",
                      "Teff: white dwarf, Montreal DA grid in (BP-RP)0 and M_G",
                      "Teff: white dwarf, Montreal DB grid in (BP-RP)0 and M_G",
                      "Teff: hot subdwarf, log g=7 DA colour scale (BP-RP)0 [approximate]",
                      "Teff: O-B8, DA colour scale anchored on Pecaut+Mamajek 2013 B9V (BP-RP)0 [wide error]"]
_GAIA_READING_LUM = ["L: G+BC_G(Pecaut+Mamajek 2013)+parallax",
                     "L: G+BC_G(Montreal white-dwarf grid)+parallax",
                     "L: G+BC_G(log g=7 DA grid, approximate)+parallax",
                     "L: G+BC_V-(G-V)(Pecaut+Mamajek 2013 at the Teff)+parallax"]
_READING_CODES = {"gaia": {"hot": (7, 3), "wd_H": (8, 4), "wd_He": (9, 4), "subdwarf": (10, 5), "early": (11, 6)},
                  "johnson": {"wd_H": (6, 2), "wd_He": (7, 2), "hot": (-1, -1), "subdwarf": (-1, -1),
                              "early": (-1, -1)}}
_JOHNSON_READING_TEFF = ["Teff: white dwarf, Montreal DA grid in (B-V)0 and M_V",
                         "Teff: white dwarf, Montreal DB grid in (B-V)0 and M_V"]
_JOHNSON_READING_LUM = ["L: V+BC_V(Montreal white-dwarf grid, Mbol_sun=4.74)+parallax"]
#: bits a reading replaces (they described the cool relations' failure on these rows)
_READING_CLEARS = (F.COLOUR_OUT_OF_RANGE | F.OUTSIDE_VALIDITY | F.BC_FALLBACK | F.MISSING_INPUT
                   | F.COLOUR_SATURATED)


def _other_readings(system, c0, abs_g, c_sig, g_sig, dist_err, need_colour, tcode, lcode, flags, release,
                    atmosphere, extra, cool_reading):
    """Rows read as white dwarfs, hot stars or hot subdwarfs (see :mod:`._readings`): returns the
    ``replace`` tuple for :func:`_finish` (or None) and the updated provenance codes; fills
    ``extra`` and ``flags`` in place. Only the rows that can have another reading are evaluated."""
    n = c0.size
    # candidates: a cheap bound on every row, then the reading's own edge on the few left
    p_sig, plx_c, sig_m_dist = dist_err
    cand = np.flatnonzero(_readings.quick_screen(c0, abs_g, p_sig, plx_c, sig_m_dist, system) & need_colour)
    c, m = c0[cand], abs_g[cand]
    sm = np.hypot(g_sig[cand], _sig_m_distance(dist_err, cand))
    sm = np.where(np.isfinite(sm), sm, 0.0)
    keep = np.isfinite(c) & np.isfinite(m)
    keep &= _readings.edge_screen(c, m, sm, system) | ((c < _readings.HOT_GAIA_LIMIT) & (system == "gaia"))
    cand, c, m, sm = cand[keep], c[keep], m[keep], sm[keep]
    if cand.size == 0:
        return None, tcode, lcode
    sc = c_sig[cand]
    wd = _readings.white_dwarf(c, m, sc, sm, system=system, release=release, atmosphere=atmosphere)
    # the non-white-dwarf reading of these rows: the cool relation (already computed), else hot star / subdwarf
    k = cand.size
    star = {key: np.full(k, np.nan) for key in ("logt", "logl", "logt_err", "logl_err", "corr")}
    kind = np.full(k, "", dtype=object)
    hot = (c >= pecaut_mamajek2013.BP_RP_RANGE[0]) & (c < _readings.HOT_GAIA_LIMIT)
    sub = (c < pecaut_mamajek2013.BP_RP_RANGE[0]) & (m > _readings.SUBDWARF_MIN_ABS_G)
    early = (c < pecaut_mamajek2013.BP_RP_RANGE[0]) & ~sub      # O-B8 stars, brighter than hot subdwarfs
    if system != "gaia":
        hot = sub = early = np.zeros(k, dtype=bool)
    capped = np.zeros(k, dtype=bool)
    for mask, name, fn in ((hot, "hot", lambda i: _readings.hot_star(c[i], m[i], sc[i], sm[i])),
                           (sub, "subdwarf", lambda i: _readings.hot_subdwarf(c[i], m[i], sc[i], sm[i],
                                                                               release=release)),
                           (early, "early", lambda i: _readings.early_type(c[i], m[i], sc[i], sm[i]))):
        i = np.flatnonzero(mask)
        if i.size:
            r = fn(i)
            for key in star:
                star[key][i] = r[key]
            kind[i] = name
            if name == "early":
                capped[i] = r["capped"]
    cool = ~(hot | sub | early)       # the cool reading: replaced only where the white-dwarf one wins
    i = np.flatnonzero(cool)
    if i.size:
        t_cool, l_cool, prop = cool_reading
        rows_c = cand[i]
        var_t, var_l, cov = prop.var_t[rows_c], prop.var_l[rows_c], prop.cov[rows_c]
        with np.errstate(divide="ignore", invalid="ignore"):
            star["logt"][i] = np.log10(t_cool[rows_c])
            star["logt_err"][i] = np.sqrt(var_t)
            star["logl_err"][i] = np.sqrt(var_l)
            d = np.sqrt(var_t * var_l)
            star["corr"][i] = np.where(d > 0, np.clip(cov / d, -1, 1), 0.0)
        star["logl"][i] = l_cool[rows_c]
    wd_ok = np.isfinite(wd["logt"]) & np.isfinite(wd["logl"])
    star_ok = np.isfinite(star["logt"]) & np.isfinite(star["logl"])
    p = np.where(wd_ok, wd["p"], 0.0)
    # the white-dwarf reading leads where it is the more probable one, or is the only one (never a
    # position clamped at the edge of the reading)
    use_wd = wd_ok & ((p >= 0.5) | (~star_ok & ~cool)) & ~wd["clamped"]
    use_star = ~use_wd & star_ok
    take = use_wd | (use_star & ~cool)
    rows = cand[take]
    pick = {key: np.where(use_wd, wd[key], star[key])[take] for key in star}
    # provenance codes
    codes = _READING_CODES[system]
    wd_codes = codes["wd_" + atmosphere]
    tnew = np.where(use_wd, wd_codes[0], np.select([kind == "hot", kind == "early"],
                                                   [codes["hot"][0], codes["early"][0]], codes["subdwarf"][0]))
    lnew = np.where(use_wd, wd_codes[1], np.select([kind == "hot", kind == "early"],
                                                   [codes["hot"][1], codes["early"][1]], codes["subdwarf"][1]))
    tcode = tcode.copy()
    lcode = lcode.copy()
    tcode[rows] = tnew[take]
    lcode[rows] = lnew[take]
    flags[rows] &= ~np.int64(_READING_CLEARS)
    flags[cand[(use_wd & wd["extrapolated"]) | (use_star & ((kind == "subdwarf") | capped))]] |= np.int64(
        F.OUTSIDE_VALIDITY)
    flags[cand[use_star & (kind == "early")]] |= np.int64(F.COLOUR_SATURATED)
    # the other reading, where it keeps at least P_AMBIGUOUS of the probability
    p_chosen = np.where(use_wd, p, 1.0 - p)
    other_ok = np.where(use_wd, star_ok, wd_ok)
    amb = (use_wd | use_star) & other_ok & (1.0 - p_chosen >= _readings.P_AMBIGUOUS)
    # per-reading results on the rows concerned only (row indices + values: no full-length arrays)
    iw = np.flatnonzero(use_wd)
    with np.errstate(invalid="ignore"):
        radius = 10.0 ** (0.5 * wd["logl"][iw] - 2.0 * (wd["logt"][iw] - np.log10(TEFF_SUN)))
    extra["white_dwarf"] = {"rows": cand[iw], "p": p[iw], "mass": wd["mass"][iw], "logg": wd["logg"][iw],
                            "radius": radius}
    if amb.any():
        ia = np.flatnonzero(amb)
        other = {"rows": cand[ia], "p": 1.0 - p_chosen[ia]}
        for key in star:
            other[key] = np.where(use_wd, star[key], wd[key])[ia]
        flags[cand[ia]] |= np.int64(F.TWO_READINGS)
        extra["other_reading"] = other
    return (rows, pick["logt"], pick["logl"], pick["logt_err"], pick["logl_err"], pick["corr"]), tcode, lcode


# --------------------------------------------------------------------------------------------
# Johnson
# --------------------------------------------------------------------------------------------

def from_johnson(v, b_v, parallax, *, v_err=None, b_v_err=None, parallax_err=None, v_ks=None, v_ks_err=None,
                 e_b_v=None, a_v=None, r_v=3.1, feh=None, teff=None, teff_err=None, parallax_zp=0.0,
                 min_parallax_snr=5.0, extinction_curve="G23", distance=None, distance_lo=None,
                 distance_hi=None, wd_atmosphere="H") -> HRPosition:
    """(Teff, L) from Johnson V, B-V (and V-Ks) and parallax.

    Parameters
    ----------
    v, b_v : array_like or Quantity [mag]
        Johnson V and B-V (observed).
    parallax : array_like or Quantity [angle]
        Parallax (mas if plain numbers); ``parallax - parallax_zp`` is used.
    v_err, b_v_err, parallax_err, v_ks_err : array_like, optional
        1-sigma errors (default 0).
    v_ks : array_like, optional
        V - K_s (2MASS K_s), preferred for the Teff of dwarfs where inside its range.
    e_b_v, a_v : array_like, optional
        E(B-V) and/or A_V; A_V = R_V E(B-V) when only E(B-V) is given, E(B-V) from the curve when
        only A_V is. None given: NO_EXTINCTION.
    r_v : float, default 3.1
    feh : array_like, optional
        [Fe/H] (default 0) for Casagrande et al. 2010.
    teff, teff_err : array_like or Quantity [K], optional
        Teff to use where given instead of the colours.
    parallax_zp, min_parallax_snr, extinction_curve, distance, distance_lo, distance_hi, wd_atmosphere
        As in :func:`from_gaia`.

    Returns
    -------
    HRPosition

    Notes
    -----
    Dwarf or giant is decided from a first pass with Flower's Teff(B-V): log g estimated from
    (Teff, L) for 1 Msun; log g >= 3.5 (or no luminosity) counts as dwarf/subgiant. Dwarfs take
    Casagrande et al. 2010 V-Ks (25 K scatter) if inside its range, else its B-V (73 K), else
    Flower. Giants take Flower's dwarf/giant branch; cool stars ((B-V)_0 >= 0.3) with log L >= 4
    take Flower's supergiant branch. Dwarfs left with Flower's Teff at (B-V)_0 > 1.40 (M dwarfs, where
    B-V saturates) are flagged COLOUR_OUT_OF_RANGE. L: -2.5 log L = M_V + BC_V(Flower/Torres) - 4.73.
    Stars on or near the white-dwarf sequence (no ``teff`` given) get the white-dwarf reading of the
    Montreal grids in ((B-V)_0, M_V), with the reading probability and the other reading as in
    :func:`from_gaia` (``docs/derive.md``).
    """
    if wd_atmosphere not in ("H", "He"):
        raise HrstageInputError(f"wd_atmosphere must be 'H' or 'He', got {wd_atmosphere!r}")
    mas = u.mas
    raw = {
        "v": to_float(v, "v", u.mag), "b_v": to_float(b_v, "b_v", u.mag), "plx": to_float(parallax, "parallax", mas),
        "v_err": to_float(v_err, "v_err", u.mag), "b_v_err": to_float(b_v_err, "b_v_err", u.mag),
        "plx_err": to_float(parallax_err, "parallax_err", mas), "v_ks": to_float(v_ks, "v_ks", u.mag),
        "v_ks_err": to_float(v_ks_err, "v_ks_err", u.mag), "e_b_v": to_float(e_b_v, "e_b_v", u.mag),
        "a_v": to_float(a_v, "a_v", u.mag), "feh": to_float(feh, "feh"), "teff": to_float(teff, "teff", u.K),
        "teff_err": to_float(teff_err, "teff_err", u.K), "zp": to_float(parallax_zp, "parallax_zp", mas),
        **_distance_raw(distance, distance_lo, distance_hi),
    }
    n, a = broadcast(raw)
    flags = np.zeros(n, dtype=np.int64)
    nan = np.full(n, np.nan)
    vmag = a["v"]
    v_ok = check_values(flags, vmag)
    bv = a["b_v"]
    bv_finite = np.isfinite(bv)
    or_flag(flags, np.isinf(bv), F.BAD_INPUT)
    vks = a["v_ks"] if a["v_ks"] is not None else nan.copy()
    v_sig = error_or_zero(a["v_err"], n, flags, "v_err")
    bv_sig = error_or_zero(a["b_v_err"], n, flags, "b_v_err")
    vks_sig = error_or_zero(a["v_ks_err"], n, flags, "v_ks_err")
    p_sig, t_sig_in, feh_used, teff_in, teff_given = _shared_inputs(a, n, flags)

    # --- extinction ---------------------------------------------------------------------------
    av_arr = np.zeros(n)
    ebv_arr = np.zeros(n)
    ext_given = np.zeros(n, dtype=bool)
    k_ks = 0.0
    if a["e_b_v"] is not None or a["a_v"] is not None:
        k = extinction.coefficients(extinction_curve, r_v)
        k_ks = k["Ks"]
        ebv = a["e_b_v"] if a["e_b_v"] is not None else nan.copy()
        av = a["a_v"] if a["a_v"] is not None else nan.copy()
        av_arr = np.where(np.isfinite(av), av, float(r_v) * ebv)
        ebv_arr = np.where(np.isfinite(ebv), ebv, (k["B"] - k["V"]) * av_arr)
        ext_given = np.isfinite(av_arr) & np.isfinite(ebv_arr)
        av_arr = np.where(ext_given, av_arr, 0.0)
        ebv_arr = np.where(ext_given, ebv_arr, 0.0)
        ext_label = f"ext: {extinction_curve} R_V={float(r_v):g}"
    else:
        ext_label = "ext: none"
    or_flag(flags, ~ext_given, F.NO_EXTINCTION)
    bv0 = np.where(bv_finite, bv - ebv_arr, np.nan)
    vks0 = vks - av_arr * (1.0 - k_ks)
    v0 = np.where(v_ok, vmag - av_arr, np.nan)

    flags_pre = flags.copy() if "dist" in a else None
    plx_c, dist_pc, mu_term, dlogl_dplx, snr = _parallax(a["plx"], p_sig, a["zp"] if a["zp"] is not None else 0.0,
                                                         min_parallax_snr, flags)
    dist_pc, mu_term, sig_m_dist, dist_rows, d_lo, d_hi = _distance(a, n, flags, flags_pre, p_sig, plx_c, dist_pc,
                                                                    mu_term)
    abs_v = v0 + mu_term

    # --- first pass: dwarf or giant? ----------------------------------------------------------
    t_fl = flower_teff.teff(bv0)
    t_first = np.where(teff_given, teff_in, t_fl)
    logl_first = bolometric.logl_from_mbol(abs_v + bolometric.bc_v_flower(t_first), bolometric.FLOWER_MBOL_SUN)
    g_est = _logg_estimate(t_first, logl_first)
    dwarf = ~np.isfinite(g_est) | (g_est >= JOHNSON_DWARF_LOGG)
    far_below = np.isfinite(g_est) & (g_est > LOGG_FAR_BELOW_MS)
    supergiant = ~dwarf & (logl_first >= SUPERGIANT_LOGL) & (bv0 >= SUPERGIANT_MIN_BV)

    t_vks = casagrande2010.teff(vks0, feh_used, which="V-Ks")
    t_c10bv = casagrande2010.teff(bv0, feh_used, which="B-V")
    t_sg = flower_teff.teff(bv0, branch="supergiant")
    use_vks = dwarf & np.isfinite(t_vks)
    use_c10bv = dwarf & ~use_vks & np.isfinite(t_c10bv)
    use_sg = supergiant & np.isfinite(t_sg)
    # codes: 2 C10 V-Ks, 3 C10 B-V, 4 Flower dwarf/giant, 5 Flower supergiant
    tcode = np.where(use_vks, 2, np.where(use_c10bv, 3, np.where(use_sg, 5, 4)))
    t_col = np.select([tcode == 2, tcode == 3, tcode == 5], [t_vks, t_c10bv, t_sg], t_fl)
    sig_cal = np.select([tcode == 2, tcode == 3], [casagrande2010.RELATIONS["V-Ks"].sigma,
                                                   casagrande2010.RELATIONS["B-V"].sigma], flower_teff.SIGMA)

    need_colour = ~teff_given
    or_flag(flags, need_colour & ~bv_finite & ~np.isinf(bv) & ~np.isfinite(t_col), F.MISSING_INPUT)
    or_flag(flags, need_colour & bv_finite & ~np.isfinite(t_col), F.COLOUR_OUT_OF_RANGE)
    or_flag(flags, need_colour & far_below & np.isfinite(t_col), F.OUTSIDE_VALIDITY)
    # B-V saturates for M dwarfs: Flower's Teff of a dwarf redder than 1.40 is kept but flagged
    or_flag(flags, need_colour & dwarf & (tcode == 4) & (bv0 > DWARF_MAX_BV_FLOWER), F.COLOUR_OUT_OF_RANGE)
    teff_out = np.where(teff_given, teff_in, t_col)
    tcode = np.where(teff_given, 1, np.where(np.isfinite(teff_out), tcode, 0))
    # giants: B-V turns bluer again for late-M giants, so a red giant colour also fits a 3000-3650 K
    # M giant (models/giant_bv_turnover.py); where the colour is saturated its Teff error is widened
    giant_fl = need_colour & ~dwarf & (tcode == 4)
    or_flag(flags, giant_fl & giant_bv_turnover.has_cool_reading(bv0), F.COLOUR_SATURATED)
    saturated = giant_fl & giant_bv_turnover.is_saturated(bv0)

    bc = bolometric.bc_v_flower(teff_out)
    or_flag(flags, np.isfinite(teff_out) & ~np.isfinite(bc), F.OUTSIDE_VALIDITY)
    logl = bolometric.logl_from_mbol(abs_v + bc, bolometric.FLOWER_MBOL_SUN)
    lcode = np.where(np.isfinite(logl), 1, 0)

    # --- errors -------------------------------------------------------------------------------
    # each derivative only on the rows whose Teff comes from that relation (same numbers there)
    dbc_dt = derivative_rows(lambda t, i: bolometric.bc_v_flower(t), teff_out, 0.5, np.isfinite(teff_out),
                             f0=bc, fill=np.nan)
    dt_dvks = derivative_rows(lambda x, i: casagrande2010.teff(x, feh_used[i], which="V-Ks"), vks0, 1e-3,
                              tcode == 2, f0=t_vks)
    dt_dbv = derivative_rows(lambda x, i: casagrande2010.teff(x, feh_used[i], which="B-V"), bv0, 1e-3,
                             tcode == 3, f0=t_c10bv)
    dt_dbv += derivative_rows(lambda x, i: flower_teff.teff(x), bv0, 1e-3, tcode == 4, f0=t_fl)
    dt_dbv += derivative_rows(lambda x, i: flower_teff.teff(x, branch="supergiant"), bv0, 1e-3, tcode == 5, f0=t_sg)
    with np.errstate(divide="ignore", invalid="ignore"):
        inv_tln = 1.0 / (teff_out * LN10)
    prop = Propagator(n)
    prop.add(v_sig, 0.0, -0.4)
    prop.add(bv_sig, dt_dbv * inv_tln, -0.4 * dbc_dt * dt_dbv)
    prop.add(vks_sig, dt_dvks * inv_tln, -0.4 * dbc_dt * dt_dvks)
    prop.add(np.where(teff_given, t_sig_in, sig_cal), inv_tln, -0.4 * dbc_dt)
    isat = np.flatnonzero(saturated)
    if isat.size:   # saturated giant colour: wide log Teff error, L moving with it through BC_V
        sig_sat, dl_sat = np.zeros(n), np.zeros(n)
        sig_sat[isat] = giant_bv_turnover.saturated_logt_sigma(np.log10(teff_out[isat]))
        dl_sat[isat] = -0.4 * dbc_dt[isat] * teff_out[isat] * LN10
        prop.add(sig_sat, 1.0, dl_sat)
    _add_distance_errors(prop, p_sig, dlogl_dplx, sig_m_dist, dist_rows)

    # --- faint stars: the white-dwarf reading (Montreal grids in (B-V)_0, M_V) ----------------------
    extra_readings = {}
    replace, tcode, lcode = _other_readings("johnson", bv0, abs_v, bv_sig, v_sig, (p_sig, plx_c, sig_m_dist),
                                            need_colour, tcode,
                                            lcode, flags, "dr2", wd_atmosphere, extra_readings,
                                            (teff_out, logl, prop))

    teff_labels = ["Teff: none", "Teff: input", "Teff: Casagrande+2010 (V-Ks)0 dwarf",
                   "Teff: Casagrande+2010 (B-V)0 dwarf", "Teff: Flower 1996 (B-V)0",
                   "Teff: Flower 1996 supergiant (B-V)0", *_JOHNSON_READING_TEFF]
    lum_labels = ["L: none", "L: V+BC_V(Flower/Torres, Mbol_sun=4.73)+parallax", *_JOHNSON_READING_LUM]
    ext_labels, dcode = _distance_labels(ext_label, dist_rows)
    table = _source_table(teff_labels, lum_labels, ext_labels)
    source = (table, (tcode * len(lum_labels) + lcode) * len(ext_labels) + dcode)
    extra = {
        "distance_pc": dist_pc, "parallax_corrected": plx_c, "parallax_snr": np.where(np.isfinite(snr), snr, np.nan),
        "abs_mag": abs_v, "bc": bc, "extinction": av_arr, "colour_excess": ebv_arr, "colour0": bv0,
        "logg_estimate": g_est, "feh_used": feh_used, **extra_readings,
    }
    return _asymmetric_logl(_finish(n, teff_out, logl, prop, flags, source, extra, replace), sig_m_dist,
                            dist_rows, d_lo, d_hi)
