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


def format_of(path, fmt: str | None = None) -> str:
    """Our format name for ``path`` (from ``fmt`` if given, else from the suffix).

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
    raise HrstageInputError(f"cannot tell the format of {p.name!r} from its suffix (known: {known}); "
                            "pass the format explicitly")


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
    for key, fkey in FITS_META_KEYS.items():
        if fkey in table.meta:
            table.meta[key] = table.meta.pop(fkey)
    return table


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
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # function units (dex) are written by hand below
        hdu = fits.table_to_hdu(out)
    for i, name in enumerate(out.colnames, start=1):
        col = out[name]
        if col.unit is not None and f"TUNIT{i}" not in hdu.header:
            hdu.header[f"TUNIT{i}"] = col.unit.to_string()
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
    """
    import io

    buf = io.StringIO()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        table.write(buf, format="ascii.csv", overwrite=True)
    text = buf.getvalue()
    if not header:
        text = text.split("\n", 1)[1] if "\n" in text else ""
    return text


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

    from .arrow import table_to_arrow

    pq.write_table(table_to_arrow(table), tmp)


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
        if isinstance(col.unit, u.UnrecognizedUnit):
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
    fmt = format_of(path, format)
    with atomic_output(path, overwrite=overwrite, inputs=inputs) as tmp:
        if fmt == "fits":
            _write_fits(table, tmp)
        elif fmt == "csv":
            _write_csv(table, tmp)
        elif fmt == "parquet":
            _write_parquet(table, tmp)
        elif fmt == "ecsv":
            table.write(tmp, format="ascii.ecsv", overwrite=True)
        else:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                table.write(tmp, format="votable", overwrite=True)
    return Path(path)
