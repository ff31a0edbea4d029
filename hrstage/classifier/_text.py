"""Vectorised reason texts: numbers formatted through their unique displayed values.

A catalogue of a million stars may have hundreds of thousands of flagged rows, but only a few
thousand distinct displayed numbers (a Teff to 1 K, a mass to two significant digits). The helpers
here round each number to what its format shows, format every distinct combination once in
Python, and give each row its text by an index gather: one Python string object per distinct
text, shared by the rows that show it (object arrays, never fixed-width text arrays).
"""

from __future__ import annotations

import numpy as np

__all__ = ["display_round", "format_rows", "join_notes"]


def display_round(values, spec: str) -> np.ndarray:
    """Round ``values`` to what ``format(v, spec)`` shows (``.Nf``, ``+.Nf``, ``.Ng``; else as is).

    Only the distinct rounded values are formatted, so two values that print the same share one
    text. NaN and inf stay as they are.
    """
    v = np.asarray(values, dtype=float)
    kind = spec[-1:]
    digits = "".join(ch for ch in spec if ch.isdigit())
    if not digits or kind not in "fg":
        return v
    d = int(digits)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        if kind == "f":
            r = np.round(v, d)
        else:
            a = np.abs(v)
            e = np.floor(np.log10(np.where((a > 0) & np.isfinite(a), a, 1.0)))
            q = 10.0 ** (e - (max(d, 1) - 1))
            r = np.where((a > 0) & np.isfinite(a), np.rint(v / q) * q, v)
    return r


def _codes(col):
    """(unique values, inverse codes) of one text column: a string, an array of numbers with a
    format spec ``(values, spec)``, or an array of labels (strings / small ints) ``(values, None)``."""
    values, spec = col
    a = np.asarray(values)
    if spec is not None:
        a = display_round(a, spec)
    u, inv = np.unique(a, return_inverse=True)
    return u, inv.reshape(-1).astype(np.int64)


def format_rows(fmt, n: int, *cols) -> np.ndarray:
    """Texts ``fmt(*row_values)`` for ``n`` rows, one Python call per distinct combination.

    Parameters
    ----------
    fmt : callable
        ``fmt(v0, v1, ...) -> str`` given one (rounded) value of each column.
    n : int
        Number of rows.
    *cols : (array, spec or None)
        Per-row values; ``spec`` (e.g. ``".2g"``) rounds numbers to what they show before the
        distinct combinations are taken; ``None`` takes the values as they are (labels, codes).

    Returns
    -------
    ndarray of object, length ``n``.
    """
    if n == 0:
        return np.empty(0, dtype=object)
    if not cols:
        return np.full(n, fmt(), dtype=object)
    uniq, key = [], np.zeros(n, dtype=np.int64)
    radix = 1
    for col in cols:
        u, inv = _codes(col)
        if radix * max(len(u), 1) >= 2**62:  # too many combinations for one key: fold what we have
            _, key = np.unique(key, return_inverse=True)
            key = key.reshape(-1).astype(np.int64)
            radix = int(key.max()) + 1
        uniq.append(u)
        key = key * len(u) + inv
        radix *= max(len(u), 1)
    ukey, inv = np.unique(key, return_inverse=True)
    # decode each distinct key into the indices of its column values
    parts = []
    rest = ukey.copy()
    for u in reversed(uniq):
        parts.append(rest % len(u))
        rest //= len(u)
    parts.reverse()
    texts = np.empty(len(ukey), dtype=object)
    vals = [u[p] for u, p in zip(uniq, parts)]
    for k in range(len(ukey)):
        texts[k] = fmt(*(v[k].item() if hasattr(v[k], "item") else v[k] for v in vals))
    return texts[inv.reshape(-1)]


def join_notes(n: int, notes) -> np.ndarray:
    """Join notes ``[(row indices, texts), ...]`` (in order) into one text per row with '; '.

    ``texts`` is an object array aligned with the indices, or one string for all of them. Rows
    with no note get "". Only rows that already hold a text are concatenated.
    """
    out = np.full(n, "", dtype=object)
    filled = np.zeros(n, dtype=bool)
    for idx, texts in notes:
        idx = np.asarray(idx, dtype=np.intp)
        if idx.size == 0:
            continue
        scalar = isinstance(texts, str)
        had = filled[idx]
        if not had.any():
            out[idx] = texts
        else:
            new = ~had
            out[idx[new]] = texts if scalar else texts[new]
            j = idx[had]
            out[j] = out[j] + ("; " + texts if scalar else "; " + texts[had])
        filled[idx] = True
    return out
