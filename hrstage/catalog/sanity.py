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
* a text column where a number belongs, when at least half of its non-empty entries are not
  numbers (:data:`WORDS_WRONG_TYPE`); a few words among numbers are bad rows instead
  (``NOT_A_NUMBER``, the pipeline raises ``BAD_INPUT`` and names the column and the text).

Units are converted when the column has one (W or erg/s -> Lsun, arcsec or uas -> mas, km -> Rsun,
dex(K) given for teff -> taken as logt). Columns without a unit are taken in the canonical unit.
"""

from __future__ import annotations

import numpy as np
from astropy import units as u

from ..errors import HrstageInputError
from .profiles import ROLES

OK, MISSING, SENTINEL, NONPHYSICAL, NOT_A_NUMBER = 0, 1, 2, 3, 4
STATUS_TEXT = {MISSING: "missing", SENTINEL: "fill value", NONPHYSICAL: "non-physical",
               NOT_A_NUMBER: "not a number"}

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


#: A text column is the wrong type (an error for the whole column) when at least this fraction of
#: its non-empty entries are not numbers; below it, the few words are bad rows (``NOT_A_NUMBER``).
WORDS_WRONG_TYPE = 0.5


def _text_to_float(values, colname: str, role: str):
    """Text column -> (float values, missing mask, word mask, unique words and their inverse).

    Empty-like entries are missing; other entries that are not numbers are *words*: bad rows when
    they are a minority of the non-empty entries, the wrong column type (an error) otherwise.
    Works on the distinct strings only.
    """
    arr = np.asarray(values, dtype=object)
    uniq, inv = np.unique(arr, return_inverse=True)
    inv = inv.reshape(-1)
    out = np.empty(len(uniq))
    missing = np.zeros(len(uniq), dtype=bool)
    word = np.zeros(len(uniq), dtype=bool)
    for i, raw in enumerate(uniq):   # loop over distinct strings only
        text = str(raw).strip()
        if text.lower() in _NULL_TEXT:
            out[i] = np.nan
            missing[i] = True
            continue
        try:
            out[i] = float(text)
        except ValueError:
            out[i] = np.nan
            word[i] = True
    row_word = word[inv]
    if row_word.any():
        counts = np.bincount(inv, minlength=len(uniq))
        n_words = int(counts[word].sum())
        n_filled = int(counts[~missing].sum())
        if n_words >= WORDS_WRONG_TYPE * n_filled:
            first = int(np.flatnonzero(row_word)[0])
            raise HrstageInputError(
                f"column {colname} (role {role}) is text, not numbers: {n_words} of its {n_filled} non-empty "
                f"entries are not numbers (first {str(arr[first])[:40]!r} at row {first}); map another column "
                f"to {role} or fix the column")
    return out[inv], missing[inv], row_word, arr


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


def column_values(col, role: str, words: dict | None = None) -> tuple[np.ndarray, np.ndarray]:
    """One column -> (float64 values in the role's unit with NaN for unusable, status codes).

    ``words``, when given, receives ``{role: object array}`` with the offending text of the rows
    whose status is ``NOT_A_NUMBER`` (empty string elsewhere), for the row's reason.
    """
    name = getattr(getattr(col, "info", None), "name", role)
    mask = np.ma.getmaskarray(col) if np.ma.isMaskedArray(col) or hasattr(col, "mask") else None
    raw = np.ma.getdata(col)
    status = np.zeros(len(raw), dtype=np.int8)
    if raw.ndim != 1:
        raise HrstageInputError(f"column {name} (role {role}) holds arrays, expected one number per row")
    if raw.dtype.kind in "USO":
        if raw.dtype.kind == "S":
            raw = np.char.decode(raw, "utf-8", errors="replace")
        obj = raw.astype(object)
        if raw.dtype.kind == "O":
            obj[np.equal(obj, None)] = ""
        if mask is not None:
            obj[mask] = ""
        vals, txt_missing, is_word, texts = _text_to_float(obj, name, role)
        status[txt_missing] = MISSING
        status[is_word] = NOT_A_NUMBER
        if words is not None and is_word.any():
            w = np.full(len(raw), "", dtype=object)
            w[is_word] = texts[is_word]
            words[role] = w
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


def _remap_error(text: str, role: str, colname: str) -> HrstageInputError:
    return HrstageInputError(f"{text}; map it to role {role} ({role}={colname!r})",
                             cli=f"{text}; map it to role {role} (--col {role}={colname})")


def check_scale(role: str, vals: np.ndarray, colname: str) -> None:
    """Whole-column checks: log given for linear and the reverse (raises with the fix)."""
    good = vals[np.isfinite(vals)]
    if good.size == 0:
        return
    # a whole-column check: the median of an even sample of at most 16384 values says the same
    sample = good[:: -(-good.size // 16384)]
    med = float(np.median(sample))
    if role == "teff" and 2.5 < med < 5.5 and good.max() < 7.0:
        raise _remap_error(f"column {colname} given as teff looks like log10 Teff (median {med:.3g})", "logt",
                           colname)
    if role == "logt" and med > 100:
        raise _remap_error(f"column {colname} given as logt looks like Teff in K (median {med:.4g})", "teff",
                           colname)
    if role == "lum" and np.mean(good < 0) > 0.10:
        raise _remap_error(f"column {colname} given as lum has {np.mean(good < 0):.0%} negative values: "
                           "it looks like log10 L", "logl", colname)
    if role == "logl" and good.max() > 8.0 and med > 3.0:
        raise _remap_error(f"column {colname} given as logl reaches {good.max():.4g}: it looks like "
                           "L in Lsun", "lum", colname)


def text_values(col) -> np.ndarray:
    """A text role (sptype, id) -> object array of str, masked and null entries as ''.

    Object, not fixed width: one very long entry must not make every row as wide.
    """
    data = np.ma.getdata(col)
    if data.dtype.kind == "S":
        data = np.char.decode(data, "utf-8", errors="replace")
    out = np.asarray(data).astype(object)
    if data.dtype.kind not in "UO":
        out = np.asarray(data).astype(str).astype(object)
    if data.dtype.kind == "O":
        out[np.equal(out, None)] = ""
    if np.ma.isMaskedArray(col) or hasattr(col, "mask"):
        m = np.ma.getmaskarray(col)
        if m.any():
            out[m] = ""
    return out


def extract_roles(table, mapping, words: dict | None = None, skip=()) -> tuple[dict, dict]:
    """All mapped roles of ``table`` -> (values, status) dictionaries keyed by role.

    Numeric roles give float64 arrays in canonical units (NaN = unusable) and int8 status arrays;
    text roles (``sptype``, ``id``) give str arrays and no status. ``bp`` and ``rp`` together
    provide ``bp_rp`` when it is not mapped. ``words`` (optional dict) receives, per role, the
    text of entries that are not numbers (see :func:`column_values`). Roles in ``skip`` are not
    read.
    """
    values, status = {}, {}
    for role, colname in mapping.roles.items():
        if role in skip:
            continue
        col = table[colname]
        if ROLES[role].kind == "text":
            values[role] = text_values(col)
            continue
        vals, st = column_values(col, role, words)
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
