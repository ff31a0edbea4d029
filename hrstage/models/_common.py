"""Small array helpers shared by the relation modules (private)."""

from __future__ import annotations

import numpy as np


def as_float(x, unit: str | None = None) -> np.ndarray:
    """Return ``x`` as a float64 array; an astropy Quantity is converted to ``unit`` first.

    A Quantity without a ``unit`` to convert to is refused, so that a value in the wrong unit can
    never be read as a bare number.
    """
    if hasattr(x, "unit") and hasattr(x, "to_value"):
        if unit is None:
            raise TypeError("this relation takes plain numbers, not an astropy Quantity")
        return np.asarray(x.to_value(unit), dtype=float)
    return np.asarray(x, dtype=float)


def mass_mask(m: np.ndarray, lo: float, hi: float) -> tuple[np.ndarray, np.ndarray]:
    """Split masses into a safe working copy and a validity mask.

    Returns ``(m_safe, ok)``: ``ok`` is True where ``lo <= m <= hi`` (NaN is never ok), and
    ``m_safe`` equals ``m`` there and 1.0 elsewhere, so that formulae evaluated on ``m_safe`` raise no
    floating-point warnings for masked entries. Callers put NaN back where ``ok`` is False.
    """
    m = np.asarray(m, dtype=float)
    ok = (m >= lo) & (m <= hi)
    return np.where(ok, m, 1.0), ok


def masked(value, ok: np.ndarray) -> np.ndarray:
    """``value`` where ``ok``, NaN elsewhere; 0-d results come back as 0-d arrays."""
    return np.where(ok, value, np.nan)


def package_table(name: str) -> dict:
    """Columns of a compiled package table ``hrstage/data/<name>`` (ECSV) as numpy arrays.

    Only the tables the project compiled itself (``tools/compile_photometric_tables.py``) are read
    here, once per process by the caller's cache; text columns stay text, the rest are float64.
    """
    from importlib import resources

    path = resources.files("hrstage").joinpath(f"data/{name}")
    text = path.read_text(encoding="utf-8").splitlines()
    body = [ln for ln in text if ln.strip() and not ln.startswith("#")]
    names = body[0].split()
    rows = [ln.split() for ln in body[1:]]
    out = {}
    for j, n in enumerate(names):
        cells = [r[j] for r in rows]
        try:
            out[n] = np.array(cells, dtype=float)
        except ValueError:
            out[n] = np.array(cells, dtype=object)
    return out
