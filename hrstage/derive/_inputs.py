"""Input handling at the edge of the derive layer: Quantity -> float arrays, broadcasting, checks."""

from __future__ import annotations

import numpy as np
from astropy import units as u

from .. import flags as F
from ..flags import or_flag
from ..errors import HrstageInputError


def to_float(value, name: str, unit=None, *, log_ok: bool = False):
    """Turn ``value`` (None, scalar, array-like, masked array or Quantity) into a float array.

    Parameters
    ----------
    value : object
        The user's input. ``None`` stays ``None``.
    name : str
        Argument name, used in error messages.
    unit : astropy.units.Unit, optional
        Internal unit: Quantities are converted to it (plain numbers are taken to be in it).
    log_ok : bool
        Accept logarithmic quantities (e.g. ``dex(Lsun)``) and convert them to ``unit``.

    Raises
    ------
    HrstageInputError
        Non-numeric input or a unit that cannot be converted.
    """
    if value is None:
        return None
    if isinstance(value, u.Quantity):
        try:
            if isinstance(value, u.function.FunctionQuantity):
                if unit is None:  # a logarithmic quantity kept as its log value (e.g. log g in dex)
                    return np.asarray(value.value, dtype=float)
                if not log_ok:
                    raise HrstageInputError(f"{name}: logarithmic unit {value.unit} not accepted here")
                value = value.physical
            arr = value.to_value(unit) if unit is not None else value.value
        except u.UnitsError as exc:
            raise HrstageInputError(f"{name}: cannot convert unit {value.unit} to {unit} ({exc})") from None
        arr = np.asarray(arr, dtype=float)
    else:
        if np.ma.isMaskedArray(value):
            value = np.ma.filled(np.ma.asarray(value, dtype=float), np.nan)
        try:
            arr = np.asarray(value, dtype=float)
        except (TypeError, ValueError):
            raise HrstageInputError(f"{name}: expected numbers, got {type(value).__name__}") from None
    return arr


def broadcast(named: dict):
    """Broadcast the non-None arrays of ``named`` to one flat length; None stays None.

    Returns ``(n, dict)`` with 1-D float64 arrays (copies, never views of the user's data).
    """
    present = {k: v for k, v in named.items() if v is not None}
    try:
        shape = np.broadcast_shapes(*(np.shape(v) for v in present.values()))
    except ValueError:
        shapes = ", ".join(f"{k}{np.shape(v)}" for k, v in present.items())
        raise HrstageInputError(f"inputs cannot be broadcast to one length: {shapes}") from None
    if len(shape) > 1:
        raise HrstageInputError(f"inputs must be scalars or 1-D arrays, got shape {shape}")
    n = int(np.prod(shape)) if shape else 1
    out = {}
    for k, v in named.items():
        out[k] = None if v is None else np.array(np.broadcast_to(v, shape).reshape(n), dtype=float)
    return n, out


def check_values(flags, values, *, positive: bool = False):
    """OR MISSING_INPUT where ``values`` is NaN and BAD_INPUT where it is +-inf (or <= 0 if positive).

    Returns the mask of usable values.
    """
    nan = np.isnan(values)
    bad = np.isinf(values)
    if positive:
        bad |= ~nan & (values <= 0)
    or_flag(flags, nan, F.MISSING_INPUT)
    or_flag(flags, bad, F.BAD_INPUT)
    return ~(nan | bad)


def error_or_zero(err, n, flags, name):
    """An error array: None -> zeros; NaN -> 0 (missing error: treated as exact); negative -> BAD_INPUT."""
    if err is None:
        return np.zeros(n)
    bad = np.isinf(err) | (err < 0)
    or_flag(flags, bad, F.BAD_INPUT)
    return np.where(np.isfinite(err) & (err >= 0), err, np.where(bad, np.nan, 0.0))
