"""(Teff, L) given directly, from Teff and radius, or from Teff and log g (through the model mass)."""

from __future__ import annotations

import numpy as np
from astropy import units as u

from .. import flags as F
from ..errors import HrstageInputError
from ._constants import LN10, TEFF_SUN
from ._errors import Propagator
from ._inputs import broadcast, check_values, error_or_zero, to_float
from ._position import HRPosition


def _base(n, teff, flags, t_sig):
    t_ok = check_values(flags, teff, positive=True)
    teff_out = np.where(t_ok, teff, np.nan)
    with np.errstate(divide="ignore", invalid="ignore"):
        logt = np.log10(teff_out)
        dlogt = t_sig / (teff_out * LN10)
    return teff_out, logt, dlogt


def _result(teff, logt, logl, st, sl, corr, flags, source, extra):
    """``source`` is one provenance text shared by every row."""
    texts, codes = np.array([source], dtype=object), np.zeros(len(teff), dtype=np.intp)
    tbad = ~np.isfinite(teff)
    lbad = ~np.isfinite(logl)
    reason = F.MISSING_INPUT | F.BAD_INPUT | F.LOGG_ITERATION | F.OUTSIDE_VALIDITY
    flags |= np.where((tbad | lbad) & ((flags & reason) == 0), F.MISSING_INPUT, 0)
    return HRPosition(teff=teff, logt=logt, logl=logl,
                      logt_err=np.where(tbad, np.nan, st), logl_err=np.where(lbad, np.nan, sl),
                      corr=np.where(tbad | lbad, np.nan, corr), flags=flags.astype(np.int64),
                      source=texts[codes], extra=extra, source_codes=(texts, codes))


def from_teff_lum(teff, lum, *, teff_err=None, lum_err=None, lum_is_log=False, feh=None) -> HRPosition:
    """Teff and luminosity given directly.

    Parameters
    ----------
    teff : array_like or Quantity [temperature]
        Effective temperature (K if plain numbers).
    lum : array_like or Quantity
        Luminosity: L/Lsun (plain numbers, ``lum_is_log=False``), log10(L/Lsun) (plain numbers,
        ``lum_is_log=True``), a power Quantity (W, erg/s, Lsun) or a logarithmic Quantity
        (e.g. ``u.Dex(..., u.L_sun)``). Lsun is the IAU 2015 nominal 3.828e26 W.
    teff_err, lum_err : array_like or Quantity, optional
        1-sigma errors (default 0); ``lum_err`` in dex when ``lum_is_log`` (or a dex Quantity).
    feh : array_like, optional
        Carried into ``extra["feh_used"]`` for the classifier (not used here).

    Returns
    -------
    HRPosition
        Errors are independent (corr = 0). Non-positive Teff or L -> BAD_INPUT, NaN -> MISSING_INPUT.
    """
    lum_q_log = isinstance(lum, u.function.FunctionQuantity)
    lum_q_lin = isinstance(lum, u.Quantity) and not lum_q_log
    if lum_q_log:
        lum_arr = np.asarray(lum.to_value(u.dex(u.L_sun)) if lum.unit.physical_unit != u.dimensionless_unscaled
                             else lum.value, dtype=float)
        is_log = True
    elif lum_q_lin:
        lum_arr = to_float(lum, "lum", u.L_sun)
        is_log = False
    else:
        lum_arr = to_float(lum, "lum")
        is_log = bool(lum_is_log)
    if isinstance(lum_err, u.function.FunctionQuantity) or (isinstance(lum_err, u.Quantity) and lum_err.unit == u.dex):
        lerr = np.asarray(lum_err.value, dtype=float)
        lerr_is_log = True
    elif isinstance(lum_err, u.Quantity):
        lerr = to_float(lum_err, "lum_err", u.L_sun)
        lerr_is_log = False
    else:
        lerr = to_float(lum_err, "lum_err")
        lerr_is_log = is_log
    raw = {"teff": to_float(teff, "teff", u.K), "lum": lum_arr, "teff_err": to_float(teff_err, "teff_err", u.K),
           "lum_err": lerr, "feh": to_float(feh, "feh")}
    n, a = broadcast(raw)
    flags = np.zeros(n, dtype=np.int64)
    t_sig = error_or_zero(a["teff_err"], n, flags, "teff_err")
    l_sig = error_or_zero(a["lum_err"], n, flags, "lum_err")
    teff_out, logt, dlogt = _base(n, a["teff"], flags, t_sig)
    if is_log:
        l_ok = check_values(flags, a["lum"])
        logl = np.where(l_ok, a["lum"], np.nan)
    else:
        l_ok = check_values(flags, a["lum"], positive=True)
        with np.errstate(divide="ignore", invalid="ignore"):
            logl = np.where(l_ok, np.log10(np.where(l_ok, a["lum"], 1.0)), np.nan)
    if lerr_is_log:
        sl = l_sig
    else:
        with np.errstate(divide="ignore", invalid="ignore"):
            sl = l_sig / (10.0 ** logl * LN10)
    source = "Teff: input; L: input"
    extra = {"feh_used": a["feh"] if a["feh"] is not None else np.full(n, np.nan)}
    return _result(teff_out, logt, logl, np.abs(dlogt), sl, np.zeros(n), flags, source, extra)


def from_teff_radius(teff, radius, *, teff_err=None, radius_err=None, feh=None) -> HRPosition:
    """Teff and radius: L = (R/Rsun)^2 (Teff/5772 K)^4 (Stefan-Boltzmann, IAU 2015 B3 nominal units).

    Parameters
    ----------
    teff : array_like or Quantity [temperature]
    radius : array_like or Quantity [length]
        Rsun if plain numbers.
    teff_err, radius_err : optional
        1-sigma errors (default 0).
    feh : array_like, optional
        Carried into ``extra["feh_used"]``.

    Returns
    -------
    HRPosition
        The Teff error enters log L four times over, so corr = 4 sigma_logT^2 / (sigma_logT sigma_logL).
    """
    raw = {"teff": to_float(teff, "teff", u.K), "r": to_float(radius, "radius", u.R_sun),
           "teff_err": to_float(teff_err, "teff_err", u.K), "r_err": to_float(radius_err, "radius_err", u.R_sun),
           "feh": to_float(feh, "feh")}
    n, a = broadcast(raw)
    flags = np.zeros(n, dtype=np.int64)
    t_sig = error_or_zero(a["teff_err"], n, flags, "teff_err")
    r_sig = error_or_zero(a["r_err"], n, flags, "radius_err")
    teff_out, logt, dlogt = _base(n, a["teff"], flags, t_sig)
    r_ok = check_values(flags, a["r"], positive=True)
    r = np.where(r_ok, a["r"], np.nan)
    with np.errstate(divide="ignore", invalid="ignore"):
        logl = 2.0 * np.log10(r) + 4.0 * (logt - np.log10(TEFF_SUN))
    prop = Propagator(n)
    with np.errstate(divide="ignore", invalid="ignore"):
        prop.add(t_sig, 1.0 / (teff_out * LN10), 4.0 / (teff_out * LN10))
        prop.add(r_sig, 0.0, 2.0 / (r * LN10))
    st, sl, corr = prop.result()
    source = "Teff: input; L: R^2 Teff^4 (Stefan-Boltzmann)"
    extra = {"radius_rsun": r, "feh_used": a["feh"] if a["feh"] is not None else np.full(n, np.nan)}
    return _result(teff_out, logt, logl, st, sl, corr, flags, source, extra)


def from_teff_logg(teff, logg, *, feh=None, teff_err=None, logg_err=None, feh_err=None) -> HRPosition:
    """Teff and log g: L = 4 pi R^2 sigma Teff^4 with R^2 = G M / g, M from the stage model.

    The mass comes from :func:`hrstage.classifier.logl_from_logg`, which iterates through the
    models' masses until (Teff, L, M, g) are consistent; rows where it does not converge are
    flagged LOGG_ITERATION.

    Parameters
    ----------
    teff : array_like or Quantity [temperature]
    logg : array_like
        log10(g / cm s^-2) (a ``dex(cm / s2)`` Quantity is accepted).
    feh : array_like, optional
        [Fe/H] (dex), default solar.
    teff_err, logg_err, feh_err : optional
        1-sigma errors (default 0), propagated by finite differences through the whole
        model-mass iteration (so the mass's dependence on Teff and log g is included).

    Returns
    -------
    HRPosition
        ``extra["mass_used"]`` holds the model mass (Msun).
    """
    try:
        from ..classifier import logl_from_logg
    except ImportError as exc:  # the layer below is not installed in this tree
        raise HrstageInputError(f"the log g path needs hrstage.classifier.logl_from_logg ({exc})") from None
    raw = {"teff": to_float(teff, "teff", u.K), "logg": to_float(logg, "logg"), "feh": to_float(feh, "feh"),
           "teff_err": to_float(teff_err, "teff_err", u.K), "logg_err": to_float(logg_err, "logg_err"),
           "feh_err": to_float(feh_err, "feh_err")}
    n, a = broadcast(raw)
    flags = np.zeros(n, dtype=np.int64)
    t_sig = error_or_zero(a["teff_err"], n, flags, "teff_err")
    g_sig = error_or_zero(a["logg_err"], n, flags, "logg_err")
    f_sig = error_or_zero(a["feh_err"], n, flags, "feh_err")
    teff_out, logt, dlogt = _base(n, a["teff"], flags, t_sig)
    g_ok = check_values(flags, a["logg"])
    lg = np.where(g_ok, a["logg"], np.nan)
    feh_in = a["feh"]
    feh_used = np.where(np.isfinite(feh_in), feh_in, 0.0) if feh_in is not None else np.zeros(n)
    ok = np.isfinite(logt) & np.isfinite(lg)

    def run(lt, gg, ff):
        logl, mass, conv = logl_from_logg(lt, gg, ff)
        return (np.asarray(logl, dtype=float).reshape(n), np.asarray(mass, dtype=float).reshape(n),
                np.asarray(conv, dtype=bool).reshape(n))

    lt_s = np.where(ok, logt, np.log10(TEFF_SUN))   # placeholders keep the model call clean
    lg_s = np.where(ok, lg, 4.44)
    logl, mass, conv = run(lt_s, lg_s, feh_used)
    logl = np.where(ok, logl, np.nan)
    mass = np.where(ok, mass, np.nan)
    flags |= np.where(ok & ~(conv & np.isfinite(logl)), F.LOGG_ITERATION, 0)

    # finite-difference Jacobian through the whole iteration
    # steps well above the iteration's 1e-3 dex tolerance, so that the differences are not noise
    h_t, h_g, h_f = 5e-3, 5e-2, 0.1
    lp, _, _ = run(lt_s + h_t, lg_s, feh_used)
    lm, _, _ = run(lt_s - h_t, lg_s, feh_used)
    dl_dt = (lp - lm) / (2 * h_t)
    lp, _, _ = run(lt_s, lg_s + h_g, feh_used)
    lm, _, _ = run(lt_s, lg_s - h_g, feh_used)
    dl_dg = (lp - lm) / (2 * h_g)
    if np.any(f_sig > 0):
        lp, _, _ = run(lt_s, lg_s, feh_used + h_f)
        lm, _, _ = run(lt_s, lg_s, feh_used - h_f)
        dl_df = (lp - lm) / (2 * h_f)
    else:
        dl_df = np.zeros(n)
    sig_logt = np.abs(dlogt)
    prop = Propagator(n)
    prop.add(sig_logt, 1.0, dl_dt)
    prop.add(g_sig, 0.0, dl_dg)
    prop.add(f_sig, 0.0, dl_df)
    st, sl, corr = prop.result()
    # a Jacobian that is not finite (edge of the model grid) leaves the error unknown
    bad_j = ok & ~(np.isfinite(sl) & np.isfinite(corr))
    flags |= np.where(bad_j & np.isfinite(logl), F.LOGG_ITERATION, 0)
    source = "Teff: input; L: log g + model mass (Stefan-Boltzmann)"
    extra = {"mass_used": mass, "logg_used": lg, "feh_used": feh_used}
    return _result(teff_out, logt, logl, st, sl, corr, flags, source, extra)
