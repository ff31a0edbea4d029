"""Turning catalogue columns into clean float arrays, with unit and sanity checks.

For each role of a :class:`~hrstage.catalog.profiles.ColumnMapping`, :func:`extract_roles` returns a
float64 array in the role's canonical unit (K, Lsun, Rsun, mas, mag, dex, Msun) where every
unusable entry is NaN, and a status code per row saying why it is unusable:

* ``OK`` — a value;
* ``MISSING`` — masked, null, empty or NaN in the input;
* ``SENTINEL`` — a fill value such as 99.99, 999, 9999, -99, -999, -9999 (only the negative ones
  for linear Teff, L, radius and mass, where 999 or 9999 can be real), for magnitudes and colours
  anything with ``|x| >= 50``, and for log L, log g, [Fe/H], log Teff and parallax anything outside
  a physically possible range: treated as missing; the pipeline raises ``MISSING_INPUT``;
* ``NONPHYSICAL`` — a real number that cannot be the quantity (Teff <= 0 or outside 300 K - 10^7 K,
  L <= 0, radius <= 0, infinite): the pipeline raises ``BAD_INPUT``.

Whole-column mistakes are errors, not guesses (:class:`~hrstage.errors.HrstageInputError`):

* a column given as Teff whose values lie between 2.5 and 5.5 (median) is log10 Teff -> the message
  says to map it to the ``logt`` role; a ``logt`` column with values above 100 is a linear Teff;
* a luminosity column with more than 10 % negative values is log10 L -> map it to ``logl``;
  a ``logl`` column with values above 8 is linear L;
* a unit that cannot be converted to the role's unit (Teff in mag, parallax in K);
* text in a numeric column (the first offending row is named).

Units are converted when the column has one (W or erg/s -> Lsun, arcsec or uas -> mas, km -> Rsun,
dex(K) given for teff -> taken as logt). Columns without a unit are taken in the canonical unit.
"""

from __future__ import annotations

import numpy as np
from astropy import units as u

from ..errors import HrstageInputError
from .profiles import ROLES

OK, MISSING, SENTINEL, NONPHYSICAL = 0, 1, 2, 3
STATUS_TEXT = {MISSING: "missing", SENTINEL: "fill value", NONPHYSICAL: "non-physical"}

#: Fill values catalogues use for "no value" (common practice in survey catalogues).
SENTINELS = np.array([99.99, 99.999, 999.0, 999.9, 999.99, 9999.0, 9999.99, 99999.0,
                      -99.0, -99.9, -99.99, -999.0, -999.9, -9999.0, -99999.0])

_MAG_ROLES = {"g", "g_err", "bp_rp", "bp_rp_err", "bp", "rp", "v", "v_err", "b_v", "b_v_err",
              "ks", "ks_err", "a_v", "ebv", "a_g", "e_bp_rp"}
_POSITIVE = {"teff", "lum", "radius", "mass"}
_LINEAR = _POSITIVE | {"teff_err", "lum_err", "radius_err"}
#: Outside these ranges a value is a fill value, not a measurement (common practice).
_PLAUSIBLE = {"logl": (-10.0, 10.0), "logg": (-3.0, 12.0), "feh": (-8.0, 3.0), "logt": (2.0, 7.0),
              "parallax": (-2000.0, 2000.0)}

_NULL_TEXT = {"", "nan", "null", "na", "n/a", "none", "--", "-", "...", "inf?"}


def _text_to_float(values, colname: str, role: str) -> tuple[np.ndarray, np.ndarray]:
    """Text column -> float, empty-like entries missing; any other non-number is an error."""
    arr = np.asarray(values).astype(str)
    uniq, inv = np.unique(np.char.strip(arr), return_inverse=True)
    out = np.empty(len(uniq))
    missing = np.zeros(len(uniq), dtype=bool)
    for i, text in enumerate(uniq):   # loop over distinct strings only
        if text.lower() in _NULL_TEXT:
            out[i] = np.nan
            missing[i] = True
            continue
        try:
            out[i] = float(text)
        except ValueError:
            row = int(np.flatnonzero(inv == i)[0])
            raise HrstageInputError(f"column {colname} (role {role}) holds text {str(text)!r} at row {row}; "
                                    "expected a number") from None
    return out[inv], missing[inv]


def _convert_unit(values: np.ndarray, unit, colname: str, role: str) -> np.ndarray:
    target = ROLES[role].unit
    if unit is None or target is None:
        return values
    if isinstance(unit, str):
        unit = u.Unit(unit, parse_strict="silent")
    if isinstance(unit, u.UnrecognizedUnit) or unit == u.dimensionless_unscaled:
        return values
    tgt = u.Unit(target)
    if unit == tgt:
        return values
    try:
        if role in _MAG_ROLES and unit.physical_type != tgt.physical_type:
            raise u.UnitConversionError("")
        return (values * unit).to_value(tgt)
    except (u.UnitConversionError, u.UnitsError, TypeError, ValueError):
        raise HrstageInputError(f"column {colname} (role {role}) has unit {unit.to_string()!r}, "
                                f"expected {target}") from None


def column_values(col, role: str) -> tuple[np.ndarray, np.ndarray]:
    """One column -> (float64 values in the role's unit with NaN for unusable, status codes)."""
    name = getattr(getattr(col, "info", None), "name", role)
    mask = np.ma.getmaskarray(col) if np.ma.isMaskedArray(col) or hasattr(col, "mask") else None
    raw = np.ma.getdata(col)
    status = np.zeros(len(raw), dtype=np.int8)
    if raw.ndim != 1:
        raise HrstageInputError(f"column {name} (role {role}) holds arrays, expected one number per row")
    if raw.dtype.kind in "US":
        vals, txt_missing = _text_to_float(raw, name, role)
        status[txt_missing] = MISSING
    elif raw.dtype.kind == "O":
        vals, txt_missing = _text_to_float(np.array([("" if v is None else str(v)) for v in raw]), name, role)
        status[txt_missing] = MISSING
    elif raw.dtype.kind in "biuf":
        vals = raw.astype(np.float64)
    else:
        raise HrstageInputError(f"column {name} (role {role}) has type {raw.dtype}, expected numbers")
    if mask is not None:
        status[mask] = MISSING
    vals = np.where(status == OK, vals, np.nan)
    status[np.isnan(vals) & (status == OK)] = MISSING
    # fill values before units: they are written in the catalogue's own numbers
    # positive fill values (999, 9999 ...) are real numbers for linear Teff, L, R or M: only the
    # negative ones count there
    sentinel = np.isin(vals, SENTINELS[SENTINELS < 0] if role in _LINEAR else SENTINELS)
    if role in _MAG_ROLES:
        sentinel |= np.abs(vals) >= 50.0
    status[sentinel] = SENTINEL
    vals = _convert_unit(vals, getattr(col, "unit", None), name, role)
    check_scale(role, np.where(status == OK, vals, np.nan), name)
    lo_hi = _PLAUSIBLE.get(role)
    if lo_hi is not None:
        out = np.isfinite(vals) & ((vals < lo_hi[0]) | (vals > lo_hi[1])) & (status == OK)
        status[out] = SENTINEL
    if role in _POSITIVE:
        status[(vals <= 0) & (status == OK)] = NONPHYSICAL
    if role == "teff":   # no star is cooler than 300 K or hotter than 10^7 K (common practice)
        status[((vals < 300.0) | (vals > 1.0e7)) & (status == OK)] = NONPHYSICAL
    status[np.isinf(vals) & (status == OK)] = NONPHYSICAL
    if role.endswith("_err"):
        status[(vals < 0) & (status == OK)] = NONPHYSICAL
    vals = np.where(status == OK, vals, np.nan)
    return vals, status


def check_scale(role: str, vals: np.ndarray, colname: str) -> None:
    """Whole-column checks: log given for linear and the reverse (raises with the fix)."""
    good = vals[np.isfinite(vals)]
    if good.size == 0:
        return
    med = float(np.median(good))
    if role == "teff" and 2.5 < med < 5.5 and good.max() < 7.0:
        raise HrstageInputError(f"column {colname} given as teff looks like log10 Teff (median {med:.3g}); "
                                f"map it to role logt (--col logt={colname})")
    if role == "logt" and med > 100:
        raise HrstageInputError(f"column {colname} given as logt looks like Teff in K (median {med:.4g}); "
                                f"map it to role teff (--col teff={colname})")
    if role == "lum" and np.mean(good < 0) > 0.10:
        raise HrstageInputError(f"column {colname} given as lum has {np.mean(good < 0):.0%} negative values: "
                                f"it looks like log10 L; map it to role logl (--col logl={colname})")
    if role == "logl" and good.max() > 8.0 and med > 3.0:
        raise HrstageInputError(f"column {colname} given as logl reaches {good.max():.4g}: it looks like "
                                f"L in Lsun; map it to role lum (--col lum={colname})")


def text_values(col) -> np.ndarray:
    """A text role (sptype, id) -> str array, masked and null entries as ''."""
    data = np.ma.getdata(col)
    if data.dtype.kind == "S":
        data = np.char.decode(data, "utf-8", errors="replace")
    out = np.asarray(data).astype(str)
    if np.ma.isMaskedArray(col) or hasattr(col, "mask"):
        m = np.ma.getmaskarray(col)
        if m.any():
            out = np.where(m, "", out)
    return out


def extract_roles(table, mapping) -> tuple[dict, dict]:
    """All mapped roles of ``table`` -> (values, status) dictionaries keyed by role.

    Numeric roles give float64 arrays in canonical units (NaN = unusable) and int8 status arrays;
    text roles (``sptype``, ``id``) give str arrays and no status. ``bp`` and ``rp`` together
    provide ``bp_rp`` when it is not mapped.
    """
    values, status = {}, {}
    for role, colname in mapping.roles.items():
        col = table[colname]
        if ROLES[role].kind == "text":
            values[role] = text_values(col)
            continue
        vals, st = column_values(col, role)
        values[role], status[role] = vals, st
    if "bp_rp" not in values and "bp" in values and "rp" in values:
        values["bp_rp"] = values["bp"] - values["rp"]
        status["bp_rp"] = np.maximum(status["bp"], status["rp"])
    if "teff" not in values and "logt" in values:
        values["teff"] = 10.0 ** values["logt"]
        status["teff"] = status["logt"]
        if "logt_err" in values and "teff_err" not in values:
            values["teff_err"] = values["teff"] * np.log(10.0) * values["logt_err"]
            status["teff_err"] = status["logt_err"]
    return values, status
