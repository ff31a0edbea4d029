"""Gather what the figures need from a tagged table or from plain arrays.

The figures accept either an astropy Table (the output of :func:`hrstage.classify`, or any table
with Teff and L columns) or plain arrays passed by keyword; keywords win over table columns.
Optional columns (stage, flags, errors, MK verdicts) may be missing.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import HrstageInputError
from ..stages import STAGES

__all__ = ["StarData", "gather", "column"]


def _colnames(data) -> list[str]:
    if data is None:
        return []
    if hasattr(data, "colnames"):
        return list(data.colnames)
    if hasattr(data, "dtype") and getattr(data.dtype, "names", None):
        return list(data.dtype.names)
    if hasattr(data, "keys"):
        return [str(k) for k in data.keys()]
    raise HrstageInputError(
        f"cannot read columns from a {type(data).__name__}; pass an astropy Table, a mapping of "
        "arrays or the arrays themselves by keyword"
    )


def _find(data, candidates) -> str | None:
    names = _colnames(data)
    lower = {n.lower(): n for n in names}
    for c in candidates:
        if c in names:
            return c
        if c.lower() in lower:
            return lower[c.lower()]
    return None


def _as_float(values, unit: str | None = None, what: str = "column") -> np.ndarray:
    """Float array with masked entries as NaN; Quantity converted to ``unit``."""
    if hasattr(values, "unit") and values.unit is not None and unit is not None:
        try:
            from astropy import units as u

            vunit = u.Unit(values.unit)
            data = np.ma.getdata(values)
            if unit == "dex(solLum)" and isinstance(vunit, u.FunctionUnitBase):
                # already logarithmic (e.g. dex(solLum) or mag-like): convert within the log units
                values = np.ma.array(vunit.to(u.dex(u.L_sun), np.asarray(data, dtype=float)),
                                     mask=np.ma.getmaskarray(values))
            elif unit == "dex(solLum)":
                # a linear luminosity (W, erg/s, solLum): take the log in solar units
                values = np.ma.array(np.log10(vunit.to(u.L_sun, np.asarray(data, dtype=float))),
                                     mask=np.ma.getmaskarray(values))
            else:
                values = np.ma.array(vunit.to(u.Unit(unit), np.asarray(data, dtype=float)),
                                     mask=np.ma.getmaskarray(values))
            unit = None
        except Exception as exc:  # unit conversion error: say which column
            raise HrstageInputError(f"{what}: unit {values.unit} cannot be converted to {unit}") from exc
    mask = np.ma.getmaskarray(values) if np.ma.isMaskedArray(values) or hasattr(values, "mask") else None
    try:
        arr = np.array(np.ma.getdata(values), dtype=float, copy=True)
    except (TypeError, ValueError):
        raise HrstageInputError(f"{what}: expected numbers") from None
    if mask is not None and np.any(mask):
        arr[np.broadcast_to(mask, arr.shape)] = np.nan
    return arr


def _as_text(values) -> np.ndarray:
    mask = np.ma.getmaskarray(values) if hasattr(values, "mask") else None
    data = np.ma.getdata(values)
    out = np.array([v.decode() if isinstance(v, bytes) else str(v) for v in np.asarray(data).ravel()], dtype=object)
    if mask is not None and np.any(mask):
        out[np.asarray(mask).ravel()] = ""
    return out


def column(data, candidates, kind="float", unit=None):
    """Return the first matching column of ``data`` as an array (None if absent)."""
    if data is None:
        return None
    name = _find(data, candidates)
    if name is None:
        return None
    values = data[name]
    if kind == "text":
        return _as_text(values)
    if kind == "int":
        arr = np.ma.getdata(values)
        mask = np.ma.getmaskarray(values) if hasattr(values, "mask") else None
        out = np.asarray(arr).astype(np.int64, copy=True)
        if mask is not None and np.any(mask):
            out[np.asarray(mask)] = 0
        return out
    return _as_float(values, unit, what=f"column {name!r}")


@dataclass
class StarData:
    """Per-star arrays used by the figures (plain floats; NaN where unknown)."""

    n: int
    logt: np.ndarray
    logl: np.ndarray | None
    logg: np.ndarray | None
    stage: np.ndarray | None      # object array of stage names ('' where absent)
    flags: np.ndarray             # int64
    logt_err: np.ndarray | None
    logl_err: np.ndarray | None
    corr: np.ndarray | None
    verdict: np.ndarray | None

    @property
    def has_position(self) -> np.ndarray:
        ok = np.isfinite(self.logt)
        if self.logl is not None:
            ok &= np.isfinite(self.logl)
        return ok


def _override(value, what, unit=None):
    if value is None:
        return None
    return np.atleast_1d(_as_float(value, unit, what=what)).ravel()


def gather(data=None, *, teff=None, logt=None, lum=None, logl=None, logg=None, stage=None, flags=None,
           logt_err=None, logl_err=None, corr=None, need="logl") -> StarData:
    """Collect the per-star arrays for a figure.

    Parameters
    ----------
    data : astropy.table.Table, mapping of arrays, or None
    teff, logt, lum, logl, logg, stage, flags, logt_err, logl_err, corr : array_like, optional
        Explicit values, which take precedence over the table's columns. ``teff`` in K (or a
        Quantity), ``lum`` in L_sun (or a Quantity).
    need : {"logl", "logg", None}
        Which vertical coordinate the figure needs.

    Raises
    ------
    HrstageInputError
        When no temperature (or the needed vertical coordinate) can be found, or the arrays have
        different lengths.
    """
    # temperature
    lt = _override(logt, "logt")
    if lt is None and teff is not None:
        with np.errstate(divide="ignore", invalid="ignore"):
            lt = np.log10(_override(teff, "teff", "K"))
    if lt is None and data is not None:
        for names, is_log in ((("teff_used",), False), (("logt", "log_teff", "logteff"), True),
                              (("teff", "t_eff"), False)):
            v = column(data, names, unit=None if is_log else "K")
            if v is not None:
                with np.errstate(divide="ignore", invalid="ignore"):
                    lt = v if is_log else np.log10(np.where(v > 0, v, np.nan))
                break
    if lt is None:
        raise HrstageInputError(
            "no temperature: give a table with a 'teff_used', 'teff' (K) or 'logt' column, or teff=/logt="
        )
    n = lt.size

    ll = _override(logl, "logl", None)
    if ll is None and lum is not None:
        with np.errstate(divide="ignore", invalid="ignore"):
            ll = np.log10(_override(lum, "lum", "solLum"))
    if ll is None and data is not None:
        v = column(data, ("logl_used", "logl", "log_l", "loglum"), unit="dex(solLum)")
        if v is not None:
            ll = v
        else:
            v = column(data, ("lum", "luminosity"), unit="solLum")
            if v is not None:
                with np.errstate(divide="ignore", invalid="ignore"):
                    ll = np.log10(np.where(v > 0, v, np.nan))
    lg = _override(logg, "logg")
    if lg is None and data is not None:
        lg = column(data, ("logg", "log_g"))

    if need == "logl" and ll is None:
        raise HrstageInputError(
            "no luminosity: give a table with a 'logl_used', 'logl' or 'lum' (Lsun) column, or lum=/logl="
        )
    if need == "logg" and lg is None:
        raise HrstageInputError("no surface gravity: give a table with a 'logg' column, or logg=")

    if stage is not None:
        st = _as_text(np.atleast_1d(np.asarray(stage, dtype=object)))
    else:
        st = column(data, ("stage",), kind="text")
    if st is not None:
        unknown = sorted(set(st[st != ""]) - set(STAGES))
        if unknown:
            raise HrstageInputError(
                f"column 'stage' has unknown value(s) {', '.join(map(repr, unknown[:5]))}; "
                f"expected {', '.join(STAGES)}"
            )

    if flags is not None:
        fl = np.atleast_1d(np.asarray(flags)).astype(np.int64)
    else:
        fl = column(data, ("flags",), kind="int")
        if fl is None:
            fl = np.zeros(n, dtype=np.int64)

    et = _override(logt_err, "logt_err") if logt_err is not None else column(data, ("logt_err",))
    el = _override(logl_err, "logl_err") if logl_err is not None else column(data, ("logl_err",))
    rc = _override(corr, "corr") if corr is not None else column(data, ("logt_logl_corr",))
    vd = column(data, ("sptype_verdict",), kind="text")

    for name, arr in (("logl", ll), ("logg", lg), ("stage", st), ("flags", fl), ("logt_err", et),
                      ("logl_err", el), ("corr", rc)):
        if arr is not None and arr.size != n:
            raise HrstageInputError(f"{name} has {arr.size} values but there are {n} temperatures")
    return StarData(n=n, logt=lt, logl=ll, logg=lg, stage=st, flags=fl, logt_err=et, logl_err=el,
                    corr=rc, verdict=vd)
