"""Vectorised reason texts: numbers formatted through their unique displayed values.

A catalogue of a million stars may have hundreds of thousands of flagged rows, but only a few
thousand distinct displayed numbers (a Teff to 1 K, a mass to two significant digits). The helpers
here round each number to what its format shows, format every distinct combination once in
Python, and give each row its text by an index gather: one Python string object per distinct
text, shared by the rows that show it (object arrays, never fixed-width text arrays).
"""

from __future__ import annotations

import numpy as np

__all__ = ["display_round", "format_rows", "format_codes", "concat_codes", "CodedText", "int_codes", "join_coded", "join_notes"]


def display_round(values, spec: str) -> np.ndarray:
    """Round ``values`` to what ``format(v, spec)`` shows (``.Nf``, ``+.Nf``, ``.Ng``; else as is).

    Only the distinct rounded values are formatted, so two values that print the same share one
    text. NaN and inf stay as they are.
    """
    return _round_key(values, spec)[0]


def _round_key(values, spec: str):
    """(rounded values, int64 key or None): equal keys <=> equal rounded values (finite ones);
    non-finite values get keys of their own above the finite ones."""
    v = np.asarray(values, dtype=float)
    kind = spec[-1:]
    digits = "".join(ch for ch in spec if ch.isdigit())
    if not digits or kind not in "fg":
        return v, None
    d = int(digits)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        fin = np.isfinite(v)
        if kind == "f":
            r = np.round(v, d)
            k = r * 10.0**d
            ok = fin & (np.abs(k) < 2.0**52)
            key = np.where(ok, np.rint(k), 0.0).astype(np.int64)
        else:
            a = np.abs(v)
            pos = (a > 0) & fin
            e = np.floor(np.log10(np.where(pos, a, 1.0)))
            q = 10.0 ** (e - (max(d, 1) - 1))
            mant = np.where(pos, np.rint(v / q), 0.0)
            r = np.where(pos, mant * q, v)
            ok = fin
            # rounded value = mant * 10^(e - d + 1): (e, mant) identifies it (mant may reach 10^d)
            key = ((e.astype(np.int64) + 400) * (4 * 10**max(d, 1) + 1) + (mant.astype(np.int64) + 2 * 10**max(d, 1)))
            key = np.where(pos, key, 0)
        if (fin & ~(ok & np.isfinite(r))).any():
            return r, None  # huge finite values: no exact integer key (sort-based uniques)
    if not fin.all():
        top = int(key[fin].max()) + 1 if fin.any() else 1
        key = np.where(fin, key, np.where(np.isnan(v), top, np.where(v > 0, top + 1, top + 2)))
    return r, key


def _int_codes(k: np.ndarray):
    """(distinct keys, inverse) of an int64 array; a presence table instead of a sort where the
    range of the keys is small."""
    if k.size == 0:
        return k, k
    lo, hi = int(k.min()), int(k.max())
    span = hi - lo + 1
    if span <= max(4 * k.size, 1 << 16):
        present = np.zeros(span, dtype=bool)
        off = k - lo
        present[off] = True
        pos = np.cumsum(present, dtype=np.int64) - 1
        return np.nonzero(present)[0] + lo, pos[off]
    u, inv = np.unique(k, return_inverse=True)
    return u, inv.reshape(-1).astype(np.int64)


#: Public name of :func:`_int_codes` (distinct int64 keys and each row's index among them).
int_codes = _int_codes


def _codes(col):
    """(unique values, inverse codes) of one text column: a string, an array of numbers with a
    format spec ``(values, spec)``, or an array of labels (strings / small ints) ``(values, None)``."""
    values, spec = col
    a = np.asarray(values)
    key = None
    if spec is not None:
        a, key = _round_key(a, spec)
    elif a.dtype.kind in "biu":
        key = a.astype(np.int64)
    if key is not None:
        uk, inv = _int_codes(key.reshape(-1))
        rep = np.empty(len(uk), dtype=a.dtype)
        rep[inv] = a.reshape(-1)  # every row of a key holds the same value
        return rep, inv
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
    texts, inv = format_codes(fmt, n, *cols)
    return texts[inv]


def format_codes(fmt, n: int, *cols):
    """As :func:`format_rows`, but returns ``(texts, codes)``: the distinct texts (object array)
    and, per row, the index of its text (so that texts can be combined per distinct pair)."""
    if n == 0:
        return np.empty(0, dtype=object), np.zeros(0, dtype=np.int64)
    if not cols:
        t = np.empty(1, dtype=object)
        t[0] = fmt()
        return t, np.zeros(n, dtype=np.int64)
    uniq, invs = zip(*(_codes(col) for col in cols))
    sizes = [max(len(u), 1) for u in uniq]
    if int(np.prod([float(k) for k in sizes])) < 2**62:
        key = np.zeros(n, dtype=np.int64)
        for u, inv in zip(uniq, invs):
            key = key * len(u) + inv
        ukey, inv = _int_codes(key)
        # decode each distinct key into the indices of its column values
        parts = []
        rest = ukey.copy()
        for u in reversed(uniq):
            parts.append(rest % len(u))
            rest //= len(u)
        parts.reverse()
    else:  # too many combinations for one integer key: distinct rows of the code matrix
        rows, inv = np.unique(np.stack(invs, axis=1), axis=0, return_inverse=True)
        parts = list(rows.T)
    vals = [_values_list(u[p]) for u, p in zip(uniq, parts)]
    texts = np.empty(len(parts[0]), dtype=object)
    memo = _memo_for(fmt)
    if memo is None:
        texts[:] = [fmt(*args) for args in zip(*vals)]
    else:  # texts already made for earlier chunks are looked up, not formatted again
        get = memo.get
        out = []
        for args in zip(*vals):
            t = get(args)
            if t is None:
                t = memo[args] = fmt(*args)
            out.append(t)
        texts[:] = out
    return texts, inv.reshape(-1)


_NAN = float("nan")


def _values_list(a) -> list:
    """``a.tolist()`` with every NaN the same float object (so equal argument tuples compare and
    hash equal in the memo: distinct NaN objects never do)."""
    out = a.tolist()
    if a.dtype.kind == "f":
        for i in np.flatnonzero(np.isnan(a)).tolist():
            out[i] = _NAN
    return out


#: Formatted texts per formatter, shared by the calls of a run (a catalogue read in chunks
#: formats the same numbers again and again); each formatter's memo is dropped when it outgrows
#: :data:`_MEMO_MAX` entries.
_MEMOS: dict = {}
_MEMO_MAX = 1 << 17


def _memo_for(fmt):
    """The memo of a formatter, keyed by its code and the values it closes over (``None`` when
    those are not hashable, e.g. arrays: then nothing is memoised)."""
    try:
        key = (fmt.__code__, tuple(c.cell_contents for c in (fmt.__closure__ or ())))
        memo = _MEMOS.get(key)
    except (AttributeError, TypeError, ValueError):
        return None
    if memo is None or len(memo) > _MEMO_MAX:
        if len(_MEMOS) > 64:
            _MEMOS.clear()
        memo = _MEMOS[key] = {}
    return memo


def concat_codes(a, b):
    """Row-wise ``a + b`` of two ``(texts, codes)`` pairs (from :func:`format_codes`), one string
    concatenation per distinct pair; returns a ``(texts, codes)`` pair."""
    (ta, ia), (tb, ib) = a, b
    key = ia * len(tb) + ib
    u, inv = _int_codes(key)
    if len(u) > len(key) // 4:  # nearly one pair per row: concatenate the rows
        return ta[ia] + tb[ib], np.arange(len(key), dtype=np.int64)
    return ta[u // len(tb)] + tb[u % len(tb)], inv


class CodedText:
    """A text column as its distinct texts and one code per row (``texts[codes]``).

    Cheap to build from codes the classifier has anyway and cheap to turn into a dictionary-encoded
    Arrow column; :meth:`to_numpy` gives the object array of the row texts.
    """

    __slots__ = ("texts", "codes")

    def __init__(self, texts, codes):
        self.texts = np.asarray(texts, dtype=object).reshape(-1)
        self.codes = np.asarray(codes).reshape(-1)

    def __len__(self):
        return len(self.codes)

    def to_numpy(self) -> np.ndarray:
        return self.texts[self.codes]


def note_codes(n: int, idx, texts):
    """One note as ``(row indices, distinct texts, code per listed row)``; rows whose text is empty
    are left out. ``texts`` as in :func:`join_notes`."""
    idx = np.asarray(idx, dtype=np.intp).reshape(-1)
    if isinstance(texts, tuple):
        u, c = np.asarray(texts[0], dtype=object), np.asarray(texts[1], dtype=np.int64).reshape(-1)
    elif isinstance(texts, str):
        u, c = np.array([texts], dtype=object), np.zeros(idx.size, dtype=np.int64)
    else:
        u, c = np.asarray(texts, dtype=object).reshape(-1), np.arange(idx.size, dtype=np.int64)
    if u.size:
        empty = (u == "") | np.equal(u, None)
        if empty.any():
            keep = ~empty[c]
            idx, c = idx[keep], c[keep]
    return idx, u, c


def join_coded(n: int, notes):
    """Join notes ``[(row indices, texts), ...]`` (in order) with '; ' into ``(texts, codes)``: the
    distinct joined texts (object array, ``texts[0] == ""``) and one int32 code per row.

    No per-row string is built: each note's rows get the code of their text; where a row already
    holds a text, the distinct (held, new) pairs are concatenated once each. Rows with no note (or
    only empty texts) get code 0, the empty text. ``texts`` of a note is one string for all its
    rows, an object array aligned with the indices, or a ``(distinct texts, codes)`` pair from
    :func:`format_codes`.
    """
    pool = [np.array([""], dtype=object)]   # texts of the codes handed out so far, in blocks
    size = 1
    code = np.zeros(n, dtype=np.int64)
    for idx, texts in notes:
        idx, u, c = note_codes(n, idx, texts)
        if idx.size == 0:
            continue
        held = code[idx]
        had = held > 0
        if not had.any():
            code[idx] = c + size
            pool.append(u)
            size += len(u)
            continue
        fresh = ~had
        used, inv = _int_codes(c[fresh]) if fresh.any() else (c[:0], c[:0])
        code[idx[fresh]] = inv + size
        pool.append(u[used])
        size += len(used)
        # rows holding a text: one concatenation per distinct (held text, new text) pair
        flat = np.concatenate(pool) if len(pool) > 1 else pool[0]
        pool = [flat]
        key = held[had] * len(u) + c[had]
        pairs, pinv = _int_codes(key)
        joined = flat[pairs // len(u)] + ("; " + u[pairs % len(u)])
        code[idx[had]] = pinv + size
        pool.append(joined)
        size += len(joined)
    flat = np.concatenate(pool) if len(pool) > 1 else pool[0]
    used, inv = _int_codes(np.concatenate([[0], code]))   # drop texts no row kept; "" stays code 0
    return flat[used], inv[1:].astype(np.int32)


def join_notes(n: int, notes) -> np.ndarray:
    """Join notes ``[(row indices, texts), ...]`` (in order) into one text per row with '; '
    (object array; rows with no note get ""). See :func:`join_coded`, which this expands."""
    texts, codes = join_coded(n, notes)
    return texts[codes]
