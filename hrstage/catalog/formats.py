"""Reading and writing catalogues: FITS, VOTable, ECSV, CSV and Parquet.

FITS, VOTable and ECSV go through astropy's unified I/O; Parquet and CSV through pyarrow (fast,
typed, streamable), converted to and from astropy Tables by :mod:`hrstage.catalog.arrow`. Every
input column and row is kept, in order, with its values and dtype; NaN stays NaN (FITS is read with
``mask_invalid=False``) and nulls become masked entries.

Writing is atomic (:mod:`hrstage.catalog.atomic`) and attaches to our own columns the unit,
description and UCD of :mod:`hrstage.columns`: FITS ``TUNITn``/``TCOMMn`` cards, VOTable FIELD
``unit``/``ucd``/DESCRIPTION, the ECSV YAML header, Parquet ``table_meta_yaml``. Plain CSV cannot
hold units: choose ECSV when you want them kept in a text file.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.table import Table

from ..columns import COLUMNS
from ..errors import HrstageInputError
from .atomic import atomic_output

#: Our format names and the file suffixes that select them (lower case).
SUFFIXES = {
    ".fits": "fits", ".fit": "fits", ".fts": "fits",
    ".vot": "votable", ".votable": "votable", ".xml": "votable",
    ".ecsv": "ecsv",
    ".csv": "csv",
    ".parquet": "parquet", ".parq": "parquet", ".pq": "parquet",
}
FORMATS = ("fits", "votable", "ecsv", "csv", "parquet")

#: Table-meta keys written by hrstage and their 8-character FITS keyword.
FITS_META_KEYS = {
    "hrstage_version": "HRS_VERS",
    "hrstage_profile": "HRS_PROF",
    "hrstage_roles": "HRS_ROLE",
    "hrstage_paths": "HRS_PATH",
    "hrstage_options": "HRS_OPTS",
    "hrstage_caution": "HRS_NOTE",
    "hrstage_prefix": "HRS_PREF",
}


def format_of(path, fmt: str | None = None, *, option: str = "--in-format") -> str:
    """Our format name for ``path`` (from ``fmt`` if given, else from the suffix).

    ``option`` is the command-line option that names the format of this file (``--in-format``
    or ``--out-format``), for the message when the suffix says nothing.

    Raises
    ------
    HrstageInputError
        Unknown suffix or format name.
    """
    if fmt is not None:
        f = fmt.lower().removeprefix("ascii.")
        if f not in FORMATS:
            raise HrstageInputError(f"unknown format {fmt!r}; expected one of {', '.join(FORMATS)}")
        return f
    p = Path(path)
    suffixes = [s.lower() for s in p.suffixes]
    if suffixes and suffixes[-1] in (".gz", ".bz2", ".xz") and len(suffixes) > 1:
        raise HrstageInputError(f"{p.name}: compressed files are not supported; decompress first "
                                "or use Parquet, which compresses internally")
    if suffixes and suffixes[-1] in SUFFIXES:
        return SUFFIXES[suffixes[-1]]
    known = ", ".join(sorted(SUFFIXES))
    start = f"cannot tell the format of {p.name!r} from its suffix (known: {known}); "
    raise HrstageInputError(start + f"pass format= one of {', '.join(FORMATS)}",
                            cli=start + f"name it with {option} ({'|'.join(FORMATS)})")


def _check_readable(path: Path) -> None:
    if not path.exists():
        raise HrstageInputError(f"input file {path} does not exist")
    if path.is_dir():
        raise HrstageInputError(f"input {path} is a folder, expected a catalogue file")
    if path.stat().st_size == 0:
        raise HrstageInputError(f"input file {path} is empty")


def _one_line(exc: BaseException) -> str:
    text = str(exc).strip().splitlines()
    return (text[0] if text else type(exc).__name__)[:300]


# ----------------------------------------------------------------------------------- FITS
def fits_table_hdu_index(path) -> int:
    """Index of the first HDU of ``path`` that holds a table (raises if none)."""
    from astropy.io import fits

    with fits.open(path, memmap=True) as hdul:
        for i, hdu in enumerate(hdul):
            if isinstance(hdu, (fits.BinTableHDU, fits.TableHDU)):
                return i
    raise HrstageInputError(f"{Path(path).name}: no table extension in this FITS file")


def _fits_restore(table: Table, header) -> Table:
    """Units that astropy could not parse as FITS units (dex, ...) and TCOMMn descriptions."""
    for i, name in enumerate(table.colnames, start=1):
        col = table[name]
        unit_text = header.get(f"TUNIT{i}")
        if unit_text and (col.unit is None or isinstance(col.unit, u.UnrecognizedUnit)):
            try:
                col.unit = u.Unit(unit_text)
            except ValueError:
                col.unit = u.Unit(unit_text, parse_strict="silent")
        comm = header.get(f"TCOMM{i}")
        if comm and not col.description:
            col.description = comm
        kept = header.get(f"{FITS_UNIT_KEY}{i}")
        if kept:
            try:
                col.unit = u.Unit(kept)
            except ValueError:
                col.unit = u.Unit(kept, parse_strict="silent")
        table.meta.pop(f"{FITS_UNIT_KEY}{i}", None)
    for key, fkey in FITS_META_KEYS.items():
        if fkey in table.meta:
            table.meta[key] = table.meta.pop(fkey)
    return table


#: FITS keyword prefix (``HRSUn``) keeping a unit the FITS standard has no form for (``dex``,
#: ``dex(solLum)``): such a column gets no ``TUNITn`` (so readers see a plain number, without a
#: "not supported by the FITS standard" warning), its ``TCOMMn`` says what it is, and hrstage reads
#: the unit back from ``HRSUn``.
FITS_UNIT_KEY = "HRSU"


def fits_unit(unit):
    """``(TUNIT text or None, kept text or None)`` of a unit: the FITS form when the standard has
    one, else ``None`` and astropy's generic text of it (logarithmic units such as dex)."""
    if unit is None:
        return None, None
    try:
        return unit.to_string("fits"), None
    except (ValueError, TypeError, AttributeError, u.UnitsError):
        return None, unit.to_string()


def _read_fits(path: Path, hdu=None) -> Table:
    from astropy.io import fits

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            idx = fits_table_hdu_index(path) if hdu is None else hdu
            tbl = Table.read(path, format="fits", hdu=idx, mask_invalid=False, unit_parse_strict="silent")
            header = fits.getheader(path, idx)
            # touch the last row so that truncated data fail here, not later
            if len(tbl):
                np.asarray(tbl[len(tbl) - 1].as_void())
    except HrstageInputError:
        raise
    except Exception as exc:
        raise HrstageInputError(f"cannot read FITS file {path.name}: {_one_line(exc)} "
                                "(truncated or not a FITS table?)") from None
    tbl.convert_bytestring_to_unicode()
    return _fits_restore(tbl, header)


def _write_fits(table: Table, tmp: Path) -> None:
    from astropy.io import fits

    out = table.copy(copy_data=False)
    for name in out.colnames:      # FITS text columns are fixed width: the widest entry sets it
        col = out[name]
        if col.dtype.kind == "O" and col.ndim == 1:
            data = np.ma.getdata(col)
            fixed = data.astype(str) if len(col) else np.zeros(0, dtype="U1")
            out[name] = type(col)(fixed, name=name, unit=col.unit, description=col.description, meta=col.meta,
                                  **({"mask": np.ma.getmaskarray(col)} if hasattr(col, "mask") else {}))
    for key, fkey in FITS_META_KEYS.items():
        if key in out.meta:
            out.meta[fkey] = out.meta.pop(key)
    kept = {}
    for i, name in enumerate(out.colnames, start=1):
        std, other = fits_unit(out[name].unit)
        if other is not None:       # no FITS form: no TUNIT, the unit kept in HRSUn (see FITS_UNIT_KEY)
            kept[i] = other
            out[name].unit = None
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        hdu = fits.table_to_hdu(out)
    for i, name in enumerate(out.colnames, start=1):
        col = out[name]
        if i in kept:
            hdu.header[f"{FITS_UNIT_KEY}{i}"] = (kept[i], f"unit of column {i} (no FITS form)")
        if col.description:
            hdu.header[f"TCOMM{i}"] = str(col.description)[:68]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fits.HDUList([fits.PrimaryHDU(), hdu]).writeto(tmp, overwrite=True)


# ------------------------------------------------------------------------------------ CSV
def csv_read_options(block_size: int | None = None):
    """pyarrow CSV options shared by the whole-file and streaming readers."""
    import pyarrow.csv as pacsv

    read = pacsv.ReadOptions(block_size=block_size) if block_size else pacsv.ReadOptions()
    parse = pacsv.ParseOptions()
    # "nan" stays a float NaN (not a null), as our writer writes it
    convert = pacsv.ConvertOptions(strings_can_be_null=False, timestamp_parsers=[],
                                   null_values=list(CSV_NULLS))
    return read, parse, convert


#: Text read as null (masked) in CSV numeric columns; "nan" is read as NaN.
CSV_NULLS = ("", "NA", "N/A", "NULL", "null", "None", "--")


def csv_text(table: Table, header: bool = True) -> str:
    """One table (or chunk) as CSV text: floats in their shortest exact form with a decimal
    point (so 5000.0 reads back as a float), text quoted only when needed, masked entries empty.

    Tables of plain columns (numbers, booleans, text; no display ``format``, one value per cell)
    are formatted by :func:`arrow_csv` (vectorised); others by astropy's CSV writer, whose text
    :func:`arrow_csv` reproduces except where noted there.
    """
    data = _arrow_for_csv(table)
    if data is not None:
        return arrow_csv(data, header=header).decode("utf-8")
    return _astropy_csv_text(table, header)


def _astropy_csv_text(table: Table, header: bool = True) -> str:
    import io

    buf = io.StringIO()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        table.write(buf, format="ascii.csv", overwrite=True)
    text = buf.getvalue()
    if not header:
        text = text.split("\n", 1)[1] if "\n" in text else ""
    return text


def _arrow_for_csv(table: Table):
    """``table`` as a pyarrow Table when :func:`arrow_csv` can format every column, else ``None``."""
    from astropy.table import Column

    from .arrow import table_to_arrow

    for name in table.colnames:
        col = table[name]
        if not isinstance(col, Column) or col.ndim != 1 or col.info.format is not None \
                or col.dtype.kind not in "biufUO":
            return None
    try:
        data = table_to_arrow(table, with_meta=False)
    except Exception:  # noqa: BLE001 - e.g. an object column of mixed values: astropy writes it
        return None
    return data if csv_supported(data.schema) else None


def _csv_kind(t):
    import pyarrow as pa

    if pa.types.is_dictionary(t):
        return "text" if _csv_kind(t.value_type) == "text" else None
    if pa.types.is_string(t) or pa.types.is_large_string(t):
        return "text"
    if pa.types.is_floating(t):
        return "float"
    if pa.types.is_integer(t):
        return "int"
    if pa.types.is_boolean(t):
        return "bool"
    return None


def csv_supported(schema) -> bool:
    """True when :func:`arrow_csv` formats every column of ``schema`` (numbers, booleans, text)."""
    return all(_csv_kind(f.type) is not None for f in schema)


#: A text cell is quoted when it holds one of these (the delimiter, the quote, a line end).
_CSV_QUOTE_WHEN = '[",\r\n]'
#: A column whose share of distinct values is at most this is formatted once per distinct value
#: and gathered (probabilities in steps of 1/n_draws, flags, labels, [Fe/H] grids ...).
_CSV_FEW = 0.5


def _text_bytes(s):
    """``(offsets, data)`` of an arrow (large) string array as numpy views: ``data[offsets[i]:
    offsets[i + 1]]`` are the bytes of cell ``i`` (nulls are empty)."""
    import pyarrow as pa

    wide = pa.types.is_large_string(s.type)
    bufs = s.buffers()
    offsets = np.frombuffer(bufs[1], dtype=np.int64 if wide else np.int32)[s.offset:s.offset + len(s) + 1]
    data = np.frombuffer(bufs[2], dtype=np.uint8) if bufs[2] is not None else np.zeros(0, np.uint8)
    return offsets, data


def _needs_quote_anywhere(s) -> bool:
    """True when some cell of the string array ``s`` holds a character of :data:`_CSV_QUOTE_WHEN`
    (a scan of the text bytes; UTF-8 continuation bytes are never ASCII)."""
    if len(s) == 0 or s.buffers()[2] is None:
        return False
    offsets, _ = _text_bytes(s)
    text = s.buffers()[2].slice(int(offsets[0]), int(offsets[-1] - offsets[0])).to_pybytes()
    return any(text.find(c) >= 0 for c in (b",", b'"', b"\n", b"\r"))


def _csv_quote(s):
    """Text cells quoted (inner quotes doubled) where needed; arrow string array in and out."""
    import pyarrow.compute as pc

    if not _needs_quote_anywhere(s):
        return s
    need = pc.match_substring_regex(s, _CSV_QUOTE_WHEN)
    quoted = pc.binary_join_element_wise('"', pc.replace_substring(s, '"', '""'), '"', "")
    return pc.if_else(need, quoted, s)


def _rows_holding(s, byte: int):
    """Indices of the cells of string array ``s`` holding the byte ``byte`` (ascending, unique)."""
    offsets, data = _text_bytes(s)
    at = np.flatnonzero(data[offsets[0]:offsets[-1]] == byte) + offsets[0]
    return np.unique(np.searchsorted(offsets, at, side="right") - 1)


def _float_bits(x):
    """The bit patterns of float values as integers of the same width (every value apart, -0.0
    from 0.0; NaNs with different payloads apart too, all written ``nan``)."""
    return x.view(np.int32 if x.dtype == np.float32 else np.int64)


def _gathered(words):
    """A cell formatter for a slice of ``indices``: the texts ``words`` taken by index."""
    import pyarrow.compute as pc

    return lambda idx: pc.take(words, idx)


def _small_string(s):
    """A text slice with 32-bit offsets (a slice's text stays far below 2 GiB)."""
    import pyarrow as pa

    return s.cast(pa.string()) if pa.types.is_large_string(s.type) else s


def _text_plan(col):
    """``(cells source, formatter)`` of a text column (plain, large or dictionary-encoded): quoted
    where needed, once per distinct text when few (always for a dictionary)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    if pa.types.is_dictionary(col.type):            # quoted on the dictionary, then gathered
        if isinstance(col, pa.ChunkedArray):
            col = col.combine_chunks() if col.num_chunks != 1 else col.chunk(0)
        return col.indices, _gathered(_csv_quote(_small_string(col.dictionary)))
    coded = pc.dictionary_encode(col.combine_chunks() if isinstance(col, pa.ChunkedArray) else col)
    if len(coded.dictionary) > _CSV_FEW * len(coded):
        return col, lambda s: _csv_quote(_small_string(s))
    words = _small_string(coded.dictionary)
    if not _needs_quote_anywhere(words):            # the column's cells are its texts
        return col, _small_string
    return coded.indices, _gathered(_csv_quote(words))


def _float_plan(col):
    """``(cells source, formatter)`` of a float column: the shortest text that reads back as the
    same double, as Python's ``repr`` writes it (single precision: see :func:`arrow_csv`).

    pyarrow's cast gives the same shortest digits; where it writes them positionally Python does
    too for 1e-4 <= |x| < 1e16 (``.0`` added to whole numbers); the rest (exponent forms, where the
    two choose differently) is rewritten from pyarrow's text or formatted by numpy, whose float
    text is Python's. A column of few distinct values (bit for bit) is formatted once per value.
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    if not (pa.types.is_float32(col.type) or pa.types.is_float64(col.type)):
        col = col.cast(pa.float64())
    n = len(col)
    if n >= 64:
        x = np.asarray(pc.fill_null(col, 0.0).to_numpy(zero_copy_only=False))
        bits = _float_bits(x)
        sample = bits[::max(1, n // 4096)]
        if len(np.unique(sample)) <= 0.9 * len(sample):       # worth counting them all
            valid = None if col.null_count == 0 else \
                np.asarray(col.is_valid().to_numpy(zero_copy_only=False))
            coded = pc.dictionary_encode(pa.array(bits, mask=None if valid is None else ~valid))
            if len(coded.dictionary) <= _CSV_FEW * n:
                values = coded.dictionary.to_numpy(zero_copy_only=False).view(x.dtype)
                return coded.indices, _gathered(_csv_float_each(pa.array(values)))
    return col, _csv_float_each


def _csv_plan(col):
    """How to format a column (arrow array or chunked array): ``(source, formatter)``, the cells
    of rows ``i:j`` being ``formatter(source[i:j])`` (a plain array). Few-valued columns are
    formatted here once per distinct value, their source being the index of each row's text."""
    import pyarrow as pa
    import pyarrow.compute as pc

    kind = _csv_kind(col.type)
    if kind == "text":
        return _text_plan(col)
    if kind == "float":
        return _float_plan(col)
    if kind == "bool":
        return col, lambda a: pc.if_else(a, "True", "False")
    return col, lambda a: pc.cast(a, pa.string())


def _csv_float_each(arr):
    """:func:`_float_plan`'s text value by value: ``arr`` a float32 or float64 arrow array."""
    import pyarrow as pa
    import pyarrow.compute as pc

    # single precision keeps its own shortest digits (float32 -> string is shortest for float32;
    # numpy's str of a float32 likewise), not those of the double it equals
    s = pc.cast(arr, pa.string())
    x = np.asarray(pc.fill_null(arr, 0.0).to_numpy(zero_copy_only=False))
    with np.errstate(invalid="ignore"):
        ax = np.abs(x)
        finite = np.isfinite(x)
        positional = ((ax >= 1e-4) & (ax < 1e16)) | (x == 0) | ~finite
        positional[_rows_holding(s, ord("e"))] = False         # pyarrow's own exponent forms
        # pyarrow's positional text of a whole number has no decimal point ("30640" -> "30640.0");
        # that of any other number has one (below 2**52 a whole text reads back as a whole number)
        whole = positional & finite & (x == np.trunc(x))
    if whole.any():
        picked = pa.array(whole)
        s = pc.replace_with_mask(s, picked, pc.binary_join_element_wise(pc.filter(s, picked), ".0", ""))
    if not positional.all():
        other = ~positional
        if arr.null_count:
            other &= np.asarray(arr.is_valid().to_numpy(zero_copy_only=False))
        picked = pa.array(other)
        # Python's exponent form (|x| < 1e-4 or >= 1e16) rewritten from pyarrow's text of the same
        # shortest digits; any other text (an exponent form of pyarrow's where Python writes the
        # number positionally, or a layout not foreseen) formatted value by value
        text, done = _exponent_layout(pc.filter(s, picked))
        with np.errstate(invalid="ignore"):
            done &= ~((ax[other] >= 1e-4) & (ax[other] < 1e16))
        if not done.all():
            text = pc.replace_with_mask(text, pa.array(~done), _float_text_each(x[other][~done]))
        s = pc.replace_with_mask(s, picked, text)
    return s


def _float_text_each(vals):
    """Python's text of each float in ``vals`` (single precision with its own shortest digits)."""
    import pyarrow as pa

    if vals.dtype == np.float32:   # numpy's str of a float32 has rules of its own: Python's style
        text = np.array([single_text(v) for v in vals], dtype=object)
    else:
        text = vals.astype(str).astype(object)
    return pa.array(text, type=pa.string())


#: pyarrow writes an exponent of one digit as is (``1e-7``), Python with a leading zero (``1e-07``);
#: the replacement is group 1, a zero, group 2 (RE2 reads one digit after a backslash).
_EXPONENT_ONE_DIGIT = (r"^(-?[0-9](?:\.[0-9]+)?e[+-])([0-9])$", r"\10\2")
#: Python's exponent form of a finite, non-zero number.
_PYTHON_EXPONENT = r"^-?[1-9](?:\.[0-9]*[1-9])?e[+-][0-9][0-9]+$"


def _exponent_layout(text):
    """pyarrow's shortest text of numbers laid out as Python's exponent form: ``(texts, ok)``,
    ``ok`` False where the result is not of that form (those are to be formatted otherwise).

    pyarrow writes 1e-6 <= |x| < 1e-4 positionally (``0.000031`` -> ``3.1e-05``; rewritten for
    up to eight zeros after the point, in case) and one-digit exponents without a leading zero.
    """
    import pyarrow.compute as pc

    text = pc.replace_substring_regex(text, *_EXPONENT_ONE_DIGIT)
    for zeros in range(4, 9):
        text = pc.replace_substring_regex(text, rf"^(-?)0\.0{{{zeros}}}([1-9])([0-9]*)$",
                                          rf"\1\2.\3e-{zeros + 1:02d}")
    text = pc.replace_substring(text, ".e", "e")
    ok = pc.fill_null(pc.match_substring_regex(text, _PYTHON_EXPONENT), False)
    return text, np.asarray(ok.to_numpy(zero_copy_only=False))


def single_text(v) -> str:
    """A finite single-precision value with its own shortest digits, laid out as Python writes a
    double: positional for 1e-4 <= |x| < 1e16 (``5000.0``), exponent form otherwise
    (``1.9738104e+08``, ``1e-05``). For the values pyarrow writes in exponent form."""
    v = np.float32(v)
    if v == 0 or 1e-4 <= abs(v) < 1e16:
        return np.format_float_positional(v, unique=True, trim="0")
    return np.format_float_scientific(v, unique=True, trim="-", exp_digits=2)


def _csv_name(name: str, single: bool) -> str:
    if single and name == "":
        return '""'
    if any(c in name for c in ',"\r\n'):
        return '"' + name.replace('"', '""') + '"'
    return name


def arrow_csv(data, header: bool = True) -> bytes:
    """A pyarrow Table / RecordBatch as CSV bytes (UTF-8), formatted column by column in Arrow.

    The text is what astropy's CSV writer (``format="ascii.csv"``) gives for the same table, byte
    for byte, with three deliberate exceptions (single precision, see below, and): text cells keep their leading and trailing blanks
    (astropy strips them) and a text cell holding a carriage return is quoted (astropy leaves it
    bare, and readers then see a line end). Rules: header line of the names; integers in decimal;
    floats as the shortest text that reads back as the same double, always with a decimal point
    or an exponent (``5000.0``, ``1e-05``, ``nan``, ``inf``; single precision as the shortest text
    that reads back as the same single-precision value, where astropy writes the double it equals:
    ``1.164375``, not ``1.1643750667572021``); booleans ``True``/``False``; text as is, quoted (``"`` doubled) when it holds a
    comma, a quote or a line end; null cells empty (``""`` in a one-column table, where an empty
    line would be no row). Columns of other types: see :func:`csv_supported`.
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    if isinstance(data, pa.RecordBatch):
        data = pa.Table.from_batches([data])
    names = data.schema.names
    single = len(names) == 1
    head = (",".join(_csv_name(n, single) for n in names) + "\n").encode("utf-8") if header else b""
    if data.num_rows == 0:
        return head
    # formatted CSV_SLICE_ROWS rows at a time: the per-column cell texts and their joins of a whole
    # chunk held at once cost ~5x the chunk's text in memory (~250 MB per 100 000 rows of our output)
    # columns of few distinct values are formatted once for the whole table, then gathered slice
    # by slice (their plans hold a 4-byte index per row and the texts of the distinct values)
    plans = [_csv_plan(data.column(name)) for name in names]
    pieces = [head]
    for start in range(0, data.num_rows, CSV_SLICE_ROWS):
        pieces.append(_csv_rows(plans, start, single))
    return b"".join(pieces)


#: Rows formatted at a time by :func:`arrow_csv` (bounds its temporaries).
CSV_SLICE_ROWS = 16384


def _csv_rows(plans, start: int, single: bool):
    """The CSV lines (no header) of rows ``start:start + CSV_SLICE_ROWS`` of the columns planned
    by :func:`_csv_plan`, each ending with a line end (bytes-like)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    cols = []
    size = 0
    for source, formatter in plans:
        part = source.slice(start, CSV_SLICE_ROWS)
        if isinstance(part, pa.ChunkedArray):
            part = part.combine_chunks() if part.num_chunks != 1 else part.chunk(0)
        cells = pc.fill_null(formatter(part), '""' if single else "")
        if single:
            cells = pc.if_else(pc.equal(cells, ""), '""', cells)
        offsets, _ = _text_bytes(cells)
        size += int(offsets[-1] - offsets[0]) + len(cells)
        cols.append(cells)
    # 32-bit offsets while the slice's text (cells, commas, line ends) stays below 2 GiB
    kind = pa.string() if size < 2**31 - 1 else pa.large_string()
    if kind != pa.string():
        cols = [c.cast(kind) for c in cols]
    # each row followed by a line end: appended to the last column's cells (the smaller join)
    cols[-1] = pc.binary_join_element_wise(cols[-1], pa.scalar("", kind), pa.scalar("\n", kind))
    rows = cols[0] if single else pc.binary_join_element_wise(*cols, pa.scalar(",", kind))
    del cols
    if isinstance(rows, pa.ChunkedArray):
        rows = rows.combine_chunks()
    offsets, _ = _text_bytes(rows)
    body = rows.buffers()[2]
    if body is None:
        return b""
    return body.slice(int(offsets[0]), int(offsets[-1] - offsets[0]))


#: Largest pyarrow CSV block we try (bytes): a single row must fit in one block.
CSV_MAX_BLOCK = 1 << 30


def is_block_too_small(exc: BaseException) -> bool:
    """True for pyarrow's complaint that one CSV row does not fit in a block."""
    return "straddl" in str(exc) or "block size" in str(exc)


def check_unique_names(names, source: str) -> None:
    """A header naming a column twice is ambiguous (which Teff?): a one-line input error."""
    seen, dup = set(), []
    for n in names:
        if n in seen and n not in dup:
            dup.append(n)
        seen.add(n)
    if dup:
        raise HrstageInputError(f"{source}: the header repeats column name(s) {', '.join(dup)} (duplicate "
                                "names are ambiguous); rename or drop the repeated column(s) first")


def _read_csv(path: Path):
    """Whole CSV file -> pyarrow Table; the block size grows until the longest row fits."""
    import pyarrow as pa
    import pyarrow.csv as pacsv

    block = 1 << 22
    while True:
        read, parse, convert = csv_read_options(block_size=block)
        try:
            data = pacsv.read_csv(path, read_options=read, parse_options=parse, convert_options=convert)
            break
        except (pa.ArrowInvalid, pa.ArrowTypeError, UnicodeDecodeError) as exc:
            if is_block_too_small(exc) and block < CSV_MAX_BLOCK:
                block = min(block * 4, CSV_MAX_BLOCK)
                continue
            raise HrstageInputError(f"cannot read CSV file {path.name}: {_one_line(exc)}") from None
        except KeyError as exc:       # pyarrow: a field name twice in the schema
            raise HrstageInputError(f"{path.name}: the header repeats a column name ({_one_line(exc)})") from None
    if data.num_columns == 0:
        raise HrstageInputError(f"CSV file {path.name} has no columns")
    check_unique_names(data.schema.names, path.name)
    return data


def _write_csv(table: Table, tmp: Path) -> None:
    with open(tmp, "w", encoding="utf-8", newline="") as fh:
        fh.write(csv_text(table))


# -------------------------------------------------------------------------------- Parquet
def _read_parquet(path: Path):
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        data = pq.read_table(path)
    except (pa.ArrowInvalid, OSError) as exc:
        raise HrstageInputError(f"cannot read Parquet file {path.name}: {_one_line(exc)}") from None
    check_unique_names(data.schema.names, path.name)
    return data


def _write_parquet(table: Table, tmp: Path) -> None:
    import pyarrow.parquet as pq

    from .arrow import table_to_arrow, text_lengths

    from .arrow import with_text_lengths

    data = table_to_arrow(table)
    pq.write_table(with_text_lengths(data, text_lengths(data)), tmp)


# ------------------------------------------------------------------------------ public API
def read_table(path, format: str | None = None, *, hdu: int | None = None) -> Table:
    """Read a catalogue into an astropy Table, keeping every column and row in order.

    Parameters
    ----------
    path : path-like
        The catalogue file.
    format : {"fits", "votable", "ecsv", "csv", "parquet"}, optional
        Default: from the suffix (see :data:`SUFFIXES`).
    hdu : int, optional
        FITS only: the extension to read (default: the first table extension).

    Returns
    -------
    astropy.table.Table

    Raises
    ------
    HrstageInputError
        Missing, empty, unreadable or malformed file, with a one-line reason.
    """
    path = Path(path)
    fmt = format_of(path, format)
    _check_readable(path)
    if fmt == "fits":
        return _read_fits(path, hdu)
    if fmt in ("csv", "parquet"):
        from .arrow import arrow_to_table

        return arrow_to_table(_read_csv(path) if fmt == "csv" else _read_parquet(path))
    astropy_fmt = {"votable": "votable", "ecsv": "ascii.ecsv"}[fmt]
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            tbl = Table.read(path, format=astropy_fmt)
    except Exception as exc:
        raise HrstageInputError(f"cannot read {fmt.upper()} file {path.name}: {_one_line(exc)}") from None
    if fmt == "ecsv":
        _ecsv_empty_text(tbl)
    _repair_units(tbl)
    return tbl


def _repair_units(tbl: Table) -> None:
    """Units a format's own unit grammar did not know (VOUnit has no ``dex(solLum)``): parse the
    same text with astropy's generic grammar; leave the unrecognised unit when that fails too."""
    for name in tbl.colnames:
        col = tbl[name]
        # VOUnit's "dex" is a unit of its own namespace that does not equal astropy's u.dex
        if isinstance(col.unit, u.UnrecognizedUnit) or (col.unit is not None and col.unit is not u.dex
                                                        and str(col.unit) == "dex"):
            try:
                col.unit = u.Unit(str(col.unit))
            except ValueError:
                pass


def _ecsv_empty_text(tbl: Table) -> None:
    """ECSV writes an empty string and a masked string alike (``""``) and astropy reads both as
    masked; we read them as the empty string the file holds, so text columns come back as written.
    """
    from astropy.table import Column

    for name in tbl.colnames:
        col = tbl[name]
        if col.dtype.kind in "US" and getattr(col, "mask", None) is not None and np.any(col.mask):
            tbl[name] = Column(np.where(col.mask, "", np.ma.getdata(col)), name=name, unit=col.unit,
                               description=col.description, meta=col.meta)


def describe_columns(table: Table, names=None, prefix: str = "") -> Table:
    """Attach unit, description and UCD of :mod:`hrstage.columns` to our columns in ``table``.

    ``names`` are our canonical names (default: all of :data:`hrstage.columns.COLUMNS` present);
    ``prefix`` is the prefix the pipeline put in front of them. Works in place, returns ``table``.
    """
    names = COLUMNS if names is None else names
    for name in names:
        full = prefix + name
        if full not in table.colnames or name not in COLUMNS:
            continue
        spec = COLUMNS[name]
        col = table[full]
        col.unit = spec.unit
        col.description = spec.description
        if spec.ucd:
            col.meta["ucd"] = spec.ucd
    return table


def write_table(table: Table, path, format: str | None = None, *, overwrite: bool = False,
                inputs=()) -> Path:
    """Write ``table`` atomically (temporary file in the same folder, then rename).

    Parameters
    ----------
    table : astropy.table.Table
    path : path-like
        Output file; the format comes from the suffix unless ``format`` is given.
    overwrite : bool, default False
        Replace an existing file (never an input file).
    inputs : iterable of path-like
        Input files the output must not be.

    Returns
    -------
    pathlib.Path
        The written file.
    """
    fmt = format_of(path, format, option="--out-format")
    with atomic_output(path, overwrite=overwrite, inputs=inputs) as tmp:
        if fmt == "fits":
            _write_fits(table, tmp)
        elif fmt == "csv":
            _write_csv(table, tmp)
        elif fmt == "parquet":
            _write_parquet(table, tmp)
        elif fmt == "ecsv":
            from .ecsv import write_ecsv

            write_ecsv(table, tmp)
        else:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                table.write(tmp, format="votable", overwrite=True)
    return Path(path)
